"""End-to-end: WEFT.BOOTSTRAP and WEFT.FIT.BOOTSTRAP in a real headless Calc.

- On Grunfeld (10 firms, 2^10 = 1024 sign patterns, all enumerated) the p-values of
  the term value are the counts of the independent R enumeration of
  tests/bootstrap/boot_support.hpp (base lm, sandwich::vcovCL type HC1, every sign
  vector; run on tests/data/panel/grunfeld.csv): 4, 196 and 802 of 1024 at the
  tested values 0, 0.1 and 0.12. Exact: enumeration has no randomness.
- Recalculating twice gives identical numbers, also with random (Webb) draws.
- Bad settings words give a "weft: " message naming the word.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_bootstrap.py
"""

import unittest

from calc_helpers import GRUNFELD_RANGES as R, Office, oxt_path, put_grunfeld

R_COUNTS = {"0": 4, "0.1": 196, "0.12": 802}  # of 1024, R enumeration (see above)


def setUpModule():
    global OFFICE
    OFFICE = Office(extensions=[oxt_path()], timeout=500)
    OFFICE.__enter__()


def tearDownModule():
    OFFICE.stop()


class BootstrapCellTests(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.doc = OFFICE.new_calc()
        cls.sheet = cls.doc.Sheets.getByIndex(0)
        put_grunfeld(cls.sheet)

    @classmethod
    def tearDownClass(cls):
        cls.doc.close(True)

    def cell(self, name):
        return self.sheet.getCellRangeByName(name)

    def block(self, name):
        return [list(row) for row in self.cell(name).getDataArray()]

    def test_enumerated_p_values_equal_r(self):
        for i, null in enumerate(R_COUNTS):
            top = 1 + 14 * i
            self.cell(f"H{top}:I{top + 12}").setArrayFormula(
                f'=WEFT.BOOTSTRAP({R};"pooled cluster";"value";"null={null}")')
        self.cell("K1").setFormula(f'=WEFT.FIT({R};"pooled cluster")')
        self.cell("K3:L15").setArrayFormula('=WEFT.FIT.BOOTSTRAP(K1;"value";"null=0.1")')
        self.doc.calculateAll()
        for i, (null, count) in enumerate(R_COUNTS.items()):
            rows = dict((r[0], r[1]) for r in self.block(f"H{1 + 14 * i}:I{13 + 14 * i}") if r[0])
            self.assertEqual(rows["term"], "value")
            self.assertEqual(rows["value tested"], float(null))
            self.assertEqual(rows["bootstrap p-value"], count / 1024.0, f"R enumeration, null {null}")
            self.assertEqual(rows["draws"], 1024.0)
            self.assertEqual(rows["weights"], "Rademacher")
            self.assertEqual(rows["every sign pattern used"], "yes")
            self.assertEqual(rows["clusters (units)"], 10.0)
            self.assertLess(rows["interval low"], rows["estimate"])
            self.assertLess(rows["estimate"], rows["interval high"])
        fit_rows = dict((r[0], r[1]) for r in self.block("K3:L15") if r[0])
        self.assertEqual(fit_rows["bootstrap p-value"], 196 / 1024.0, "R enumeration, null 0.1")

    def test_recalculation_gives_identical_numbers(self):
        self.cell("N1:O13").setArrayFormula(f'=WEFT.BOOTSTRAP({R};"pooled cluster";"value";"webb draws=2999 seed=9")')
        self.doc.calculateAll()
        first = self.block("N1:O13")
        self.doc.calculateAll()
        self.cell("N1:O13").setArrayFormula(f'=WEFT.BOOTSTRAP({R};"pooled cluster";"value";"seed=9 webb draws=2999")')
        self.doc.calculateAll()
        second = self.block("N1:O13")
        self.assertEqual(first, second)
        self.assertEqual(dict((r[0], r[1]) for r in first if r[0])["weights"], "Webb six-point")

    def test_bad_settings_words(self):
        cases = [('"draws=ten"', ["weft:", "draws=ten"]),
                 ('"webb rademacher"', ["weft:", "conflicts"]),
                 ('"speed=3"', ["weft:", '"speed=3"', "draws=N"]),
                 ('"draws=7"', ["weft:", "99 to 1000000"])]
        for i, (settings, fragments) in enumerate(cases):
            self.cell(f"Q{1 + i}").setFormula(f'=WEFT.BOOTSTRAP({R};"pooled cluster";"value";{settings})')
        self.cell("Q9").setFormula(f'=WEFT.BOOTSTRAP({R};"pooled cluster";"labour")')
        self.cell("Q10").setFormula(f'=WEFT.BOOTSTRAP({R};"pooled cluster-both";"value")')
        self.doc.calculateAll()
        for i, (settings, fragments) in enumerate(cases):
            text = self.cell(f"Q{1 + i}").getString()
            for f in fragments:
                self.assertIn(f, text, settings)
        self.assertIn('"labour"', self.cell("Q9").getString())
        self.assertIn("cluster-period", self.cell("Q10").getString())


if __name__ == "__main__":
    unittest.main()
