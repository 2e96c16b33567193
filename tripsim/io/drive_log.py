"""Read logged drives: time-stamped GPX or CSV with positions, or speed–time traces without.

A *logged drive* is what a data logger recorded on a real drive: time, position and,
where the vehicle gives them, speed, elevation and the battery's state of charge or
energy.  A *speed–time trace* has no positions: a lab cycle a team supplies.  Both are
read here into one table; :func:`tripsim.claims.logs.prepare_log` turns it into a
route driven at its recorded speeds.

CSV columns (a header row; names in any order and case; lines starting with ``#`` are
comments; other columns are ignored and named in ``attrs["notes"]``):

===============  =====================================================================
``t``            time: ISO 8601 (``2026-05-04T08:00:01-02:00``; without an offset,
                 local time of the log's first position) or seconds; ``t_s`` is the
                 same in seconds
``lat``, ``lon`` position, degrees WGS84 (both, or neither for a speed–time trace)
``speed_kph``    optional with positions, required without (or ``speed_mps``)
``elevation_m``  optional: elevation above sea level [m]
``soc``          optional: state of charge, 0-1 (a column with values above 1 is read
                 as percent, 0-100)
``battery_wh``   optional: energy drawn from the battery since the first row, net of
                 regeneration (it rises while driving) [Wh]
``grade_pct``    optional, speed–time traces only: road grade [%], positive uphill
===============  =====================================================================

Time must increase from row to row.  Empty cells in the optional columns are gaps
(interpolated over by the comparison, never invented at the ends).

GPX: every track point in order (all tracks and segments) with its ``<time>``; the
``<ele>`` values are kept when every point has one.  GPX carries no state of charge
(use CSV for that); speed comes from the positions.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError
from tripsim.io._checks import check_points
from tripsim.io._csv import number_column, read_table
from tripsim.io._files import input_file
from tripsim.io.gpx import elapsed_s, parse_gpx

__all__ = ["read_drive_log"]

#: column → (house name, factor to SI, low, high) for the numeric columns.
_NUMERIC = {
    "t_s": ("t_s", 1.0, -1e9, 1e10),
    "lat": ("lat_deg", 1.0, -90.0, 90.0),
    "lon": ("lon_deg", 1.0, -180.0, 180.0),
    "speed_kph": ("speed_mps", 1.0 / 3.6, 0.0, 400.0),
    "speed_mps": ("speed_mps", 1.0, 0.0, 120.0),
    "elevation_m": ("elevation_m", 1.0, -500.0, 9000.0),
    "soc": ("soc", 1.0, 0.0, 100.0),
    "battery_wh": ("battery_wh", 1.0, -1e7, 1e7),
    "grade_pct": ("grade", 0.01, -40.0, 40.0),
}
_OPTIONAL = ("elevation_m", "soc", "battery_wh", "grade_pct")
_KNOWN = {"t", "t_s", "lat", "lon", "speed_kph", "speed_mps", *_OPTIONAL}
#: Fewest rows a log needs.
MIN_ROWS = 3


def read_drive_log(path: str | Path) -> pd.DataFrame:
    """Read a logged drive (CSV or GPX) or a speed–time trace (CSV).

    Parameters
    ----------
    path : str or Path
        ``.csv`` (columns in the module docstring) or ``.gpx``.

    Returns
    -------
    pandas.DataFrame
        One row a sample: ``t_s`` (seconds since the first row), and where given
        ``lat_deg``, ``lon_deg``, ``speed_mps``, ``elevation_m``, ``soc`` (0-1),
        ``battery_wh``, ``grade`` (rise over run).  ``attrs``: ``source`` (the path),
        ``kind`` (``"positions"`` or ``"trace"``), ``start`` (the first row's clock
        time as a :class:`pandas.Timestamp`, naive when the log gave no offset, or
        None for times in seconds) and ``notes``.

    Raises
    ------
    TripsimInputError
        One line naming the file, the line (or track point) and column, and what was
        expected.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    input_file(path, "gpx" if suffix == ".gpx" else "csv")
    if suffix == ".csv":
        frame = _read_csv(path)
    elif suffix == ".gpx":
        frame = _read_gpx(path)
    else:
        raise TripsimInputError("unknown log format; expected .csv or .gpx", path)
    frame.attrs["source"] = str(path)
    return frame


# --------------------------------------------------------------------------------------- CSV
def _times(cells: list[str], lines: list[int], column: str, path: Path
           ) -> tuple[np.ndarray, pd.Timestamp | None]:
    """Seconds since the first row, and the first row's clock (None for plain seconds)."""
    texts = [c.strip() for c in cells]
    for i, text in enumerate(texts):
        if not text:
            raise TripsimInputError(f"line {lines[i]}, column {column}: empty (expected a "
                                    "time)", path)
    try:
        seconds = np.array([float(t) for t in texts])
    except ValueError:
        seconds = None
    if seconds is not None:
        return _numbers(texts, lines, "t_s", path, required=True), None
    if column == "t_s":
        bad = next(i for i, t in enumerate(texts) if not _is_number(t))
        raise TripsimInputError(f"line {lines[bad]}, column t_s: {texts[bad]!r} is not a "
                                "number of seconds", path)
    aware = [_has_offset(t) for t in texts]
    if any(aware) and not all(aware):
        bad = aware.index(not aware[0])
        raise TripsimInputError(f"line {lines[bad]}, column t: {texts[bad]!r} mixes times "
                                "with and without a UTC offset", path)
    stamps = []
    for i, text in enumerate(texts):
        try:
            ts = pd.Timestamp(text)
        except (ValueError, TypeError):
            ts = None
        if ts is None or pd.isna(ts):
            raise TripsimInputError(f"line {lines[i]}, column t: {text!r} is not an ISO 8601 "
                                    "time or a number of seconds", path)
        stamps.append(ts)
    first = stamps[0]  # with the offset the log gave
    return np.array([(s - first).total_seconds() for s in stamps]), first


def _is_number(text: str) -> bool:
    try:
        float(text)
    except ValueError:
        return False
    return True


def _has_offset(text: str) -> bool:
    tail = text[10:] if len(text) > 10 else ""
    return tail.endswith(("Z", "z")) or "+" in tail or "-" in tail


def _check_increasing(t: np.ndarray, lines: list[int], path: Path, column: str) -> None:
    bad = np.flatnonzero(np.diff(t) <= 0)
    if bad.size:
        i = int(bad[0]) + 1
        raise TripsimInputError(f"line {lines[i]}, column {column}: time does not increase "
                                f"(previous row {lines[i - 1]})", path)


def _numbers(cells: list[str], lines: list[int], column: str, path: Path, *,
             required: bool) -> np.ndarray:
    """A column as floats in SI units, checked; empty optional cells become NaN."""
    _, factor, lo, hi = _NUMERIC[column]
    return number_column(cells, lines, column, path, factor=factor, lo=lo, hi=hi,
                         required=required)


def _read_csv(path: Path) -> pd.DataFrame:
    table = read_table(path, min_rows=MIN_ROWS, what="a log")
    header, lines = table.header, table.lines
    cols = table.columns()
    time_cols = [c for c in ("t", "t_s") if c in cols]
    if len(time_cols) != 1:
        raise TripsimInputError("the header needs one time column, t or t_s (has "
                                f"{', '.join(header)})", path)
    positions = [c for c in ("lat", "lon") if c in cols]
    if len(positions) == 1:
        raise TripsimInputError(f"the header has {positions[0]} without "
                                f"{'lon' if positions[0] == 'lat' else 'lat'}", path)
    speeds = [c for c in ("speed_kph", "speed_mps") if c in cols]
    if len(speeds) == 2:
        raise TripsimInputError("the header has both speed_kph and speed_mps; keep one", path)
    kind = "positions" if positions else "trace"
    if kind == "trace" and not speeds:
        raise TripsimInputError("a log without lat and lon is a speed–time trace and needs "
                                "speed_kph (or speed_mps)", path)
    if kind == "positions" and "grade_pct" in cols:
        raise TripsimInputError("grade_pct applies to speed–time traces; a log with "
                                "positions takes its grade from elevation", path)
    t, start = _times(cols[time_cols[0]], lines, time_cols[0], path)
    _check_increasing(t, lines, path, time_cols[0])
    data: dict[str, np.ndarray] = {"t_s": t}
    for column in (*(("lat", "lon") if positions else ()), *speeds):
        data[_NUMERIC[column][0]] = _numbers(cols[column], lines, column, path, required=True)
    for column in _OPTIONAL:
        if column in cols:
            data[_NUMERIC[column][0]] = _numbers(cols[column], lines, column, path,
                                                 required=False)
    notes = []
    if "soc" in data:
        data["soc"], note = _soc_scale(data["soc"], path)
        notes += note
    if "soc" in data and "battery_wh" in data:
        notes.append("soc and battery_wh both given: the comparison uses battery_wh")
    ignored = [h for h in header if h not in _KNOWN]
    if ignored:
        notes.append(f"columns ignored: {', '.join(ignored)}")
    frame = pd.DataFrame(data)
    frame.attrs.update(kind=kind, start=start, notes=notes)
    return frame


def _soc_scale(soc: np.ndarray, path: Path) -> tuple[np.ndarray, list[str]]:
    """State of charge as 0-1: a column with values above 1 is percent."""
    if np.all(np.isnan(soc)):
        raise TripsimInputError("column soc holds no values", path)
    if np.nanmax(soc) > 1.0:
        return soc / 100.0, ["soc read as percent (values above 1)"]
    return soc, []


# --------------------------------------------------------------------------------------- GPX
def _read_gpx(path: Path) -> pd.DataFrame:
    gpx = parse_gpx(path, times=True)
    n = gpx.lat_deg.size if gpx.kind == "track" else 0
    if n < MIN_ROWS:
        raise TripsimInputError(f"{n} track points; a logged drive needs {MIN_ROWS} or more "
                                "time-stamped <trkpt>", path)
    t = elapsed_s(gpx.time_s, path, point="track point", needs="a logged drive")
    ele = gpx.elevation_m
    complete = not np.isnan(ele).any()
    check_points(gpx.lat_deg, gpx.lon_deg, ele if complete else None, path, gpx.label,
                 max_grade=None)
    data = {"t_s": t, "lat_deg": gpx.lat_deg, "lon_deg": gpx.lon_deg}
    notes = ["GPX carries no state of charge: no comparison with measured energy"]
    if complete:
        data["elevation_m"] = ele
    elif not np.isnan(ele).all():
        notes.append("some track points lack <ele>: elevation not used")
    start = pd.Timestamp(gpx.time_s[0], unit="s", tz="UTC")
    if not gpx.time_offset_given:
        start = start.tz_localize(None)  # as written: the log gave no offset
    frame = pd.DataFrame(data)
    frame.attrs.update(kind="positions", start=start, notes=notes)
    return frame
