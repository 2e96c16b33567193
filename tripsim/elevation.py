"""Elevation along a route: sampling a raster, smoothing, counting ascent."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from affine import Affine
from pyproj import CRS, Transformer
from scipy.ndimage import gaussian_filter1d, map_coordinates

from tripsim.errors import DemError

__all__ = ["Dem", "sample_dem", "smooth_profile", "total_ascent_m"]


@dataclass(frozen=True)
class Dem:
    """An elevation raster in memory (read by :func:`tripsim.io.dem.read_dem`).

    Attributes
    ----------
    elevation_m : 2-D array
        Heights, NaN where the raster has no data. [m]
    transform : affine.Affine
        Pixel (col, row) of the upper-left corner → raster coordinates.
    crs : str
        The raster's coordinate reference system (WKT or "EPSG:…").
    source : str
        File it came from.
    """

    elevation_m: np.ndarray
    transform: Affine
    crs: str
    source: str = "<memory>"


def sample_dem(dem: Dem, lat_deg: np.ndarray, lon_deg: np.ndarray) -> np.ndarray:
    """Bilinear elevation at WGS84 points.

    Parameters
    ----------
    dem : Dem
        The raster.
    lat_deg, lon_deg : array
        Points to sample. [degrees]

    Returns
    -------
    array
        Elevation at each point. [m]

    Raises
    ------
    DemError
        If a point lies outside the raster or where it has no data.

    Notes
    -----
    Points are transformed to the raster's CRS with pyproj, then to fractional
    pixel indices (pixel centres at integer + 0.5 of the affine transform), and
    interpolated with :func:`scipy.ndimage.map_coordinates` (order 1).
    """
    lat = np.asarray(lat_deg, dtype=float)
    lon = np.asarray(lon_deg, dtype=float)
    crs = CRS.from_user_input(dem.crs)
    if crs.equals(CRS.from_epsg(4326)):
        x, y = lon, lat
    else:
        x, y = Transformer.from_crs("EPSG:4326", crs, always_xy=True).transform(lon, lat)
    inv = ~dem.transform
    x, y = np.asarray(x), np.asarray(y)
    col = inv.a * x + inv.b * y + inv.c - 0.5
    row = inv.d * x + inv.e * y + inv.f - 0.5
    rows, cols = dem.elevation_m.shape
    outside = (col < -0.5) | (col > cols - 0.5) | (row < -0.5) | (row > rows - 0.5)
    if outside.any():
        i = int(np.flatnonzero(outside)[0])
        raise DemError(
            f"the elevation raster does not cover the route: {int(outside.sum())} of {lat.size} "
            f"points lie outside it, the first at ({lat[i]:.5f}, {lon[i]:.5f})",
            dem.source,
        )
    z = map_coordinates(dem.elevation_m, [row, col], order=1, mode="nearest")
    bad = ~np.isfinite(z)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise DemError(
            f"the elevation raster has no data at {int(bad.sum())} route points, the first at "
            f"({lat[i]:.5f}, {lon[i]:.5f})",
            dem.source,
        )
    return z


def smooth_profile(distance_m: np.ndarray, elevation_m: np.ndarray, sigma_m: float) -> np.ndarray:
    """Gaussian smoothing of an elevation profile over distance.

    Parameters
    ----------
    distance_m : array
        Distance along the route, non-decreasing. [m]
    elevation_m : array
        Elevation at those distances. [m]
    sigma_m : float
        Standard deviation of the Gaussian kernel in distance; 0 returns the
        input unchanged. [m]

    Returns
    -------
    array
        Smoothed elevation at the same distances. [m]

    Notes
    -----
    The profile is resampled to a uniform step (σ/5, at most 5 m), filtered
    with :func:`scipy.ndimage.gaussian_filter1d` (edges held), and
    interpolated back.  Raster noise of a few metres every pixel invents
    climbing that no road has; smoothing over tens of metres removes it while
    keeping hills.
    """
    z = np.asarray(elevation_m, dtype=float)
    s = np.asarray(distance_m, dtype=float)
    if sigma_m <= 0 or z.size < 3 or s[-1] <= s[0]:
        return z.copy()
    step = min(sigma_m / 5.0, 5.0)
    grid = np.arange(s[0], s[-1] + step, step)
    smooth = gaussian_filter1d(np.interp(grid, s, z), sigma_m / step, mode="nearest")
    return np.interp(s, grid, smooth)


def total_ascent_m(elevation_m: np.ndarray) -> float:
    """Sum of the rises along a profile (total climbing). [m]."""
    dz = np.diff(np.asarray(elevation_m, dtype=float))
    return float(dz[dz > 0].sum())
