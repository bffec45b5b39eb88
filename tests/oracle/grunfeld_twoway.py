#!/usr/bin/env python3
"""The two-way (cluster-both) covariance on the Grunfeld reference cases where it is not
positive semi-definite, clipped in the scaled basis that CONVENTIONS.md asks for (issue
15): writes tests/data/panel/grunfeld_twoway_clip.json.

Run by hand from the repository root (python3 tests/oracle/grunfeld_twoway.py; needs R
with the packages of tests/oracle/oracle_reference.R); the output is checked in and the
build never runs it. Source of every number: tests/oracle/oracle_reference.R (R's own
lm, explicit sandwich algebra and eigen(), written from Cameron, Gelbach and Miller 2011
with the clip taken in S = D V D, D = diag(V_unit + V_period)^-1/2, when S's smallest
eigenvalue is below -1e-10 of its largest) run on tests/data/panel/grunfeld.csv; t =
estimate / se, and the two-sided p-values and 95% interval ends from Student's t with
G_min - 1 df in Python mpmath (Debian python3-mpmath) at 30 digits.

The reference set's CR1_both_clipped (R sandwich vcovCL(fix = TRUE)) clips in V's own
units, which changes with the units of a regressor; weft follows CONVENTIONS.md, and
its tests take the clipped values from this file instead.
"""
import json
import os
import subprocess
import tempfile

import mpmath as mp

mp.mp.dps = 30
HERE = os.path.dirname(os.path.abspath(__file__))
DATA = os.path.join(HERE, "..", "data", "panel")
CASES = {"grunfeld_fd": "fd", "grunfeld_fd_period_dummies": "fd periods",
         "grunfeld_pooled_period_dummies": "pooled periods",
         "grunfeld_random_period_dummies": "random periods",
         "grunfeld_within_period_dummies": "within periods"}


def t_upper(t, df):
    x = df / (df + t * t)
    return mp.betainc(mp.mpf(df) / 2, mp.mpf(1) / 2, 0, x, regularized=True) / 2


def t_quantile(prob, df):
    # upper-tail probability 1 - prob; bisection on the monotone tail
    lo, hi = mp.mpf(0), mp.mpf(1000)
    for _ in range(200):
        mid = (lo + hi) / 2
        if t_upper(mid, df) > 1 - prob:
            lo = mid
        else:
            hi = mid
    return (lo + hi) / 2


def main():
    with tempfile.TemporaryDirectory() as tmp:
        cases = os.path.join(tmp, "cases.txt")
        with open(cases, "w") as f:
            f.write("\n".join(CASES.values()) + "\n")
        out = os.path.join(tmp, "out.json")
        subprocess.run(["Rscript", os.path.join(HERE, "oracle_reference.R"),
                        os.path.join(DATA, "grunfeld.csv"), cases, out], check=True)
        with open(out) as f:
            r = json.load(f)
    result = {"source": __doc__.split("\n\n")[1].replace("\n", " "),
              "software": r.get("software"), "cases": {}}
    for name, words in CASES.items():
        c = r["explicit"][words]
        se = c["se"]["cluster-both"]
        df = c["wald"]["cluster-both"]["df2"]
        q = t_quantile(mp.mpf("0.975"), df)
        entry = {"model": words, "clipped": bool(c["cluster_both_clipped"]), "df": df,
                 "se": se, "t": {}, "p": {}, "ci95_low": {}, "ci95_high": {},
                 "wald_regressors": c["wald"]["cluster-both"]}
        for term, s in se.items():
            b = mp.mpf(c["coef"][term])
            t = b / mp.mpf(s)
            entry["t"][term] = float(t)
            entry["p"][term] = float(2 * t_upper(abs(t), df))
            entry["ci95_low"][term] = float(b - q * mp.mpf(s))
            entry["ci95_high"][term] = float(b + q * mp.mpf(s))
        result["cases"][name] = entry
    with open(os.path.join(DATA, "grunfeld_twoway_clip.json"), "w") as f:
        json.dump(result, f, indent=1)
        f.write("\n")


if __name__ == "__main__":
    main()
