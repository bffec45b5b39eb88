"""weft: panel-data estimation (pooled, first differences, within, between, random
effects, robust covariances) on pandas frames, through weft's C interface (libweft).

    import weft
    result = weft.fit(frame, outcome="y", regressors=["x1", "x2"], unit="unit",
                      period="year", model="fd periods cluster")
    result.coefficients; result.summary; result.joint(["x1", "x2"]); result.residuals

    import weft.dask   # the same fit of a dask DataFrame, on its partitions
    result = weft.dask.fit(ddf, outcome="y", regressors=["x1", "x2"], unit="unit",
                           period="year", model="fd periods cluster")

The conventions (df, clustering, period grid, model words) are those of weft's
spreadsheet cells. libweft is found through WEFT_LIBRARY, else beside this package,
else on the system's library path."""
from ._errors import WeftError
from ._fit import JointTest, Result, fit
from ._library import LibraryError, load as _load

__version__ = "0.3.0"
for _name in ("WeftError", "LibraryError", "Result", "JointTest"):
    globals()[_name].__module__ = "weft"  # shown as weft.WeftError in tracebacks
__all__ = ["fit", "version", "library_path", "Result", "JointTest", "WeftError", "LibraryError"]


def __getattr__(name):
    # weft.dask is imported on first use, so that `import weft` needs no Dask
    if name == "dask":
        import importlib
        return importlib.import_module(".dask", __name__)
    raise AttributeError(f"module 'weft' has no attribute {name!r}")


def version():
    """The version of the loaded libweft, e.g. "0.3.0"."""
    lib, _ = _load()
    return lib.weft_version_text().decode("ascii")


def library_path():
    """The path or name libweft was loaded from."""
    return _load()[1]
