#!/usr/bin/env python3
"""weft's live oracle test: weft against R (plm, sandwich, lmtest, clubSandwich) on random panels.

Usage: run_oracle.py --cli PATH/weft_oracle_cli --workdir DIR [--rscript Rscript]
                     [--seed 20261202] [--tolerance 1e-8]

1. Generates, from a fixed seed, random panels that are unbalanced, shuffled and
   gap-ridden (a period absent for every unit, interior gaps in some units, missing
   cells), plus a balanced one and an unbalanced one without interior gaps (where plm's
   row-wise differencing agrees with the grid).
2. Fits every case (pooled, fd, within, between, random; with and without period
   indicators) with weft, through the small C++ program weft_oracle_cli, and with R
   (oracle_reference.R), in the same run.
   cr2 (standard errors, Satterthwaite df per term, HTZ and chi-square joint tests) is
   checked against R clubSandwich through cr2_oracle.R (route "clubSandwich").
3. Compares every number R produced with weft's at a relative tolerance of 1e-8 and
   prints a table of the largest relative differences.

Why 1e-8: both sides solve the same least-squares problems in double precision; on
these panels (condition numbers of the designs up to about 1e5) independent QR
solutions agree to about 1e-12, and the reference JSONs show 1e-15 agreement between
R and a 40-digit computation. 1e-8 leaves room for the accumulated rounding of
sandwich products, eigenvalue clipping and tail probabilities, while every convention
difference the test exists to catch (a degrees-of-freedom choice, a factor G/(G-1), a
difference taken across a gap) moves results by 1e-3 or more.

Exit status: 0 all agree; 1 a mismatch or a value missing on one side; 2 R, a package
or the CLI is missing or failed (an absent oracle is a failure, never a skip). As a
self-check, every nonzero number is also compared after moving weft's value by 100 times
the tolerance: the run fails if such a change would go unnoticed.
"""

import argparse
import csv
import json
import math
import os
import random
import subprocess
import sys

CASES = ["pooled", "pooled periods", "fd", "fd periods", "within", "within periods",
         "random", "random periods", "between", "pooled no-intercept", "fd no-intercept"]
# Panels with a weight column wt (observation weights; random effects refuse weights)
WEIGHTED_CASES = ["pooled weights=wt", "pooled periods weights=wt", "fd weights=wt",
                  "fd periods weights=wt", "within weights=wt", "within periods weights=wt",
                  "between weights=wt", "pooled no-intercept weights=wt"]


# ---- panel generation ----------------------------------------------------------------

def make_panel(rng, n_units, grid, kind, missing_cells):
    """Rows (unit, period, y, x1, x2, x3) of a random panel.

    kind: "gaps" (random start/end and interior gaps), "consecutive" (random start/end,
    no interior gaps), "balanced". Every unit keeps at least 4 rows so that no unit is a
    singleton after missing cells are dropped; the first three grid periods are kept
    for most units so that every period indicator is estimable."""
    T = len(grid)
    beta = (0.5, -0.3, 0.2)
    lam = [rng.gauss(0, 0.5) for _ in grid]
    rows = []
    for i in range(n_units):
        unit = "u%02d" % (i + 1) if i % 3 else "unit %d" % (i + 1)
        a_i = rng.gauss(0, 1.0)
        if kind == "balanced":
            present = list(range(T))
        else:
            start = 0 if rng.random() < 0.6 else rng.randint(1, 3)
            end = T - 1 if rng.random() < 0.5 else rng.randint(T - 4, T - 2)
            present = list(range(start, end + 1))
            if kind == "gaps" and rng.random() < 0.5 and len(present) > 5:
                for _ in range(rng.randint(1, 2)):
                    k = rng.choice(present[1:-1])
                    if len(present) > 5:
                        present.remove(k)
        # heteroskedastic, AR(1) idiosyncratic errors so that the tests have something
        # to find; the oracle compares numbers, not decisions
        e_prev = 0.0
        xs_prev = [rng.gauss(0, 1) for _ in range(3)]
        scale = 0.5 + rng.random()
        for t in range(T):
            x = [0.6 * xs_prev[k] + rng.gauss(0, 1) + (0.4 * a_i if k == 0 else 0.0)
                 for k in range(3)]
            x[2] = 2.0 + 0.3 * x[2]
            xs_prev = x
            e = 0.3 * e_prev + rng.gauss(0, scale * (1 + 0.5 * abs(x[0])))
            e_prev = e
            if t not in present:
                continue
            y = 1.0 + sum(b * v for b, v in zip(beta, x)) + a_i + lam[t] + e
            rows.append([unit, grid[t], y] + x)
    # missing cells, at most one per unit, never in units with fewer than 6 rows
    by_unit = {}
    for r in rows:
        by_unit.setdefault(r[0], []).append(r)
    units = [u for u, rs in by_unit.items() if len(rs) >= 6]
    rng.shuffle(units)
    for u in units[:missing_cells]:
        r = rng.choice(by_unit[u][1:-1])
        r[rng.choice([2, 3, 4, 5])] = None
    rng.shuffle(rows)
    return rows


def add_invariant_regressor(rng, rows):
    """x4: one value per unit (a unit characteristic), entering y; within and fd drop
    it, pooled, between and random estimate it, and Hausman compares x1-x3 only."""
    level = {}
    for r in rows:
        if r[0] not in level:
            level[r[0]] = rng.gauss(0, 1)
        v = level[r[0]]
        if r[2] is not None:
            r[2] += 0.7 * v
        r.append(v)
    return rows


def add_weights(rng, rows):
    """wt: random observation weights in [0.2, 3], about 5% of them 0 and 2% blank."""
    for r in rows:
        u = rng.random()
        r.append(0.0 if u < 0.05 else None if u < 0.07 else rng.uniform(0.2, 3.0))
    return rows


def write_panel(path, rows, weighted=False):
    with open(path, "w", newline="") as f:
        w = csv.writer(f)
        names = ["unit", "period", "y", "x1", "x2", "x3", "x4"][:len(rows[0]) - (1 if weighted else 0)]
        w.writerow(names + (["wt"] if weighted else []))
        for r in rows:
            w.writerow(["" if v is None else (repr(v) if isinstance(v, float) else v)
                        for v in r])


def panels(seed):
    rng = random.Random(seed)
    # 2004 and 2009 are absent for every unit: the grid steps over them
    grid_gap = [2001, 2002, 2003, 2005, 2006, 2007, 2008, 2010, 2011]
    return {
        "gaps_a": make_panel(rng, 40, grid_gap, "gaps", 5),
        "gaps_b": make_panel(rng, 55, list(range(1, 8)), "gaps", 8),
        "consecutive": make_panel(rng, 30, list(range(2010, 2018)), "consecutive", 0),
        "balanced": make_panel(rng, 25, list(range(1990, 1997)), "balanced", 0),
        "invariant": add_invariant_regressor(
            rng, make_panel(rng, 35, list(range(1, 9)), "gaps", 4)),
    }


def weighted_panels(seed):
    """Random weights on unbalanced, gapped, shuffled panels (and a balanced one)."""
    rng = random.Random(seed + 1)
    grid_gap = [2001, 2002, 2003, 2005, 2006, 2007, 2008, 2010, 2011]
    return {
        "weighted_gaps_a": add_weights(rng, make_panel(rng, 40, grid_gap, "gaps", 5)),
        "weighted_gaps_b": add_weights(rng, make_panel(rng, 55, list(range(1, 8)), "gaps", 8)),
        "weighted_balanced": add_weights(rng, make_panel(rng, 25, list(range(1990, 1997)), "balanced", 0)),
    }


# ---- comparison ----------------------------------------------------------------------

def leaves(obj, prefix=()):
    if isinstance(obj, dict):
        for k, v in obj.items():
            yield from leaves(v, prefix + (k,))
    else:
        yield prefix, obj


def lookup(obj, path):
    for k in path:
        if not isinstance(obj, dict) or k not in obj:
            return None
        obj = obj[k]
    return obj


def rel_diff(a, b):
    if a == b:
        return 0.0
    if a is None or b is None:
        return math.inf
    if isinstance(a, bool) or isinstance(b, bool):
        return 0.0 if bool(a) == bool(b) else math.inf
    d = abs(a - b)
    s = max(abs(a), abs(b))
    return d / s if s > 0 else d


def group_of(path):
    """Row label of the summary table: case family and quantity."""
    head = path[1]
    if head in ("se", "wald", "joint", "df"):
        if path[2].startswith("dk="):
            return "%s dk=L" % head
        return "%s %s" % (head, path[2])
    return head


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--cli", required=True)
    ap.add_argument("--workdir", required=True)
    ap.add_argument("--rscript", default="Rscript")
    ap.add_argument("--seed", type=int, default=20261202)
    ap.add_argument("--tolerance", type=float, default=1e-8)
    args = ap.parse_args()
    here = os.path.dirname(os.path.abspath(__file__))
    os.makedirs(args.workdir, exist_ok=True)
    print("oracle seed %d, tolerance %g (relative)" % (args.seed, args.tolerance))

    cases_path = os.path.join(args.workdir, "cases.txt")
    with open(cases_path, "w") as f:
        f.write("\n".join(CASES) + "\n")
    weighted_cases_path = os.path.join(args.workdir, "cases_weighted.txt")
    with open(weighted_cases_path, "w") as f:
        f.write("\n".join(WEIGHTED_CASES) + "\n")
    all_panels = [(name, rows, False) for name, rows in panels(args.seed).items()]
    all_panels += [(name, rows, True) for name, rows in weighted_panels(args.seed).items()]

    failures = []
    undetected = []  # numbers where a change of 100 x tolerance would go unnoticed
    table = {}      # (route, group) -> [max rel diff, count, where]
    compared = 0
    software = None
    for name, rows, weighted in all_panels:
        csv_path = os.path.join(args.workdir, name + ".csv")
        write_panel(csv_path, rows, weighted)
        cases_path = weighted_cases_path if weighted else os.path.join(args.workdir, "cases.txt")
        weft_path = os.path.join(args.workdir, name + ".weft.json")
        r_path = os.path.join(args.workdir, name + ".r.json")
        try:
            p = subprocess.run([args.cli, csv_path, cases_path, weft_path],
                               capture_output=True, text=True)
        except OSError as e:
            print("FAIL: cannot run the weft CLI %s: %s" % (args.cli, e))
            return 2
        if p.returncode != 0:
            print("FAIL: weft CLI on %s: %s%s" % (name, p.stdout, p.stderr))
            return 2
        try:
            p = subprocess.run([args.rscript, os.path.join(here, "oracle_reference.R"),
                                csv_path, cases_path, r_path],
                               capture_output=True, text=True)
        except OSError as e:
            print("FAIL: R is missing (%s): install r-base-core r-cran-plm "
                  "r-cran-sandwich r-cran-lmtest" % e)
            return 2
        if p.returncode != 0:
            print("FAIL: R oracle on %s:\n%s%s" % (name, p.stdout, p.stderr))
            return 2
        # cr2 against clubSandwich (cr2_oracle.R), compared as a third route
        cr2_path = os.path.join(args.workdir, name + ".cr2.json")
        p = subprocess.run(
            [args.rscript, os.path.join(here, "cr2_oracle.R"), csv_path, cases_path, cr2_path],
            capture_output=True, text=True)
        if p.returncode != 0:
            print("FAIL: R cr2 oracle on %s (needs r-cran-clubsandwich):\n%s%s"
                  % (name, p.stdout, p.stderr))
            return 2
        with open(weft_path) as f:
            weft = json.load(f)
        with open(r_path) as f:
            ref = json.load(f)
        with open(cr2_path) as f:
            ref["clubSandwich"] = json.load(f)["clubSandwich"]
        software = ref.get("software")
        for case, msg in (ref.get("plm_errors") or {}).items():
            print("note: plm itself failed on %s / %s (explicit route still compared): %s"
                  % (name, case, msg))

        for route in ("explicit", "plm", "clubSandwich"):
            if route == "plm" and not ref["plm"]:
                continue
            for case, res in ref[route].items():
                for path, rv in leaves(res):
                    full = (case,) + path
                    wpath = full
                    wv = None
                    # plm quantities that weft reports in another shape
                    if path[-1] == "singular":
                        # R found R V R' singular: weft must have refused this test
                        werr = lookup(weft, (case, "errors", "/".join(path[:-1]))) or ""
                        ok = "singular" in werr
                        compared += 1
                        if not ok:
                            failures.append("%s %s %s: R V R' is singular in R, weft "
                                            "did not refuse the test" % (name, route,
                                                                         "/".join(full)))
                        continue
                    if path == ("hausman", "abs_stat"):
                        s = lookup(weft, (case, "hausman", "stat"))
                        wv = None if s is None else abs(s)
                    elif path == ("hausman_aux_classical_chi2",):
                        wv = lookup(weft, (case, "hausman", "aux_classical_chi2"))
                    elif path == ("serial_cluster0_level_f",):
                        s = lookup(weft, (case, "serial"))
                        if s is not None:
                            wv = ((s["slope"] - s["level_null"]) /
                                  s["level_se_cluster0"]) ** 2
                    else:
                        wv = lookup(weft, wpath)
                    if wv is None and rv is not None:
                        errs = lookup(weft, (case, "errors")) or {}
                        why = "; ".join("%s: %s" % kv for kv in errs.items()
                                        if path and path[0] in kv[0]) or "no error given"
                        failures.append("%s %s %s: R gives %r, weft gives nothing (%s)"
                                        % (name, route, "/".join(full), rv, why))
                        continue
                    d = rel_diff(wv, rv)
                    compared += 1
                    key = (route, case, group_of(full))
                    cur = table.setdefault(key, [0.0, 0, ""])
                    cur[1] += 1
                    if d > cur[0]:
                        cur[0] = d
                        cur[2] = "%s:%s" % (name, "/".join(path))
                    if d > args.tolerance:
                        failures.append("%s %s %s: weft %r, R %r, rel diff %.3g"
                                        % (name, route, "/".join(full), wv, rv, d))
                    # Self-check: the comparison must notice weft being off by 100 times
                    # the tolerance, so that this test can fail.
                    if (isinstance(wv, float) and not isinstance(wv, bool) and wv != 0
                            and rel_diff(wv * (1 + 100 * args.tolerance), rv)
                            <= args.tolerance):
                        undetected.append("/".join(full))

    print("\nR %s" % json.dumps(software))
    print("%-9s %-19s %-22s %6s %11s  %s" % ("route", "case", "quantity", "n",
                                             "max rel", "worst at"))
    for (route, case, grp), (mx, n, where) in sorted(table.items()):
        print("%-9s %-19s %-22s %6d %11.3g  %s" % (route, case, grp, n, mx, where))
    if table:
        (route, case, grp), (mx, n, where) = max(table.items(), key=lambda kv: kv[1][0])
        print("\nlargest relative difference: %.3g (%s, %s, %s)" % (mx, route, case, where))
    print("%d numbers compared" % compared)
    if compared == 0:
        print("FAIL: nothing was compared")
        return 1
    if undetected:
        print("FAIL: the comparison would not notice a relative change of %g in %d numbers, "
              "e.g. %s" % (100 * args.tolerance, len(undetected), undetected[0]))
        return 1
    if failures:
        print("FAIL: %d mismatches" % len(failures))
        for f in failures[:200]:
            print("  " + f)
        return 1
    print("all agree within %g" % args.tolerance)
    return 0


if __name__ == "__main__":
    sys.exit(main())
