"""Exceptions raised for bad input.

Every error a user can cause by handing tripsim a bad file or option is a
:class:`TripsimInputError` (a :class:`ValueError`).  Its message names the file
(or option), the field and what was expected, so that the command line can
print it on one line and exit with status 2.
"""

from __future__ import annotations

from pathlib import Path

__all__ = [
    "DemError",
    "RouteError",
    "TripsimInputError",
    "TripsimWarning",
    "VehicleFileError",
]


class TripsimInputError(ValueError):
    """Bad input: a file, a field in it or an option.

    Parameters
    ----------
    message : str
        What is wrong and what was expected.
    source : str or Path, optional
        The file or option the problem was found in; it prefixes the message.
    """

    def __init__(self, message: str, source: str | Path | None = None) -> None:
        self.source = None if source is None else str(source)
        self.problem = message
        super().__init__(f"{self.source}: {message}" if self.source else message)


class RouteError(TripsimInputError):
    """A route file, waypoint list or road network that cannot be used."""


class VehicleFileError(TripsimInputError):
    """A vehicle file with a missing, unknown or out-of-range key."""


class DemError(TripsimInputError):
    """An elevation raster that cannot be read or does not cover the route."""


class TripsimWarning(UserWarning):
    """Input that is used but looks suspicious (a jump in a track, an ignored OSM tag).

    Raised with :func:`warnings.warn`; the message names the file and the rows.  The
    command line prints it on one line as ``tripsim: warning: ...``.
    """
