"""Identities of the trip summary: definitions, not physics (the physics behind each figure is
checked against outside references in ``tests/reference``)."""

import pandas as pd
import pytest
from conftest import make_vehicle, straight_route

from tripsim.segments import segment_route
from tripsim.simulate import simulate
from tripsim.units import M_PER_MI
from tripsim.weather import clear_sky_weather

PANELS = [{"name": "roof", "area_m2": 2.0, "efficiency": 0.2, "tilt_deg": 0.0}]


@pytest.fixture(scope="module")
def summary():
    seg = segment_route(straight_route(30_000.0, n_points=7, climb_m=120.0, stops=[3]))
    car = make_vehicle(panels=PANELS)
    t0 = pd.Timestamp("2026-06-21T11:00+00:00")
    sky = clear_sky_weather(45.0, 7.0, t0, t0 + pd.Timedelta(hours=2), temp_c=5.0)
    return simulate(seg, car, depart=t0, weather=sky).summary


def test_range_is_usable_energy_over_consumption(summary):
    assert summary.range_km == pytest.approx(summary.capacity_wh / summary.wh_per_km, rel=1e-12)


def test_consumption_per_mile_is_per_km_times_a_mile(summary):
    assert summary.wh_per_mi == pytest.approx(summary.wh_per_km * M_PER_MI / 1000.0, rel=1e-12)


def test_solar_km_is_solar_energy_over_consumption_before_solar(summary):
    assert summary.solar_wh > 0.0
    before_solar = (summary.battery_wh + summary.solar_wh) / summary.driven_km
    assert summary.solar_km == pytest.approx(summary.solar_wh / before_solar, rel=1e-12)


def test_breakdown_adds_up_to_the_battery_energy(summary):
    assert sum(summary.breakdown_wh.values()) == pytest.approx(summary.battery_wh, rel=1e-9)
