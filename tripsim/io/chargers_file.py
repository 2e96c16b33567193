"""Read charging sites (OSM XML or CSV) and lodgings (CSV)."""

from __future__ import annotations

import csv
import io
import math
import re
import warnings
from pathlib import Path
from typing import Any

import numpy as np

from tripsim.errors import TripsimInputError, TripsimWarning
from tripsim.io._files import input_file, read_text
from tripsim.io._limits import check_coordinate
from tripsim.io.osm import cached_file, checked_osm_xml, load_cached, store_cached
from tripsim.plan.sites import DEFAULT_CONNECTOR_KW, Site, check_connector, parse_opening_hours

__all__ = ["read_chargers", "read_lodgings"]

#: Largest power of one charging port read from a file [kW] (the fastest DC chargers in
#: service deliver several hundred kW; common practice, from memory).
PORT_KW_MAX = 1000.0
#: Most ports of one connector at one site read from a file.
PORTS_MAX = 500
_OSM_SUFFIXES = (".osm", ".osm.bz2", ".osm.gz", ".osm.xml")
#: Changes when what is kept of an OSM file's charging sites changes.
_SITES_FORMAT = 1
_SHOW = 5

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


def _count(text: Any) -> int | None:
    """Ports from a ``socket:*`` value.

    A whole number; 1 for "yes" and the like; None when the number is implausible (over
    :data:`PORTS_MAX`).
    """
    first = str(text).split(";")[0].strip()
    if not first.isascii() or not first.isdigit():
        return 1  # "yes" and the like: at least one
    n = int(first)
    return n if n <= PORTS_MAX else None


def _osm_connectors(tags: dict[str, str], where: str,
                    notes: list[str]) -> dict[str, tuple[int, float]]:
    """Connectors from ``socket:*`` tags; unknown ones and absurd powers are noted, not used."""
    connectors: dict[str, tuple[int, float]] = {}
    for key, value in tags.items():
        m = re.fullmatch(r"socket:([A-Za-z0-9_]+)", key)
        if not m:
            continue
        if m[1] not in DEFAULT_CONNECTOR_KW:
            notes.append(f"{where} {key}")
            continue
        n = _count(value)
        if n is None:
            notes.append(f"{where} {key}={value[:20]}")
            n = 1
        if n == 0:
            continue
        kw = _power_kw(tags.get(f"{key}:output"))
        if kw is not None and not 0.0 < kw <= PORT_KW_MAX:
            notes.append(f"{where} {key}:output={tags[f'{key}:output']}")
            kw = None
        connectors[m[1]] = (n, kw or DEFAULT_CONNECTOR_KW[m[1]])
    return connectors


def _osm_sites(path: Path, cache: bool = True) -> list[Site]:
    """Charging stations of an OSM file (kept in the cache beside the file's road graph)."""
    target = cached_file(path, "chargers", _SITES_FORMAT) if cache else None
    kept = load_cached(target)
    if kept is None:
        kept = _parse_osm_sites(path)
        store_cached(target, kept)
    sites, notes = kept
    if notes:
        shown = ", ".join(notes[:_SHOW])
        more = f" and {len(notes) - _SHOW} more" if len(notes) > _SHOW else ""
        warnings.warn(f"{path}: ignored {len(notes)} socket tag(s) that tripsim does not know "
                      f"or finds implausible ({shown}{more}); known connectors: "
                      f"{', '.join(DEFAULT_CONNECTOR_KW)}",
                      TripsimWarning, stacklevel=4)
    return list(sites)


def _parse_osm_sites(path: Path) -> tuple[list[Site], list[str]]:
    import osmnx as ox

    with checked_osm_xml(path, error=TripsimInputError, complete_ways=False) as plain:
        try:
            gdf = ox.features_from_xml(plain, tags={"amenity": "charging_station"})
        except Exception as exc:  # osmnx raises several types for empty or odd files
            detail = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
            raise TripsimInputError(f"no charging stations could be read: {detail}",
                                    path) from None
    sites = []
    notes: list[str] = []
    for (element, osm_id), row in gdf.iterrows():
        tags = {k: v for k, v in row.items() if isinstance(v, str)}
        connectors = _osm_connectors(tags, f"{element} {osm_id}", notes)
        point = row.geometry.centroid
        sites.append(Site(site_id=f"osm:{element}/{osm_id}", name=tags.get("name", f"{osm_id}"),
                          lat_deg=float(point.y), lon_deg=float(point.x), connectors=connectors,
                          opening=parse_opening_hours(tags.get("opening_hours")),
                          source=f"{path} {element} {osm_id}"))
    return sites, notes


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
    if key in ("lat", "lon") and (reason := check_coordinate(value, key)):
        raise TripsimInputError(f"{key} = {text} {reason}", where)
    return value


def _csv_rows(path: Path, required: tuple[str, ...]) -> list[tuple[int, dict[str, str]]]:
    text = read_text(path, "csv")
    reader = csv.reader(io.StringIO(text, newline=""), strict=True)
    try:
        header = [h.strip().lower() for h in next(reader, [])]
        missing = [c for c in required if c not in header]
        if missing:
            shown = ", ".join(h[:30] for h in header[:12]) or "none"
            raise TripsimInputError(f"the header lacks column(s) {', '.join(missing)} (has "
                                    f"{shown})", path)
        twice = sorted({h for h in header if h and header.count(h) > 1})
        if twice:
            raise TripsimInputError(f"the header names column(s) {', '.join(twice)} twice", path)
        rows = []
        for fields in reader:
            if not any(f.strip() for f in fields):
                continue  # blank line
            line = reader.line_num
            if len(fields) > len(header):
                raise TripsimInputError(f"{len(fields)} fields but the header names "
                                        f"{len(header)}", f"{path}: line {line}")
            rows.append((line, dict(zip(header, fields, strict=False))))
    except csv.Error as exc:
        raise TripsimInputError(f"line {reader.line_num}: not valid CSV ({exc})", path) from None
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
            power = _float(row, "power_kw", where, lo=0.5, hi=PORT_KW_MAX, required=False)
            ports = _float(row, "ports", where, lo=1, hi=PORTS_MAX, required=False)
            if ports is not None and ports != int(ports):
                raise TripsimInputError(f"ports = {ports:g} is not a whole number", where)
            for c in filter(None, (x.strip() for x in conn_text.split(";"))):
                key = check_connector(c, where)
                connectors[key] = (int(ports or 1), power or DEFAULT_CONNECTOR_KW[key])
        elif kind == "charger":
            raise TripsimInputError("connector is missing", where)
        sites.append(Site(site_id=f"{path.name}:{line}", name=name, lat_deg=lat, lon_deg=lon,
                          connectors=connectors, kind=kind, source=where,
                          opening=parse_opening_hours(row.get("hours"), where=where)))
    return sites


def read_chargers(path: str | Path, *, cache: bool = True) -> list[Site]:
    """Read charging sites from OSM XML (``.osm``…) or CSV.

    The sites of an OSM file are kept in the cache of road graphs
    (:func:`tripsim.io.osm.cached_file`) unless ``cache`` is False.

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
    name = path.name.lower()
    if name.endswith(_OSM_SUFFIXES):
        input_file(path, "osm")
        return _osm_sites(path, cache)
    if name.endswith(".csv"):
        return _csv_sites(path, "charger")
    input_file(path, "csv")  # a missing file or a folder says so first
    raise TripsimInputError("unknown charger format; expected OSM XML or .csv", path)


def read_lodgings(path: str | Path) -> list[Site]:
    """Read lodgings from CSV.

    Columns ``lat``, ``lon``, ``name``, optionally a charger (``connector``,
    ``power_kw``) and ``hours``.
    """
    return _csv_sites(Path(path), "lodging")
