import numpy as np
import pytest

from tripsim.errors import RouteError
from tripsim.route import Route


def test_one_point_route_is_rejected():
    with pytest.raises(RouteError, match="at least 2 points"):
        Route(lat_deg=np.array([45.0]), lon_deg=np.array([7.0]))


def test_nan_coordinates_and_ranges():
    with pytest.raises(RouteError, match="NaN"):
        Route(lat_deg=np.array([45.0, np.nan]), lon_deg=np.array([7.0, 7.1]))
    with pytest.raises(RouteError, match="within"):
        Route(lat_deg=np.array([45.0, 95.0]), lon_deg=np.array([7.0, 7.1]))


def test_nan_elevation_names_the_point():
    with pytest.raises(RouteError, match=r"missing \(NaN\) at 1 of 3 points, first at point 1"):
        Route(lat_deg=np.array([45.0, 45.1, 45.2]), lon_deg=np.array([7.0, 7.0, 7.0]),
              elevation_m=np.array([100.0, np.nan, 120.0]), source="x.gpx")


def test_defaults_and_copies():
    r = Route(lat_deg=[45.0, 45.1], lon_deg=[7.0, 7.0])
    assert np.isnan(r.speed_limit_kph).all() and r.elevation_source == "none"
    assert r.with_default_speed(70.0).speed_limit_kph.tolist() == [70.0]
    assert r.with_elevation(np.array([1.0, 2.0]), "dem").elevation_source == "dem"


def test_attribute_lengths_are_checked():
    with pytest.raises(RouteError, match="speed_limit_kph has 2 values, expected 1"):
        Route(lat_deg=[45.0, 45.1], lon_deg=[7.0, 7.0], speed_limit_kph=[50.0, 60.0])
