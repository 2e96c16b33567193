import numpy as np
import pytest
from conftest import straight_route

from tripsim.errors import RouteError
from tripsim.route import Route
from tripsim.segments import GEOD, SEGMENT_COLUMNS, curvature_per_m, segment_route


def test_segments_are_short_and_sum_to_the_route():
    r = straight_route(1003.0, n_points=4)
    seg = segment_route(r, max_length_m=25.0)
    assert tuple(seg.columns) == SEGMENT_COLUMNS
    assert seg["length_m"].max() <= 25.0 + 1e-9
    assert seg["length_m"].sum() == pytest.approx(1003.0, rel=1e-9)
    assert seg["start_m"].iloc[0] == 0.0


def test_vertices_stay_on_boundaries_and_stops_are_kept():
    r = straight_route(100.0, n_points=3, stops=[1])
    seg = segment_route(r, max_length_m=20.0)
    assert len(seg) == 6
    assert seg["stop_end"].tolist() == [False, False, True, False, False, False]


def test_grade_and_ascent_from_elevation():
    seg = segment_route(straight_route(2000.0, n_points=3, climb_m=100.0), smooth_sigma_m=0.0)
    assert seg["grade"].to_numpy() == pytest.approx(0.05)
    assert seg.attrs["ascent_m"] == pytest.approx(100.0)
    assert seg["slope_length_m"].sum() == pytest.approx(2000 * np.sqrt(1 + 0.05**2))


def test_smoothing_removes_noise_climb():
    rng = np.random.default_rng(3)
    n = 400
    base = straight_route(10_000.0, n_points=n)
    noisy = base.with_elevation(100 + rng.normal(0, 2.0, n), "file")
    seg = segment_route(noisy, smooth_sigma_m=60.0)
    assert seg.attrs["ascent_raw_m"] > 200
    assert seg.attrs["ascent_m"] < 0.2 * seg.attrs["ascent_raw_m"]


def test_duplicate_points_are_merged():
    r = Route(lat_deg=[45.0, 45.0, 45.001], lon_deg=[7.0, 7.0, 7.0], stop_kind=[0, 3, 0])
    seg = segment_route(r)
    assert seg["length_m"].sum() == pytest.approx(GEOD.inv(7.0, 45.0, 7.0, 45.001)[2])


def test_zero_length_route_is_an_error():
    with pytest.raises(RouteError, match="no length"):
        segment_route(Route(lat_deg=[45.0, 45.0], lon_deg=[7.0, 7.0]))
    with pytest.raises(RouteError, match="positive"):
        segment_route(straight_route(100.0), max_length_m=0.0)


def test_curvature_of_a_circle():
    # headings of a circle of radius 100 m sampled every 10 m
    s = np.arange(0, 300, 10.0) + 5.0
    heading = np.degrees(s / 100.0)
    assert curvature_per_m(heading, s) == pytest.approx(0.01)
    assert curvature_per_m(np.array([10.0]), np.array([1.0])).tolist() == [0.0]
