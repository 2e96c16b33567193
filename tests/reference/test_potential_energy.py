"""Work against gravity over a climb equals m·g·Δh (physics; g = 9.80665 m/s², CGPM 1901)."""

import numpy as np
import pytest
from conftest import make_vehicle, straight_route

from tripsim.segments import segment_route
from tripsim.simulate import simulate

G = 9.80665


@pytest.mark.parametrize("climb_m", [50.0, 400.0, -250.0])
def test_uniform_climb(climb_m):
    v = make_vehicle()
    seg = segment_route(straight_route(8000.0, n_points=9, climb_m=climb_m), smooth_sigma_m=0)
    s = simulate(seg, v).summary
    assert s.breakdown_wh["grade_wh"] == pytest.approx(v.mass_kg * G * climb_m / 3600, rel=1e-3)


def test_hilly_profile_nets_to_end_minus_start():
    v = make_vehicle()
    r = straight_route(12_000.0, n_points=121)
    z = 300 + 90 * np.sin(np.linspace(0, 9, 121)) + np.linspace(0, 40, 121)
    seg = segment_route(r.with_elevation(z, "file"), smooth_sigma_m=0)
    s = simulate(seg, v).summary
    assert s.breakdown_wh["grade_wh"] == pytest.approx(v.mass_kg * G * (z[-1] - z[0]) / 3600,
                                                       rel=1e-3)
