"""From power at the wheels to power at the battery, driving and braking.

Functions take arrays (or scalars) of wheel power and speed and return arrays.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.interpolate import RegularGridInterpolator

from tripsim.units import KPH_PER_MPS
from tripsim.vehicle import Drivetrain

__all__ = ["PowerSplit", "drive_efficiency", "regen_fade", "split_wheel_power"]


def drive_efficiency(
    drivetrain: Drivetrain, speed_mps: np.ndarray, wheel_force_n: np.ndarray
) -> np.ndarray:
    """Battery-to-wheel efficiency while driving.

    Parameters
    ----------
    drivetrain : Drivetrain
        Constant ``efficiency`` or an ``efficiency_map`` over wheel speed and
        wheel torque.
    speed_mps : array
        Vehicle speed. [m/s]
    wheel_force_n : array
        Tractive force at the wheels. [N]

    Returns
    -------
    array
        Efficiency, 0-1.

    Notes
    -----
    The map is interpolated bilinearly (:class:`scipy.interpolate.RegularGridInterpolator`)
    at torque :math:`T = |F| r_w` and clipped to its axes, so it is never
    extrapolated.
    """
    speed = np.asarray(speed_mps, dtype=float)
    emap = drivetrain.efficiency_map
    if emap is None:
        return np.full(speed.shape, float(drivetrain.efficiency))
    axes = (np.asarray(emap.speed_kph, float), np.asarray(emap.torque_nm, float))
    interp = RegularGridInterpolator(axes, np.asarray(emap.efficiency, float), method="linear")
    kph = np.clip(speed * KPH_PER_MPS, axes[0][0], axes[0][-1])
    torque = np.clip(np.abs(wheel_force_n) * drivetrain.wheel_radius_m, axes[1][0], axes[1][-1])
    return interp(np.column_stack([np.ravel(kph), np.ravel(torque)])).reshape(speed.shape)


def regen_fade(speed_mps: np.ndarray, fade_kph: float) -> np.ndarray:
    """Share of braking power the motor can recover at low speed.

    Notes
    -----
    Linear from 0 at rest to 1 at ``fade_kph`` (motors lose regenerative torque
    near standstill; most vehicles blend to friction brakes below 5-15 km/h,
    common practice).
    """
    if fade_kph <= 0:
        return np.ones_like(np.asarray(speed_mps, dtype=float))
    return np.clip(np.asarray(speed_mps) * KPH_PER_MPS / fade_kph, 0.0, 1.0)


@dataclass(frozen=True)
class PowerSplit:
    """Where wheel power goes, per segment (all powers ≥ 0 except ``battery_w``).

    Attributes
    ----------
    battery_w : array
        Traction power drawn from the battery (negative while regenerating). [W]
    drive_loss_w : array
        Motor/inverter/gear loss while driving. [W]
    regen_w : array
        Power put back into the battery by the motor. [W]
    regen_loss_w : array
        Conversion loss of the captured braking power. [W]
    friction_w : array
        Braking power dissipated by friction brakes. [W]
    """

    battery_w: np.ndarray
    drive_loss_w: np.ndarray
    regen_w: np.ndarray
    regen_loss_w: np.ndarray
    friction_w: np.ndarray


def split_wheel_power(
    drivetrain: Drivetrain,
    wheel_power_w: np.ndarray,
    speed_mps: np.ndarray,
    wheel_force_n: np.ndarray,
) -> PowerSplit:
    r"""Battery power for a wheel power, with regeneration limits.

    Parameters
    ----------
    drivetrain : Drivetrain
        Efficiencies and regeneration limits.
    wheel_power_w : array
        Power at the wheels, positive driving, negative braking. [W]
    speed_mps : array
        Vehicle speed (for the map and the low-speed regen fade). [m/s]
    wheel_force_n : array
        Force at the wheels (for the map's torque). [N]

    Returns
    -------
    PowerSplit

    Notes
    -----
    Driving: :math:`P_b = P_w / \eta(v, T)`.  Braking: the motor captures
    :math:`P_c = \min(|P_w| f(v),\ P_{cap}/\eta_r)` of the braking power and
    returns :math:`\eta_r P_c` to the battery; friction brakes take
    :math:`|P_w| - P_c`.  A constant regen efficiency is the usual simple
    model; Fiori, Ahn & Rakha (2016, Applied Energy 168) make it depend on
    deceleration.  Whether the battery can accept the regen (full battery) is
    decided later, in the state-of-charge pass.
    """
    p = np.asarray(wheel_power_w, dtype=float)
    drive = np.maximum(p, 0.0)
    brake = np.maximum(-p, 0.0)
    eta = drive_efficiency(drivetrain, speed_mps, wheel_force_n)
    traction = drive / eta
    eta_r = drivetrain.regen_efficiency
    cap_w = drivetrain.regen_max_kw * 1000.0
    captured = np.minimum(brake * regen_fade(speed_mps, drivetrain.regen_fade_kph),
                          cap_w / eta_r if eta_r > 0 else 0.0)
    regen = captured * eta_r
    return PowerSplit(
        battery_w=traction - regen,
        drive_loss_w=traction - drive,
        regen_w=regen,
        regen_loss_w=captured - regen,
        friction_w=brake - captured,
    )
