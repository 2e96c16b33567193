"""Coasting: the vehicle rolling out in neutral under its road load alone.

A coast-down run is how road-load coefficients are measured (SAE J2263):
from a set speed the vehicle rolls with no drive and no brakes, slowed by
rolling resistance, drag and grade.  :func:`coast` integrates that motion
with the same force functions the trip simulation uses.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
from scipy.integrate import solve_ivp

from tripsim import roadload
from tripsim.air import air_density, pressure_from_elevation
from tripsim.vehicle import Vehicle

__all__ = ["coast"]


def coast(
    vehicle: Vehicle,
    v0_mps: float,
    *,
    temp_c: float = 20.0,
    pressure_pa: float | None = None,
    elevation_m: float = 0.0,
    grade: float = 0.0,
    headwind_mps: float = 0.0,
    v_end_mps: float = 0.0,
    max_time_s: float = 3600.0,
    sample_s: float = 1.0,
) -> pd.DataFrame:
    r"""Roll out from ``v0_mps`` with no drive force until ``v_end_mps`` (or a stop).

    Parameters
    ----------
    vehicle : Vehicle
        Mass, rotating-mass factor, Cd·A, Crr.
    v0_mps : float
        Speed at the start. [m/s]
    temp_c, pressure_pa, elevation_m : float
        Air state; pressure from the standard atmosphere at ``elevation_m``
        when not given. [°C], [Pa], [m]
    grade : float, default 0
        Road grade, rise over run. [-]
    headwind_mps : float, default 0
        Steady headwind (negative: tailwind). [m/s]
    v_end_mps : float, default 0
        Speed at which the run ends. [m/s]
    max_time_s : float, default 3600
        Longest run. [s]
    sample_s : float, default 1
        Spacing of the returned samples. [s]

    Returns
    -------
    pandas.DataFrame
        ``time_s``, ``speed_mps``, ``distance_m``; the last row is the end of the
        run (the moment ``v_end_mps`` is reached).

    Notes
    -----
    .. math::
        \lambda m \frac{dv}{dt} = -\left[m g C_{rr}(v)\cos\theta + m g \sin\theta
        + \tfrac12 \rho C_d A (v + w)|v + w|\right]

    integrated with :func:`scipy.integrate.solve_ivp` (DOP853, rtol 1e-10)
    with a terminal event at ``v_end_mps``.
    """
    p = pressure_from_elevation(elevation_m) if pressure_pa is None else pressure_pa
    rho = float(air_density(temp_c, p))
    body = vehicle.body
    m, m_eff = vehicle.mass_kg, vehicle.inertial_mass_kg
    grade_n = float(roadload.grade_force_n(m, grade))

    def rhs(_t: float, y: np.ndarray) -> list[float]:
        v = y[1]
        vr = v + headwind_mps
        force = (roadload.rolling_force_n(m, body.crr, grade, v, body.crr_per_mps) + grade_n
                 + roadload.aero_force_n(rho, body.drag_area_m2, vr * abs(vr)))
        return [v, -force / m_eff]

    def done(_t: float, y: np.ndarray) -> float:
        return y[1] - v_end_mps

    done.terminal = True  # type: ignore[attr-defined]
    done.direction = -1  # type: ignore[attr-defined]
    sol = solve_ivp(rhs, (0.0, max_time_s), [0.0, float(v0_mps)], method="DOP853", rtol=1e-10,
                    atol=1e-9, events=done, dense_output=True)
    t_end = float(sol.t_events[0][0]) if sol.t_events[0].size else float(sol.t[-1])
    t = np.append(np.arange(0.0, t_end, sample_s), t_end)
    y = sol.sol(t)
    return pd.DataFrame({"time_s": t, "speed_mps": np.maximum(y[1], v_end_mps),
                         "distance_m": y[0]})
