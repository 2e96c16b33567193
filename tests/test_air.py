import numpy as np
import pandas as pd
import pytest

from tripsim.air import air_density, headwind_mps, pressure_from_elevation, wind_at_height


def test_density_follows_input_type():
    assert isinstance(air_density(15.0, 101325.0), float)
    arr = air_density(np.array([0.0, 30.0]), np.array([101325.0, 101325.0]))
    assert arr.shape == (2,) and arr[0] > arr[1]
    ser = air_density(pd.Series([10.0, 20.0]), 100000.0)
    assert isinstance(ser, pd.Series)


def test_nan_propagates():
    assert np.isnan(air_density(np.nan, 101325.0))
    assert np.isnan(headwind_mps(np.nan, 0.0, 0.0))


def test_pressure_falls_with_height():
    p = pressure_from_elevation(np.array([0.0, 1000.0, 2000.0]))
    assert np.all(np.diff(p) < 0)


def test_headwind_geometry():
    assert headwind_mps(10.0, 90.0, 90.0) == pytest.approx(10.0)  # driving east into an east wind
    assert headwind_mps(10.0, 270.0, 90.0) == pytest.approx(-10.0)  # tailwind
    assert headwind_mps(10.0, 0.0, 90.0) == pytest.approx(0.0, abs=1e-12)  # pure crosswind


def test_wind_reduces_below_reference_height():
    assert wind_at_height(10.0, 10.0) == pytest.approx(10.0)
    assert wind_at_height(10.0, 1.5) < 10.0
