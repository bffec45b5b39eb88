#!/usr/bin/python3
"""Reading 1,000,000 x 10 cells: ranges passed as the cells themselves against value
arrays (issue 20). Not a test: prints timings, asserts nothing about speed.

The same formula, WEFT.VALUE(outcome; 7 regressors; units; periods; "fd cluster";
"n"), is entered two ways on a sheet of its own:
  - values: by its stored 0.3 name ORG.WEFT.CALCFUNCTIONS.VALUE, whose arguments are
    value arrays (sequence<sequence<any>>): the office converts every cell first;
  - cells:  as typed, WEFT.VALUE, which resolves to the XCellRange twin (sheetValue):
    the add-in reads the values through XCellRangeData.getDataArray, trimmed to the
    sheet's used rows, and learns where each range is.
For each: `first` (a cold cache: one input cell is nudged before each run, so the
model is fitted again) and `cached` (recalculated with nothing changed: both ways
still read every cell to key the cache). Wall seconds of calculateAll(), medians over
--reps runs. The data are invented: 100,000 units x 10 periods, seeded.

Usage: /usr/bin/python3 tests/bench/calc_read_bench.py --oxt build/addin/weft.oxt
           [--rows 1000000] [--reps 3]
"""
import argparse
import os
import random
import statistics
import sys
import time

HERE = os.path.dirname(os.path.abspath(__file__))
TOP = os.path.dirname(os.path.dirname(HERE))
sys.path.insert(0, os.path.join(TOP, "tests", "calc"))

from calc_helpers import Office  # noqa: E402

CHUNK = 50000
PERIODS = 10


def fill(sheet, rows, seed=20):
    rnd = random.Random(seed)
    sheet.getCellRangeByName("A1:J1").setDataArray(
        (("unit", "period", "y") + tuple(f"x{k}" for k in range(1, 8)),))
    for start in range(0, rows, CHUNK):
        block = []
        for i in range(start, min(rows, start + CHUNK)):
            x = [rnd.gauss(0, 1) for _ in range(7)]
            y = sum((k + 1) * 0.1 * v for k, v in enumerate(x)) + rnd.gauss(0, 1)
            block.append((float(i // PERIODS), float(2000 + i % PERIODS), y, *x))
        sheet.getCellRangeByName(f"A{start + 2}:J{start + 1 + len(block)}").setDataArray(tuple(block))


def timed(doc):
    t0 = time.perf_counter()
    doc.calculateAll()
    return time.perf_counter() - t0


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--oxt", default=os.environ.get("WEFT_OXT"))
    ap.add_argument("--rows", type=int, default=1000000)
    ap.add_argument("--reps", type=int, default=3)
    a = ap.parse_args()
    last = a.rows + 1
    ranges = (f"$Data.C1:C{last};$Data.D1:J{last};$Data.A1:A{last};$Data.B1:B{last}")
    with Office(extensions=[a.oxt], timeout=3000) as office:
        doc = office.new_calc()
        data = doc.Sheets.getByIndex(0)
        data.Name = "Data"
        t0 = time.perf_counter()
        fill(data, a.rows)
        print(f"filled {a.rows} x 10 in {time.perf_counter() - t0:.1f} s", flush=True)
        doc.enableAutomaticCalculation(False)  # only calculateAll computes
        doc.Sheets.insertNewByName("Out", 1)
        out = doc.Sheets.getByName("Out")
        for way, name in (("values", "ORG.WEFT.CALCFUNCTIONS.VALUE"), ("cells", "WEFT.VALUE")):
            cell = out.getCellByPosition(0, 0)
            firsts, cached = [], []
            for rep in range(a.reps):
                data.getCellByPosition(2, 1).setValue(1.0 + rep + (0.5 if way == "cells" else 0.0))
                cell.setFormula(f'={name}({ranges};"fd cluster";"n")')
                firsts.append(timed(doc))
                cached.append(timed(doc))
            print(f"{way:7s} n={cell.getString():>8s}  first {statistics.median(firsts):6.2f} s  "
                  f"cached {statistics.median(cached):6.2f} s  (runs: "
                  f"{', '.join(f'{v:.2f}' for v in firsts)} / {', '.join(f'{v:.2f}' for v in cached)})",
                  flush=True)
            cell.setString("")


if __name__ == "__main__":
    main()
