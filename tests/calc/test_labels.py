"""End-to-end: the labels, headers and wizard texts a user reads in Calc are weft's own
(issue 21; FUNCTIONS.md "Labels"). Fails on any of the old wording listed in
tests/common/old_labels.py: fit measures named within / between / overall, the old
interval headers "ci low" / "ci high", a lower or upper end word directly followed by
a percentage, the old Hausman and unit-effects notes.

Also checks that the new labels hold what they say, on the Grunfeld panel: the three
fit measures of WEFT.SUMMARY and WEFT.VALUE against tests/data/panel/grunfeld_*.json
results.r_squared_*_corr2 (R plm; within's deviation measure is plm's
r_squared_within, the same number by the OLS identity R^2 = corr^2(y, yhat)), relative
tolerance 1e-9; and that the interval columns of WEFT.ESTIMATES name the level in use
(FUNCTIONS.md: level=).
Run: WEFT_OXT=build/addin/weft.oxt /usr/bin/python3 tests/calc/test_labels.py
"""

import os
import random
import sys
import unittest

from calc_helpers import (GRUNFELD_RANGES, ArrayFormula, Office, close, oxt_path,
                          put_grunfeld, put_rows, reference)

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "common"))
from old_labels import OLD_VALUE_WORDS, old_wording  # noqa: E402

R = GRUNFELD_RANGES
FIT = "squared correlation of outcome and slope prediction, "
# (label, WEFT.VALUE word, reference key; None: the deviation measure, see above)
MEASURES = [(FIT + "all rows", "corr2-rows", "r_squared_overall_corr2"),
            (FIT + "unit means", "corr2-means", "r_squared_between_corr2"),
            (FIT + "deviations from unit means", "corr2-deviations", None)]
# model words -> reference file
REFERENCES = {"within": "grunfeld_within.json", "random": "grunfeld_random.json",
              "within periods": "grunfeld_within_period_dummies.json",
              "random periods": "grunfeld_random_period_dummies.json"}
OTHER_MODELS = ["pooled", "fd periods cluster", "between", "within cluster level=0.90",
                "random hc1"]
# level= word -> the percentage the interval headers must show
LEVELS = {"": "95%", "level=0.90": "90%", "level=0.99": "99%", "level=0.975": "97.5%"}
HEADER = ["term", "coefficient", "standard error", "t ratio", "two-sided p"]


def texts_of(rows):
    return [v for row in rows for v in row if isinstance(v, str) and v]


class LabelTests(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.office = Office(extensions=[oxt_path()], timeout=500).__enter__()
        try:
            cls.doc = cls.office.new_calc()
            cls.sheet = cls.doc.Sheets.getByIndex(0)
            put_grunfeld(cls.sheet)
        except BaseException:
            cls.office.stop()  # tearDownClass is not called when setUpClass fails
            raise
        cls.col = 6

    @classmethod
    def tearDownClass(cls):
        cls.office.stop()

    def block(self, nrows, ncols, formula):
        """The values of an array formula placed to the right of the data, each block
        in columns of its own (the column counter is the class's, shared by the tests)."""
        b = ArrayFormula(self.sheet, self.next_col(ncols), 0, nrows, ncols, formula)
        self.doc.calculateAll()
        return b.values()

    @classmethod
    def next_col(cls, ncols):
        col = cls.col
        cls.col += ncols + 1
        return col

    def assert_own_words(self, what, texts):
        for t in texts:
            self.assertEqual(old_wording(t), [], f"{what}: {t!r}")

    def test_summary_labels_and_fit_measures(self):
        for model in list(REFERENCES) + OTHER_MODELS:
            rows = self.block(40, 2, f'=WEFT.SUMMARY({R};"{model}")')
            with self.subTest(model=model):
                self.assert_own_words(f"WEFT.SUMMARY {model}", texts_of(rows))
                got = {r[0]: r[1] for r in rows if isinstance(r[0], str) and r[0]}
                labels = [r[0] for r in rows]
                if model.split()[0] not in ("within", "random"):
                    self.assertFalse([k for k in got if k.startswith(FIT)], model)
                    continue
                self.assertEqual([m[0] for m in MEASURES],
                                 [lab for lab in labels if isinstance(lab, str)
                                  and lab.startswith(FIT)], "all rows, unit means, deviations")
                if model not in REFERENCES:
                    continue
                res = reference(REFERENCES[model])["results"]
                for label, word, key in MEASURES:
                    key = key or ("r_squared_within" if model.startswith("within")
                                  else "r_squared_within_corr2")
                    self.assertTrue(close(got[label], res[key]),
                                    f"{model} {label}: {got[label]} vs "
                                    f"{REFERENCES[model]} results.{key} {res[key]}")
                    value = self.block(1, 1, f'=WEFT.VALUE({R};"{model}";"{word}")')[0][0]
                    self.assertTrue(close(value, res[key]), f"{model} {word}: {value}")

    def test_old_value_words_are_refused(self):
        for word in OLD_VALUE_WORDS:
            got = self.block(1, 1, f'=WEFT.VALUE({R};"within";"{word}")')[0][0]
            self.assertTrue(isinstance(got, str) and got.startswith("weft:"), got)
            self.assertIn("corr2-deviations", got, "the message lists the words there are")

    def test_estimates_header_follows_the_level(self):
        fit_cell = None
        for word, percent in LEVELS.items():
            want = HEADER + [f"{percent} interval from", f"{percent} interval to"]
            rows = self.block(4, 7, f'=WEFT.ESTIMATES({R};"pooled {word}")')
            self.assertEqual(rows[0], want, f"level word {word!r}")
            self.assert_own_words("WEFT.ESTIMATES header", rows[0])
            fit_cell = ArrayFormula(self.sheet, self.next_col(1), 0, 1, 1,
                                    f'=WEFT.FIT({R};"within {word}")').address
            rows = self.block(3, 7, f"=WEFT.FIT.ESTIMATES({fit_cell})")
            self.assertEqual(rows[0], want, f"fit cell, level word {word!r}")

    def test_test_labels_and_hausman_warning(self):
        for name, size in [("HAUSMAN", 13), ("EFFECTS", 5), ("SERIAL", 13), ("HETERO", 8)]:
            model = '"within"' if name != "HETERO" else '"pooled"'
            rows = self.block(size, 2, f"=WEFT.{name}({R};{model})")
            self.assert_own_words(f"WEFT.{name}", texts_of(rows))
        # An invented panel (6 units x 4 periods, seed 1 of Python's random) where the
        # within estimates are more precise than random in some direction: the warning
        # row says which form to read.
        rnd = random.Random(1)
        panel = [["unit", "period", "y", "x1", "x2"]]
        for i in range(6):
            a = rnd.gauss(0, 1)
            for s in range(4):
                v1, v2 = rnd.gauss(0, 1), rnd.gauss(0, 1)
                panel.append([i, s, a + 0.5 * v1 - 0.3 * v2 + rnd.gauss(0, 1), v1, v2])
        sheets = self.doc.Sheets
        sheets.insertNewByName("npd", sheets.Count)
        put_rows(sheets.getByName("npd"), 0, 0, panel)
        rows = self.block(13, 2, "=WEFT.HAUSMAN($npd.C1:C25;$npd.D1:E25;$npd.A1:A25;"
                                 "$npd.B1:B25)")
        got = {r[0]: r[1] for r in rows if isinstance(r[0], str)}
        self.assertEqual(got.get("within less precise than random in every direction"), "no")
        warning = [r[1] for r in rows if r[0] == "warnings"]
        self.assertTrue(warning and "robust" in warning[0], rows)
        self.assert_own_words("WEFT.HAUSMAN warning", texts_of(rows))

    def test_wizard_texts(self):
        fd = self.office.service("com.sun.star.sheet.FunctionDescriptions")
        seen = 0
        for i in range(fd.getCount()):
            d = {p.Name: p.Value for p in fd.getByIndex(i)}
            if not d["Name"].startswith("WEFT."):
                continue
            seen += 1
            self.assert_own_words(d["Name"], [d["Description"]])
            for a in d["Arguments"] or ():
                self.assert_own_words(f"{d['Name']} {a.Name}", [a.Description])
                if a.Name == "what":
                    for word in ["corr2-rows", "corr2-means", "corr2-deviations"]:
                        self.assertIn(word, a.Description, d["Name"])
        self.assertGreaterEqual(seen, 27, "every WEFT function's texts were read")


if __name__ == "__main__":
    unittest.main(verbosity=2)
