#!/usr/bin/env python3
"""Writes the seed corpus (corpus/seed-*) for weft_fuzz_cabi: small well-formed panels
in the byte layout that fuzz_cabi.cpp reads (see its header comment), so that fuzzing
starts from inputs that reach the estimators instead of failing at the first check.
Run from anywhere: python3 tests/fuzz/make_seeds.py"""
import os

WORDS = ["pooled", "fd", "within", "random", "between", "classical", "hc0", "hc1", "hc2",
         "hc3", "cluster", "cluster0", "cluster-period", "cluster-both", "dk", "dk=0",
         "dk=1", "dk=3", "periods", "no-intercept", "level=0.9"]
MISSING = 0xF0
NAN, INF = 0xF8, 0xF9


def num(v):
    assert -6 <= v <= 17 and v == int(v)
    return int(v) + 6


def seed(rows, model_words, regressors=1, flags=0, options=(0, 0, 0xFF, 0, 1, 242, 0, 0), query=b""):
    """rows: list of (y, [x...], unit index 0-8 or None, period offset 0-11 or None);
    a value given as a raw byte is marked with a tuple ('raw', b)."""
    out = bytearray([len(rows) - 1, regressors, flags, len(model_words)])
    out += bytes(WORDS.index(w) for w in model_words)
    out += bytes(b & 0xFF for b in options)
    for y, xs, unit, period in rows:
        cell = lambda v: v[1] if isinstance(v, tuple) else (MISSING if v is None else num(v))
        out.append(cell(y))
        out += bytes(cell(x) for x in xs[:regressors])
        out.append(0xF0 if unit is None else unit)
        out.append(0xF0 if period is None else period)
    return bytes(out) + query


# D1 of the hostile catalogue: 3 units x 2 periods, x constant within units.
D1 = [(2, [0], 0, 0), (0, [0], 0, 1), (4, [1], 1, 0), (2, [1], 1, 1), (4, [2], 2, 0), (6, [2], 2, 1)]
# D2: 2 units x 4 periods, within slope exactly 2.
D2 = [(11, [1], 0, 0), (17, [2], 0, 1), (15, [4], 0, 2), (17, [7], 0, 3),
      (-2, [1], 1, 0), (-4, [2], 1, 1), (6, [4], 1, 2), (8, [7], 1, 3)]
D2_two = [(y, [x[0], (x[0] * 3) % 7], u, p) for y, x, u, p in D2]
GAP = [r for i, r in enumerate(D2) if i != 6]
DUP = D1 + [(3, [1], 1, 0)]
WIDE = [(i % 5, [i % 3, (i * 7) % 11, i % 2], i % 6, i // 6) for i in range(36)]

seeds = {
    "d1-pooled": seed(D1, ["pooled"]),
    "d1-within": seed(D1, ["within"]),
    "d1-pooled-hc1": seed(D1, ["pooled", "hc1"]),
    "d2-within-cluster": seed(D2, ["within", "cluster"]),
    "d2-fd-periods": seed(D2, ["fd", "periods"]),
    "d2-random": seed(D2, ["random"]),
    "d2-between": seed(D2, ["between"]),
    "d2-dk": seed(D2, ["within", "dk=1"]),
    "d2-two-pooled-cluster-both": seed(D2_two, ["pooled", "cluster-both"], regressors=2),
    "d2-two-within-periods-hc3": seed(D2_two, ["within", "periods", "hc3"], regressors=2),
    "gap-fd": seed(GAP, ["fd", "cluster0"]),
    "dup-within": seed(DUP, ["within"]),
    "text-units-fd": seed(D2, ["fd", "cluster-period"], flags=1 | 4),
    "struct-within-cluster": seed(D2, [], flags=2, options=(2, 5, 0xFF, 0, 0, 242, 0, 0)),
    "struct-random-periods": seed(D2_two, [], regressors=2, flags=2, options=(3, 2, 0xFF, 1, 1, 229, 0, 0)),
    "no-intercept": seed(D2, ["pooled", "no-intercept", "level=0.9"]),
    "wide-pooled-periods": seed(WIDE, ["pooled", "periods", "hc2"], regressors=3),
    "wide-within-dk": seed(WIDE, ["within", "dk"], regressors=3),
    "nan-and-inf": seed([(("raw", NAN), [1], 0, 0)] + D1[1:] + [(1, [("raw", INF)], 2, 2)], ["pooled"]),
    "blanks": seed([(None, [1], 0, 0), (1, [None], 0, 1), (1, [1], None, 2), (1, [1], 1, None)] + D1, ["pooled"]),
    "no-regressors": seed(D1, ["pooled"], regressors=0),
    "one-row": seed(D1[:1], ["within"]),
}

here = os.path.join(os.path.dirname(os.path.abspath(__file__)), "corpus")
os.makedirs(here, exist_ok=True)
for name, data in seeds.items():
    with open(os.path.join(here, "seed-" + name), "wb") as f:
        f.write(data)
print(f"make_seeds: {len(seeds)} seeds in {here}")
