"""End-to-end: observation weights (the model word weights=NAME) in a real headless Calc.

The Grunfeld panel with the invented weight column w (tests/data/panel/
grunfeld_weighted.csv, two rows of weight 0) is placed at A1; w is the third column of
the regressors range and weights=w takes it out of the regressors. WEFT.ESTIMATES and
WEFT.FIT + WEFT.FIT.VALUE under pooled, fd, within and between with several standard-
error families are compared with tests/data/panel/weights_reference.json (R 4.2
lm(weights = ) on each explicit estimated equation with sandwich 3.0.2 and the weighted
dummy-variable regression for within; written by weights_reference.R beside it),
relative 1e-9. Then the errors: a text weight cell and a negative weight are named by
row, and WEFT.HAUSMAN, WEFT.EFFECTS and WEFT.FIT.HAUSMAN refuse weights.
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_weights.py
"""

import csv
import os
import unittest

from calc_helpers import DATA_DIR, ArrayFormula, Office, close, oxt_path, put_rows, reference

REF = reference("weights_reference.json")
TOL = 1e-9
LAST = 201
RANGES = f"C1:C{LAST};D1:F{LAST};A1:A{LAST};B1:B{LAST}"
CASES = [("pooled hc1 weights=w", "pooled", "hc1"), ("fd dk weights=w", "fd", "dk"),
         ("within cluster weights=w", "within", "cluster"), ("between hc2 weights=w", "between", "hc2"),
         ("within classical periods weights=w", "within_periods", "classical")]


def weighted_grunfeld():
    with open(os.path.join(DATA_DIR, "grunfeld_weighted.csv")) as f:
        rows = list(csv.reader(f))
    return [rows[0]] + [[float(v) for v in r] for r in rows[1:]]


class WeightCellTests(unittest.TestCase):

    def test_weighted_cells_equal_r(self):
        with Office(extensions=[oxt_path()], timeout=500) as office:
            doc = office.new_calc()
            sheet = doc.Sheets.getByIndex(0)
            put_rows(sheet, 0, 0, weighted_grunfeld())
            self.compare(doc, sheet)
            self.errors(doc, sheet)

    def compare(self, doc, sheet):
        failures, checked = [], 0

        def check(what, actual, expected, source):
            nonlocal checked
            checked += 1
            if not close(actual, float(expected), TOL):
                failures.append(f"{what}: got {actual!r}, expected {expected!r} from {source}")

        placed, row = [], 0
        for model, key, family in CASES:
            k = len(REF[key]["terms"])
            table = ArrayFormula(sheet, 8, row, k + 1, 7, f'=WEFT.ESTIMATES({RANGES};"{model}")')
            fit = sheet.getCellByPosition(16, row)
            fit.setFormula(f'=WEFT.FIT({RANGES};"{model}")')
            n = sheet.getCellByPosition(17, row)
            n.setFormula(f'=WEFT.FIT.VALUE({fit.AbsoluteName.split(".")[-1]};"n")')
            placed.append((model, key, family, table, n))
            row += k + 3
        doc.calculateAll()
        for model, key, family, table, n in placed:
            ref = REF[key]
            src = f"weights_reference.json {key}"
            rows = {r[0]: r for r in table.values()[1:]}
            for j, term in enumerate(ref["terms"]):
                r = rows.get(term)
                if r is None:
                    failures.append(f"{model}: no row for {term} (got {table.values()[:2]})")
                    continue
                check(f"{model} {term} estimate", r[1], ref["estimate"][j], src + " estimate")
                check(f"{model} {term} std error", r[2], ref[family]["se"][j], f"{src} {family}.se")
            check(f"{model} WEFT.FIT.VALUE n", n.getValue(), ref["nobs"], src + " nobs")
        self.assertGreaterEqual(checked, 2 * (3 + 3 + 2 + 3 + 21) + 5, "fewer comparisons than planned")
        if failures:
            self.fail(f"{len(failures)} of {checked} comparisons failed:\n" + "\n".join(failures))

    def errors(self, doc, sheet):
        # a second copy of the data at column Y with one text weight and one negative weight
        rows = weighted_grunfeld()
        rows[5][5] = "n/a"      # sheet row 6
        put_rows(sheet, 24, 0, rows)
        ranges = f"AA1:AA{LAST};AB1:AD{LAST};Y1:Y{LAST};Z1:Z{LAST}"
        text_cell = sheet.getCellByPosition(40, 0)
        text_cell.setFormula(f'=WEFT.FIT({ranges};"pooled weights=w")')
        neg = weighted_grunfeld()
        neg[9][5] = -2.0        # sheet row 10
        put_rows(sheet, 44, 0, neg)
        neg_ranges = f"AU1:AU{LAST};AV1:AX{LAST};AS1:AS{LAST};AT1:AT{LAST}"
        neg_cell = sheet.getCellByPosition(40, 1)
        neg_cell.setFormula(f'=WEFT.FIT({neg_ranges};"within weights=w")')
        hausman = sheet.getCellByPosition(40, 2)
        hausman.setFormula(f'=WEFT.HAUSMAN({RANGES};"weights=w")')
        effects = sheet.getCellByPosition(40, 3)
        effects.setFormula(f'=WEFT.EFFECTS({RANGES};"within weights=w")')
        fit = sheet.getCellByPosition(40, 4)
        fit.setFormula(f'=WEFT.FIT({RANGES};"within weights=w")')
        fit_hausman = sheet.getCellByPosition(40, 5)
        fit_hausman.setFormula(f'=WEFT.FIT.HAUSMAN({fit.AbsoluteName.split(".")[-1]})')
        unknown = sheet.getCellByPosition(40, 6)
        unknown.setFormula(f'=WEFT.FIT({RANGES};"pooled weights=pop")')
        doc.calculateAll()
        expect = [(text_cell, ['weights "w"', "AD6", "holds text"]),
                  (neg_cell, ['weights "w", row 10', "negative"]),
                  (hausman, ["WEFT.HAUSMAN does not take weights"]),
                  (effects, ["WEFT.EFFECTS does not take weights"]),
                  (fit_hausman, ["WEFT.FIT.HAUSMAN does not take weights"]),
                  (unknown, ['no regressor column is named "pop"'])]
        for cell, parts in expect:
            text = cell.getString()
            self.assertTrue(text.startswith("weft: "), text)
            for part in parts:
                self.assertIn(part, text)


if __name__ == "__main__":
    unittest.main()
