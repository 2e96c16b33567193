"""Solar power from the vehicle's panel facets, driving and parked.

For each facet and each moment: the sun's position (NREL SPA through pvlib), the
facet's absolute orientation from the vehicle's heading, the irradiance on the
facet (:func:`pvlib.irradiance.get_total_irradiance`), incidence-angle losses
(:func:`pvlib.iam.physical`, with :func:`pvlib.iam.marion_diffuse` for the
diffuse parts), the cell temperature (:func:`pvlib.temperature.faiman` with the
air speed over the body as the cooling wind), the temperature coefficient, shade
and the conversion to the battery.
"""

from __future__ import annotations

import functools
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError
from tripsim.timebase import DAY_S
from tripsim.vehicle import PanelFacet

__all__ = ["FacetIrradiance", "SunPosition", "SunTable", "facet_power_w", "sky_for", "sun_at",
           "sun_cells", "sun_position", "sun_table"]

_MODELS = ("isotropic", "perez", "haydavies")
#: Faiman coefficients for panels with an insulated back, as laid on a body: the
#: constant heat-loss term u0 of PVsyst's "fully insulated" mounting (15 W/m²K, from
#: memory of the PVsyst documentation) and pvlib's default wind term.
FAIMAN_U0 = 15.0
FAIMAN_U1 = 6.84
#: Air speed above which the Faiman wind term is not extrapolated (its fits cover
#: ordinary wind speeds; common practice). [m/s]
MAX_COOLING_AIR_MPS = 10.0


@dataclass(frozen=True)
class SunPosition:
    """Apparent zenith and azimuth of the sun [degrees], one value per time."""

    zenith_deg: np.ndarray
    azimuth_deg: np.ndarray


def _spa(times: pd.DatetimeIndex, lat: float, lon: float, elevation_m: float,
         **air: float) -> SunPosition:
    import pvlib  # loaded on first use: a command without sun needs none of it

    pos = pvlib.solarposition.get_solarposition(times, lat, lon, altitude=elevation_m,
                                                method="nrel_numpy", **air)
    return SunPosition(pos["apparent_zenith"].to_numpy(), pos["azimuth"].to_numpy())


def sun_position(
    times: pd.DatetimeIndex,
    latitude: float,
    longitude: float,
    *,
    elevation_m: float = 0.0,
    pressure_pa: float | None = None,
    temp_c: float = 12.0,
    delta_t_s: float | None = None,
) -> SunPosition:
    """Sun position by NREL SPA (pvlib), at each of ``times``.

    The model's hot paths read the sun from a table on a 10-minute grid instead
    (:func:`sun_table`, :func:`sun_at`), built from this same function.

    Parameters
    ----------
    times : pandas.DatetimeIndex
        Time-zone-aware times.
    latitude, longitude, elevation_m : float
        Observer. [°], [m]
    pressure_pa, temp_c : float, optional
        Air at the observer, for refraction (default: standard pressure at the
        elevation, 12 °C).
    delta_t_s : float, optional
        TT − UT; pvlib estimates it from the date when not given. [s]

    Returns
    -------
    SunPosition

    References
    ----------
    I. Reda, A. Andreas (2004), Solar position algorithm for solar radiation
    applications, Solar Energy 76(5); NREL/TP-560-34302.
    """
    air: dict[str, float] = {"temperature": temp_c}
    if pressure_pa is not None:
        air["pressure"] = pressure_pa
    if delta_t_s is not None:
        air["delta_t"] = delta_t_s
    return _spa(times, latitude, longitude, elevation_m, **air)


#: Step of the tabulated sun position, and the size of the map cells that share one
#: table (tripsim's choices: over 10 minutes the sun moves at most 2.5° and linear
#: interpolation errs by a few hundredths of a degree, see ``tripsim bench``; within
#: 0.5° of latitude and longitude its position differs by at most about 0.5°).
SUN_STEP_S = 600.0
SUN_CELL_DEG = 0.5


@dataclass(frozen=True)
class SunTable:
    """The sun's position at one place, tabulated on a regular grid of epoch seconds."""

    epoch_s: np.ndarray
    zenith_deg: np.ndarray
    sin_az: np.ndarray
    cos_az: np.ndarray

    def at(self, epoch_s: np.ndarray) -> SunPosition:
        """Sun position at moments inside the table (linear; azimuth by its sine and cosine)."""
        t = np.asarray(epoch_s, dtype=float)
        if t.size and (t.min() < self.epoch_s[0] or t.max() > self.epoch_s[-1]):
            raise ValueError("sun table does not cover the requested times")
        az = np.degrees(np.arctan2(np.interp(t, self.epoch_s, self.sin_az),
                                   np.interp(t, self.epoch_s, self.cos_az))) % 360.0
        return SunPosition(np.interp(t, self.epoch_s, self.zenith_deg), az)


#: Days of a block of the sun table: blocks are computed once per place and reused.
_BLOCK_DAYS = 32


@functools.lru_cache(maxsize=256)
def _block(lat: float, lon: float, elevation_m: float, block: int,
           step_s: float) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """SPA on the grid of one block of days (its nodes only; neighbours share none)."""
    first = block * _BLOCK_DAYS * DAY_S
    grid = np.arange(first, first + _BLOCK_DAYS * DAY_S, step_s)
    pos = _spa(pd.to_datetime(grid, unit="s", utc=True), lat, lon, elevation_m)
    az = np.radians(pos.azimuth_deg)
    return grid, pos.zenith_deg, np.sin(az), np.cos(az)


def sun_table(latitude: float, longitude: float, start_s: float, end_s: float, *,
              elevation_m: float = 0.0, step_s: float = SUN_STEP_S) -> SunTable:
    """The sun's position (NREL SPA) at one place on a grid covering a span.

    Parameters
    ----------
    latitude, longitude, elevation_m : float
        The place. [°], [m]
    start_s, end_s : float
        Span to cover, seconds since the Unix epoch.
    step_s : float, default :data:`SUN_STEP_S`
        Grid step. [s]

    Returns
    -------
    SunTable

    Notes
    -----
    The grid is aligned to the epoch and built from blocks of :data:`_BLOCK_DAYS` days
    that are computed once per place in a process, so a fleet's year, its parked hours
    and a trip on one of its days share them and give the same value at the same moment.
    """
    key = (round(float(latitude), 6), round(float(longitude), 6), round(float(elevation_m), 1))
    first = int(np.floor((start_s - step_s) / (_BLOCK_DAYS * DAY_S)))
    last = int(np.floor((end_s + step_s) / (_BLOCK_DAYS * DAY_S)))
    parts = [_block(*key, b, float(step_s)) for b in range(first, last + 1)]
    return SunTable(*(np.concatenate([p[i] for p in parts]) for i in range(4)))


def sun_cells(lat_deg: np.ndarray, lon_deg: np.ndarray, elevation_m: np.ndarray, *,
              cell_deg: float = SUN_CELL_DEG) -> tuple[np.ndarray, np.ndarray]:
    """Group points into map cells that share one sun table.

    Returns
    -------
    cell : array of int, shape (n,)
        Cell of each point.
    places : array, shape (k, 3)
        Latitude, longitude and elevation of each cell (the mean of its points).
    """
    lat = np.asarray(lat_deg, dtype=float)
    lon = np.asarray(lon_deg, dtype=float)
    key = np.round(lat / cell_deg) * 100_000 + np.round(lon / cell_deg)
    _, cell = np.unique(key, return_inverse=True)
    cell = cell.ravel()
    k = int(cell.max()) + 1
    count = np.bincount(cell, minlength=k)
    places = np.column_stack([np.bincount(cell, w, k) / count
                              for w in (lat, lon, np.asarray(elevation_m, dtype=float))])
    return cell, places


def sun_at(epoch_s: np.ndarray, cell: np.ndarray, places: np.ndarray) -> SunPosition:
    """The sun's position at moments, each in its cell (see :func:`sun_cells`)."""
    t = np.asarray(epoch_s, dtype=float)
    zen = np.empty(t.shape)
    azi = np.empty(t.shape)
    if t.size == 0:
        return SunPosition(zen, azi)
    for k in np.unique(cell):
        sel = cell == k
        lat, lon, ele = places[k]
        table = sun_table(lat, lon, float(t[sel].min()), float(t[sel].max()), elevation_m=ele)
        pos = table.at(t[sel])
        zen[sel], azi[sel] = pos.zenith_deg, pos.azimuth_deg
    return SunPosition(zen, azi)


@dataclass(frozen=True)
class FacetIrradiance:
    """Sky data needed to put light on a facet (arrays of one length)."""

    sun: SunPosition
    ghi_w_m2: np.ndarray
    dni_w_m2: np.ndarray
    dhi_w_m2: np.ndarray
    temp_c: np.ndarray
    dni_extra_w_m2: np.ndarray | None = None
    airmass: np.ndarray | None = None


def sky_for(times: pd.DatetimeIndex | np.ndarray, sun: SunPosition, ghi: np.ndarray,
            dni: np.ndarray, dhi: np.ndarray, temp_c: np.ndarray,
            model: str = "isotropic") -> FacetIrradiance:
    """Bundle sky data; adds extraterrestrial DNI and air mass for the anisotropic models.

    ``times`` are clock times or seconds since the Unix epoch.
    """
    import pvlib  # loaded on first use: a command without sun needs none of it

    if model not in _MODELS:
        raise TripsimInputError(f"sky model {model!r}; expected one of {', '.join(_MODELS)}",
                                "--sky-model")
    extra = airmass = None
    if model != "isotropic":
        if not isinstance(times, pd.DatetimeIndex):
            times = pd.to_datetime(np.asarray(times, dtype=float), unit="s", utc=True)
        extra = np.asarray(pvlib.irradiance.get_extra_radiation(times), dtype=float)
        airmass = np.asarray(pvlib.atmosphere.get_relative_airmass(sun.zenith_deg), dtype=float)
    return FacetIrradiance(sun, np.asarray(ghi, float), np.asarray(dni, float),
                           np.asarray(dhi, float), np.asarray(temp_c, float), extra, airmass)


@functools.lru_cache(maxsize=64)
def _diffuse_iam(tilt_deg: float) -> tuple[float, float]:
    """Sky and ground diffuse IAM of a facet at a tilt (pvlib's ``marion_diffuse``).

    With the physical IAM they depend on the tilt only, so each tilt is integrated once.
    """
    import pvlib

    iam = pvlib.iam.marion_diffuse("physical", tilt_deg)
    return float(np.asarray(iam["sky"])), float(np.asarray(iam["ground"]))


def facet_power_w(
    facets: Sequence[PanelFacet],
    heading_deg: np.ndarray | float,
    sky: FacetIrradiance,
    *,
    air_speed_mps: np.ndarray | float = 1.0,
    shading: np.ndarray | float = 0.0,
    model: str = "isotropic",
    albedo: float = 0.2,
) -> np.ndarray:
    r"""Power the facets deliver to the battery.

    Parameters
    ----------
    facets : sequence of PanelFacet
        Area, efficiency, tilt, azimuth relative to the nose, temperature
        coefficient, own shading share, system efficiency.
    heading_deg : array or float
        Direction the vehicle's nose points, degrees east of north.
    sky : FacetIrradiance
        Sun position, GHI/DNI/DHI, air temperature (see :func:`sky_for`).
    air_speed_mps : array or float, default 1
        Air speed over the body, which cools the cells (capped at
        :data:`MAX_COOLING_AIR_MPS`). [m/s]
    shading : array or float, default 0
        Share of light lost to surroundings (trees, buildings) on top of each
        facet's own ``shading``.
    model : {"isotropic", "perez", "haydavies"}
        Sky-diffuse transposition model.
    albedo : float, default 0.2
        Ground reflectance.

    Returns
    -------
    array
        Power into the battery. [W]

    Notes
    -----
    For facet *f* with absolute azimuth :math:`\gamma = \psi + \gamma_f`:

    .. math::
        P = A\,\eta\,\eta_{sys}\,(1 - s)(1 - s_f)\,[1 + \beta (T_c - 25)]\,
            (E_b\,IAM(\theta) + E_{sky} IAM_{sky} + E_{gr} IAM_{gr})

    with :math:`T_c` from Faiman's model on the plane-of-array irradiance.
    """
    import pvlib  # loaded on first use: a command without sun needs none of it

    heading = np.asarray(heading_deg, dtype=float)
    zen, az = sky.sun.zenith_deg, sky.sun.azimuth_deg
    shape = np.broadcast(heading, zen).shape
    total = np.zeros(shape)
    wind = np.minimum(np.asarray(air_speed_mps, dtype=float), MAX_COOLING_AIR_MPS)
    keep = (1.0 - np.asarray(shading, dtype=float))
    for facet in facets:
        surf_az = (heading + facet.azimuth_deg) % 360.0
        poa = pvlib.irradiance.get_total_irradiance(
            facet.tilt_deg, surf_az, zen, az, sky.dni_w_m2, sky.ghi_w_m2, sky.dhi_w_m2,
            dni_extra=sky.dni_extra_w_m2, airmass=sky.airmass, albedo=albedo, model=model)
        aoi = pvlib.irradiance.aoi(facet.tilt_deg, surf_az, zen, az)
        iam_sky, iam_ground = _diffuse_iam(float(facet.tilt_deg))
        effective = (np.nan_to_num(poa["poa_direct"]) * pvlib.iam.physical(aoi)
                     + np.nan_to_num(poa["poa_sky_diffuse"]) * iam_sky
                     + np.nan_to_num(poa["poa_ground_diffuse"]) * iam_ground)
        effective = np.maximum(effective, 0.0)
        cell_c = pvlib.temperature.faiman(np.nan_to_num(poa["poa_global"]), sky.temp_c, wind,
                                          u0=FAIMAN_U0, u1=FAIMAN_U1)
        derate = np.maximum(1.0 + facet.temp_coeff_per_k * (cell_c - 25.0), 0.0)
        total = total + (effective * facet.area_m2 * facet.efficiency * derate
                         * (1.0 - facet.shading) * facet.system_efficiency)
    return total * keep
