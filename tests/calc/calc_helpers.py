"""Helpers shared by the calc tests: the add-in's path, the Grunfeld data, array
formulas and tolerant comparison. Run with /usr/bin/python3 (python3-uno)."""

import csv
import json
import math
import os
import shutil
import sys
import tempfile

HERE = os.path.dirname(os.path.abspath(__file__))
sys.path.insert(0, HERE)

from office import Office  # noqa: E402,F401  (re-exported for the tests)

DATA_DIR = os.path.normpath(os.path.join(HERE, "..", "data", "panel"))
REL_TOL = 1e-9  # tests/data/panel/README.md: the reference values agree to 1e-12


def oxt_path():
    """The built weft.oxt: WEFT_OXT (set by CTest) or the usual build folder."""
    path = os.environ.get("WEFT_OXT")
    if not path:
        sys.exit("calc tests: set WEFT_OXT to the built weft.oxt (CTest does this)")
    if not os.path.isfile(path):
        sys.exit(f"calc tests: {path} does not exist; build the weft_oxt target first")
    return path


def reference(name):
    """One reference JSON of tests/data/panel (copied from shared/reference/panel)."""
    with open(os.path.join(DATA_DIR, name)) as f:
        ref = json.load(f)
    # the clipped two-way values: clipped in the scaled basis (tests/common/twoway_clip.py)
    sys.path.insert(0, os.path.join(HERE, "..", "common"))
    from twoway_clip import with_scaled_clip
    return with_scaled_clip(name[:-len(".json")] if name.endswith(".json") else name, ref, DATA_DIR)


def grunfeld():
    """(header, rows) of tests/data/panel/grunfeld.csv; rows hold floats."""
    with open(os.path.join(DATA_DIR, "grunfeld.csv")) as f:
        rows = list(csv.reader(f))
    return rows[0], [[float(v) for v in r] for r in rows[1:]]


# The Grunfeld data as put_rows(sheet, 0, 0, ...) places them (header in row 1): the
# four ranges of a model function over it.
GRUNFELD_LAST_ROW = 201
GRUNFELD_RANGES = (f"C1:C{GRUNFELD_LAST_ROW};D1:E{GRUNFELD_LAST_ROW};"
                   f"A1:A{GRUNFELD_LAST_ROW};B1:B{GRUNFELD_LAST_ROW}")


def put_grunfeld(sheet, inv_factor=1.0):
    """The Grunfeld data at A1 of sheet (firm, year, inv, value, capital), with inv
    multiplied by inv_factor."""
    header, rows = grunfeld()
    put_rows(sheet, 0, 0, [header] + [r[:2] + [inv_factor * r[2]] + r[3:] for r in rows])


class LoggedOffice:
    """A headless office with the add-in installed whose fits and cache hits are
    logged (WEFT_ADDIN_LOG) to a file in a temporary folder; start() gives the
    Office, stop() stops it and removes the folder."""

    def __init__(self, timeout=500):
        self.log_dir = tempfile.mkdtemp(prefix="weft-calc-log-")
        os.chmod(self.log_dir, 0o777)  # the office may run as an unprivileged user
        self.log = os.path.join(self.log_dir, "addin.log")
        self.office = Office(extensions=[oxt_path()], timeout=timeout,
                             env={"WEFT_ADDIN_LOG": self.log})

    def start(self):
        self.office.__enter__()
        return self.office

    def stop(self):
        self.office.stop()
        shutil.rmtree(self.log_dir, ignore_errors=True)

    def log_lines(self):
        """[kind, hash] of each "fit <hash>" and "hit <hash>" line, in order; other
        lines (conversion times) are skipped."""
        if not os.path.exists(self.log):
            return []
        with open(self.log) as f:
            return [line.split()[:2] for line in f if line.split()[:1] in (["fit"], ["hit"])]

    def fits(self):
        return [h for kind, h in self.log_lines() if kind == "fit"]


def col_name(index):
    """0 -> A, 25 -> Z, 26 -> AA."""
    name = ""
    index += 1
    while index:
        index, rem = divmod(index - 1, 26)
        name = chr(65 + rem) + name
    return name


def cell_name(col, row):
    """Zero-based column and row to an A1 name."""
    return f"{col_name(col)}{row + 1}"


def range_name(col, row, ncols, nrows):
    return f"{cell_name(col, row)}:{cell_name(col + ncols - 1, row + nrows - 1)}"


def put_rows(sheet, col, row, rows):
    """Write a block of values (numbers and texts) with its top-left at (col, row)."""
    nrows, ncols = len(rows), max(len(r) for r in rows)
    block = tuple(tuple(r) + ("",) * (ncols - len(r)) for r in rows)
    sheet.getCellRangeByName(range_name(col, row, ncols, nrows)).setDataArray(block)


class ArrayFormula:
    """An array formula placed in a block of exactly nrows x ncols cells."""

    def __init__(self, sheet, col, row, nrows, ncols, formula):
        self.sheet, self.formula = sheet, formula
        self.address = range_name(col, row, ncols, nrows)
        self.range = sheet.getCellRangeByName(self.address)
        self.range.setArrayFormula(formula)

    def values(self):
        """Rows of cell contents: float for numbers, str for texts ('' for blank)."""
        return [list(r) for r in self.range.getDataArray()]


def close(actual, expected, rel=REL_TOL):
    if not isinstance(actual, float):
        return False
    if expected == 0:
        return abs(actual) <= 1e-300
    return abs(actual - expected) <= rel * abs(expected)


def rel_diff(actual, expected):
    if not isinstance(actual, float):
        return math.inf
    return abs(actual - expected) / max(abs(expected), 1e-300)
