"""Range in cold and heat against the AAA 2019 study (read in a secondary source).

AAA, "Extreme temperatures affect electric vehicle driving range" (2019): five
vehicles on a dynamometer, range relative to 24 °C (75 °F):
    at −7 °C (20 °F): −12 % with HVAC off, −41 % with HVAC on;
    at 35 °C (95 °F): −4 % with HVAC off, −17 % with HVAC on.
The check is to the order of magnitude, ±10 points, for the default cabin and
battery model (:class:`tripsim.vehicle.Auxiliary` defaults and the default
capacity-vs-temperature curve) on a mixed cycle of 55 % town and 45 % open road
by distance (the EPA city/highway weighting, common practice).
"""

import numpy as np
import pytest
from conftest import make_vehicle

from tripsim.route import Route
from tripsim.segments import GEOD, segment_route
from tripsim.simulate import Conditions, simulate

AAA = {  # (temperature °C, HVAC on): range change vs 24 °C, in points
    (-6.7, False): -12.0,
    (-6.7, True): -41.0,
    (35.0, False): -4.0,
    (35.0, True): -17.0,
}


def mixed_cycle():
    town_m, road_m = 11_000.0, 9_000.0
    step = 100.0
    dist = np.arange(0.0, town_m + road_m + step, step)
    lon, lat, _ = GEOD.fwd(np.full(dist.size, 7.0), np.full(dist.size, 45.0),
                           np.full(dist.size, 90.0), dist)
    limits = np.where(dist[:-1] < town_m, 50.0, 90.0)
    stops = np.zeros(dist.size, dtype=np.int8)
    stops[(dist % 500.0 == 0) & (dist < town_m) & (dist > 0)] = 3  # a signal every 500 m
    return segment_route(Route(lat_deg=np.asarray(lat), lon_deg=np.asarray(lon),
                               elevation_m=np.full(dist.size, 100.0), speed_limit_kph=limits,
                               stop_kind=stops))


@pytest.fixture(scope="module")
def ranges():
    seg = mixed_cycle()
    out = {}
    for hvac in (False, True):
        aux = {"base_w": 350.0} if hvac else {"base_w": 350.0, "cabin_ua_w_per_k": 0.0,
                                              "cabin_solar_aperture_m2": 0.0}
        v = make_vehicle(auxiliary=aux)
        for t in (24.0, -6.7, 35.0):
            out[(t, hvac)] = simulate(seg, v, conditions=Conditions(temp_c=t)).summary.range_km
    return out


@pytest.mark.parametrize(("key", "published"), list(AAA.items()))
def test_range_change_within_ten_points(ranges, key, published):
    temp, hvac = key
    change = 100.0 * (ranges[(temp, hvac)] / ranges[(24.0, hvac)] - 1.0)
    assert change == pytest.approx(published, abs=10.0)
