"""End-to-end: the fit cell (WEFT.FIT) and the functions that take it
(WEFT.FIT.ESTIMATES, .SUMMARY, .VALUE, .RESIDUALS, .FITTED, .JOINT, .HETERO,
.SERIAL, .HAUSMAN, .EFFECTS) in a real headless Calc.

- Results equal the reference values (tests/data/panel/grunfeld_within.json, from
  R plm/sandwich, named beside each check) and, cell for cell, the functions that
  take the four ranges.
- One fit serves the fit cell and every cell that takes it: the add-in logs each
  fit and hit to WEFT_ADDIN_LOG.
- The office's dependency tracking keeps them current: an edited input, a volatile
  input (RAND) recalculated with calculateAll, and two documents with the same
  addresses but different data each show their own model.
- A workbook saved and opened again fits again: the office computes add-in cells
  on load even when set never to recalculate on load (its default). A cell that
  takes a fit no longer in memory (32 newer fits) says how to fit again, and a
  hard recalculation does. An .xlsx round trip keeps the fit functions.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_fit_cell.py
"""

import os
import unittest
import zipfile

from calc_helpers import GRUNFELD_RANGES as R, LoggedOffice, close, put_grunfeld, reference
from office import _props

WITHIN = reference("grunfeld_within.json")["results"]


def setUpModule():
    global LOGGED, OFFICE
    LOGGED = LoggedOffice()
    OFFICE = LOGGED.start()


def tearDownModule():
    LOGGED.stop()


def fits():
    return LOGGED.fits()


def set_recalc_on_load(mode):
    """ODF recalculation on load: 0 always, 1 never (the office's default)."""
    provider = OFFICE.service("com.sun.star.configuration.ConfigurationProvider")
    access = provider.createInstanceWithArguments(
        "com.sun.star.configuration.ConfigurationUpdateAccess",
        _props(nodepath="/org.openoffice.Office.Calc/Formula/Load"))
    access.setPropertyValue("ODFRecalcMode", mode)
    access.commitChanges()


class FitCellTests(unittest.TestCase):

    def setUp(self):
        self.doc = OFFICE.new_calc()
        self.sheet = self.doc.Sheets.getByIndex(0)
        put_grunfeld(self.sheet)

    def tearDown(self):
        self.doc.close(True)

    def cell(self, name, sheet=None):
        return (sheet or self.sheet).getCellRangeByName(name)

    def test_fit_functions_equal_the_reference_and_the_range_functions(self):
        model = '"within cluster"'
        fit = self.cell("G1")
        fit.setFormula(f"=WEFT.FIT({R};{model})")
        pairs = [  # (fit-taking formula, range-taking formula, target of each)
            ("=WEFT.FIT.ESTIMATES(G1)", f"=WEFT.ESTIMATES({R};{model})", "3:7"),
            ("=WEFT.FIT.SUMMARY(G1)", f"=WEFT.SUMMARY({R};{model})", "20:2"),
            ("=WEFT.FIT.RESIDUALS(G1)", f"=WEFT.RESIDUALS({R};{model})", "201:1"),
            ("=WEFT.FIT.FITTED(G1)", f"=WEFT.FITTED({R};{model})", "201:1"),
            ('=WEFT.FIT.JOINT(G1;"value, capital")', f'=WEFT.JOINT({R};{model};"value, capital")',
             "7:2"),
            ('=WEFT.FIT.HETERO(G1;"white-special")', f'=WEFT.HETERO({R};{model};"white-special")',
             "7:2"),
            ("=WEFT.FIT.SERIAL(G1)", f"=WEFT.SERIAL({R};{model})", "12:2"),
            ("=WEFT.FIT.HAUSMAN(G1)", f"=WEFT.HAUSMAN({R};{model})", "12:2"),
            ("=WEFT.FIT.EFFECTS(G1)", f"=WEFT.EFFECTS({R};{model})", "4:2"),
            ('=WEFT.FIT.BOOTSTRAP(G1;"value";"webb draws=999")',
             f'=WEFT.BOOTSTRAP({R};{model};"value";"webb draws=999")', "10:2"),
        ]
        col = 8  # column I onwards, two blocks side by side per pair
        placed = []
        for by_fit, by_ranges, shape in pairs:
            rows, cols = map(int, shape.split(":"))
            a = self.sheet.getCellRangeByPosition(col, 0, col + cols - 1, rows - 1)
            b = self.sheet.getCellRangeByPosition(col + cols, 0, col + 2 * cols - 1, rows - 1)
            a.setArrayFormula(by_fit)
            b.setArrayFormula(by_ranges)
            placed.append((by_fit, a, b))
            col += 2 * cols
        v = self.cell("A300")
        v.setFormula('=WEFT.FIT.VALUE(G1;"se";"capital")')
        self.doc.calculateAll()

        self.assertTrue(fit.getString().startswith("weft fit "), fit.getString())
        self.assertIn("200 observations from 200 rows", fit.getString(),
                      "grunfeld_within.json:sample.nobs")
        for by_fit, a, b in placed:
            with self.subTest(formula=by_fit):
                self.assertEqual(a.getDataArray(), b.getDataArray())
        est = placed[0][1].getDataArray()
        self.assertEqual(est[1][0], "value")
        self.assertTrue(close(est[1][1], WITHIN["coef"]["value"]),
                        "grunfeld_within.json:results.coef.value")
        self.assertTrue(close(est[1][2], WITHIN["se"]["CR1"]["value"]),
                        "grunfeld_within.json:results.se.CR1.value")
        self.assertTrue(close(v.getValue(), WITHIN["se"]["CR1"]["capital"]),
                        "grunfeld_within.json:results.se.CR1.capital")

    def test_one_fit_serves_the_fit_cell_and_every_cell_that_takes_it(self):
        self.cell("G1").setFormula(f'=WEFT.FIT({R};"fd hc1")')
        for i, what in enumerate(["n", "r2", "sigma", "df", "f", "f-p"]):
            self.cell(f"H{i + 1}").setFormula(f'=WEFT.FIT.VALUE(G1;"{what}")')
        self.cell("I1:O3").setArrayFormula("=WEFT.FIT.ESTIMATES(G1)")
        before = len(fits())
        self.doc.calculateAll()
        self.assertLessEqual(len(fits()), before + 1, "more than one fit for one fit cell")
        before = len(fits())
        self.doc.calculateAll()  # everything again, nothing changed: no new fit
        self.assertEqual(len(fits()), before)

    def test_edits_and_volatile_inputs_reach_every_cell_that_takes_the_fit(self):
        fit = self.cell("G1")
        fit.setFormula(f'=WEFT.FIT({R};"within")')
        by_fit = self.cell("H1")
        by_fit.setFormula('=WEFT.FIT.VALUE(G1;"estimate";"value")')
        by_ranges = self.cell("H2")
        by_ranges.setFormula(f'=WEFT.VALUE({R};"within";"estimate";"value")')
        self.doc.calculateAll()
        self.assertTrue(close(by_fit.getValue(), WITHIN["coef"]["value"]),
                        "grunfeld_within.json:results.coef.value")
        name = fit.getString()

        # An edited input: automatic recalculation, no calculateAll.
        cell = self.cell("C5")
        original = cell.getValue()
        cell.setValue(original + 500.0)
        self.assertNotEqual(fit.getString(), name)
        self.assertFalse(close(by_fit.getValue(), WITHIN["coef"]["value"], rel=1e-6))
        self.assertEqual(by_fit.getValue(), by_ranges.getValue())
        cell.setValue(original)
        self.assertEqual(fit.getString(), name)
        self.assertTrue(close(by_fit.getValue(), WITHIN["coef"]["value"]),
                        "grunfeld_within.json:results.coef.value after the undo")

        # A volatile input: every calculateAll gives new data and a new fit.
        self.cell("C7").setFormula(f"={original}+RAND()*1000")
        seen = set()
        for _ in range(3):
            self.doc.calculateAll()
            seen.add(fit.getString())
            self.assertEqual(by_fit.getValue(), by_ranges.getValue(),
                             "the fit cell's model lags behind its volatile input")
        self.assertEqual(len(seen), 3, f"fit names over three recalculations: {seen}")

    def test_same_addresses_in_two_documents(self):
        """Expected: grunfeld_within.json coef.value; the other document holds the
        Grunfeld data with inv doubled, so its slope is doubled (OLS is linear in
        the outcome, common practice, no source)."""
        self.cell("G1").setFormula(f'=WEFT.FIT({R};"within")')
        self.cell("H1").setFormula('=WEFT.FIT.VALUE(G1;"estimate";"value")')
        self.doc.calculateAll()
        other = OFFICE.new_calc()
        try:
            sheet2 = other.Sheets.getByIndex(0)
            put_grunfeld(sheet2, inv_factor=2.0)
            self.cell("G1", sheet2).setFormula(f'=WEFT.FIT({R};"within")')
            self.cell("H1", sheet2).setFormula('=WEFT.FIT.VALUE(G1;"estimate";"value")')
            other.calculateAll()
            self.doc.calculateAll()
            mine = self.cell("H1").getValue()
            theirs = self.cell("H1", sheet2).getValue()
            self.assertTrue(close(mine, WITHIN["coef"]["value"]),
                            "grunfeld_within.json:results.coef.value")
            self.assertTrue(close(theirs, 2 * WITHIN["coef"]["value"], rel=1e-9),
                            f"doubled inv: got {theirs}")
        finally:
            other.close(True)

    def test_bad_fit_arguments_and_a_failed_fit_say_what_to_do(self):
        self.cell("G1").setFormula(f'=WEFT.FIT({R};"wihtin")')
        self.cell("G2").setValue(3)
        self.cell("G3").setString("within")
        cases = {
            "H1": ("=WEFT.FIT.ESTIMATES(G1)", "wihtin"),       # the fit's own error
            "H2": ('=WEFT.FIT.VALUE(G2;"n")', "fit holds 3, not a fit"),
            "H3": ("=WEFT.FIT.SUMMARY(G3)", 'fit holds "within", not a fit'),
            "H4": ("=WEFT.FIT.SERIAL(G4)", "not a fit"),          # a blank cell
            "H5": ("=WEFT.FIT.ESTIMATES(G1:G3)", "fit is a range of 3 cells"),
            "H6": ('=WEFT.FIT.VALUE("weft fit ' + "0" * 32 + '";"n")', "is not in memory"),
        }
        for addr, (formula, _) in cases.items():
            self.cell(addr).setFormula(formula)
        self.doc.calculateAll()
        fit_error = self.cell("G1").getString()
        self.assertTrue(fit_error.startswith("weft: "), fit_error)
        self.assertIn("wihtin", fit_error)
        for addr, (formula, part) in cases.items():
            with self.subTest(formula=formula):
                got = self.cell(addr).getString()
                self.assertTrue(got.startswith("weft: "), got)
                self.assertIn(part, got)
        self.assertEqual(self.cell("H1").getString(), fit_error)

    def test_a_saved_workbook_fits_again_when_opened(self):
        """The office computes add-in cells when it opens a file, also when set never
        to recalculate on load (ODFRecalcMode 1, its default), so a fit cell of a
        reopened workbook fits again and the cells that take it answer. The fit is
        evicted before the file is opened (32 newer fits), as in a new office
        session."""
        self.cell("G1").setFormula(f'=WEFT.FIT({R};"within cluster")')
        self.cell("H1").setFormula('=WEFT.FIT.VALUE(G1;"estimate";"value")')
        self.doc.calculateAll()
        path = os.path.join(OFFICE.work_dir, "fit-cell.ods")
        OFFICE.save_as(self.doc, path)
        self.cell("G1").setString("")  # else every calculateAll below keeps the fit
        self.evict_fits()
        for mode in (1, 0):
            with self.subTest(ODFRecalcMode=mode):
                set_recalc_on_load(mode)
                before = len(fits())
                try:
                    doc2 = OFFICE.load(path)
                finally:
                    set_recalc_on_load(0)
                try:
                    sheet2 = doc2.Sheets.getByIndex(0)
                    self.assertGreater(len(fits()), before, "the fit cell was not computed on load")
                    edited = self.cell("H2", sheet2)
                    edited.setFormula('=WEFT.FIT.VALUE(G1;"se";"value")')
                    self.assertTrue(close(edited.getValue(), WITHIN["se"]["CR1"]["value"]),
                                    "grunfeld_within.json:results.se.CR1.value; cell shows "
                                    + edited.getString())
                    self.assertTrue(close(self.cell("H1", sheet2).getValue(),
                                          WITHIN["coef"]["value"]),
                                    "grunfeld_within.json:results.coef.value")
                finally:
                    doc2.close(True)
                self.evict_fits()

    def test_a_cell_that_takes_an_evicted_fit_says_how_to_fit_again(self):
        self.cell("G1").setFormula(f'=WEFT.FIT({R};"within cluster")')
        self.cell("H1").setFormula('=WEFT.FIT.VALUE(G1;"estimate";"value")')
        self.doc.calculateAll()
        # 32 newer fits in another document (a calculateAll here would refit G1)
        other = OFFICE.new_calc()
        try:
            sheet2 = other.Sheets.getByIndex(0)
            put_grunfeld(sheet2)
            self.evict_fits(sheet2)
        finally:
            other.close(True)
        edited = self.cell("H2")
        edited.setFormula('=WEFT.FIT.VALUE(G1;"se";"value")')
        text = edited.getString()
        self.assertIn("is not in memory", text)
        self.assertIn("Ctrl+Shift+F9", text)
        self.doc.calculateAll()
        self.assertTrue(close(edited.getValue(), WITHIN["se"]["CR1"]["value"]),
                        "after a hard recalculation: grunfeld_within.json:results.se.CR1.value")

    def test_xlsx_round_trip(self):
        """An .xlsx stores ORG.WEFT.CALCFUNCTIONS.SHEETFIT and .FITVALUE, and a workbook
        opened from it fits again and answers."""
        self.cell("G1").setFormula(f'=WEFT.FIT({R};"within")')
        self.cell("H1").setFormula('=WEFT.FIT.VALUE(G1;"estimate";"capital")')
        self.cell("I1:O3").setArrayFormula("=WEFT.FIT.ESTIMATES(G1)")
        self.doc.calculateAll()
        path = os.path.join(OFFICE.work_dir, "fit-cell.xlsx")
        OFFICE.save_as(self.doc, path, "Calc Office Open XML")
        with zipfile.ZipFile(path) as z:
            sheet = z.read("xl/worksheets/sheet1.xml").decode()
        for method in ("SHEETFIT", "FITVALUE", "FITESTIMATES"):  # WEFT.FIT: the range twin
            self.assertIn(f"ORG.WEFT.CALCFUNCTIONS.{method}(", sheet)
        self.cell("G1").setString("")
        self.evict_fits()
        doc2 = OFFICE.load(path)
        try:
            s2 = doc2.Sheets.getByIndex(0)
            self.assertTrue(self.cell("G1", s2).getString().startswith("weft fit "))
            self.assertTrue(close(self.cell("H1", s2).getValue(), WITHIN["coef"]["capital"]),
                            "grunfeld_within.json:results.coef.capital")
            self.assertTrue(close(self.cell("J2", s2).getValue(), WITHIN["coef"]["value"]),
                            "grunfeld_within.json:results.coef.value")
            edited = self.cell("H2", s2)
            edited.setFormula('=WEFT.FIT.VALUE(G1;"n")')
            self.assertEqual(edited.getValue(), 200.0, "grunfeld_within.json:sample.nobs")
        finally:
            doc2.close(True)

    def evict_fits(self, sheet=None):
        """32 new fits, one at a time (the add-in keeps the 32 newest)."""
        sheet = sheet or self.sheet
        target = self.cell("J1", sheet)
        for estimator in ("pooled", "fd", "within", "pooled periods"):
            for cov in ("classical", "hc0", "hc1", "hc2", "hc3", "cluster", "cluster0", "dk"):
                target.setFormula(f'=WEFT.FIT({R};"{estimator} {cov} level=0.9")')
                self.assertTrue(target.getString().startswith("weft fit "), target.getString())
        target.setString("")


if __name__ == "__main__":
    unittest.main(verbosity=2)
