"""End-to-end: the sheet traps of issue 20 in a real headless Calc. Each row of TRAPS
is a formula over an invented panel laid out with one trap, and what weft must say:
either a "weft: " message in the result's first cell or a warning row of the result,
with the fragments it must contain, always including the address of the cell it names
(Data!D5 form). Expectations: FUNCTIONS.md "Errors in cells" and "The four panel
arguments" (rows paired by sheet row, header rules) and the issue's own list; no
number here is computed by weft.

Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_sheet_traps.py
"""

import random
import unittest

from calc_helpers import Office, oxt_path, put_rows

HEADER = ["unit", "period", "y", "x1", "x2"]


def invented_panel(seed=11):
    """Three invented depots over four years: unit, period, y, x1, x2 (header row 1,
    data in rows 2-13), values drawn with a fixed seed."""
    rnd = random.Random(seed)
    rows = [HEADER[:]]
    for u in ["Depot A", "Depot B", "Depot C"]:
        for t in [2001, 2002, 2003, 2004]:
            rows.append([u, t, rnd.uniform(0, 10), rnd.uniform(0, 5), rnd.uniform(0, 5)])
    return rows


def r4(sheet, y="C1:C13", x="D1:E13", u="A1:A13", t="B1:B13"):
    """The four panel ranges on `sheet` (each may name its own sheet with $Other.)."""
    def q(a):
        return a if a.startswith("$") else f"${sheet}.{a}"
    return f"{q(y)};{q(x)};{q(u)};{q(t)}"


# Sheets: name -> function(rows) that returns the laid-out rows of that sheet.
def _with(cells):
    def make(rows):
        out = [r[:] for r in rows]
        for (r, c), v in cells.items():
            while len(out[r]) <= c:
                out[r].append("")
            out[r][c] = v
        return out
    return make


SHEETS = {
    "Data": _with({}),
    "NoHead": _with({(0, 2): ""}),                # outcome has no header, regressors do
    "NumHead": _with({(0, 3): 3.5}),              # a number where x1's header belongs
    "PerHead": _with({(0, 1): 1999}),             # a number where the periods header belongs
    "TextNum": _with({(4, 3): "-1.2"}),           # number stored as text, C locale
    "Comma": _with({(6, 4): "-1,25"}),            # number stored as text, decimal comma
    "Grouped": _with({(8, 2): "1 234,5"}),        # thousands group and decimal comma
    "NA": _with({(4, 3): "n/a", (9, 3): "missing"}),  # other text: missing, warned
    "NAy": _with({(3, 2): "-"}),                  # text in the outcome
    "DateText": _with({(5, 1): "2002-01-01"}),    # a date stored as text in periods
    "DateText2": _with({(5, 1): "01/01/2002"}),
    "PerText": _with({(7, 1): "2003"}),           # a year stored as text
    "Err": _with({}),                             # #DIV/0! in D5 (formula set below)
    "ErrUnit": _with({}),                         # #N/A in A8
    "ErrLast": _with({}),                         # #VALUE! in the last row's outcome
    "Hidden": _with({}),                          # row 5 hidden
    "Filtered": _with({}),                        # rows of Depot B filtered out
    "Other": _with({}),                           # the same panel on another sheet
}


# (what, formula, "error" or "warning", fragments); every fragment must appear.
TRAPS = [
    ("regressors shifted one row down", f"=WEFT.ESTIMATES({r4('Data', x='D2:E14')})", "error",
     ["outcome starts at Data!C1", "regressors starts at Data!D2", "1 row lower",
      "same first and last row", "Data!D1:E13"]),
    ("equal-length ranges shifted (C1:C12 with D2:E13)",
     f"=WEFT.ESTIMATES({r4('Data', y='C1:C12', x='D2:E13', u='A1:A12', t='B1:B12')})", "error",
     ["outcome starts at Data!C1", "regressors starts at Data!D2"]),
    ("units shifted one row up", f"=WEFT.SUMMARY({r4('Data', u='A2:A14')})", "error",
     ["units starts at Data!A2", "1 row lower"]),
    ("periods on another sheet, shifted", f"=WEFT.ESTIMATES({r4('Data', t='$Other.B2:B14')})", "error",
     ["periods starts at Other!B2", "outcome starts at Data!C1"]),
    ("outcome without its header beside regressors with one",
     f"=WEFT.ESTIMATES({r4('Data', y='C2:C13', x='D1:E12', u='A2:A13', t='B2:B13')})", "error",
     ["outcome starts at Data!C2", "regressors starts at Data!D1"]),
    ("outcome header blank, regressors headed", f"=WEFT.ESTIMATES({r4('NoHead')})", "error",
     ['regressors starts with the header "x1" (NoHead!D1)', "a blank cell (NoHead!C1)"]),
    ("a number where a regressor header belongs", f"=WEFT.ESTIMATES({r4('NumHead')})", "error",
     ['header "y" (NumHead!C1)', "number 3.5 (NumHead!D1)"]),
    ("a number where the periods header belongs", f"=WEFT.ESTIMATES({r4('PerHead')})", "error",
     ["number 1999 (PerHead!B1)"]),
    ("number stored as text", f"=WEFT.ESTIMATES({r4('TextNum')})", "error",
     ["TextNum!D5", '"-1.2"', "number stored as text"]),
    ("locale decimal comma as text", f"=WEFT.ESTIMATES({r4('Comma')})", "error",
     ["Comma!E7", '"-1,25"', "number stored as text"]),
    ("grouped number as text in the outcome", f'=WEFT.VALUE({r4("Grouped")};"";"n")', "error",
     ["Grouped!C9", "number stored as text"]),
    ("number stored as text under fd", f'=WEFT.ESTIMATES({r4("TextNum")};"fd")', "error",
     ["TextNum!D5", "number stored as text"]),
    ("date stored as text in periods", f"=WEFT.ESTIMATES({r4('DateText')})", "error",
     ["DateText!B6", '"2002-01-01"', "date stored as text"]),
    ("date with slashes as text", f"=WEFT.PANEL($DateText2.A1:A13;$DateText2.B1:B13)", "error",
     ["DateText2!B6", "date stored as text"]),
    ("year stored as text", f"=WEFT.ESTIMATES({r4('PerText')})", "error",
     ["PerText!B8", '"2003"', "number stored as text"]),
    ("error value in a regressor", f"=WEFT.ESTIMATES({r4('Err')})", "error",
     ["Err!D5", "#DIV/0!", "correct the formula"]),
    ("error value in a unit id", f"=WEFT.ESTIMATES({r4('ErrUnit')})", "error",
     ["ErrUnit!A8", "#N/A"]),
    ("error value in the last row", f"=WEFT.DIFF($ErrLast.C1:C13;$ErrLast.A1:A13;$ErrLast.B1:B13)", "error",
     ["ErrLast!C13", "#VALUE!"]),
    ("header-only ranges", f"=WEFT.ESTIMATES({r4('Data', y='C1:C1', x='D1:E1', u='A1:A1', t='B1:B1')})",
     "error", ["only a header row"]),
    ("whole columns beside a finite range", f"=WEFT.ESTIMATES({r4('Data', y='C:C')})", "error",
     ["rows but outcome has 1048576"]),
    ("a helper's ranges shifted", "=WEFT.DIFF($Data.C2:C13;$Data.A1:A12;$Data.B1:B12)", "error",
     ["values starts at Data!C2", "units starts at Data!A1"]),
    ("WEFT.FIT over shifted ranges", f"=WEFT.FIT({r4('Data', t='B2:B14')})", "error",
     ["periods starts at Data!B2"]),
    ("WEFT.PANEL shifted", "=WEFT.PANEL($Data.A1:A13;$Data.B2:B14)", "error",
     ["periods starts at Data!B2"]),
    ("WEFT.EVENT shifted", f"=WEFT.EVENT({r4('Data', x='D2:D14')})", "error",
     ["treatment starts at Data!D2"]),
    ("mistyped model word", f'=WEFT.ESTIMATES({r4("Data")};"within perods")', "error",
     ['"perods"', 'did you mean "periods"']),
    ("mistyped estimator", f'=WEFT.ESTIMATES({r4("Data")};"withn")', "error",
     ['did you mean "within"']),
    ("text read as missing in a regressor", f"=WEFT.SUMMARY({r4('NA')})", "warning",
     ["2 cells of regressors hold text", 'NA!D5 "n/a"', "read as missing"]),
    ("text read as missing in the outcome", f"=WEFT.ESTIMATES({r4('NAy')})", "warning",
     ["1 cell of outcome", 'NAy!C4 "-"']),
    ("text missing under fd costs differences", f'=WEFT.RESIDUALS({r4("NAy")};"fd")', "warning",
     ['NAy!C4 "-"']),
    ("a hidden row", f"=WEFT.SUMMARY({r4('Hidden')})", "warning",
     ["1 row of the ranges is hidden or filtered out", "Hidden!C5"]),
    ("a filtered range", f"=WEFT.ESTIMATES({r4('Filtered')})", "warning",
     ["4 rows of the ranges are hidden or filtered out", "Filtered!C6"]),
    ("the outcome among the regressors", f"=WEFT.ESTIMATES({r4('Data', x='C1:E13')})", "warning",
     ['regressor "y"', "equals the outcome", "leave the outcome's column out"]),
    ("text read as missing in a helper", "=WEFT.DEMEAN($NA.D1:D13;$NA.A1:A13)", "warning",
     ['NA!D5 "n/a"']),
]


def setUpModule():
    global OFFICE
    OFFICE = Office(extensions=[oxt_path()], timeout=500)
    OFFICE.__enter__()


def tearDownModule():
    OFFICE.stop()


def filter_out(sheet, unit):
    """Standard filter on A1:E13 that hides the rows of `unit` (the office's own filter)."""
    import uno
    rng = sheet.getCellRangeByName("A1:E13")
    fd = rng.createFilterDescriptor(True)
    field = uno.createUnoStruct("com.sun.star.sheet.TableFilterField")
    field.Field = 0
    field.Operator = uno.Enum("com.sun.star.sheet.FilterOperator", "NOT_EQUAL")
    field.IsNumeric = False
    field.StringValue = unit
    fd.setFilterFields((field,))
    fd.ContainsHeader = True
    rng.filter(fd)


class SheetTrapTests(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.doc = OFFICE.new_calc()
        sheets = cls.doc.Sheets
        rows = invented_panel()
        first = True
        for name, make in SHEETS.items():
            if first:
                sheets.getByIndex(0).Name = name
                first = False
            else:
                sheets.insertNewByName(name, sheets.Count)
            put_rows(sheets.getByName(name), 0, 0, make(rows))
        sheets.getByName("Err").getCellByPosition(3, 4).setFormula("=1/0")
        sheets.getByName("ErrUnit").getCellByPosition(0, 7).setFormula("=NA()")
        sheets.getByName("ErrLast").getCellByPosition(2, 12).setFormula('="a"+1')
        sheets.getByName("Hidden").getRows().getByIndex(4).IsVisible = False
        filter_out(sheets.getByName("Filtered"), "Depot B")
        sheets.insertNewByName("Out", sheets.Count)
        cls.out = sheets.getByName("Out")
        cls.blocks = []
        for i, (_, formula, _, _) in enumerate(TRAPS):
            block = cls.out.getCellRangeByPosition(0, 40 * i, 7, 40 * i + 39)
            block.setArrayFormula(formula)
            cls.blocks.append(block)
        cls.doc.calculateAll()

    def test_table_has_enough_traps(self):
        self.assertGreaterEqual(len(TRAPS), 25)

    def test_each_trap_is_named(self):
        failures = []
        for (what, formula, kind, fragments), block in zip(TRAPS, self.blocks):
            rows = block.getDataArray()
            first = rows[0][0] if isinstance(rows[0][0], str) else ""
            if kind == "error":
                text = first
                if not text.startswith("weft: "):
                    failures.append(f"{what}: {formula} gave {rows[0][:3]!r}, not a weft: message")
                    continue
                # (a one-cell function entered over a block repeats its one value)
                rest = [v for r in rows for v in r][1:]
                one_cell = "WEFT.VALUE(" in formula or "WEFT.FIT(" in formula
                if not one_cell and any(v != "" for v in rest):
                    failures.append(f"{what}: the error result is not blank after its first cell")
            else:
                warn = [" ".join(str(v) for v in r) for r in rows
                        if isinstance(r[0], str) and r[0].split(":")[0] in ("warning", "warnings")]
                text = " | ".join(warn)
                if not warn:
                    failures.append(f"{what}: {formula} gave no warning row ({rows[0][:3]!r})")
                    continue
                if "[warning" not in first:
                    failures.append(f"{what}: first cell {first!r} does not point at the warnings")
            missing = [f for f in fragments if f not in text]
            if missing:
                failures.append(f"{what}: {formula} gave {text!r}, lacking {missing}")
        self.assertFalse(failures, "\n".join(failures))


class SheetRangeTests(unittest.TestCase):
    """What the ranges-as-cells methods must keep doing."""

    @classmethod
    def setUpClass(cls):
        cls.doc = OFFICE.new_calc()
        sheets = cls.doc.Sheets
        sheets.getByIndex(0).Name = "Data"
        sheets.insertNewByName("Other", 1)
        put_rows(sheets.getByName("Data"), 0, 0, invented_panel())
        put_rows(sheets.getByName("Other"), 0, 0, invented_panel())
        cls.sheet = sheets.getByName("Data")

    def value(self, formula, col=10, row=0):
        cell = self.sheet.getCellByPosition(col, row)
        cell.setFormula(formula)
        self.doc.calculateAll()
        return cell

    def test_whole_columns_read_the_data_rows(self):
        """12 data rows (invented_panel), whether given as C1:C13 or as whole columns."""
        n = self.value('=WEFT.VALUE($Data.C:C;$Data.D:E;$Data.A:A;$Data.B:B;"";"n")')
        self.assertEqual(n.getValue(), 12.0, n.getString())

    def test_ranges_on_another_sheet_pair_by_row(self):
        here = self.value(f'=WEFT.VALUE({r4("Data")};"";"estimate";"x1")', row=1).getValue()
        other = self.value(f'=WEFT.VALUE({r4("Data", y="$Other.C1:C13")};"";"estimate";"x1")',
                           row=2)
        self.assertEqual(other.getValue(), here, other.getString())

    def test_edit_recalculates(self):
        """The office's dependency tracking follows a range passed as cells: blanking
        one outcome cell drops one row at the next automatic recalculation."""
        cell = self.value(f'=WEFT.VALUE({r4("Data")};"";"n")', row=3)
        self.assertEqual(cell.getValue(), 12.0)
        old = self.sheet.getCellRangeByName("C5").getValue()
        self.sheet.getCellRangeByName("C5").setString("")
        self.assertEqual(cell.getValue(), 11.0)  # no calculateAll: automatic recalculation
        self.sheet.getCellRangeByName("C5").setValue(old)
        self.assertEqual(cell.getValue(), 12.0)

    def test_computed_array_is_refused_by_the_office(self):
        """A computed array cannot reach an XCellRange argument: the office shows
        Err:504 before weft is called (README "Entering the functions")."""
        cell = self.value(f"=WEFT.VALUE(LN($Data.C1:C13);{r4('Data')[len('$Data.C1:C13;'):]};\"\";\"n\")",
                          row=4)
        self.assertEqual(cell.getError(), 504)

    def test_value_array_method_still_answers(self):
        """Workbooks saved before the twins call the value-array methods by their stored
        name; typed with that name here, it still computes the same number."""
        old = self.value(f'=ORG.WEFT.CALCFUNCTIONS.VALUE({r4("Data")};"";"estimate";"x1")', row=5)
        new = self.value(f'=WEFT.VALUE({r4("Data")};"";"estimate";"x1")', row=6)
        self.assertEqual(old.getError(), 0, old.getString())
        self.assertEqual(old.getValue(), new.getValue())

    def test_wizard_tells_the_two_methods_apart(self):
        """The function wizard lists the value-array method beside its twin under one
        name; the old one's description says what it is."""
        fd = OFFICE.service("com.sun.star.sheet.FunctionDescriptions")
        found = []
        for i in range(fd.getCount()):
            props = {p.Name: p.Value for p in fd.getByIndex(i)}
            if props.get("Name") == "WEFT.ESTIMATES":
                found.append(props["Description"])
        self.assertEqual(len(found), 2, found)
        self.assertEqual(sum(d.startswith("(As stored by weft 0.3") for d in found), 1, found)

    def test_typed_name_resolves_to_the_range_method(self):
        """A typed WEFT.* name calls the range method (it refuses shifted ranges); the
        stored value-array name does not know where ranges are (it cannot refuse)."""
        typed = self.value(f'=WEFT.VALUE({r4("Data", x="D2:E14")};"";"n")', row=7)
        self.assertIn("starts at Data!D2", typed.getString())
        stored = self.value(f'=ORG.WEFT.CALCFUNCTIONS.VALUE({r4("Data", x="D2:E14")};"";"n")', row=8)
        self.assertEqual(stored.getError(), 0)
        self.assertNotIn("starts at", stored.getString())


if __name__ == "__main__":
    unittest.main(verbosity=2)
