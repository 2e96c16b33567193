"""The trip simulation: segments + vehicle + conditions → trace and summary.

This module only composes the physics of :mod:`tripsim.drive`,
:mod:`tripsim.air`, :mod:`tripsim.roadload`, :mod:`tripsim.powertrain`,
:mod:`tripsim.cabin` and :mod:`tripsim.battery`; it holds no physics of its
own.  Everything is vectorised over segments except the two sequential passes
(speed profile and state of charge), which run as compiled loops.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np
import pandas as pd

from tripsim import air, cabin, roadload
from tripsim.battery import SocResult, energy_soc, rint_soc
from tripsim.drive import DriveOptions, clock, segment_times_s, speed_profile, target_speed_mps
from tripsim.errors import TripsimInputError
from tripsim.powertrain import split_wheel_power
from tripsim.route import StopKind
from tripsim.summary import Summary, summarize
from tripsim.units import G_MPS2, J_PER_WH, KPH_PER_MPS
from tripsim.vehicle import Vehicle

__all__ = ["Conditions", "Trip", "simulate"]


@dataclass(frozen=True)
class Conditions:
    """Weather along the trip.  Scalars hold everywhere; arrays give one value a segment.

    Parameters
    ----------
    temp_c : float or array, default 20
        Ambient air temperature. [°C]
    pressure_pa : float, array or None, default None
        Air pressure; None takes the standard atmosphere at each segment's
        elevation. [Pa]
    wind_speed_mps : float or array, default 0
        Wind speed at ``wind_height_m`` (10 m for weather stations). [m/s]
    wind_from_deg : float or array, default 0
        Direction the wind blows from, degrees east of north.
    wind_height_m : float, default 10
        Height the wind speed was measured at. [m]
    """

    temp_c: float | np.ndarray = 20.0
    pressure_pa: float | np.ndarray | None = None
    wind_speed_mps: float | np.ndarray = 0.0
    wind_from_deg: float | np.ndarray = 0.0
    wind_height_m: float = 10.0

    def __post_init__(self) -> None:
        temp = np.asarray(self.temp_c, dtype=float)
        if not np.all(np.isfinite(temp)) or temp.min() < -60 or temp.max() > 60:
            raise TripsimInputError("temperature must be finite and within -60 to 60 °C", "temp_c")
        wind = np.asarray(self.wind_speed_mps, dtype=float)
        if not np.all(np.isfinite(wind)) or wind.min() < 0 or wind.max() > 75:
            raise TripsimInputError("wind speed must be within 0 to 75 m/s", "wind_speed_mps")
        if self.pressure_pa is not None:
            p = np.asarray(self.pressure_pa, dtype=float)
            if not np.all(np.isfinite(p)) or p.min() < 30_000 or p.max() > 110_000:
                raise TripsimInputError("pressure must be within 30 000 to 110 000 Pa",
                                        "pressure_pa")


@dataclass(frozen=True)
class Trip:
    """Result of :func:`simulate`: the trace (one row a segment) and the summary."""

    trace: pd.DataFrame
    summary: Summary


def _speed_limits_mps(segments: pd.DataFrame, default_speed_kph: float | None) -> np.ndarray:
    limits = segments["speed_limit_kph"].to_numpy(dtype=float)
    missing = ~np.isfinite(limits)
    if missing.any():
        if default_speed_kph is None:
            raise TripsimInputError(
                f"{int(missing.sum())} of {limits.size} segments have no speed limit; "
                "give a cruising speed (--speed-kph) for routes without limits",
                segments.attrs.get("source", "route"),
            )
        if not (1.0 <= default_speed_kph <= 300.0):
            raise TripsimInputError(f"speed {default_speed_kph} km/h is out of range 1-300",
                                    "--speed-kph")
        limits = np.where(missing, default_speed_kph, limits)
    return limits / KPH_PER_MPS


def _stop_nodes(segments: pd.DataFrame, drive: DriveOptions) -> tuple[np.ndarray, np.ndarray]:
    kind = segments["stop_kind_end"].to_numpy()
    stops = kind >= StopKind.STOP_SIGN
    if not drive.stop_at_signals:
        stops &= kind != StopKind.SIGNALS
    dwell = np.where(kind == StopKind.SIGNALS, drive.signal_wait_s, 0.0)
    dwell = np.where(kind == StopKind.STOP_SIGN, drive.stop_sign_wait_s, dwell) * stops
    dwell[-1] = 0.0
    return np.concatenate([[True], stops]), dwell


def _air(
    segments: pd.DataFrame, vehicle: Vehicle, cond: Conditions, n: int
) -> dict[str, np.ndarray]:
    mid_ele = 0.5 * (segments["elevation_m"].to_numpy() + segments["elevation_end_m"].to_numpy())
    temp = np.broadcast_to(np.asarray(cond.temp_c, dtype=float), (n,))
    pressure = (air.pressure_from_elevation(mid_ele) if cond.pressure_pa is None
                else np.broadcast_to(np.asarray(cond.pressure_pa, dtype=float), (n,)))
    wind = air.wind_at_height(np.broadcast_to(np.asarray(cond.wind_speed_mps, float), (n,)),
                              vehicle.body.height_m, reference_height_m=cond.wind_height_m)
    headwind = air.headwind_mps(wind, cond.wind_from_deg, segments["heading_deg"].to_numpy())
    return {"temp_c": temp, "pressure_pa": np.asarray(pressure, dtype=float),
            "density_kg_m3": air.air_density(temp, pressure), "headwind_mps": headwind}


def _soc(
    vehicle: Vehicle, model: str, demand_wh: np.ndarray, duration_s: np.ndarray,
    capacity_wh: float, start_soc: float,
) -> SocResult:
    if model == "energy":
        return energy_soc(demand_wh, capacity_wh, start_soc)
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
) -> Trip:
    """Simulate driving a vehicle over segments.

    Parameters
    ----------
    segments : pandas.DataFrame
        From :func:`tripsim.segments.segment_route`.
    vehicle : Vehicle
        The vehicle.
    conditions : Conditions, optional
        Weather; default 20 °C, standard pressure at elevation, no wind.
    drive : DriveOptions, optional
        Driver behaviour.
    depart : Timestamp or ISO 8601 string with time zone, optional
        Departure; default 2026-06-21 08:00 UTC (only the clock depends on it).
    start_soc : float, default 1.0
        State of charge at departure, 0-1.
    battery_model : {"energy", "rint"}, default "energy"
        Energy counting, or internal resistance with an OCV curve.
    default_speed_kph : float, optional
        Limit assumed on segments that have none. [km/h]

    Returns
    -------
    Trip
        ``trace`` (one row a segment, see DEVELOPERS.md for the columns) and
        ``summary``.
    """
    cond = conditions or Conditions()
    drive = drive or DriveOptions()
    if not (0.0 < start_soc <= 1.0):
        raise TripsimInputError(f"start SoC {start_soc} must be in (0, 1]", "--start-soc")
    if battery_model not in ("energy", "rint"):
        raise TripsimInputError(f"battery model {battery_model!r}: expected 'energy' or 'rint'",
                                "--battery-model")
    n = len(segments)
    if n == 0:
        raise TripsimInputError("the route has no segments", segments.attrs.get("source"))
    depart_ts = pd.Timestamp(depart if depart is not None else "2026-06-21T08:00:00Z")
    body, dt = vehicle.body, vehicle.drivetrain
    mass, m_eff = vehicle.mass_kg, vehicle.inertial_mass_kg
    grade = segments["grade"].to_numpy(dtype=float)
    slope_m = segments["slope_length_m"].to_numpy(dtype=float)
    env = _air(segments, vehicle, cond, n)
    cos_theta = 1.0 / np.sqrt(1.0 + grade**2)
    aero_k = 0.5 * env["density_kg_m3"] * body.drag_area_m2
    target = target_speed_mps(
        _speed_limits_mps(segments, default_speed_kph), segments["curvature_per_m"].to_numpy(),
        speed_factor=drive.speed_factor, lateral_accel_mps2=drive.lateral_accel_mps2,
        top_speed_mps=dt.top_speed_kph / KPH_PER_MPS,
    )
    stop_node, dwell_s = _stop_nodes(segments, drive)
    f_grade = roadload.grade_force_n(mass, grade)
    v = speed_profile(
        slope_m, target, stop_node, accel_mps2=drive.accel_mps2, decel_mps2=drive.decel_mps2,
        power_w=dt.motor_max_kw * 1000.0, inertial_mass_kg=m_eff,
        resist_n=f_grade + roadload.rolling_force_n(mass, body.crr, grade),
        resist_n_per_mps=mass * G_MPS2 * body.crr_per_mps * cos_theta,
        aero_kg_per_m=aero_k, headwind_mps=env["headwind_mps"], min_speed_mps=drive.min_speed_mps,
    )
    v0, v1 = v[:-1], v[1:]
    time_s = segment_times_s(slope_m, v, accel_mps2=drive.accel_mps2, decel_mps2=drive.decel_mps2)
    v_mean = 0.5 * (v0 + v1)
    accel = (v1**2 - v0**2) / (2.0 * slope_m)
    forces = {
        "f_aero_n": roadload.aero_force_n(
            env["density_kg_m3"], body.drag_area_m2,
            roadload.mean_square_air_speed(v0, v1, env["headwind_mps"])),
        "f_rolling_n": roadload.rolling_force_n(mass, body.crr, grade, v_mean, body.crr_per_mps),
        "f_grade_n": f_grade,
        "f_inertia_n": roadload.inertia_force_n(m_eff, accel),
    }
    f_total = sum(forces.values())
    wheel_w = f_total * slope_m / time_s
    split = split_wheel_power(dt, wheel_w, slope_m / time_s, f_total)
    aux_w = np.broadcast_to(cabin.auxiliary_power_w(vehicle.auxiliary, env["temp_c"]), (n,))
    total_s = time_s + dwell_s
    demand_wh = (split.battery_w * time_s + aux_w * total_s) / J_PER_WH
    capacity_wh = vehicle.battery.usable_kwh * 1000.0 * vehicle.capacity_factor(
        float(np.mean(env["temp_c"])))
    soc = _soc(vehicle, battery_model, demand_wh, total_s, capacity_wh, start_soc)
    trace = _trace(segments, v0, v1, time_s, dwell_s, clock(depart_ts, total_s), env, forces,
                   f_total, wheel_w, split, aux_w, demand_wh, soc)
    summary = summarize(trace, soc, capacity_wh=capacity_wh, start_soc=start_soc,
                        attrs=dict(segments.attrs), vehicle_name=vehicle.name,
                        battery_model=battery_model)
    return Trip(trace=trace, summary=summary)


def _trace(segments, v0, v1, time_s, dwell_s, clock_index, env, forces, f_total, wheel_w, split,
           aux_w, demand_wh, soc: SocResult) -> pd.DataFrame:
    n = len(segments)
    idx = soc.stranded_index
    reached = np.ones(n, dtype=bool) if idx < 0 else np.arange(n) < idx
    battery_wh = np.where(reached, soc.accepted_wh, 0.0)
    if idx >= 0:
        battery_wh[idx] = soc.accepted_wh[idx]
    slope_m = segments["slope_length_m"].to_numpy()
    elapsed = np.concatenate([[0.0], np.cumsum(time_s + dwell_s)[:-1]])
    columns = {
        "clock": clock_index,
        "elapsed_s": elapsed,
        "start_m": segments["start_m"].to_numpy(),
        "length_m": segments["length_m"].to_numpy(),
        "slope_length_m": slope_m,
        "lat_deg": segments["lat_deg"].to_numpy(),
        "lon_deg": segments["lon_deg"].to_numpy(),
        "lat_end_deg": segments["lat_end_deg"].to_numpy(),
        "lon_end_deg": segments["lon_end_deg"].to_numpy(),
        "elevation_m": segments["elevation_m"].to_numpy(),
        "grade": segments["grade"].to_numpy(),
        "heading_deg": segments["heading_deg"].to_numpy(),
        "speed_limit_kph": segments["speed_limit_kph"].to_numpy(),
        "v_start_mps": v0,
        "v_end_mps": v1,
        "speed_mps": slope_m / time_s,
        "speed_kph": slope_m / time_s * KPH_PER_MPS,
        "accel_mps2": (v1**2 - v0**2) / (2.0 * slope_m),
        "time_s": time_s,
        "dwell_s": dwell_s,
        "temp_c": env["temp_c"],
        "air_density_kg_m3": env["density_kg_m3"],
        "headwind_mps": env["headwind_mps"],
        **forces,
        "f_total_n": f_total,
        "wheel_power_w": wheel_w,
        "traction_battery_w": split.battery_w,
        "drive_loss_w": split.drive_loss_w,
        "regen_w": split.regen_w,
        "regen_loss_w": split.regen_loss_w,
        "friction_brake_w": split.friction_w,
        "aux_power_w": aux_w,
        "demand_wh": demand_wh,
        "battery_wh": battery_wh,
        "cum_battery_wh": np.cumsum(battery_wh),
        "battery_loss_wh": soc.loss_wh,
        "soc": np.clip(soc.soc_end, 0.0, 1.0),
        "reached": reached,
    }
    trace = pd.DataFrame(columns)
    trace.index.name = "segment"
    return trace
