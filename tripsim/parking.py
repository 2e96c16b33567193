"""Solar gain while the vehicle stands parked.

The parked vehicle keeps one orientation (its nose towards ``heading_deg``) and a
shading share; its facets see the weather's sky.  Power is tabulated on a regular
time grid and integrated with the trapezoid rule, so the energy between any two
moments is a difference of the cumulative curve.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from tripsim.air import wind_at_height
from tripsim.options import Number, Options, option
from tripsim.solar import facet_power_w, sky_for, sun_table
from tripsim.timebase import epoch_seconds
from tripsim.vehicle import PanelFacet
from tripsim.weather import Weather, conditions_at_seconds, weather_seconds

__all__ = ["ParkedSolar", "Parking", "parked_solar"]


class Parking(Options):
    """Where and how the vehicle stands between trips.

    Parameters
    ----------
    heading_deg : float, default 180
        Direction the nose points, degrees east of north (180: facing south, so a
        rear-tilted facet faces north).
    shading : float, default 0
        Share of light lost to buildings, trees or a roof over the bay.
    """

    heading_deg: Number = option(180.0, ge=-360.0, le=360.0, cli="--parking-heading")
    shading: Number = option(0.0, ge=0.0, le=1.0, cli="--parking-shading")


@dataclass(frozen=True)
class ParkedSolar:
    """Cumulative parked solar energy on a time grid (seconds since the Unix epoch)."""

    epoch_s: np.ndarray
    power_w: np.ndarray
    cum_wh: np.ndarray

    @classmethod
    def from_power(cls, epoch_s: np.ndarray, power_w: np.ndarray) -> ParkedSolar:
        """Integrate a power series with the trapezoid rule."""
        steps = 0.5 * (power_w[1:] + power_w[:-1]) * np.diff(epoch_s)
        return cls(epoch_s, power_w, np.concatenate([[0.0], np.cumsum(steps)]) / 3600.0)

    def energy_wh(self, start_s: np.ndarray, end_s: np.ndarray) -> np.ndarray:
        """Energy [Wh] gained between pairs of moments given in epoch seconds."""
        return np.interp(end_s, self.epoch_s, self.cum_wh) - np.interp(start_s, self.epoch_s,
                                                                         self.cum_wh)


def parked_solar(
    facets: list[PanelFacet] | tuple[PanelFacet, ...],
    weather: Weather,
    start: pd.Timestamp,
    end: pd.Timestamp,
    *,
    latitude: float,
    longitude: float,
    elevation_m: float = 0.0,
    parking: Parking | None = None,
    step_s: float = 600.0,
    sky_model: str = "isotropic",
    height_m: float = 1.5,
) -> ParkedSolar:
    """Tabulate parked solar power from ``start`` to ``end``.

    Parameters
    ----------
    facets : sequence of PanelFacet
        The vehicle's panels.
    weather : Weather
        Sky and air.
    start, end : pandas.Timestamp
        Span (time-zone aware).
    latitude, longitude, elevation_m : float
        Parking place.
    parking : Parking, optional
        Orientation and shading.
    step_s : float, default 600
        Tabulation step. [s]
    sky_model : str, default "isotropic"
        See :func:`tripsim.solar.facet_power_w`.
    height_m : float, default 1.5
        Height of the panels, to which the weather's 10 m wind is reduced for the
        cells' cooling (:func:`tripsim.air.wind_at_height`). [m]

    Returns
    -------
    ParkedSolar
    """
    park = parking or Parking()
    first = float(epoch_seconds(pd.Timestamp(start)))
    last = float(epoch_seconds(pd.Timestamp(end)))
    epoch = np.arange(first, last + 1.5 * step_s, step_s)
    if not facets:
        zeros = np.zeros(epoch.size)
        return ParkedSolar(epoch, zeros, zeros.copy())
    sky = conditions_at_seconds(weather, weather_seconds(weather, epoch))
    sun = sun_table(latitude, longitude, epoch[0], epoch[-1], elevation_m=elevation_m).at(epoch)
    light = sky_for(epoch, sun, sky["ghi_w_m2"], sky["dni_w_m2"], sky["dhi_w_m2"],
                    sky["temp_c"], model=sky_model)
    wind = wind_at_height(sky["wind_speed_mps"], height_m)
    power = facet_power_w(facets, park.heading_deg, light, air_speed_mps=wind,
                          shading=park.shading, model=sky_model)
    return ParkedSolar.from_power(epoch, power)
