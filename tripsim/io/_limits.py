"""What the readers accept: plausible ranges of physical inputs and size caps of files.

Every reader in :mod:`tripsim.io` checks the values it reads against these
constants, so that a typo, a corrupt file or a deliberately absurd one ends in a
one-line error (or, where real data may legitimately hold such values, a
:class:`~tripsim.errors.TripsimWarning` naming the rows) instead of numbers
computed from nonsense.  The same table is in DEVELOPERS.md ("Input limits").

Vehicle keys keep their ranges beside their definitions in :mod:`tripsim.vehicle`;
numeric command-line options are checked where the scenario is validated.
"""

from __future__ import annotations

import os
import sys

from tripsim.errors import TripsimInputError

__all__ = [
    "DEM_CELLS_MAX",
    "DEM_ELEVATION_M",
    "ELEVATION_M",
    "GRADE_MAX",
    "GRADE_NOISE_M",
    "LAT_DEG",
    "LON_DEG",
    "POINT_GAP_WARN_M",
    "SIZE_CAP_MB",
    "SPEED_LIMIT_KPH",
    "STATION_ELEVATION_M",
    "UTC_OFFSET_H",
    "WEATHER_GAP_MAX_H",
    "check_coordinate",
    "size_cap_bytes",
]

#: WGS84 latitude and longitude [degrees].  Besides the range, a coordinate may not be a
#: subnormal float (0 < |x| < 2.2e-308): such a value is a corrupt number, not a place.
LAT_DEG = (-90.0, 90.0)
LON_DEG = (-180.0, 180.0)

#: Elevation of a road or a route point [m].  The lowest roads on land lie about 430 m
#: below sea level and the highest paved passes about 5,800 m above it; the highest
#: summit is 8,849 m (from memory).  -500 to 9,000 m leaves a margin for GNSS error.
ELEVATION_M = (-500.0, 9_000.0)

#: What an elevation raster may hold [m]: terrain and sea floor, from the deepest ocean
#: trench (about -10,935 m, from memory) to the highest summit.  A value outside this is a
#: no-data marker the file does not declare (-32768, -9999 or 1e30 are common) or garbage.
DEM_ELEVATION_M = (-11_000.0, 9_000.0)

#: Largest grade between consecutive points of a route file (rise over run).  The
#: steepest public streets are about 35-37 % (from memory); 40 % leaves a margin.
GRADE_MAX = 0.40
#: Vertical error allowed on top of :data:`GRADE_MAX` between two points [m]: consumer
#: GNSS elevation is typically good to 10-20 m (common practice), so short steps of noisy
#: tracks are not refused; elevation smoothing then takes the noise out.
GRADE_NOISE_M = 20.0

#: Consecutive route points farther apart than this get a warning naming them [m]: a
#: jump in a track (a lost fix, a point at 0°/0°) that the simulator would drive as a
#: straight line.  Real tracks with long tunnels or gaps keep working.
POINT_GAP_WARN_M = 50_000.0

#: Speed limits read from route files [km/h].  Posted limits run from walking pace
#: (about 5-7 km/h) to about 130-160 km/h on the fastest motorways (from memory); OSM's
#: ``maxspeed=none`` is read as 130 km/h (:data:`tripsim.maxspeed.NONE_KPH`).
SPEED_LIMIT_KPH = (1.0, 200.0)

#: Offset of a weather file's standard time from UTC [h]: the time zones in use run
#: from UTC-12 to UTC+14.
UTC_OFFSET_H = (-12.0, 14.0)
#: Elevation of a weather station [m] (same reasoning as :data:`ELEVATION_M`).
STATION_ELEVATION_M = ELEVATION_M
#: Longest run of missing hourly values in a weather file that is interpolated [h];
#: longer gaps are errors naming the column and the rows (common practice for typical
#: years: a few hours of a smooth quantity interpolate well, half a day does not).
WEATHER_GAP_MAX_H = 6

#: Largest input file of each kind [MB] (1 MB = 2**20 bytes), so that a wrong file (a
#: disk image, /dev/zero) ends in an error rather than in exhausted memory.  Each cap can
#: be raised with an environment variable ``TRIPSIM_MAX_<KIND>_MB`` (for example
#: ``TRIPSIM_MAX_OSM_MB=2048``).  For compressed OSM files the cap holds for the
#: decompressed XML too.
SIZE_CAP_MB: dict[str, float] = {
    "vehicle": 1.0,      # a vehicle file is a page of TOML (a few kB)
    "trips": 1.0,        # a trip list: tables of names and paths
    "scenario": 4.0,     # scenarios for `tripsim run`: many tables of options
    "gpx": 100.0,        # about a million track points with time stamps
    "geojson": 100.0,    # about two million positions
    "osm": 512.0,        # a region of a few hundred km of roads (osmnx needs ~10x in memory)
    "weather": 16.0,     # a typical year is 1-2 MB (8760 rows)
    "csv": 64.0,         # charging sites or lodgings: half a million rows
    "dem": 4096.0,       # rasters are read by window: only the route's area is loaded
}
#: Largest window of an elevation raster read at once [cells] (400 MB as float64):
#: a route across a continent at full resolution needs a coarser raster.
DEM_CELLS_MAX = 50_000_000


def size_cap_bytes(kind: str) -> int:
    """The size cap of a kind of input file in bytes, from :data:`SIZE_CAP_MB` or its variable.

    Raises
    ------
    TripsimInputError
        If ``TRIPSIM_MAX_<KIND>_MB`` is set to something other than a positive number.
    """
    name = f"TRIPSIM_MAX_{kind.upper()}_MB"
    text = os.environ.get(name)
    mb = SIZE_CAP_MB[kind]
    if text is not None and text.strip():
        try:
            mb = float(text)
        except ValueError:
            mb = float("nan")
        if not 0.0 < mb < 1e9:
            raise TripsimInputError(f"{text!r} is not a positive number of megabytes", name)
    return int(mb * 2**20)


def check_coordinate(value: float, axis: str) -> str | None:
    """Why a latitude or longitude is not a place, or None when it is one.

    Parameters
    ----------
    value : float
        The coordinate. [degrees]
    axis : {"lat", "lon"}
        Which one.

    Returns
    -------
    str or None
        A short reason ("is outside -90 to 90°", "is not a number", ...).
    """
    lo, hi = LAT_DEG if axis == "lat" else LON_DEG
    if value != value or value in (float("inf"), float("-inf")):
        return "is not a finite number"
    if not lo <= value <= hi:
        return f"is outside {lo:g} to {hi:g}°"
    if value != 0.0 and abs(value) < sys.float_info.min:
        return "is a subnormal number (a corrupt value, not a place)"
    return None
