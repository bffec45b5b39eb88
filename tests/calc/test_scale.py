"""End-to-end: a wildly scaled panel in real cells (issue 15). WEFT.JOINT under every
covariance family and WEFT.HAUSMAN on tests/data/panel/wild_scale.csv (regressors near
2e9 and 1e-6) show numbers, not a message, and the numbers are the 50-digit values of
tests/data/panel/wild_scale_reference.json (written with wild_scale.csv by
tests/oracle/highprec.py: Python mpmath at 50 digits, formulas from the papers),
relative 1e-8 (the statistic and p-value rows; the Hausman statistic 1e-7: the two
compared estimates agree to about 3 digits, own tolerance, no source).
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_scale.py
"""

import csv
import os
import unittest

from calc_helpers import DATA_DIR, ArrayFormula, Office, close, oxt_path, put_rows, reference

REF = reference("wild_scale_reference.json")
FAMILIES = ["classical", "hc0", "hc1", "hc2", "hc3", "cluster", "cluster0", "cluster-period",
            "cluster-both", "dk"]


def wild_rows():
    with open(os.path.join(DATA_DIR, "wild_scale.csv")) as f:
        rows = list(csv.reader(f))
    return [rows[0]] + [[float(v) for v in r] for r in rows[1:]]


class ScaleCellTests(unittest.TestCase):

    def test_joint_and_hausman_show_numbers_on_a_wild_panel(self):
        rows = wild_rows()
        last = len(rows)
        rng = f"C1:C{last};D1:F{last};A1:A{last};B1:B{last}"
        with Office(extensions=[oxt_path()], timeout=500) as office:
            doc = office.new_calc()
            sheet = doc.Sheets.getByIndex(0)
            put_rows(sheet, 0, 0, rows)
            placed = []
            for i, (case, words) in enumerate([("pooled", "pooled"), ("pooled_periods", "pooled periods")]):
                for j, fam in enumerate(FAMILIES):
                    block = ArrayFormula(sheet, 8 + 3 * i, 9 * j, 7, 2,
                                         f'=WEFT.JOINT({rng};"{words} {fam}";"big, tiny, mid")')
                    placed.append((case, fam, block))
            hausman = ArrayFormula(sheet, 16, 0, 12, 2, f'=WEFT.HAUSMAN({rng})')
            doc.calculateAll()

            failures, checked = [], 0
            for case, fam, block in placed:
                v = block.values()
                want = REF[case]["families"][fam]["joint"]
                src = f"wild_scale_reference.json {case}.families.{fam}.joint"
                for (r, key) in [(0, "F"), (2, "df2"), (3, "p"), (4, "chi2")]:
                    checked += 1
                    if not close(v[r][1], float(want[key]), 1e-8):
                        failures.append(f"{case} {fam} row {v[r][0]!r}: got {v[r][1]!r}, "
                                        f"expected {want[key]!r} from {src}.{key}")
            h = hausman.values()
            want = REF["hausman"]
            checked += 2
            if not close(h[0][1], want["statistic"], 1e-7):
                failures.append(f"Hausman statistic: got {h[0][1]!r}, expected {want['statistic']!r} "
                                "from wild_scale_reference.json hausman.statistic")
            if not close(h[1][1], float(want["df"]), 1e-12):
                failures.append(f"Hausman df: got {h[1][1]!r}, expected {want['df']!r} "
                                "from wild_scale_reference.json hausman.df")
            self.assertGreaterEqual(checked, 2 * len(FAMILIES) * 4 + 2)
            self.assertFalse(failures, "\n".join(failures))


if __name__ == "__main__":
    unittest.main()
