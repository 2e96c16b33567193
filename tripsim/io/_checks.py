"""Checks shared by the route readers: positions, elevations, grades, jumps, speed limits."""

from __future__ import annotations

import sys
import warnings
from collections.abc import Callable
from pathlib import Path

import numpy as np

from tripsim.errors import RouteError, TripsimWarning
from tripsim.io._limits import (
    ELEVATION_M,
    GRADE_NOISE_M,
    LAT_DEG,
    LON_DEG,
    POINT_GAP_WARN_M,
    SPEED_LIMIT_KPH,
)
from tripsim.segments import GEOD

__all__ = ["check_points", "check_speed_limit"]

_SHOW = 3  # rows named in a warning


def _first(mask: np.ndarray) -> int:
    return int(np.flatnonzero(mask)[0])


def _check_axis(values: np.ndarray, axis: str, lo: float, hi: float, path: Path,
                label: Callable[[int], str]) -> None:
    finite = np.isfinite(values)
    if not finite.all():
        i = _first(~finite)
        raise RouteError(f"{label(i)}: {axis} = {float(values[i])!r} is not a finite number", path)
    out = (values < lo) | (values > hi)
    if out.any():
        i = _first(out)
        raise RouteError(f"{label(i)}: {axis} = {values[i]:g} is outside {lo:g} to {hi:g}°", path)
    tiny = (values != 0.0) & (np.abs(values) < sys.float_info.min)
    if tiny.any():
        i = _first(tiny)
        raise RouteError(f"{label(i)}: {axis} = {float(values[i])!r} is a subnormal number "
                         "(a corrupt value, not a place)", path)


def check_points(
    lat_deg: np.ndarray,
    lon_deg: np.ndarray,
    elevation_m: np.ndarray | None,
    path: Path,
    label: Callable[[int], str],
    *,
    max_grade: float | None,
) -> None:
    """Refuse impossible positions and elevations of a route file; warn about jumps.

    Parameters
    ----------
    lat_deg, lon_deg : array
        Points in file order. [degrees]
    elevation_m : array or None
        Elevations (NaN where a point has none). [m]
    path : Path
        The file, for messages.
    label : callable
        ``label(i)`` names point ``i`` as the user finds it ("track point 12 (line 40)").
    max_grade : float or None
        Largest grade between consecutive points (rise over run), beyond a vertical
        allowance of :data:`tripsim.io._limits.GRADE_NOISE_M` for GNSS noise; None
        accepts any grade.

    Raises
    ------
    RouteError
        Naming the first offending point.

    Warns
    -----
    TripsimWarning
        When consecutive points are farther apart than
        :data:`tripsim.io._limits.POINT_GAP_WARN_M`.
    """
    lat = np.asarray(lat_deg, dtype=float)
    lon = np.asarray(lon_deg, dtype=float)
    _check_axis(lat, "lat", *LAT_DEG, path, label)
    _check_axis(lon, "lon", *LON_DEG, path, label)
    if lat.size < 2:
        return
    _, _, step_m = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    step_m = np.asarray(step_m, dtype=float)
    gaps = np.flatnonzero(step_m > POINT_GAP_WARN_M)
    if gaps.size:
        shown = ", ".join(f"{label(int(i))} to the next, {step_m[i] / 1000:,.0f} km"
                          for i in gaps[:_SHOW])
        more = f" and {gaps.size - _SHOW} more" if gaps.size > _SHOW else ""
        warnings.warn(f"{path}: {gaps.size} jump(s) longer than {POINT_GAP_WARN_M / 1000:g} km "
                      f"between consecutive points ({shown}{more}); they are driven as straight "
                      "lines", TripsimWarning, stacklevel=3)
    if elevation_m is None:
        return
    ele = np.asarray(elevation_m, dtype=float)
    lo, hi = ELEVATION_M
    bad = np.isinf(ele) | (ele < lo) | (ele > hi)
    if bad.any():
        i = _first(bad)
        raise RouteError(f"{label(i)}: elevation {ele[i]:g} m is outside {lo:g} to {hi:g} m; fix "
                         "the file, or give --dem to take elevation from a raster", path)
    if max_grade is None:
        return
    rise = np.abs(np.diff(ele))
    steep = rise > max_grade * step_m + GRADE_NOISE_M  # NaN compares False
    if steep.any():
        i = _first(steep)
        raise RouteError(
            f"{label(i)} to the next: elevation changes by {rise[i]:,.0f} m over {step_m[i]:,.0f} m"
            f"; a road climbs at most {max_grade:.0%} (plus {GRADE_NOISE_M:g} m for GNSS noise). "
            "Fix the elevations, or give --dem to take elevation from a raster", path)


def check_speed_limit(kph: float, where: str, path: Path) -> float:
    """A speed limit in km/h, or NaN (unknown); refuse values outside the plausible range."""
    lo, hi = SPEED_LIMIT_KPH
    if not np.isnan(kph) and not lo <= kph <= hi:
        raise RouteError(f"{where}: speed limit {kph:g} km/h is outside {lo:g} to {hi:g} km/h",
                         path)
    return kph
