"""weft.dask.fit: the weft fit of a dask dataframe, computed on its partitions inside
Dask (the workers run libweft on their own partitions; only small partial results
travel) and merged into the same result weft.fit gives.

    import weft.dask
    result = weft.dask.fit(ddf, outcome="y", regressors=["x1", "x2"], unit="unit",
                           period="year", model="within cluster")

The fit takes three passes over the partitions (weft.h, "Fit over partitions"): the
units and periods of each partition (to check that every unit lies in one partition
and to build the global period grid), the sums of pass 1 and the scores of pass 2, each
merged in a tree. The result's residuals and fitted values are a fourth, lazy pass
(weft_partial_series on each partition with the merged partials), run when computed. A unit whose rows lie in more than one partition is brought together
by shuffling the frame on the unit column (repartition=True, the default), or refused.
"""
import ctypes

import numpy as np
import pandas as pd

from . import _columns
from ._errors import WeftError
from ._fit import Result, _Handle, _check, _panel, _text
from ._library import load

__all__ = ["fit"]

# How many partials one merge task combines (a tree of this fan-in).
MERGE_FAN_IN = 8


def _library():
    lib, path = load()
    if not hasattr(lib, "weft_partial_sums"):
        raise WeftError(f"weft: {path} has no fit over partitions (weft_partial_*); it needs "
                        "libweft 0.3.0 built with issue 22's functions")
    _declare_partials(lib)
    return lib


def _declare_partials(lib):
    p, size, pp = ctypes.c_void_p, ctypes.c_size_t, ctypes.POINTER(ctypes.c_void_p)
    for name, restype, argtypes in (
            ("weft_partial_sums", ctypes.c_int, [pp, p, ctypes.c_char_p, p, size]),
            ("weft_partial_scores", ctypes.c_int, [pp, p, p]),
            ("weft_partial_merge", ctypes.c_int, [p, p]),
            ("weft_partial_bytes", ctypes.c_int, [p, p, size, ctypes.POINTER(size)]),
            ("weft_partial_from_bytes", ctypes.c_int, [pp, p, size]),
            ("weft_partial_finish", ctypes.c_int, [pp, p, p]),
            ("weft_partial_series", ctypes.c_int, [p, p, p, p, p, p, size]),
            ("weft_partial_free", None, [p])):
        function = getattr(lib, name)
        function.restype, function.argtypes = restype, argtypes


# ---- the tasks (run on the workers; every argument and result is small and picklable)

def _partition_facts(frame, unit, period):
    """Pass 0 of one partition: (rows, distinct unit ids, distinct periods as numbers)
    over the rows that have both a unit and a period (weft's grid is built from those)."""
    kind, ids, unit_missing = _columns.units(_columns.take(frame, unit, "unit"))
    values, period_missing = _columns.periods(_columns.take(frame, period, "period"))
    keep = np.ones(len(frame), dtype=bool)
    if unit_missing is not None:
        keep &= unit_missing == 0
    if period_missing is not None:
        keep &= period_missing == 0
    if kind == "number":
        unit_ids = np.unique(ids[keep]).tolist()
    else:
        unit_ids = sorted({i for i, k in zip(ids, keep) if k})
    return len(frame), frozenset(unit_ids), np.unique(values[keep])


def _bytes_of(lib, pointer):
    needed = ctypes.c_size_t()
    _check(lib, lib.weft_partial_bytes(pointer, None, 0, ctypes.byref(needed)))
    out = ctypes.create_string_buffer(needed.value)
    _check(lib, lib.weft_partial_bytes(pointer, out, needed.value, ctypes.byref(needed)))
    return out.raw


def _partial(lib, data):
    pointer = ctypes.c_void_p()
    _check(lib, lib.weft_partial_from_bytes(ctypes.byref(pointer), data, len(data)))
    return _Handle(lib, lib.weft_partial_free, pointer)


def _sums_task(frame, outcome, regressors, unit, period, weights, model, grid, first_row):
    """(1, bytes of the partition's pass-1 partial), or (1, None) for an empty partition."""
    if len(frame) == 0:
        return 1, None
    lib = _library()
    panel = _panel(lib, frame, outcome, regressors, unit, period, weights, first_row=first_row)
    pointer = ctypes.c_void_p()
    _check(lib, lib.weft_partial_sums(ctypes.byref(pointer), panel.pointer, _text(model, "model text"),
                                      grid.ctypes.data, grid.size))
    partial = _Handle(lib, lib.weft_partial_free, pointer)
    return 1, _bytes_of(lib, partial.pointer)


def _scores_task(frame, outcome, regressors, unit, period, weights, sums, first_row):
    if len(frame) == 0:
        return 1, None
    lib = _library()
    panel = _panel(lib, frame, outcome, regressors, unit, period, weights, first_row=first_row)
    merged = _partial(lib, sums[1])
    pointer = ctypes.c_void_p()
    _check(lib, lib.weft_partial_scores(ctypes.byref(pointer), panel.pointer, merged.pointer))
    partial = _Handle(lib, lib.weft_partial_free, pointer)
    return 1, _bytes_of(lib, partial.pointer)


def _series_task(frame, outcome, regressors, unit, period, weights, sums, scores, first, partition_info=None):
    """Pass 3 of one partition: a frame of its residuals and fitted values (NaN where the
    row is not in the estimated equation) on the partition's index."""
    residual = np.full(len(frame), np.nan)
    fitted = np.full(len(frame), np.nan)
    if len(frame) > 0:
        lib = _library()
        first_row = first[partition_info["number"]] if partition_info is not None else 0
        panel = _panel(lib, frame, outcome, regressors, unit, period, weights, first_row=first_row)
        sums_handle, scores_handle = _partial(lib, sums), _partial(lib, scores)
        _check(lib, lib.weft_partial_series(panel.pointer, sums_handle.pointer, scores_handle.pointer,
                                            residual.ctypes.data, fitted.ctypes.data, None, len(frame)))
    return pd.DataFrame({"residual": residual, "fitted": fitted}, index=frame.index)


def _merge_task(*partials):
    """(partitions counted, bytes) of several partials merged (None: all were empty)."""
    count = sum(n for n, _ in partials)
    present = [data for _, data in partials if data is not None]
    if not present:
        return count, None
    lib = _library()
    into = _partial(lib, present[0])
    for data in present[1:]:
        other = _partial(lib, data)
        _check(lib, lib.weft_partial_merge(into.pointer, other.pointer))
    return count, _bytes_of(lib, into.pointer)


# ---- the driver

def _tree(delayed, parts):
    """The delayed partials merged in a tree of fan-in MERGE_FAN_IN."""
    while len(parts) > 1:
        parts = [delayed(_merge_task, pure=False)(*parts[i:i + MERGE_FAN_IN]) if len(parts[i:i + MERGE_FAN_IN]) > 1
                 else parts[i] for i in range(0, len(parts), MERGE_FAN_IN)]
    return parts[0]


def _split_units(facts):
    """(unit, first partition, second partition) of a unit found in two partitions, or None."""
    seen = {}
    for position, (_, unit_ids, _) in enumerate(facts):
        for u in unit_ids:
            if u in seen:
                return u, seen[u], position
            seen[u] = position
    return None


def _compute(dask, *tasks):
    """dask.compute, with a worker that died for good (the scheduler's retries used up)
    turned into a WeftError: no result is made from the partials that did arrive."""
    try:
        return dask.compute(*tasks)
    except Exception as error:  # distributed.scheduler.KilledWorker, without importing distributed
        if type(error).__name__ != "KilledWorker":
            raise
        raise WeftError(f"weft: a Dask worker died while fitting ({error}); no result is given. Run the fit "
                        "again, or let the scheduler retry lost work (distributed.scheduler.allowed-failures)") from error


def _facts(dask, ddf, unit, period):
    parts = ddf.to_delayed()
    tasks = [dask.delayed(_partition_facts, pure=True)(part, unit, period) for part in parts]
    return list(_compute(dask, *tasks)), parts


def fit(ddf, outcome, regressors, unit, period, model="pooled", repartition=True, weights=None):
    """Fit one panel model to the columns of a dask DataFrame on its partitions, with the
    numbers weft.fit gives on the same rows in one frame. Arguments as weft.fit;
    repartition: when a unit's rows lie in several partitions, shuffle the frame on the
    unit column first (True) or refuse (False). Runs on the current Dask scheduler (a
    distributed Client when one is active). Returns a weft Result whose residuals and
    fitted are lazy dask Series on the (shuffled, when repartitioned) frame's index,
    computed on the partitions with the merged estimates when asked for (NaN where
    weft.fit gives NaN). Raises WeftError with weft's message.
    weights: the name of a column of observation weights, with weft.fit's rules (NaN
    drops the row, 0 leaves it out, a negative weight is an error), or None."""
    import dask
    import dask.dataframe as dd

    if not isinstance(ddf, dd.DataFrame):
        raise WeftError(f"weft: dask.fit needs a dask DataFrame, not {type(ddf).__name__}; for a pandas "
                        "DataFrame use weft.fit")
    regressors = [regressors] if isinstance(regressors, str) else list(regressors)
    model = "" if model is None else model
    _text(model, "model text")
    named = [(outcome, "outcome"), (unit, "unit"), (period, "period")] + [(r, "regressor") for r in regressors]
    for name, role in named + ([] if weights is None else [(weights, "weights")]):
        _columns.take(ddf._meta, name, role)
    lib = _library()
    columns = list(dict.fromkeys([outcome, *regressors, unit, period] + ([] if weights is None else [weights])))
    ddf = ddf[columns]
    facts, parts = _facts(dask, ddf, unit, period)
    split = _split_units(facts)
    if split is not None:
        if not repartition:
            u, a, b = split
            raise WeftError(f"weft: unit {u!r} has rows in partitions {a} and {b}; each unit must lie in one "
                            f"partition (set the index to the unit column, or call with repartition=True)")
        ddf = ddf.shuffle(on=unit)
        facts, parts = _facts(dask, ddf, unit, period)
        split = _split_units(facts)
        if split is not None:
            raise WeftError(f"weft: unit {split[0]!r} still has rows in partitions {split[1]} and {split[2]} "
                            "after shuffling on the unit column; repartition the frame by unit yourself")
    rows = [n for n, _, _ in facts]
    if sum(rows) == 0:
        raise WeftError("weft: the frame has no rows; give at least one row per unit and period")
    if all(len(g) == 0 for _, _, g in facts):
        raise WeftError(f"weft: no row has both a unit ({unit!r}) and a period ({period!r}); fill those columns")
    grid = np.unique(np.concatenate([g for _, _, g in facts])).astype(np.float64)
    first = np.concatenate([[0], np.cumsum(rows)[:-1]]).tolist()
    args = (outcome, regressors, unit, period, weights)
    sums = _tree(dask.delayed, [dask.delayed(_sums_task, pure=False)(part, *args, model, grid, f)
                                for part, f in zip(parts, first)])
    (sums,) = _compute(dask, sums)
    _count_partitions(sums, len(parts), "pass 1")
    scores = _tree(dask.delayed, [dask.delayed(_scores_task, pure=False)(part, *args, sums, f)
                                  for part, f in zip(parts, first)])
    (scores,) = _compute(dask, scores)
    _count_partitions(scores, len(parts), "pass 2")
    sums_handle, scores_handle = _partial(lib, sums[1]), _partial(lib, scores[1])
    pointer = ctypes.c_void_p()
    _check(lib, lib.weft_partial_finish(ctypes.byref(pointer), sums_handle.pointer, scores_handle.pointer))
    result = Result(lib, _Handle(lib, lib.weft_model_free, pointer), None)
    # pass 3, lazy: the residuals and fitted values of each partition with the merged partials
    meta = pd.DataFrame({"residual": pd.Series(dtype=np.float64), "fitted": pd.Series(dtype=np.float64)},
                        index=ddf._meta.index)
    series = ddf.map_partitions(_series_task, *args, sums[1], scores[1], first, meta=meta)
    result.residuals, result.fitted = series["residual"], series["fitted"]
    counted = sum(result.summary.get(label, 0) for label in ("rows used", "rows dropped", "rows with weight 0"))
    if counted != sum(rows):
        raise WeftError(f"weft: the merged fit counts {counted:g} rows but the frame has {sum(rows)}; a partition "
                        "was lost or counted twice, so no result is given")
    return result


def _count_partitions(partial, expected, what):
    if partial[0] != expected:
        raise WeftError(f"weft: {what} merged {partial[0]} partitions of {expected}; a partition was lost or "
                        "counted twice, so no result is given")
