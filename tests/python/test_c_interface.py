#!/usr/bin/env python3
"""weft.fit against weft's C interface called directly: the README's ctypes example
(tests/cabi/example_ctypes.py, standard library only) and a raw ctypes fit of a panel
with text unit ids, a gap and missing values, whose columns are copied
(weft_panel_set_*) where the package borrows them. weft.h promises that results never
depend on borrowing, so every number must be identical."""
import ctypes
import os
import subprocess
import sys
import unittest

import numpy as np
import pandas as pd

import support
import weft


def random_panel():
    """Random data (both sides fit the same data): 12 units with text ids, 8 periods,
    one gap, three missing values."""
    rng = np.random.default_rng(20261204)
    units = np.repeat([f"unit {chr(65 + i)}" for i in range(12)], 8)
    periods = np.tile(np.arange(2001, 2009, dtype=float), 12)
    x1, x2 = rng.normal(size=96), rng.normal(size=96)
    y = 1.0 + 0.5 * x1 - 0.25 * x2 + np.repeat(rng.normal(size=12), 8) + rng.normal(size=96)
    frame = pd.DataFrame({"unit": units, "year": periods, "y": y, "x1": x1, "x2": x2})
    frame = frame.drop(index=[13, 50]).reset_index(drop=True)  # a gap in units B and G
    frame.loc[[5, 40], "x1"] = np.nan
    frame.loc[70, "y"] = np.nan
    return frame


def raw_fit(lib, frame, model):
    """The fit through weft.h alone: copying setters, then every table read back."""
    n = len(frame)
    c_double_array = lambda values: (ctypes.c_double * n)(*values)
    mask = lambda column: (ctypes.c_ubyte * n)(*frame[column].isna().astype(int))
    v = lambda column: c_double_array(frame[column].fillna(0.0))
    panel, fitted_model = ctypes.c_void_p(), ctypes.c_void_p()
    check = lambda status: status == 0 or sys.exit(lib.weft_last_error().decode())
    check(lib.weft_panel_new(ctypes.byref(panel), ctypes.c_size_t(n), ctypes.c_size_t(0)))
    ids = (ctypes.c_char_p * n)(*[u.encode() for u in frame["unit"]])
    check(lib.weft_panel_set_units_text(panel, ids, None))
    check(lib.weft_panel_set_periods(panel, v("year"), None))
    check(lib.weft_panel_set_outcome(panel, b"y", v("y"), mask("y")))
    for name in ("x1", "x2"):
        check(lib.weft_panel_add_regressor(panel, name.encode(), v(name), mask(name)))
    check(lib.weft_model_new_text(ctypes.byref(fitted_model), panel, model.encode()))
    lib.weft_panel_free(panel)
    out = {}
    size = ctypes.c_size_t()
    for name, function in (("coefficients", lib.weft_model_coefficients),
                           ("covariance", lib.weft_model_covariance)):
        check(function(fitted_model, None, ctypes.c_size_t(0), ctypes.byref(size)))
        buf = (ctypes.c_double * size.value)()
        check(function(fitted_model, buf, size, ctypes.byref(size)))
        out[name] = np.array(buf[:])
    for name, function in (("residuals", lib.weft_model_residuals), ("fitted", lib.weft_model_fitted)):
        buf = (ctypes.c_double * n)()
        check(function(fitted_model, buf, None, ctypes.c_size_t(n), None))
        out[name] = np.array(buf[:])
    lib.weft_model_free(fitted_model)
    return out


class CInterface(unittest.TestCase):
    def test_readme_ctypes_example(self):
        # The example prints the pooled cluster-by-firm estimate and se of value and
        # capital with 12 significant digits.
        example = os.path.join(support.SOURCE, "tests", "cabi", "example_ctypes.py")
        run = subprocess.run([sys.executable, example, os.environ["WEFT_LIBRARY"]], cwd=support.DATA,
                             capture_output=True, text=True, check=True)
        printed = {tuple(line.split()[:2]): float(line.split()[2]) for line in run.stdout.splitlines()}
        self.assertEqual(len(printed), 4)
        result = weft.fit(support.grunfeld(), "inv", ["value", "capital"], "firm", "year", "pooled cluster")
        for (term, what), number in printed.items():
            support.close(self, result.coefficients.loc[term, what], number, 1e-11, f"{term} {what}")

    def test_same_numbers_as_weft_h(self):
        lib = ctypes.CDLL(os.environ["WEFT_LIBRARY"])
        lib.weft_last_error.restype = ctypes.c_char_p
        frame = random_panel()
        for model in ("pooled hc1", "fd cluster", "within periods cluster-period", "random dk",
                      "between", "fd periods cluster-both level=0.9"):
            with self.subTest(model=model):
                raw = raw_fit(lib, frame, model)
                result = weft.fit(frame, "y", ["x1", "x2"], "unit", "year", model)
                np.testing.assert_array_equal(result.coefficients.to_numpy().ravel(), raw["coefficients"])
                np.testing.assert_array_equal(result.covariance.to_numpy().ravel(), raw["covariance"])
                np.testing.assert_array_equal(result.residuals.to_numpy(), raw["residuals"])
                np.testing.assert_array_equal(result.fitted.to_numpy(), raw["fitted"])
                # the three missing values leave their rows out of every estimated equation
                self.assertTrue(result.residuals.iloc[[5, 40, 70]].isna().all())


if __name__ == "__main__":
    unittest.main()
