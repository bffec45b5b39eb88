"""End-to-end: the weft menu's block-sizing command (service:org.weft.BlockSizer?size,
README "Entering the functions") in a real headless Calc. For each function a formula
is typed in one cell, the cell selected and the command dispatched as the menu entry
does; the formula must then be an array formula over exactly the block its result
needs. The expected size is found independently of the command: the same formula
entered over an oversized block shows the office's #N/A (error 32767) in every cell
beyond its result (CALC-ADDIN.md "What cells deliver and show"), so the result's rows
and columns are where the #N/A start. A block that would cover a non-empty cell is
refused and nothing changes; an edit after sizing still recalculates.

Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_block_sizer.py
"""

import unittest

from calc_helpers import Office, oxt_path, put_rows
from test_sheet_traps import invented_panel

NA = 32767  # FormulaError::NotAvailable, shown as #N/A
R = "$Data.C$1:C$13;$Data.D$1:E$13;$Data.A$1:A$13;$Data.B$1:B$13"

FORMULAS = {
    "estimates": f'=WEFT.ESTIMATES({R};"within")',
    "summary": f'=WEFT.SUMMARY({R};"within cluster")',
    "value": f'=WEFT.VALUE({R};"";"n")',
    "residuals": f'=WEFT.RESIDUALS({R};"fd")',
    "fitted": f'=WEFT.FITTED({R})',
    "joint": f'=WEFT.JOINT({R};"";"x1, x2")',
    "hetero": f'=WEFT.HETERO({R};"";"white-full")',
    "serial": f'=WEFT.SERIAL({R};"fd")',
    "hausman": "=WEFT.HAUSMAN($Data.C$1:C$13;$Data.D$1:D$13;$Data.A$1:A$13;$Data.B$1:B$13)",
    "effects": f'=WEFT.EFFECTS({R})',
    "diff": "=WEFT.DIFF($Data.C$1:C$13;$Data.A$1:A$13;$Data.B$1:B$13;2)",
    "lag": "=WEFT.LAG($Data.C$1:C$13;$Data.A$1:A$13;$Data.B$1:B$13)",
    "demean": "=WEFT.DEMEAN($Data.C$1:C$13;$Data.A$1:A$13)",
    "dummies": "=WEFT.DUMMIES($Data.B$1:B$13)",
    "panel": "=WEFT.PANEL($Data.A$1:A$13;$Data.B$1:B$13)",
    "bootstrap": f'=WEFT.BOOTSTRAP({R};"cluster";"x1";"draws=99")',
    "fit estimates": '=WEFT.FIT.ESTIMATES($Out.$A$1)',
    "fit": f'=WEFT.FIT({R};"fd")',
    "event": ('=WEFT.EVENT($Data.C$1:C$13;$Data.F$1:F$13;$Data.A$1:A$13;$Data.B$1:B$13;;'
              '"before=1 after=1")'),
    "did": "=WEFT.DID($Data.C$1:C$13;$Data.F$1:F$13;$Data.A$1:A$13;$Data.B$1:B$13)",
}


def setUpModule():
    global OFFICE
    OFFICE = Office(extensions=[oxt_path()], timeout=500)
    OFFICE.__enter__()


def tearDownModule():
    OFFICE.stop()


class BlockSizerTests(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.doc = OFFICE.new_calc()
        sheets = cls.doc.Sheets
        sheets.getByIndex(0).Name = "Data"
        rows = invented_panel()
        rows[0].append("treated")  # F: Depot B treated from 2003 on, the others never
        for r in rows[1:]:
            r.append(1.0 if (r[0] == "Depot B" and r[1] >= 2003) else 0.0)
        put_rows(sheets.getByName("Data"), 0, 0, rows)
        sheets.insertNewByName("Out", 1)
        sheets.insertNewByName("Probe", 2)
        cls.out = sheets.getByName("Out")
        cls.probe = sheets.getByName("Probe")
        cls.out.getCellByPosition(0, 0).setFormula(f'=WEFT.FIT({R};"within")')
        cls.controller = cls.doc.getCurrentController()
        cls.controller.setActiveSheet(cls.out)
        cls.dispatcher = OFFICE.service("com.sun.star.frame.DispatchHelper")

    def size(self, cell):
        self.controller.select(cell)
        frame = self.controller.getFrame()
        self.dispatcher.executeDispatch(frame, "service:org.weft.BlockSizer?size", "", 0, ())

    def expected(self, formula):
        """Rows and columns of the result, from an oversized block on another sheet."""
        block = self.probe.getCellRangeByPosition(0, 0, 19, 39)
        block.setArrayFormula(formula)
        self.doc.calculateAll()
        rows = next((r for r in range(40) if self.probe.getCellByPosition(0, r).getError() == NA), 40)
        cols = next((c for c in range(20) if self.probe.getCellByPosition(c, 0).getError() == NA), 20)
        if cols == 20:
            cols = 1  # a one-column result is repeated across the block (CALC-ADDIN.md)
        if rows == 40:
            rows = 1  # a one-row result is repeated down the block
        block.setArrayFormula("")
        return rows, cols

    def array_block(self, cell):
        cursor = self.out.createCursorByRange(cell)
        cursor.collapseToCurrentArray()
        a = cursor.getRangeAddress()
        return a.EndRow - a.StartRow + 1, a.EndColumn - a.StartColumn + 1

    def test_each_function_is_sized_to_its_result(self):
        failures = []
        for i, (name, formula) in enumerate(FORMULAS.items()):
            cell = self.out.getCellByPosition(2 + 10 * i, 100)
            cell.setFormula(formula)
            self.doc.calculateAll()
            want = self.expected(formula)
            self.size(cell)
            got = self.array_block(cell)
            if got != want:
                failures.append(f"{name}: block {got}, result {want}")
            first = cell.getString()
            if first.startswith("weft:") or cell.getError():
                failures.append(f"{name}: {first!r} error {cell.getError()}")
        self.assertFalse(failures, "\n".join(failures))

    def test_refuses_to_overwrite_and_changes_nothing(self):
        cell = self.out.getCellByPosition(2, 60)
        cell.setFormula(FORMULAS["estimates"])
        self.out.getCellByPosition(4, 62).setString("keep me")
        self.doc.calculateAll()
        self.size(cell)
        self.assertEqual(self.out.getCellByPosition(4, 62).getString(), "keep me")
        self.assertEqual(self.array_block(cell), (1, 1))
        self.assertTrue(cell.getString().startswith("term"), cell.getString())
        # a formula that gives a message has no block to size: nothing changes
        bad = self.out.getCellByPosition(12, 60)
        bad.setFormula("=WEFT.PANEL($Data.A1:A13;$Data.B2:B14)")
        self.doc.calculateAll()
        self.size(bad)
        self.assertEqual(self.array_block(bad), (1, 1))
        self.assertIn("periods starts at Data!B2", bad.getString())

    def test_resizes_a_block_that_is_too_small_and_edits_recalculate(self):
        block = self.out.getCellRangeByName("C80:D81")
        block.setArrayFormula(FORMULAS["panel"])
        self.doc.calculateAll()
        self.size(self.out.getCellByPosition(3, 80))  # any cell of the block
        anchor = self.out.getCellByPosition(2, 79)
        self.assertEqual(self.array_block(anchor), self.expected(FORMULAS["panel"]))
        units = self.out.getCellByPosition(3, 79)
        self.assertEqual(units.getValue(), 3.0)  # three depots (invented_panel)
        data = self.doc.Sheets.getByName("Data")
        old = data.getCellRangeByName("A13").getString()
        data.getCellRangeByName("A13").setString("Depot D")
        self.assertEqual(units.getValue(), 4.0)  # automatic recalculation
        data.getCellRangeByName("A13").setString(old)


if __name__ == "__main__":
    unittest.main(verbosity=2)
