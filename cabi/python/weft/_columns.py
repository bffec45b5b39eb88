"""Turning the columns of a pandas DataFrame into weft's columns: numbers with a
missing mask, text unit ids, and dates as day numbers."""
import numpy as np
import pandas as pd

from ._errors import WeftError

# Dates become day numbers counted from 1899-12-30, with the time of day as a fraction:
# the numbers a spreadsheet cell holds for a date, so that weft's cells and this package
# give the same period grid and the same names ("period 43831" is 2020-01-01).
DAY_ZERO = np.datetime64("1899-12-30T00:00:00", "ns")
_NUMERIC_KINDS = {"integer", "floating", "mixed-integer-float", "decimal", "boolean", "empty"}


def take(frame, name, role):
    """The column `name` of frame as a Series; a clear error naming it when it is absent
    or repeated. role says what it is for (e.g. "outcome")."""
    if not isinstance(name, str) and not isinstance(name, (int, np.integer)):
        raise WeftError(f"weft: the {role} must be given as a column name, not {name!r}")
    if name not in frame.columns:
        shown = ", ".join(repr(c) for c in list(frame.columns)[:20])
        more = ", ..." if len(frame.columns) > 20 else ""
        raise WeftError(f"weft: the frame has no column {name!r} (named as the {role}); "
                        f"its columns are {shown}{more}")
    column = frame[name]
    if isinstance(column, pd.DataFrame):
        raise WeftError(f"weft: the frame has {column.shape[1]} columns named {name!r} (the "
                        f"{role}); give the columns distinct names")
    return column


def _first_bad_row(column, good):
    """Position and value of the first present element for which good(value) is false."""
    for position, value in enumerate(column.array):
        if not pd.isna(value) and not good(value):
            return position, value
    return None, None


def numbers(column, role):
    """(values, missing) for a numeric column: float64 values (the frame's own memory when
    it already is float64), missing a uint8 mask or None. NaN and pandas' NA are missing;
    an infinite value is passed on, for weft to refuse with the row."""
    if column.dtype == np.float64:
        values = column.to_numpy()  # no copy: NaN already marks a missing value
    elif pd.api.types.is_bool_dtype(column.dtype) or pd.api.types.is_numeric_dtype(column.dtype):
        values = column.to_numpy(dtype=np.float64, na_value=np.nan)
    elif pd.api.types.is_object_dtype(column.dtype) and \
            pd.api.types.infer_dtype(column, skipna=True) in _NUMERIC_KINDS:
        values = pd.to_numeric(column).to_numpy(dtype=np.float64, na_value=np.nan)
    else:
        position, value = _first_bad_row(column, lambda v: isinstance(v, (int, float, np.number)))
        where = f" (row {position}, value {value!r})" if position is not None else ""
        raise WeftError(f"weft: the {role} column {column.name!r} is not numeric{where}; give "
                        f"numbers (a missing value may be NaN or None)")
    values = np.ascontiguousarray(values)
    missing = np.isnan(values)
    return values, (missing.astype(np.uint8) if missing.any() else None)


def _is_dates(column):
    return (pd.api.types.is_datetime64_any_dtype(column.dtype)
            or isinstance(column.dtype, pd.PeriodDtype)
            or (pd.api.types.is_object_dtype(column.dtype)
                and pd.api.types.infer_dtype(column, skipna=True) in ("date", "datetime", "datetime64")))


def periods(column):
    """(values, missing) for the period column: numbers as they are; dates (datetime64,
    with or without time zone, pandas periods by their start, Python dates) as day numbers
    from 1899-12-30 in the dates' own wall-clock time."""
    if not _is_dates(column):
        return numbers(column, "period")
    if isinstance(column.dtype, pd.PeriodDtype):
        stamps = pd.Series(column.array.start_time, index=column.index)
    else:
        stamps = pd.to_datetime(column)
    if getattr(stamps.dt, "tz", None) is not None:
        stamps = stamps.dt.tz_localize(None)
    nanoseconds = (stamps.to_numpy(dtype="datetime64[ns]") - DAY_ZERO).astype(np.int64)
    missing = stamps.isna().to_numpy()
    values = np.where(missing, np.nan, nanoseconds / 86_400e9)
    return np.ascontiguousarray(values, dtype=np.float64), (missing.astype(np.uint8) if missing.any() else None)


def units(column):
    """('number' or 'text', values, missing): numeric ids as numbers, any other ids as
    UTF-8 text (each id by str(); compared as exact text)."""
    if pd.api.types.is_bool_dtype(column.dtype) or pd.api.types.is_numeric_dtype(column.dtype):
        values, missing = numbers(column, "unit")
        return "number", values, missing
    present = ~column.isna().to_numpy()
    ids = []
    for position, (value, keep) in enumerate(zip(column.array, present)):
        text = str(value).encode("utf-8") if keep else None
        if text is not None and b"\0" in text:
            raise WeftError(f"weft: the unit id in row {position} of column {column.name!r} "
                            f"contains a NUL character; remove it")
        ids.append(text)
    missing = (~present).astype(np.uint8)
    return "text", ids, (missing if missing.any() else None)
