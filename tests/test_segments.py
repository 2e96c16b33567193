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
    inner = (s > 70) & (s < 230)  # the arc window and the smoothing are clipped at the ends
    assert curvature_per_m(heading, s)[inner] == pytest.approx(0.01, rel=1e-6)
    assert curvature_per_m(np.array([10.0]), np.array([1.0])).tolist() == [0.0]


def _circle_route(radius_m, step_m, jitter_m=0.0, seed=0):
    """Points every step_m on an arc of 270° of radius radius_m, optionally jittered."""
    from tripsim.segments import GEOD

    angle = np.arange(0.0, 1.5 * np.pi, step_m / radius_m)
    lon, lat, _ = GEOD.fwd(np.full(angle.size, 7.0), np.full(angle.size, 45.0),
                           np.degrees(angle), np.full(angle.size, radius_m))
    lon, lat = np.asarray(lon), np.asarray(lat)
    if jitter_m:
        rng = np.random.default_rng(seed)
        lat = lat + rng.normal(0.0, jitter_m, lat.size) / 111_000.0
        lon = lon + rng.normal(0.0, jitter_m, lon.size) / (111_000.0 * np.cos(np.radians(45.0)))
    return Route(lat_deg=lat, lon_deg=lon, speed_limit_kph=np.full(lat.size - 1, 50.0))


@pytest.mark.parametrize("max_length_m", [2.0, 5.0, 10.0, 25.0])
def test_curvature_does_not_depend_on_segment_length(max_length_m):
    """Before the fixed arc, centred differences made a corner sharper on shorter segments."""
    seg = segment_route(_circle_route(80.0, 4.0), max_length_m=max_length_m)
    mid = seg["start_m"] + 0.5 * seg["length_m"]
    inner = (mid > 60.0) & (mid < mid.max() - 60.0)
    assert seg.loc[inner, "curvature_per_m"].to_numpy() == pytest.approx(1 / 80.0, rel=0.03)


def test_gps_jitter_does_not_invent_bends():
    clean = segment_route(_circle_route(150.0, 5.0), max_length_m=5.0)
    noisy = segment_route(_circle_route(150.0, 5.0, jitter_m=1.0), max_length_m=5.0)
    inner = slice(30, -30)
    assert np.median(noisy["curvature_per_m"].to_numpy()[inner]) == pytest.approx(
        np.median(clean["curvature_per_m"].to_numpy()[inner]), rel=0.15)
    # a driver's cornering speed at 2.5 m/s² lateral is off by no more than a few km/h
    v = np.sqrt(2.5 / noisy["curvature_per_m"].to_numpy()[inner]) * 3.6
    assert np.percentile(v, 10) > 0.8 * np.sqrt(2.5 * 150.0) * 3.6
