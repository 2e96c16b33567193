"""A headwind raises drag with the square of the air speed (physics of ½·ρ·CdA·v²):
10 m/s against a car at 25 m/s multiplies the aerodynamic force by (35/25)²."""

import pytest
from conftest import make_vehicle, straight_route

from tripsim.segments import segment_route
from tripsim.simulate import Conditions, simulate


def test_headwind_ratio():
    v = make_vehicle()
    seg = segment_route(straight_route(20_000.0, azimuth_deg=0.0, speed_kph=90.0))  # a meridian
    at_body = v.body.height_m  # measured at body height: no power-law reduction
    calm = simulate(seg, v).trace
    windy = simulate(seg, v, conditions=Conditions(wind_speed_mps=10.0, wind_from_deg=0.0,
                                                    wind_height_m=at_body)).trace
    cruise = (calm["v_start_mps"] == 25.0) & (calm["v_end_mps"] == 25.0)
    assert cruise.sum() > 100
    ratio = windy.loc[cruise, "f_aero_n"] / calm.loc[cruise, "f_aero_n"]
    assert ratio.to_numpy() == pytest.approx((35.0 / 25.0) ** 2, rel=1e-9)
