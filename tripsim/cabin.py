"""Auxiliary power: electronics plus cabin climate and battery warming.

A lumped model in the spirit of building degree-day methods: the cabin exchanges
heat with ambient air through a conductance UA (walls, glass and ventilation
air together); internal gains (people, electronics, sun) cover the loss within
a deadband around the set point, so the climate system works only on the part
of the temperature difference beyond it.  A heat pump delivers heat with a
coefficient of performance (COP) that falls in the cold; a resistive heater has
COP 1.  In the cold the battery is also kept warm.
"""

from __future__ import annotations

import numpy as np

from tripsim.units import Numeric
from tripsim.vehicle import Auxiliary

__all__ = ["auxiliary_power_w", "cabin_heat_demand_w", "climate_power_w"]


def cabin_heat_demand_w(aux: Auxiliary, temp_c: Numeric) -> tuple[Numeric, Numeric]:
    r"""Heating and cooling the cabin needs at an ambient temperature (thermal).

    Parameters
    ----------
    aux : Auxiliary
        Set point, deadband, conductance and caps.
    temp_c : numeric
        Ambient temperature. [°C]

    Returns
    -------
    heating_w, cooling_w : numeric
        Thermal power to add and to remove, each ≥ 0 and capped. [W]

    Notes
    -----
    .. math::
        Q_h = \min(UA\,\max(0, T_{set} - \Delta - T),\ Q_{h,max}) \\
        Q_c = \min(UA\,(T - T_{set} - \Delta) + Q_{sun},\ Q_{c,max})
        \quad \text{when } T > T_{set} + \Delta
    """
    ua = aux.cabin_ua_w_per_k
    heat = np.minimum(ua * np.maximum(0.0, aux.cabin_set_c - aux.cabin_deadband_k - temp_c),
                      aux.heater_max_w)
    excess_k = temp_c - aux.cabin_set_c - aux.cabin_deadband_k
    cool = np.where(excess_k > 0, ua * excess_k + aux.cabin_solar_gain_w, 0.0)
    cool = np.minimum(cool, aux.cooler_max_w)
    return heat, cool


def climate_power_w(aux: Auxiliary, temp_c: Numeric) -> Numeric:
    r"""Electrical power of cabin climate and battery warming.

    Notes
    -----
    .. math:: P = Q_h / COP_h(T) + Q_c / COP_c + k_h \max(0, T_h - T) + k_c \max(0, T - T_c)

    :math:`COP_h` is 1 for a resistive heater, or the vehicle's
    ``heat_pump_cop`` curve; with ``heat_pump = true`` and no curve, a curve
    typical of automotive heat pumps is used (COP 1.0 at −20 °C rising to 3.0
    at 10 °C; common practice, from memory).
    """
    heat, cool = cabin_heat_demand_w(aux, temp_c)
    if aux.heat_pump:
        if aux.heat_pump_cop is None:
            cop = np.interp(temp_c, [-20.0, -10.0, 0.0, 10.0], [1.0, 1.6, 2.2, 3.0])
        else:
            cop = np.maximum(aux.heat_pump_cop(temp_c), 1.0)
    else:
        cop = 1.0
    battery = (aux.battery_heat_w_per_k * np.maximum(0.0, aux.battery_heat_below_c - temp_c)
               + aux.battery_cool_w_per_k * np.maximum(0.0, temp_c - aux.battery_cool_above_c))
    return heat / cop + cool / aux.cooling_cop + battery


def auxiliary_power_w(aux: Auxiliary, temp_c: Numeric) -> Numeric:
    """Total auxiliary electrical load: base load plus :func:`climate_power_w`. [W]."""
    return aux.base_w + climate_power_w(aux, temp_c)
