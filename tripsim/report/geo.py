"""GeoJSON of results: a plan's route and stops."""

from __future__ import annotations

from typing import Any

import pandas as pd

__all__ = ["plan_geojson"]


def plan_geojson(plan: Any, max_points: int = 3000) -> dict[str, Any]:
    """GeoJSON of a plan: the route (as a LineString) and one Point per stop."""
    features: list[dict[str, Any]] = []
    if plan.trip is not None:
        tr = plan.trip.trace
        step = max(1, len(tr) // max_points)
        pts = pd.concat([tr.iloc[::step], tr.iloc[[-1]]])
        coords = [[float(a), float(b)] for a, b in zip(pts["lon_deg"], pts["lat_deg"],
                                                     strict=True)]
        coords.append([float(tr["lon_end_deg"].iloc[-1]), float(tr["lat_end_deg"].iloc[-1])])
        features.append({"type": "Feature", "geometry": {"type": "LineString",
                                                         "coordinates": coords},
                         "properties": {"feature": "route", **plan.totals}})
    for i, s in enumerate(plan.stops, start=1):
        features.append({"type": "Feature",
                         "geometry": {"type": "Point", "coordinates": [s.lon_deg, s.lat_deg]},
                         "properties": {"feature": "stop", "number": i,
                                        **s.to_dict()}})
    return {"type": "FeatureCollection", "features": features}
