"""The air the vehicle moves through: density, pressure and wind at body height.

All functions take scalars, arrays or Series and return the same kind.
"""

from __future__ import annotations

import numpy as np
from pvlib import atmosphere

from tripsim.units import R_DRY_AIR_J_PER_KG_K, ZERO_C_K, Numeric

__all__ = ["air_density", "headwind_mps", "pressure_from_elevation", "wind_at_height"]

#: Power-law exponent of the wind profile over open, level country (1/7, common practice;
#: Hellmann's exponent, see pvlib.atmosphere.windspeed_powerlaw).
OPEN_TERRAIN_EXPONENT = 1.0 / 7.0


def air_density(temp_c: Numeric, pressure_pa: Numeric) -> Numeric:
    r"""Density of dry air from the ideal-gas law.

    Parameters
    ----------
    temp_c : numeric
        Air temperature. [°C]
    pressure_pa : numeric
        Static air pressure. [Pa]

    Returns
    -------
    numeric
        Air density. [kg/m³]

    Notes
    -----
    .. math:: \rho = p / (R_d T), \quad R_d = 287.05287\ \mathrm{J/(kg\,K)}

    Humidity lowers density by under 1 % at the temperatures where it is high,
    and is ignored.

    References
    ----------
    ISO 2533:1975, Standard Atmosphere (R_d and the sea-level values:
    1.2250 kg/m³ at 15 °C and 101 325 Pa).

    Examples
    --------
    >>> round(air_density(15.0, 101325.0), 4)
    1.225
    """
    return pressure_pa / (R_DRY_AIR_J_PER_KG_K * (temp_c + ZERO_C_K))


def pressure_from_elevation(elevation_m: Numeric) -> Numeric:
    r"""Standard-atmosphere pressure at an elevation.

    Parameters
    ----------
    elevation_m : numeric
        Height above sea level. [m]

    Returns
    -------
    numeric
        Pressure. [Pa]

    Notes
    -----
    Delegates to :func:`pvlib.atmosphere.alt2pres`, the ISA troposphere
    barometric formula
    :math:`p = 100\,((44331.514 - z)/11880.516)^{1/0.1902632}`.
    """
    return atmosphere.alt2pres(elevation_m)


def wind_at_height(
    wind_speed_mps: Numeric,
    height_m: float,
    *,
    reference_height_m: float = 10.0,
    exponent: float = OPEN_TERRAIN_EXPONENT,
) -> Numeric:
    r"""Wind speed at the vehicle from the speed measured at a reference height.

    Parameters
    ----------
    wind_speed_mps : numeric
        Wind speed at ``reference_height_m`` (weather stations: 10 m). [m/s]
    height_m : float
        Height to reduce to, e.g. the vehicle's height. [m]
    reference_height_m : float, default 10
        Height of the measurement. [m]
    exponent : float, default 1/7
        Power-law (Hellmann) exponent; 1/7 for open terrain (common practice).

    Returns
    -------
    numeric
        Wind speed at ``height_m``. [m/s]

    Notes
    -----
    .. math:: u(z) = u_{ref}\,(z / z_{ref})^{\alpha}

    Delegates to :func:`pvlib.atmosphere.windspeed_powerlaw`.
    """
    return atmosphere.windspeed_powerlaw(
        wind_speed_mps, reference_height_m, height_m, exponent=exponent
    )


def headwind_mps(wind_speed_mps: Numeric, wind_from_deg: Numeric, heading_deg: Numeric) -> Numeric:
    r"""Component of the wind blowing against the direction of travel.

    Parameters
    ----------
    wind_speed_mps : numeric
        Wind speed (already at vehicle height). [m/s]
    wind_from_deg : numeric
        Direction the wind blows *from*, degrees east of north (meteorological
        convention, as in EPW files).
    heading_deg : numeric
        Direction of travel, degrees east of north.

    Returns
    -------
    numeric
        Headwind (positive) or tailwind (negative). [m/s]

    Notes
    -----
    .. math:: w_h = w \cos(\theta_{from} - \psi)

    Crosswind is ignored: its effect on drag depends on the yaw
    sensitivity of Cd, which vehicle files do not carry.
    """
    return wind_speed_mps * np.cos(np.radians(wind_from_deg - heading_deg))
