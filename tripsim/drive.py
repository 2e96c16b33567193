"""How the vehicle is driven: target speeds, the speed profile and the clock.

Speeds live on the *nodes* between segments (``n + 1`` of them for ``n``
segments); within a segment the acceleration is constant, so
v₁² = v₀² + 2·a·s and the segment takes t = 2·s / (v₀ + v₁).

The profile is the classic two-pass construction used in minimum-time
velocity planning: a forward pass from rest, limited by the driver's
acceleration and the motor's power against the road load, and a backward pass
from the destination, limited by the driver's braking; both capped at every
node by the target speed of the segments on either side, and zero at stops.
"""

from __future__ import annotations

from typing import NamedTuple

import numba
import numpy as np
import pandas as pd

from tripsim import roadload
from tripsim.compiled import jitted
from tripsim.errors import TripsimInputError
from tripsim.options import Number, Options, option

__all__ = ["DriveOptions", "ProfileParams", "clock", "node_caps", "segment_times_s",
           "speed_profile", "target_speed_mps", "triangle_phases"]


class DriveOptions(Options):
    """How the driver drives.  Defaults are tripsim's choices (common practice).

    Parameters
    ----------
    speed_factor : float, default 1.0
        Target speed as a share of the speed limit.
    accel_mps2 : float, default 1.2
        Largest acceleration the driver uses (moderate driving: 1-1.5 m/s²). [m/s²]
    decel_mps2 : float, default 1.8
        Largest service braking (comfortable: 1.5-2.5 m/s²). [m/s²]
    lateral_accel_mps2 : float, default 2.5
        Largest lateral acceleration accepted in curves. [m/s²]
    signal_wait_s : float, default 15
        Mean wait at a traffic signal (about half the red phase of a 60 s cycle). [s]
    stop_sign_wait_s : float, default 3
        Wait at a stop sign. [s]
    stop_at_signals : bool, default True
        Whether the vehicle comes to rest at every traffic signal (the
        conservative reading of a signal on the route).
    min_speed_mps : float, default 1.0
        Crawl speed the profile never drops below between stops (where the
        motor cannot hold speed on a climb). [m/s]
    """

    speed_factor: Number = option(1.0, ge=0.2, le=2.0, cli="--speed-factor")
    accel_mps2: Number = option(1.2, ge=0.05, le=10.0, cli="--accel-mps2")
    decel_mps2: Number = option(1.8, ge=0.05, le=10.0, cli="--decel-mps2")
    lateral_accel_mps2: Number = option(2.5, ge=0.1, le=15.0, cli="--lateral-accel-mps2")
    signal_wait_s: Number = option(15.0, ge=0.0, le=600.0, cli="--signal-wait-s")
    stop_sign_wait_s: Number = option(3.0, ge=0.0, le=600.0, cli="--stop-sign-wait-s")
    stop_at_signals: bool = option(True, cli="--stop-at-signals")
    min_speed_mps: Number = option(1.0, ge=0.1, le=10.0, cli="--min-speed-mps")


def target_speed_mps(
    limit_mps: np.ndarray,
    curvature_per_m: np.ndarray,
    *,
    speed_factor: float,
    lateral_accel_mps2: float,
    top_speed_mps: float,
) -> np.ndarray:
    r"""Speed the driver aims for on each segment.

    Parameters
    ----------
    limit_mps : array
        Speed limit. [m/s]
    curvature_per_m : array
        Path curvature κ = 1/radius. [1/m]
    speed_factor : float
        Share of the limit the driver holds.
    lateral_accel_mps2 : float
        Largest accepted lateral acceleration. [m/s²]
    top_speed_mps : float
        Vehicle's top speed. [m/s]

    Returns
    -------
    array
        Target speed. [m/s]

    Notes
    -----
    .. math:: v_t = \min(f\,v_{lim},\ \sqrt{a_{lat}/\kappa},\ v_{max})
    """
    with np.errstate(divide="ignore"):
        curve = np.sqrt(lateral_accel_mps2 / np.asarray(curvature_per_m, dtype=float))
    return np.minimum(np.minimum(np.asarray(limit_mps) * speed_factor, curve), top_speed_mps)


class ProfileParams(NamedTuple):
    """The driver's and the motor's limits as plain numbers, for the compiled profile."""

    accel_mps2: float
    decel_mps2: float
    power_w: float
    min_speed_mps: float


_rolling = jitted(roadload.rolling_force_n)
_grade = jitted(roadload.grade_force_n)
_aero = jitted(roadload.aero_force_n)


@numba.njit(cache=True)
def _one_profile(v, length_m, node_cap, grade, density, headwind, road, prof
                 ):  # pragma: no cover - compiled
    """Fill ``v`` (n + 1 node speeds) for one run."""
    n = length_m.size
    v_min = prof.min_speed_mps
    v[0] = node_cap[0]
    for i in range(n):  # forward: driver acceleration and motor power against road load
        vi = v[i]
        vr = vi + headwind[i]
        resist = (_rolling(road.mass_kg, road.crr, grade[i], vi, road.crr_per_mps)
                  + _grade(road.mass_kg, grade[i]) + _aero(density[i], road.cda_m2, vr * abs(vr)))
        a_power = (prof.power_w / max(vi, v_min) - resist) / road.inertial_mass_kg
        a = min(prof.accel_mps2, a_power)
        v2 = vi * vi + 2.0 * a * length_m[i]
        vn = np.sqrt(v2) if v2 > v_min * v_min else v_min
        v[i + 1] = min(node_cap[i + 1], vn)
    for i in range(n - 1, -1, -1):  # backward: braking
        vb = np.sqrt(v[i + 1] * v[i + 1] + 2.0 * prof.decel_mps2 * length_m[i])
        if vb < v[i]:
            v[i] = vb


@numba.njit(cache=True)
def _drive_kernel(length_m, node_cap, grade, dwell_s, stop_s, density, headwind, road, prof,
                  v, time_s, elapsed_s):  # pragma: no cover - compiled
    """Speed profile, segment times and the clock of every run, in place."""
    n_runs, n = time_s.shape
    for r in range(n_runs):
        _one_profile(v[r], length_m, node_cap, grade, density[r], headwind[r], road, prof)
        clock = 0.0
        for i in range(n):
            vs = v[r, i] + v[r, i + 1]
            if vs > 1e-9:
                t = 2.0 * length_m[i] / vs
            else:
                _, _, _, t_a, t_b = _triangle_twin(length_m[i], prof.accel_mps2,
                                                   prof.decel_mps2)
                t = t_a + t_b
            time_s[r, i] = t
            elapsed_s[r, i] = clock
            clock += t + dwell_s[i] + stop_s[i]


def node_caps(target_mps: np.ndarray, stop_node: np.ndarray) -> np.ndarray:
    """Speed cap at every node: the lower target of the segments meeting there, zero at stops.

    The first and last nodes are always stops.
    """
    target = np.asarray(target_mps, dtype=float)
    cap = np.empty(target.size + 1)
    cap[0] = target[0]
    cap[-1] = target[-1]
    cap[1:-1] = np.minimum(target[:-1], target[1:])
    stops = np.asarray(stop_node, dtype=bool).copy()
    stops[0] = stops[-1] = True
    cap[stops] = 0.0
    return cap


def speed_profile(
    length_m: np.ndarray,
    target_mps: np.ndarray,
    stop_node: np.ndarray,
    *,
    accel_mps2: float,
    decel_mps2: float,
    power_w: float = np.inf,
    inertial_mass_kg: float = 1.0,
    mass_kg: float = 0.0,
    crr: float = 0.0,
    crr_per_mps: float = 0.0,
    grade: np.ndarray | None = None,
    cda_m2: float = 0.0,
    density_kg_m3: np.ndarray | float = 1.2,
    headwind_mps: np.ndarray | float = 0.0,
    min_speed_mps: float = 1.0,
) -> np.ndarray:
    r"""Node speeds from target speeds, stops, driver limits and motor power.

    Parameters
    ----------
    length_m : array, shape (n,)
        Distance travelled on each segment (along the slope). [m]
    target_mps : array, shape (n,)
        Target speed of each segment (:func:`target_speed_mps`). [m/s]
    stop_node : array of bool, shape (n + 1,)
        Nodes where the vehicle comes to rest (the first and last always do).
    accel_mps2, decel_mps2 : float
        Driver's largest acceleration and braking. [m/s²]
    power_w : float, default inf
        Largest tractive power at the wheels. [W]
    inertial_mass_kg : float
        Effective inertial mass, for the power limit. [kg]
    mass_kg, crr, crr_per_mps, grade, cda_m2 : optional
        Road load of :mod:`tripsim.roadload` (rolling, grade, drag) against which the
        motor's power accelerates; zero when omitted.
    density_kg_m3, headwind_mps : float or array, shape (n,) or (R, n)
        Air on each segment; a 2-D array gives R runs of the same route at once.
    min_speed_mps : float, default 1
        Crawl speed where power cannot hold speed on a climb. [m/s]

    Returns
    -------
    array, shape (n + 1,) or (R, n + 1)
        Speed at each node. [m/s]

    Notes
    -----
    Forward pass: :math:`v_{i+1}^2 = \min(c_{i+1}^2,\ v_i^2 + 2 a_i s_i)` with
    :math:`a_i = \min(a_{max},\ (P/v_i - F(v_i))/m_{eff})` and F the road load;
    backward pass: :math:`v_i^2 \le v_{i+1}^2 + 2 b s_i`.  The node cap :math:`c` is
    the lower target of the two segments meeting there, and zero at stops.
    """
    length = np.ascontiguousarray(length_m, dtype=float)
    n = length.size
    cap = node_caps(target_mps, stop_node)
    density = np.asarray(density_kg_m3, dtype=float)
    runs = density.ndim == 2 or np.ndim(headwind_mps) == 2
    shape = np.broadcast_shapes(np.shape(density), np.shape(headwind_mps), (n,))
    if len(shape) == 1:
        shape = (1, n)
    rho = np.ascontiguousarray(np.broadcast_to(density, shape))
    wind = np.ascontiguousarray(np.broadcast_to(np.asarray(headwind_mps, dtype=float), shape))
    slope = np.zeros(n) if grade is None else np.ascontiguousarray(grade, dtype=float)
    road = roadload.RoadParams(float(mass_kg), float(inertial_mass_kg), float(cda_m2), float(crr),
                               float(crr_per_mps))
    prof = ProfileParams(float(accel_mps2), float(decel_mps2), float(power_w),
                         float(min_speed_mps))
    v = np.empty((shape[0], n + 1))
    t = np.empty(shape)
    _drive_kernel(length, cap, slope, np.zeros(n), np.zeros(n), rho, wind, road, prof, v, t,
                  np.empty(shape))
    return v if runs else v[0]


def triangle_phases(length_m: float, accel_mps2: float, decel_mps2: float
                    ) -> tuple[float, float, float, float, float]:
    r"""A segment driven from rest to rest: accelerate, then brake.

    Returns
    -------
    s_accel_m, s_brake_m, v_peak_mps, t_accel_s, t_brake_s : float

    Notes
    -----
    With a the acceleration and b the braking, the peak speed is reached after
    :math:`s_a = s\,b/(a+b)`: :math:`v_p = \sqrt{2 a s_a}`, :math:`t_a = v_p/a`,
    :math:`t_b = v_p/b`.
    """
    s_a = length_m * decel_mps2 / (accel_mps2 + decel_mps2)
    s_b = length_m - s_a
    v_peak = np.sqrt(2.0 * accel_mps2 * s_a)
    return s_a, s_b, v_peak, v_peak / accel_mps2, v_peak / decel_mps2


def segment_times_s(
    length_m: np.ndarray, v_node_mps: np.ndarray, *, accel_mps2: float, decel_mps2: float
) -> np.ndarray:
    r"""Time on each segment under constant acceleration between node speeds.

    Notes
    -----
    :math:`t = 2 s / (v_0 + v_1)`; a segment that starts and ends at rest
    (two stops in a row) is driven as a triangle, accelerating then braking:
    :math:`t = \sqrt{2 s (a + b) / (a b)}` (:func:`triangle_phases`).
    """
    v0, v1 = v_node_mps[..., :-1], v_node_mps[..., 1:]
    vsum = v0 + v1
    _, _, _, t_a, t_b = triangle_phases(np.asarray(length_m, dtype=float), accel_mps2,
                                        decel_mps2)
    triangle = t_a + t_b
    with np.errstate(divide="ignore", invalid="ignore"):
        return np.where(vsum > 1e-9, 2.0 * length_m / np.where(vsum > 1e-9, vsum, 1.0), triangle)


def clock(depart: pd.Timestamp, duration_s: np.ndarray) -> pd.DatetimeIndex:
    """Time-zone-aware start time of each segment from a departure time.

    Parameters
    ----------
    depart : pandas.Timestamp
        Departure, with a time zone (naive times are rejected: a clock without
        a zone cannot be matched to weather or the sun).
    duration_s : array, shape (n,)
        Time spent on each segment, waits included. [s]

    Returns
    -------
    pandas.DatetimeIndex
        Time at which each segment begins.
    """
    if depart.tzinfo is None:
        raise TripsimInputError(
            f"departure time {depart.isoformat()} has no time zone; add one, e.g. +02:00 or Z",
            "--depart",
        )
    start_ns = np.empty(np.size(duration_s), dtype=np.int64)
    start_ns[0] = 0
    start_ns[1:] = np.rint(np.cumsum(duration_s)[:-1] * 1e9).astype(np.int64)
    utc = pd.DatetimeIndex((start_ns + depart.tz_convert("UTC").value).view("datetime64[ns]"))
    return utc.tz_localize("UTC").tz_convert(depart.tzinfo)


_triangle_twin = jitted(triangle_phases)
