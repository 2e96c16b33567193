"""The one energy model: a route driven once or many times, each run in its own air.

Every feature that needs energy — :func:`tripsim.simulate.simulate` (one run), the
fleet year (every run of a loop over a weather year), the planner (through
``simulate``) — calls :func:`drive_runs`.  It composes the physics modules and holds
none of its own:

1. the course: target speeds (:mod:`tripsim.drive`), stops and waits, sun cells;
2. the air on every segment of every run (:mod:`tripsim.air`): temperature,
   pressure carried from the weather station to the segment's elevation, density,
   wind at body height against the heading;
3. the speed profile (:func:`tripsim.drive.speed_profile`, the motor's power against
   the road load of :mod:`tripsim.roadload`) and the clock;
4. with weather in time, steps 2-3 are repeated: the profile first in the weather of
   the departure, then in the weather along its own clock, and the air is taken once
   more along the final clock (the second pass moves the clock by well under a second
   on ordinary trips);
5. per segment, in one compiled pass: forces, the drivetrain split
   (:mod:`tripsim.powertrain`), the auxiliary and cabin load (:mod:`tripsim.cabin`)
   and the battery demand; a segment that starts and ends at rest (two stops in a
   row) is driven as two phases, accelerating then braking;
6. solar power of the panels while driving (:mod:`tripsim.solar`).

Weather and sun are evaluated on *slots* of :data:`SLOT_S` seconds of each run's
clock and given to the segments of the slot: hourly weather data change little in
half a minute, and a run of thousands of segments needs only a few hundred sky
evaluations.  The state-of-charge pass (:func:`tripsim.battery.soc_pass`) follows.
All arrays are runs × segments; one trip is one run.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import NamedTuple

import numba
import numpy as np
import pandas as pd

from tripsim import air, cabin, drive, powertrain, roadload
from tripsim.compiled import jitted
from tripsim.drive import DriveOptions, segment_times_s, speed_profile, target_speed_mps
from tripsim.errors import TripsimInputError
from tripsim.route import StopKind
from tripsim.solar import facet_power_w, sky_for, sun_at, sun_cells
from tripsim.units import J_PER_WH, KPH_PER_MPS
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather, conditions_at_seconds, weather_seconds

__all__ = ["COLUMNS", "SLOT_S", "Conditions", "Course", "Runs", "SolarOptions", "drive_runs",
           "run_capacity_wh"]

#: Length of the time slots on which weather and sun are evaluated along a run. [s]
SLOT_S = 30.0

#: Per-segment columns of :attr:`Runs.columns` (when asked for), in order.
COLUMNS = ("accel_mps2", "f_aero_n", "f_rolling_n", "f_grade_n", "f_inertia_n", "f_total_n",
           "wheel_power_w", "traction_battery_w", "drive_loss_w", "regen_w", "regen_loss_w",
           "friction_brake_w", "aux_power_w")


@dataclass(frozen=True)
class Conditions:
    """Weather along the trip when no weather in time is given.

    Scalars hold everywhere; arrays give one value a segment.

    Parameters
    ----------
    temp_c : float or array, default 20
        Ambient air temperature. [°C]
    pressure_pa : float, array or None, default None
        Air pressure.  None (or NaN) takes the standard atmosphere at each segment's
        elevation; a number is the pressure at ``pressure_elevation_m`` and is carried
        to every segment's elevation; an array gives each segment's own. [Pa]
    pressure_elevation_m : float or None, default None
        Where a scalar ``pressure_pa`` was measured; None: the route's start. [m]
    wind_speed_mps : float or array, default 0
        Wind speed at ``wind_height_m`` (10 m for weather stations). [m/s]
    wind_from_deg : float or array, default 0
        Direction the wind blows from, degrees east of north.
    wind_height_m : float, default 10
        Height the wind speed was measured at. [m]
    ghi_w_m2 : float or array, default 0
        Global horizontal irradiance, for the sun's heat in the cabin (0: night or
        overcast).  Panels need a weather in time. [W/m²]
    """

    temp_c: float | np.ndarray = 20.0
    pressure_pa: float | np.ndarray | None = None
    pressure_elevation_m: float | None = None
    wind_speed_mps: float | np.ndarray = 0.0
    wind_from_deg: float | np.ndarray = 0.0
    wind_height_m: float = 10.0
    ghi_w_m2: float | np.ndarray = 0.0

    def __post_init__(self) -> None:
        def bad(values: object, lo: float, hi: float) -> bool:
            arr = np.asarray(values, dtype=float)
            return bool(not np.all(np.isfinite(arr)) or arr.min() < lo or arr.max() > hi)

        if bad(self.temp_c, -60.0, 60.0):
            raise TripsimInputError("temperature must be finite and within -60 to 60 °C",
                                    "--temp-c")
        if bad(self.wind_speed_mps, 0.0, 75.0):
            raise TripsimInputError("wind speed must be finite and within 0 to 75 m/s",
                                    "--wind-speed-mps")
        if bad(self.wind_from_deg, -360.0, 360.0):
            raise TripsimInputError("wind direction must be finite and within ±360°",
                                    "--wind-from-deg")
        if bad(self.ghi_w_m2, 0.0, 1500.0):
            raise TripsimInputError("irradiance must be finite and within 0 to 1500 W/m²",
                                    "--ghi")
        if not (np.isfinite(self.wind_height_m) and 0.5 <= self.wind_height_m <= 200.0):
            raise TripsimInputError("wind height must be within 0.5 to 200 m", "wind_height_m")
        if self.pressure_pa is not None:
            p = np.asarray(self.pressure_pa, dtype=float)
            finite = p[~np.isnan(p)]
            if finite.size and (not np.all(np.isfinite(finite)) or finite.min() < 30_000
                                or finite.max() > 110_000):
                raise TripsimInputError("pressure must be within 300 to 1100 hPa",
                                        "--pressure-hpa")
        if self.pressure_elevation_m is not None and not (
                np.isfinite(self.pressure_elevation_m)
                and -500.0 <= self.pressure_elevation_m <= 9000.0):
            raise TripsimInputError("the pressure's elevation must be within -500 to 9000 m",
                                    "pressure_elevation_m")


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
    """

    shading: float = 0.0
    sky_model: str = "isotropic"
    albedo: float = 0.2

    def __post_init__(self) -> None:
        if not 0.0 <= self.shading <= 1.0:
            raise TripsimInputError(f"shading {self.shading} must be within 0 to 1", "--shading")
        if not 0.0 <= self.albedo <= 1.0:
            raise TripsimInputError(f"albedo {self.albedo} must be within 0 to 1", "--albedo")
        if self.sky_model not in ("isotropic", "perez", "haydavies"):
            raise TripsimInputError(f"sky model {self.sky_model!r}; expected isotropic, perez "
                                    "or haydavies", "--sky-model")


@dataclass(frozen=True)
class Course:
    """A route as the model drives it: geometry, targets, stops, sun cells (one copy for all runs).

    Build it with :meth:`from_segments`.
    """

    start_m: np.ndarray
    length_m: np.ndarray
    slope_length_m: np.ndarray
    grade: np.ndarray
    heading_deg: np.ndarray
    elevation_m: np.ndarray  # at the segment's middle
    target_mps: np.ndarray
    stop_node: np.ndarray  # (n + 1,)
    dwell_s: np.ndarray  # wait at the segment's end (signals, stop signs)
    sun_cell: np.ndarray
    sun_places: np.ndarray
    source: str = "route"

    @property
    def n(self) -> int:
        """Number of segments."""
        return int(self.length_m.size)

    @classmethod
    def from_segments(cls, segments: pd.DataFrame, vehicle: Vehicle, drive_opts: DriveOptions,
                      default_speed_kph: float | None = None) -> Course:
        """The course of a segments table for a vehicle and a driver."""
        source = str(segments.attrs.get("source", "route"))
        if len(segments) == 0:
            raise TripsimInputError("the route has no segments", source)
        col = {c: segments[c].to_numpy(dtype=float) for c in (
            "start_m", "length_m", "slope_length_m", "grade", "heading_deg", "elevation_m",
            "elevation_end_m", "curvature_per_m", "speed_limit_kph", "lat_deg", "lon_deg")}
        limits = _limits_mps(col["speed_limit_kph"], default_speed_kph, source)
        target = target_speed_mps(limits, col["curvature_per_m"],
                                  speed_factor=drive_opts.speed_factor,
                                  lateral_accel_mps2=drive_opts.lateral_accel_mps2,
                                  top_speed_mps=vehicle.drivetrain.top_speed_kph / KPH_PER_MPS)
        stop_node, dwell = _stops(segments["stop_kind_end"].to_numpy(), drive_opts)
        mid_ele = 0.5 * (col["elevation_m"] + col["elevation_end_m"])
        cell, places = sun_cells(col["lat_deg"], col["lon_deg"], mid_ele)
        return cls(col["start_m"], col["length_m"], col["slope_length_m"], col["grade"],
                   col["heading_deg"], mid_ele, target, stop_node, dwell, cell, places, source)


def _limits_mps(limits_kph: np.ndarray, default_speed_kph: float | None,
                source: str) -> np.ndarray:
    missing = ~np.isfinite(limits_kph)
    if missing.any():
        if default_speed_kph is None:
            raise TripsimInputError(
                f"{int(missing.sum())} of {limits_kph.size} segments have no speed limit; "
                "give a cruising speed (--speed-kph) for routes without limits", source)
        if not (np.isfinite(default_speed_kph) and 1.0 <= default_speed_kph <= 300.0):
            raise TripsimInputError(f"speed {default_speed_kph} km/h is out of range 1-300",
                                    "--speed-kph")
        limits_kph = np.where(missing, default_speed_kph, limits_kph)
    return limits_kph / KPH_PER_MPS


def _stops(kind: np.ndarray, drive_opts: DriveOptions) -> tuple[np.ndarray, np.ndarray]:
    stops = kind >= StopKind.STOP_SIGN
    if not drive_opts.stop_at_signals:
        stops &= kind != StopKind.SIGNALS
    dwell = np.where(kind == StopKind.SIGNALS, drive_opts.signal_wait_s, 0.0)
    dwell = np.where(kind == StopKind.STOP_SIGN, drive_opts.stop_sign_wait_s, dwell) * stops
    dwell[-1] = 0.0
    return np.concatenate([[True], stops]), dwell


class _Air(NamedTuple):
    temp_c: np.ndarray  # (R, n) each
    pressure_pa: np.ndarray
    density_kg_m3: np.ndarray
    headwind_mps: np.ndarray
    ghi_w_m2: np.ndarray
    wind_mps: np.ndarray  # at body height


def _air(course: Course, vehicle: Vehicle, temp_c: np.ndarray, pressure_pa: np.ndarray,
         pressure_elevation_m: np.ndarray | float | None, wind_speed_mps: np.ndarray,
         wind_from_deg: np.ndarray, wind_height_m: float, ghi_w_m2: np.ndarray,
         shape: tuple[int, int]) -> _Air:
    """The air on every segment of every run from station (or given) values."""
    ele = course.elevation_m
    temp = np.broadcast_to(temp_c, shape)
    if pressure_elevation_m is None:  # per-segment pressures, or none
        p = np.broadcast_to(pressure_pa, shape)
        pressure = np.where(np.isnan(p), air.pressure_from_elevation(ele), p)
    else:
        p = np.broadcast_to(pressure_pa, shape)
        scaled = air.pressure_at_elevation(p, pressure_elevation_m, ele)
        pressure = np.where(np.isnan(p), air.pressure_from_elevation(ele), scaled)
    wind = air.wind_at_height(np.broadcast_to(wind_speed_mps, shape), vehicle.body.height_m,
                              wind_height_m)
    headwind = air.headwind_mps(wind, wind_from_deg, course.heading_deg)
    return _Air(np.ascontiguousarray(temp, dtype=float), pressure,
                np.ascontiguousarray(air.air_density(temp, pressure)),
                np.ascontiguousarray(np.broadcast_to(headwind, shape)),
                np.ascontiguousarray(np.broadcast_to(ghi_w_m2, shape), dtype=float),
                np.broadcast_to(wind, shape))


def _conditions_air(course: Course, vehicle: Vehicle, cond: Conditions,
                    shape: tuple[int, int]) -> _Air:
    pressure = np.nan if cond.pressure_pa is None else cond.pressure_pa
    ref = None
    if np.ndim(pressure) == 0:
        ref = (cond.pressure_elevation_m if cond.pressure_elevation_m is not None
               else float(course.elevation_m[0]))
    return _air(course, vehicle, np.asarray(cond.temp_c, dtype=float),
                np.asarray(pressure, dtype=float), ref,
                np.asarray(cond.wind_speed_mps, dtype=float),
                np.asarray(cond.wind_from_deg, dtype=float), cond.wind_height_m,
                np.asarray(cond.ghi_w_m2, dtype=float), shape)


def _slots(elapsed_s: np.ndarray, total_s: np.ndarray) -> tuple[np.ndarray, int]:
    """Slot of each segment (by the middle of its time) and the number of slots."""
    slot = np.floor((elapsed_s + 0.5 * total_s) / SLOT_S).astype(np.int64)
    return slot, int(slot.max()) + 1


def _sky_on_slots(weather: Weather, depart_s: np.ndarray, n_slots: int) -> dict[str, np.ndarray]:
    mid = (np.arange(n_slots) + 0.5) * SLOT_S
    epoch = depart_s[:, None] + mid[None, :]
    sky = conditions_at_seconds(weather, weather_seconds(weather, epoch.ravel()))
    return {k: v.reshape(epoch.shape) for k, v in sky.items()} | {"epoch_s": epoch}


def _gather(values: np.ndarray, slot: np.ndarray) -> np.ndarray:
    return np.take_along_axis(values, slot, axis=1)


def _weather_air(course: Course, vehicle: Vehicle, weather: Weather, sky: dict[str, np.ndarray],
                 slot: np.ndarray | None, shape: tuple[int, int]) -> _Air:
    """Air from weather sampled per run (``slot`` None: one sample a run) or per slot."""

    def seg(name: str) -> np.ndarray:
        v = sky[name]
        return v if slot is None else _gather(v, slot)

    return _air(course, vehicle, seg("temp_c"), seg("pressure_pa"), weather.elevation_m,
                seg("wind_speed_mps"), seg("wind_from_deg"), 10.0, seg("ghi_w_m2"), shape)


def _profile(course: Course, vehicle: Vehicle, drive_opts: DriveOptions,
             a: _Air) -> tuple[np.ndarray, np.ndarray]:
    body = vehicle.body
    v = speed_profile(course.slope_length_m, course.target_mps, course.stop_node,
                      accel_mps2=drive_opts.accel_mps2, decel_mps2=drive_opts.decel_mps2,
                      power_w=vehicle.drivetrain.motor_max_kw * 1000.0,
                      inertial_mass_kg=vehicle.inertial_mass_kg, mass_kg=vehicle.mass_kg,
                      crr=body.crr, crr_per_mps=body.crr_per_mps, grade=course.grade,
                      cda_m2=body.drag_area_m2, density_kg_m3=a.density_kg_m3,
                      headwind_mps=a.headwind_mps, min_speed_mps=drive_opts.min_speed_mps)
    t = segment_times_s(course.slope_length_m[None, :], v, accel_mps2=drive_opts.accel_mps2,
                        decel_mps2=drive_opts.decel_mps2)
    return v, t


def _elapsed(time_s: np.ndarray, course: Course, stop_s: np.ndarray) -> np.ndarray:
    total = time_s + course.dwell_s + stop_s
    elapsed = np.zeros_like(total)
    np.cumsum(total[:, :-1], axis=1, out=elapsed[:, 1:])
    return elapsed


# --- the compiled per-segment pass, built from the physics functions --------------------
_aero = jitted(roadload.aero_force_n)
_mean_sq = jitted(roadload.mean_square_air_speed)
_rolling = jitted(roadload.rolling_force_n)
_grade = jitted(roadload.grade_force_n)
_inertia = jitted(roadload.inertia_force_n)
_power_split = jitted(powertrain.power_split)
_aux = jitted(cabin.auxiliary_power_w)
_triangle = jitted(drive.triangle_phases)


@numba.njit(cache=True)
def _phase(v0, v1, s, t, grade, density, headwind, road, dp):  # pragma: no cover - compiled
    """Forces (N) and energies (J) of one constant-acceleration phase."""
    accel = (v1 * v1 - v0 * v0) / (2.0 * s)
    aero = _aero(density, road.cda_m2, _mean_sq(v0, v1, headwind))
    roll = _rolling(road.mass_kg, road.crr, grade, 0.5 * (v0 + v1), road.crr_per_mps)
    grad = _grade(road.mass_kg, grade)
    inert = _inertia(road.inertial_mass_kg, accel)
    force = aero + roll + grad + inert
    speed = s / t
    battery, loss, regen, regen_loss, friction = _power_split(force * speed, speed, force, dp)
    return (accel, aero, roll, grad, inert, force, force * s, battery * t, loss * t, regen * t,
            regen_loss * t, friction * t)


@numba.njit(cache=True)
def _segments_pass(v, slope_m, grade, time_s, dwell_s, density, headwind, temp, ghi, accel,
                   decel, road, dp, cp, want_cols):  # pragma: no cover - compiled
    n_runs, n = time_s.shape
    demand = np.empty((n_runs, n))
    cols = np.zeros((13 if want_cols else 0, n_runs, n))
    regen_wh = np.zeros(n_runs)
    use_wh = np.zeros(n_runs)
    acc = np.zeros(12)
    for r in range(n_runs):
        for i in range(n):
            v0, v1, s, t = v[r, i], v[r, i + 1], slope_m[i], time_s[r, i]
            if v0 + v1 > 1e-9:
                ph = _phase(v0, v1, s, t, grade[i], density[r, i], headwind[r, i], road, dp)
                for k in range(12):
                    acc[k] = ph[k]
                for k in range(6):  # forces: distance average = the phase's own
                    acc[k] = ph[k]
            else:  # from rest to rest: accelerate, then brake
                s_a, s_b, v_peak, t_a, t_b = _triangle(s, accel, decel)
                pa = _phase(0.0, v_peak, s_a, t_a, grade[i], density[r, i], headwind[r, i],
                            road, dp)
                pb = _phase(v_peak, 0.0, s_b, t_b, grade[i], density[r, i], headwind[r, i],
                            road, dp)
                for k in range(6):
                    acc[k] = (pa[k] * s_a + pb[k] * s_b) / s
                for k in range(6, 12):
                    acc[k] = pa[k] + pb[k]
            aux_w = _aux(temp[r, i], ghi[r, i], cp)
            traction_j = acc[7]
            demand[r, i] = (traction_j + aux_w * (t + dwell_s[i])) / 3600.0
            regen_wh[r] += acc[9] / 3600.0
            use_wh[r] += (traction_j + acc[9] + aux_w * (t + dwell_s[i])) / 3600.0
            if want_cols:
                for k in range(6):
                    cols[k, r, i] = acc[k]
                cols[6, r, i] = acc[6] / t
                for k in range(7, 12):
                    cols[k, r, i] = acc[k] / t
                cols[12, r, i] = aux_w
    return demand, cols, regen_wh, use_wh


@dataclass(frozen=True)
class Runs:
    """A course driven once per departure: everything per run × segment.

    Attributes
    ----------
    depart_s : array, shape (R,)
        Departures, seconds since the Unix epoch.
    v_nodes_mps : array, shape (R, n + 1)
        Node speeds.
    time_s, elapsed_s : array, shape (R, n)
        Driving time of each segment; time from departure to the segment's start
        (driving, waits and stops before it).
    temp_c, pressure_pa, density_kg_m3, headwind_mps, ghi_w_m2 : array, shape (R, n)
        The air and the sky on each segment.
    solar_power_w : array, shape (R, n)
        Panel power into the battery while driving (zero without weather). [W]
    demand_nosolar_wh : array, shape (R, n)
        Energy asked of the battery by traction and auxiliaries. [Wh]
    solar_wh : array, shape (R, n)
        Energy the panels offer on the segment (driving and its wait). [Wh]
    regen_wh, use_wh : array, shape (R,)
        Energy regeneration returns, and energy traction and auxiliaries draw, before
        the battery decides what it accepts. [Wh]
    temp_mean_c : array, shape (R,)
        Time-weighted mean ambient temperature of each run. [°C]
    columns : dict of array, shape (R, n)
        Forces and powers (:data:`COLUMNS`), when asked for.
    """

    depart_s: np.ndarray
    v_nodes_mps: np.ndarray
    time_s: np.ndarray
    elapsed_s: np.ndarray
    temp_c: np.ndarray
    pressure_pa: np.ndarray
    density_kg_m3: np.ndarray
    headwind_mps: np.ndarray
    ghi_w_m2: np.ndarray
    solar_power_w: np.ndarray
    demand_nosolar_wh: np.ndarray
    solar_wh: np.ndarray
    regen_wh: np.ndarray
    use_wh: np.ndarray
    temp_mean_c: np.ndarray
    columns: dict[str, np.ndarray] = field(default_factory=dict, repr=False)

    def demand_wh(self, panel_scale: float = 1.0) -> np.ndarray:
        """Net battery demand [Wh] with the panels scaled by ``panel_scale``."""
        return self.demand_nosolar_wh - panel_scale * self.solar_wh


def run_capacity_wh(vehicle: Vehicle, temp_mean_c: np.ndarray,
                    usable_kwh: float | None = None) -> np.ndarray:
    """Usable energy of the battery on each run [Wh], at the pack's temperature.

    The pack's temperature follows the run's mean ambient temperature
    (:meth:`tripsim.vehicle.Vehicle.battery_temp_c`).
    """
    kwh = vehicle.battery.usable_kwh if usable_kwh is None else usable_kwh
    factors = np.array([vehicle.capacity_factor(t) for t in np.atleast_1d(temp_mean_c)])
    return kwh * 1000.0 * factors


def _driving_solar_w(course: Course, vehicle: Vehicle, sky: dict[str, np.ndarray],
                     slot: np.ndarray, n_slots: int, total_s: np.ndarray, speed: np.ndarray,
                     a: _Air, solar: SolarOptions) -> np.ndarray:
    """Panel power on every segment, evaluated per slot of each run."""
    n_runs = total_s.shape[0]
    flat = (slot + np.arange(n_runs)[:, None] * n_slots).ravel()
    size = n_runs * n_slots
    weight = total_s.ravel()
    rad = np.radians(np.broadcast_to(course.heading_deg, total_s.shape)).ravel()
    heading = np.degrees(np.arctan2(np.bincount(flat, weight * np.sin(rad), size),
                                    np.bincount(flat, weight * np.cos(rad), size))) % 360.0
    wsum = np.maximum(np.bincount(flat, weight, size), 1e-9)
    air_speed = np.bincount(flat, weight * np.abs(speed + a.headwind_mps).ravel(), size) / wsum
    cell = np.zeros(size, dtype=np.int64)
    cell[flat] = np.broadcast_to(course.sun_cell, total_s.shape).ravel()
    epoch = sky["epoch_s"].ravel()
    sun = sun_at(epoch, cell, course.sun_places)
    light = sky_for(epoch, sun, sky["ghi_w_m2"].ravel(), sky["dni_w_m2"].ravel(),
                    sky["dhi_w_m2"].ravel(), sky["temp_c"].ravel(), model=solar.sky_model)
    power = facet_power_w(vehicle.panels, heading, light, air_speed_mps=air_speed,
                          shading=solar.shading, model=solar.sky_model, albedo=solar.albedo)
    return _gather(power.reshape(n_runs, n_slots), slot)


def drive_runs(
    course: Course,
    vehicle: Vehicle,
    depart_s: np.ndarray,
    *,
    drive_opts: DriveOptions,
    weather: Weather | None = None,
    conditions: Conditions | None = None,
    solar: SolarOptions | None = None,
    stop_s: np.ndarray | None = None,
    columns: bool = False,
) -> Runs:
    """Drive a course once per departure (see the module notes).

    Parameters
    ----------
    course : Course
        The route (:meth:`Course.from_segments`).
    vehicle : Vehicle
        The vehicle.
    depart_s : array, shape (R,)
        Departures, seconds since the Unix epoch.
    drive_opts : DriveOptions
        The driver.
    weather : Weather, optional
        Weather in time; each segment takes it at its own clock.  Replaces
        ``conditions``.
    conditions : Conditions, optional
        Fixed air (default 20 °C, standard pressure, calm), when there is no weather.
    solar : SolarOptions, optional
        How the panels see the sky (needs ``weather``).
    stop_s : array, shape (n,), optional
        Time stopped at the end of each segment (charging, nights): it moves the
        clock of everything after it.
    columns : bool, default False
        Keep the per-segment forces and powers (:data:`COLUMNS`).

    Returns
    -------
    Runs
    """
    depart = np.atleast_1d(np.asarray(depart_s, dtype=float))
    shape = (depart.size, course.n)
    stops = np.zeros(course.n) if stop_s is None else np.asarray(stop_s, dtype=float)
    sky = None
    slot = None
    n_slots = 0
    if weather is None:
        a = _conditions_air(course, vehicle, conditions or Conditions(), shape)
        v, t = _profile(course, vehicle, drive_opts, a)
        elapsed = _elapsed(t, course, stops)
    else:
        first = conditions_at_seconds(weather, weather_seconds(weather, depart))
        a = _weather_air(course, vehicle, weather, {k: x[:, None] for k, x in first.items()},
                         None, shape)
        for _ in range(2):
            v, t = _profile(course, vehicle, drive_opts, a)
            elapsed = _elapsed(t, course, stops)
            slot, n_slots = _slots(elapsed, t + course.dwell_s)
            sky = _sky_on_slots(weather, depart, n_slots)
            a = _weather_air(course, vehicle, weather, sky, slot, shape)
    road = roadload.road_params(vehicle.body)
    demand, cols, regen_wh, use_wh = _segments_pass(
        v, course.slope_length_m, course.grade, t, course.dwell_s, a.density_kg_m3,
        a.headwind_mps, a.temp_c, a.ghi_w_m2, float(drive_opts.accel_mps2),
        float(drive_opts.decel_mps2), road, powertrain.drive_params(vehicle.drivetrain),
        cabin.cabin_params(vehicle.auxiliary), bool(columns))
    total_s = t + course.dwell_s
    if sky is not None and vehicle.panels:
        speed = course.slope_length_m / t
        solar_w = _driving_solar_w(course, vehicle, sky, slot, n_slots, total_s, speed, a,
                                   solar or SolarOptions())
    else:
        solar_w = np.zeros(shape)
    weights = total_s / total_s.sum(axis=1, keepdims=True)
    return Runs(
        depart_s=depart, v_nodes_mps=v, time_s=t, elapsed_s=elapsed, temp_c=a.temp_c,
        pressure_pa=np.asarray(a.pressure_pa), density_kg_m3=a.density_kg_m3,
        headwind_mps=a.headwind_mps, ghi_w_m2=a.ghi_w_m2, solar_power_w=solar_w,
        demand_nosolar_wh=demand, solar_wh=solar_w * total_s / J_PER_WH, regen_wh=regen_wh,
        use_wh=use_wh, temp_mean_c=(a.temp_c * weights).sum(axis=1),
        columns=dict(zip(COLUMNS, cols, strict=True)) if columns else {})
