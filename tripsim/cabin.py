"""Auxiliary power: electronics plus cabin climate and battery warming.

A lumped model in the spirit of building degree-day methods: the cabin exchanges
heat with ambient air through a conductance UA (walls, glass and ventilation air
together) and gains heat from the sun through its glass; internal gains (people,
electronics) cover the loss within a deadband around the set point, so the climate
system works only on the part of the balance beyond it.  A heat pump delivers heat
with a coefficient of performance (COP) that falls in the cold; a resistive heater
has COP 1.  In the cold the battery is also kept warm.

The functions take scalars or arrays of temperature and irradiance and a
:class:`CabinParams` (plain numbers, built once from the vehicle file by
:func:`cabin_params`), so the same code runs on numpy arrays and inside the
compiled passes of :mod:`tripsim.energy`.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np

from tripsim.compiled import curve
from tripsim.units import Numeric
from tripsim.vehicle import Auxiliary

__all__ = ["CabinParams", "auxiliary_power_w", "cabin_heat_demand_w", "cabin_params",
           "climate_power_w", "heating_cop"]

#: COP of an automotive heat pump over ambient temperature when the vehicle file gives
#: none: 1.0 at −20 °C rising to 3.0 at 10 °C (common practice, from memory of published
#: heat-pump tests).
DEFAULT_HEAT_PUMP_COP = {"x": [-20.0, -10.0, 0.0, 10.0], "y": [1.0, 1.6, 2.2, 3.0]}


class CabinParams(NamedTuple):
    """The auxiliary and climate parameters as plain numbers (see :class:`Auxiliary`)."""

    base_w: float
    set_c: float
    deadband_k: float
    ua_w_per_k: float
    heater_max_w: float
    cooler_max_w: float
    cop_temp_c: np.ndarray
    cop: np.ndarray
    cooling_cop: float
    solar_aperture_m2: float
    battery_heat_below_c: float
    battery_heat_w_per_k: float
    battery_cool_above_c: float
    battery_cool_w_per_k: float


def cabin_params(aux: Auxiliary) -> CabinParams:
    """Plain-number parameters of a vehicle file's ``[auxiliary]`` table.

    A resistive heater has COP 1 at every temperature; a heat pump takes the file's
    ``heat_pump_cop`` curve or :data:`DEFAULT_HEAT_PUMP_COP`.
    """
    if not aux.heat_pump:
        cop_x, cop_y = [0.0, 1.0], [1.0, 1.0]
    elif aux.heat_pump_cop is None:
        cop_x, cop_y = DEFAULT_HEAT_PUMP_COP["x"], DEFAULT_HEAT_PUMP_COP["y"]
    else:
        cop_x, cop_y = aux.heat_pump_cop.x, aux.heat_pump_cop.y
    return CabinParams(
        float(aux.base_w), float(aux.cabin_set_c), float(aux.cabin_deadband_k),
        float(aux.cabin_ua_w_per_k), float(aux.heater_max_w), float(aux.cooler_max_w),
        np.asarray(cop_x, dtype=float), np.asarray(cop_y, dtype=float), float(aux.cooling_cop),
        float(aux.cabin_solar_aperture_m2), float(aux.battery_heat_below_c),
        float(aux.battery_heat_w_per_k), float(aux.battery_cool_above_c),
        float(aux.battery_cool_w_per_k))


def cabin_heat_demand_w(temp_c: Numeric, ghi_w_m2: Numeric,
                        p: CabinParams) -> tuple[Numeric, Numeric]:
    r"""Heating and cooling the cabin needs (thermal power).

    Parameters
    ----------
    temp_c : numeric
        Ambient temperature. [°C]
    ghi_w_m2 : numeric
        Global horizontal irradiance (0 at night or when unknown). [W/m²]
    p : CabinParams
        Set point, deadband, conductance, glazing and caps.

    Returns
    -------
    heating_w, cooling_w : numeric
        Thermal power to add and to remove, each ≥ 0 and capped. [W]

    Notes
    -----
    With :math:`Q_s = A_g\,G` the sun through the glass (:math:`A_g` the glazing area
    times its transmittance, ``cabin_solar_aperture_m2``):

    .. math::
        Q_h = \min(\max(0,\ UA\,(T_{set} - \Delta - T) - Q_s),\ Q_{h,max}) \\
        Q_c = \min(\max(0,\ UA\,(T - T_{set} - \Delta) + Q_s),\ Q_{c,max})

    so the sun offsets heating in the cold and adds to cooling in the heat.  The
    balance is the steady-state cabin energy balance of the lumped models used for
    vehicle climate loads (e.g. ASHRAE Handbook — Fundamentals, ch. 18, heat gain
    through fenestration, from memory).
    """
    sun_w = p.solar_aperture_m2 * ghi_w_m2
    heat = np.minimum(np.maximum(p.ua_w_per_k * (p.set_c - p.deadband_k - temp_c) - sun_w, 0.0),
                      p.heater_max_w)
    cool = np.minimum(np.maximum(p.ua_w_per_k * (temp_c - p.set_c - p.deadband_k) + sun_w, 0.0),
                      p.cooler_max_w)
    return heat, cool


def heating_cop(temp_c: Numeric, p: CabinParams) -> Numeric:
    """Coefficient of performance of the heater at an ambient temperature (never below 1).

    Below 1 a heat pump is worse than the resistive element every system has, which
    then takes over.
    """
    return np.maximum(curve(temp_c, p.cop_temp_c, p.cop), 1.0)


def climate_power_w(temp_c: Numeric, ghi_w_m2: Numeric, p: CabinParams) -> Numeric:
    r"""Electrical power of cabin climate and battery conditioning [W].

    Notes
    -----
    .. math:: P = Q_h / COP_h(T) + Q_c / COP_c + k_h \max(0, T_h - T) + k_c \max(0, T - T_c)
    """
    heat, cool = cabin_heat_demand_w(temp_c, ghi_w_m2, p)
    battery = (p.battery_heat_w_per_k * np.maximum(p.battery_heat_below_c - temp_c, 0.0)
               + p.battery_cool_w_per_k * np.maximum(temp_c - p.battery_cool_above_c, 0.0))
    return heat / heating_cop(temp_c, p) + cool / p.cooling_cop + battery


def auxiliary_power_w(temp_c: Numeric, ghi_w_m2: Numeric, p: CabinParams) -> Numeric:
    """Total auxiliary electrical load: base load plus :func:`climate_power_w`. [W]."""
    return p.base_w + climate_power_w(temp_c, ghi_w_m2, p)
