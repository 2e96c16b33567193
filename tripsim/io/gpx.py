"""Read GPX tracks and routes (GPX 1.0/1.1) by streaming the XML.

Only what tripsim needs is kept: each point's latitude, longitude, elevation (and, on
request, time), the segments and the tracks' names.  A streaming parse (expat through
:mod:`tripsim.io._xml`) keeps memory to the text and a few arrays: a 50 MB track of half a
million points reads in about 3 s and 0.1 GB (``tripsim bench``), where building gpxpy's
full object model took 45 s and 1 GB.  A hand-written reader, deliberately: no GPX library
streams.
"""

from __future__ import annotations

import math
from array import array
from dataclasses import dataclass
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from tripsim.errors import RouteError, TripsimInputError
from tripsim.io._checks import check_points
from tripsim.io._files import read_text
from tripsim.io._limits import GRADE_MAX
from tripsim.io._xml import parse_xml_text
from tripsim.route import Route

__all__ = ["GpxPoints", "elapsed_s", "parse_gpx", "read_gpx"]


@dataclass(frozen=True)
class GpxPoints:
    """The points of a GPX file: its tracks' points, or (with no tracks) its routes' points.

    Attributes
    ----------
    kind : {"track", "route"}
        Where the points come from.
    lat_deg, lon_deg, elevation_m : array
        Positions [degrees] and elevations [m] (NaN where a point has no ``<ele>``).
    time_s : array or None
        POSIX seconds of each ``<time>`` (NaN where missing), when asked for; a time
        without an offset is read as UTC (GPX times are UTC).
    time_offset_given : bool or None
        Whether the first ``<time>`` carried an offset (``Z``, ``+02:00``).
    line : array of int
        Line of each point in the file, for messages.
    segment_start : array of int
        Index of the first point of each segment (``<trkseg>``, or ``<rte>``).
    segment_track : array of int
        Track (or route) of each segment, counted from 0.
    track_names : list of str or None
        Name of each track (or route).
    name : str or None
        The first track's (or route's) name, else the file's.
    """

    kind: str
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    elevation_m: np.ndarray
    time_s: np.ndarray | None
    line: np.ndarray
    segment_start: np.ndarray
    segment_track: np.ndarray
    track_names: list[str | None]
    name: str | None
    time_offset_given: bool | None = None

    def label(self, i: int) -> str:
        """Point ``i`` as the user finds it: "track point 12 (line 40)"."""
        return f"{self.kind} point {i + 1} (line {int(self.line[i])})"


class _Collection:
    """Points of one kind (tracks or routes) while parsing."""

    def __init__(self) -> None:
        self.lat, self.lon, self.ele, self.time = (array("d") for _ in range(4))
        self.line = array("q")
        self.segment_start = array("q")
        self.segment_track = array("q")
        self.names: list[str | None] = []


class _GpxHandler:
    """Collects track points and route points with their elevations and line numbers."""

    def __init__(self, path: Path, times: bool) -> None:
        self.path = path
        self.times = times
        self.parser: Any = None
        self.stack: list[str] = []
        self.found = {"track": _Collection(), "route": _Collection()}
        self.doc_name: str | None = None
        self.kind: str | None = None  # inside a trkpt or rtept
        self.text: list[str] | None = None  # collecting <ele>, <time> or <name>
        self.text_depth = 0  # ... which ends at this depth
        self.seen: set[str] = set()  # <ele> and <time> of the current point
        self.in_extensions = 0  # depth inside <extensions> (ignored)
        self.first_time_aware: bool | None = None

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
        elif tag in ("ele", "time"):
            if (self.kind is not None and tag not in self.seen and parent in ("trkpt", "rtept")
                    and (tag == "ele" or self.times)):
                self._collect()
        elif tag == "name" and parent in ("trk", "rte", "metadata", "gpx"):
            self._collect()
        elif (tag, parent) in (("trk", "gpx"), ("rte", "gpx")):
            found = self.found["track" if tag == "trk" else "route"]
            found.names.append(None)
            if tag == "rte":
                self._start_segment(found)
        elif tag == "trkseg" and parent == "trk":
            self._start_segment(self.found["track"])

    @staticmethod
    def _start_segment(found: _Collection) -> None:
        found.segment_start.append(len(found.lat))
        found.segment_track.append(len(found.names) - 1)

    def _collect(self) -> None:
        """Collect character data until the element ends (only then: it costs a call each)."""
        self.text = []
        self.text_depth = len(self.stack)
        self.parser.CharacterDataHandler = self.text.append

    def _start_point(self, kind: str, name: str, attrs: dict[str, str]) -> None:
        found = self.found[kind]
        try:
            lat, lon = float(attrs["lat"]), float(attrs["lon"])
        except KeyError as exc:
            self._fail(f"<{name}> has no {exc.args[0]} attribute")
        except ValueError:
            bad = next(k for k in ("lat", "lon") if not _is_float(attrs[k]))
            self._fail(f"<{name}> {bad}={attrs[bad][:40]!r} is not a number")
        found.lat.append(lat)
        found.lon.append(lon)
        found.ele.append(math.nan)
        found.time.append(math.nan)
        found.line.append(self._line())
        self.kind = kind
        self.seen = set()

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
        if tag in ("ele", "time") and self.kind is not None:
            self.seen.add(tag)
            if text:
                found = self.found[self.kind]
                if tag == "ele":
                    found.ele[-1] = self._number(text)
                else:
                    found.time[-1] = self._time(text)
        elif tag == "name" and text:
            parent = self.stack[-1] if self.stack else ""
            if parent in ("trk", "rte"):
                names = self.found["track" if parent == "trk" else "route"].names
                if names and names[-1] is None:
                    names[-1] = text
            elif self.doc_name is None:
                self.doc_name = text

    def _number(self, text: str) -> float:
        try:
            return float(text)
        except ValueError:
            self._fail(f"<ele> {text[:40]!r} is not a number")
        return math.nan  # pragma: no cover

    def _time(self, text: str) -> float:
        try:
            stamp = datetime.fromisoformat(text)
        except ValueError:
            self._fail(f"<time> {text[:40]!r} is not an ISO 8601 time")
        if self.first_time_aware is None:
            self.first_time_aware = stamp.tzinfo is not None
        if stamp.tzinfo is None:
            stamp = stamp.replace(tzinfo=UTC)  # GPX times are UTC
        return stamp.timestamp()


def _is_float(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _array(values: array, dtype: type = float) -> np.ndarray:
    return np.frombuffer(values, dtype=dtype).copy() if len(values) else np.zeros(0, dtype)


def elapsed_s(stamps: np.ndarray, path: Path, *, point: str, needs: str) -> np.ndarray:
    """Seconds since the first of time-stamped points, which must all have a rising time.

    ``point`` names a point in messages (``"track point"``), followed by its number;
    ``needs`` says what needs the times (``"a logged drive"``).
    """
    missing = np.flatnonzero(np.isnan(stamps))
    if missing.size:
        raise TripsimInputError(f"{point} {int(missing[0]) + 1}: no <time> ({needs} needs "
                                "time-stamped points)", path)
    t = stamps - stamps[0]
    bad = np.flatnonzero(np.diff(t) <= 0)
    if bad.size:
        raise TripsimInputError(f"{point} {int(bad[0]) + 2}: time does not increase", path)
    return t


def parse_gpx(path: str | Path, *, times: bool = False) -> GpxPoints:
    """Parse a GPX file into its points, segments and track names (no checks of values).

    Parameters
    ----------
    path : str or Path
        The GPX file (UTF-8, or the encoding its XML declaration names).
    times : bool, default False
        Read each point's ``<time>`` too.

    Returns
    -------
    GpxPoints

    Raises
    ------
    RouteError
        If the file is not GPX (the message names the line).
    """
    path = Path(path)
    text = read_text(path, "gpx", xml=True, error=RouteError)
    handler = _GpxHandler(path, times)
    parse_xml_text(text, handler, path, what="GPX", error=RouteError)
    del text
    kind = "track" if len(handler.found["track"].lat) else "route"
    found = handler.found[kind]
    name = next((n for n in found.names if n), None) or handler.doc_name
    return GpxPoints(kind=kind, lat_deg=_array(found.lat), lon_deg=_array(found.lon),
                     elevation_m=_array(found.ele), time_s=_array(found.time) if times else None,
                     line=_array(found.line, np.int64),
                     segment_start=_array(found.segment_start, np.int64),
                     segment_track=_array(found.segment_track, np.int64),
                     track_names=found.names, name=name,
                     time_offset_given=handler.first_time_aware)


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
    gpx = parse_gpx(path)
    if gpx.lat_deg.size < 2:
        raise RouteError(f"the GPX file holds {gpx.lat_deg.size} track or route points; need 2 "
                         "or more", path)
    ele = gpx.elevation_m if use_elevation and not np.isnan(gpx.elevation_m).all() else None
    check_points(gpx.lat_deg, gpx.lon_deg, ele, path, gpx.label, max_grade=max_grade)
    return Route(lat_deg=gpx.lat_deg, lon_deg=gpx.lon_deg, elevation_m=ele,
                 name=f"{gpx.name or path.stem} ({gpx.kind})", source=str(path))
