"""Cut a route into short segments with geometry, elevation, grade and limits.

Every edge of the route (the stretch between two of its points) is divided
into the fewest equal pieces no longer than ``max_length_m``, along the WGS84
geodesic (:class:`pyproj.Geod`), so route vertices, speed-limit changes and
stop points stay on segment boundaries.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from pyproj import Geod

from tripsim.elevation import Dem, sample_dem, smooth_profile, total_ascent_m
from tripsim.errors import RouteError
from tripsim.route import Route

__all__ = ["GEOD", "LOOP_CLOSE_M", "SEGMENT_COLUMNS", "STATION_FAR_KM", "closing_gap_m",
           "segment_route", "start_distance_km"]

#: The WGS84 ellipsoid; geodesics after Karney (2013), J. Geodesy 87.
GEOD = Geod(ellps="WGS84")
#: A route ending this close to its start is a loop (a fleet's loop, a claim's corridor). [m]
LOOP_CLOSE_M = 250.0
#: A weather station farther than this from a route's start gets a warning. [km]
STATION_FAR_KM = 200.0


def closing_gap_m(segments: pd.DataFrame) -> float:
    """Geodesic distance from a route's end back to its start [m]."""
    lat0, lon0 = segments["lat_deg"].iloc[0], segments["lon_deg"].iloc[0]
    lat1, lon1 = segments["lat_end_deg"].iloc[-1], segments["lon_end_deg"].iloc[-1]
    return float(GEOD.inv(lon0, lat0, lon1, lat1)[2])


def start_distance_km(segments: pd.DataFrame, lat_deg: float, lon_deg: float) -> float:
    """Geodesic distance from a route's start to a point [km] (NaN for an unknown point)."""
    if not (np.isfinite(lat_deg) and np.isfinite(lon_deg)):
        return float("nan")
    lat, lon = float(segments["lat_deg"].iloc[0]), float(segments["lon_deg"].iloc[0])
    return float(GEOD.inv(lon, lat, lon_deg, lat_deg)[2]) / 1000.0

#: Columns of a segments table, in order.
SEGMENT_COLUMNS = (
    "start_m", "length_m", "slope_length_m", "lat_deg", "lon_deg", "lat_end_deg", "lon_end_deg",
    "elevation_m", "elevation_end_m", "grade", "heading_deg", "curvature_per_m",
    "speed_limit_kph", "highway", "stop_end", "stop_kind_end",
)
_MIN_EDGE_M = 0.05


def _drop_repeated_points(route: Route) -> tuple[np.ndarray, ...]:
    lat, lon = route.lat_deg, route.lon_deg
    _, _, dist = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    keep_edge = np.asarray(dist) >= _MIN_EDGE_M
    if not keep_edge.any():
        raise RouteError("all points of the route coincide: it has no length", route.source)
    keep_vertex = np.concatenate([[True], keep_edge])
    # a dropped vertex hands its stop to the vertex it coincides with
    group = np.cumsum(keep_vertex) - 1
    stops = np.zeros(int(keep_vertex.sum()), dtype=np.int8)
    np.maximum.at(stops, group, route.stop_kind)
    ele = None if route.elevation_m is None else route.elevation_m[keep_vertex]
    return (lat[keep_vertex], lon[keep_vertex], ele, route.speed_limit_kph[keep_edge],
            route.highway[keep_edge], stops)


#: Arc length over which curvature is measured, and the Gaussian σ with which headings are
#: smoothed first (tripsim's choices: a curve is judged over the distance a driver looks
#: through it, not over one segment, so cornering speeds do not depend on ``max_length_m``
#: and GPS jitter in a logged track does not invent bends).
CURVATURE_ARC_M = 40.0
HEADING_SMOOTH_M = 10.0


def curvature_per_m(heading_deg: np.ndarray, mid_m: np.ndarray, *,
                    arc_m: float = CURVATURE_ARC_M,
                    smooth_m: float = HEADING_SMOOTH_M) -> np.ndarray:
    r"""Path curvature over a fixed arc length, from segment headings.

    Parameters
    ----------
    heading_deg : array
        Heading of each segment, east of north. [°]
    mid_m : array
        Distance of each segment's middle along the route. [m]
    arc_m : float, default 40
        Arc length over which the heading change is measured. [m]
    smooth_m : float, default 10
        Gaussian σ (over distance) applied to the heading's unit vector first; 0
        turns it off. [m]

    Returns
    -------
    array
        Curvature κ = 1/radius. [1/m]

    Notes
    -----
    .. math:: \kappa(s) = |\psi(s + L/2) - \psi(s - L/2)| / L

    with ψ the unwrapped, smoothed heading interpolated along the route and the window
    clipped at the route's ends.  On a circle of radius R every segment length gives
    κ = 1/R; a sharp corner of angle θ reads as a bend of radius L/θ.
    """
    n = np.size(heading_deg)
    if n < 2:
        return np.zeros(n)
    s = np.asarray(mid_m, dtype=float)
    rad = np.radians(np.asarray(heading_deg, dtype=float))
    east = smooth_profile(s, np.sin(rad), smooth_m)
    north = smooth_profile(s, np.cos(rad), smooth_m)
    psi = np.unwrap(np.arctan2(east, north))
    half = 0.5 * arc_m
    lo = np.clip(s - half, s[0], s[-1])
    hi = np.clip(s + half, s[0], s[-1])
    span = np.maximum(hi - lo, 1e-9)
    return np.abs(np.interp(hi, s, psi) - np.interp(lo, s, psi)) / span


def _node_elevation(
    route_ele: np.ndarray | None, vertex_m: np.ndarray, node_m: np.ndarray,
    node_lat: np.ndarray, node_lon: np.ndarray, dem: Dem | None,
) -> tuple[np.ndarray, str]:
    if dem is not None:
        return sample_dem(dem, node_lat, node_lon), "dem"
    if route_ele is not None:
        return np.interp(node_m, vertex_m, route_ele), "file"
    return np.zeros(node_m.size), "none"


def segment_route(
    route: Route,
    *,
    max_length_m: float = 25.0,
    dem: Dem | None = None,
    smooth_sigma_m: float = 40.0,
) -> pd.DataFrame:
    """Cut a route into segments no longer than ``max_length_m``.

    Parameters
    ----------
    route : Route
        The route.
    max_length_m : float, default 25
        Longest segment. [m]
    dem : Dem, optional
        Elevation raster; when given, elevation is sampled from it at every
        segment boundary (along the geometry, not only at route points) and
        replaces any elevation in the route.
    smooth_sigma_m : float, default 40
        Gaussian smoothing of the elevation profile over distance; 0 turns it
        off (:func:`tripsim.elevation.smooth_profile`). [m]

    Returns
    -------
    pandas.DataFrame
        One row per segment with :data:`SEGMENT_COLUMNS`.  ``start_m`` and
        ``length_m`` are horizontal (map) distances; ``slope_length_m`` is the
        distance along the road surface; ``grade`` is rise over run;
        ``heading_deg`` is the geodesic azimuth at the segment's middle (east of
        north); ``stop_end`` marks a stop at the segment's end.  ``attrs`` holds
        ``ascent_raw_m`` and ``ascent_m`` (before and after smoothing),
        ``descent_m``, ``elevation_source`` and the route's name and source.

    Raises
    ------
    RouteError
        If the route has no length or ``max_length_m`` is not positive.
    """
    if not np.isfinite(max_length_m) or max_length_m <= 0:
        raise RouteError(f"segment length must be positive, got {max_length_m}", "max_length_m")
    lat, lon, ele, limits, highway, stops = _drop_repeated_points(route)
    az, _, dist = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    dist = np.asarray(dist)
    pieces = np.maximum(1, np.ceil(dist / max_length_m - 1e-9)).astype(np.int64)
    edge = np.repeat(np.arange(dist.size), pieces)
    first = np.concatenate([[0], np.cumsum(pieces)[:-1]])
    j = np.arange(edge.size) - first[edge]
    seg_len = dist[edge] / pieces[edge]
    o_lon, o_lat, o_az = lon[edge], lat[edge], np.asarray(az)[edge]
    s_lon, s_lat, _ = GEOD.fwd(o_lon, o_lat, o_az, j * seg_len)
    _m_lon, _m_lat, back = GEOD.fwd(o_lon, o_lat, o_az, (j + 0.5) * seg_len)
    heading = (np.asarray(back) + 180.0) % 360.0
    node_lat = np.append(s_lat, lat[-1])
    node_lon = np.append(s_lon, lon[-1])
    node_m = np.concatenate([[0.0], np.cumsum(seg_len)])
    vertex_m = np.concatenate([[0.0], np.cumsum(dist)])
    z_raw, ele_source = _node_elevation(ele, vertex_m, node_m, node_lat, node_lon, dem)
    z = smooth_profile(node_m, z_raw, smooth_sigma_m)
    grade = np.diff(z) / seg_len
    last_of_edge = j == pieces[edge] - 1
    stop_kind_end = np.where(last_of_edge, stops[1:][edge], 0).astype(np.int8)
    frame = pd.DataFrame(
        {
            "start_m": node_m[:-1],
            "length_m": seg_len,
            "slope_length_m": seg_len * np.sqrt(1.0 + grade**2),
            "lat_deg": node_lat[:-1],
            "lon_deg": node_lon[:-1],
            "lat_end_deg": node_lat[1:],
            "lon_end_deg": node_lon[1:],
            "elevation_m": z[:-1],
            "elevation_end_m": z[1:],
            "grade": grade,
            "heading_deg": heading,
            "curvature_per_m": curvature_per_m(heading, node_m[:-1] + 0.5 * seg_len),
            "speed_limit_kph": limits[edge],
            "highway": pd.array(highway[edge], dtype="string"),
            "stop_end": stop_kind_end >= 2,
            "stop_kind_end": stop_kind_end,
        }
    )
    frame.attrs.update(
        name=route.name,
        source=route.source,
        elevation_source=ele_source if dem is not None or ele is None else route.elevation_source,
        ascent_raw_m=total_ascent_m(z_raw),
        ascent_m=total_ascent_m(z),
        descent_m=total_ascent_m(-z),
        smooth_sigma_m=float(smooth_sigma_m),
        max_length_m=float(max_length_m),
        start_lat_deg=float(lat[0]),
        start_lon_deg=float(lon[0]),
    )
    return frame
