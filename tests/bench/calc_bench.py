#!/usr/bin/python3
"""Recalculation cost of weft's cell functions in headless Calc (issue 7).

For blocks of 100,000 x 10 and 1,000,000 x 10 cells (unit, period, outcome and 7
regressors, from weft_bench's seeded generator, with a header row), measures with
`calculateAll()` on a sheet that holds only the formula being measured:
  - sum:     =SUM over the whole block: the office's own cost of reading the cells;
  - first:   WEFT.ESTIMATES(...; "fd cluster") with a cold cache (one input cell is
             nudged before each run, so the add-in must fit again);
  - cached:  the same formula recalculated with nothing changed: the add-in's cache
             answers, as it does for every further function on the same model;
  - second:  WEFT.ESTIMATES plus WEFT.VALUE(...; "se"; "x1") on the same model, cold:
             the pair minus `first` is what the second function adds;
  - alone:   a second function on a model already fitted, recalculated by itself
             (calculate() after its term cell changed): WEFT.VALUE over the four ranges,
             and WEFT.FIT.VALUE over a fit cell (WEFT.FIT), against a cold WEFT.FIT with
             WEFT.FIT.ESTIMATES and WEFT.FIT.VALUE on it.
The add-in's log (WEFT_ADDIN_LOG) is read to check that `first` fitted and that
`cached` and the second function did not. Medians over --reps runs.
The add-in's timing trace (WEFT_ADDIN_TRACE) splits each recalculation into the
add-in's own phases (sheet: where the ranges are and their hidden rows; key: the
cache key over every cell; read: columns and checks; hash: the input's key; panel,
fit: the panel over the columns and the fit; compute, out: result cells), the
office's conversion of ranges passed as cells (cells: getDataArray; release: freeing
its values) and the rest, which is the office's own work (converting value-array
arguments, storing results). Each phase is also traced in thread CPU time
(`<phase>.cpu`); tests/bench/calc_share_bench.py reads those.

Usage: /usr/bin/python3 tests/bench/calc_bench.py [--build build-bench]
           [--oxt PATH] [--bench PATH] [--rows 100000,1000000] [--reps 3] [--json OUT]
"""
import argparse
import csv
import json
import os
import statistics
import subprocess
import sys
import tempfile
import time

HERE = os.path.dirname(os.path.abspath(__file__))
TOP = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(TOP, "tests", "calc"))

from calc_helpers import Office, col_name  # noqa: E402  (tests/calc, python3-uno)

PERIODS = 10
REGRESSORS = 7          # with unit, period and outcome: 10 columns
CHUNK_ROWS = 50000      # rows per setDataArray call while filling the sheet


def read_block(path):
    """Rows of the CSV as tuples of floats, with the header row as texts."""
    with open(path) as f:
        reader = csv.reader(f)
        header = tuple(next(reader))
        rows = [tuple(float(v) for v in r) for r in reader]
    return header, rows


def fill(sheet, header, rows):
    ncols = len(header)
    last = col_name(ncols - 1)
    sheet.getCellRangeByName(f"A1:{last}1").setDataArray((header,))
    for start in range(0, len(rows), CHUNK_ROWS):
        chunk = rows[start:start + CHUNK_ROWS]
        top = start + 2
        sheet.getCellRangeByName(f"A{top}:{last}{top + len(chunk) - 1}").setDataArray(tuple(chunk))


def log_kinds(log):
    if not os.path.exists(log):
        return []
    with open(log) as f:
        return [line.split()[0] for line in f if line.strip()]


def office_cpu_seconds(pid):
    """User + system CPU seconds of the office process (10 ms resolution)."""
    with open(f"/proc/{pid}/stat") as f:
        fields = f.read().rsplit(")", 1)[1].split()
    return (int(fields[11]) + int(fields[12])) / os.sysconf("SC_CLK_TCK")


def trace_lines(path):
    if not os.path.exists(path):
        return []
    with open(path) as f:
        return [line.split() for line in f if line.strip()]


def phase_seconds(lines):
    """Sum over the traced calls of each phase ("name=ms" words), in seconds."""
    sums = {}
    for words in lines:
        for w in words[1:]:
            if "=" in w:
                name, ms = w.split("=", 1)
                sums[name] = sums.get(name, 0.0) + float(ms) / 1000.0
    return sums


class Recalc:
    """calculateAll() timed by the wall clock and by the office's CPU time: on a shared
    machine the wall clock also counts waiting for a core. With a trace file, the
    add-in's phases of the calls made during the recalculation are kept too."""

    def __init__(self, doc, pid, trace=None):
        self.doc, self.pid, self.trace = doc, pid, trace

    def __call__(self, wall, cpu, phases=None, hard=True):
        """hard: calculateAll() (every formula); else calculate() (only the dirty ones)."""
        before = len(trace_lines(self.trace)) if self.trace else 0
        cpu_start = office_cpu_seconds(self.pid)
        start = time.perf_counter()
        if hard:
            self.doc.calculateAll()
        else:
            self.doc.calculate()
        wall.append(time.perf_counter() - start)
        cpu.append(office_cpu_seconds(self.pid) - cpu_start)
        if phases is not None and self.trace:
            phases.append(phase_seconds(trace_lines(self.trace)[before:]))


def recalc_alone(recalc, term, probe, log, runs, fail):
    """Recalculates only the probe cell (calculate()) after switching its term cell
    between x2 and x1, `runs` times; `fail` is told if a run fitted. Returns the wall,
    cpu and phase lists and the probe's value per term."""
    wall, cpu, phases, values = [], [], [], {}
    for rep in range(runs):
        term.setString("x2" if rep % 2 == 0 else "x1")
        before = len(log_kinds(log))
        recalc(wall, cpu, phases, hard=False)
        if "fit" in log_kinds(log)[before:]:
            fail("fitted again")
        values[term.getString()] = probe.getValue()
    return wall, cpu, phases, values


def median_phases(phases, wall):
    """Median of each traced phase, plus `office`: wall clock minus the add-in's total."""
    if not phases:
        return {}
    names = sorted({k for p in phases for k in p})
    out = {k: statistics.median(p.get(k, 0.0) for p in phases) for k in names}
    out["office"] = statistics.median(w - p.get("total", 0.0) for w, p in zip(wall, phases))
    return out


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--build", default=os.path.join(TOP, "build-bench"))
    parser.add_argument("--oxt")
    parser.add_argument("--bench")
    parser.add_argument("--rows", default="100000,1000000")
    parser.add_argument("--reps", type=int, default=3)
    parser.add_argument("--json")
    args = parser.parse_args()
    oxt = args.oxt or os.path.join(args.build, "addin", "weft.oxt")
    bench = args.bench or os.path.join(args.build, "tests", "bench", "weft_bench")
    for path, what in ((oxt, "the add-in (weft_oxt target)"), (bench, "weft_bench")):
        if not os.path.exists(path):
            raise SystemExit(f"calc_bench: {path} not found: build {what} first")

    work = tempfile.mkdtemp(prefix="weft-calc-bench-")
    os.chmod(work, 0o777)  # the office may run as an unprivileged user and writes the log
    log = os.path.join(work, "addin.log")
    trace = os.path.join(work, "trace.log")
    results = []
    failures = []
    with Office(extensions=[oxt], timeout=3600, env={"WEFT_ADDIN_LOG": log, "WEFT_ADDIN_TRACE": trace}) as office:
        for n_rows in [int(v) for v in args.rows.split(",")]:
            units = n_rows // PERIODS
            csv_path = os.path.join(work, f"panel_{n_rows}.csv")
            subprocess.run([bench, "--write-csv", csv_path, "--sizes", f"{units}x{PERIODS}x{REGRESSORS}",
                            "--layouts", "balanced"], check=True)
            header, rows = read_block(csv_path)
            os.remove(csv_path)
            doc = office.new_calc()
            try:
                doc.enableAutomaticCalculation(False)
                sheet = doc.Sheets.getByIndex(0)
                t0 = time.perf_counter()
                fill(sheet, header, rows)
                fill_seconds = time.perf_counter() - t0
                last_row = n_rows + 1
                last_col = col_name(len(header) - 1)
                ranges = f"C1:C{last_row};D1:{last_col}{last_row};A1:A{last_row};B1:B{last_row}"
                model = '"fd cluster"'
                out_col = col_name(len(header) + 1)
                out_end = col_name(len(header) + 7)
                estimates = sheet.getCellRangeByName(f"{out_col}1:{out_end}{REGRESSORS + 2}")
                probe = sheet.getCellRangeByName(f"{out_col}20")
                nudge = sheet.getCellRangeByName("C2")
                y0 = nudge.getValue()

                def nudge_input(rep):
                    nudge.setValue(y0 + 1e-9 * (rep + 1))

                recalc = Recalc(doc, office.proc.pid, trace)
                # The office's own SUM over the block (first run not counted).
                probe.setFormula(f"=SUM(A2:{last_col}{last_row})")
                sums, sums_cpu = [], []
                for _ in range(args.reps + 1):
                    recalc(sums, sums_cpu)
                sums, sums_cpu = sums[1:], sums_cpu[1:]
                probe.setFormula("")

                # First function, cold cache; then the same recalculated (cache answers).
                estimates.setArrayFormula(f"=WEFT.ESTIMATES({ranges};{model})")
                first, cached, first_cpu, cached_cpu = [], [], [], []
                first_ph, cached_ph, pair_ph = [], [], []
                for rep in range(args.reps):
                    nudge_input(rep)
                    before = len(log_kinds(log))
                    recalc(first, first_cpu, first_ph)
                    kinds = log_kinds(log)[before:]
                    if kinds.count("fit") != 1:
                        failures.append(f"{n_rows} rows: cold ESTIMATES logged {kinds}, expected one fit")
                    before = len(kinds) + before
                    recalc(cached, cached_cpu, cached_ph)
                    kinds = log_kinds(log)[before:]
                    if "fit" in kinds:
                        failures.append(f"{n_rows} rows: unchanged recalculation fitted again ({kinds})")
                table = estimates.getDataArray()
                if not (isinstance(table[1][1], float) and table[1][0] == "intercept"):
                    failures.append(f"{n_rows} rows: ESTIMATES shows {table[0][:2]} {table[1][:2]}")

                # Two functions on one model, cold: the second should be a cache hit.
                probe.setFormula(f'=WEFT.VALUE({ranges};{model};"se";"x1")')
                pair, pair_cpu = [], []
                for rep in range(args.reps):
                    nudge_input(args.reps + rep)
                    before = len(log_kinds(log))
                    recalc(pair, pair_cpu, pair_ph)
                    kinds = log_kinds(log)[before:]
                    if kinds.count("fit") != 1:
                        failures.append(f"{n_rows} rows: ESTIMATES + VALUE logged {kinds}, expected one fit")
                se_x1 = probe.getValue()

                # A second function on a model already fitted, recalculated alone
                # (calculate(): only the cell whose argument changed), once taking the
                # four ranges (the office converts them again for the call) and once
                # taking a fit cell (WEFT.FIT) instead.
                term = sheet.getCellRangeByName(f"{out_col}22")
                term.setString("x1")
                nudge.setValue(y0)  # the data the fit cell below sees too
                probe.setFormula(f'=WEFT.VALUE({ranges};{model};"se";{out_col}22)')
                doc.calculateAll()
                alone, alone_cpu, alone_ph, se_by_term = recalc_alone(
                    recalc, term, probe, log, 2 * args.reps,
                    lambda what: failures.append(f"{n_rows} rows: WEFT.VALUE over the ranges {what}"))
                estimates.setArrayFormula("")
                probe.setFormula("")

                fit_cell = f"{out_col}24"
                sheet.getCellRangeByName(fit_cell).setFormula(f"=WEFT.FIT({ranges};{model})")
                probe.setFormula(f'=WEFT.FIT.VALUE({fit_cell};"se";{out_col}22)')
                estimates.setArrayFormula(f"=WEFT.FIT.ESTIMATES({fit_cell})")
                fit_first, fit_first_cpu, fit_first_ph = [], [], []
                for rep in range(args.reps):
                    nudge_input(2 * args.reps + rep)
                    before = len(log_kinds(log))
                    recalc(fit_first, fit_first_cpu, fit_first_ph)
                    kinds = log_kinds(log)[before:]
                    if kinds.count("fit") != 1:
                        failures.append(f"{n_rows} rows: WEFT.FIT + two functions on it logged {kinds}, "
                                        "expected one fit")
                nudge.setValue(y0)
                doc.calculateAll()
                by_fit, by_fit_cpu, by_fit_ph, se_by_fit = recalc_alone(
                    recalc, term, probe, log, 2 * args.reps,
                    lambda what: failures.append(f"{n_rows} rows: WEFT.FIT.VALUE {what}"))
                # the same numbers as the function over the ranges (same data, model, terms)
                if se_by_fit != se_by_term:
                    failures.append(f"{n_rows} rows: se by WEFT.FIT.VALUE {se_by_fit}, "
                                    f"by WEFT.VALUE {se_by_term}")
                for c in (probe, sheet.getCellRangeByName(fit_cell), term):
                    c.setFormula("")
                estimates.setArrayFormula("")
                row = {
                    "rows": n_rows, "columns": len(header), "reps": args.reps,
                    "fill_seconds": fill_seconds,
                    "sum_seconds": statistics.median(sums),
                    "first_seconds": statistics.median(first),
                    "cached_seconds": statistics.median(cached),
                    "pair_seconds": statistics.median(pair),
                    "sum_cpu": statistics.median(sums_cpu),
                    "first_cpu": statistics.median(first_cpu),
                    "cached_cpu": statistics.median(cached_cpu),
                    "pair_cpu": statistics.median(pair_cpu),
                    "alone_seconds": statistics.median(alone),
                    "alone_cpu": statistics.median(alone_cpu),
                    "fit_first_seconds": statistics.median(fit_first),
                    "fit_first_cpu": statistics.median(fit_first_cpu),
                    "by_fit_seconds": statistics.median(by_fit),
                    "by_fit_cpu": statistics.median(by_fit_cpu),
                    "se_x1": se_x1,
                    "phases": {name: median_phases(ph, wall)
                               for name, ph, wall in (("first", first_ph, first),
                                                      ("cached", cached_ph, cached),
                                                      ("pair", pair_ph, pair),
                                                      ("alone", alone_ph, alone),
                                                      ("fit", fit_first_ph, fit_first),
                                                      ("by-fit", by_fit_ph, by_fit))},
                }
                row["second_seconds"] = max(row["pair_seconds"] - row["first_seconds"], 0.0)
                row["second_cpu"] = max(row["pair_cpu"] - row["first_cpu"], 0.0)
                results.append(row)
                print(f"{n_rows} rows x {len(header)} columns: filled in {fill_seconds:.1f} s; "
                      f"SUM {row['sum_seconds']:.3f} s, ESTIMATES first {row['first_seconds']:.3f} s, "
                      f"cached {row['cached_seconds']:.3f} s, ESTIMATES+VALUE {row['pair_seconds']:.3f} s",
                      flush=True)
            finally:
                doc.close(True)

    print()
    print("%-9s %-5s %8s %9s %9s %9s %9s %11s %11s" % ("rows", "clock", "SUM_s", "first_s", "cached_s",
                                                        "second_s", "first/SUM", "cached/1st", "second/1st"))
    for r in results:
        for clock, suffix in (("wall", "_seconds"), ("cpu", "_cpu")):
            v = {k: r[k + suffix] for k in ("sum", "first", "cached", "second")}
            print("%-9d %-5s %8.3f %9.3f %9.3f %9.3f %9s %10.1f%% %10.1f%%" % (
                r["rows"], clock, v["sum"], v["first"], v["cached"], v["second"],
                "%.0f" % (v["first"] / v["sum"]) if v["sum"] > 0 else "n/a",
                100 * v["cached"] / v["first"], 100 * v["second"] / v["first"]))
    print("first: WEFT.ESTIMATES fd cluster, cold; cached: same, unchanged (the cache answers);\n"
          "second: what a WEFT.VALUE on the same model adds to a cold recalculation (pair - first).\n"
          "Medians of calculateAll(); cpu = the office process's CPU time (10 ms resolution).")
    print()
    print("A second function on a fitted model, recalculated alone (calculate()):")
    print("%-9s %-5s %9s %9s %11s %9s %11s" % ("rows", "clock", "first_s", "ranges_s", "ranges/1st",
                                             "fit_s", "fit/1st"))
    for r in results:
        for clock, suffix in (("wall", "_seconds"), ("cpu", "_cpu")):
            first_v, alone_v, fit_v = (r[k + suffix] for k in ("fit_first", "alone", "by_fit"))
            print("%-9d %-5s %9.3f %9.3f %10.1f%% %9.4f %10.2f%%" % (
                r["rows"], clock, first_v, alone_v, 100 * alone_v / first_v, fit_v,
                100 * fit_v / first_v))
    print("first: WEFT.FIT fd cluster plus WEFT.FIT.ESTIMATES and WEFT.FIT.VALUE on it, cold;\n"
          "ranges: WEFT.VALUE(ranges; ...; term) after its term changed (the office converts the\n"
          "ranges again); fit: WEFT.FIT.VALUE(fit cell; ...; term) after its term changed.")
    print()
    print("Where the time goes (seconds, medians; add-in phases from WEFT_ADDIN_TRACE, office = wall - add-in total):")
    for r in results:
        for name in ("first", "cached", "pair", "alone", "fit", "by-fit"):
            ph = r["phases"].get(name, {})
            print("%-9d %-7s " % (r["rows"], name) +
                  " ".join("%s=%.3f" % (k, ph[k]) for k in
                           ("office", "total", "cells", "release", "sheet", "key", "lookup", "trim", "convert", "read",
                            "hash", "panel", "fit", "model", "compute", "out") if k in ph))
    if args.json:
        with open(args.json, "w") as f:
            json.dump({"results": results, "failures": failures}, f, indent=1)
    for message in failures:
        print("CHECK FAILED: " + message)
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main())
