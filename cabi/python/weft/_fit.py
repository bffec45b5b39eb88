"""weft.fit: a pandas frame into a weft panel, one model, and its results as pandas
objects."""
import ctypes
import weakref
from dataclasses import dataclass

import numpy as np
import pandas as pd

from . import _columns
from ._errors import WeftError
from ._library import SummaryItem, WaldResult, load

COEFFICIENT_COLUMNS = ["estimate", "se", "t", "p", "interval_from", "interval_to"]


def _check(lib, status):
    if status != 0:
        raise WeftError(lib.weft_last_error().decode("utf-8", "replace"), status)


def _address(array):
    return None if array is None else array.ctypes.data


def _text(value, what):
    if not isinstance(value, str):
        raise WeftError(f"weft: the {what} must be text, not {value!r}")
    if "\0" in value:
        raise WeftError(f"weft: the {what} {value!r} contains a NUL character; remove it")
    return value.encode("utf-8")


class _Handle:
    """A weft handle freed by its free function when the owner is collected, keeping
    alive the arrays the handle borrows."""

    def __init__(self, lib, free, pointer, keep=()):
        self.pointer = pointer
        self.keep = list(keep)
        self._finalizer = weakref.finalize(self, free, pointer)


def _panel(lib, frame, outcome, regressors, unit, period, weights=None, first_row=0):
    """A new weft panel with the frame's columns (outcome, regressors, periods and weights
    borrowed in place, units copied) and the arrays it borrows. first_row: the number
    weft's messages give the frame's first row (a partition's position in the whole
    frame)."""
    regressors = [regressors] if isinstance(regressors, str) else list(regressors)
    columns = {"outcome": _columns.take(frame, outcome, "outcome"),
               "unit": _columns.take(frame, unit, "unit"),
               "period": _columns.take(frame, period, "period")}
    regressor_columns = [(_text(str(name), "regressor name"), _columns.take(frame, name, "regressor"))
                         for name in regressors]
    weight_column = None if weights is None else _columns.take(frame, weights, "weights")
    if len(frame) == 0:
        raise WeftError("weft: the frame has no rows; give at least one row per unit and period")
    pointer = ctypes.c_void_p()
    # first_row 0: a row number in weft's messages is the row's position in the frame
    # (frame.iloc[n]), whatever the frame's index.
    _check(lib, lib.weft_panel_new(ctypes.byref(pointer), len(frame), first_row))
    handle = _Handle(lib, lib.weft_panel_free, pointer)
    kind, ids, missing = _columns.units(columns["unit"])
    if kind == "number":
        _check(lib, lib.weft_panel_set_units_number(pointer, _address(ids), _address(missing)))
    else:
        id_array = (ctypes.c_char_p * len(ids))(*ids)
        _check(lib, lib.weft_panel_set_units_text(pointer, id_array, _address(missing)))
    values, missing = _columns.periods(columns["period"])
    handle.keep += [values, missing]
    _check(lib, lib.weft_panel_borrow_periods(pointer, _address(values), _address(missing)))
    values, missing = _columns.numbers(columns["outcome"], "outcome")
    handle.keep += [values, missing]
    _check(lib, lib.weft_panel_borrow_outcome(pointer, _text(str(outcome), "outcome name"),
                                              _address(values), _address(missing)))
    for name, column in regressor_columns:
        values, missing = _columns.numbers(column, "regressor")
        handle.keep += [values, missing]
        _check(lib, lib.weft_panel_borrow_regressor(pointer, name, _address(values), _address(missing)))
    if weight_column is not None:
        values, missing = _columns.numbers(weight_column, "weights")
        handle.keep += [values, missing]
        _check(lib, lib.weft_panel_borrow_weights(pointer, _text(str(weights), "weights name"),
                                                  _address(values), _address(missing)))
    return handle


def _count(lib, function, pointer):
    n = ctypes.c_size_t()
    _check(lib, function(pointer, ctypes.byref(n)))
    return n.value


def _matrix(lib, function, pointer, columns):
    needed = ctypes.c_size_t()
    _check(lib, function(pointer, None, 0, ctypes.byref(needed)))
    out = np.empty(needed.value, dtype=np.float64)
    _check(lib, function(pointer, out.ctypes.data, out.size, ctypes.byref(needed)))
    return out.reshape(-1, columns) if columns else out


def _by_row(lib, function, pointer, index, name):
    out = np.empty(len(index), dtype=np.float64)
    _check(lib, function(pointer, out.ctypes.data, None, out.size, None))
    return pd.Series(out, index=index, name=name)


# Summary labels that weft.h gives once per dropped term and once per warning.
LISTED_LABELS = ("term dropped", "warning")


def _summary(lib, pointer):
    """Summary items as a dict label -> value (float or str). The labels of
    LISTED_LABELS, and any other label that occurs more than once, map to the list of
    their values in order (a list even when there is one)."""
    summary = {}
    item = SummaryItem()
    for i in range(_count(lib, lib.weft_model_summary_count, pointer)):
        _check(lib, lib.weft_model_summary_item(pointer, i, ctypes.byref(item)))
        label = item.label.decode("utf-8")
        value = item.number if item.kind == 0 else item.text.decode("utf-8")
        if label in summary:
            previous = summary[label]
            summary[label] = (previous if isinstance(previous, list) else [previous]) + [value]
        else:
            summary[label] = [value] if label in LISTED_LABELS else value
    return summary


def _borrowed_texts(lib, function, pointer, count_function, per_item):
    """For each index below the count: the per_item strings function(pointer, i, ...)
    lends, decoded (a tuple when per_item > 1)."""
    out = []
    for i in range(_count(lib, count_function, pointer)):
        texts = [ctypes.c_char_p() for _ in range(per_item)]
        _check(lib, function(pointer, i, *(ctypes.byref(t) for t in texts)))
        decoded = tuple(t.value.decode("utf-8") for t in texts)
        out.append(decoded if per_item > 1 else decoded[0])
    return out


@dataclass(frozen=True)
class JointTest:
    """Wald test that the named terms are all zero, under the model's covariance
    (WEFT.JOINT): the F form on (f_df1, f_df2) with the model's inference df, and the
    chi-square form on chi2_df; warnings are weft's notes on the test."""
    terms: tuple
    f: float
    f_df1: float
    f_df2: float
    f_p: float
    chi2: float
    chi2_df: float
    chi2_p: float
    warnings: tuple = ()


class Result:
    """One fitted model. Attributes (plain pandas and Python objects, read at fit time):
    coefficients  DataFrame indexed by term: estimate, se, t, p, interval_from,
                  interval_to (the interval at the model's confidence level)
    covariance    DataFrame term by term: the covariance of the estimates under the
                  model's standard errors
    summary       dict of the summary items (WEFT.SUMMARY), label -> number or text
    residuals     Series on the frame's index: residual of the estimated equation, NaN
                  where a row is not in it (missing value; fd: first period of a unit);
                  weft.dask.fit: a lazy dask Series on the partitioned frame's index
    fitted        Series on the frame's index, fitted values of the estimated equation
                  (weft.dask.fit: lazy, as residuals)
    dropped       dict term -> why it was dropped (collinear, no variation within units)
    warnings      list of weft's warnings about the fit
    model         the canonical model text
    Methods: joint(terms) (Wald test), value(what, term=None) (one number, WEFT.VALUE)."""

    def __init__(self, lib, model, index):
        self._lib, self._model = lib, model
        pointer = model.pointer
        terms = _borrowed_texts(lib, lib.weft_model_term_name, pointer, lib.weft_model_term_count, 1)
        term_index = pd.Index(terms, name="term")
        table = _matrix(lib, lib.weft_model_coefficients, pointer, len(COEFFICIENT_COLUMNS))
        self.coefficients = pd.DataFrame(table, index=term_index, columns=COEFFICIENT_COLUMNS)
        matrix = _matrix(lib, lib.weft_model_covariance, pointer, len(terms))
        self.covariance = pd.DataFrame(matrix, index=term_index, columns=pd.Index(terms, name="term"))
        self.summary = _summary(lib, pointer)
        self.model = self.summary.get("model")
        # index None: a model fitted over partitions, which holds no rows
        self.residuals = None if index is None else _by_row(lib, lib.weft_model_residuals, pointer, index, "residual")
        self.fitted = None if index is None else _by_row(lib, lib.weft_model_fitted, pointer, index, "fitted")
        self.dropped = dict(_borrowed_texts(lib, lib.weft_model_dropped, pointer,
                                            lib.weft_model_dropped_count, 2))
        self.warnings = _borrowed_texts(lib, lib.weft_model_warning, pointer,
                                        lib.weft_model_warning_count, 1)

    def joint(self, terms):
        """Wald test that every term in terms (a list of names, or one name) is zero."""
        terms = [terms] if isinstance(terms, str) else list(terms)
        encoded = [_text(t, "term name") for t in terms]
        array = (ctypes.c_char_p * max(len(encoded), 1))(*encoded)
        out = WaldResult()
        _check(self._lib, self._lib.weft_test_joint(self._model.pointer, array, len(encoded), ctypes.byref(out)))
        notes = self._lib.weft_test_warnings().decode("utf-8")
        return JointTest(tuple(terms), *(getattr(out, f) for f, _ in WaldResult._fields_),
                         warnings=tuple(notes.split("; ")) if notes else ())

    def value(self, what, term=None):
        """One number by name, as the WEFT.VALUE cell: what is e.g. "estimate", "se"
        (with term), "r2", "sigma", "df", "clusters"; NaN where it does not apply."""
        number = ctypes.c_double()
        _check(self._lib, self._lib.weft_model_value(
            self._model.pointer, _text(what, "value word"),
            None if term is None else _text(term, "term name"), ctypes.byref(number)))
        return number.value

    def __repr__(self):
        return f"<weft result: {self.model}>\n{self.coefficients.to_string()}"


def fit(frame, outcome, regressors, unit, period, model="pooled", weights=None):
    """Fit one panel model to the columns of a pandas DataFrame, as the weft cells do.
    outcome, unit, period: column names; regressors: a list of column names (or one);
    model: the model text of the cells (e.g. "fd periods cluster", "within dk=2
    level=0.9"); weights: the name of a column of observation weights (weighted least
    squares; NaN drops the row, 0 leaves it out, a negative weight is an error), or
    None. Returns a Result. Raises WeftError with weft's message."""
    if not isinstance(frame, pd.DataFrame):
        raise WeftError(f"weft: fit needs a pandas DataFrame, not {type(frame).__name__}")
    lib, _ = load()
    panel = _panel(lib, frame, outcome, regressors, unit, period, weights)
    pointer = ctypes.c_void_p()
    _check(lib, lib.weft_model_new_text(ctypes.byref(pointer), panel.pointer,
                                        _text(model if model is not None else "", "model text")))
    # The model may read the borrowed columns again: it keeps them (and its panel's
    # arrays) alive; the panel itself is freed with its handle.
    handle = _Handle(lib, lib.weft_model_free, pointer, keep=panel.keep)
    return Result(lib, handle, frame.index)
