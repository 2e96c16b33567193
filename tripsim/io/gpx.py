"""Read GPX tracks and routes (GPX 1.0/1.1) by streaming the XML.

Only what a route needs is kept: the points' latitude, longitude and elevation
and the track's name.  A streaming (SAX) parse keeps memory to the text and three
arrays (a 50 MB track of half a million points reads in about 2 s and 0.3 GB, see
``tripsim bench``), where building gpxpy's full object model took 45 s and 1 GB.
"""

from __future__ import annotations

import math
from array import array
from pathlib import Path
from typing import Any

import numpy as np

from tripsim.errors import RouteError
from tripsim.io._checks import check_points
from tripsim.io._files import read_text
from tripsim.io._limits import GRADE_MAX
from tripsim.io._xml import parse_xml_text
from tripsim.route import Route

__all__ = ["read_gpx"]


class _GpxHandler:
    """Collects track points and route points with their elevations and line numbers."""

    def __init__(self, path: Path) -> None:
        self.path = path
        self.parser: Any = None
        self.stack: list[str] = []
        self.points = {kind: (array("d"), array("d"), array("d"), array("q"))
                       for kind in ("track", "route")}
        self.names: dict[str, str] = {}
        self.kind: str | None = None  # inside a trkpt or rtept
        self.text: list[str] | None = None  # collecting <ele> or <name>
        self.text_depth = 0  # ... which ends at this depth
        self.ele_seen = False
        self.in_extensions = 0  # depth inside <extensions> (ignored)

    def _line(self) -> int:
        return self.parser.CurrentLineNumber if self.parser is not None else 0

    def _fail(self, problem: str) -> None:
        raise RouteError(f"line {self._line()}: {problem}", self.path)

    def start(self, name: str, attrs: dict[str, str]) -> None:
        tag = name.rpartition(":")[2]
        stack = self.stack
        parent = stack[-1] if stack else None
        stack.append(tag)
        if tag == "trkpt" and parent == "trkseg" and not self.in_extensions:
            self._start_point("track", name, attrs)
            return
        if parent is None and tag != "gpx":
            self._fail(f"the root element is <{name}>; a GPX file starts with <gpx>")
        if tag == "extensions" or self.in_extensions:
            self.in_extensions += 1
        elif tag == "rtept" and parent == "rte":
            self._start_point("route", name, attrs)
        elif tag == "ele":
            if self.kind is not None and not self.ele_seen and parent in ("trkpt", "rtept"):
                self._collect()
        elif tag == "name" and parent in ("trk", "rte", "metadata", "gpx"):
            self._collect()

    def _collect(self) -> None:
        """Collect character data until the element ends (only then: it costs a call each)."""
        self.text = []
        self.text_depth = len(self.stack)
        self.parser.CharacterDataHandler = self.text.append

    def _start_point(self, kind: str, name: str, attrs: dict[str, str]) -> None:
        lat_a, lon_a, ele_a, line_a = self.points[kind]
        try:
            lat, lon = float(attrs["lat"]), float(attrs["lon"])
        except KeyError as exc:
            self._fail(f"<{name}> has no {exc.args[0]} attribute")
        except ValueError:
            bad = next(k for k in ("lat", "lon") if not _is_float(attrs[k]))
            self._fail(f"<{name}> {bad}={attrs[bad][:40]!r} is not a number")
        lat_a.append(lat)
        lon_a.append(lon)
        ele_a.append(math.nan)
        line_a.append(self._line())
        self.kind = kind
        self.ele_seen = False

    def end(self, name: str) -> None:
        tag = self.stack.pop()
        if self.in_extensions:
            self.in_extensions -= 1
            return
        if self.text is None or len(self.stack) + 1 != self.text_depth:
            if tag in ("trkpt", "rtept"):
                self.kind = None
            return
        text = "".join(self.text).strip()
        self.text = None
        self.parser.CharacterDataHandler = None
        if tag == "ele" and self.kind is not None:
            self.ele_seen = True
            if text:
                try:
                    self.points[self.kind][2][-1] = float(text)
                except ValueError:
                    self._fail(f"<ele> {text[:40]!r} is not a number")
        elif tag == "name" and text:
            parent = self.stack[-1] if self.stack else ""
            self.names.setdefault(parent, text)


def _is_float(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def read_gpx(path: str | Path, *, use_elevation: bool = True,
             max_grade: float | None = GRADE_MAX) -> Route:
    """Read the points of a GPX file as a route.

    Parameters
    ----------
    path : str or Path
        The GPX file (UTF-8, or the encoding its XML declaration names).
    use_elevation : bool, default True
        Keep ``<ele>`` values.  When some points lack them, reading fails
        (pass False, or give an elevation raster, to ignore them).
    max_grade : float or None, default :data:`tripsim.io._limits.GRADE_MAX`
        Refuse elevation steps steeper than this between consecutive points (beyond
        GNSS noise); None accepts any.

    Returns
    -------
    Route
        Track points (all tracks and segments in order); if the file has no
        tracks, route points.  No speed limits: GPX does not carry them.

    Raises
    ------
    RouteError
        If the file is not valid GPX, holds fewer than 2 points, or impossible
        positions or elevations (the message names the point and its line).
    """
    path = Path(path)
    text = read_text(path, "gpx", xml=True, error=RouteError)
    handler = _GpxHandler(path)
    parse_xml_text(text, handler, path, what="GPX", error=RouteError)
    del text
    kind = "track" if len(handler.points["track"][0]) else "route"
    lat_a, lon_a, ele_a, line_a = handler.points[kind]
    if len(lat_a) < 2:
        raise RouteError(f"the GPX file holds {len(lat_a)} track or route points; need 2 or more",
                         path)
    lat = np.frombuffer(lat_a, dtype=float).copy()
    lon = np.frombuffer(lon_a, dtype=float).copy()
    ele = None
    if use_elevation:
        ele = np.frombuffer(ele_a, dtype=float).copy()
        if np.isnan(ele).all():
            ele = None

    def label(i: int) -> str:
        return f"{kind} point {i + 1} (line {line_a[i]})"

    check_points(lat, lon, ele, path, label, max_grade=max_grade)
    parent = "trk" if kind == "track" else "rte"
    name = handler.names.get(parent) or handler.names.get("metadata") \
        or handler.names.get("gpx") or path.stem
    return Route(lat_deg=lat, lon_deg=lon, elevation_m=ele, name=f"{name} ({kind})",
                 source=str(path))
