"""The trip simulation: segments + vehicle + conditions → trace and summary.

This module composes :mod:`tripsim.energy` (the one energy model: the course driven in
its air, forces, drivetrain, auxiliaries, sun) and :mod:`tripsim.battery` (the one
state-of-charge pass) into a trace with one row a segment and a summary; it holds no
physics of its own.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from tripsim.battery import SocResult, rint_soc, soc_pass
from tripsim.drive import DriveOptions
from tripsim.energy import (
    Conditions,
    Course,
    RecordedDrive,
    Runs,
    SolarOptions,
    drive_runs,
    run_capacity_wh,
)
from tripsim.errors import TripsimInputError
from tripsim.summary import Summary, summarize
from tripsim.timebase import epoch_seconds
from tripsim.units import J_PER_WH, KPH_PER_MPS
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather
from tripsim.zones import local_time

__all__ = ["DEFAULT_DEPART", "Conditions", "RecordedDrive", "SolarOptions", "StopEvents", "Trip",
           "simulate"]

#: Departure assumed when none is given, local time of the route's start (only the clock,
#: the weather and the sun depend on it).
DEFAULT_DEPART = "2026-06-21T08:00:00"


@dataclass(frozen=True)
class StopEvents:
    """Stops along the route (charging or overnight), at the ends of segments.

    Attributes
    ----------
    segment : array of int
        Segment after which each stop happens.
    stop_s : array
        Time the stop takes: detour driving, fixed time, waiting, charging. [s]
    detour_wh : array
        Battery energy of the detour there and back. [Wh]
    charge_to_soc : array
        State of charge on leaving the site (NaN: no charging). The battery is never
        discharged to reach it.
    """

    segment: np.ndarray
    stop_s: np.ndarray
    detour_wh: np.ndarray
    charge_to_soc: np.ndarray

    def per_segment(self, n: int) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Stop time, detour energy and target SoC as arrays over ``n`` segments."""
        stop_s, detour, target = np.zeros(n), np.zeros(n), np.full(n, np.nan)
        idx = np.asarray(self.segment, dtype=int)
        if idx.size and (idx.min() < 0 or idx.max() >= n):
            raise TripsimInputError("a stop lies outside the route", "stops")
        np.add.at(stop_s, idx, self.stop_s)
        np.add.at(detour, idx, self.detour_wh)
        target[idx] = np.where(np.isnan(self.charge_to_soc), 0.0, self.charge_to_soc)
        return stop_s, detour, target


@dataclass(frozen=True)
class Trip:
    """Result of :func:`simulate`: the trace (one row a segment) and the summary."""

    trace: pd.DataFrame
    summary: Summary


def _check_options(start_soc: float, battery_model: str) -> None:
    if not (np.isfinite(start_soc) and 0.0 < start_soc <= 1.0):
        raise TripsimInputError(f"start SoC {start_soc} must be in (0, 1]", "--start-soc")
    if battery_model not in ("energy", "rint"):
        raise TripsimInputError(f"battery model {battery_model!r}: expected 'energy' or 'rint'",
                                "--battery-model")


def _rint(vehicle: Vehicle, demand_wh: np.ndarray, duration_s: np.ndarray, capacity_wh: float,
          start_soc: float) -> SocResult:
    bat = vehicle.battery
    if bat.internal_resistance_ohm is None or bat.ocv is None:
        raise TripsimInputError(
            "the internal-resistance model needs [battery] internal_resistance_ohm and ocv",
            "--battery-model",
        )
    return rint_soc(demand_wh * J_PER_WH / duration_s, duration_s, capacity_wh=capacity_wh,
                    start_soc=start_soc, resistance_ohm=bat.internal_resistance_ohm,
                    ocv_soc=np.asarray(bat.ocv.x), ocv_v=np.asarray(bat.ocv.y))


def simulate(
    segments: pd.DataFrame,
    vehicle: Vehicle,
    *,
    conditions: Conditions | None = None,
    drive: DriveOptions | None = None,
    depart: pd.Timestamp | str | None = None,
    start_soc: float = 1.0,
    battery_model: Literal["energy", "rint"] = "energy",
    default_speed_kph: float | None = None,
    weather: Weather | None = None,
    solar: SolarOptions | None = None,
    stops: StopEvents | None = None,
    recorded: RecordedDrive | None = None,
) -> Trip:
    """Simulate driving a vehicle over segments.

    Parameters
    ----------
    segments : pandas.DataFrame
        From :func:`tripsim.segments.segment_route`.
    vehicle : Vehicle
        The vehicle.
    conditions : Conditions, optional
        Fixed air; default 20 °C, standard pressure at elevation, no wind.
    drive : DriveOptions, optional
        Driver behaviour.
    depart : Timestamp or ISO 8601 string, optional
        Departure; without an offset it is local time of the route's start (daylight
        saving included, :func:`tripsim.zones.local_time`); default
        :data:`DEFAULT_DEPART`.
    start_soc : float, default 1.0
        State of charge at departure, 0-1.
    battery_model : {"energy", "rint"}, default "energy"
        Energy counting, or internal resistance with an OCV curve.
    default_speed_kph : float, optional
        Limit assumed on segments that have none. [km/h]
    weather : Weather, optional
        Weather in time (file or clear sky); replaces ``conditions``.  Each segment
        takes the weather at its own clock time (see :func:`tripsim.energy.drive_runs`).
    solar : SolarOptions, optional
        How the panels see the sky while driving (shading, sky model).  Solar gain
        needs irradiance, so it is counted only with ``weather``.
    stops : StopEvents, optional
        Charging or overnight stops (from :mod:`tripsim.plan`); they shift the
        clock, cost their detour energy and raise the state of charge.  Energy
        counting only.
    recorded : RecordedDrive, optional
        Speeds and times as driven (a logged drive), in place of the speed profile.

    Returns
    -------
    Trip
        ``trace`` (one row a segment, see DEVELOPERS.md for the columns) and
        ``summary``.
    """
    drive = drive or DriveOptions()
    _check_options(start_soc, battery_model)
    if stops is not None and battery_model != "energy":
        raise TripsimInputError("stops need the energy battery model", "--battery-model")
    depart_ts = local_time(depart if depart is not None else DEFAULT_DEPART, segments)
    course = Course.from_segments(segments, vehicle, drive, default_speed_kph, recorded)
    n = course.n
    stop_s, detour_wh, charge_to = (stops.per_segment(n) if stops is not None
                                    else (np.zeros(n), np.zeros(n), np.full(n, np.nan)))
    runs = drive_runs(course, vehicle, np.array([epoch_seconds(depart_ts)]), drive_opts=drive,
                      weather=weather, conditions=conditions, solar=solar, stop_s=stop_s,
                      columns=True)
    demand = runs.demand_wh()[0]
    full_wh = vehicle.battery.usable_kwh * 1000.0
    capacity_wh = float(run_capacity_wh(vehicle, runs.temp_mean_c)[0])
    total_s = runs.time_s[0] + course.dwell_s
    charged: np.ndarray | float = 0.0
    at_site: np.ndarray | float = np.nan
    if battery_model == "energy":
        p = soc_pass(demand[None, :], full_wh=full_wh, usable_wh=capacity_wh,
                     start_soc=start_soc, detour_wh=detour_wh[None, :] if stops else None,
                     charge_to_soc=charge_to[None, :] if stops else None)
        soc = SocResult(p.soc[0], p.accepted_wh[0], 0.0, int(p.stranded_index[0]),
                        float(p.stranded_fraction[0]), np.zeros(0, dtype=bool), np.zeros(0))
        if stops is not None:
            charged, at_site = p.charged_wh[0], p.soc_at_site[0]
    else:
        soc = _rint(vehicle, demand, total_s, capacity_wh, start_soc)
    cols = _columns(segments, course, runs, stop_s if stops is not None else 0.0,
                    detour_wh if stops is not None else 0.0, charged, at_site)
    trace, data = _trace(cols, soc, depart_ts)
    summary = summarize(trace, soc, capacity_wh=capacity_wh, start_soc=start_soc,
                        attrs=dict(segments.attrs), vehicle_name=vehicle.name,
                        battery_model=battery_model, columns=data,
                        sums={k: float(v[0]) for k, v in runs.sums.items()})
    return Trip(trace=trace, summary=summary)


def _columns(segments: pd.DataFrame, course: Course, runs: Runs, stop_s: np.ndarray | float,
             detour_wh: np.ndarray | float, charged_wh: np.ndarray | float,
             at_site: np.ndarray | float) -> dict[str, np.ndarray | float]:
    """The trace's columns as arrays, or as one number where a column is constant."""
    seg = {c: segments[c].to_numpy() for c in _SEGMENT_COLUMNS}
    v = runs.v_nodes_mps[0]
    time_s = runs.time_s[0]
    speed = course.slope_length_m / time_s
    steady = runs.constant_air
    cols: dict[str, np.ndarray | float] = {
        **seg, "elapsed_s": runs.elapsed_s[0], "v_start_mps": v[:-1], "v_end_mps": v[1:],
        "speed_mps": speed, "speed_kph": speed * KPH_PER_MPS, "time_s": time_s,
        "dwell_s": course.dwell_s, "stop_s": stop_s,
        "temp_c": float(runs.temp_c[0, 0]) if steady else runs.temp_c[0],
        "pressure_pa": runs.pressure_pa[0], "density_kg_m3": runs.density_kg_m3[0],
        "headwind_mps": runs.headwind_mps[0],
        "ghi_w_m2": float(runs.ghi_w_m2[0, 0]) if steady else runs.ghi_w_m2[0],
        "solar_power_w": 0.0 if runs.solar_power_w is None else runs.solar_power_w[0],
        "demand_wh": runs.demand_wh()[0],
        "detour_wh": detour_wh, "charged_wh": charged_wh, "soc_at_stop": at_site,
    }
    cols.update({k: v[0] for k, v in runs.columns.items()})
    if steady:
        cols["aux_power_w"] = float(runs.columns["aux_power_w"][0, 0])
    return cols


#: Segment columns copied into the trace.
_SEGMENT_COLUMNS = ("start_m", "length_m", "slope_length_m", "lat_deg", "lon_deg",
                    "lat_end_deg", "lon_end_deg", "elevation_m", "grade", "heading_deg",
                    "speed_limit_kph")

#: Float columns of a trace, in order (``clock`` comes first, ``reached`` last).
TRACE_COLUMNS = (
    "elapsed_s", "start_m", "length_m", "slope_length_m", "lat_deg", "lon_deg", "lat_end_deg",
    "lon_end_deg", "elevation_m", "grade", "heading_deg", "speed_limit_kph", "v_start_mps",
    "v_end_mps", "speed_mps", "speed_kph", "accel_mps2", "time_s", "dwell_s", "stop_s",
    "temp_c", "pressure_pa",
    "density_kg_m3", "headwind_mps", "f_aero_n", "f_rolling_n", "f_grade_n", "f_inertia_n",
    "f_total_n", "wheel_power_w", "traction_battery_w", "drive_loss_w", "regen_w",
    "regen_loss_w", "friction_brake_w", "aux_power_w", "ghi_w_m2", "solar_power_w",
    "demand_wh", "battery_wh", "cum_battery_wh", "battery_loss_wh", "detour_wh",
    "charged_wh", "soc_at_stop", "soc",
)


def _constant(value: float, n: int) -> pd.arrays.SparseArray:
    """A column holding one number: stored once (a sparse array whose fill is the number)."""
    dtype = pd.SparseDtype(float, float(value))
    try:  # no values stored at all: made directly, without scanning n copies of the number
        from pandas._libs.sparse import IntIndex

        return pd.arrays.SparseArray._simple_new(np.empty(0), IntIndex(n, np.empty(0, np.int32)),
                                                 dtype)
    except (ImportError, AttributeError, TypeError):  # pandas changed its internals
        return pd.arrays.SparseArray(np.broadcast_to(float(value), (n,)), dtype=dtype)


def _trace(cols: dict[str, np.ndarray | float], soc: SocResult,
           depart: pd.Timestamp) -> tuple[pd.DataFrame, dict[str, np.ndarray | float]]:
    """Assemble the trace from the computed columns without copying them again.

    Columns that hold one number (no stops, no sun, fixed air) are stored once.
    """
    n = cols["time_s"].size
    idx = soc.stranded_index
    accepted = soc.accepted_wh
    if idx >= 0:
        accepted = accepted.copy()
        accepted[idx + 1:] = 0.0
    derived = {"battery_wh": accepted, "cum_battery_wh": np.cumsum(accepted),
               "battery_loss_wh": soc.loss_wh, "soc": soc.soc_end}
    utc_ns = depart.as_unit("ns").value + np.rint(cols["elapsed_s"] * 1e9).astype(np.int64)
    clock = pd.DatetimeIndex(utc_ns.view("datetime64[ns]")).tz_localize(
        "UTC").tz_convert(depart.tzinfo)
    data: dict[str, object] = {"clock": clock}
    for name in TRACE_COLUMNS:
        value = derived[name] if name in derived else cols[name]
        data[name] = (_constant(value, n) if np.ndim(value) == 0
                      else np.ascontiguousarray(value, dtype=float))
    data["reached"] = np.ones(n, dtype=bool) if idx < 0 else np.arange(n) < idx
    # one block per column, no consolidation copy: every column is written once
    trace = pd.DataFrame(data, copy=False)
    trace.index.name = "segment"
    return trace, {**cols, **derived}
