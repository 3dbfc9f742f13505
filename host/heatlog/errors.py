"""One base error for everything a user can cause, mixed with the built-in it resembles.

The CLI turns any ``HeatlogError`` into one line on stderr and the error's ``exit_code``;
anything else is a bug and keeps its traceback.
"""


class HeatlogError(Exception):
    """Base of every error a user can cause. Messages say what to do next."""

    exit_code = 2


class InputError(HeatlogError, ValueError):
    """A file or value given by the user cannot be used as it is."""


class CalibrationError(HeatlogError, ValueError):
    """Calibration points or a probe file do not support the requested fit or conversion."""


class RangeError(HeatlogError, ValueError):
    """A value lies outside the range where a model or a calibration is valid."""


class ReductionError(HeatlogError, ValueError):
    """A thermogram cannot be reduced (no event found, periods too short, ...)."""


class LinkError(HeatlogError, IOError):
    """The link to a board failed or the board answered something unusable."""

    exit_code = 3
