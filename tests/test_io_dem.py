import numpy as np
import pytest
import rasterio
from rasterio.transform import from_origin

from tripsim.elevation import sample_dem
from tripsim.errors import DemError
from tripsim.io import read_dem
from tripsim.route import Route
from tripsim.segments import segment_route


@pytest.fixture
def plane_dem(tmp_path):
    """z = 100 + 1000·(lon - 7) + 500·(lat - 45) on a 0.01° grid over 7-7.2 E, 45-45.2 N."""
    res = 0.01
    cols = rows = 20
    lon = 7.0 + (np.arange(cols) + 0.5) * res
    lat = 45.2 - (np.arange(rows) + 0.5) * res
    z = 100 + 1000 * (lon[None, :] - 7) + 500 * (lat[:, None] - 45)
    z[0, 0] = -9999.0
    path = tmp_path / "plane.tif"
    with rasterio.open(path, "w", driver="GTiff", height=rows, width=cols, count=1,
                       dtype="float64", crs="EPSG:4326", transform=from_origin(7.0, 45.2, res, res),
                       nodata=-9999.0) as dst:
        dst.write(z, 1)
    return path


def test_bilinear_is_exact_on_a_plane(plane_dem):
    dem = read_dem(plane_dem)
    lat = np.array([45.05, 45.123, 45.1])
    lon = np.array([7.05, 7.031, 7.17])
    expect = 100 + 1000 * (lon - 7) + 500 * (lat - 45)
    assert sample_dem(dem, lat, lon) == pytest.approx(expect, abs=1e-9)


def test_window_read_matches_full_read(plane_dem):
    part = read_dem(plane_dem, bounds_deg=(7.05, 45.05, 7.1, 45.1))
    assert part.elevation_m.shape[0] < 20
    assert sample_dem(part, np.array([45.07]), np.array([7.08]))[0] == pytest.approx(
        100 + 80 + 35)


def test_outside_and_nodata_are_errors(plane_dem):
    dem = read_dem(plane_dem)
    with pytest.raises(DemError, match="does not cover the route: 1 of 2"):
        sample_dem(dem, np.array([45.1, 46.0]), np.array([7.1, 7.1]))
    with pytest.raises(DemError, match="no data"):
        sample_dem(dem, np.array([45.199]), np.array([7.001]))


def test_segments_sample_the_raster_along_geometry(plane_dem):
    r = Route(lat_deg=[45.05, 45.15], lon_deg=[7.05, 7.05])
    seg = segment_route(r, dem=read_dem(plane_dem), smooth_sigma_m=0.0)
    assert seg.attrs["elevation_source"] == "dem"
    assert seg["elevation_m"].iloc[0] == pytest.approx(100 + 50 + 25, abs=1e-6)
    assert seg.attrs["ascent_m"] == pytest.approx(50.0, rel=1e-3)


def test_unreadable_raster(tmp_path):
    p = tmp_path / "x.tif"
    p.write_text("not a raster")
    with pytest.raises(DemError, match="cannot read"):
        read_dem(p)
