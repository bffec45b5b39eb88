"""Benchmark (not a test): weft.dask.fit on a local Dask cluster of 1 and then 2 worker
processes, on a panel generated inside the workers, printing rows per second of the fit
and the cost of merging partials.

    PYTHONPATH=cabi/python WEFT_LIBRARY=build/cabi/libweft.so.0 \
        python3 tests/bench/dask_bench.py [--rows 10000000] [--partitions 32] [--model "fd cluster"]

The invented panel: units of 10 periods, y on x1, x2 with a unit effect; each partition
holds whole units and is made by its worker (seeded by its number), then kept in the
workers' memory, so the timed fit reads data already there (as a fit on a loaded
extract would). Timings vary with the machine's load; the script asserts nothing.
"""
import argparse
import os
import sys
import time

import numpy as np
import pandas as pd

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, os.path.join(HERE, "..", "..", "cabi", "python"))

import dask  # noqa: E402
import dask.dataframe as dd  # noqa: E402
from distributed import Client, LocalCluster, wait  # noqa: E402

import weft.dask  # noqa: E402
from weft import dask as weft_dask  # noqa: E402

PERIODS = 10


def make_partition(number, rows):
    """Rows of whole units (10 periods each) for partition `number`."""
    rng = np.random.default_rng(1000 + number)
    units = rows // PERIODS
    unit = np.repeat(np.arange(units) + number * units, PERIODS)
    year = np.tile(np.arange(2001, 2001 + PERIODS, dtype=float), units)
    effect = rng.normal(size=units)[unit - number * units]
    x1 = rng.normal(size=unit.size) + 0.5 * effect
    x2 = rng.gamma(2.0, size=unit.size)
    y = 1.0 + 0.8 * x1 - 0.3 * x2 + effect + rng.normal(size=unit.size)
    return pd.DataFrame({"unit": unit, "year": year, "x1": x1, "x2": x2, "y": y})


def run(workers, rows, partitions, model):
    per_partition = rows // partitions // PERIODS * PERIODS
    with LocalCluster(n_workers=workers, threads_per_worker=1, processes=True, host="127.0.0.1",
                      dashboard_address=None, silence_logs=40) as cluster, Client(cluster) as client:
        meta = make_partition(0, 0)
        start = time.perf_counter()
        ddf = dd.from_delayed([dask.delayed(make_partition)(i, per_partition) for i in range(partitions)], meta=meta)
        ddf = client.persist(ddf)
        wait(ddf)
        made = time.perf_counter() - start
        n = per_partition * partitions
        times = []
        for _ in range(2):
            start = time.perf_counter()
            result = weft.dask.fit(ddf, outcome="y", regressors=["x1", "x2"], unit="unit", period="year", model=model)
            times.append(time.perf_counter() - start)
        best = min(times)
        print(f"{workers} worker(s): {n:,} rows in {partitions} partitions (made in the workers in {made:.1f} s); "
              f"fit '{model}' best of 2: {best:.2f} s = {n / best:,.0f} rows/s; "
              f"x1 {result.coefficients.loc['x1', 'estimate']:.6f} (se {result.coefficients.loc['x1', 'se']:.6f})")


def merge_cost(partitions, model):
    """Merging partials on one process: bytes per partial and time per merge."""
    frames = [make_partition(i, 10_000) for i in range(partitions)]
    grid = np.arange(2001, 2001 + PERIODS, dtype=float)
    args = ("y", ["x1", "x2"], "unit", "year")
    partials = [weft_dask._sums_task(f, *args, model, grid, 0) for f in frames]
    start = time.perf_counter()
    merged = weft_dask._merge_task(*partials)
    sums_time = time.perf_counter() - start
    scores = [weft_dask._scores_task(f, *args, merged, 0) for f in frames]
    start = time.perf_counter()
    weft_dask._merge_task(*scores)
    scores_time = time.perf_counter() - start
    print(f"merge cost ({model}): {partitions} pass-1 partials of {len(partials[0][1]):,} bytes merged in "
          f"{sums_time * 1e3:.2f} ms ({sums_time / (partitions - 1) * 1e6:.0f} us a merge, bytes read and written "
          f"included); {partitions} pass-2 partials of {len(scores[0][1]):,} bytes in {scores_time * 1e3:.2f} ms")


def main():
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--rows", type=int, default=10_000_000)
    parser.add_argument("--partitions", type=int, default=32)
    parser.add_argument("--model", default="fd cluster")
    options = parser.parse_args()
    os.environ.setdefault("PYTHONPATH", os.path.abspath(os.path.join(HERE, "..", "..", "cabi", "python")))
    for workers in (1, 2):
        run(workers, options.rows, options.partitions, options.model)
    merge_cost(options.partitions, options.model)
    merge_cost(options.partitions, "within periods dk")


if __name__ == "__main__":
    main()
