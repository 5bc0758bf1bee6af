"""The project's own exceptions.

Every error freerun raises for bad input derives from :class:`FreerunError`.
The command line turns one into a single line on stderr and exit code 2.
Messages are built first and name the thing, the bad value and what is
allowed, e.g. ``"zone 'north': floor_area must be > 0 m², got -5"``.
"""


class FreerunError(Exception):
    """Base class of freerun's own errors (bad input, refused operations)."""


class ProjectError(FreerunError):
    """The project file (or an override of it) is invalid."""


class WeatherError(FreerunError):
    """A weather file cannot be read or fails validation."""


class StageError(FreerunError):
    """A stage notebook failed while executing."""
