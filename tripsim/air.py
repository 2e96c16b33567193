"""The air the vehicle moves through: density, pressure and wind at body height.

All functions take scalars, arrays or Series and return the same kind.
"""

from __future__ import annotations

import numpy as np

from tripsim.units import G_MPS2, P0_PA, R_DRY_AIR_J_PER_KG_K, ZERO_C_K, Numeric

__all__ = ["air_density", "barometric_scale", "headwind_mps", "pressure_at_elevation",
           "pressure_from_elevation", "wind_at_height"]

#: ISA sea-level temperature [K] and tropospheric lapse rate [K/m] (ISO 2533).
ISA_T0_K = 288.15
ISA_LAPSE_K_PER_M = 0.0065
#: Exponent of the barometric formula, g / (R_d · L) = 5.25588.
_BAROMETRIC_EXPONENT = G_MPS2 / (R_DRY_AIR_J_PER_KG_K * ISA_LAPSE_K_PER_M)

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
    The barometric formula of the ISA troposphere,

    .. math:: p = p_0\,(1 - L z / T_0)^{g/(R_d L)},

    with :math:`p_0` = 101 325 Pa, :math:`T_0` = 288.15 K, L = 6.5 K/km.  The
    reference suite checks it against :func:`pvlib.atmosphere.alt2pres` and the ISA
    table.

    References
    ----------
    ISO 2533:1975, Standard Atmosphere.
    """
    return P0_PA * (1.0 - ISA_LAPSE_K_PER_M * elevation_m / ISA_T0_K) ** _BAROMETRIC_EXPONENT


def pressure_at_elevation(pressure_pa: Numeric, reference_elevation_m: Numeric,
                          elevation_m: Numeric) -> Numeric:
    r"""Pressure measured at one elevation carried to another.

    Parameters
    ----------
    pressure_pa : numeric
        Pressure measured at ``reference_elevation_m`` (a weather station's). [Pa]
    reference_elevation_m : numeric
        Elevation of the measurement. [m]
    elevation_m : numeric
        Elevation to carry it to (a road segment's). [m]

    Returns
    -------
    numeric
        Pressure at ``elevation_m``. [Pa]

    Notes
    -----
    The measured pressure is scaled by the barometric ratio of the standard
    atmosphere between the two heights,
    :math:`p(z) = p_{st}\, p_{ISA}(z) / p_{ISA}(z_{st})`, so the day's deviation from
    the standard atmosphere is kept while the height difference is applied.  A
    station at 20 m reading 1013 hPa gives about 845 hPa on a pass at 1,536 m.
    """
    return barometric_scale(pressure_pa, pressure_from_elevation(reference_elevation_m),
                            pressure_from_elevation(elevation_m))


def barometric_scale(pressure_pa: Numeric, standard_reference_pa: Numeric,
                     standard_pa: Numeric) -> Numeric:
    r"""A measured pressure scaled by the ratio of two standard-atmosphere pressures.

    :math:`p = p_{st}\, p_{ISA}(z) / p_{ISA}(z_{st})` with the two ISA pressures given
    (:func:`pressure_from_elevation`), so a route's standard pressures are computed once
    for every run driven on it (:func:`pressure_at_elevation` computes them each time).
    """
    return pressure_pa * standard_pa / standard_reference_pa


def wind_at_height(
    wind_speed_mps: Numeric,
    height_m: float,
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

    The reference suite checks it against :func:`pvlib.atmosphere.windspeed_powerlaw`.
    """
    return wind_speed_mps * (height_m / reference_height_m) ** exponent


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
