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

import numba
import numpy as np
import pandas as pd

from tripsim import air, cabin, roadload
from tripsim.battery import SocResult, energy_soc, energy_soc_with_stops, rint_soc
from tripsim.drive import DriveOptions, clock, segment_times_s, speed_profile, target_speed_mps
from tripsim.errors import TripsimInputError
from tripsim.powertrain import split_wheel_power
from tripsim.route import StopKind
from tripsim.solar import facet_power_w, sky_for, sun_along
from tripsim.summary import Summary, summarize
from tripsim.units import G_MPS2, J_PER_WH, KPH_PER_MPS
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather, conditions_at

__all__ = ["Conditions", "SolarOptions", "StopEvents", "Trip", "simulate"]


@dataclass(frozen=True)
class Conditions:
    """Weather along the trip.  Scalars hold everywhere; arrays give one value a segment.

    Parameters
    ----------
    temp_c : float or array, default 20
        Ambient air temperature. [°C]
    pressure_pa : float, array or None, default None
        Air pressure; None (or NaN) takes the standard atmosphere at each
        segment's elevation. [Pa]
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
            finite = p[np.isfinite(p)]
            if finite.size and (finite.min() < 30_000 or finite.max() > 110_000):
                raise TripsimInputError("pressure must be within 30 000 to 110 000 Pa",
                                        "pressure_pa")


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


def _speed_limits_mps(
    segments: pd.DataFrame, limits: np.ndarray, default_speed_kph: float | None
) -> np.ndarray:
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


def _stop_nodes(kind: np.ndarray, drive: DriveOptions) -> tuple[np.ndarray, np.ndarray]:
    stops = kind >= StopKind.STOP_SIGN
    if not drive.stop_at_signals:
        stops &= kind != StopKind.SIGNALS
    dwell = np.where(kind == StopKind.SIGNALS, drive.signal_wait_s, 0.0)
    dwell = np.where(kind == StopKind.STOP_SIGN, drive.stop_sign_wait_s, dwell) * stops
    dwell[-1] = 0.0
    return np.concatenate([[True], stops]), dwell


def _air(seg: dict[str, np.ndarray], vehicle: Vehicle, cond: Conditions) -> dict[str, np.ndarray]:
    n = seg["grade"].size
    temp = np.broadcast_to(np.asarray(cond.temp_c, dtype=float), (n,))
    pressure = np.broadcast_to(np.asarray(np.nan if cond.pressure_pa is None
                                          else cond.pressure_pa, dtype=float), (n,))
    missing = np.isnan(pressure)
    if missing.any():
        standard = air.pressure_from_elevation(0.5 * (seg["elevation_m"] + seg["elevation_end_m"]))
        pressure = np.where(missing, standard, pressure)
    wind = np.asarray(cond.wind_speed_mps, dtype=float)
    if np.any(wind != 0.0):
        wind = air.wind_at_height(wind, vehicle.body.height_m,
                                  reference_height_m=cond.wind_height_m)
        headwind = np.broadcast_to(air.headwind_mps(wind, cond.wind_from_deg, seg["heading_deg"]),
                                   (n,))
    else:
        headwind = np.zeros(n)
    return {"temp_c": temp, "density_kg_m3": np.asarray(air.air_density(temp, pressure)),
            "headwind_mps": headwind}


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


#: Segment columns the simulation reads.
_INPUT_COLUMNS = ("start_m", "length_m", "slope_length_m", "lat_deg", "lon_deg", "lat_end_deg",
                  "lon_end_deg", "elevation_m", "elevation_end_m", "grade", "heading_deg",
                  "curvature_per_m", "speed_limit_kph", "stop_kind_end")


def _check_options(start_soc: float, battery_model: str, n: int, source: str | None) -> None:
    if not (0.0 < start_soc <= 1.0):
        raise TripsimInputError(f"start SoC {start_soc} must be in (0, 1]", "--start-soc")
    if battery_model not in ("energy", "rint"):
        raise TripsimInputError(f"battery model {battery_model!r}: expected 'energy' or 'rint'",
                                "--battery-model")
    if n == 0:
        raise TripsimInputError("the route has no segments", source)


def _drive(seg: dict[str, np.ndarray], vehicle: Vehicle, env: dict[str, np.ndarray],
           drive: DriveOptions, target: np.ndarray, stop_node: np.ndarray) -> np.ndarray:
    """Node speeds (speed profile with the motor's power against this road load)."""
    body, mass, grade = vehicle.body, vehicle.mass_kg, seg["grade"]
    return speed_profile(
        seg["slope_length_m"], target, stop_node, accel_mps2=drive.accel_mps2,
        decel_mps2=drive.decel_mps2, power_w=vehicle.drivetrain.motor_max_kw * 1000.0,
        inertial_mass_kg=vehicle.inertial_mass_kg,
        resist_n=roadload.grade_force_n(mass, grade) + roadload.rolling_force_n(mass, body.crr,
                                                                                grade),
        resist_n_per_mps=mass * G_MPS2 * body.crr_per_mps / np.sqrt(1.0 + grade**2),
        aero_kg_per_m=0.5 * env["density_kg_m3"] * body.drag_area_m2,
        headwind_mps=env["headwind_mps"], min_speed_mps=drive.min_speed_mps,
    )


# The road-load functions compiled for scalars, so one loop computes every force of a segment
# in a single pass over memory; they are the same functions the rest of tripsim calls.
_aero = numba.njit(cache=True)(roadload.aero_force_n)
_mean_sq = numba.njit(cache=True)(roadload.mean_square_air_speed)
_rolling = numba.njit(cache=True)(roadload.rolling_force_n)
_grade = numba.njit(cache=True)(roadload.grade_force_n)
_inertia = numba.njit(cache=True)(roadload.inertia_force_n)


@numba.njit(cache=True)
def _forces_pass(v, slope_m, grade, density, headwind, mass, m_eff, cda, crr, crr_v
                 ):  # pragma: no cover - compiled
    n = slope_m.size
    out = np.empty((6, n))
    for i in range(n):
        v0, v1 = v[i], v[i + 1]
        accel = (v1 * v1 - v0 * v0) / (2.0 * slope_m[i])
        aero = _aero(density[i], cda, _mean_sq(v0, v1, headwind[i]))
        roll = _rolling(mass, crr, grade[i], 0.5 * (v0 + v1), crr_v)
        grad = _grade(mass, grade[i])
        inert = _inertia(m_eff, accel)
        out[0, i] = accel
        out[1, i] = aero
        out[2, i] = roll
        out[3, i] = grad
        out[4, i] = inert
        out[5, i] = aero + roll + grad + inert
    return out


def _energy(seg: dict[str, np.ndarray], vehicle: Vehicle, env: dict[str, np.ndarray],
            v: np.ndarray, time_s: np.ndarray, dwell_s: np.ndarray) -> dict[str, np.ndarray]:
    """Forces, powers and the battery demand of every segment."""
    body, slope_m = vehicle.body, seg["slope_length_m"]
    f = _forces_pass(v, slope_m, seg["grade"], np.ascontiguousarray(env["density_kg_m3"]),
                     np.ascontiguousarray(env["headwind_mps"]), vehicle.mass_kg,
                     vehicle.inertial_mass_kg, body.drag_area_m2, body.crr, body.crr_per_mps)
    speed = slope_m / time_s
    f_total = f[5]
    wheel_w = f_total * speed
    split = split_wheel_power(vehicle.drivetrain, wheel_w, speed, f_total)
    temp = env["temp_c"]
    if temp.size and temp.strides == (0,):  # one temperature everywhere: compute it once
        temp = temp[:1]
    aux_w = np.broadcast_to(cabin.auxiliary_power_w(vehicle.auxiliary, temp), time_s.shape)
    return {
        "v_start_mps": v[:-1], "v_end_mps": v[1:], "speed_mps": speed,
        "speed_kph": speed * KPH_PER_MPS, "accel_mps2": f[0], "f_aero_n": f[1],
        "f_rolling_n": f[2], "f_grade_n": f[3], "f_inertia_n": f[4], "f_total_n": f_total,
        "wheel_power_w": wheel_w, "traction_battery_w": split.battery_w,
        "drive_loss_w": split.drive_loss_w, "regen_w": split.regen_w,
        "regen_loss_w": split.regen_loss_w, "friction_brake_w": split.friction_w,
        "aux_power_w": aux_w,
        "demand_wh": (split.battery_w * time_s + aux_w * (time_s + dwell_s)) / J_PER_WH,
    }


@dataclass(frozen=True)
class SolarOptions:
    """How the panels see the sky while driving.

    Parameters
    ----------
    shading : float, default 0
        Share of light lost to the surroundings along the route (trees,
        buildings, other vehicles), on top of each facet's own ``shading``.
    sky_model : {"isotropic", "perez", "haydavies"}, default "isotropic"
        Sky-diffuse transposition (:func:`pvlib.irradiance.get_total_irradiance`).
    albedo : float, default 0.2
        Ground reflectance.
    sun_step_s : float or None, default 60
        Compute the sun's position every so many seconds and interpolate (None:
        at every segment).
    """

    shading: float = 0.0
    sky_model: str = "isotropic"
    albedo: float = 0.2
    sun_step_s: float | None = 60.0

    def __post_init__(self) -> None:
        if not 0.0 <= self.shading <= 1.0:
            raise TripsimInputError(f"shading {self.shading} must be within 0 to 1", "--shading")
        if not 0.0 <= self.albedo <= 1.0:
            raise TripsimInputError(f"albedo {self.albedo} must be within 0 to 1", "--albedo")


def _weather_conditions(sky: dict[str, np.ndarray]) -> Conditions:
    return Conditions(temp_c=sky["temp_c"], pressure_pa=sky["pressure_pa"],
                      wind_speed_mps=sky["wind_speed_mps"], wind_from_deg=sky["wind_from_deg"])


def _solar_w(seg: dict[str, np.ndarray], vehicle: Vehicle, env: dict[str, np.ndarray],
             cols: dict[str, np.ndarray], sky: dict[str, np.ndarray] | None,
             clock_index: pd.DatetimeIndex, weather: Weather | None,
             options: SolarOptions | None) -> np.ndarray:
    n = seg["grade"].size
    if sky is None or not vehicle.panels or weather is None:
        return np.zeros(n)
    opts = options or SolarOptions()
    sun = sun_along(clock_index, seg["lat_deg"], seg["lon_deg"], seg["elevation_m"],
                    coarse_step_s=opts.sun_step_s)
    light = sky_for(clock_index, sun, sky["ghi_w_m2"], sky["dni_w_m2"], sky["dhi_w_m2"],
                    env["temp_c"], model=opts.sky_model)
    return facet_power_w(vehicle.panels, seg["heading_deg"], light,
                         air_speed_mps=np.abs(cols["speed_mps"] + env["headwind_mps"]),
                         shading=opts.shading, model=opts.sky_model, albedo=opts.albedo)


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
    weather : Weather, optional
        Weather in time (file or clear sky); replaces ``conditions``.  Each
        segment takes the weather at its own clock time; because the clock
        depends on the speed profile, which depends on wind and air density, the
        profile is computed twice (the second pass changes times by well under a
        second on ordinary trips).
    solar : SolarOptions, optional
        How the panels see the sky while driving (shading, sky model).  Solar gain
        needs irradiance, so it is counted only with ``weather``.
    stops : StopEvents, optional
        Charging or overnight stops (from :mod:`tripsim.plan.search`); they shift the
        clock, cost their detour energy and raise the state of charge.  Energy
        counting only.

    Returns
    -------
    Trip
        ``trace`` (one row a segment, see DEVELOPERS.md for the columns) and
        ``summary``.
    """
    cond = conditions or Conditions()
    drive = drive or DriveOptions()
    _check_options(start_soc, battery_model, len(segments), segments.attrs.get("source"))
    depart_ts = pd.Timestamp(depart if depart is not None else "2026-06-21T08:00:00Z")
    seg = {c: segments[c].to_numpy() for c in _INPUT_COLUMNS}
    target = target_speed_mps(
        _speed_limits_mps(segments, seg["speed_limit_kph"], default_speed_kph),
        seg["curvature_per_m"], speed_factor=drive.speed_factor,
        lateral_accel_mps2=drive.lateral_accel_mps2,
        top_speed_mps=vehicle.drivetrain.top_speed_kph / KPH_PER_MPS,
    )
    stop_node, dwell_s = _stop_nodes(seg["stop_kind_end"], drive)
    n = len(segments)
    stop_s, detour_wh, charge_to = (stops.per_segment(n) if stops is not None
                                    else (np.zeros(n), np.zeros(n), np.full(n, np.nan)))
    if stops is not None and battery_model != "energy":
        raise TripsimInputError("stops need the energy battery model", "--battery-model")

    def profile(c: Conditions) -> tuple[dict[str, np.ndarray], np.ndarray, np.ndarray]:
        env = _air(seg, vehicle, c)
        v = _drive(seg, vehicle, env, drive, target, stop_node)
        t = segment_times_s(seg["slope_length_m"], v, accel_mps2=drive.accel_mps2,
                            decel_mps2=drive.decel_mps2)
        return env, v, t

    sky: dict[str, np.ndarray] | None = None
    if weather is None:
        env, v, time_s = profile(cond)
        clock_index = clock(depart_ts, time_s + dwell_s + stop_s)
    else:
        clock_index = pd.DatetimeIndex(np.full(len(segments), depart_ts))
        for _ in range(2):
            sky = conditions_at(weather, clock_index)
            env, v, time_s = profile(_weather_conditions(sky))
            clock_index = clock(depart_ts, time_s + dwell_s + stop_s)
        sky = conditions_at(weather, clock_index)
        env = _air(seg, vehicle, _weather_conditions(sky))
    cols = _energy(seg, vehicle, env, v, time_s, dwell_s)
    total_s = time_s + dwell_s
    cols["solar_power_w"] = _solar_w(seg, vehicle, env, cols, sky, clock_index, weather, solar)
    cols["demand_wh"] = cols["demand_wh"] - cols["solar_power_w"] * total_s / J_PER_WH
    capacity_wh = vehicle.battery.usable_kwh * 1000.0 * vehicle.capacity_factor(
        float(np.mean(env["temp_c"])))
    charged = np.zeros(n)
    if stops is None:
        soc = _soc(vehicle, battery_model, cols["demand_wh"], total_s, capacity_wh, start_soc)
    else:
        soc, charged, at_site = energy_soc_with_stops(
            cols["demand_wh"], capacity_wh, start_soc, detour_wh=detour_wh,
            charge_to_soc=charge_to)
    cols.update(time_s=time_s, dwell_s=dwell_s, stop_s=stop_s, charged_wh=charged,
                detour_wh=detour_wh, **env)
    cols["soc_at_stop"] = at_site if stops is not None else np.full(n, np.nan)
    cols["ghi_w_m2"] = sky["ghi_w_m2"] if sky is not None else np.full(len(time_s), np.nan)
    trace, columns = _trace(seg, cols, soc, clock_index)
    summary = summarize(trace, soc, capacity_wh=capacity_wh, start_soc=start_soc,
                        attrs=dict(segments.attrs), vehicle_name=vehicle.name,
                        battery_model=battery_model, columns=columns)
    return Trip(trace=trace, summary=summary)


#: Float columns of a trace, in order (``clock`` comes first, ``reached`` last).
TRACE_COLUMNS = (
    "elapsed_s", "start_m", "length_m", "slope_length_m", "lat_deg", "lon_deg", "lat_end_deg",
    "lon_end_deg", "elevation_m", "grade", "heading_deg", "speed_limit_kph", "v_start_mps",
    "v_end_mps", "speed_mps", "speed_kph", "accel_mps2", "time_s", "dwell_s", "stop_s",
    "temp_c",
    "density_kg_m3", "headwind_mps", "f_aero_n", "f_rolling_n", "f_grade_n", "f_inertia_n",
    "f_total_n", "wheel_power_w", "traction_battery_w", "drive_loss_w", "regen_w",
    "regen_loss_w", "friction_brake_w", "aux_power_w", "ghi_w_m2", "solar_power_w",
    "demand_wh", "battery_wh", "cum_battery_wh", "battery_loss_wh", "detour_wh",
    "charged_wh", "soc_at_stop", "soc",
)


def _trace(seg: dict[str, np.ndarray], cols: dict[str, np.ndarray], soc: SocResult,
           clock_index: pd.DatetimeIndex) -> tuple[pd.DataFrame, dict[str, np.ndarray]]:
    """Assemble the trace from the computed columns without copying them again."""
    n = seg["grade"].size
    idx = soc.stranded_index
    reached = np.ones(n, dtype=bool) if idx < 0 else np.arange(n) < idx
    battery_wh = np.where(reached, soc.accepted_wh, 0.0)
    if idx >= 0:
        battery_wh[idx] = soc.accepted_wh[idx]
    elapsed = np.empty(n)
    elapsed[0] = 0.0
    np.cumsum(cols["time_s"][:-1] + cols["dwell_s"][:-1] + cols["stop_s"][:-1],
              out=elapsed[1:])
    derived = {"elapsed_s": elapsed, "battery_wh": battery_wh,
               "cum_battery_wh": np.cumsum(battery_wh), "battery_loss_wh": soc.loss_wh,
               "soc": np.clip(soc.soc_end, 0.0, 1.0)}
    data: dict[str, object] = {"clock": clock_index}
    for name in TRACE_COLUMNS:
        value = derived[name] if name in derived else cols.get(name, seg.get(name))
        data[name] = np.ascontiguousarray(np.broadcast_to(value, (n,)), dtype=float)
    data["reached"] = reached
    # one block per column, no consolidation copy: every column is written once
    trace = pd.DataFrame(data, copy=False)
    trace.index.name = "segment"
    return trace, data
