"""Shared helpers of the python tests: the package from the source tree, the Grunfeld
data and reference files, and a relative comparison.

The tests run with WEFT_LIBRARY set by CTest to the built libweft and with
WEFT_PACKAGE_DIR (cabi/python) and WEFT_TEST_DATA (tests/data/panel)."""
import json
import math
import os
import sys

HERE = os.path.dirname(os.path.abspath(__file__))
SOURCE = os.path.abspath(os.path.join(HERE, "..", ".."))
PACKAGE_DIR = os.environ.get("WEFT_PACKAGE_DIR", os.path.join(SOURCE, "cabi", "python"))
DATA = os.environ.get("WEFT_TEST_DATA", os.path.join(SOURCE, "tests", "data", "panel"))
if PACKAGE_DIR not in sys.path:
    sys.path.insert(0, PACKAGE_DIR)

import pandas as pd  # noqa: E402


def grunfeld():
    """tests/data/panel/grunfeld.csv: the Grunfeld panel as shipped in R's plm."""
    return pd.read_csv(os.path.join(DATA, "grunfeld.csv"))


def reference(case):
    """tests/data/panel/<case>.json: R 4.2.2 plm 2.6.2 / sandwich 3.0.2 / lmtest 0.9.40,
    each value recomputed in mpmath at 40 digits (tests/data/panel/README.md)."""
    with open(os.path.join(DATA, case + ".json"), encoding="utf-8") as f:
        ref = json.load(f)
    # the clipped two-way values: clipped in the scaled basis (tests/common/twoway_clip.py)
    sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "common"))
    from twoway_clip import with_scaled_clip
    return with_scaled_clip(case, ref, DATA)


def weft_term(key):
    """A reference file's coefficient name as weft's term name."""
    return "period " + key[len("period_"):] if key.startswith("period_") else key


def close(test, got, want, tol, what):
    """Relative comparison to tol (absolute when want is 0)."""
    scale = abs(want) if want != 0 else 1.0
    test.assertTrue(math.isfinite(got), f"{what}: got {got}, expected {want}")
    test.assertLessEqual(abs(got - want), tol * scale, f"{what}: got {got!r}, expected {want!r}")
