"""The exception every weft failure raises."""


class WeftError(ValueError):
    """A weft failure: the text begins with "weft: " and says what to fix (weft's own
    message from the C interface, or the package's for a frame it cannot use).
    status is weft's status code (weft.h, e.g. -4 for rejected data), or None for a
    problem found by the package before calling weft."""

    def __init__(self, message, status=None):
        super().__init__(message)
        self.message = message
        self.status = status

    def __reduce__(self):
        # keeps the status when the error travels between processes (a Dask worker)
        return type(self), (self.message, self.status)
