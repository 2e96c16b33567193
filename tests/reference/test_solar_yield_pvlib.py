"""A year of solar energy from tripsim against pvlib's own ModelChain on the same weather file.

Reference: ``pvlib.modelchain.ModelChain`` (an independent composition of the same published
models, run by pvlib on the file as pvlib reads it): the weather file through pvlib's own
reader, the sun by NREL SPA at the middle of each hour, isotropic transposition, physical
incidence-angle modifier, Faiman cell temperature (u0 = 15 W/m²K, u1 = 6.84 W·s/m³K) on the
wind reduced to the panels' height by the 1/7 power law (``pvlib.atmosphere.windspeed_powerlaw``)
and PVWatts DC power (pdc0 = area × efficiency × 1 kW/m², γ = the facet's temperature
coefficient), times the facet's own shading and system efficiency.  tripsim applies
Marion's diffuse IAM (``pvlib.iam.marion_diffuse``) to sky and ground diffuse; ModelChain has
one diffuse factor, ``FD``, set here to Marion's sky value.

Hours: irradiance in TMY3, TMY2 and EPW files is the energy of the hour *ending* at the stamp
(NREL TMY3 user's manual, Wilcox & Marion 2008; TMY2 manual, Marion & Urban 1995;
EnergyPlus weather file format, all from memory); pvlib stamps TMY3 rows at the end of that
hour and EPW and TMY2 rows at its start, so the reference evaluates each row at the middle of
its hour (common practice for hourly data).

tripsim interpolates the hourly data to a 15-minute grid (parked) or 30-second slots
(driving) with the sun at each point; ModelChain takes one sun position per hour.  Over a
year the two differ by the curvature of the light within each hour and at the ends of the
day (measured: at most 0.45 %, on vertical facets); tolerance 1 % for the parked facets.
The fleet year adds the driving hours, in which the cells are cooled by the air speed
over the body (measured +0.4 %); tolerance 1.5 %.
"""

import functools
from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest
from conftest import DEMO

from tripsim.fleet.year import Schedule, fleet_year
from tripsim.io import read_route, read_vehicle
from tripsim.io.weather_files import read_weather
from tripsim.parking import Parking, parked_solar
from tripsim.segments import segment_route
from tripsim.vehicle import PanelFacet

PVLIB_DATA = Path(pvlib.__file__).parent / "data"
YEAR = 2026
U0, U1 = 15.0, 6.84  # PVsyst's insulated-back u0 (from memory), pvlib's default u1
FILES = {  # path: (pvlib reader, hours from the stamp to the middle of the hour)
    DEMO / "tamsreach.epw": ("epw", 0.5),
    PVLIB_DATA / "723170TYA.CSV": ("tmy3", -0.5),
    PVLIB_DATA / "12839.tm2": ("tmy2", 0.5),
}
FACETS = [  # name, tilt, azimuth relative to the nose
    ("flat roof", 0.0, 0.0),
    ("tail, 20° towards the back", 20.0, 180.0),
    ("left side, vertical", 90.0, 270.0),
]


@functools.cache
def pvlib_weather(path):
    kind, shift_h = FILES[path]
    if kind == "epw":
        data, meta = pvlib.iotools.read_epw(path, coerce_year=YEAR)
        site = (meta["latitude"], meta["longitude"], meta["altitude"])
    elif kind == "tmy3":
        data, meta = pvlib.iotools.read_tmy3(path, coerce_year=YEAR, map_variables=True)
        site = (meta["latitude"], meta["longitude"], meta["altitude"])
    else:
        raw, meta = pvlib.iotools.read_tmy2(path)
        data = pd.DataFrame({"ghi": raw["GHI"], "dni": raw["DNI"], "dhi": raw["DHI"],
                             "temp_air": raw["DryBulb"] / 10.0, "wind_speed": raw["Wspd"] / 10.0})
        data.index = raw.index.map(lambda t: t.replace(year=YEAR))
        site = (meta["latitude"], meta["longitude"], meta["altitude"])
    frame = data[["ghi", "dni", "dhi", "temp_air", "wind_speed"]].astype(float)
    frame.index = frame.index + pd.Timedelta(hours=shift_h)
    return frame, site


def modelchain_kwh(path, facets, *, heading_deg=180.0, height_m=1.5):
    """Yearly DC energy [kWh] of facets on a vehicle parked facing ``heading_deg``."""
    weather, (lat, lon, alt) = pvlib_weather(path)
    weather = weather.assign(wind_speed=np.minimum(  # tripsim caps the cooling air at 10 m/s
        pvlib.atmosphere.windspeed_powerlaw(weather["wind_speed"], 10.0, height_m, 1 / 7), 10.0))
    arrays = [pvlib.pvsystem.Array(
        pvlib.pvsystem.FixedMount(f.tilt_deg, (heading_deg + f.azimuth_deg) % 360.0),
        albedo=0.2,
        module_parameters={"pdc0": f.area_m2 * f.efficiency * 1000.0,
                           "gamma_pdc": f.temp_coeff_per_k,
                           "FD": pvlib.iam.marion_diffuse("physical", f.tilt_deg)["sky"]},
        temperature_model_parameters={"u0": U0, "u1": U1}) for f in facets]
    system = pvlib.pvsystem.PVSystem(arrays=arrays, inverter_parameters={"pdc0": 1e9})
    offset_h = weather.index[0].utcoffset().total_seconds() / 3600.0
    location = pvlib.location.Location(lat, lon, tz=round(offset_h), altitude=alt)
    mc = pvlib.modelchain.ModelChain(system, location, aoi_model="physical",
                                     spectral_model="no_loss", temperature_model="faiman",
                                     dc_model="pvwatts", ac_model="pvwatts",
                                     losses_model="no_loss", transposition_model="isotropic")
    mc.run_model(weather)
    dc = mc.results.dc if isinstance(mc.results.dc, tuple) else (mc.results.dc,)
    return sum(float(p.clip(lower=0.0).sum()) * (1 - f.shading) * f.system_efficiency
               for p, f in zip(dc, facets, strict=True)) / 1000.0


@functools.cache
def tripsim_weather(path):
    return read_weather(path)


def parked_year_kwh(path, facets, *, heading_deg=180.0):
    w = tripsim_weather(path)
    start = pd.Timestamp(f"{YEAR}-01-01").tz_localize(f"Etc/GMT{-round(w.utc_offset_h):+d}")
    park = parked_solar(facets, w, start, start + pd.Timedelta(days=365), latitude=w.latitude,
                        longitude=w.longitude, elevation_m=w.elevation_m,
                        parking=Parking(heading_deg=heading_deg), step_s=900.0)
    return float(np.interp(park.epoch_s[0] + 365 * 86400, park.epoch_s, park.cum_wh)) / 1000.0


@pytest.mark.parametrize("path", list(FILES), ids=lambda p: p.name)
@pytest.mark.parametrize(("name", "tilt", "az"), FACETS)
def test_parked_year_of_a_facet_matches_modelchain(path, name, tilt, az):
    facet = PanelFacet(name=name, area_m2=2.0, efficiency=0.21, tilt_deg=tilt, azimuth_deg=az)
    ours = parked_year_kwh(path, [facet])
    ref = modelchain_kwh(path, [facet])
    assert ref > 50.0  # a real year of sun on 0.42 kWp
    assert ours == pytest.approx(ref, rel=0.01)


@pytest.mark.parametrize("heading_deg", [0.0, 90.0, 225.0])
def test_orientation_follows_the_heading(heading_deg):
    """A vertical left-side facet on a vehicle parked facing north, east and south-west faces
    west, north and south-east: the facet's azimuth is the heading plus its own."""
    path = DEMO / "tamsreach.epw"
    facet = PanelFacet(name="left", area_m2=2.0, efficiency=0.21, tilt_deg=90.0,
                       azimuth_deg=270.0)
    ours = parked_year_kwh(path, [facet], heading_deg=heading_deg)
    assert ours == pytest.approx(modelchain_kwh(path, [facet], heading_deg=heading_deg),
                                 rel=0.01)


def test_demo_fleet_year_flat_roof_matches_modelchain():
    """The demo's parcel van on its loop: a flat roof sees the same sky whatever the heading,
    so the year's solar offered (driving and parked) is the parked year of that roof."""
    van = read_vehicle(DEMO / "vehicles" / "parcel_mule.toml")
    assert all(f.tilt_deg == 0.0 for f in van.panels)
    loop = segment_route(read_route(DEMO / "harbour_loop.gpx"))
    weather = tripsim_weather(DEMO / "tamsreach.epw")
    year = fleet_year(loop, van, weather, schedule=Schedule.parse("Mon-Sat@08:00,13:30",
                                                                  zone="Etc/GMT+2"),
                      start_date=f"{YEAR}-01-01", size_search=False, default_speed_kph=50.0)
    ref = modelchain_kwh(DEMO / "tamsreach.epw", van.panels, height_m=van.body.height_m)
    assert year.totals["solar_offered_kwh"] == pytest.approx(ref, rel=0.015)
