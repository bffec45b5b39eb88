"""End-to-end: the cr2 model word in a real headless Calc, on the Grunfeld panel.

WEFT.ESTIMATES, WEFT.VALUE(...; "df"; term), WEFT.FIT.VALUE and WEFT.JOINT under
"pooled cr2", "fd cr2" and "within cr2", and "pooled cr2 weights=w" and
"within cr2 weights=w" on the Grunfeld panel with its weight column
(grunfeld_weighted.csv, placed beside it from column AO), against
tests/data/panel/cr2_reference.json
(R clubSandwich 0.5.8: coef_test(..., vcov = "CR2", test = "Satterthwaite") and
Wald_test(..., test = "HTZ"/"chi-sq"); written by cr2_reference.R beside it), relative
1e-8. The interval ends are checked against estimate +- t(0.975, df) * se with the
reference's df and SE and the t quantile from scipy (an outside implementation).
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_cr2.py
"""

import csv
import os
import unittest

from scipy.stats import t as student_t

from calc_helpers import (DATA_DIR, GRUNFELD_RANGES as R, ArrayFormula, Office, close, oxt_path, put_grunfeld,
                          put_rows, reference)

REF = reference("cr2_reference.json")
TOL = 1e-8  # the JSON keeps 15 significant digits
# the weighted panel at AO1 (firm, year, inv, value, capital, w; 200 rows and a header)
RW = "AQ1:AQ201;AR1:AT201;AO1:AO201;AP1:AP201"
CASES = [("pooled cr2", "grunfeld_pooled", R), ("fd cr2", "grunfeld_fd", R), ("within cr2", "grunfeld_within", R),
         ("pooled cr2 weights=w", "grunfeld_pooled_weighted", RW),
         ("within cr2 weights=w", "grunfeld_within_weighted", RW)]


def put_weighted_grunfeld(sheet):
    with open(os.path.join(DATA_DIR, "grunfeld_weighted.csv")) as f:
        rows = list(csv.reader(f))
    put_rows(sheet, 40, 0, [rows[0]] + [[float(v) for v in r] for r in rows[1:]])


def weft_term(r_name):
    return "intercept" if r_name == "(Intercept)" else r_name


class Cr2CellTests(unittest.TestCase):

    def test_cr2_cells_equal_clubsandwich(self):
        with Office(extensions=[oxt_path()], timeout=500) as office:
            doc = office.new_calc()
            sheet = doc.Sheets.getByIndex(0)
            put_grunfeld(sheet)
            put_weighted_grunfeld(sheet)
            self.compare(doc, sheet)

    def compare(self, doc, sheet):
        failures, checked = [], 0

        def check(what, actual, expected, source, scale=None):
            nonlocal checked
            checked += 1
            # scale: an interval end is a difference (estimate - half-width) that can
            # cancel; it is held to 1e-8 of |estimate| + half-width instead
            ok = (isinstance(actual, float) and abs(actual - expected) <= TOL * scale) if scale \
                else close(actual, float(expected), TOL)
            if not ok:
                failures.append(f"{what}: got {actual!r}, expected {expected!r} from {source}")

        row = 0
        placed = []
        for model, key, ranges in CASES:
            ref = REF[key]
            k = len(ref["terms"])
            table = ArrayFormula(sheet, 8, row, k + 1, 7, f'=WEFT.ESTIMATES({ranges};"{model}")')
            joint = ArrayFormula(sheet, 16, row, 7, 2, f'=WEFT.JOINT({ranges};"{model}";"value, capital")')
            fit = sheet.getCellByPosition(19, row)
            fit.setFormula(f'=WEFT.FIT({ranges};"{model}")')
            dfs = []
            for j, term in enumerate(ref["terms"]):
                c = sheet.getCellByPosition(20 + j, row)
                c.setFormula(f'=WEFT.VALUE({ranges};"{model}";"df";"{weft_term(term)}")')
                f = sheet.getCellByPosition(20 + j, row + 1)
                f.setFormula(f'=WEFT.FIT.VALUE({fit.AbsoluteName.split(".")[-1]};"df";"{weft_term(term)}")')
                dfs.append((c, f))
            placed.append((model, key, table, joint, dfs))
            row += max(k + 1, 7) + 2
        doc.calculateAll()

        for model, key, table, joint, dfs in placed:
            ref = REF[key]
            src = f"cr2_reference.json {key}"
            rows = {r[0]: r for r in table.values()[1:]}
            for j, term in enumerate(ref["terms"]):
                r = rows.get(weft_term(term))
                if r is None:
                    failures.append(f"{model}: no row for {term}")
                    continue
                est, se, df = ref["estimate"][j], ref["se"][j], ref["df"][j]
                check(f"{model} {term} estimate", r[1], est, src + " estimate")
                check(f"{model} {term} std error", r[2], se, src + " se")
                check(f"{model} {term} t", r[3], est / se, src + " estimate/se")
                check(f"{model} {term} p-value", r[4], ref["p"][j], src + " p (Satterthwaite)")
                half = student_t.ppf(0.975, df) * se
                scale = abs(est) + half
                check(f"{model} {term} ci low", r[5], est - half, src + " estimate - t(0.975, df) se", scale)
                check(f"{model} {term} ci high", r[6], est + half, src + " estimate + t(0.975, df) se", scale)
                check(f"{model} WEFT.VALUE df {term}", dfs[j][0].getValue(), df, src + " df")
                check(f"{model} WEFT.FIT.VALUE df {term}", dfs[j][1].getValue(), df, src + " df")
            # WEFT.JOINT rows in order: F, F df1, F df2, F p-value, chi-square, its df, p
            values = [r[1] for r in joint.values()]
            j = ref["joint"]
            for i, (name, expected) in enumerate([("HTZ F", j["F"]), ("F df1", j["df1"]), ("HTZ df2", j["df2"]),
                                                  ("HTZ p", j["p"]), ("Wald W", j["chi2"]),
                                                  ("chi-square df", j["chi2_df"])]):
                check(f"{model} WEFT.JOINT {name}", values[i], expected, src + " joint")
        self.assertGreaterEqual(checked, 5 * 6 + (3 + 3 + 2 + 3 + 2) * 8, "fewer comparisons than planned")
        if failures:
            self.fail(f"{len(failures)} of {checked} comparisons failed:\n" + "\n".join(failures))


if __name__ == "__main__":
    unittest.main()
