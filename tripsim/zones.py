"""Local time on a route: its time zone from its coordinates, daylight saving included.

A departure without an offset, a schedule's "08:00" and a charger's opening hours are
local times of the place.  The zone is found from the coordinates with
:mod:`timezonefinder` (offline boundary data) and applied with :mod:`zoneinfo`, so
daylight saving is right on every date.
"""

from __future__ import annotations

import functools
from collections.abc import Callable
from zoneinfo import ZoneInfo

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError

__all__ = ["find_zone_name", "local_time", "route_zone", "use_lookup", "zone_at"]


def find_zone_name(lat: float, lon: float) -> str:
    """The IANA zone at a place, from timezonefinder's offline boundaries (slow to load)."""
    from timezonefinder import TimezoneFinder  # loads its boundary data: only when needed

    name = TimezoneFinder().timezone_at(lat=lat, lng=lon)
    if name is None:  # open sea without a zone: the nautical zone of the longitude
        hours = int(np.clip(round(lon / 15.0), -12, 12))
        name = "Etc/GMT" if hours == 0 else f"Etc/GMT{-hours:+d}"
    return name


#: How zone names are looked up: :func:`find_zone_name`, or a caching stand-in installed
#: with :func:`use_lookup` (the command line keeps answers on disk, see
#: :mod:`tripsim.io.zone_cache`, so a command does not load the boundary data each time).
_lookup: list[Callable[[float, float], str]] = [find_zone_name]


def use_lookup(lookup: Callable[[float, float], str]) -> None:
    """Replace how zone names are found (e.g. by a cache in front of :func:`find_zone_name`)."""
    _lookup[0] = lookup
    _zone_name.cache_clear()


@functools.lru_cache(maxsize=256)
def _zone_name(lat: float, lon: float) -> str:
    return _lookup[0](lat, lon)


def zone_at(lat_deg: float, lon_deg: float) -> ZoneInfo:
    """The time zone (IANA) at a place."""
    if not (np.isfinite(lat_deg) and np.isfinite(lon_deg) and -90 <= lat_deg <= 90
            and -180 <= lon_deg <= 180):
        raise TripsimInputError(f"({lat_deg}, {lon_deg}) is not a place on Earth", "time zone")
    return ZoneInfo(_zone_name(round(float(lat_deg), 4), round(float(lon_deg), 4)))


def route_zone(segments: pd.DataFrame) -> ZoneInfo:
    """The time zone at a route's start."""
    return zone_at(float(segments["lat_deg"].iloc[0]), float(segments["lon_deg"].iloc[0]))


def local_time(when: pd.Timestamp | str, segments: pd.DataFrame, option: str = "--depart"
               ) -> pd.Timestamp:
    """A clock time with a zone: as given when it has one, else local to the route's start.

    Raises
    ------
    TripsimInputError
        For text that is not an ISO 8601 time, or a local time that does not exist
        or is ambiguous on that date (a daylight-saving change: give the offset).
    """
    try:
        ts = pd.Timestamp(when)
    except (ValueError, TypeError):
        raise TripsimInputError(f"{when!r} is not an ISO 8601 time", option) from None
    if ts is pd.NaT or pd.isna(ts):
        raise TripsimInputError(f"{when!r} is not an ISO 8601 time", option)
    if ts.tzinfo is not None:
        return ts
    zone = route_zone(segments)
    try:
        return ts.tz_localize(zone, ambiguous="raise", nonexistent="raise")
    except Exception as exc:  # pandas raises pytz's errors for a missing or doubled hour
        raise TripsimInputError(f"{ts} does not exist or is ambiguous in {zone.key} (a "
                                f"daylight-saving change): give the offset ({exc})",
                                option) from None
