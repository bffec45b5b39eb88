#!/usr/bin/env python3
"""Failures are Python exceptions (weft.WeftError, a ValueError) whose text is weft's
"weft: ..." message naming what to fix, with weft's status code (weft.h)."""
import unittest

import numpy as np
import pandas as pd

import support
import weft

WEFT_EDATA, WEFT_EMODEL, WEFT_ERANGE = -4, -5, -6  # enum weft_status, weft.h


class Errors(unittest.TestCase):
    def setUp(self):
        self.frame = support.grunfeld()

    def fails(self, status=None, *fragments, **arguments):
        arguments = {"outcome": "inv", "regressors": ["value", "capital"], "unit": "firm",
                     "period": "year", **arguments}
        frame = arguments.pop("frame", self.frame)
        with self.assertRaises(weft.WeftError) as caught:
            weft.fit(frame, **arguments)
        error = caught.exception
        self.assertIsInstance(error, ValueError)
        self.assertTrue(str(error).startswith("weft: "), str(error))
        self.assertEqual(error.status, status, str(error))
        for fragment in fragments:
            self.assertIn(fragment, str(error))
        return str(error)

    def test_column_names(self):
        self.fails(None, "'x9'", "regressor", regressors=["value", "x9"])
        self.fails(None, "'investment'", "outcome", outcome="investment")
        self.fails(None, "'company'", "unit", unit="company")
        self.fails(None, "'t'", "period", period="t")
        twice = pd.concat([self.frame, self.frame[["value"]]], axis=1)
        self.fails(None, "2 columns named 'value'", frame=twice)

    def test_columns_that_are_not_numbers(self):
        frame = self.frame.assign(value=self.frame["value"].astype(object))
        frame.loc[4, "value"] = "n/a"
        self.fails(None, "'value'", "row 4", "'n/a'", frame=frame)
        self.fails(None, "DataFrame", frame=self.frame.to_numpy())

    def test_weft_messages(self):
        self.fails(WEFT_EMODEL, "everything", model="fd cluster-everything")
        duplicated = pd.concat([self.frame, self.frame.iloc[[7]]], ignore_index=True)
        self.fails(WEFT_EDATA, "rows 7 and 200", frame=duplicated)
        infinite = self.frame.assign(capital=self.frame["capital"].astype(float))
        infinite.loc[11, "capital"] = np.inf
        self.fails(WEFT_EDATA, "row 11", frame=infinite)

    def test_results_refuse_unknown_names(self):
        result = weft.fit(self.frame, "inv", ["value", "capital"], "firm", "year", "within")
        with self.assertRaises(weft.WeftError) as caught:
            result.joint(["value", "intercept"])
        self.assertEqual(caught.exception.status, WEFT_ERANGE)
        self.assertIn("intercept", str(caught.exception))
        with self.assertRaises(weft.WeftError) as caught:
            result.value("loudness")
        self.assertEqual(caught.exception.status, WEFT_EMODEL)
        self.assertIn("loudness", str(caught.exception))


if __name__ == "__main__":
    unittest.main()
