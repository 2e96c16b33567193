"""All file input and output of tripsim.  Models never open files; these readers do.

Readers return plain tripsim objects (:class:`~tripsim.route.Route`,
:class:`~tripsim.vehicle.Vehicle`, :class:`~tripsim.elevation.Dem`, graphs);
writers in :mod:`tripsim.io.export` write atomically.
"""

from __future__ import annotations

import importlib
from collections.abc import Mapping, Sequence
from pathlib import Path
from typing import Any

from tripsim.errors import RouteError
from tripsim.io._files import input_file
from tripsim.io._limits import GRADE_MAX
from tripsim.route import Route

__all__ = ["OSM_SUFFIXES", "read_dem", "read_osm_graph", "read_route", "read_vehicle"]

#: Readers load on first use: reading a GPX track needs neither osmnx nor rasterio.
_READERS = {"read_dem": "tripsim.io.dem", "read_osm_graph": "tripsim.io.osm",
            "read_vehicle": "tripsim.io.vehicle_file", "read_gpx": "tripsim.io.gpx",
            "read_geojson": "tripsim.io.geojson"}


def __getattr__(name: str) -> Any:
    if name not in _READERS:
        raise AttributeError(f"module 'tripsim.io' has no attribute {name!r}")
    return getattr(importlib.import_module(_READERS[name]), name)

OSM_SUFFIXES = (".osm", ".osm.bz2", ".osm.gz", ".osm.xml")


def _kind(path: Path) -> str:
    name = path.name.lower()
    if name.endswith(OSM_SUFFIXES):
        return "osm"
    if name.endswith(".gpx"):
        return "gpx"
    if name.endswith((".geojson", ".json")):
        return "geojson"
    raise RouteError(
        "unknown route format; expected .gpx, .geojson/.json or OSM XML "
        f"({', '.join(OSM_SUFFIXES)})", path)


def read_route(
    path: str | Path,
    *,
    waypoints: Sequence[tuple[float, float]] | None = None,
    use_elevation: bool = True,
    cache: bool = True,
    highway_kph: Mapping[str, float] | None = None,
    max_grade: float | None = GRADE_MAX,
) -> Route:
    """Read a route from a GPX, GeoJSON or OSM XML file.

    Parameters
    ----------
    path : str or Path
        The route file.  An OSM XML file is a road network: ``waypoints`` are
        then required and the route is the fastest path through them.
    waypoints : sequence of (lat, lon), optional
        For OSM networks.
    use_elevation : bool, default True
        Keep elevation found in GPX/GeoJSON files (set False when a raster
        should supply it).
    cache : bool, default True
        Cache prepared OSM graphs (see :func:`tripsim.io.osm.read_osm_graph`).
    highway_kph : mapping, optional
        Speeds for OSM roads without ``maxspeed``, by ``highway`` class. [km/h]
    max_grade : float or None, default :data:`tripsim.io._limits.GRADE_MAX`
        GPX/GeoJSON: refuse elevation steps steeper than this between consecutive
        points (beyond GNSS noise); None accepts any.

    Returns
    -------
    Route

    Raises
    ------
    RouteError
        Naming the file (and the point or line) of any problem.
    """
    path = Path(path)
    kind = _kind(path)
    input_file(path, "osm" if kind == "osm" else kind, error=RouteError)
    if kind == "osm":
        if not waypoints:
            raise RouteError("an OSM road network needs --waypoints \"lat,lon;lat,lon\" to route "
                             "through", path)
        from tripsim.io.osm import read_osm_graph
        from tripsim.roadgraph import route_through

        G = read_osm_graph(path, cache=cache, highway_kph=highway_kph)
        return route_through(G, waypoints, name=path.stem, source=str(path))
    if waypoints:
        raise RouteError("--waypoints only applies to OSM XML road networks", path)
    if kind == "gpx":
        from tripsim.io.gpx import read_gpx as reader
    else:
        from tripsim.io.geojson import read_geojson as reader
    return reader(path, use_elevation=use_elevation, max_grade=max_grade)
