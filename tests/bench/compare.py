#!/usr/bin/python3
"""Compare weft with reference libraries on one seeded panel, in one run.

Generates one dataset with weft_bench, then times a first-difference fit with
cluster-by-unit (CR1) standard errors in:
  - weft (C interface, weft_bench --read-csv), and the floor (one X'X pass);
  - R plm, model "fd", with vcovHC(method = "arellano", type = "sss");
  - R lm (lm.fit) on data differenced beforehand, with sandwich::vcovCL (HC1);
  - Python statsmodels OLS on data differenced beforehand, cov_type "cluster".
Checks that all agree on every coefficient and standard error, and prints a table
of median times, ratios and peak memory. Exits 1 if any library disagrees.

Reference libraries are oracles here (plm: Croissant & Millo 2008, J. Stat. Softw.
27(2); sandwich: Zeileis 2004, 2006; statsmodels: Seabold & Perktold 2010). All use
the CR1 factor G/(G-1) (N-1)/(N-K) of CONVENTIONS.md.

Usage: tests/bench/compare.py [--bench PATH/weft_bench] [--size 1M|100k|UxTxK]
                              [--reps N] [--plm-reps N] [--json OUT] [--keep DIR]
Run with Debian's /usr/bin/python3 (statsmodels and numpy come from Debian).
"""
import argparse
import json
import os
import platform
import shutil
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
TOP = os.path.dirname(os.path.dirname(HERE))

# Agreement tolerances, relative (common practice, no source): the libraries solve
# by different factorisations (QR with pivoting in R, pinv/QR in statsmodels,
# weft's own), so they agree to about 1e-10 on this well-conditioned design; 1e-7
# leaves room without hiding a wrong convention (a df factor changes the 4th digit).
TOLERANCE_ESTIMATE = 1e-7
TOLERANCE_SE = 1e-7


def ensure_packages():
    deps = os.path.join(TOP, "scripts", "deps.sh")
    if os.path.exists(deps):
        subprocess.run(["bash", deps], check=True)
    else:
        need = ["r-cran-plm", "r-cran-sandwich", "r-cran-data.table", "r-cran-jsonlite",
                "python3-statsmodels", "time"]
        subprocess.run(["apt-get", "install", "-y", "-qq"] + need, check=True)


def timed_process(cmd):
    """Runs cmd under /usr/bin/time; returns (stdout, peak resident bytes)."""
    with tempfile.NamedTemporaryFile("r", suffix=".rss") as rss:
        proc = subprocess.run(["/usr/bin/time", "-f", "%M", "-o", rss.name] + cmd,
                              stdout=subprocess.PIPE, text=True)
        if proc.returncode != 0:
            raise SystemExit("compare: command failed: " + " ".join(cmd))
        kilobytes = int(rss.read().strip().splitlines()[-1])
    return proc.stdout, kilobytes * 1024


def statsmodels_worker(csv, reps, out):
    """Times statsmodels OLS with cluster covariance on data differenced first."""
    import numpy as np
    import pandas as pd
    import statsmodels
    import statsmodels.api as sm

    d = pd.read_csv(csv).sort_values(["unit", "period"], kind="mergesort").reset_index(drop=True)
    regressors = [c for c in d.columns if c.startswith("x")]
    grid = np.sort(d["period"].unique())
    position = np.searchsorted(grid, d["period"].to_numpy())
    unit = d["unit"].to_numpy()
    later = np.nonzero((unit[1:] == unit[:-1]) & (position[1:] == position[:-1] + 1))[0] + 1
    values = d[["y"] + regressors].to_numpy()
    diff = values[later] - values[later - 1]
    y = diff[:, 0]
    X = sm.add_constant(diff[:, 1:], prepend=True)
    groups = unit[later]
    times, cpu = [], []
    result = None
    for _ in range(reps):
        start, cpu_start = time.perf_counter(), time.process_time()
        result = sm.OLS(y, X).fit(cov_type="cluster", cov_kwds={"groups": groups})
        times.append(time.perf_counter() - start)
        cpu.append(time.process_time() - cpu_start)
    with open(out, "w") as f:
        json.dump({"library": "statsmodels %s OLS cov_type=cluster" % statsmodels.__version__,
                   "terms": ["intercept"] + regressors,
                   "estimate": [float(v) for v in result.params],
                   "se": [float(v) for v in result.bse],
                   "median_seconds": float(np.median(times)), "cpu_seconds": float(np.median(cpu)),
                   "times": times}, f)


def machine_description():
    cpu = "unknown CPU"
    try:
        with open("/proc/cpuinfo") as f:
            for line in f:
                if line.startswith("model name"):
                    cpu = line.split(":", 1)[1].strip()
                    break
    except OSError:
        pass
    memory = ""
    try:
        with open("/proc/meminfo") as f:
            memory = "%.0f GiB" % (int(f.readline().split()[1]) / 1048576)
    except OSError:
        pass
    debian = ""
    if os.path.exists("/etc/debian_version"):
        debian = "Debian " + open("/etc/debian_version").read().strip()
    r_version = subprocess.run(["Rscript", "-e", "cat(R.version.string)"], stdout=subprocess.PIPE,
                               stderr=subprocess.DEVNULL, text=True).stdout.strip()
    return "%s, %d cores, %s, %s, Linux %s, %s, Python %s" % (
        cpu, os.cpu_count() or 0, memory, debian, platform.release(), r_version,
        platform.python_version())


def relative(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--bench", default=os.path.join(TOP, "build-bench", "tests", "bench", "weft_bench"))
    parser.add_argument("--size", default="1M")
    parser.add_argument("--reps", type=int, default=5)
    parser.add_argument("--weft-reps", type=int, default=15,
                        help="pairs of weft and floor runs (each well under a second at 1M rows)")
    parser.add_argument("--plm-reps", type=int, default=3, help="plm takes ~20 s a fit at 1M rows")
    parser.add_argument("--json")
    parser.add_argument("--keep", help="keep the dataset and raw results in this folder")
    parser.add_argument("--no-install", action="store_true")
    parser.add_argument("--statsmodels-worker", nargs=3, metavar=("CSV", "REPS", "OUT"), help=argparse.SUPPRESS)
    args = parser.parse_args()
    if args.statsmodels_worker:
        csv, reps, out = args.statsmodels_worker
        statsmodels_worker(csv, int(reps), out)
        return 0

    if not args.no_install:
        ensure_packages()
    if not os.access(args.bench, os.X_OK):
        raise SystemExit("compare: no weft_bench at %s (build with -DWEFT_BUILD_BENCH=ON, or pass --bench)"
                         % args.bench)
    work = args.keep or tempfile.mkdtemp(prefix="weft-compare-")
    os.makedirs(work, exist_ok=True)
    csv = os.path.join(work, "panel.csv")
    try:
        print("compare: writing the %s balanced panel to %s" % (args.size, csv), flush=True)
        subprocess.run([args.bench, "--write-csv", csv, "--sizes", args.size, "--layouts", "balanced"],
                       check=True)
        results = []

        print("compare: weft", flush=True)
        weft_json = os.path.join(work, "weft.json")
        _, rss = timed_process([args.bench, "--read-csv", csv, "--model", "fd cluster",
                                "--reps", str(args.weft_reps), "--json", weft_json])
        weft = json.load(open(weft_json))
        weft["process_peak_bytes"] = rss
        weft["name"] = "weft"
        results.append(weft)

        for which, reps in (("plm", args.plm_reps), ("lm", args.reps)):
            print("compare: R %s" % which, flush=True)
            out = os.path.join(work, "r_%s.json" % which)
            _, rss = timed_process(["Rscript", os.path.join(HERE, "compare_reference.R"), csv, str(reps),
                                    out, which])
            r = json.load(open(out))[which]
            r["process_peak_bytes"] = rss
            r["name"] = "R plm" if which == "plm" else "R lm.fit+sandwich"
            r["terms"] = ["intercept" if t == "(Intercept)" else t for t in r["terms"]]
            results.append(r)

        print("compare: statsmodels", flush=True)
        out = os.path.join(work, "statsmodels.json")
        _, rss = timed_process([sys.executable, os.path.abspath(__file__), "--statsmodels-worker", csv,
                                str(args.reps), out])
        s = json.load(open(out))
        s["process_peak_bytes"] = rss
        s["name"] = "statsmodels"
        results.append(s)
    finally:
        if not args.keep:
            shutil.rmtree(work, ignore_errors=True)

    # Agreement: every library against weft, term by term.
    failures = []
    for r in results[1:]:
        if r["terms"] != weft["terms"]:
            failures.append("%s terms %s differ from weft's %s" % (r["name"], r["terms"], weft["terms"]))
            continue
        worst_b = max(relative(a, b) for a, b in zip(weft["estimate"], r["estimate"]))
        worst_se = max(relative(a, b) for a, b in zip(weft["se"], r["se"]))
        r["worst_estimate_difference"] = worst_b
        r["worst_se_difference"] = worst_se
        if worst_b > TOLERANCE_ESTIMATE or worst_se > TOLERANCE_SE:
            failures.append("%s disagrees with weft: estimates %.1e, SEs %.1e relative" % (r["name"], worst_b, worst_se))

    floor = weft["floor_cpu_seconds"]
    machine = machine_description()
    print()
    print("fd + cluster-by-unit SEs, %d rows, %d regressors; %s" % (weft["rows"], len(weft["terms"]) - 1, machine))
    print("%-20s %9s %9s %9s %9s %10s %14s" % ("library", "wall_s", "cpu_s", "x_floor", "x_weft", "peak_MiB",
                                               "agrees(b,se)"))
    print("%-20s %9.4f %9.4f %9.1f %9s %10s %14s" % ("floor (X'X pass)", weft["floor_seconds"], floor, 1.0, "", "", ""))
    for r in results:
        agree = "" if r is weft else "%.0e,%.0e" % (r.get("worst_estimate_difference", float("nan")),
                                                    r.get("worst_se_difference", float("nan")))
        # weft's ratio: the median over pairs run in turn with the floor
        ratio = weft["paired_ratio_to_floor_cpu"] if r is weft else r["cpu_seconds"] / floor
        print("%-20s %9.4f %9.4f %9.1f %9.1f %10.0f %14s" % (
            r["name"], r["median_seconds"], r["cpu_seconds"], ratio,
            r["cpu_seconds"] / weft["cpu_seconds"], r["process_peak_bytes"] / 1048576, agree))
    print("wall_s, cpu_s: medians of wall-clock and CPU seconds of the fit alone (data loading and, for\n"
          "lm.fit and statsmodels, the differencing are outside the clock); x_floor, x_weft: CPU time over\n"
          "the floor's and weft's (weft's x_floor: the median ratio of %d weft runs each timed next to a\n"
          "floor run). peak_MiB: whole process (reading the CSV included); weft's in-process\n"
          "peak during one fit: %.0f MiB for %.0f MiB of input" % (weft["reps"], weft["peak_bytes"] / 1048576,
                                                                 weft["input_bytes"] / 1048576))
    if args.json:
        with open(args.json, "w") as f:
            json.dump({"machine": machine, "results": results, "failures": failures}, f, indent=1)
    if failures:
        for message in failures:
            print("DISAGREEMENT: " + message)
        return 1
    print("all libraries agree with weft (estimates within %.0e, SEs within %.0e relative)"
          % (TOLERANCE_ESTIMATE, TOLERANCE_SE))
    return 0


if __name__ == "__main__":
    sys.exit(main())
