r"""Logged drives: drive a log at its recorded speeds, compare with what it measured, calibrate.

A data logger on a real drive records time, position and, where the vehicle gives them,
speed, elevation and the battery's state of charge or energy
(:func:`tripsim.io.drive_log.read_drive_log`).  This module turns such a log into a
route the one energy model drives *as it was driven* — speeds and times as logged
replace the speed profile (:class:`tripsim.energy.RecordedDrive`) — and holds the model
against the measurements.

Preparing a log (:func:`prepare_log`)
-------------------------------------
*With positions.*  Samples slower than :data:`STILL_MPS` are stationary and hold the
position they stopped at (a receiver at rest wanders by metres); the positions are
smoothed over about :data:`SMOOTH_S` seconds (a Savitzky–Golay filter of degree 2, which
keeps any locally quadratic path as it is) so that receiver noise does not lengthen the
path, and the route is cut into segments by :func:`tripsim.segments.segment_route`
(geodesic lengths, elevation from the log, a raster or neither).  Each segment boundary
is reached at the time the smoothed path first reaches that distance; the wait at a
stop therefore belongs to the segment that leaves it, where it counts as time (the
auxiliary load runs) and not as distance.  Speeds at the boundaries are the logged
speeds at those times, or, without a speed column, the speed from the positions
(distance over time, smoothed the same way).

*Without positions* (a speed–time trace: a lab cycle).  Each step between two samples
is a segment driven at constant acceleration: its length is
:math:`(v_0 + v_1)\,\Delta t / 2` along the road, its grade the trace's (level when it
gives none); stationary steps add their time to the next moving step.  A trace has no
place: it runs in fixed conditions, not in a weather file.

Comparison and calibration
--------------------------
When the log carries the battery's state of charge or energy, the model's energy drawn
since the start is set against the measured one along the way and at the end
(:func:`compare_log`); the measured state of charge is turned into energy with the
model's usable capacity at the pack's temperature.

:func:`fit_log` then fits the two parameters users calibrate most: the auxiliary base
load :math:`P_b` and the drive efficiency :math:`\eta` (for a vehicle with an efficiency
map, a factor on the map).  The model's demand on a segment is, in its own terms
(:mod:`tripsim.powertrain`, :mod:`tripsim.cabin`),

.. math:: d = \frac{\eta_0}{\eta} D_0 - R + P_b\,T + C - S,

with :math:`D_0` the traction energy at the battery at the vehicle file's efficiency
:math:`\eta_0`, :math:`R` the energy regeneration returns, :math:`T` the time
(driving and waiting), :math:`C` the climate and battery-conditioning energy and
:math:`S` the solar gain — all taken from the model's own trace, so no physics is
written again here.  The measured energy drawn since the start, read at segment
boundaries about every ``step_s`` seconds, is linear in :math:`a = \eta_0/\eta`,
:math:`P_b` and an offset (the first reading's error):

.. math:: E_k + R_k - C_k + S_k = c + a\,D_{0,k} + P_b\,T_k + e_k

(cumulative sums to boundary k).  Ordinary least squares gives the three; their
covariance is the Newey–West estimate with Bartlett weights, which allows the residuals
to be correlated from one reading to the next (a logger's noise and the model's own
discretisation both are), and the intervals use Student's t with n − 3 degrees of
freedom.  The interval of :math:`\eta` is the image of the interval of :math:`a` (a
monotone map).  Energy the model's full battery refused is added back to the measured
energy (the real pack refused it too), and readings after the model ran empty are left
out.  The drive is then simulated again with the fitted values, which shows the fit
through the one model.

The intervals cover measurement scatter, not a bias every reading shares: a wrong
usable capacity scales every energy measured as state of charge (and so the fitted
efficiency), and a wrong mass or road load moves the traction energy.  A drive with
stops and slow stretches tells the base load from the efficiency; a steady motorway
drive cannot.

References
----------
A. Savitzky, M. J. E. Golay (1964), "Smoothing and differentiation of data by
simplified least squares procedures", Analytical Chemistry 36(8)
(:func:`scipy.signal.savgol_filter`).  Ordinary least squares and its covariance:
any regression text, e.g. N. R. Draper, H. Smith, *Applied Regression Analysis*, 3rd ed.,
Wiley 1998, ch. 5 (from memory); W. K. Newey, K. D. West (1987), "A simple, positive
semi-definite, heteroskedasticity and autocorrelation consistent covariance matrix",
Econometrica 55(3), with the lag rule 4 (n/100)^(2/9) (common practice, from memory).
"""

from __future__ import annotations

from dataclasses import dataclass, field, replace
from typing import Any

import numpy as np
import pandas as pd

from tripsim.caution import CAUTION
from tripsim.drive import DriveOptions
from tripsim.elevation import Dem, sample_dem, smooth_profile, total_ascent_m
from tripsim.energy import Conditions, RecordedDrive, SolarOptions
from tripsim.errors import RouteError, TripsimInputError
from tripsim.route import StopKind
from tripsim.segments import GEOD, SEGMENT_COLUMNS, curvature_per_m
from tripsim.simulate import Trip, simulate
from tripsim.units import J_PER_WH
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather
from tripsim.zones import route_zone

__all__ = ["STILL_MPS", "LogComparison", "LogDrive", "LogFit", "LoggedDrive", "compare_log",
           "drive_log", "fit_log", "fitted_vehicle", "log_from_trace", "measured_energy_wh",
           "prepare_log"]

#: A logged sample slower than this is stationary. [m/s]
STILL_MPS = 0.5
#: Span of the smoothing of positions and of speeds from positions. [s]
SMOOTH_S = 5.0
#: Spacing of the readings the calibration fits. [s]
STEP_S = 10.0
#: Fewest readings a calibration needs.
MIN_READINGS = 20
#: Places along the drive at which model and measurement are compared (shares of distance).
CHECKPOINTS = np.linspace(0.1, 1.0, 10)


@dataclass(frozen=True)
class LogDrive:
    """A log made ready to drive.

    Attributes
    ----------
    segments : pandas.DataFrame
        The route as segments (:data:`tripsim.segments.SEGMENT_COLUMNS`).
    recorded : RecordedDrive
        Node speeds and segment times as logged.
    node_t_s : array, shape (n + 1,)
        Time at each segment boundary, seconds since the log's first sample.
    depart : pandas.Timestamp or None
        Clock time of the first sample (time-zone aware), None for times in seconds.
    measured_soc : array, shape (n + 1,) or None
        Logged state of charge at each boundary (NaN outside the logged span).
    measured_wh : array, shape (n + 1,) or None
        Logged energy drawn since the first sample at each boundary. [Wh]
    positions : bool
        False for a speed–time trace.
    source : str
        The file.
    notes : tuple of str
        What the reading and the preparation assumed.
    """

    segments: pd.DataFrame
    recorded: RecordedDrive
    node_t_s: np.ndarray
    depart: pd.Timestamp | None
    measured_soc: np.ndarray | None
    measured_wh: np.ndarray | None
    positions: bool
    source: str
    notes: tuple[str, ...] = ()

    @property
    def measured(self) -> bool:
        """True when the log carries the battery's state of charge or energy."""
        return self.measured_soc is not None or self.measured_wh is not None

    @property
    def basis(self) -> str | None:
        """What the comparison rests on: ``"energy"`` (battery_wh), ``"soc"`` or None."""
        if self.measured_wh is not None:
            return "energy"
        return "soc" if self.measured_soc is not None else None


def _odd_window(dt: float, n: int) -> int:
    window = max(5, round(SMOOTH_S / dt) | 1)
    if n < window:
        window = n if n % 2 else n - 1
    return window


def _smooth(t: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Savitzky–Golay (degree 2) over about SMOOTH_S on a uniform grid of the median step."""
    from scipy.signal import savgol_filter  # scipy loads only when a log is read

    dt = float(np.median(np.diff(t)))
    window = _odd_window(dt, t.size)
    if window < 3:
        return values
    uniform = np.allclose(np.diff(t), dt, rtol=0.01)
    grid = t if uniform else np.arange(t[0], t[-1] + 0.5 * dt, dt)
    window = _odd_window(dt, grid.size)
    on_grid = values if uniform else np.interp(grid, t, values)
    smooth = savgol_filter(on_grid, window, min(2, window - 1))
    return smooth if uniform else np.interp(t, grid, smooth)


def _fill(t: np.ndarray, values: np.ndarray) -> np.ndarray:
    ok = np.isfinite(values)
    if ok.all():
        return values
    if ok.sum() < 2:
        return np.zeros_like(values)
    return np.interp(t, t[ok], values[ok])


def _hold(still: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Stationary samples keep the value of the last moving one (or the first sample's)."""
    idx = np.where(~still, np.arange(still.size), 0)
    np.maximum.accumulate(idx, out=idx)
    return values[idx]


def _speed_from_positions(t: np.ndarray, lat: np.ndarray, lon: np.ndarray) -> np.ndarray:
    _, _, step = GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])
    mid = 0.5 * (t[:-1] + t[1:])
    raw = np.asarray(step) / np.diff(t)
    return np.maximum(np.interp(t, mid, _smooth(mid, raw)), 0.0)


def _node_measure(t_node: np.ndarray, t: np.ndarray, values: np.ndarray) -> np.ndarray:
    """Logged values at node times, linear in between, NaN outside the logged span."""
    ok = np.isfinite(values)
    if ok.sum() < 2:
        return np.full(t_node.size, np.nan)
    out = np.interp(t_node, t[ok], values[ok])
    out[(t_node < t[ok][0] - 1e-9) | (t_node > t[ok][-1] + 1e-9)] = np.nan
    return out


def _measures(samples: pd.DataFrame, t_node: np.ndarray
              ) -> tuple[np.ndarray | None, np.ndarray | None]:
    t = samples["t_s"].to_numpy(dtype=float)
    soc = wh = None
    if "soc" in samples:
        soc = _node_measure(t_node, t, samples["soc"].to_numpy(dtype=float))
    if "battery_wh" in samples:
        wh = _node_measure(t_node, t, samples["battery_wh"].to_numpy(dtype=float))
        if np.isfinite(wh[0]):
            wh = wh - wh[0]
        rises = np.nanmax(wh) if np.isfinite(wh).any() else 0.0
        falls = -np.nanmin(wh) if np.isfinite(wh).any() else 0.0
        if falls > max(rises, 1.0):
            raise TripsimInputError("battery_wh falls along the log: it must be the energy "
                                    "drawn since the first row (rising), not the energy "
                                    "left", samples.attrs.get("source", "log"))
    return soc, wh


def prepare_log(samples: pd.DataFrame, *, dem: Dem | None = None, max_length_m: float = 25.0,
                smooth_sigma_m: float = 40.0, name: str | None = None) -> LogDrive:
    """Turn a read log into segments driven at their recorded speeds (see the module notes).

    Parameters
    ----------
    samples : pandas.DataFrame
        From :func:`tripsim.io.drive_log.read_drive_log`.
    dem : Dem, optional
        Elevation raster; replaces the log's elevation (logs with positions).
    max_length_m, smooth_sigma_m : float
        See :func:`tripsim.segments.segment_route`.
    name : str, optional
        The route's name in reports.

    Returns
    -------
    LogDrive
    """
    source = str(samples.attrs.get("source", "log"))
    notes = list(samples.attrs.get("notes", []))
    if samples.attrs.get("kind", "positions") == "trace":
        segments, v_node, t_node = _trace_segments(samples, source, name)
        depart = None
    else:
        segments, v_node, t_node, more = _position_segments(samples, dem, max_length_m,
                                                            smooth_sigma_m, source, name)
        notes += more
        depart = _depart(samples.attrs.get("start"), segments, source)
    soc, wh = _measures(samples, t_node)
    recorded = RecordedDrive(v_nodes_mps=v_node, time_s=np.diff(t_node))
    return LogDrive(segments, recorded, t_node, depart, soc, wh,
                    samples.attrs.get("kind", "positions") != "trace", source, tuple(notes))


def _depart(start: Any, segments: pd.DataFrame, source: str) -> pd.Timestamp | None:
    if start is None:
        return None
    ts = pd.Timestamp(start)
    if ts.tzinfo is None:
        try:
            ts = ts.tz_localize(route_zone(segments), ambiguous="raise", nonexistent="raise")
        except Exception:  # pandas raises pytz's errors for a missing or doubled hour
            raise TripsimInputError(f"the log's first time {ts} does not exist or is ambiguous "
                                    "in the local time zone: give times with an offset",
                                    source) from None
    return ts


def _position_segments(samples: pd.DataFrame, dem: Dem | None, max_length_m: float,
                       smooth_sigma_m: float, source: str, name: str | None
                       ) -> tuple[pd.DataFrame, np.ndarray, np.ndarray, list[str]]:
    t = samples["t_s"].to_numpy(dtype=float)
    lat = samples["lat_deg"].to_numpy(dtype=float)
    lon = samples["lon_deg"].to_numpy(dtype=float)
    notes = []
    if "speed_mps" in samples:
        logged = np.maximum(_fill(t, samples["speed_mps"].to_numpy(dtype=float)), 0.0)
        still = logged < STILL_MPS
        speed = np.where(still, 0.0, np.maximum(_smooth(t, logged), 0.0))
    else:
        speed = _speed_from_positions(t, lat, lon)
        still = speed < STILL_MPS
        notes.append("no speed column: speed and distance from the positions, smoothed over "
                     f"{SMOOTH_S:g} s")
    lat_s = _hold(still, _smooth(t, _hold(still, lat)))
    lon_s = _hold(still, _smooth(t, _hold(still, lon)))
    if "speed_mps" in samples:  # distance from the logged speed: times and speeds agree
        dist = np.r_[0.0, np.cumsum(0.5 * (speed[1:] + speed[:-1]) * np.diff(t))]
        surface = True
    else:
        _, _, step = GEOD.inv(lon_s[:-1], lat_s[:-1], lon_s[1:], lat_s[1:])
        dist = np.r_[0.0, np.cumsum(np.asarray(step))]
        surface = False
    if dist[-1] < 1.0:
        raise RouteError("the log never moves (less than 1 m in all)", source)
    first = np.r_[True, np.diff(dist) > 0.0]  # arrival at each distance: waits go forward
    x = _node_distances(dist, still, max_length_m)
    t_node = np.interp(x, dist[first], t[first])
    t_node[-1] = t[-1]
    if np.any(np.diff(t_node) <= 0.0):
        raise TripsimInputError("the log's times and positions do not give every segment a "
                                "positive time", source)
    lat_n, lon_n = np.interp(t_node, t, lat_s), np.interp(t_node, t, lon_s)
    if dem is not None:
        z, z_source = sample_dem(dem, lat_n, lon_n), "dem"
    elif "elevation_m" in samples:
        z = np.interp(t_node, t, _fill(t, samples["elevation_m"].to_numpy(dtype=float)))
        z_source = "file"
    else:
        z, z_source = np.zeros(x.size), "none"
        notes.append("no elevation in the log and no raster: the drive is taken as level "
                     "(give --dem)")
    segments = _segments_table(np.diff(x), surface, smooth_profile(x, z, smooth_sigma_m),
                               lat_n, lon_n)
    segments.attrs.update(name=name or "logged drive", source=source, elevation_source=z_source,
                          ascent_raw_m=total_ascent_m(z), smooth_sigma_m=float(smooth_sigma_m),
                          max_length_m=float(max_length_m))
    return segments, np.interp(t_node, t, speed), t_node, notes


def _segments_table(step_m: np.ndarray, surface: bool, z: np.ndarray, lat: np.ndarray,
                    lon: np.ndarray) -> pd.DataFrame:
    """Segments (:data:`tripsim.segments.SEGMENT_COLUMNS`) from node distances and places.

    ``step_m`` is each segment's distance, along the road surface (``surface``: a distance
    from speeds) or on the map (from positions); ``z`` the nodes' (smoothed) elevations.
    """
    dz = np.diff(z)
    if surface:
        dz = np.clip(dz, -0.5 * step_m, 0.5 * step_m)  # no grade above 58 %
        length = np.sqrt(step_m**2 - dz**2)
        slope = step_m
    else:
        length = step_m
        slope = np.sqrt(step_m**2 + dz**2)
    grade = dz / length
    n = length.size
    heading = np.asarray(GEOD.inv(lon[:-1], lat[:-1], lon[1:], lat[1:])[0]) % 360.0
    moved = np.abs(np.diff(lat)) + np.abs(np.diff(lon)) > 0.0
    if not moved.any():  # no positions (a speed-time trace): taken as heading north
        heading = np.zeros(n)
    else:  # a segment with no movement of its own takes the last heading
        idx = np.where(moved, np.arange(n), 0)
        np.maximum.accumulate(idx, out=idx)
        heading = heading[np.where(moved.cumsum() > 0, idx, np.argmax(moved))]
    start = np.r_[0.0, np.cumsum(length)[:-1]]
    kinds = np.zeros(n, dtype=np.int8)
    kinds[-1] = StopKind.END
    out = pd.DataFrame({
        "start_m": start, "length_m": length, "slope_length_m": slope,
        "lat_deg": lat[:-1], "lon_deg": lon[:-1], "lat_end_deg": lat[1:],
        "lon_end_deg": lon[1:], "elevation_m": z[:-1], "elevation_end_m": z[1:],
        "grade": grade, "heading_deg": heading,
        "curvature_per_m": curvature_per_m(heading, start + 0.5 * length),
        "speed_limit_kph": np.full(n, np.nan), "highway": pd.array([""] * n, dtype="string"),
        "stop_end": kinds >= StopKind.STOP_SIGN, "stop_kind_end": kinds,
    })[list(SEGMENT_COLUMNS)]
    out.attrs.update(ascent_m=total_ascent_m(z), descent_m=total_ascent_m(-z),
                     start_lat_deg=float(lat[0]), start_lon_deg=float(lon[0]))
    return out


def _node_distances(s: np.ndarray, still: np.ndarray, max_length_m: float) -> np.ndarray:
    """Segment boundaries along the logged path: every ``max_length_m`` and at every stop.

    The boundaries do not follow the log's sampling, so the segments (and the model's
    discretisation) are the same whatever the logger's rate.
    """
    step = 0.999 * max_length_m
    where = np.unique(np.r_[np.arange(0.0, s[-1], step), s[still], s[-1]])
    keep = np.r_[True, np.diff(where) >= 0.5]  # no sliver segments: 0.5 m at least
    keep[-1] = True
    where = where[keep]
    if where.size > 2 and where[-1] - where[-2] < 0.5:
        where = np.delete(where, -2)
    # a boundary dropped as a sliver must not leave a segment longer than the maximum
    gaps = np.flatnonzero(np.diff(where) > max_length_m)
    if gaps.size:
        extra = [np.linspace(where[g], where[g + 1], int(np.ceil((where[g + 1] - where[g])
                                                                   / step)) + 1)[1:-1]
                 for g in gaps]
        where = np.unique(np.r_[where, np.concatenate(extra)])
    return where


def _trace_segments(samples: pd.DataFrame, source: str, name: str | None
                    ) -> tuple[pd.DataFrame, np.ndarray, np.ndarray]:
    """Each moving step of a speed–time trace is a segment (see the module notes)."""
    t = samples["t_s"].to_numpy(dtype=float)
    v = np.maximum(_fill(t, samples["speed_mps"].to_numpy(dtype=float)), 0.0)
    grade_s = (_fill(t, samples["grade"].to_numpy(dtype=float)) if "grade" in samples
               else np.zeros(t.size))
    road = 0.5 * (v[:-1] + v[1:]) * np.diff(t)
    moving = road > 1e-6
    if not moving.any():
        raise TripsimInputError("the trace never moves (every speed is zero)", source)
    idx = np.flatnonzero(moving)
    # a moving step's time runs from the end of the one before: a stop's wait goes to the
    # step that leaves it, and the last step takes the time to the trace's end
    t_node = np.r_[t[0], t[idx[:-1] + 1], t[-1]]
    v_node = np.r_[v[idx[0]], v[idx + 1]]
    surface = road[idx]
    grade = 0.5 * (grade_s[idx] + grade_s[idx + 1])
    z = 100.0 + np.r_[0.0, np.cumsum(surface * grade / np.sqrt(1.0 + grade**2))]
    zero = np.zeros(idx.size + 1)
    segments = _segments_table(surface, True, z, zero, zero)
    segments.attrs.update(name=name or "speed–time trace", source=source,
                          elevation_source="trace grade" if "grade" in samples else "none",
                          ascent_raw_m=segments.attrs["ascent_m"], positions=False)
    return segments, v_node, t_node


# ------------------------------------------------------------------------- comparison
@dataclass(frozen=True)
class LogComparison:
    """Model against measurement along a logged drive.

    Attributes
    ----------
    basis : {"energy", "soc"}
        What the log measured: energy drawn (``battery_wh``) or state of charge.
    checkpoints : pandas.DataFrame
        At shares of the distance: ``km``, ``elapsed_min``, ``measured_wh``,
        ``model_wh``, ``diff_wh``, ``measured_soc``, ``model_soc`` (energies drawn since
        the start; with a SoC basis, measured energy = SoC drop × usable capacity).
    end : dict
        The same at the last measured point, with ``diff_pct`` of the measured energy.
    capacity_wh : float
        Usable capacity that converts state of charge to energy. [Wh]
    rms_soc_points : float or None
        Root-mean-square SoC difference over every segment boundary. [percentage points]
    """

    basis: str
    checkpoints: pd.DataFrame
    end: dict[str, float]
    capacity_wh: float
    rms_soc_points: float | None

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON."""
        return {"basis": self.basis, "capacity_wh": self.capacity_wh,
                "rms_soc_points": self.rms_soc_points, "end": dict(self.end),
                "checkpoints": self.checkpoints.to_dict(orient="records")}


def measured_energy_wh(log: LogDrive, capacity_wh: float) -> np.ndarray:
    """Energy drawn since the first sample at each boundary, as measured [Wh].

    From ``battery_wh``, or the state of charge's drop times ``capacity_wh``.
    """
    if log.measured_wh is not None:
        return log.measured_wh
    return (log.measured_soc[0] - log.measured_soc) * capacity_wh


def _model_nodes(trip: Trip) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Model energy drawn and SoC at every boundary, and the boundaries' km."""
    tr = trip.trace
    wh = np.r_[0.0, tr["cum_battery_wh"].to_numpy(dtype=float)]
    soc = np.r_[trip.summary.start_soc, tr["soc"].to_numpy(dtype=float)]
    reached = np.r_[True, tr["reached"].to_numpy()]
    wh[~reached] = np.nan
    soc[~reached] = np.nan
    km = np.r_[0.0, (tr["start_m"].to_numpy() + tr["length_m"].to_numpy()) / 1000.0]
    return wh, soc, km


def compare_log(trip: Trip, log: LogDrive) -> LogComparison:
    """Model against measured energy (and SoC) along the drive and at its end."""
    if not log.measured:
        raise TripsimInputError("the log carries no soc or battery_wh column to compare with",
                                log.source)
    capacity = float(trip.summary.capacity_wh)
    measured = measured_energy_wh(log, capacity)
    model_wh, model_soc, km = _model_nodes(trip)
    meas_soc = log.measured_soc if log.measured_soc is not None else np.full(km.size, np.nan)
    ok = np.flatnonzero(np.isfinite(measured) & np.isfinite(model_wh))
    if ok.size < 2:
        raise TripsimInputError("the log's battery measurements cover less than one segment",
                                log.source)
    elapsed_min = (log.node_t_s - log.node_t_s[0]) / 60.0
    picks = np.unique([ok[np.argmin(np.abs(km[ok] - f * km[ok[-1]]))] for f in CHECKPOINTS])

    def row(i: int) -> dict[str, float]:
        return {"km": float(km[i]), "elapsed_min": float(elapsed_min[i]),
                "measured_wh": float(measured[i]), "model_wh": float(model_wh[i]),
                "diff_wh": float(model_wh[i] - measured[i]),
                "measured_soc": float(meas_soc[i]), "model_soc": float(model_soc[i])}

    end = row(int(ok[-1]))
    end["diff_pct"] = (100.0 * end["diff_wh"] / end["measured_wh"]
                       if abs(end["measured_wh"]) > 1e-9 else float("nan"))
    rms = None
    if log.measured_soc is not None:
        both = np.isfinite(meas_soc) & np.isfinite(model_soc)
        rms = float(100.0 * np.sqrt(np.mean((model_soc[both] - meas_soc[both]) ** 2)))
    return LogComparison(log.basis or "soc", pd.DataFrame([row(int(i)) for i in picks]), end,
                         capacity, rms)


# ------------------------------------------------------------------------- calibration
@dataclass(frozen=True)
class LogFit:
    """Auxiliary base load and drive efficiency fitted to a logged drive (see the module notes).

    Attributes
    ----------
    aux_base_w, aux_base_w_ci : float, (float, float)
        Fitted base load and its interval. [W]
    drive_efficiency, drive_efficiency_ci : float or None, (float, float) or None
        Fitted battery-to-wheel efficiency (vehicles with a constant efficiency).
    efficiency_factor, efficiency_factor_ci : float, (float, float)
        Fitted efficiency over the vehicle file's (for a map: the factor on the map).
    file_aux_base_w, file_drive_efficiency : float, float or None
        The vehicle file's values.
    confidence : float
        Level of the intervals.
    readings : int
        Readings fitted, about ``step_s`` apart. [s]
    rms_wh : float
        Root-mean-square residual of a reading. [Wh]
    correlation : float
        Correlation of the two estimates (near ±1: the log cannot tell them apart).
    end_diff_pct_before, end_diff_pct_after : float
        Model minus measured energy at the end, with the file's values and with the
        fitted ones (the drive simulated again). [%]
    notes : tuple of str
    """

    aux_base_w: float
    aux_base_w_ci: tuple[float, float]
    drive_efficiency: float | None
    drive_efficiency_ci: tuple[float, float] | None
    efficiency_factor: float
    efficiency_factor_ci: tuple[float, float]
    file_aux_base_w: float
    file_drive_efficiency: float | None
    confidence: float
    readings: int
    step_s: float
    rms_wh: float
    correlation: float
    end_diff_pct_before: float = float("nan")
    end_diff_pct_after: float = float("nan")
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON."""
        out = {k: getattr(self, k) for k in self.__dataclass_fields__}
        for k in ("aux_base_w_ci", "drive_efficiency_ci", "efficiency_factor_ci", "notes"):
            out[k] = None if out[k] is None else list(out[k])
        out["method"] = ("least squares of the measured energy drawn since the start on the "
                         "model's traction energy and time (with an offset); Newey-West "
                         "intervals")
        return out


def _readings(t_node: np.ndarray, usable: np.ndarray, step_s: float) -> np.ndarray:
    """Boundaries about ``step_s`` apart among the usable ones."""
    idx = np.flatnonzero(usable)
    if idx.size == 0:
        return idx
    picks = [int(idx[0])]
    for i in idx[1:]:
        if t_node[i] - t_node[picks[-1]] >= step_s:
            picks.append(int(i))
    return np.asarray(picks)


def _parts(trip: Trip, vehicle: Vehicle) -> dict[str, np.ndarray]:
    """The model's demand of each segment split into the terms of the fit [Wh]."""
    tr = trip.trace
    t = tr["time_s"].to_numpy(dtype=float)
    t_all = t + tr["dwell_s"].to_numpy(dtype=float)
    traction = tr["traction_battery_w"].to_numpy(dtype=float)
    regen = tr["regen_w"].to_numpy(dtype=float)
    aux = tr["aux_power_w"].to_numpy(dtype=float)
    solar = tr["solar_power_w"].to_numpy(dtype=float)
    base = float(vehicle.auxiliary.base_w)
    return {"drive": (traction + regen) * t / J_PER_WH, "regen": regen * t / J_PER_WH,
            "hours": t_all / 3600.0, "climate": (aux - base) * t_all / J_PER_WH,
            "solar": solar * t_all / J_PER_WH,
            "refused": tr["demand_wh"].to_numpy(dtype=float)
            - tr["battery_wh"].to_numpy(dtype=float)}


def _newey_west(x: np.ndarray, resid: np.ndarray) -> np.ndarray:
    """Covariance of least-squares coefficients allowing correlated residuals (Bartlett)."""
    n = resid.size
    lag = int(np.ceil(4.0 * (n / 100.0) ** (2.0 / 9.0)))
    xe = x * resid[:, None]
    meat = xe.T @ xe
    for k in range(1, min(lag, n - 1) + 1):
        g = xe[k:].T @ xe[:-k]
        meat += (1.0 - k / (lag + 1.0)) * (g + g.T)
    bread = np.linalg.inv(x.T @ x)
    return bread @ meat @ bread * n / (n - x.shape[1])


def fit_log(trip: Trip, log: LogDrive, vehicle: Vehicle, *, step_s: float = STEP_S,
            confidence: float = 0.95) -> LogFit:
    """Fit the auxiliary base load and the drive efficiency to a log's measured energy.

    Parameters
    ----------
    trip : Trip
        The log driven by :func:`tripsim.simulate.simulate` at its recorded speeds with
        ``vehicle`` (energy battery model).
    log : LogDrive
        The log, with ``soc`` or ``battery_wh``.
    vehicle : Vehicle
        The vehicle file the trip was driven with.
    step_s : float, default 10
        Spacing of the readings fitted. [s]
    confidence : float, default 0.95
        Level of the intervals.

    Returns
    -------
    LogFit

    Raises
    ------
    TripsimInputError
        When the log gives fewer than :data:`MIN_READINGS` readings.
    """
    from scipy import stats

    parts = _parts(trip, vehicle)
    measured = measured_energy_wh(log, float(trip.summary.capacity_wh))
    reached = np.r_[True, trip.trace["reached"].to_numpy()]
    picks = _readings(log.node_t_s, np.isfinite(measured) & reached, step_s)
    if picks.size < MIN_READINGS:
        raise TripsimInputError(f"the log gives {picks.size} battery readings {step_s:g} s "
                                f"apart; the fit needs {MIN_READINGS} or more", log.source)
    cum = {k: np.r_[0.0, np.cumsum(v)][picks] for k, v in parts.items()}
    y = measured[picks] + cum["refused"] + cum["regen"] - cum["climate"] + cum["solar"]
    x = np.column_stack([np.ones(picks.size), cum["drive"], cum["hours"]])
    coef, *_ = np.linalg.lstsq(x, y, rcond=None)
    resid = y - x @ coef
    cov = _newey_west(x, resid)[1:, 1:]
    half = stats.t.ppf(0.5 + confidence / 2.0, picks.size - 3) * np.sqrt(np.diag(cov))
    a, base = float(coef[1]), float(coef[2])
    a_ci = (a - half[0], a + half[0])
    factor_ci = (1.0 / a_ci[1], 1.0 / a_ci[0] if a_ci[0] > 0 else float("inf"))
    eta0 = vehicle.drivetrain.efficiency if vehicle.drivetrain.efficiency_map is None else None
    notes = []
    if eta0 is None:
        notes.append("the vehicle has an efficiency map: the fit gives a factor on the map")
    corr = float(cov[0, 1] / np.sqrt(cov[0, 0] * cov[1, 1]))
    if abs(corr) > 0.99:
        notes.append("the log hardly tells base load from efficiency apart (correlation "
                     f"{corr:+.2f}): a drive with stops or slow stretches separates them")
    if log.basis == "soc":
        notes.append("energy measured as state of charge × the model's usable capacity "
                     f"({trip.summary.capacity_wh / 1000:.2f} kWh): an error in it scales the "
                     "fitted efficiency")
    return LogFit(
        aux_base_w=base, aux_base_w_ci=(base - half[1], base + half[1]),
        drive_efficiency=None if eta0 is None else eta0 / a,
        drive_efficiency_ci=None if eta0 is None else (eta0 * factor_ci[0], eta0 * factor_ci[1]),
        efficiency_factor=1.0 / a, efficiency_factor_ci=factor_ci,
        file_aux_base_w=float(vehicle.auxiliary.base_w), file_drive_efficiency=eta0,
        confidence=confidence, readings=int(picks.size), step_s=step_s,
        rms_wh=float(np.sqrt(np.mean(resid**2))), correlation=corr, notes=tuple(notes))


def fitted_vehicle(vehicle: Vehicle, fit: LogFit) -> Vehicle:
    """The vehicle with the fitted base load and efficiency (each kept within its range)."""
    data = vehicle.model_dump()
    data["auxiliary"]["base_w"] = float(np.clip(fit.aux_base_w, 0.0, 20_000.0))
    dt = data["drivetrain"]
    if dt.get("efficiency_map") is None:
        dt["efficiency"] = float(np.clip(fit.drive_efficiency, 0.05, 1.0))
    else:
        table = np.asarray(dt["efficiency_map"]["efficiency"]) * fit.efficiency_factor
        dt["efficiency_map"]["efficiency"] = np.clip(table, 0.05, 1.0).tolist()
    return Vehicle.model_validate(data)


# ------------------------------------------------------------------------- the whole job
@dataclass(frozen=True)
class LoggedDrive:
    """A log driven by the model: the trip, and with measurements the comparison and fit."""

    log: LogDrive
    trip: Trip
    comparison: LogComparison | None = None
    fit: LogFit | None = None
    fitted_trip: Trip | None = field(default=None, repr=False)
    notes: tuple[str, ...] = ()

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON (the ``log`` part of ``tripsim simulate --from-log --json``)."""
        s = self.trip.summary
        return {
            "source": self.log.source, "kind": "positions" if self.log.positions else "trace",
            "basis": self.log.basis, "segments": len(self.log.segments),
            "logged_km": float(s.distance_km), "logged_h": float(s.duration_h),
            "range_km": float(s.range_km),
            "range_means": "usable energy at the pack's temperature over the drive's "
                           "consumption",
            "comparison": None if self.comparison is None else self.comparison.to_dict(),
            "fit": None if self.fit is None else self.fit.to_dict(),
            "notes": list(self.log.notes) + list(self.notes), "caution": CAUTION,
        }


def drive_log(log: LogDrive, vehicle: Vehicle, *, conditions: Conditions | None = None,
              weather: Weather | None = None, solar: SolarOptions | None = None,
              drive: DriveOptions | None = None, depart: str | pd.Timestamp | None = None,
              start_soc: float | None = None, battery_model: str = "energy",
              step_s: float = STEP_S, confidence: float = 0.95) -> LoggedDrive:
    """Drive a log at its recorded speeds; compare and calibrate when it measured the battery.

    Parameters
    ----------
    log : LogDrive
        From :func:`prepare_log`.
    vehicle : Vehicle
        The vehicle file.
    conditions, weather, solar, drive, battery_model
        As for :func:`tripsim.simulate.simulate` (a speed–time trace takes no weather).
    depart : str or Timestamp, optional
        Departure for a log whose times are seconds (a clock in the log is its own).
    start_soc : float, optional
        State of charge at the start; default the log's first ``soc``, else 1.
    step_s, confidence : float
        Of the calibration (:func:`fit_log`).

    Returns
    -------
    LoggedDrive
    """
    if not log.positions and weather is not None:
        raise TripsimInputError("a speed–time trace has no place to take weather at: give "
                                "the air with --temp-c (and --wind-*)", "--weather")
    if log.depart is not None and depart is not None:
        raise TripsimInputError("the log's own clock gives the departure", "--depart")
    when = log.depart if log.depart is not None else depart
    notes = []
    if start_soc is None:
        start_soc = 1.0
        if log.measured_soc is not None and np.isfinite(log.measured_soc[0]):
            start_soc = float(np.clip(log.measured_soc[0], 1e-3, 1.0))
        else:
            notes.append("start state of charge 1.0 (the log gives none; --start-soc)")
    common = dict(conditions=conditions, weather=weather, solar=solar, drive=drive,
                  depart=when, start_soc=start_soc, battery_model=battery_model,
                  recorded=log.recorded)
    trip = simulate(log.segments, vehicle, **common)
    if not log.measured:
        return LoggedDrive(log, trip, notes=tuple(notes))
    comparison = compare_log(trip, log)
    if battery_model != "energy":
        notes.append("the calibration needs the energy battery model")
        return LoggedDrive(log, trip, comparison, notes=tuple(notes))
    try:
        fit = fit_log(trip, log, vehicle, step_s=step_s, confidence=confidence)
    except TripsimInputError as exc:
        notes.append(f"no calibration: {exc.problem}")
        return LoggedDrive(log, trip, comparison, notes=tuple(notes))
    fitted = simulate(log.segments, fitted_vehicle(vehicle, fit), **common)
    after = compare_log(fitted, log).end
    fit = _with_ends(fit, comparison.end["diff_pct"], after["diff_pct"])
    return LoggedDrive(log, trip, comparison, fit, fitted, tuple(notes))


def _with_ends(fit: LogFit, before: float, after: float) -> LogFit:
    return replace(fit, end_diff_pct_before=before, end_diff_pct_after=after)


# ------------------------------------------------------------------------- synthetic logs
def log_from_trace(trace: pd.DataFrame, *, start_soc: float = 1.0,
                   rate_hz: float = 1.0) -> pd.DataFrame:
    """What a logger sampling at ``rate_hz`` would record of a simulated trip.

    For checks and demos: the position, speed, elevation, state of charge and energy drawn
    of a :func:`tripsim.simulate.simulate` trace at regular times.  Within a segment the
    acceleration is constant (as the model drives it); waits at the segment's end hold
    position and speed 0; traction energy runs linearly over the moving time and the
    auxiliary load (less the sun) over the moving time and the wait, and the state of
    charge follows the energy.

    Parameters
    ----------
    trace : pandas.DataFrame
        A trip's trace.
    start_soc : float, default 1
        The trip's state of charge at departure.
    rate_hz : float, default 1
        Samples per second.

    Returns
    -------
    pandas.DataFrame
        ``t_s``, ``lat_deg``, ``lon_deg``, ``speed_mps``, ``elevation_m``, ``soc``,
        ``battery_wh``; ``attrs["start"]`` is the trip's departure.
    """
    el = trace["elapsed_s"].to_numpy(dtype=float)
    move = trace["time_s"].to_numpy(dtype=float)
    hold = trace["dwell_s"].to_numpy(dtype=float) + trace["stop_s"].to_numpy(dtype=float)
    v0 = trace["v_start_mps"].to_numpy(dtype=float)
    v1 = trace["v_end_mps"].to_numpy(dtype=float)
    length = trace["length_m"].to_numpy(dtype=float)
    tau = np.arange(0.0, el[-1] + move[-1] + hold[-1], 1.0 / rate_hz)
    i = np.clip(np.searchsorted(el, tau, side="right") - 1, 0, el.size - 1)
    dt = tau - el[i]
    tm = np.minimum(dt, move[i])
    accel = (v1[i] - v0[i]) / move[i]
    rest = (v0[i] + v1[i]) < 1e-9  # rest to rest: taken at its mean speed
    dist = np.where(rest, length[i] * tm / move[i], v0[i] * tm + 0.5 * accel * tm**2)
    share = np.clip(dist / length[i], 0.0, 1.0)
    speed = np.where(dt < move[i], np.where(rest, length[i] / move[i], v0[i] + accel * tm),
                     0.0)
    used = trace["battery_wh"].to_numpy(dtype=float)
    soc_end = trace["soc"].to_numpy(dtype=float)
    soc_before = np.r_[start_soc, soc_end[:-1]]
    traction = (trace["traction_battery_w"].to_numpy(dtype=float) * move / J_PER_WH)[i]
    steady = ((trace["aux_power_w"].to_numpy(dtype=float)
               - trace["solar_power_w"].to_numpy(dtype=float)) * (move + hold) / J_PER_WH)[i]
    asked = traction + steady
    taken = np.where(np.abs(asked) > 1e-12, used[i] / np.where(asked == 0.0, 1.0, asked), 0.0)
    drawn = taken * (traction * np.clip(dt / move[i], 0.0, 1.0)
                     + steady * np.clip(dt / (move[i] + hold[i]), 0.0, 1.0))
    along = np.where(np.abs(used[i]) > 1e-12, drawn / np.where(used[i] == 0.0, 1.0, used[i]),
                     0.0)
    lat, lon = trace["lat_deg"].to_numpy(), trace["lon_deg"].to_numpy()
    lat_end, lon_end = trace["lat_end_deg"].to_numpy(), trace["lon_end_deg"].to_numpy()
    ele = trace["elevation_m"].to_numpy(dtype=float)
    grade = trace["grade"].to_numpy(dtype=float)
    out = pd.DataFrame({
        "t_s": tau,
        "lat_deg": lat[i] + share * (lat_end[i] - lat[i]),
        "lon_deg": lon[i] + share * (lon_end[i] - lon[i]),
        "speed_mps": speed,
        "elevation_m": ele[i] + grade[i] * share * length[i],
        "soc": soc_before[i] + along * (soc_end[i] - soc_before[i]),
        "battery_wh": np.r_[0.0, np.cumsum(used)[:-1]][i] + drawn,
    })
    out.attrs.update(start=trace["clock"].iloc[0], kind="positions", notes=[])
    return out
