"""Weather along a trip: constant, from a typical-year file, or a clear-sky day.

A :class:`Weather` is a table of samples in time.  Two kinds of quantity are
kept apart because weather files stamp them differently:

* *state* quantities (air temperature, pressure, wind) are instantaneous values
  at the stamp;
* *irradiance* (GHI, DNI, DHI) are means over the hour before (TMY3) or the hour
  after (pvlib's EPW and TMY2 index) the stamp, so they are placed at the middle of
  their interval before being interpolated.

Typical-year files (EPW, TMY3, TMY2) are periodic: any date of any year maps to the
same day and hour of the file's year (29 February takes 28 February), and the
interpolation wraps from 31 December to 1 January.  Clock times are converted to the
file's standard time zone first.

Readers live in :mod:`tripsim.io.weather_files`; this module only holds and
interpolates data.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError

__all__ = [
    "Weather", "clear_sky_weather", "conditions_at", "conditions_at_seconds",
    "constant_weather", "time_coordinate", "weather_seconds", "year_seconds",
    "year_seconds_from_epoch",
]

YEAR_S = 365 * 86400.0
STATE = ("temp_c", "pressure_pa", "wind_speed_mps", "wind_from_deg")
IRRADIANCE = ("ghi_w_m2", "dni_w_m2", "dhi_w_m2")


@dataclass(frozen=True)
class Weather:
    """Weather samples (see the module notes).

    Attributes
    ----------
    state_s, irradiance_s : array
        Sample times in seconds: since 1 January 00:00 local standard time of the
        file's year for periodic weather, else since the Unix epoch (UTC).
    state : dict of array
        ``temp_c`` [°C], ``pressure_pa`` [Pa] (NaN: take it from elevation),
        ``wind_speed_mps`` [m/s, at 10 m], ``wind_from_deg`` [° from north].
    irradiance : dict of array
        ``ghi_w_m2``, ``dni_w_m2``, ``dhi_w_m2``. [W/m²]
    periodic : bool
        A typical year that wraps.
    utc_offset_h : float
        The data's standard time zone (periodic weather). [h]
    latitude, longitude, elevation_m : float
        Where the data belong.
    source : str
        File or description, for reports and errors.
    """

    state_s: np.ndarray
    state: dict[str, np.ndarray]
    irradiance_s: np.ndarray
    irradiance: dict[str, np.ndarray]
    periodic: bool
    utc_offset_h: float = 0.0
    latitude: float = np.nan
    longitude: float = np.nan
    elevation_m: float = 0.0
    source: str = "weather"

    def __post_init__(self) -> None:
        for times, table in ((self.state_s, self.state), (self.irradiance_s, self.irradiance)):
            if times.size < 2 or np.any(np.diff(times) <= 0):
                raise TripsimInputError("weather times must increase (at least 2 samples)",
                                        self.source)
            for name, values in table.items():
                if values.shape != times.shape:
                    raise TripsimInputError(f"weather column {name} has the wrong length",
                                            self.source)


def constant_weather(
    *, temp_c: float = 20.0, pressure_pa: float | None = None, wind_speed_mps: float = 0.0,
    wind_from_deg: float = 0.0, ghi_w_m2: float = 0.0, dni_w_m2: float = 0.0,
    dhi_w_m2: float = 0.0,
) -> Weather:
    """The same weather at all times (irradiance zero unless given)."""
    t = np.array([0.0, YEAR_S])

    def pair(x: float | None) -> np.ndarray:
        return np.full(2, np.nan if x is None else float(x))

    return Weather(
        state_s=t, irradiance_s=t, periodic=True, source="constant conditions",
        state={"temp_c": pair(temp_c), "pressure_pa": pair(pressure_pa),
               "wind_speed_mps": pair(wind_speed_mps), "wind_from_deg": pair(wind_from_deg)},
        irradiance={"ghi_w_m2": pair(ghi_w_m2), "dni_w_m2": pair(dni_w_m2),
                    "dhi_w_m2": pair(dhi_w_m2)},
    )


def clear_sky_weather(
    latitude: float,
    longitude: float,
    start: pd.Timestamp,
    end: pd.Timestamp,
    *,
    elevation_m: float = 0.0,
    cloud_factor: float = 0.0,
    temp_c: float = 20.0,
    wind_speed_mps: float = 0.0,
    wind_from_deg: float = 0.0,
    step: str = "10min",
) -> Weather:
    """Clear-sky irradiance (Ineichen with pvlib's Linke turbidity) over a time span.

    Parameters
    ----------
    latitude, longitude, elevation_m : float
        Place. [°], [m]
    start, end : pandas.Timestamp
        Span to tabulate (time-zone aware); a margin of one step is added.
    cloud_factor : float, default 0
        Cloud cover as a share 0-1.  Global irradiance is reduced after Kasten &
        Czeplak (1980), GHI = GHI_clear·(1 − 0.75·N^3.4), and split into beam and
        diffuse with the Erbs model (:func:`pvlib.irradiance.erbs`).
    temp_c, wind_speed_mps, wind_from_deg : float
        Constant air state.
    step : str, default "10min"
        Tabulation step (interpolated in between).

    Returns
    -------
    Weather
        Not periodic; times in seconds since the Unix epoch.

    References
    ----------
    P. Ineichen, R. Perez (2002), Solar Energy 73(3); F. Kasten, G. Czeplak (1980),
    Solar Energy 24(2); D. G. Erbs, S. A. Klein, J. A. Duffie (1982), Solar Energy 28(4).
    """
    import pvlib  # loaded on first use: a command without sun needs none of it

    if not 0.0 <= cloud_factor <= 1.0:
        raise TripsimInputError(f"cloud factor {cloud_factor} must be within 0 to 1", "--weather")
    start, end = pd.Timestamp(start), pd.Timestamp(end)
    if start.tzinfo is None or end.tzinfo is None:
        raise TripsimInputError("clear-sky times need a time zone", "--depart")
    delta = pd.Timedelta(step)
    times = pd.date_range(start.tz_convert("UTC") - delta, end.tz_convert("UTC") + 2 * delta,
                          freq=step)
    loc = pvlib.location.Location(latitude, longitude, altitude=elevation_m)
    sky = loc.get_clearsky(times, model="ineichen")
    ghi, dni, dhi = (sky[c].to_numpy() for c in ("ghi", "dni", "dhi"))
    if cloud_factor > 0:
        ghi = ghi * (1.0 - 0.75 * cloud_factor**3.4)
        zenith = loc.get_solarposition(times)["apparent_zenith"]
        split = pvlib.irradiance.erbs(ghi, zenith, times)
        dni, dhi = split["dni"].to_numpy(), split["dhi"].to_numpy()
    t = _epoch_s(times)
    n = t.size
    return Weather(
        state_s=t, irradiance_s=t, periodic=False, latitude=latitude, longitude=longitude,
        elevation_m=elevation_m, source=f"clear sky (cloud {cloud_factor:.0%})",
        state={"temp_c": np.full(n, float(temp_c)), "pressure_pa": np.full(n, np.nan),
               "wind_speed_mps": np.full(n, float(wind_speed_mps)),
               "wind_from_deg": np.full(n, float(wind_from_deg))},
        irradiance={"ghi_w_m2": ghi, "dni_w_m2": dni, "dhi_w_m2": dhi},
    )


def _epoch_s(times: pd.DatetimeIndex) -> np.ndarray:
    return (times.tz_convert("UTC") - pd.Timestamp("1970-01-01", tz="UTC")).total_seconds(
    ).to_numpy()


def year_seconds(times: pd.DatetimeIndex, utc_offset_h: float) -> np.ndarray:
    """Seconds since 1 January 00:00 local standard time, leap days folded.

    Dates after 28 February of a leap year move back one day, so every date maps
    onto a 365-day typical year (29 February reads as 28 February).
    """
    local = times.tz_convert("UTC") + pd.Timedelta(hours=utc_offset_h)
    doy = local.day_of_year.to_numpy() - 1
    leap = local.is_leap_year & (doy >= 59)  # 29 February onwards moves back a day
    doy = doy - leap.astype(int)
    seconds_of_day = (local.hour * 3600 + local.minute * 60 + local.second).to_numpy()
    return doy * 86400.0 + seconds_of_day + local.microsecond.to_numpy() / 1e6


def year_seconds_from_epoch(epoch_s: np.ndarray, utc_offset_h: float) -> np.ndarray:
    """:func:`year_seconds` of moments given in seconds since the Unix epoch."""
    local = np.asarray(epoch_s, dtype=float) + utc_offset_h * 3600.0
    days = np.floor(local / 86400.0)
    dates = days.astype("int64").astype("datetime64[D]")
    years = dates.astype("datetime64[Y]")
    doy = (dates - years.astype("datetime64[D]")).astype("int64")
    year = years.astype("int64") + 1970
    leap = ((year % 4 == 0) & (year % 100 != 0)) | (year % 400 == 0)
    doy = doy - (leap & (doy >= 59))
    return doy * 86400.0 + (local - days * 86400.0)


def weather_seconds(weather: Weather, epoch_s: np.ndarray) -> np.ndarray:
    """Moments (seconds since the Unix epoch) on the weather's own time axis."""
    if weather.periodic:
        return year_seconds_from_epoch(epoch_s, weather.utc_offset_h)
    return np.asarray(epoch_s, dtype=float)


def _interp(x: np.ndarray, xp: np.ndarray, fp: np.ndarray, periodic: bool) -> np.ndarray:
    """Linear interpolation; on a typical year's axis across the turn of the year.

    ``np.interp(..., period=)`` sorts the axis on every call; a typical year's axis is
    already sorted within one year, so it is extended by one point at each end instead
    (the same result, without the sort).
    """
    if not periodic:
        return np.interp(x, xp, fp)
    if xp.size and xp[0] >= 0.0 and xp[-1] < YEAR_S:
        return np.interp(np.mod(x, YEAR_S), np.concatenate(([xp[-1] - YEAR_S], xp,
                                                            [xp[0] + YEAR_S])),
                         np.concatenate(([fp[-1]], fp, [fp[0]])))
    return np.interp(x, xp, fp, period=YEAR_S)


def time_coordinate(weather: Weather, times: pd.DatetimeIndex) -> np.ndarray:
    """Clock times as the weather's own time axis (year seconds or epoch seconds)."""
    if times.tz is None:
        raise TripsimInputError("clock times need a time zone", "--depart")
    if weather.periodic:
        return year_seconds(times, weather.utc_offset_h)
    return _epoch_s(times)


def conditions_at_seconds(weather: Weather, x: np.ndarray) -> dict[str, np.ndarray]:
    """Weather at times given on the weather's own axis (see :func:`conditions_at`)."""
    x = np.asarray(x, dtype=float)
    if not weather.periodic:
        lo, hi = weather.state_s[0], weather.state_s[-1]
        if x.min() < lo or x.max() > hi:
            raise TripsimInputError("the trip's clock runs outside the weather data's time span",
                                    weather.source)
    st, per = weather.state, weather.periodic
    out = {k: _interp(x, weather.state_s, st[k], per) for k in ("temp_c", "pressure_pa",
                                                                  "wind_speed_mps")}
    rad = np.radians(st["wind_from_deg"])
    u = _interp(x, weather.state_s, np.sin(rad), per)
    v = _interp(x, weather.state_s, np.cos(rad), per)
    out["wind_from_deg"] = np.degrees(np.arctan2(u, v)) % 360.0
    for k in IRRADIANCE:
        out[k] = np.maximum(_interp(x, weather.irradiance_s, weather.irradiance[k], per), 0.0)
    return out


def conditions_at(weather: Weather, times: pd.DatetimeIndex) -> dict[str, np.ndarray]:
    """Weather at clock times, linearly interpolated.

    Parameters
    ----------
    weather : Weather
        The data.
    times : pandas.DatetimeIndex
        Time-zone-aware clock times.

    Returns
    -------
    dict of array
        ``temp_c``, ``pressure_pa`` (NaN where not given), ``wind_speed_mps``,
        ``wind_from_deg``, ``ghi_w_m2``, ``dni_w_m2``, ``dhi_w_m2``.

    Notes
    -----
    Wind is interpolated as a vector (eastward and northward components), so a
    wind turning through north does not swing through south; its speed is the
    interpolated scalar speed.  Irradiance is clipped at zero.
    """
    return conditions_at_seconds(weather, time_coordinate(weather, times))
