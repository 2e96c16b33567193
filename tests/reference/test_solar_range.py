"""Solar driving range against published figures and facts of the trade.

* Yamaguchi, Araki et al., EPE 2021 (read in a secondary source, see
  ../shared/REFERENCES.md): about 16 km/day from 20 %-efficient silicon cells on a car
  roof in a sunny place.  Our check: a flat 1 m², 20 % roof in Miami (TMY2 file 12839.tm2
  shipped with pvlib, open NREL data) on an efficient light car (the streamlined model
  car of test_trade_facts.py on a mixed cycle, about 60-70 Wh/km); tolerance ±30 %.
* Fact of the trade (common practice): at about 100 Wh per mile solar input becomes
  meaningful, and daily solar miles can add up to more than 10,000 miles a year in a
  sunny climate; the same panels on a 300 Wh/mi car give a third of the miles.
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest
from conftest import make_vehicle, straight_route
from model_vehicles import STREAMLINED

from tripsim.fleet.year import Schedule, fleet_year
from tripsim.io.weather_files import read_weather
from tripsim.parking import Parking, parked_solar
from tripsim.route import Route
from tripsim.segments import segment_route
from tripsim.simulate import simulate
from tripsim.units import M_PER_MI
from tripsim.vehicle import PanelFacet

MIAMI = Path(pvlib.__file__).parent / "data" / "12839.tm2"


@pytest.fixture(scope="module")
def miami():
    return read_weather(MIAMI)


def yearly_wh_per_m2(weather, efficiency=0.2):
    roof = PanelFacet(name="roof", area_m2=1.0, efficiency=efficiency, tilt_deg=0.0)
    start = pd.Timestamp("2001-01-01", tz="UTC")
    park = parked_solar([roof], weather, start, start + pd.Timedelta(days=365),
                        latitude=weather.latitude, longitude=weather.longitude,
                        parking=Parking(), step_s=900.0)
    return float(np.interp(park.epoch_s[0] + 365 * 86400, park.epoch_s, park.cum_wh))


def mixed_cycle_wh_per_km(vehicle):
    town = segment_route(straight_route(10_000.0, n_points=21, speed_kph=50.0,
                                        stops=list(range(2, 20, 2))))
    road = segment_route(straight_route(10_000.0, speed_kph=90.0))
    return 0.5 * (simulate(town, vehicle).summary.wh_per_km
                  + simulate(road, vehicle).summary.wh_per_km)


def test_one_square_metre_roof_gives_about_16_km_per_day(miami):
    car = make_vehicle(**STREAMLINED)
    wh_per_km = mixed_cycle_wh_per_km(car)
    assert 50.0 < wh_per_km < 80.0
    km_per_day = yearly_wh_per_m2(miami) / 365.0 / wh_per_km
    assert km_per_day == pytest.approx(16.0, rel=0.3)


def test_panel_area_for_10000_solar_miles_a_year(miami):
    need_wh = 10_000 * 100.0  # miles × Wh/mi
    area_m2 = need_wh / yearly_wh_per_m2(miami, efficiency=0.22)
    # the roof, bonnet and rear deck of a small car offer about 3-6 m² (common practice)
    assert 2.5 < area_m2 < 6.0


def out_and_back(lat, lon, km):
    seg = segment_route(straight_route(km * 500.0, lat0=lat, lon0=lon, azimuth_deg=0.0,
                                       n_points=11, speed_kph=95.0))
    back = seg.iloc[::-1]
    r = Route(lat_deg=np.r_[seg["lat_deg"], seg["lat_end_deg"].iloc[-1], back["lat_deg"]],
              lon_deg=np.r_[seg["lon_deg"], seg["lon_end_deg"].iloc[-1], back["lon_deg"]],
              speed_limit_kph=np.full(2 * len(seg), 95.0),
              name="out and back")
    return segment_route(r)


def test_same_panels_on_a_300_wh_per_mile_car_give_a_third_of_the_miles(miami):
    loop = out_and_back(miami.latitude, miami.longitude, 40.0)
    panels = [{"name": "roof", "area_m2": 3.5, "efficiency": 0.22, "tilt_deg": 0.0}]
    big = {"usable_kwh": 2000.0}  # large enough that no sun is refused on a full battery
    light = make_vehicle(**{**STREAMLINED, "battery": big, "panels": panels})
    # a heavy crossover with a resistive-heated cabin and a busy auxiliary load
    heavy = make_vehicle(body={"mass_kg": 2300.0, "cd": 0.31, "frontal_area_m2": 2.7,
                               "crr": 0.010},
                         drivetrain={"efficiency": 0.85, "regen_efficiency": 0.6},
                         auxiliary={"base_w": 500.0}, battery=big, panels=panels)
    kw = dict(schedule=Schedule.parse("Mon-Sun@09:00", miami.utc_offset_h), start_soc=0.5,
              size_search=False)
    a = fleet_year(loop, light, miami, **kw).totals
    b = fleet_year(loop, heavy, miami, **kw).totals
    wh_mi = lambda t: t["wh_per_km_before_solar"] * M_PER_MI / 1000  # noqa: E731
    assert 70 < wh_mi(a) < 130 and 240 < wh_mi(b) < 380
    assert a["solar_km"] * 1000 / M_PER_MI > 10_000  # more than 10,000 solar miles a year
    ratio = b["solar_km"] / a["solar_km"]
    assert ratio == pytest.approx(wh_mi(a) / wh_mi(b), rel=0.03)
    assert ratio == pytest.approx(1 / 3, rel=0.25)
