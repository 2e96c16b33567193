"""Solar driving range against published figures and facts of the trade.

* Yamaguchi, Araki et al., EPE 2021 (read in a secondary source, not re-read here; see
  docs/REFERENCES.md): about 16 km/day from 20 %-efficient silicon cells on a car
  roof in a sunny place.  Our check: a flat 1 m², 20 % roof in Miami (TMY2 file 12839.tm2
  shipped with pvlib, open NREL data) on an efficient light car (the streamlined model
  car of test_trade_facts.py on a mixed cycle, about 60-70 Wh/km); tolerance ±30 %.
* Fact of the trade (common practice): at about 100 Wh per mile solar input becomes
  meaningful, and daily solar miles can add up to more than 10,000 miles a year in a
  sunny climate.

Solar km are solar energy over consumption (an identity, checked in the unit tests); the
solar energy itself is checked against pvlib's ModelChain in ``test_solar_yield_pvlib.py``
and the consumption against solve_ivp and trade figures elsewhere in this folder.
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


def test_light_car_with_a_sunny_roof_drives_over_ten_thousand_solar_miles(miami):
    loop = out_and_back(miami.latitude, miami.longitude, 40.0)
    panels = [{"name": "roof", "area_m2": 3.5, "efficiency": 0.22, "tilt_deg": 0.0}]
    big = {"usable_kwh": 2000.0}  # large enough that no sun is refused on a full battery
    light = make_vehicle(**{**STREAMLINED, "battery": big, "panels": panels})
    t = fleet_year(loop, light, miami, schedule=Schedule.parse("Mon-Sun@09:00",
                                                               miami.utc_offset_h),
                   start_soc=0.5, size_search=False).totals
    assert 70 < t["wh_per_km_before_solar"] * M_PER_MI / 1000 < 130  # about 100 Wh/mi
    assert t["solar_km"] * 1000 / M_PER_MI > 10_000  # more than 10,000 solar miles a year
