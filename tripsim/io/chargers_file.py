"""Read charging sites (OSM XML or CSV) and lodgings (CSV)."""

from __future__ import annotations

import csv
import math
import re
from pathlib import Path
from typing import Any

import numpy as np

from tripsim.errors import TripsimInputError
from tripsim.plan.sites import DEFAULT_CONNECTOR_KW, Site, check_connector, parse_opening_hours

__all__ = ["read_chargers", "read_lodgings"]

_POWER = re.compile(r"^\s*(\d+(?:[.,]\d+)?)\s*(kw|w|kva)?\s*$", re.IGNORECASE)


def _power_kw(text: Any) -> float | None:
    """Parse a ``socket:*:output`` value: "22 kW", "22", "7400 W"; lists take the largest."""
    if text is None or (isinstance(text, float) and math.isnan(text)):
        return None
    best = None
    for part in str(text).split(";"):
        m = _POWER.match(part)
        if not m:
            continue
        value = float(m[1].replace(",", "."))
        unit = (m[2] or "kw").lower()
        kw = value / 1000.0 if unit == "w" else value
        best = kw if best is None else max(best, kw)
    return best


def _count(text: Any) -> int:
    try:
        n = int(float(str(text).split(";")[0]))
    except ValueError:
        n = 1  # "yes" and the like: at least one
    return max(n, 0)


def _osm_sites(path: Path) -> list[Site]:
    import osmnx as ox

    try:
        gdf = ox.features_from_xml(path, tags={"amenity": "charging_station"})
    except Exception as exc:  # osmnx raises several types for unreadable or empty files
        raise TripsimInputError(f"no charging stations could be read: {exc}", path) from None
    sites = []
    for (element, osm_id), row in gdf.iterrows():
        tags = {k: v for k, v in row.items() if isinstance(v, str)}
        connectors: dict[str, tuple[int, float]] = {}
        for key, value in tags.items():
            m = re.fullmatch(r"socket:([a-z0-9_]+)", key)
            if not m or m[1] not in DEFAULT_CONNECTOR_KW:
                continue
            n = _count(value)
            if n == 0:
                continue
            kw = _power_kw(tags.get(f"{key}:output")) or DEFAULT_CONNECTOR_KW[m[1]]
            connectors[m[1]] = (n, kw)
        point = row.geometry.centroid
        sites.append(Site(site_id=f"osm:{element}/{osm_id}", name=tags.get("name", f"{osm_id}"),
                          lat_deg=float(point.y), lon_deg=float(point.x), connectors=connectors,
                          opening=parse_opening_hours(tags.get("opening_hours")),
                          source=f"{path} {element} {osm_id}"))
    return sites


def _float(row: dict[str, str], key: str, where: str, *, lo: float, hi: float,
           required: bool = True) -> float | None:
    text = (row.get(key) or "").strip()
    if not text:
        if required:
            raise TripsimInputError(f"{key} is missing", where)
        return None
    try:
        value = float(text)
    except ValueError:
        raise TripsimInputError(f"{key} = {text!r} is not a number", where) from None
    if not (lo <= value <= hi) or not np.isfinite(value):
        raise TripsimInputError(f"{key} = {value:g} is out of range ({lo:g} to {hi:g})", where)
    return value


def _csv_rows(path: Path, required: tuple[str, ...]) -> list[tuple[int, dict[str, str]]]:
    try:
        text = path.read_text(encoding="utf-8-sig")
    except OSError as exc:
        raise TripsimInputError(f"cannot read the file ({exc.strerror})", path) from None
    reader = csv.DictReader(text.splitlines())
    header = [h.strip().lower() for h in (reader.fieldnames or [])]
    missing = [c for c in required if c not in header]
    if missing:
        raise TripsimInputError(f"the header lacks column(s) {', '.join(missing)} (has "
                                f"{', '.join(header) or 'none'})", path)
    rows = []
    for line, raw in enumerate(reader, start=2):
        rows.append((line, {(k or "").strip().lower(): (v or "") for k, v in raw.items()}))
    if not rows:
        raise TripsimInputError("no data rows", path)
    return rows


def _csv_sites(path: Path, kind: str) -> list[Site]:
    required = ("lat", "lon", "name") if kind == "lodging" else ("lat", "lon", "name",
                                                                  "connector")
    sites = []
    for line, row in _csv_rows(path, required):
        where = f"{path}: line {line}"
        lat = _float(row, "lat", where, lo=-90, hi=90)
        lon = _float(row, "lon", where, lo=-180, hi=180)
        name = row.get("name", "").strip() or f"line {line}"
        connectors: dict[str, tuple[int, float]] = {}
        conn_text = row.get("connector", "").strip()
        if conn_text:
            power = _float(row, "power_kw", where, lo=0.5, hi=1000, required=False)
            ports = _float(row, "ports", where, lo=1, hi=500, required=False)
            for c in filter(None, (x.strip() for x in conn_text.split(";"))):
                key = check_connector(c, where)
                connectors[key] = (int(ports or 1), power or DEFAULT_CONNECTOR_KW[key])
        elif kind == "charger":
            raise TripsimInputError("connector is missing", where)
        sites.append(Site(site_id=f"{path.name}:{line}", name=name, lat_deg=lat, lon_deg=lon,
                          connectors=connectors, kind=kind, source=where,
                          opening=parse_opening_hours(row.get("hours"), where=where)))
    return sites


def read_chargers(path: str | Path) -> list[Site]:
    """Read charging sites from OSM XML (``.osm``…) or CSV.

    CSV columns: ``lat``, ``lon``, ``name``, ``connector`` (one or several separated by
    ``;``: type1, type2, type2_combo, type1_combo, chademo, schuko, …), and optionally
    ``power_kw`` (per port; default by connector, see
    :data:`tripsim.plan.sites.DEFAULT_CONNECTOR_KW`), ``ports`` and ``hours`` (OSM
    ``opening_hours`` syntax).

    Raises
    ------
    TripsimInputError
        Naming the file and line of a bad row.
    """
    path = Path(path)
    if not path.is_file():
        raise TripsimInputError("no such file", path)
    name = path.name.lower()
    if name.endswith((".osm", ".osm.bz2", ".osm.gz", ".osm.xml")):
        return _osm_sites(path)
    if name.endswith(".csv"):
        return _csv_sites(path, "charger")
    raise TripsimInputError("unknown charger format; expected OSM XML or .csv", path)


def read_lodgings(path: str | Path) -> list[Site]:
    """Read lodgings from CSV.

    Columns ``lat``, ``lon``, ``name``, optionally a charger (``connector``,
    ``power_kw``) and ``hours``.
    """
    path = Path(path)
    if not path.is_file():
        raise TripsimInputError("no such file", path)
    return _csv_sites(path, "lodging")
