#!/usr/bin/env python3
"""How frames are read: results aligned to a shuffled frame's index, text and numeric
unit ids, numeric and date periods, missing values. Expected values: the Grunfeld
reference files (R plm/sandwich/lmtest, tests/data/panel/README.md) and residuals
recomputed here with pandas from the reference coefficients."""
import datetime
import gc
import unittest

import numpy as np
import pandas as pd

import support
import weft

TOL = 1e-9
REGRESSORS = ["value", "capital"]


def shuffled(frame):
    """The rows in a random order, with index labels that are neither positions nor
    sorted."""
    out = frame.sample(frac=1.0, random_state=7)
    out.index = [f"r{i}" for i in out.index]
    return out


class Alignment(unittest.TestCase):
    def test_residuals_follow_the_index(self):
        frame = shuffled(support.grunfeld())
        for case, model in (("grunfeld_pooled", "pooled"), ("grunfeld_within", "within"),
                            ("grunfeld_fd", "fd")):
            with self.subTest(model=model):
                coef = support.reference(case)["results"]["coef"]
                result = weft.fit(frame, "inv", REGRESSORS, "firm", "year", model)
                self.assertTrue(result.residuals.index.equals(frame.index))
                self.assertTrue(result.fitted.index.equals(frame.index))
                expected = self.expected_residuals(frame, model, coef)
                used = expected.notna()
                self.assertTrue((result.residuals.notna() == used).all())
                for label in frame.index[used.to_numpy()]:
                    support.close(self, result.residuals[label], expected[label], 1e-8, f"residual {label}")
                # the estimated equation's outcome = fitted + residual (weft.h)
                outcome = (result.fitted + result.residuals)[used]
                self.assertEqual(len(outcome), 190 if model == "fd" else 200)

    @staticmethod
    def expected_residuals(frame, model, coef):
        """Residuals of the estimated equation from the reference coefficients
        (tests/data/panel/README.md, "Estimated equations")."""
        b = np.array([coef["value"], coef["capital"]])
        if model == "pooled":
            return frame["inv"] - coef["intercept"] - frame[REGRESSORS].to_numpy() @ b
        if model == "within":
            means = frame.groupby("firm")[["inv"] + REGRESSORS].transform("mean")
            centred = frame[["inv"] + REGRESSORS] - means
            return centred["inv"] - centred[REGRESSORS].to_numpy() @ b
        earlier = frame[["firm", "year", "inv"] + REGRESSORS].assign(year=frame["year"] + 1)
        merged = frame.reset_index().merge(earlier, on=["firm", "year"], how="left", suffixes=("", "_before"))
        merged = merged.set_index("index").loc[frame.index]
        dy = merged["inv"] - merged["inv_before"]
        dx = merged[REGRESSORS].to_numpy() - merged[[r + "_before" for r in REGRESSORS]].to_numpy()
        return dy - coef["intercept"] - dx @ b


class Columns(unittest.TestCase):
    def assert_reference(self, result, case, names_map=None):
        coef = support.reference(case)["results"]["coef"]
        for key, want in coef.items():
            term = support.weft_term(key) if names_map is None else names_map(key)
            support.close(self, result.coefficients.loc[term, "estimate"], want, TOL, f"{case} {term}")

    def test_text_unit_ids(self):
        frame = support.grunfeld()
        frame["firm"] = [f"company {i:02d}" for i in frame["firm"]]
        result = weft.fit(frame, "inv", REGRESSORS, "firm", "year", "within cluster")
        self.assertEqual(result.summary["units"], 10)
        self.assert_reference(result, "grunfeld_within")
        # categorical ids are read as their text
        frame["firm"] = frame["firm"].astype("category")
        self.assert_reference(weft.fit(frame, "inv", REGRESSORS, "firm", "year", "within"), "grunfeld_within")

    def test_dates_are_day_numbers_from_1899_12_30(self):
        frame = support.grunfeld()
        # Day numbers as spreadsheet cells hold dates: days since 1899-12-30 (from
        # memory; e.g. 2020-01-01 is 43831), computed here with the standard library.
        serial = {y: (datetime.date(y, 1, 1) - datetime.date(1899, 12, 30)).days for y in range(1935, 1955)}
        name = lambda key: (f"period {serial[int(key[7:])]}" if key.startswith("period_") else key)
        stamps = pd.to_datetime(frame["year"].astype(str) + "-01-01")
        forms = {"datetime64": stamps, "with time zone": stamps.dt.tz_localize("Europe/Berlin"),
                 "pandas periods": stamps.dt.to_period("Y"),
                 "Python dates": pd.Series([d.date() for d in stamps], dtype=object)}
        for form, column in forms.items():
            with self.subTest(form=form):
                result = weft.fit(frame.assign(year=column), "inv", REGRESSORS, "firm", "year", "fd periods")
                self.assert_reference(result, "grunfeld_fd_period_dummies", name)
        self.assertEqual(serial[1935], 12785)
        # the time of day is a fraction of a day (1935, the first period, is the
        # reference and has no indicator)
        noon = pd.Series(stamps + pd.Timedelta(hours=12))
        result = weft.fit(frame.assign(year=noon), "inv", REGRESSORS, "firm", "year", "pooled periods")
        self.assertIn(f"period {serial[1936]}.5", result.coefficients.index)

    def test_missing_values_drop_rows(self):
        frame = support.grunfeld()
        frame["value"] = frame["value"].astype(object)
        frame.loc[3, "value"] = None
        frame["capital"] = frame["capital"].round().astype("Int64")
        frame.loc[17, "capital"] = pd.NA
        result = weft.fit(frame, "inv", REGRESSORS, "firm", "year", "pooled")
        self.assertEqual(result.summary["rows dropped"], 2)
        self.assertEqual(result.summary["observations used"], 198)
        self.assertEqual(list(result.residuals[result.residuals.isna()].index), [3, 17])

    def test_dropped_terms_and_warnings(self):
        # Regressors constant within each firm are absorbed by the unit effects of
        # within (the estimator's definition), so weft drops them and the other
        # estimates are those of grunfeld_within.json (R plm; hc1 is its HC1_lsdv).
        frame = support.grunfeld().assign(size=lambda f: 2.0 * f["firm"], size2=lambda f: f["firm"] ** 2)
        result = weft.fit(frame, "inv", REGRESSORS + ["size", "size2"], "firm", "year", "within hc1")
        ref = support.reference("grunfeld_within")["results"]
        self.assertEqual(list(result.coefficients.index), REGRESSORS)
        for term in REGRESSORS:
            support.close(self, result.coefficients.loc[term, "estimate"], ref["coef"][term], TOL, term)
            support.close(self, result.coefficients.loc[term, "se"], ref["se"]["HC1_lsdv"][term], TOL, term)
        self.assertEqual(list(result.dropped), ["size", "size2"])
        self.assertEqual(result.summary["term dropped"], list(result.dropped.values()))
        self.assertTrue(any("hc0-hc3" in w for w in result.warnings), result.warnings)
        self.assertEqual(result.summary["warning"], result.warnings)


class Lifetimes(unittest.TestCase):
    def test_borrowed_columns_live_with_the_result(self):
        # float64 columns are lent to weft in place (weft_panel_borrow_*); the result
        # keeps them alive after the frame is gone, and frees weft's model when it goes.
        frame = support.grunfeld().astype({"inv": float, "value": float, "capital": float})
        result = weft.fit(frame, "inv", REGRESSORS, "firm", "year", "within cluster")
        kept = result._model.keep
        self.assertTrue(any(a is not None and np.shares_memory(a, frame["inv"].to_numpy()) for a in kept))
        del frame
        gc.collect()
        ref = support.reference("grunfeld_within")["results"]["wald_subset"]["CR1"]
        support.close(self, result.joint(REGRESSORS).chi2, ref["wald_chi2"], TOL, "Wald chi-square")
        finalizer = result._model._finalizer
        self.assertTrue(finalizer.alive)
        del result
        gc.collect()
        self.assertFalse(finalizer.alive)


if __name__ == "__main__":
    unittest.main()
