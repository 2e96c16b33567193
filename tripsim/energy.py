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

import dataclasses
import functools
from dataclasses import dataclass, field
from typing import Literal, NamedTuple

import numba
import numpy as np
import pandas as pd

from tripsim import air, cabin, drive, powertrain, roadload
from tripsim.compiled import jitted
from tripsim.drive import DriveOptions, target_speed_mps
from tripsim.errors import TripsimInputError
from tripsim.options import Number, Options, option
from tripsim.route import StopKind
from tripsim.solar import facet_power_w, sky_for, sun_at, sun_cells
from tripsim.units import J_PER_WH, KPH_PER_MPS
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather, conditions_at_seconds, weather_seconds

__all__ = ["COLUMNS", "SLOT_S", "SUMS", "Conditions", "Course", "RecordedDrive", "Runs",
           "SolarOptions",
           "drive_runs",
           "run_capacity_wh"]

#: Length of the time slots on which weather and sun are evaluated along a run. [s]
SLOT_S = 30.0

#: Per-segment columns of :attr:`Runs.columns` (when asked for), in order.
COLUMNS = ("accel_mps2", "f_aero_n", "f_rolling_n", "f_grade_n", "f_inertia_n", "f_total_n",
           "wheel_power_w", "traction_battery_w", "drive_loss_w", "regen_w", "regen_loss_w",
           "friction_brake_w")


class Conditions(Options):
    """The air along the trip when no weather in time is given (the same everywhere).

    Parameters
    ----------
    temp_c : float, default 20
        Ambient air temperature. [°C]
    pressure_pa : float or None, default None
        Air pressure measured at ``pressure_elevation_m``, carried to every segment's
        elevation (:func:`tripsim.air.pressure_at_elevation`); None takes the standard
        atmosphere at each segment's elevation. [Pa]
    pressure_elevation_m : float or None, default None
        Where ``pressure_pa`` was measured; None: the route's start. [m]
    wind_speed_mps : float, default 0
        Wind speed at ``wind_height_m`` (10 m for weather stations). [m/s]
    wind_from_deg : float, default 0
        Direction the wind blows from, degrees east of north.
    wind_height_m : float, default 10
        Height the wind speed was measured at. [m]
    ghi_w_m2 : float, default 0
        Global horizontal irradiance, for the sun's heat in the cabin (0: night or
        overcast).  Panels need a weather in time. [W/m²]
    """

    temp_c: Number = option(20.0, ge=-60.0, le=60.0, cli="--temp-c")
    pressure_pa: Number | None = option(None, ge=30_000.0, le=110_000.0, cli="--pressure-hpa",
                                        scale=0.01)
    pressure_elevation_m: Number | None = option(None, ge=-500.0, le=9000.0,
                                                 cli="--pressure-elevation-m")
    wind_speed_mps: Number = option(0.0, ge=0.0, le=75.0, cli="--wind-speed-mps")
    wind_from_deg: Number = option(0.0, ge=-360.0, le=360.0, cli="--wind-from-deg")
    wind_height_m: Number = option(10.0, ge=0.5, le=200.0, cli="--wind-height-m")
    ghi_w_m2: Number = option(0.0, ge=0.0, le=1500.0, cli="--ghi-w-m2")


class SolarOptions(Options):
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

    shading: Number = option(0.0, ge=0.0, le=1.0, cli="--shading")
    sky_model: Literal["isotropic", "perez", "haydavies"] = option("isotropic",
                                                                   cli="--sky-model")
    albedo: Number = option(0.2, ge=0.0, le=1.0, cli="--albedo")


@dataclass(frozen=True)
class RecordedDrive:
    """How a route was actually driven (a logged drive): it replaces the speed profile.

    Attributes
    ----------
    v_nodes_mps : array, shape (n + 1,)
        Speed at each segment boundary. [m/s]
    time_s : array, shape (n,)
        Time spent on each segment, moving (waits belong in it too). [s]
    """

    v_nodes_mps: np.ndarray
    time_s: np.ndarray

    def __post_init__(self) -> None:
        v = np.asarray(self.v_nodes_mps, dtype=float)
        t = np.asarray(self.time_s, dtype=float)
        if v.ndim != 1 or t.ndim != 1 or v.size != t.size + 1:
            raise TripsimInputError("recorded speeds need one value a node and times one a "
                                    "segment", "log")
        if not (np.all(np.isfinite(v)) and np.all(np.isfinite(t)) and v.min() >= 0.0
                and t.min() > 0.0):
            raise TripsimInputError("recorded speeds must be ≥ 0 and times > 0", "log")


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
    node_cap: np.ndarray  # (n + 1,): speed cap at every node, zero at stops
    dwell_s: np.ndarray  # wait at the segment's end (signals, stop signs)
    lat_deg: np.ndarray
    lon_deg: np.ndarray
    source: str = "route"
    recorded: RecordedDrive | None = None

    @functools.cached_property
    def isa_pressure_pa(self) -> np.ndarray:
        """Standard-atmosphere pressure at each segment's middle [Pa]."""
        return air.pressure_from_elevation(self.elevation_m)

    @functools.cached_property
    def sun_cells(self) -> tuple[np.ndarray, np.ndarray]:
        """Map cells that share one sun table (:func:`tripsim.solar.sun_cells`)."""
        return sun_cells(self.lat_deg, self.lon_deg, self.elevation_m)

    def with_sun_cells(self, cell: np.ndarray, places: np.ndarray) -> Course:
        """The same course with its sun cells given (as :func:`tripsim.solar.sun_cells`).

        A course of repeated laps takes them from one lap, so that how many laps are
        strung together leaves the sun's places unchanged.
        """
        out = dataclasses.replace(self)
        out.__dict__["sun_cells"] = (np.asarray(cell, dtype=np.int64), np.asarray(places))
        return out

    @property
    def n(self) -> int:
        """Number of segments."""
        return int(self.length_m.size)

    @classmethod
    def from_segments(cls, segments: pd.DataFrame, vehicle: Vehicle, drive_opts: DriveOptions,
                      default_speed_kph: float | None = None,
                      recorded: RecordedDrive | None = None) -> Course:
        """The course of a segments table for a vehicle and a driver.

        With ``recorded`` speeds (a logged drive) the route needs no speed limits.
        """
        source = str(segments.attrs.get("source", "route"))
        if len(segments) == 0:
            raise TripsimInputError("the route has no segments", source)
        col = {c: segments[c].to_numpy(dtype=float) for c in (
            "start_m", "length_m", "slope_length_m", "grade", "heading_deg", "elevation_m",
            "elevation_end_m", "curvature_per_m", "speed_limit_kph", "lat_deg", "lon_deg")}
        if recorded is not None:
            if recorded.time_s.size != len(segments):
                raise TripsimInputError(f"recorded times cover {recorded.time_s.size} segments, "
                                        f"the route has {len(segments)}", source)
            top = float(np.max(recorded.v_nodes_mps)) * KPH_PER_MPS + 1.0
            default_speed_kph = min(max(top, 1.0), 300.0)
        limits = _limits_mps(col["speed_limit_kph"], default_speed_kph, source)
        target = target_speed_mps(limits, col["curvature_per_m"],
                                  speed_factor=drive_opts.speed_factor,
                                  lateral_accel_mps2=drive_opts.lateral_accel_mps2,
                                  top_speed_mps=vehicle.drivetrain.top_speed_kph / KPH_PER_MPS)
        stop_node, dwell = _stops(segments["stop_kind_end"].to_numpy(), drive_opts)
        mid_ele = 0.5 * (col["elevation_m"] + col["elevation_end_m"])
        return cls(col["start_m"], col["length_m"], col["slope_length_m"], col["grade"],
                   col["heading_deg"], mid_ele, target, drive.node_caps(target, stop_node),
                   dwell if recorded is None else np.zeros(len(segments)), col["lat_deg"],
                   col["lon_deg"], source, recorded)


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


#: Rows of the station table handed to the air pass: per run and slot.
_STATION = ("temp_c", "pressure_pa", "wind_speed_mps", "wind_from_deg", "ghi_w_m2")

_scale = jitted(air.barometric_scale)
_density = jitted(air.air_density)
_headwind = jitted(air.headwind_mps)


@numba.njit(cache=True)
def _air_pass(slot, station, isa_ref_pa, isa_pa, heading, out):  # pragma: no cover - compiled
    """Air on every segment from station values per run and slot (``slot`` empty: slot 0).

    ``station`` rows: temperature, pressure (NaN: standard), wind at body height, wind
    direction, irradiance.
    """
    n_runs, n = out.shape[1], out.shape[2]
    one_slot = slot.shape[0] == 0
    for r in range(n_runs):
        for i in range(n):
            k = 0 if one_slot else slot[r, i]
            temp = station[0, r, k]
            p = station[1, r, k]
            pres = isa_pa[i] if np.isnan(p) else _scale(p, isa_ref_pa, isa_pa[i])
            out[0, r, i] = temp
            out[1, r, i] = pres
            out[2, r, i] = _density(temp, pres)
            out[3, r, i] = _headwind(station[2, r, k], station[3, r, k], heading[i])
            out[4, r, i] = station[4, r, k]


def _air(course: Course, vehicle: Vehicle, station: np.ndarray, slot: np.ndarray | None,
         z_ref: float, ref_height_m: float) -> _Air:
    """The air on every segment of every run from station values (5, R, S)."""
    n_runs = station.shape[1]
    station = np.array(station, dtype=float)
    station[2] = air.wind_at_height(station[2], vehicle.body.height_m, ref_height_m)
    out = np.empty((5, n_runs, course.n))
    _air_pass(np.zeros((0, 0), dtype=np.int64) if slot is None else slot, station,
              float(air.pressure_from_elevation(z_ref)), course.isa_pressure_pa,
              course.heading_deg, out)
    return _Air(*out)


def _conditions_station(course: Course, cond: Conditions, n_runs: int
                        ) -> tuple[np.ndarray, float]:
    values = (cond.temp_c, np.nan if cond.pressure_pa is None else cond.pressure_pa,
              cond.wind_speed_mps, cond.wind_from_deg, cond.ghi_w_m2)
    station = np.broadcast_to(np.asarray(values, dtype=float)[:, None, None], (5, n_runs, 1))
    z_ref = (cond.pressure_elevation_m if cond.pressure_elevation_m is not None
             else float(course.elevation_m[0]))
    return station, z_ref


def _slots(elapsed_s: np.ndarray, total_s: np.ndarray) -> tuple[np.ndarray, int]:
    """Slot of each segment (by the middle of its time) and the number of slots."""
    slot = np.floor((elapsed_s + 0.5 * total_s) / SLOT_S).astype(np.int64)
    return slot, int(slot.max()) + 1


def _sky_on_slots(weather: Weather, depart_s: np.ndarray, n_slots: int) -> dict[str, np.ndarray]:
    mid = (np.arange(n_slots) + 0.5) * SLOT_S
    epoch = depart_s[:, None] + mid[None, :]
    sky = conditions_at_seconds(weather, weather_seconds(weather, epoch.ravel()))
    return {k: v.reshape(epoch.shape) for k, v in sky.items()} | {"epoch_s": epoch}


def _station(sky: dict[str, np.ndarray]) -> np.ndarray:
    return np.stack([sky[k] for k in _STATION])


def _gather(values: np.ndarray, slot: np.ndarray) -> np.ndarray:
    return np.take_along_axis(values, slot, axis=1)


# --- the compiled per-segment pass, built from the physics functions --------------------
_aero = jitted(roadload.aero_force_n)
_mean_sq = jitted(roadload.mean_square_air_speed)
_rolling = jitted(roadload.rolling_force_n)
_grade = jitted(roadload.grade_force_n)
_inertia = jitted(roadload.inertia_force_n)
_power_split = jitted(powertrain.power_split)
_aux = jitted(cabin.auxiliary_power_w)
_triangle = jitted(drive.triangle_phases)

#: Sums over each run kept by the segment pass (:attr:`Runs.sums`), in order. [Wh]
SUMS = ("aero_wh", "rolling_wh", "grade_wh", "inertia_wh", "drive_losses_wh",
        "regen_losses_wh", "friction_brakes_wh", "aux_wh", "regen_wh", "use_wh")


@numba.njit(cache=True, inline="always")
def _phase(v0, v1, s, t, grade, density, headwind, road, dp):  # pragma: no cover - compiled
    """Forces × distance (N·m) and energies (J) of one constant-acceleration phase.

    Returns (accel·s, aero·s, rolling·s, grade·s, inertia·s, force·s, battery, drive loss,
    regen, regen loss, friction).

    The work of each force is exact for constant acceleration (the mean square speed
    over distance, :func:`tripsim.roadload.mean_square_air_speed`).  How that work splits
    between drive, regeneration and friction brakes depends on the power at each moment
    (the low-speed fade and the cap of regeneration, an efficiency map), so the
    drivetrain split is integrated over the phase's time with three-point Gauss-Legendre
    quadrature of the instantaneous power (exact for the cubic aerodynamic power), and
    the braking energy is then set so that drive − braking equals the exact work.
    """
    accel = (v1 * v1 - v0 * v0) / (2.0 * s)
    aero = _aero(density, road.cda_m2, _mean_sq(v0, v1, headwind))
    roll = _rolling(road.mass_kg, road.crr, grade, 0.5 * (v0 + v1), road.crr_per_mps)
    grad = _grade(road.mass_kg, grade)
    inert = _inertia(road.inertial_mass_kg, accel)
    force = aero + roll + grad + inert
    work = force * s
    drive = brake = traction = captured = regen = 0.0
    for k in range(3):
        v = v0 + (v1 - v0) * _GL_NODES[k]
        vr = v + headwind
        f = (_aero(density, road.cda_m2, vr * abs(vr))
             + _rolling(road.mass_kg, road.crr, grade, v, road.crr_per_mps) + grad + inert)
        p = f * v
        battery, _, regen_w, regen_loss_w, _ = _power_split(p, v, f, dp)
        w = _GL_WEIGHTS[k] * t
        drive += w * max(p, 0.0)
        brake += w * max(-p, 0.0)
        traction += w * (battery + regen_w)
        captured += w * (regen_w + regen_loss_w)
        regen += w * regen_w
    # keep drive − braking equal to the exact work of the forces (the quadrature differs
    # from it only where the power changes sign inside the phase)
    excess = work - (drive - brake)
    if excess > 0.0 and brake >= excess:
        brake -= excess
    elif excess > 0.0:
        if drive > 0.0:
            traction *= (drive + excess) / drive
        else:
            battery, _, _, _, _ = _power_split(excess / t, s / t, excess / s, dp)
            traction = battery * t
        drive += excess
    elif excess < 0.0 and drive >= -excess and drive > 0.0:
        traction *= (drive + excess) / drive
        drive += excess
    else:
        brake -= excess
    if captured > brake:
        scale = brake / captured
        captured *= scale
        regen *= scale
    return (accel * s, aero * s, roll * s, grad * s, inert * s, work, traction - regen,
            traction - drive, regen, captured - regen, brake - captured)


#: Three-point Gauss-Legendre nodes on [0, 1] and their weights.
_GL_NODES = np.array([0.5 - 0.1 * np.sqrt(15.0), 0.5, 0.5 + 0.1 * np.sqrt(15.0)])
_GL_WEIGHTS = np.array([5.0 / 18.0, 8.0 / 18.0, 5.0 / 18.0])


@numba.njit(cache=True)
def _segments_pass(v, slope_m, grade, time_s, dwell_s, density, headwind, temp, ghi, accel,
                   decel, road, dp, cp, cols, demand, sums):  # pragma: no cover - compiled
    """Forces, drivetrain split, auxiliaries and demand of every segment of every run.

    ``cols`` (13 or 0, R, n) receives the per-segment columns (:data:`COLUMNS` and the
    auxiliary power); ``sums`` (R, 10) the sums of :data:`SUMS`.
    """
    n_runs, n = time_s.shape
    want = cols.shape[0] > 0
    for r in range(n_runs):
        last_t, last_g, aux_w = np.nan, np.nan, 0.0
        w_aero = w_roll = w_grade = w_inert = e_loss = e_rloss = e_fric = e_aux = 0.0
        e_regen = e_use = 0.0
        for i in range(n):
            v0, v1, s, t = v[r, i], v[r, i + 1], slope_m[i], time_s[r, i]
            if v0 + v1 > 1e-9:
                ph = _phase(v0, v1, s, t, grade[i], density[r, i], headwind[r, i], road, dp)
            else:  # from rest to rest: accelerate, then brake
                s_a, s_b, v_peak, t_a, t_b = _triangle(s, accel, decel)
                pa = _phase(0.0, v_peak, s_a, t_a, grade[i], density[r, i], headwind[r, i],
                            road, dp)
                pb = _phase(v_peak, 0.0, s_b, t_b, grade[i], density[r, i], headwind[r, i],
                            road, dp)
                ph = (pa[0] + pb[0], pa[1] + pb[1], pa[2] + pb[2], pa[3] + pb[3],
                      pa[4] + pb[4], pa[5] + pb[5], pa[6] + pb[6], pa[7] + pb[7],
                      pa[8] + pb[8], pa[9] + pb[9], pa[10] + pb[10])
            if temp[r, i] != last_t or ghi[r, i] != last_g:  # the same air: the same load
                last_t, last_g = temp[r, i], ghi[r, i]
                aux_w = _aux(last_t, last_g, cp)
            aux_j = aux_w * (t + dwell_s[i])
            demand[r, i] = (ph[6] + aux_j) / 3600.0
            w_aero += ph[1]
            w_roll += ph[2]
            w_grade += ph[3]
            w_inert += ph[4]
            e_loss += ph[7]
            e_rloss += ph[9]
            e_fric += ph[10]
            e_aux += aux_j
            e_regen += ph[8]
            e_use += ph[6] + ph[8] + aux_j
            if want:
                cols[0, r, i] = ph[0] / s  # accel and forces: distance averages
                cols[1, r, i] = ph[1] / s
                cols[2, r, i] = ph[2] / s
                cols[3, r, i] = ph[3] / s
                cols[4, r, i] = ph[4] / s
                cols[5, r, i] = ph[5] / s
                cols[6, r, i] = ph[5] / t  # wheel power
                cols[7, r, i] = ph[6] / t  # battery, loss, regen, regen loss, friction
                cols[8, r, i] = ph[7] / t
                cols[9, r, i] = ph[8] / t
                cols[10, r, i] = ph[9] / t
                cols[11, r, i] = ph[10] / t
                cols[12, r, i] = aux_w
        sums[r, 0] = w_aero / 3600.0
        sums[r, 1] = w_roll / 3600.0
        sums[r, 2] = w_grade / 3600.0
        sums[r, 3] = w_inert / 3600.0
        sums[r, 4] = e_loss / 3600.0
        sums[r, 5] = e_rloss / 3600.0
        sums[r, 6] = e_fric / 3600.0
        sums[r, 7] = e_aux / 3600.0
        sums[r, 8] = e_regen / 3600.0
        sums[r, 9] = e_use / 3600.0


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
    sums : dict of array, shape (R,)
        Per run (:data:`SUMS`): the work of each road-load force, drivetrain and
        braking losses, auxiliary energy, the energy regeneration returns (``regen_wh``)
        and the energy traction and auxiliaries draw (``use_wh``), before the battery
        decides what it accepts. [Wh]
    temp_mean_c : array, shape (R,)
        Time-weighted mean ambient temperature of each run. [°C]
    columns : dict of array, shape (R, n)
        Forces and powers (:data:`COLUMNS`), when asked for.
    constant_air : bool
        The air is the same on every segment (fixed conditions).
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
    solar_power_w: np.ndarray | None
    demand_nosolar_wh: np.ndarray
    solar_wh: np.ndarray | None
    sums: dict[str, np.ndarray]
    temp_mean_c: np.ndarray
    columns: dict[str, np.ndarray] = field(default_factory=dict, repr=False)
    constant_air: bool = False

    @property
    def regen_wh(self) -> np.ndarray:
        """Energy regeneration returns on each run [Wh]."""
        return self.sums["regen_wh"]

    @property
    def use_wh(self) -> np.ndarray:
        """Energy traction and auxiliaries draw on each run [Wh]."""
        return self.sums["use_wh"]

    def demand_wh(self, panel_scale: float = 1.0) -> np.ndarray:
        """Net battery demand [Wh] with the panels scaled by ``panel_scale``."""
        if self.solar_wh is None:
            return self.demand_nosolar_wh
        return self.demand_nosolar_wh - panel_scale * self.solar_wh


def run_capacity_wh(vehicle: Vehicle, temp_mean_c: np.ndarray,
                    usable_kwh: float | None = None) -> np.ndarray:
    """Usable energy of the battery on each run [Wh], at the pack's temperature.

    The pack's temperature follows the run's mean ambient temperature
    (:meth:`tripsim.vehicle.Vehicle.battery_temp_c`).
    """
    kwh = vehicle.battery.usable_kwh if usable_kwh is None else usable_kwh
    return kwh * 1000.0 * vehicle.capacity_factor(np.atleast_1d(
        np.asarray(temp_mean_c, dtype=float)))


@numba.njit(cache=True)
def _slot_means(slot, n_slots, total_s, east, north, cell, slope_m, time_s, headwind
                ):  # pragma: no cover - compiled
    """Per run and slot: time-weighted heading vector, air speed over the body, map cell."""
    n_runs, n = total_s.shape
    out = np.zeros((4, n_runs, n_slots))
    cells = np.zeros((n_runs, n_slots), dtype=np.int64)
    for r in range(n_runs):
        for i in range(n):
            k = slot[r, i]
            w = total_s[r, i]
            out[0, r, k] += w * east[i]
            out[1, r, k] += w * north[i]
            out[2, r, k] += w * abs(slope_m[i] / time_s[r, i] + headwind[r, i])
            out[3, r, k] += w
            cells[r, k] = cell[i]
    return out, cells


def _driving_solar_w(course: Course, vehicle: Vehicle, sky: dict[str, np.ndarray],
                     slot: np.ndarray, n_slots: int, total_s: np.ndarray, time_s: np.ndarray,
                     a: _Air, solar: SolarOptions) -> np.ndarray:
    """Panel power on every segment, evaluated per slot of each run.

    Within a slot the heading is the time-weighted mean direction and the air speed
    over the body (which cools the cells) the time-weighted mean.
    """
    cell_of_segment, places = course.sun_cells
    rad = np.radians(course.heading_deg)
    means, cell = _slot_means(slot, n_slots, total_s, np.sin(rad), np.cos(rad),
                              cell_of_segment, course.slope_length_m, time_s, a.headwind_mps)
    heading = np.degrees(np.arctan2(means[0], means[1])) % 360.0
    air_speed = means[2] / np.maximum(means[3], 1e-9)
    epoch = sky["epoch_s"].ravel()
    sun = sun_at(epoch, cell.ravel(), places)
    light = sky_for(epoch, sun, sky["ghi_w_m2"].ravel(), sky["dni_w_m2"].ravel(),
                    sky["dhi_w_m2"].ravel(), sky["temp_c"].ravel(), model=solar.sky_model)
    power = facet_power_w(vehicle.panels, heading.ravel(), light, air_speed_mps=air_speed.ravel(),
                          shading=solar.shading, model=solar.sky_model, albedo=solar.albedo)
    return _gather(power.reshape(slot.shape[0], n_slots), slot)


def _drive(course: Course, vehicle: Vehicle, drive_opts: DriveOptions, a: _Air,
           stops: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Node speeds, segment times and the clock of every run (one compiled pass)."""
    shape = a.density_kg_m3.shape
    if course.recorded is not None:  # as driven: no profile
        v = np.ascontiguousarray(np.broadcast_to(course.recorded.v_nodes_mps,
                                                 (shape[0], course.n + 1)), dtype=float)
        t = np.ascontiguousarray(np.broadcast_to(course.recorded.time_s, shape), dtype=float)
        total = t + course.dwell_s + stops
        elapsed = np.zeros(shape)
        np.cumsum(total[:, :-1], axis=1, out=elapsed[:, 1:])
        return v, t, elapsed
    v = np.empty((shape[0], course.n + 1))
    t = np.empty(shape)
    elapsed = np.empty(shape)
    drive._drive_kernel(course.slope_length_m, course.node_cap, course.grade, course.dwell_s,
                        stops, a.density_kg_m3, a.headwind_mps,
                        roadload.road_params(vehicle.body), _profile_params(vehicle, drive_opts),
                        v, t, elapsed)
    return v, t, elapsed


def _profile_params(vehicle: Vehicle, drive_opts: DriveOptions) -> drive.ProfileParams:
    return drive.ProfileParams(float(drive_opts.accel_mps2), float(drive_opts.decel_mps2),
                               float(vehicle.drivetrain.motor_max_kw) * 1000.0,
                               float(drive_opts.min_speed_mps))


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
    n_runs = depart.size
    stops = np.zeros(course.n) if stop_s is None else np.ascontiguousarray(stop_s, dtype=float)
    sky = None
    slot = None
    n_slots = 0
    if weather is None:
        cond = conditions or Conditions()
        station, z_ref = _conditions_station(course, cond, n_runs)
        a = _air(course, vehicle, station, None, z_ref, cond.wind_height_m)
        v, t, elapsed = _drive(course, vehicle, drive_opts, a, stops)
    else:
        first = conditions_at_seconds(weather, weather_seconds(weather, depart))
        station = np.stack([first[k] for k in _STATION])[:, :, None]
        a = _air(course, vehicle, station, None, weather.elevation_m, 10.0)
        for _ in range(2):
            v, t, elapsed = _drive(course, vehicle, drive_opts, a, stops)
            slot, n_slots = _slots(elapsed, t + course.dwell_s)
            sky = _sky_on_slots(weather, depart, n_slots)
            a = _air(course, vehicle, _station(sky), slot, weather.elevation_m, 10.0)
    shape = (n_runs, course.n)
    cols = np.empty((13 if columns else 0, *shape))
    demand = np.empty(shape)
    sums = np.zeros((n_runs, len(SUMS)))
    _segments_pass(v, course.slope_length_m, course.grade, t, course.dwell_s, a.density_kg_m3,
                   a.headwind_mps, a.temp_c, a.ghi_w_m2, float(drive_opts.accel_mps2),
                   float(drive_opts.decel_mps2), roadload.road_params(vehicle.body),
                   powertrain.drive_params(vehicle.drivetrain),
                   cabin.cabin_params(vehicle.auxiliary), cols, demand, sums)
    total_s = t + course.dwell_s
    solar_w = solar_wh = None
    if sky is not None and vehicle.panels:
        solar_w = _driving_solar_w(course, vehicle, sky, slot, n_slots, total_s, t, a,
                                   solar or SolarOptions())
        solar_wh = solar_w * total_s / J_PER_WH
    if weather is None:
        temp_mean = np.full(n_runs, float((conditions or Conditions()).temp_c))
    else:
        temp_mean = (a.temp_c * total_s).sum(axis=1) / total_s.sum(axis=1)
    return Runs(
        depart_s=depart, v_nodes_mps=v, time_s=t, elapsed_s=elapsed, temp_c=a.temp_c,
        pressure_pa=a.pressure_pa, density_kg_m3=a.density_kg_m3, headwind_mps=a.headwind_mps,
        ghi_w_m2=a.ghi_w_m2, solar_power_w=solar_w, demand_nosolar_wh=demand, solar_wh=solar_wh,
        sums=dict(zip(SUMS, sums.T, strict=True)), temp_mean_c=temp_mean,
        columns=dict(zip((*COLUMNS, "aux_power_w"), cols, strict=True)) if columns else {},
        constant_air=weather is None)
