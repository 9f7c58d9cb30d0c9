"""The error and warning classes of bcgen.

Every error a user can cause derives from :class:`BcgenError`. Its message is
one line that names the file, key or line at fault and says what is expected;
the command line prints it as ``bcgen: error: <message>`` and exits with
status 2 (the traceback only with ``--debug``).
"""

from __future__ import annotations


class BcgenError(Exception):
    """Base class of every error caused by the user's input or environment."""

    exit_status = 2


class EpochError(BcgenError, ValueError):
    """An epoch string or value that cannot be read unambiguously."""


class OrbitError(BcgenError, ValueError):
    """Impossible orbital elements, an unknown solution or an unusable table."""


class CalendarError(BcgenError, ValueError):
    """An unknown calendar or an anchor date that does not exist in it."""


class GridError(BcgenError, ValueError):
    """An impossible or unusable grid (latitudes beyond ±90°, bad bounds, no latitude in a file)."""


class InsolationError(BcgenError, ValueError):
    """An impossible insolation request (latitude outside ±90°, non-positive solar constant)."""


class SpecError(BcgenError, ValueError):
    """An invalid experiment spec (YAML syntax, unknown key, wrong type or value)."""


class InputFileError(BcgenError):
    """A missing, unreadable or unsuitable input file (NetCDF, CSV, template)."""


class OutputError(BcgenError):
    """An output that cannot be written (exists without --force, read-only, disk full)."""


class CheckFailed(BcgenError):
    """A check that ran and failed by design (exit status 1, not a usage error)."""

    exit_status = 1


class BcgenWarning(UserWarning):
    """Base class of bcgen's warnings."""


class OutsideValidityWarning(BcgenWarning):
    """An epoch outside the range for which an orbital solution is stated to be valid."""


class DeprecatedCalendarNameWarning(BcgenWarning):
    """A deprecated CF calendar name (``gregorian``) that was read as its current name."""


class ImplausibleValueWarning(BcgenWarning):
    """A value far outside the range expected for the Earth, probably in the wrong unit."""


class LongComputationWarning(BcgenWarning):
    """Work that will take minutes (an integration beyond a bundled table), told beforehand."""


class TooLargeError(BcgenError):
    """A request whose memory or output would exceed a stated limit (refused before any work)."""
