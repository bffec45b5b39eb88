#!/usr/bin/env python3
"""weft.fit(..., weights="w") on the Grunfeld panel with the invented weight column of
tests/data/panel/grunfeld_weighted.csv, against weights_reference.json (R 4.2 lm(weights
= ) on each explicit estimated equation with sandwich 3.0.2; within against the weighted
dummy-variable regression; written by weights_reference.R there), relative 1e-9; the
model word weights=w on the same column gives the same numbers exactly; a negative
weight names its row (the frame position) and NaN drops the row."""
import math
import os
import unittest

import numpy as np
import pandas as pd

import support
import weft

TOL = 1e-9
CASES = [("pooled", "pooled", ["hc1", "cluster", "dk"]), ("fd", "fd", ["classical", "cluster-period"]),
         ("within", "within", ["hc2", "cluster-both"]), ("between", "between", ["hc3", "cluster0"]),
         ("within periods", "within_periods", ["cluster"])]


def frame():
    return pd.read_csv(os.path.join(support.DATA, "grunfeld_weighted.csv"))


class WeightTests(unittest.TestCase):

    def test_weights_equal_r(self):
        ref = support.reference("weights_reference")
        data = frame()
        checked = 0
        for model, key, families in CASES:
            for family in families:
                r = weft.fit(data, "inv", ["value", "capital"], "firm", "year",
                             model=f"{model} {family}", weights="w")
                word = weft.fit(data, "inv", ["value", "capital", "w"], "firm", "year",
                                model=f"{model} {family} weights=w")
                for j, term in enumerate(ref[key]["terms"]):
                    row = r.coefficients.loc[term]
                    support.close(self, row["estimate"], ref[key]["estimate"][j], TOL, f"{model} {term} estimate")
                    support.close(self, row["se"], ref[key][family]["se"][j], TOL, f"{model} {family} {term} se")
                    self.assertEqual(row["se"], word.coefficients.loc[term, "se"])
                    checked += 2
        self.assertGreaterEqual(checked, 40)

    def test_bad_and_blank_weights(self):
        data = frame()
        bad = data.copy()
        bad.loc[3, "w"] = -1.5
        with self.assertRaises(weft.WeftError) as caught:
            weft.fit(bad, "inv", ["value", "capital"], "firm", "year", weights="w")
        self.assertIn('weights "w", row 3', str(caught.exception))
        blank = data.copy()
        blank.loc[3, "w"] = np.nan
        r = weft.fit(blank, "inv", ["value", "capital"], "firm", "year", weights="w")
        self.assertEqual(r.value("n"), 197.0)
        self.assertEqual(r.summary["rows dropped"], 1.0)
        self.assertTrue(math.isnan(r.residuals.iloc[3]))


if __name__ == "__main__":
    unittest.main()
