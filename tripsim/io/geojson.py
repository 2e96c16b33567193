"""Read GeoJSON LineString / MultiLineString routes (RFC 7946)."""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np

from tripsim.errors import RouteError
from tripsim.maxspeed import parse_maxspeed
from tripsim.route import Route

__all__ = ["read_geojson"]

#: Feature properties read as a speed limit, in this order: OSM-style tag, or km/h.
SPEED_PROPERTIES = ("maxspeed", "speed_limit_kph")


def _features(doc: Any, path: Path) -> list[dict[str, Any]]:
    if not isinstance(doc, dict) or "type" not in doc:
        raise RouteError("not a GeoJSON object (no 'type')", path)
    if doc["type"] == "FeatureCollection":
        feats = doc.get("features")
        if not isinstance(feats, list):
            raise RouteError("FeatureCollection has no 'features' list", path)
        return feats
    if doc["type"] == "Feature":
        return [doc]
    return [{"type": "Feature", "geometry": doc, "properties": {}}]


def _lines(feature: Any, i: int, path: Path) -> list[list[Any]]:
    geom = feature.get("geometry") if isinstance(feature, dict) else None
    gtype = geom.get("type") if isinstance(geom, dict) else None
    if gtype == "LineString":
        return [geom.get("coordinates")]
    if gtype == "MultiLineString":
        return list(geom.get("coordinates") or [])
    raise RouteError(
        f"feature {i}: geometry type {gtype!r}; expected LineString or MultiLineString", path)


def _speed_kph(props: dict[str, Any], i: int, path: Path) -> float:
    if "maxspeed" in props:
        return parse_maxspeed(props["maxspeed"])
    if "speed_limit_kph" in props:
        value = props["speed_limit_kph"]
        if not isinstance(value, (int, float)) or value <= 0:
            raise RouteError(f"feature {i}: speed_limit_kph = {value!r}; expected a positive "
                             "number", path)
        return float(value)
    return np.nan


def read_geojson(path: str | Path, *, use_elevation: bool = True) -> Route:
    """Read a GeoJSON route.

    Parameters
    ----------
    path : str or Path
        A FeatureCollection, Feature or bare geometry.  Lines are joined in file
        order; positions are ``[lon, lat]`` or ``[lon, lat, elevation_m]``.
        Optional feature properties: ``maxspeed`` (an OSM tag value such as
        ``"80"`` or ``"50 mph"``) or ``speed_limit_kph`` (a number), and
        ``highway`` (an OSM road class).
    use_elevation : bool, default True
        Keep third coordinates as elevation.

    Returns
    -------
    Route

    Raises
    ------
    RouteError
        On invalid JSON, other geometry types, or malformed positions.
    """
    path = Path(path)
    try:
        doc = json.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise RouteError(f"cannot read the file ({exc.strerror})", path) from None
    except json.JSONDecodeError as exc:
        raise RouteError(f"invalid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}",
                         path) from None
    coords: list[list[float]] = []
    limits: list[float] = []
    classes: list[str] = []
    for i, feature in enumerate(_features(doc, path)):
        props = feature.get("properties") or {}
        kph = _speed_kph(props, i, path)
        hw = props.get("highway", "")
        for line in _lines(feature, i, path):
            if not isinstance(line, list) or not line:
                raise RouteError(f"feature {i}: empty or malformed coordinates", path)
            for pos in line:
                if (not isinstance(pos, list) or len(pos) < 2
                        or not all(isinstance(c, (int, float)) for c in pos[:3])):
                    raise RouteError(f"feature {i}: position {pos!r} is not [lon, lat(, ele)]",
                                     path)
            start = len(coords)
            coords.extend(line)
            n_new = len(line) - (1 if start == 0 else 0)
            limits.extend([kph] * n_new)
            classes.extend([str(hw)] * n_new)
    if len(coords) < 2:
        raise RouteError(f"the GeoJSON holds {len(coords)} positions; need 2 or more", path)
    lon = np.array([c[0] for c in coords], dtype=float)
    lat = np.array([c[1] for c in coords], dtype=float)
    ele = None
    if use_elevation and any(len(c) > 2 for c in coords):
        ele = np.array([c[2] if len(c) > 2 else np.nan for c in coords], dtype=float)
    name = doc.get("name") if isinstance(doc.get("name"), str) else path.stem
    return Route(lat_deg=lat, lon_deg=lon, elevation_m=ele, speed_limit_kph=np.array(limits),
                 highway=np.array(classes, dtype=object), name=name, source=str(path))
