"""Finding and loading libweft, and the ctypes declarations of the weft.h functions
the package calls. Only this module touches ctypes prototypes."""
import ctypes
import ctypes.util
import os
import threading

# The oldest library this package works with: weft.h 0.3.0 (WEFT_VERSION_NUMBER 300).
# Within one major version a newer library runs an older caller unchanged (ABI.md).
NEEDED_VERSION = 300
SONAME = "libweft.so.0"
ENV_VARIABLE = "WEFT_LIBRARY"
WEFT_OPTIONS_VERSION = 1


class LibraryError(OSError):
    """libweft could not be found or loaded, or is too old for this package."""


class Options(ctypes.Structure):
    """struct weft_options of weft.h (fields appended at the end only)."""
    _fields_ = [("size", ctypes.c_size_t), ("version", ctypes.c_uint),
                ("estimator", ctypes.c_int), ("se", ctypes.c_int), ("dk_lag", ctypes.c_int),
                ("period_effects", ctypes.c_int), ("intercept", ctypes.c_int),
                ("level", ctypes.c_double)]


class SummaryItem(ctypes.Structure):
    """struct weft_summary_item of weft.h (layout fixed forever)."""
    _fields_ = [("label", ctypes.c_char_p), ("kind", ctypes.c_int),
                ("number", ctypes.c_double), ("text", ctypes.c_char_p)]


class WaldResult(ctypes.Structure):
    """struct weft_wald_result of weft.h (layout fixed forever)."""
    _fields_ = [(name, ctypes.c_double)
                for name in ("f", "f_df1", "f_df2", "f_p", "chi2", "chi2_df", "chi2_p")]


_p, _size, _int, _dbl = ctypes.c_void_p, ctypes.c_size_t, ctypes.c_int, ctypes.c_double
_str, _psize, _pdbl = ctypes.c_char_p, ctypes.POINTER(ctypes.c_size_t), ctypes.POINTER(ctypes.c_double)

# name: (restype, argtypes). Array arguments are passed as addresses (c_void_p).
_PROTOTYPES = {
    "weft_version_number": (_int, []),
    "weft_version_text": (_str, []),
    "weft_last_error": (_str, []),
    "weft_clear_error": (None, []),
    "weft_status_text": (_str, [_int]),
    "weft_panel_new": (_int, [ctypes.POINTER(_p), _size, _size]),
    "weft_panel_free": (None, [_p]),
    "weft_panel_set_units_text": (_int, [_p, _p, _p]),
    "weft_panel_set_units_number": (_int, [_p, _p, _p]),
    "weft_panel_borrow_periods": (_int, [_p, _p, _p]),
    "weft_panel_borrow_outcome": (_int, [_p, _str, _p, _p]),
    "weft_panel_borrow_regressor": (_int, [_p, _str, _p, _p]),
    "weft_panel_borrow_weights": (_int, [_p, _str, _p, _p]),
    "weft_model_new_text": (_int, [ctypes.POINTER(_p), _p, _str]),
    "weft_model_free": (None, [_p]),
    "weft_model_term_count": (_int, [_p, _psize]),
    "weft_model_term_name": (_int, [_p, _size, ctypes.POINTER(_str)]),
    "weft_model_coefficients": (_int, [_p, _p, _size, _psize]),
    "weft_model_covariance": (_int, [_p, _p, _size, _psize]),
    "weft_model_dropped_count": (_int, [_p, _psize]),
    "weft_model_dropped": (_int, [_p, _size, ctypes.POINTER(_str), ctypes.POINTER(_str)]),
    "weft_model_warning_count": (_int, [_p, _psize]),
    "weft_model_warning": (_int, [_p, _size, ctypes.POINTER(_str)]),
    "weft_model_summary_count": (_int, [_p, _psize]),
    "weft_model_summary_item": (_int, [_p, _size, ctypes.POINTER(SummaryItem)]),
    "weft_model_value": (_int, [_p, _str, _str, _pdbl]),
    "weft_model_residuals": (_int, [_p, _p, _p, _size, _psize]),
    "weft_model_fitted": (_int, [_p, _p, _p, _size, _psize]),
    "weft_test_warnings": (_str, []),
    "weft_test_joint": (_int, [_p, _p, _size, ctypes.POINTER(WaldResult)]),
}

_lock = threading.Lock()
_loaded = None  # (ctypes.CDLL, path or name it was loaded from)


def _candidates():
    """The places searched, in order: (description, path or name, required). A
    generator: the system's path is asked (which may start the compiler) only when the
    first two places did not give the library."""
    env = os.environ.get(ENV_VARIABLE)
    if env:
        yield f"{ENV_VARIABLE}={env}", env, True
    else:
        yield f"{ENV_VARIABLE} (not set)", None, False
    beside = os.path.join(os.path.dirname(os.path.abspath(__file__)), SONAME)
    yield f"beside the package: {beside}", beside, False
    system = ctypes.util.find_library("weft") or SONAME
    yield f"the system's library path ({system})", system, False


def _open():
    """Load libweft from the first place that works (see load)."""
    tried = []
    for description, target, required in _candidates():
        if target is None:
            tried.append(description)
            continue
        if os.sep in target and not os.path.exists(target):
            reason = "no such file"
        else:
            try:
                return ctypes.CDLL(target), target
            except OSError as error:
                reason = str(error)
        tried.append(f"{description}: {reason}")
        if required:
            # An explicit WEFT_LIBRARY that does not load is an error of its own: never
            # fall back silently to another copy of the library.
            raise LibraryError(
                f"weft: the library named by {ENV_VARIABLE} could not be loaded ({target}: "
                f"{reason}); set {ENV_VARIABLE} to the path of libweft.so.0 (e.g. "
                f"build/cabi/libweft.so.0), or unset it to use the copy beside the package "
                f"or on the system's library path")
    raise LibraryError(
        "weft: libweft.so.0 was not found; looked in: " + "; ".join(tried) +
        f". Set {ENV_VARIABLE} to the library's path, copy libweft.so.0 into the package "
        "folder, or install the library (cmake --install) where the system finds it")


def _declare(lib, path):
    for name, (restype, argtypes) in _PROTOTYPES.items():
        try:
            function = getattr(lib, name)
        except AttributeError:
            raise LibraryError(f"weft: {path} lacks the function {name}: it is not libweft "
                               f"0.3.0 or newer") from None
        function.restype = restype
        function.argtypes = argtypes
    number = lib.weft_version_number()
    if number < NEEDED_VERSION or number // 10000 != NEEDED_VERSION // 10000:
        raise LibraryError(f"weft: {path} is libweft {lib.weft_version_text().decode()}; this "
                           f"package needs version 0.3.0 or a later 0.x")


def load():
    """The loaded library and where it came from: WEFT_LIBRARY when set, else
    libweft.so.0 beside this package, else the system's library path. Loaded once."""
    global _loaded
    with _lock:
        if _loaded is None:
            lib, path = _open()
            _declare(lib, path)
            _loaded = (lib, path)
        return _loaded
