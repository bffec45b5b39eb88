#!/usr/bin/python3
"""The add-in's share of one cold model call in headless Calc against the core fit
alone on the same data (issue 19). Not a test: prints figures, asserts nothing about
speed.

One block of 1,000,000 x 10 cells by default (unit, period, outcome and 7 regressors
from weft_bench's seeded generator, with a header row) is put on a sheet, and
WEFT.ESTIMATES(outcome; regressors; units; periods; "fd cluster") is recalculated cold
(`calculateAll()` after one input cell is nudged) --reps times, each followed by
one recalculation with nothing changed (answered from the cache by the cells key).
The add-in's timing trace (WEFT_ADDIN_TRACE) splits each call into phases, in wall
and in thread CPU time:
  - cells, release: the office converting the four ranges into values (getDataArray)
    and freeing those values: the office's own conversion, not the add-in's share;
  - every other phase (sheet: where the ranges are; hidden: their hidden rows; errors:
    naming error cells; key: the cache key, with the numbers read in the same pass;
    read: the columns and the checks of the cells; hash: the input's key; panel, fit:
    the panel over the columns and the fit; compute, out: the result cells) is the
    add-in's share.
The same CSV goes through `weft_bench --read-csv` with the same model: the core fit
alone (the columns borrowed in place, the fit, the coefficient table), paired run by
run with the floor pass. The ratio printed is the add-in's share over that fit
(medians), and the estimates of both are compared. The share of each cold call is
printed in order: the first eight fits after the office starts land on fresh
memory, since the model cache keeps each fit's columns; from the ninth on, an
evicted fit's column blocks are reused (addin/README.md, "Timing trace").

Usage: /usr/bin/python3 tests/bench/calc_share_bench.py [--build build]
           [--rows 1000000] [--reps 5] [--model "fd cluster"] [--json OUT]
"""
import argparse
import json
import os
import signal
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
TOP = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, HERE)
sys.path.insert(0, os.path.join(TOP, "tests", "calc"))

from calc_bench import fill, read_block, trace_lines  # noqa: E402
from calc_helpers import Office, col_name  # noqa: E402

PERIODS = 10
REGRESSORS = 7
OFFICE_PHASES = ("cells", "release")


def call_phases(words):
    """One trace line's phases: {name: ms} for wall and {name: ms} for CPU, summed over
    repeated names."""
    wall, cpu = {}, {}
    for w in words[1:]:
        if "=" not in w:
            continue
        name, ms = w.split("=", 1)
        target = cpu if name.endswith(".cpu") else wall
        name = name[:-4] if name.endswith(".cpu") else name
        target[name] = target.get(name, 0.0) + float(ms) / 1000.0
    return wall, cpu


def share(phases):
    return phases.get("total", 0.0) - sum(phases.get(k, 0.0) for k in OFFICE_PHASES)


def core_fit(bench, csv_path, model, reps):
    out = subprocess.run([bench, "--read-csv", csv_path, "--model", model, "--reps", str(reps)],
                         check=True, capture_output=True, text=True).stdout
    return json.loads(out)


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--build", default=os.path.join(TOP, "build"))
    parser.add_argument("--rows", type=int, default=1000000)
    parser.add_argument("--reps", type=int, default=5)
    parser.add_argument("--model", default="fd cluster")
    parser.add_argument("--json")
    parser.add_argument("--perf", help="record the office's cold calls with `perf record -g` into this file")
    args = parser.parse_args()
    oxt = os.path.join(args.build, "addin", "weft.oxt")
    bench = os.path.join(args.build, "tests", "bench", "weft_bench")
    for path in (oxt, bench):
        if not os.path.exists(path):
            raise SystemExit(f"calc_share_bench: {path} not found: build weft_oxt and weft_bench")

    work = tempfile.mkdtemp(prefix="weft-share-bench-")
    os.chmod(work, 0o777)  # the office runs as an unprivileged user and writes the trace
    trace = os.path.join(work, "trace.log")
    csv_path = os.path.join(work, "panel.csv")
    units = args.rows // PERIODS
    subprocess.run([bench, "--write-csv", csv_path, "--sizes", f"{units}x{PERIODS}x{REGRESSORS}",
                    "--layouts", "balanced"], check=True, capture_output=True)
    core = core_fit(bench, csv_path, args.model, args.reps)
    header, rows = read_block(csv_path)
    calls, cached = [], []
    with Office(extensions=[oxt], timeout=3600, env={"WEFT_ADDIN_TRACE": trace}) as office:
        doc = office.new_calc()
        doc.enableAutomaticCalculation(False)
        sheet = doc.Sheets.getByIndex(0)
        fill(sheet, header, rows)
        last_row = len(rows) + 1
        last_col = col_name(len(header) - 1)
        ranges = f"C1:C{last_row};D1:{last_col}{last_row};A1:A{last_row};B1:B{last_row}"
        out_col, out_end = col_name(len(header) + 1), col_name(len(header) + 7)
        estimates = sheet.getCellRangeByName(f"{out_col}1:{out_end}{REGRESSORS + 2}")
        estimates.setArrayFormula(f'=WEFT.ESTIMATES({ranges};"{args.model}")')
        nudge = sheet.getCellRangeByName("C2")
        y0 = nudge.getValue()
        for rep in range(args.reps + 1):  # the first run warms the office up, not counted
            nudge.setValue(y0 + 1e-9 * (rep + 1))
            before = len(trace_lines(trace))
            perf = None
            if args.perf and rep > 0:
                perf = subprocess.Popen(["perf", "record", "-g", "-q", "-p", str(office.proc.pid),
                                         "-o", f"{args.perf}.{rep}"], stderr=subprocess.DEVNULL)
                time.sleep(0.5)
            doc.calculateAll()
            if perf is not None:
                perf.send_signal(signal.SIGINT)
                perf.wait()
            lines = [w for w in trace_lines(trace)[before:] if w and w[0] == "sheetEstimates"]
            if rep > 0 and lines:
                calls.append(call_phases(lines[-1]))
                # the same again, unchanged: answered from the cache by the cells key
                before = len(trace_lines(trace))
                doc.calculateAll()
                lines = [w for w in trace_lines(trace)[before:] if w and w[0] == "sheetEstimates"]
                if lines:
                    cached.append(call_phases(lines[-1]))
        nudge.setValue(y0)
        doc.calculateAll()
        table = estimates.getDataArray()
        doc.close(True)

    # the same numbers as the core on the same data (the sheet keeps 15 digits)
    by_term = {row[0]: row[1] for row in table[1:] if isinstance(row[1], float)}
    worst = max(abs(by_term[t] - e) / max(abs(e), 1e-300)
                for t, e in zip(core["terms"], core["estimate"]))
    names = ["cells", "release", "sheet", "hidden", "errors", "key", "lookup", "trim", "read", "hash",
             "panel", "fit", "model", "compute", "out", "total"]
    print(f"{args.rows} rows x {len(header)} columns, {args.model!r}, {len(calls)} cold calls; "
          f"estimates agree with the core to {worst:.1e} (relative)")
    result = {"rows": args.rows, "model": args.model, "reps": len(calls), "core": core,
              "share_cpu_per_call": [share(c[1]) for c in calls]}
    for clock, index in (("wall", 0), ("cpu", 1)):
        med = {k: statistics.median(c[index].get(k, 0.0) for c in calls) for k in names}
        add_in = statistics.median(share(c[index]) for c in calls)
        fit = core["median_seconds"] if clock == "wall" else core["cpu_seconds"]
        print(f"{clock:4s} " + " ".join(f"{k}={med[k]:.3f}" for k in names))
        print(f"{clock:4s} add-in share {add_in:.3f} s, core fit alone {fit:.3f} s: "
              f"{add_in / fit:.2f} times the core fit")
        result[clock] = {"phases": med, "share_seconds": add_in, "core_seconds": fit,
                         "ratio": add_in / fit}
    if cached:
        print(f"cached call (unchanged cells, answered by the cells key): add-in share "
              f"{statistics.median(share(c[1]) for c in cached):.3f} s cpu, office's conversion "
              f"{statistics.median(c[1].get('cells', 0.0) + c[1].get('release', 0.0) for c in cached):.3f} s cpu")
        result["cached_share_cpu"] = statistics.median(share(c[1]) for c in cached)
    print("add-in share per call, in order (cpu s): " + " ".join(f"{share(c[1]):.3f}" for c in calls))
    print(f"core: floor {core['floor_cpu_seconds']:.3f} s CPU, fit {core['cpu_seconds']:.3f} s CPU "
          f"({core['paired_ratio_to_floor_cpu']:.2f} x floor)")
    if args.json:
        with open(args.json, "w") as f:
            json.dump(result, f, indent=1)
    return 1 if worst > 1e-9 else 0


if __name__ == "__main__":
    sys.exit(main())
