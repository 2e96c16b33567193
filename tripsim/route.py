"""A route: the polyline a vehicle follows, with what the road says along it.

Readers in :mod:`tripsim.io` turn GPX, GeoJSON and OSM XML into a
:class:`Route`; :func:`tripsim.segments.segment_route` cuts it into short
segments.  A route holds *vertices* (points, ``n`` of them) and *edges* (the
``n - 1`` stretches between consecutive points).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from enum import IntEnum

import numpy as np

from tripsim.errors import RouteError

__all__ = ["Route", "StopKind"]


class StopKind(IntEnum):
    """Why a vehicle stops at a vertex (OSM node tag ``highway=…``)."""

    NONE = 0
    GIVE_WAY = 1  # highway=give_way: slows, here treated as no stop
    STOP_SIGN = 2  # highway=stop
    SIGNALS = 3  # highway=traffic_signals
    END = 4  # origin or destination


def _as_float(values: object, n: int, what: str, source: str) -> np.ndarray:
    arr = np.asarray(values, dtype=float)
    if arr.shape != (n,):
        raise RouteError(f"{what} has {arr.size} values, expected {n}", source)
    return arr


@dataclass(frozen=True)
class Route:
    """A polyline route with per-vertex and per-edge attributes.

    Parameters
    ----------
    lat_deg, lon_deg : array of float, shape (n,)
        Vertex positions, WGS84. [degrees]
    elevation_m : array of float, shape (n,), optional
        Vertex elevations above sea level, or None when the source has none. [m]
    speed_limit_kph : array of float, shape (n - 1,), optional
        Posted or assumed limit of each edge; NaN where unknown. [km/h]
    highway : array of str, shape (n - 1,), optional
        OSM ``highway`` class of each edge ("" where unknown).
    stop_kind : array of int, shape (n,), optional
        :class:`StopKind` of each vertex.
    name : str
        A label for reports.
    source : str
        The file (or files) the route came from; used in error messages.
    elevation_source : str
        Where ``elevation_m`` came from: ``"file"``, ``"dem"`` or ``"none"``.
    """

    lat_deg: np.ndarray
    lon_deg: np.ndarray
    elevation_m: np.ndarray | None = None
    speed_limit_kph: np.ndarray | None = None
    highway: np.ndarray | None = None
    stop_kind: np.ndarray | None = None
    name: str = "route"
    source: str = "<memory>"
    elevation_source: str = field(default="")

    def __post_init__(self) -> None:
        src = self.source
        lat = np.asarray(self.lat_deg, dtype=float)
        n = lat.size
        if lat.ndim != 1 or n < 2:
            raise RouteError(f"a route needs at least 2 points, got {n}", src)
        lon = _as_float(self.lon_deg, n, "lon_deg", src)
        if not (np.isfinite(lat).all() and np.isfinite(lon).all()):
            raise RouteError("route coordinates contain NaN or infinite values", src)
        if np.abs(lat).max() > 90 or np.abs(lon).max() > 180:
            raise RouteError("latitude must be within ±90° and longitude within ±180°", src)
        set_ = object.__setattr__
        set_(self, "lat_deg", lat)
        set_(self, "lon_deg", lon)
        if self.elevation_m is not None:
            ele = _as_float(self.elevation_m, n, "elevation_m", src)
            bad = np.flatnonzero(~np.isfinite(ele))
            if bad.size:
                raise RouteError(
                    f"elevation is missing (NaN) at {bad.size} of {n} points, first at point "
                    f"{bad[0]} ({lat[bad[0]]:.5f}, {lon[bad[0]]:.5f}); give --dem to take "
                    "elevation from a raster instead",
                    src,
                )
            set_(self, "elevation_m", ele)
        limits = (
            np.full(n - 1, np.nan)
            if self.speed_limit_kph is None
            else _as_float(self.speed_limit_kph, n - 1, "speed_limit_kph", src)
        )
        if np.any(limits[np.isfinite(limits)] <= 0):
            raise RouteError("speed limits must be positive (km/h)", src)
        set_(self, "speed_limit_kph", limits)
        hw = np.full(n - 1, "", dtype=object) if self.highway is None else np.asarray(
            self.highway, dtype=object
        )
        if hw.shape != (n - 1,):
            raise RouteError(f"highway has {hw.size} values, expected {n - 1}", src)
        set_(self, "highway", hw)
        stops = np.zeros(n, dtype=np.int8) if self.stop_kind is None else np.asarray(
            self.stop_kind, dtype=np.int8
        )
        if stops.shape != (n,):
            raise RouteError(f"stop_kind has {stops.size} values, expected {n}", src)
        set_(self, "stop_kind", stops)
        if not self.elevation_source:
            set_(self, "elevation_source", "none" if self.elevation_m is None else "file")

    @property
    def n_points(self) -> int:
        """Number of vertices."""
        return int(self.lat_deg.size)

    def with_elevation(self, elevation_m: np.ndarray, source: str) -> Route:
        """Return a copy of the route with new vertex elevations from ``source``."""
        return replace(self, elevation_m=elevation_m, elevation_source=source)

    def with_default_speed(self, speed_kph: float) -> Route:
        """Return a copy where edges with no known limit get ``speed_kph``."""
        limits = np.where(np.isfinite(self.speed_limit_kph), self.speed_limit_kph, speed_kph)
        return replace(self, speed_limit_kph=limits)
