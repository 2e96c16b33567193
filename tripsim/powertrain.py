"""From power at the wheels to power at the battery, driving and braking.

The functions take scalars or arrays of wheel power, speed and force and a
:class:`DriveParams` (plain numbers and arrays, built once from the vehicle file by
:func:`drive_params`), so the same code runs on numpy arrays and inside the compiled
passes of :mod:`tripsim.energy`.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from tripsim.units import KPH_PER_MPS
from tripsim.vehicle import Drivetrain

__all__ = ["DriveParams", "PowerSplit", "drive_efficiency", "drive_params", "map_efficiency",
           "power_split", "regen_fade", "split_wheel_power"]


class DriveParams(NamedTuple):
    """Drivetrain parameters as plain numbers (see :class:`~tripsim.vehicle.Drivetrain`).

    ``map_speed_kph`` is empty when the efficiency is the constant ``efficiency``.
    """

    efficiency: float
    map_speed_kph: np.ndarray
    map_torque_nm: np.ndarray
    map_efficiency: np.ndarray
    wheel_radius_m: float
    regen_efficiency: float
    regen_max_w: float
    regen_fade_kph: float


def drive_params(drivetrain: Drivetrain) -> DriveParams:
    """Plain-number parameters of a vehicle file's ``[drivetrain]`` table."""
    emap = drivetrain.efficiency_map
    if emap is None:
        xs, ys, table = np.zeros(0), np.zeros(0), np.zeros((0, 0))
    else:
        xs = np.asarray(emap.speed_kph, dtype=float)
        ys = np.asarray(emap.torque_nm, dtype=float)
        table = np.asarray(emap.efficiency, dtype=float)
    eta = float(drivetrain.efficiency) if drivetrain.efficiency is not None else 1.0
    return DriveParams(eta, xs, ys, table, float(drivetrain.wheel_radius_m),
                       float(drivetrain.regen_efficiency), float(drivetrain.regen_max_kw) * 1000.0,
                       float(drivetrain.regen_fade_kph))


def map_efficiency(speed_kph: np.ndarray | float, torque_nm: np.ndarray | float,
                   speed_axis: np.ndarray, torque_axis: np.ndarray,
                   table: np.ndarray) -> np.ndarray | float:
    r"""Bilinear interpolation of an efficiency map, clipped to its axes.

    Parameters
    ----------
    speed_kph, torque_nm : numeric
        Where to read the map.
    speed_axis, torque_axis : array
        Strictly increasing axes of the map.
    table : array, shape (len(speed_axis), len(torque_axis))
        Efficiency at the grid points.

    Returns
    -------
    numeric
        Efficiency; outside the axes the edge values hold (never extrapolated).

    Notes
    -----
    On the cell :math:`[x_i, x_{i+1}] \times [y_j, y_{j+1}]` with fractions u, w:
    :math:`\eta = (1-u)(1-w)\eta_{ij} + u(1-w)\eta_{i+1,j} + (1-u)w\eta_{i,j+1} + uw\eta_{i+1,j+1}`.
    The reference suite checks it against :class:`scipy.interpolate.RegularGridInterpolator`.
    """
    x = np.minimum(np.maximum(speed_kph, speed_axis[0]), speed_axis[-1])
    y = np.minimum(np.maximum(torque_nm, torque_axis[0]), torque_axis[-1])
    i = np.minimum(np.maximum(np.searchsorted(speed_axis, x) - 1, 0), speed_axis.size - 2)
    j = np.minimum(np.maximum(np.searchsorted(torque_axis, y) - 1, 0), torque_axis.size - 2)
    u = (x - speed_axis[i]) / (speed_axis[i + 1] - speed_axis[i])
    w = (y - torque_axis[j]) / (torque_axis[j + 1] - torque_axis[j])
    return ((1.0 - u) * (1.0 - w) * table[i, j] + u * (1.0 - w) * table[i + 1, j]
            + (1.0 - u) * w * table[i, j + 1] + u * w * table[i + 1, j + 1])


def drive_efficiency(speed_mps: np.ndarray | float, wheel_force_n: np.ndarray | float,
                     p: DriveParams) -> np.ndarray | float:
    r"""Battery-to-wheel efficiency while driving: constant, or the map at (speed, torque).

    Torque is :math:`T = |F|\\,r_w` at the wheels.
    """
    if p.map_speed_kph.size == 0:
        return p.efficiency + 0.0 * speed_mps
    return map_efficiency(speed_mps * KPH_PER_MPS, np.abs(wheel_force_n) * p.wheel_radius_m,
                          p.map_speed_kph, p.map_torque_nm, p.map_efficiency)


def regen_fade(speed_mps: np.ndarray | float, fade_kph: float) -> np.ndarray | float:
    """Share of braking power the motor can recover at low speed.

    Notes
    -----
    Linear from 0 at rest to 1 at ``fade_kph`` (motors lose regenerative torque
    near standstill; most vehicles blend to friction brakes below 5-15 km/h,
    common practice).
    """
    if fade_kph <= 0.0:
        return 1.0 + 0.0 * speed_mps
    return np.minimum(np.maximum(speed_mps * KPH_PER_MPS / fade_kph, 0.0), 1.0)


def power_split(wheel_power_w: np.ndarray | float, speed_mps: np.ndarray | float,
                wheel_force_n: np.ndarray | float, p: DriveParams
                ) -> tuple[np.ndarray | float, ...]:
    r"""Battery power for a wheel power, with regeneration limits.

    Parameters
    ----------
    wheel_power_w : numeric
        Power at the wheels, positive driving, negative braking. [W]
    speed_mps : numeric
        Vehicle speed (for the map and the low-speed regen fade). [m/s]
    wheel_force_n : numeric
        Force at the wheels (for the map's torque). [N]
    p : DriveParams
        Efficiencies and regeneration limits.

    Returns
    -------
    battery_w, drive_loss_w, regen_w, regen_loss_w, friction_w : numeric
        Traction power at the battery (negative while regenerating), the motor's loss
        while driving, power returned by regeneration, its conversion loss, and the
        braking power the friction brakes take. [W]

    Notes
    -----
    Driving: :math:`P_b = P_w / \eta(v, T)`.  Braking: the motor captures
    :math:`P_c = \min(|P_w| f(v),\ P_{cap}/\eta_r)` of the braking power and
    returns :math:`\eta_r P_c` to the battery; friction brakes take
    :math:`|P_w| - P_c`.  A constant regen efficiency is the usual simple
    model; Fiori, Ahn & Rakha (2016, Applied Energy 168) make it depend on
    deceleration.  Whether the battery can accept the regen (full battery) is
    decided in the state-of-charge pass.
    """
    drive = np.maximum(wheel_power_w, 0.0)
    brake = np.maximum(-wheel_power_w, 0.0)
    traction = drive / drive_efficiency(speed_mps, wheel_force_n, p)
    cap_w = p.regen_max_w / p.regen_efficiency if p.regen_efficiency > 0.0 else 0.0
    captured = np.minimum(brake * regen_fade(speed_mps, p.regen_fade_kph), cap_w)
    regen = captured * p.regen_efficiency
    return traction - regen, traction - drive, regen, captured - regen, brake - captured


@dataclass(frozen=True)
class PowerSplit:
    """Where wheel power goes [W]: the arrays of :func:`power_split`, named."""

    battery_w: np.ndarray
    drive_loss_w: np.ndarray
    regen_w: np.ndarray
    regen_loss_w: np.ndarray
    friction_w: np.ndarray


def split_wheel_power(drivetrain: Drivetrain, wheel_power_w: np.ndarray, speed_mps: np.ndarray,
                      wheel_force_n: np.ndarray) -> PowerSplit:
    """:func:`power_split` for a vehicle file's drivetrain, on arrays, named."""
    parts = power_split(np.asarray(wheel_power_w, dtype=float), np.asarray(speed_mps, dtype=float),
                        np.asarray(wheel_force_n, dtype=float), drive_params(drivetrain))
    return PowerSplit(*(np.asarray(x, dtype=float) for x in parts))
