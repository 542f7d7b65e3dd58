"""One exception tree for compactgen.

Every message names what the user must look at: the file, the key, the value with its
unit and the allowed range or set.  The command line prints the message on one line and
exits with status 2 for bad input, 1 for a failed verification, 3 for a simulator fault.
"""
from __future__ import annotations


class CompactgenError(Exception):
    """Base class of every error compactgen raises on purpose."""

    exit_status = 1


class InputError(CompactgenError, ValueError):
    """Bad input from the user: a card, a data file, a command-line value."""

    exit_status = 2


class CardError(InputError):
    """A device card is malformed, has an unknown or missing key, or a bad value."""


class UnitError(InputError):
    """A value has no unit, an unknown unit, or the wrong dimension."""


class RangeError(InputError):
    """A value lies outside the allowed range of its parameter."""


class DataError(InputError):
    """A measured-data file is malformed (names file, line and column)."""


class UnsupportedExpressionError(CompactgenError, TypeError):
    """A printer met a sympy node its target language cannot express."""


class SimulatorMissing(CompactgenError, RuntimeError):
    """A simulator or compiler needed for a run is not installed."""

    exit_status = 3


class SimulationError(CompactgenError, RuntimeError):
    """A simulator run failed, timed out or produced no usable output."""

    exit_status = 3


class VerificationFailed(CompactgenError):
    """At least one bench metric is outside its tolerance."""

    exit_status = 1


class ReleaseError(CompactgenError):
    """A release cannot be made or a bundle does not check out."""

    exit_status = 2


class Terminated(BaseException):
    """The process was asked to stop (SIGTERM, SIGHUP): raised in the main thread, like
    KeyboardInterrupt for SIGINT, so that every cleanup on the way out runs."""

    def __init__(self, signum: int):
        super().__init__(signum)
        self.signum = signum


class OutOfCalibratedRange(UserWarning):
    """Warning: the model is driven outside the range it was calibrated over."""


class RenamedInCard(FutureWarning):
    """Warning: a card uses the old name of a renamed table or key (accepted for one release)."""
