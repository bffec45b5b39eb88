"""weft.dask.fit with observation weights (label dask): the test starts a local cluster
of 2 worker processes on loopback itself and stops it at the end.

Expected values:
- R: the Grunfeld panel with the invented weight column of
  tests/data/panel/grunfeld_weighted.csv (two rows of weight 0) split into partitions
  of whole firms, against weights_reference.json (R 4.2 lm(weights = ) on each explicit
  estimated equation with sandwich 3.0.2, written by weights_reference.R there; the same
  reference that checks the one-machine weighted fit in test_weights.py), relative 1e-9
  as there: pooled, fd and within, each with and without period indicators, under every
  standard-error family the partition route supports (classical, hc0, hc1, cluster,
  cluster0, cluster-period, dk).
- weft.fit with the same weights on the same rows in one pandas frame, itself checked
  against R as above: every estimate, SE, t, p, interval, summary number and joint test
  equal to relative 1e-10, on an invented panel with weights of 0, blank weights and
  fd gaps, for the same 42 model and family pairs.
"""
import math
import os
import unittest

import numpy as np
import pandas as pd

import support
import weft
import weft.dask

import dask.dataframe as dd
from distributed import Client, LocalCluster

from test_dask import assert_same, assert_same_series, panel

ESTIMATORS = ["pooled", "fd", "within"]
FAMILIES = ["classical", "hc0", "hc1", "cluster", "cluster0", "cluster-period", "dk"]
MODELS = [(f"{e}{p}", family) for e in ESTIMATORS for p in ("", " periods") for family in FAMILIES]


def noisy_period_ses(model, family):
    """With period indicators, cluster-period and dk sum the scores within periods, and
    the score of a period's own indicator sums to 0 there (its normal equation): its SE
    (and so t, p, the interval and a joint test holding it) is rounding noise on any route,
    which no second computation matches to 1e-10 or to R."""
    return "periods" in model and family in ("cluster-period", "dk")


def weighted_panel():
    """An invented panel (test_dask.panel) with a weight column: gamma weights, 1% zero,
    0.5% blank."""
    frame = panel(units=6000, periods=10, seed=16)
    rng = np.random.default_rng(61)
    w = rng.gamma(2.0, 0.7, size=len(frame))
    w[rng.random(len(frame)) < 0.01] = 0.0
    w[rng.random(len(frame)) < 0.005] = np.nan
    return frame.assign(w=w)


def by_units(frame, unit, parts):
    """A dask frame of `parts` partitions of consecutive whole units, in the frame's row
    order (the frame is sorted by unit), so that row positions are the frame's."""
    codes = pd.factorize(frame[unit])[0]
    block = codes * parts // (codes.max() + 1)
    return dd.concat([dd.from_pandas(frame[block == k], npartitions=1) for k in range(parts)])


class WeightedOverPartitions(unittest.TestCase):

    @classmethod
    def setUpClass(cls):
        cls.cluster = LocalCluster(n_workers=2, threads_per_worker=1, processes=True, host="127.0.0.1",
                                   dashboard_address=None, silence_logs=40)
        cls.client = Client(cls.cluster)

    @classmethod
    def tearDownClass(cls):
        cls.client.close()
        cls.cluster.close()

    def test_grunfeld_weighted_equals_r(self):
        ref = support.reference("weights_reference")
        data = pd.read_csv(os.path.join(support.DATA, "grunfeld_weighted.csv"))
        ddf = by_units(data, "firm", 4)
        self.assertEqual(ddf.npartitions, 4)
        checked = 0
        for model, family in MODELS:
            key = model.replace(" ", "_")
            with self.subTest(model=model, family=family):
                got = weft.dask.fit(ddf, "inv", ["value", "capital"], "firm", "year", model=f"{model} {family}",
                                    weights="w")
                self.assertEqual(got.value("n"), ref[key]["nobs"])
                self.assertEqual(got.summary["rows with weight 0"], float((data["w"] == 0).sum()))
                support.close(self, got.value("ssr"), ref[key]["ssr"], 1e-9, f"{model} ssr")
                for j, term in enumerate(ref[key]["terms"]):
                    row = got.coefficients.loc[term]
                    support.close(self, row["estimate"], ref[key]["estimate"][j], 1e-9, f"{model} {term} estimate")
                    if noisy_period_ses(model, family) and term.startswith("period"):
                        continue
                    support.close(self, row["se"], ref[key][family]["se"][j], 1e-9, f"{model} {family} {term} se")
                    checked += 2
        self.assertGreaterEqual(checked, 400)

    def test_weighted_equals_one_machine(self):
        frame = weighted_panel()
        ddf = self.client.persist(by_units(frame, "unit", 8))
        for model, family in MODELS:
            text = f"{model} {family}"
            with self.subTest(model=text):
                got = weft.dask.fit(ddf, "y", ["x1", "x2"], "unit", "year", model=text, weights="w")
                want = weft.fit(frame, "y", ["x1", "x2"], "unit", "year", model=text, weights="w")
                self.assertGreater(want.summary["rows with weight 0"], 0)
                if noisy_period_ses(model, family):
                    slopes = [t for t in want.coefficients.index if not t.startswith("period")]
                    assert_same_rows(self, got, want, slopes, text)
                else:
                    assert_same(self, got, want, text)
                self.assertEqual(got.warnings, want.warnings)

    def test_weights_named_in_the_model_text(self):
        frame = weighted_panel()
        ddf = by_units(frame, "unit", 5)
        for text in ("pooled cluster weights=w", "within periods hc1 weights=w"):
            with self.subTest(model=text):
                got = weft.dask.fit(ddf, "y", ["x1", "x2", "w"], "unit", "year", model=text)
                want = weft.fit(frame, "y", ["x1", "x2", "w"], "unit", "year", model=text)
                assert_same(self, got, want, text)

    def test_bad_weights(self):
        frame = weighted_panel()
        bad = frame.copy()
        bad.loc[4321, "w"] = -0.5
        with self.assertRaises(weft.WeftError) as caught:
            weft.dask.fit(by_units(bad, "unit", 4), "y", ["x1"], "unit", "year", weights="w")
        self.assertIn('weights "w", row 4321', str(caught.exception))   # the frame position, as weft.fit
        self.assertIn("negative", str(caught.exception))
        zero = frame.assign(w=0.0)
        with self.assertRaises(weft.WeftError) as caught:
            weft.dask.fit(dd.from_pandas(zero, npartitions=4), "y", ["x1"], "unit", "year", weights="w")
        self.assertIn("every row with its values present has weight 0", str(caught.exception))
        with self.assertRaises(weft.WeftError) as caught:
            weft.dask.fit(dd.from_pandas(frame, npartitions=4), "y", ["x1"], "unit", "year", weights="nothing")
        self.assertIn("no column 'nothing'", str(caught.exception))
        with self.assertRaises(weft.WeftError) as caught:
            weft.dask.fit(dd.from_pandas(frame, npartitions=4), "y", ["x1"], "unit", "year", model="within cr2",
                          weights="w")
        self.assertIn("cr2", str(caught.exception))


def assert_same_rows(test, got, want, terms, what, rel=1e-10):
    """Every column of the coefficient table for `terms`, every estimate, the summary
    numbers that do not read the period terms' SEs, and the rows' residuals and fitted
    values (assert_same_series), equal to rel."""
    assert_same_series(test, got, want, what, rel)
    test.assertEqual(list(got.coefficients.index), list(want.coefficients.index), what)
    a = got.coefficients.loc[terms].to_numpy()
    b = want.coefficients.loc[terms].to_numpy()
    test.assertLessEqual(np.max(np.abs(a - b) / np.where(b == 0, 1.0, np.abs(b))), rel, what)
    e_got, e_want = got.coefficients["estimate"].to_numpy(), want.coefficients["estimate"].to_numpy()
    test.assertLessEqual(np.max(np.abs(e_got - e_want) / np.abs(e_want)), rel, what)
    for label in ("observations used", "residual std deviation", "sum of squared residuals"):
        if label in want.summary:
            g, w = got.summary[label], want.summary[label]
            test.assertLessEqual(abs(g - w), rel * abs(w), f"{what}: {label}")
    slopes = [t for t in terms if t != "intercept"]
    j_got, j_want = got.joint(slopes), want.joint(slopes)
    for field in ("f", "chi2", "chi2_p"):
        g, w = getattr(j_got, field), getattr(j_want, field)
        test.assertLessEqual(abs(g - w), rel * max(abs(w), 1e-300), f"{what}: joint {field}")
    test.assertFalse(math.isnan(j_got.f), what)


if __name__ == "__main__":
    unittest.main(verbosity=2)
