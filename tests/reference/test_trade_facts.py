"""Facts of the trade about efficient vehicles (common practice, no single source).

* Most electric cars use 300-350 Wh per mile; even very efficient ones rarely go
  below 250.  A radically streamlined light car targets about 100 Wh per mile.
* (About 10 miles per kWh at 100 Wh/mi: driven to the empty battery in
  ``test_range_to_empty.py``.)
* Cars praised for aerodynamics have Cd 0.20-0.23; a teardrop three-wheeler about
  0.13.  Such a car of 1,800-2,200 lb on low-resistance tyres coasts from 60 mph for
  more than three minutes and nearly two miles.

The model vehicles below are chosen by us to carry those figures.  Frontal area
and Crr are our choices in plausible ranges: 1.75 m² for a small, low two-seater
(compact cars are about 2.0-2.2 m²); Crr 0.006 for low-resistance tyres (EU tyre
label class A is ≤ 6.5 kg/t, Regulation (EC) 1222/2009).
"""

import pytest
from conftest import make_vehicle, straight_route
from model_vehicles import CROSSOVER, STREAMLINED

from tripsim.coastdown import coast
from tripsim.segments import segment_route
from tripsim.simulate import Conditions, simulate
from tripsim.units import LB_PER_KG, M_PER_MI, mph_to_mps


def steady_wh_per_mi(vehicle, mph, km=100.0):
    seg = segment_route(straight_route(km * 1000.0, speed_kph=mph * M_PER_MI / 1000.0))
    return simulate(seg, vehicle, conditions=Conditions(temp_c=20.0)).summary.wh_per_mi


def test_streamlined_light_car_coasts_over_three_minutes_and_about_two_miles():
    v = make_vehicle(**STREAMLINED)
    assert 1800 / LB_PER_KG <= v.mass_kg <= 2200 / LB_PER_KG
    run = coast(v, mph_to_mps(60.0), temp_c=20.0)
    assert run["time_s"].iloc[-1] >= 180.0
    assert 1.6 <= run["distance_m"].iloc[-1] / M_PER_MI <= 2.6


@pytest.mark.parametrize("mph", [55.0, 60.0, 65.0])
def test_streamlined_light_car_uses_about_100_wh_per_mile(mph):
    assert 80.0 <= steady_wh_per_mi(make_vehicle(**STREAMLINED), mph) <= 120.0


def test_typical_crossover_lands_in_the_usual_band_at_70_mph():
    assert 250.0 <= steady_wh_per_mi(make_vehicle(**CROSSOVER), 70.0) <= 350.0

