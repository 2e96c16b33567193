"""Longitudinal road load: the forces a vehicle must overcome at its wheels.

All functions take scalars, arrays or Series and return the same kind.  Sign
convention: a positive force opposes motion (the vehicle must push), a negative
force helps it (downhill, tailwind, deceleration).

References
----------
T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE, 1992, ch. 4
(road loads: aerodynamic, rolling, grade) and ch. 2 (rotating-mass factor).
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from tripsim.units import G_MPS2, Numeric
from tripsim.vehicle import Body

__all__ = [
    "RoadParams",
    "aero_force_n",
    "grade_force_n",
    "inertia_force_n",
    "mean_square_air_speed",
    "road_params",
    "rolling_force_n",
]


def aero_force_n(density_kg_m3: Numeric, cda_m2: float, air_speed_sq_m2_s2: Numeric) -> Numeric:
    r"""Aerodynamic drag from the (signed) square of the air-relative speed.

    Parameters
    ----------
    density_kg_m3 : numeric
        Air density. [kg/m³]
    cda_m2 : float
        Drag area Cd·A. [m²]
    air_speed_sq_m2_s2 : numeric
        v_rel·|v_rel|, with v_rel the vehicle's speed plus the headwind; negative
        when a tailwind is faster than the vehicle. [m²/s²]

    Returns
    -------
    numeric
        Drag force. [N]

    Notes
    -----
    .. math:: F_a = \tfrac12 \rho\, C_d A\, v_{rel} |v_{rel}|
    """
    return 0.5 * density_kg_m3 * cda_m2 * air_speed_sq_m2_s2


def mean_square_air_speed(
    v_start_mps: Numeric, v_end_mps: Numeric, headwind_mps: Numeric
) -> Numeric:
    r"""Distance-average of v_rel·|v_rel| over a segment of constant acceleration.

    Parameters
    ----------
    v_start_mps, v_end_mps : numeric
        Vehicle speed at the ends of the segment. [m/s]
    headwind_mps : numeric
        Headwind component (negative for tailwind). [m/s]

    Returns
    -------
    numeric
        Mean of v_rel·|v_rel| over distance. [m²/s²]

    Notes
    -----
    Under constant acceleration v² is linear in distance, so the mean of v² over
    the segment is exactly (v₀² + v₁²)/2; the cross term uses the mean speed.
    With w the headwind, :math:`\overline{(v+w)^2} = (v_0^2+v_1^2)/2 + w(v_0+v_1) + w^2`.
    When the air-relative speed changes sign the sign of the mean is kept.
    """
    mean_sq = 0.5 * (v_start_mps**2 + v_end_mps**2) + headwind_mps * (v_start_mps + v_end_mps)
    mean_sq = mean_sq + headwind_mps**2
    v_rel = 0.5 * (v_start_mps + v_end_mps) + headwind_mps
    return np.sign(v_rel) * mean_sq


def rolling_force_n(
    mass_kg: float,
    crr: float,
    grade: Numeric,
    speed_mps: Numeric = 0.0,
    crr_per_mps: float = 0.0,
) -> Numeric:
    r"""Rolling resistance of the tyres.

    Parameters
    ----------
    mass_kg : float
        Vehicle mass with payload. [kg]
    crr : float
        Rolling-resistance coefficient at low speed. [-]
    grade : numeric
        Road grade, rise over run (0.05 = 5 %). [-]
    speed_mps : numeric, default 0
        Speed, for a Crr that rises with speed. [m/s]
    crr_per_mps : float, default 0
        Rise of Crr per m/s. [s/m]

    Returns
    -------
    numeric
        Rolling-resistance force. [N]

    Notes
    -----
    .. math:: F_r = m g\,(C_{rr} + k_v v)\cos\theta, \quad \theta = \arctan(\text{grade})
    """
    cos_theta = 1.0 / np.sqrt(1.0 + grade**2)
    return mass_kg * G_MPS2 * (crr + crr_per_mps * speed_mps) * cos_theta


def grade_force_n(mass_kg: float, grade: Numeric) -> Numeric:
    r"""Component of weight along the road.

    Parameters
    ----------
    mass_kg : float
        Vehicle mass with payload. [kg]
    grade : numeric
        Rise over run. [-]

    Returns
    -------
    numeric
        Force, positive uphill. [N]

    Notes
    -----
    .. math:: F_g = m g \sin\theta = m g\, \text{grade} / \sqrt{1 + \text{grade}^2}

    Over a segment of horizontal length L this does work m·g·Δh·L/s where s
    is the slope length; tripsim measures segments by their horizontal
    (geodesic) length and applies forces over the slope length, so the work
    is exactly m·g·Δh.
    """
    return mass_kg * G_MPS2 * grade / np.sqrt(1.0 + grade**2)


def inertia_force_n(inertial_mass_kg: float, accel_mps2: Numeric) -> Numeric:
    r"""Force to accelerate the vehicle including its rotating parts.

    Parameters
    ----------
    inertial_mass_kg : float
        Mass times the rotating-mass factor. [kg]
    accel_mps2 : numeric
        Acceleration along the road. [m/s²]

    Returns
    -------
    numeric
        Force. [N]

    Notes
    -----
    .. math:: F_i = \lambda m\, a
    """
    return inertial_mass_kg * accel_mps2


class RoadParams(NamedTuple):
    """The body's road-load parameters as plain numbers (see :class:`~tripsim.vehicle.Body`).

    ``mass_kg`` includes payload; ``inertial_mass_kg`` adds the rotating parts of the
    empty vehicle (:attr:`tripsim.vehicle.Body.inertial_mass_kg`).
    """

    mass_kg: float
    inertial_mass_kg: float
    cda_m2: float
    crr: float
    crr_per_mps: float


def road_params(body: Body) -> RoadParams:
    """Plain-number road-load parameters of a vehicle file's ``[body]`` table."""
    return RoadParams(float(body.total_mass_kg), float(body.inertial_mass_kg),
                      float(body.drag_area_m2), float(body.crr), float(body.crr_per_mps))
