"""Drag in wind against the drag equation, with the air and the wind computed independently.

Sources:

* drag F = ½·ρ·CdA·v_air², v_air the air speed along the direction of travel (the
  road-load equation; T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE 1992, ch. 4,
  from memory);
* wind direction is where the wind blows *from*, degrees clockwise from true north (the
  meteorological convention of WMO and of EPW/TMY files, from memory): on a road heading
  north a wind "from 0°" is a headwind;
* the air: ρ = p/(R·T), R = 287.05 J/(kg·K), p from pvlib's standard atmosphere
  (``pvlib.atmosphere.alt2pres``) at the road's elevation;
* the wind at the body from a 10 m station reading by the 1/7 power law over open terrain
  (common practice), computed with ``pvlib.atmosphere.windspeed_powerlaw``.

A crosswind is left out of the drag (tripsim's documented choice: the yaw sensitivity of Cd
is not in vehicle files), so a wind from the side gives the calm-air force.
"""

import numpy as np
import pytest
from conftest import make_vehicle, straight_route
from pvlib.atmosphere import alt2pres, windspeed_powerlaw

from tripsim.segments import segment_route
from tripsim.simulate import Conditions, simulate

R_DRY_AIR = 287.05  # J/(kg K), ISO 2533
ROAD_ELEVATION_M = 100.0  # straight_route's elevation
V_MPS = 25.0


@pytest.fixture(scope="module")
def northbound():
    return segment_route(straight_route(20_000.0, azimuth_deg=0.0, speed_kph=90.0))  # a meridian


@pytest.mark.parametrize(("wind_from_deg", "along_sign"), [(0.0, 1.0), (180.0, -1.0),
                                                           (90.0, 0.0), (60.0, 0.5)])
def test_aero_force_in_wind_from_a_10_m_station(northbound, wind_from_deg, along_sign):
    v = make_vehicle()
    wind_10m, temp_c = 10.0, 15.0
    trace = simulate(northbound, v, conditions=Conditions(
        temp_c=temp_c, wind_speed_mps=wind_10m, wind_from_deg=wind_from_deg)).trace
    cruise = ((trace["v_start_mps"] == V_MPS) & (trace["v_end_mps"] == V_MPS)).to_numpy()
    assert cruise.sum() > 100
    rho = alt2pres(ROAD_ELEVATION_M) / (R_DRY_AIR * (temp_c + 273.15))
    at_body = windspeed_powerlaw(wind_10m, 10.0, v.body.height_m, exponent=1 / 7)
    cda = v.body.cd * v.body.frontal_area_m2
    expected = 0.5 * rho * cda * (V_MPS + along_sign * at_body) ** 2
    # the gas constant and barometric constants differ in the fifth digit (measured 1e-5)
    assert trace.loc[cruise, "f_aero_n"].to_numpy() == pytest.approx(expected, rel=1e-4)


def test_headwind_measured_at_body_height_squares_the_air_speed(northbound):
    """10 m/s against a car at 25 m/s multiplies drag by (35/25)² (½·ρ·CdA·v²)."""
    v = make_vehicle()
    calm = simulate(northbound, v).trace
    windy = simulate(northbound, v, conditions=Conditions(
        wind_speed_mps=10.0, wind_from_deg=0.0, wind_height_m=v.body.height_m)).trace
    cruise = ((calm["v_start_mps"] == V_MPS) & (calm["v_end_mps"] == V_MPS)).to_numpy()
    ratio = windy.loc[cruise, "f_aero_n"].to_numpy() / calm.loc[cruise, "f_aero_n"].to_numpy()
    assert ratio == pytest.approx(np.full(ratio.size, (35.0 / 25.0) ** 2), rel=1e-9)
