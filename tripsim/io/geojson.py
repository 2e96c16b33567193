"""Read GeoJSON LineString / MultiLineString routes (RFC 7946).

The document's shape is checked at the edge, before any value is used: every
feature an object, ``properties`` an object or null, ``coordinates`` lists of
positions of two or three numbers (JSON ``true`` is not a number), nesting no
deeper than Python can read.  The messages name the feature and the position.
"""

from __future__ import annotations

import json
from pathlib import Path
from typing import Any

import numpy as np

from tripsim.errors import RouteError
from tripsim.io._checks import check_points, check_speed_limit
from tripsim.io._files import read_text
from tripsim.io._limits import GRADE_MAX
from tripsim.maxspeed import parse_maxspeed
from tripsim.route import Route

__all__ = ["SPEED_PROPERTIES", "read_geojson"]

#: Feature properties read as a speed limit, in this order: OSM-style tag, or km/h.
SPEED_PROPERTIES = ("maxspeed", "speed_limit_kph")

_NUMBER = (int, float)  # exact types: bool is not a number here
_INT_MAX = 2**53  # larger JSON integers are no coordinate (and may not fit a float)


def _brief(value: Any) -> str:
    text = json.dumps(value)[:60] if not isinstance(value, (dict, list)) else type(value).__name__
    return {"dict": "an object", "list": "a list"}.get(text, text)


def _refuse_constant(name: str) -> float:
    raise ValueError(f"{name} is not valid JSON (numbers must be finite)")


def _load(path: Path) -> Any:
    text = read_text(path, "geojson", error=RouteError)
    try:
        return json.loads(text, parse_constant=_refuse_constant)
    except json.JSONDecodeError as exc:
        raise RouteError(f"invalid JSON at line {exc.lineno}, column {exc.colno}: {exc.msg}",
                         path) from None
    except RecursionError:
        raise RouteError("the JSON is nested too deeply to read (GeoJSON needs 6 levels)",
                         path) from None
    except ValueError as exc:  # NaN/Infinity, integers of thousands of digits
        raise RouteError(f"invalid JSON: {str(exc).splitlines()[0]}", path) from None


def _features(doc: Any, path: Path) -> list[dict[str, Any]]:
    if not isinstance(doc, dict) or not isinstance(doc.get("type"), str):
        raise RouteError("not a GeoJSON object (no 'type')", path)
    if doc["type"] == "FeatureCollection":
        feats = doc.get("features")
        if not isinstance(feats, list):
            raise RouteError("FeatureCollection has no 'features' list", path)
        for i, feat in enumerate(feats):
            if not isinstance(feat, dict):
                raise RouteError(f"feature {i}: is {_brief(feat)}, expected an object", path)
        return feats
    if doc["type"] == "Feature":
        return [doc]
    return [{"type": "Feature", "geometry": doc, "properties": {}}]


def _lines(feature: dict[str, Any], i: int, path: Path) -> tuple[list[Any], bool]:
    geom = feature.get("geometry")
    if geom is None:
        raise RouteError(f"feature {i}: has no geometry; expected a LineString or "
                         "MultiLineString", path)
    if not isinstance(geom, dict):
        raise RouteError(f"feature {i}: geometry is {_brief(geom)}, expected an object", path)
    gtype = geom.get("type")
    if gtype not in ("LineString", "MultiLineString"):
        raise RouteError(f"feature {i}: geometry type {gtype!r}; expected LineString or "
                         "MultiLineString", path)
    coords = geom.get("coordinates")
    if not isinstance(coords, list):
        raise RouteError(f"feature {i}: coordinates is {_brief(coords)}, expected a list of "
                         "positions", path)
    if gtype == "LineString":
        return [coords], False
    for j, line in enumerate(coords):
        if not isinstance(line, list):
            raise RouteError(f"feature {i}: line {j} is {_brief(line)}, expected a list of "
                             "positions", path)
    return coords, True


def _check_line(line: list[Any], i: int, path: Path) -> None:
    if not line:
        raise RouteError(f"feature {i}: empty or malformed coordinates", path)
    for k, pos in enumerate(line):
        if (type(pos) is not list or not 2 <= len(pos) <= 4
                or not all(type(c) is float or (type(c) is int and abs(c) <= _INT_MAX)
                           for c in pos)):
            shown = json.dumps(pos)[:80] if type(pos) is list else _brief(pos)
            raise RouteError(f"feature {i}: position {k} {shown} is not [lon, lat] or "
                             "[lon, lat, elevation] in numbers", path)


def _properties(feature: dict[str, Any], i: int, path: Path) -> dict[str, Any]:
    props = feature.get("properties")
    if props is None:
        return {}
    if not isinstance(props, dict):
        raise RouteError(f"feature {i}: properties is {_brief(props)}, expected an object or "
                         "null", path)
    return props


def _as_float(value: float) -> float:
    """A JSON number as a float; integers beyond the float range become infinity."""
    try:
        return float(value)
    except OverflowError:
        return float("inf") if value > 0 else float("-inf")


def _speed_kph(props: dict[str, Any], i: int, path: Path) -> float:
    where = f"feature {i}"
    if props.get("maxspeed") is not None:
        value = props["maxspeed"]
        if type(value) not in (str, int, float):
            raise RouteError(f"{where}: maxspeed = {_brief(value)}; expected an OSM maxspeed "
                             "value such as \"80\" or \"50 mph\"", path)
        kph = parse_maxspeed(value if type(value) is str else _as_float(value))
        return check_speed_limit(kph, f"{where}: maxspeed", path)
    if props.get("speed_limit_kph") is not None:
        value = props["speed_limit_kph"]
        if type(value) not in _NUMBER:
            raise RouteError(f"{where}: speed_limit_kph = {_brief(value)}; expected a number of "
                             "km/h", path)
        return check_speed_limit(_as_float(value), f"{where}: speed_limit_kph", path)
    return np.nan


def read_geojson(path: str | Path, *, use_elevation: bool = True,
                 max_grade: float | None = GRADE_MAX) -> Route:
    """Read a GeoJSON route.

    Parameters
    ----------
    path : str or Path
        A FeatureCollection, Feature or bare geometry.  Lines are joined in file
        order; positions are ``[lon, lat]`` or ``[lon, lat, elevation_m]`` (a fourth
        number, a measure, is ignored).  Optional feature properties: ``maxspeed``
        (an OSM tag value such as ``"80"`` or ``"50 mph"``) or ``speed_limit_kph`` (a
        number), and ``highway`` (an OSM road class).
    use_elevation : bool, default True
        Keep third coordinates as elevation.
    max_grade : float or None, default :data:`tripsim.io._limits.GRADE_MAX`
        Refuse elevation steps steeper than this between consecutive positions
        (beyond GNSS noise); None accepts any.

    Returns
    -------
    Route

    Raises
    ------
    RouteError
        On invalid JSON, other geometry types, malformed positions, or values
        outside :mod:`tripsim.io._limits` (naming the feature and position).
    """
    path = Path(path)
    doc = _load(path)
    coords: list[list[float]] = []
    limits: list[float] = []
    classes: list[str] = []
    origin: list[str] = []  # each line's feature (and line of a MultiLineString)
    starts: list[int] = []  # each line's first position in the route
    for i, feature in enumerate(_features(doc, path)):
        props = _properties(feature, i, path)
        kph = _speed_kph(props, i, path)
        hw = props.get("highway")
        if hw is not None and not isinstance(hw, str):
            raise RouteError(f"feature {i}: highway = {_brief(hw)}; expected an OSM road class "
                             "such as \"primary\"", path)
        lines, multi = _lines(feature, i, path)
        for j, line in enumerate(lines):
            _check_line(line, i, path)
            start = len(coords)
            starts.append(start)
            origin.append(f"feature {i} line {j}" if multi else f"feature {i}")
            coords.extend(line)
            n_new = len(line) - (1 if start == 0 else 0)
            limits.extend([kph] * n_new)
            classes.extend([hw or ""] * n_new)
    if len(coords) < 2:
        raise RouteError(f"the GeoJSON holds {len(coords)} positions; need 2 or more", path)
    lon = np.array([c[0] for c in coords], dtype=float)
    lat = np.array([c[1] for c in coords], dtype=float)
    ele = None
    if use_elevation and any(len(c) > 2 for c in coords):
        ele = np.array([c[2] if len(c) > 2 else np.nan for c in coords], dtype=float)
    starts_arr = np.asarray(starts)

    def label(k: int) -> str:
        line = int(np.searchsorted(starts_arr, k, side="right") - 1)
        return f"{origin[line]} position {k - starts[line]}"

    check_points(lat, lon, ele, path, label, max_grade=max_grade)
    name = doc.get("name") if isinstance(doc.get("name"), str) else path.stem
    return Route(lat_deg=lat, lon_deg=lon, elevation_m=ele, speed_limit_kph=np.array(limits),
                 highway=np.array(classes, dtype=object), name=name, source=str(path))
