#!/usr/bin/env python3
"""Runs the README's ctypes example (example_ctypes.py) against the built libweft in
the data folder and checks its printed numbers.

usage: check_ctypes_example.py <example_ctypes.py> <libweft.so> <tests/data/panel>
Expected values: tests/data/panel/grunfeld_pooled.json, results.coef and
results.se.CR1 (R plm/sandwich, independently recomputed in mpmath), relative
tolerance 1e-9 (the example prints 12 significant digits).
"""
import json
import os
import subprocess
import sys


def main() -> int:
    example, library, data = sys.argv[1:4]
    with open(os.path.join(data, "grunfeld_pooled.json"), encoding="utf-8") as f:
        results = json.load(f)["results"]
    expected = {}
    for term in ("value", "capital"):
        expected[(term, "estimate")] = results["coef"][term]
        expected[(term, "se")] = results["se"]["CR1"][term]
    run = subprocess.run([sys.executable, os.path.abspath(example), os.path.abspath(library)],
                         cwd=data, capture_output=True, text=True)
    print(run.stdout, end="")
    if run.returncode != 0:
        print(run.stderr, file=sys.stderr)
        print(f"example exited with {run.returncode}")
        return 1
    seen = {}
    for line in run.stdout.splitlines():
        term, what, number = line.split()
        seen[(term, what)] = float(number)
    failed = False
    for key, want in expected.items():
        got = seen.get(key)
        if got is None or abs(got - want) > 1e-9 * abs(want):
            print(f"{key}: printed {got}, expected {want} (grunfeld_pooled.json)")
            failed = True
    if set(seen) != set(expected):
        print(f"printed lines {sorted(seen)} differ from the expected {sorted(expected)}")
        failed = True
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
