"""Facet orientation on a moving vehicle: geometric facts, checked through pvlib's
transposition (independent library) and symmetry (no outside value needed)."""

import numpy as np
import pandas as pd
import pytest

from tripsim.solar import facet_power_w, sky_for, sun_position
from tripsim.vehicle import PanelFacet

T = pd.date_range("2026-06-21 09:00-02:00", periods=7, freq="h")


@pytest.fixture(scope="module")
def sky():
    sun = sun_position(T, 41.2, -31.6)
    n = T.size
    return sky_for(T, sun, np.full(n, 800.0), np.full(n, 700.0), np.full(n, 120.0),
                   np.full(n, 20.0))


def facet(az, tilt=60.0):
    return PanelFacet(area_m2=1.0, efficiency=0.2, tilt_deg=tilt, azimuth_deg=az)


def test_facet_facing_the_sun_gets_more(sky):
    sun_az = sky.sun.azimuth_deg
    heading = sun_az  # nose towards the sun: a front facet faces it, a rear facet faces away
    front = facet_power_w([facet(0.0)], heading, sky)
    rear = facet_power_w([facet(180.0)], heading, sky)
    assert np.all(front > rear)


def test_flat_facet_does_not_care_about_heading(sky):
    flat = [facet(0.0, tilt=0.0)]
    a = facet_power_w(flat, 0.0, sky)
    b = facet_power_w(flat, 137.0, sky)
    np.testing.assert_allclose(a, b, rtol=1e-12)


def test_turning_round_swaps_left_and_right(sky):
    left, right = facet(270.0, tilt=90.0), facet(90.0, tilt=90.0)
    h = 30.0
    np.testing.assert_allclose(facet_power_w([left], h, sky),
                               facet_power_w([right], h + 180.0, sky), rtol=1e-12)
    np.testing.assert_allclose(facet_power_w([right], h, sky),
                               facet_power_w([left], h + 180.0, sky), rtol=1e-12)
