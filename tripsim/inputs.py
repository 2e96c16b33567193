"""From files to a simulated trip in one call: the glue the CLI and users share."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError
from tripsim.io import read_route
from tripsim.segments import segment_route
from tripsim.weather import Weather, clear_sky_weather

__all__ = ["load_segments", "load_weather", "parse_waypoints"]


def parse_waypoints(text: str) -> list[tuple[float, float]]:
    """Parse ``"lat,lon;lat,lon;…"`` into (lat, lon) pairs.

    Raises
    ------
    TripsimInputError
        Naming the waypoint that is malformed or out of range.
    """
    points: list[tuple[float, float]] = []
    for i, part in enumerate(p for p in text.split(";") if p.strip()):
        try:
            lat_s, lon_s = part.split(",")
            lat, lon = float(lat_s), float(lon_s)
        except ValueError:
            raise TripsimInputError(
                f"waypoint {i + 1} {part.strip()!r} is not 'lat,lon' in decimal degrees",
                "--waypoints") from None
        if not (-90 <= lat <= 90 and -180 <= lon <= 180) or not np.isfinite([lat, lon]).all():
            raise TripsimInputError(f"waypoint {i + 1} ({lat}, {lon}) is outside ±90°/±180°",
                                    "--waypoints")
        points.append((lat, lon))
    if len(points) < 2:
        raise TripsimInputError(f"need at least 2 waypoints, got {len(points)}", "--waypoints")
    return points


def load_segments(
    route: str | Path,
    *,
    waypoints: Sequence[tuple[float, float]] | None = None,
    dem: str | Path | None = None,
    max_length_m: float = 25.0,
    smooth_sigma_m: float = 40.0,
    cache: bool = True,
    highway_kph: Mapping[str, float] | None = None,
) -> pd.DataFrame:
    """Read a route (and an elevation raster) and cut it into segments.

    Parameters
    ----------
    route : str or Path
        GPX, GeoJSON, or an OSM XML network (with ``waypoints``).
    waypoints : sequence of (lat, lon), optional
        For OSM networks.
    dem : str or Path, optional
        Elevation raster; sampled along the geometry and used instead of any
        elevation in the route file.
    max_length_m, smooth_sigma_m : float
        See :func:`tripsim.segments.segment_route`.
    cache : bool, default True
        Cache prepared OSM graphs.
    highway_kph : mapping, optional
        Speeds for OSM roads without ``maxspeed``, by ``highway`` class. [km/h]

    Returns
    -------
    pandas.DataFrame
        Segments (see :func:`tripsim.segments.segment_route`).
    """
    r = read_route(route, waypoints=waypoints, use_elevation=dem is None, cache=cache,
                   highway_kph=highway_kph)
    raster = None
    if dem is not None:
        margin = 0.01
        bounds = (float(r.lon_deg.min()) - margin, float(r.lat_deg.min()) - margin,
                  float(r.lon_deg.max()) + margin, float(r.lat_deg.max()) + margin)
        from tripsim.io.dem import read_dem  # rasterio: only with a raster

        raster = read_dem(dem, bounds_deg=bounds)
    return segment_route(r, max_length_m=max_length_m, dem=raster, smooth_sigma_m=smooth_sigma_m)


def load_weather(
    spec: str | Path,
    segments: pd.DataFrame,
    *,
    start: pd.Timestamp | None = None,
    end: pd.Timestamp | None = None,
    cloud_factor: float = 0.0,
    temp_c: float = 20.0,
    wind_speed_mps: float = 0.0,
    wind_from_deg: float = 0.0,
) -> Weather:
    """Weather from a file (EPW, TMY3 .csv, TMY2 .tm2) or ``"clear-sky"``.

    A clear sky is tabulated over ``start``-``end`` (both needed) at the route's middle,
    with the given constant air state and cloud factor; a file covers its own span.
    """
    if str(spec) != "clear-sky":
        from tripsim.io.weather_files import read_weather  # pvlib's readers: only for a file

        return read_weather(spec)
    if start is None or end is None:
        raise ValueError("a clear sky needs the span it covers (start and end)")
    lat = float(segments["lat_deg"].mean())
    lon = float(segments["lon_deg"].mean())
    ele = float(segments["elevation_m"].mean())
    return clear_sky_weather(lat, lon, start, end, elevation_m=ele, cloud_factor=cloud_factor,
                             temp_c=temp_c, wind_speed_mps=wind_speed_mps,
                             wind_from_deg=wind_from_deg)
