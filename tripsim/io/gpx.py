"""Read GPX tracks and routes (GPX 1.0/1.1) with gpxpy."""

from __future__ import annotations

from pathlib import Path

import gpxpy
import gpxpy.gpx
import numpy as np

from tripsim.errors import RouteError
from tripsim.route import Route

__all__ = ["read_gpx"]


def read_gpx(path: str | Path, *, use_elevation: bool = True) -> Route:
    """Read the points of a GPX file as a route.

    Parameters
    ----------
    path : str or Path
        The GPX file.
    use_elevation : bool, default True
        Keep ``<ele>`` values.  When some points lack them, reading fails
        (pass False, or give an elevation raster, to ignore them).

    Returns
    -------
    Route
        Track points (all tracks and segments in order); if the file has no
        tracks, route points.  No speed limits: GPX does not carry them.

    Raises
    ------
    RouteError
        If the file is not valid GPX or holds fewer than 2 points.
    """
    path = Path(path)
    try:
        with path.open(encoding="utf-8") as fh:
            doc = gpxpy.parse(fh)
    except OSError as exc:
        raise RouteError(f"cannot read the file ({exc.strerror})", path) from None
    except (gpxpy.gpx.GPXException, ValueError) as exc:
        raise RouteError(f"not a valid GPX file: {exc}", path) from None
    points = [p for t in doc.tracks for s in t.segments for p in s.points]
    kind = "track"
    if not points:
        points = [p for r in doc.routes for p in r.points]
        kind = "route"
    if len(points) < 2:
        raise RouteError(f"the GPX file holds {len(points)} track or route points; need 2 or more",
                         path)
    lat = np.array([p.latitude for p in points], dtype=float)
    lon = np.array([p.longitude for p in points], dtype=float)
    ele = None
    if use_elevation:
        raw = [p.elevation for p in points]
        if any(e is not None for e in raw):
            ele = np.array([np.nan if e is None else e for e in raw], dtype=float)
    name = next((t.name for t in doc.tracks if t.name), None) or doc.name or path.stem
    return Route(lat_deg=lat, lon_deg=lon, elevation_m=ele, name=f"{name} ({kind})",
                 source=str(path))
