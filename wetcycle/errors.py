"""One exception family for wetcycle.

Every error caused by what a user supplied (a scenario, a forcing file, a
command-line argument, a temperature outside a model's validity) is a
:class:`WetcycleError`.  Messages name the field, the value received and what
is allowed.  The command line turns these into one line on stderr and exit
status 2; anything else that escapes is a bug.
"""


class WetcycleError(ValueError):
    """Base class of every user-facing wetcycle error."""


class ConfigError(WetcycleError):
    """A scenario or option has a missing, unknown or out-of-range field."""


class InputDataError(WetcycleError):
    """A forcing or property file is malformed or has values out of range."""


class ValidityError(WetcycleError):
    """A physical function was asked for a state outside its validity range."""


class OutputError(WetcycleError):
    """A result could not be written (no space left, a folder that cannot be created)."""


class UnknownNameError(WetcycleError):
    """A name (salt system, forcing kind, time law) is not in its registry."""


def shown(value):
    """A value as written in an error message: NumPy scalars as plain Python numbers.

    ``repr(np.float64(1.2))`` reads ``np.float64(1.2)`` under NumPy >= 2; a user should read ``1.2``.
    """
    item = getattr(value, "item", None)
    if item is not None and getattr(value, "ndim", None) == 0:
        value = item()
    return repr(value)
