#!/usr/bin/env python3
"""The labels and words of the C interface are weft's own (issue 21; FUNCTIONS.md
"Labels"), read through ctypes as any host would:

- every summary item (label and text) of many models on the Grunfeld panel, the
  Hausman warnings and the message listing the value words show none of the old
  wording (tests/common/old_labels.py);
- within and random show the three fit measures under their new labels, in the order
  all rows, unit means, deviations, and the value words corr2-rows, corr2-means and
  corr2-deviations give the same numbers; the old value words (old_labels.OLD_VALUE_WORDS)
  are refused (WEFT_EMODEL);
- the numbers are what the labels say. Expected values: tests/data/panel/
  grunfeld_{within,random}[_period_dummies].json, results.r_squared_*_corr2 (R plm,
  squared correlations of outcome and slope prediction; within's deviation measure is
  plm's r_squared_within, the same number by the OLS identity R^2 = corr^2(y, yhat)),
  relative tolerance 1e-9 (tests/data/panel/README.md).

usage: check_labels.py <libweft.so> <tests/data/panel>
"""
import csv
import ctypes
import json
import os
import random
import sys

sys.path.insert(0, os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "common"))
from old_labels import OLD_VALUE_WORDS, old_wording  # noqa: E402

WEFT_EMODEL = -5  # weft.h
FIT = "squared correlation of outcome and slope prediction, "
NEW_LABELS = [(FIT + "all rows", "corr2-rows", "r_squared_overall_corr2"),
              (FIT + "unit means", "corr2-means", "r_squared_between_corr2"),
              (FIT + "deviations from unit means", "corr2-deviations", None)]
OLD_WORDS = OLD_VALUE_WORDS

failures = []


def check(cond, what):
    print(("ok   " if cond else "FAIL ") + what)
    if not cond:
        failures.append(what)


class Item(ctypes.Structure):
    _fields_ = [("label", ctypes.c_char_p), ("kind", ctypes.c_int),
                ("number", ctypes.c_double), ("text", ctypes.c_char_p)]


class Wald(ctypes.Structure):
    _fields_ = [(n, ctypes.c_double) for n in ("f", "f_df1", "f_df2", "f_p", "chi2",
                                               "chi2_df", "chi2_p")]


class Hausman(ctypes.Structure):
    _fields_ = [("statistic", ctypes.c_double), ("df", ctypes.c_double),
                ("p", ctypes.c_double), ("rank", ctypes.c_double),
                ("positive_definite", ctypes.c_int), ("robust", Wald),
                ("auxiliary_classical", Wald)]


def columns(v):
    return (ctypes.c_double * len(v))(*v)


class Weft:
    def __init__(self, path):
        self.lib = ctypes.CDLL(path)
        self.lib.weft_last_error.restype = ctypes.c_char_p
        self.lib.weft_test_warnings.restype = ctypes.c_char_p

    def ok(self, status):
        if status != 0:
            raise RuntimeError(self.lib.weft_last_error().decode())

    def panel(self, units, periods, y, xs):
        """A panel of number columns; xs is a list of (name, column)."""
        p = ctypes.c_void_p()
        self.ok(self.lib.weft_panel_new(ctypes.byref(p), ctypes.c_size_t(len(y)),
                                        ctypes.c_size_t(len(xs))))
        self.ok(self.lib.weft_panel_set_units_number(p, columns(units), None))
        self.ok(self.lib.weft_panel_set_periods(p, columns(periods), None))
        self.ok(self.lib.weft_panel_set_outcome(p, b"y", columns(y), None))
        for name, x in xs:
            self.ok(self.lib.weft_panel_add_regressor(p, name.encode(), columns(x), None))
        return p

    def model(self, panel, text):
        m = ctypes.c_void_p()
        self.ok(self.lib.weft_model_new_text(ctypes.byref(m), panel, text.encode()))
        return m

    def summary(self, m):
        n = ctypes.c_size_t()
        self.ok(self.lib.weft_model_summary_count(m, ctypes.byref(n)))
        items = []
        for i in range(n.value):
            it = Item()
            self.ok(self.lib.weft_model_summary_item(m, ctypes.c_size_t(i), ctypes.byref(it)))
            items.append((it.label.decode(), it.number, it.text.decode()))
        return items

    def value(self, m, what):
        v = ctypes.c_double()
        status = self.lib.weft_model_value(m, what.encode(), None, ctypes.byref(v))
        return status, v.value, self.lib.weft_last_error().decode()


def check_models(weft, data):
    rows = list(csv.DictReader(open(os.path.join(data, "grunfeld.csv"))))
    col = lambda name: [float(r[name]) for r in rows]  # noqa: E731
    p = weft.panel(col("firm"), col("year"), col("inv"),
                   [("value", col("value")), ("capital", col("capital"))])
    models = ["pooled", "fd", "between", "within", "random", "within periods",
              "random periods", "pooled cluster", "within hc1", "fd dk", "within cluster-both"]
    refs = {"within": "grunfeld_within.json", "random": "grunfeld_random.json",
            "within periods": "grunfeld_within_period_dummies.json",
            "random periods": "grunfeld_random_period_dummies.json"}
    for text in models:
        m = weft.model(p, text)
        items = weft.summary(m)
        for label, _, value in items:
            check(not old_wording(label) and not old_wording(value),
                  f"{text}: summary item {label!r} = {value!r} has none of the old wording")
        labels = [label for label, _, _ in items]
        if text in refs:
            with open(os.path.join(data, refs[text])) as f:
                res = json.load(f)["results"]
            positions = []
            for label, word, key in NEW_LABELS:
                key = key or ("r_squared_within" if text.startswith("within")
                              else "r_squared_within_corr2")
                want = res[key]
                got = [n for lab, n, _ in items if lab == label]
                check(len(got) == 1 and abs(got[0] - want) <= 1e-9 * abs(want),
                      f"{text}: {label!r} = {got} equals {refs[text]} results.{key} = {want}")
                status, v, _ = weft.value(m, word)
                check(status == 0 and abs(v - want) <= 1e-9 * abs(want),
                      f"{text}: value {word!r} = {v} equals results.{key}")
                positions.append(labels.index(label) if label in labels else -1)
            check(positions == sorted(positions) and -1 not in positions,
                  f"{text}: the fit measures come in the order all rows, unit means, "
                  f"deviations ({positions})")
        elif text.split()[0] in ("within", "random"):
            check(all(label in labels for label, _, _ in NEW_LABELS),
                  f"{text}: the three fit measures are in its summary")
        else:
            check(not any(lab.startswith(FIT) for lab in labels),
                  f"{text}: no fit measure of within and random in its summary")
        for word in OLD_WORDS:
            status, _, message = weft.value(m, word)
            check(status == WEFT_EMODEL and not old_wording(message.replace(word, "")),
                  f"{text}: the old value word {word!r} is refused, and the words listed "
                  f"are the new ones ({message[:60]}...)")
        weft.lib.weft_model_free(m)
    weft.lib.weft_panel_free(p)


def check_hausman_warning(weft):
    """An invented panel (6 units x 4 periods, seed 1 of Python's random) where within
    is more precise than random in some direction: the warning tells the reader to
    read the robust rows, in weft's own words."""
    rnd = random.Random(1)
    u, t, y, x1, x2 = [], [], [], [], []
    for i in range(6):
        a = rnd.gauss(0, 1)
        for s in range(4):
            v1, v2 = rnd.gauss(0, 1), rnd.gauss(0, 1)
            u.append(i), t.append(s), x1.append(v1), x2.append(v2)
            y.append(a + 0.5 * v1 - 0.3 * v2 + rnd.gauss(0, 1))
    p = weft.panel(u, t, y, [("x1", x1), ("x2", x2)])
    h = Hausman()
    weft.ok(weft.lib.weft_test_hausman(p, None, ctypes.byref(h)))
    warning = weft.lib.weft_test_warnings().decode()
    check(h.positive_definite == 0, "the invented panel has a covariance difference that "
                                    "is not positive in every direction")
    check("robust" in warning and "classical" in warning and not old_wording(warning),
          f"the Hausman warning says which form to read, in weft's words: {warning!r}")
    weft.lib.weft_panel_free(p)


def main():
    library, data = sys.argv[1:3]
    weft = Weft(library)
    check_models(weft, data)
    check_hausman_warning(weft)
    print(f"{len(failures)} failed" if failures else "all checks passed")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
