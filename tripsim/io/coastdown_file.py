"""Read coast-down runs: a CSV table, or time-stamped GPX tracks (one run a track segment).

CSV columns (header names, any order, any case; lines starting with ``#`` are comments):

========================  ==========================================================
``run``                   run name or number; each run's rows together, in time order
``t_s``                   time [s], increasing within a run
``speed_kph``             speed [km/h] (or ``speed_mps`` [m/s])
``direction``             optional: the way along the track, two labels (e.g. N, S)
``heading_deg``           optional: heading [° east of north]; pairs runs without a
                          ``direction`` and resolves the wind into head- and crosswind
``temp_c``                optional: air temperature [°C]
``pressure_hpa``          optional: air pressure [hPa]
``wind_mps``              optional: wind speed [m/s]
``wind_from_deg``         optional: where the wind blows from [° east of north]
``grade_pct``             optional: road grade [%], positive uphill in the run's direction
========================  ==========================================================

Other columns are ignored (and named in the result's notes).  Empty cells in optional
columns are gaps, filled by the run's mean.

A GPX file holds one run in each track segment; its points need ``<time>``.  A run is
named after its track (``name/2`` for a track's second segment).  Speed is the
geodesic distance between consecutive points (pyproj, WGS84) over their time step,
placed at the middle of the step and smoothed with a Savitzky–Golay filter of degree 2
over about 5 s (:func:`scipy.signal.savgol_filter`; it keeps any locally quadratic
speed curve as it is, so it does not bend the deceleration the fit looks for); the
heading is the geodesic azimuth.
GPX elevations are not used (too coarse for a grade; pairing cancels a constant one).
Files are read as every tripsim input (:mod:`tripsim.io._files`); GPX by the streaming
reader of :mod:`tripsim.io.gpx`, with its checks of positions.
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path

import numpy as np
import pandas as pd
from scipy.signal import savgol_filter

from tripsim.errors import TripsimInputError
from tripsim.io._checks import check_points
from tripsim.io._csv import number_column, read_table
from tripsim.io._files import input_file
from tripsim.io.gpx import elapsed_s, parse_gpx
from tripsim.segments import GEOD

__all__ = ["read_coastdown_runs"]

#: Span of the GPX speed smoothing [s].
SMOOTH_S = 5.0

#: column → (house name, factor to SI, low, high) for the numeric columns.
_NUMERIC = {
    "t_s": ("t_s", 1.0, -1e7, 1e9),
    "speed_kph": ("speed_mps", 1.0 / 3.6, 0.0, 400.0),
    "speed_mps": ("speed_mps", 1.0, 0.0, 120.0),
    "heading_deg": ("heading_deg", 1.0, -360.0, 720.0),
    "temp_c": ("temp_c", 1.0, -50.0, 60.0),
    "pressure_hpa": ("pressure_pa", 100.0, 500.0, 1100.0),
    "wind_mps": ("wind_mps", 1.0, 0.0, 60.0),
    "wind_from_deg": ("wind_from_deg", 1.0, -360.0, 720.0),
    "grade_pct": ("grade", 0.01, -30.0, 30.0),
}
_REQUIRED = ("run", "t_s")
_OPTIONAL_NUMERIC = ("heading_deg", "temp_c", "pressure_hpa", "wind_mps", "wind_from_deg",
                     "grade_pct")


def read_coastdown_runs(path: str | Path) -> pd.DataFrame:
    """Read coast-down runs from CSV or time-stamped GPX.

    Parameters
    ----------
    path : str or Path
        ``.csv`` (columns in the module docstring) or ``.gpx``.

    Returns
    -------
    pandas.DataFrame
        ``run`` (str), ``t_s``, ``speed_mps`` and, where given, ``direction`` (str),
        ``heading_deg``, ``temp_c``, ``pressure_pa``, ``wind_mps``, ``wind_from_deg``,
        ``grade`` (rise over run), in SI units; ``attrs["source"]`` is the path and
        ``attrs["notes"]`` what was ignored.

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
        raise TripsimInputError("unknown coast-down run format; expected .csv or .gpx", path)
    frame.attrs["source"] = str(path)
    return frame


# --------------------------------------------------------------------------------------- CSV
def _check_header(header: list[str], path: Path) -> tuple[str, list[str]]:
    missing = [c for c in _REQUIRED if c not in header]
    speeds = [c for c in ("speed_kph", "speed_mps") if c in header]
    if len(speeds) == 2:
        raise TripsimInputError("the header has both speed_kph and speed_mps; keep one", path)
    if not speeds:
        missing.append("speed_kph (or speed_mps)")
    if missing:
        raise TripsimInputError(f"the header lacks column(s) {', '.join(missing)} (has "
                                f"{', '.join(header)})", path)
    known = {*_REQUIRED, *speeds, "direction", *_OPTIONAL_NUMERIC}
    return speeds[0], [h for h in header if h not in known]


def _numbers(values: Sequence[str], lines: Sequence[int], column: str, path: Path, *,
             required: bool) -> np.ndarray:
    """A column as floats in SI units, checked; empty optional cells become NaN."""
    _, factor, lo, hi = _NUMERIC[column]
    return number_column(values, lines, column, path, factor=factor, lo=lo, hi=hi,
                         required=required)


def _read_csv(path: Path) -> pd.DataFrame:
    table = read_table(path)
    header, lines = table.header, table.lines
    speed_col, ignored = _check_header(header, path)
    cols = table.columns()
    data: dict[str, object] = {}
    for n, text in zip(lines, cols["run"], strict=True):
        if not text.strip():
            raise TripsimInputError(f"line {n}, column run: empty (expected a run name)", path)
    data["run"] = [t.strip() for t in cols["run"]]
    for column in ("t_s", speed_col):
        data[_NUMERIC[column][0]] = _numbers(cols[column], lines, column, path, required=True)
    for column in _OPTIONAL_NUMERIC:
        if column in cols:
            data[_NUMERIC[column][0]] = _numbers(cols[column], lines, column, path,
                                                 required=False)
    if "direction" in cols:
        data["direction"] = [t.strip() for t in cols["direction"]]
    frame = pd.DataFrame(data)
    _check_runs(frame, lines, path)
    for col in ("heading_deg", "wind_from_deg"):
        if col in frame:
            frame[col] = frame[col] % 360.0
    if ignored:
        frame.attrs["notes"] = [f"columns ignored: {', '.join(ignored)}"]
    return frame


def _check_runs(frame: pd.DataFrame, lines: Sequence[int], path: Path) -> None:
    """Each run's rows together, time increasing, one direction label."""
    run = frame["run"].to_numpy()
    t = frame["t_s"].to_numpy()
    seen: set[str] = set()
    for i in range(len(frame)):
        first_of_run = i == 0 or run[i] != run[i - 1]
        if first_of_run:
            if run[i] in seen:
                raise TripsimInputError(f"line {lines[i]}, column run: run {run[i]} resumes "
                                        "after other runs; keep each run's rows together",
                                        path)
            seen.add(run[i])
        elif t[i] <= t[i - 1]:
            raise TripsimInputError(f"line {lines[i]}, column t_s: {t[i]:g} does not increase "
                                    f"within run {run[i]} (previous {t[i - 1]:g})", path)
    if "direction" in frame:
        direction = frame["direction"].to_numpy()
        for i in range(len(frame)):
            if not direction[i]:
                raise TripsimInputError(f"line {lines[i]}, column direction: empty (expected "
                                        "a label for the way along the track)", path)
            if i > 0 and run[i] == run[i - 1] and direction[i] != direction[i - 1]:
                raise TripsimInputError(f"line {lines[i]}, column direction: "
                                        f"{direction[i]!r} changes within run {run[i]} (was "
                                        f"{direction[i - 1]!r})", path)


# --------------------------------------------------------------------------------------- GPX
def _read_gpx(path: Path) -> pd.DataFrame:
    gpx = parse_gpx(path, times=True)
    if gpx.kind != "track" or not gpx.segment_start.size:
        raise TripsimInputError("no track segments (each run is one <trkseg> with timed "
                                "<trkpt> points)", path)
    check_points(gpx.lat_deg, gpx.lon_deg, None, path, gpx.label, max_grade=None)
    names = [n or f"track {i}" for i, n in enumerate(gpx.track_names, start=1)]
    bounds = np.r_[gpx.segment_start, gpx.lat_deg.size]
    frames = []
    for k, track in enumerate(gpx.segment_track):
        i = int(track) + 1
        j = int(np.sum(gpx.segment_track[:k] == track)) + 1
        n_segments = int(np.sum(gpx.segment_track == track))
        name = names[i - 1] if names.count(names[i - 1]) == 1 else f"{names[i - 1]} ({i})"
        run = name if n_segments == 1 else f"{name}/{j}"
        where = f"track {i} ({name}), segment {j}"
        part = slice(int(bounds[k]), int(bounds[k + 1]))
        frames.append(_gpx_run(gpx.lat_deg[part], gpx.lon_deg[part], gpx.time_s[part], run,
                               where, path))
    return pd.concat(frames, ignore_index=True)


def _gpx_run(lat: np.ndarray, lon: np.ndarray, stamps: np.ndarray, run: str, where: str,
             path: Path) -> pd.DataFrame:
    """One track segment → mid-step times, smoothed speeds and headings."""
    if len(lat) < 5:
        raise TripsimInputError(f"{where}: {len(lat)} points; a run needs 5 or more", path)
    t = elapsed_s(stamps, path, point=f"{where}, point", needs="a coast-down run")
    steps = np.diff(t)
    azimuth, _, dist = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    t_mid = 0.5 * (t[:-1] + t[1:])
    speed = np.maximum(_smooth(t_mid, np.asarray(dist) / steps), 0.0)
    return pd.DataFrame({"run": run, "t_s": t_mid, "speed_mps": speed,
                         "heading_deg": np.asarray(azimuth) % 360.0})


def _smooth(t: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Savitzky–Golay (degree 2) over about SMOOTH_S, on a uniform grid of the median step."""
    dt = float(np.median(np.diff(t)))
    uniform = np.allclose(np.diff(t), dt, rtol=0.01)
    grid = t if uniform else np.arange(t[0], t[-1] + 0.5 * dt, dt)
    on_grid = values if uniform else np.interp(grid, t, values)
    window = max(5, round(SMOOTH_S / dt) | 1)
    if on_grid.size < window:
        window = on_grid.size if on_grid.size % 2 else on_grid.size - 1
    if window < 3:
        return values
    smooth = savgol_filter(on_grid, window, min(2, window - 1))
    return smooth if uniform else np.interp(t, grid, smooth)
