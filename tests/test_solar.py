import numpy as np
import pandas as pd
import pytest

from tripsim.errors import TripsimInputError
from tripsim.parking import ParkedSolar, Parking, parked_solar
from tripsim.solar import facet_power_w, sky_for, sun_at, sun_cells, sun_position, sun_table
from tripsim.timebase import epoch_seconds
from tripsim.vehicle import PanelFacet
from tripsim.weather import clear_sky_weather, constant_weather

ROOF = PanelFacet(area_m2=2.0, efficiency=0.2, tilt_deg=0.0)
T = pd.date_range("2026-06-21 06:00-02:00", periods=13, freq="h")


def _sky(ghi=800.0, temp=25.0):
    n = T.size
    return sky_for(T, sun_position(T, 41.2, -31.6), np.full(n, ghi), np.full(n, 0.8 * ghi),
                   np.full(n, 0.2 * ghi), np.full(n, temp))


def test_power_scales_with_area_and_is_zero_in_the_dark():
    sky = _sky()
    one = facet_power_w([ROOF], 0.0, sky)
    two = facet_power_w([ROOF, ROOF], 0.0, sky)
    np.testing.assert_allclose(two, 2 * one)
    dark = facet_power_w([ROOF], 0.0, _sky(ghi=0.0))
    assert np.all(dark == 0.0)


def test_heat_and_shade_reduce_power():
    hot = facet_power_w([ROOF], 0.0, _sky(temp=40.0))
    cool = facet_power_w([ROOF], 0.0, _sky(temp=0.0))
    assert np.all(hot[3:10] < cool[3:10])
    shaded = facet_power_w([ROOF], 0.0, _sky(), shading=0.25)
    np.testing.assert_allclose(shaded, 0.75 * facet_power_w([ROOF], 0.0, _sky()))
    faster = facet_power_w([ROOF], 0.0, _sky(), air_speed_mps=20.0)
    assert np.all(faster[3:10] > facet_power_w([ROOF], 0.0, _sky(), air_speed_mps=0.5)[3:10])


def test_anisotropic_models_run_and_stay_close():
    n = T.size
    sun = sun_position(T, 41.2, -31.6)
    args = (np.full(n, 800.0), np.full(n, 650.0), np.full(n, 150.0), np.full(n, 20.0))
    tilted = [PanelFacet(area_m2=1.0, efficiency=0.2, tilt_deg=30.0, azimuth_deg=90.0)]
    iso = facet_power_w(tilted, 90.0, sky_for(T, sun, *args))
    for model in ("perez", "haydavies"):
        other = facet_power_w(tilted, 90.0, sky_for(T, sun, *args, model=model), model=model)
        assert np.nansum(other) == pytest.approx(np.nansum(iso), rel=0.2)
    with pytest.raises(TripsimInputError, match="sky model"):
        sky_for(T, sun, *args, model="fancy")


def test_sun_cells_group_places_and_tables_interpolate():
    lat = np.r_[np.full(5, 41.2), np.full(5, 43.0)]
    lon = np.r_[np.full(5, -31.6), np.full(5, -28.0)]
    cell, places = sun_cells(lat, lon, np.zeros(10))
    assert len(places) == 2 and cell[0] != cell[-1]
    times = pd.DatetimeIndex([pd.Timestamp("2026-06-21 12:03-02:00")] * 10)
    pos = sun_at(epoch_seconds(times), cell, places)
    assert pos.zenith_deg[0] != pos.zenith_deg[-1]
    direct = sun_position(times[:1], 43.0, -28.0)
    assert pos.zenith_deg[-1] == pytest.approx(direct.zenith_deg[0], abs=0.05)
    # the table's blocks are shared: a second call for the same day computes nothing new
    from tripsim.solar import _block

    t = float(epoch_seconds(times[0]))
    first = sun_table(43.0, -28.0, t, t)
    before = _block.cache_info().misses
    again = sun_table(43.0, -28.0, t + 60.0, t + 120.0)
    assert _block.cache_info().misses == before
    np.testing.assert_array_equal(first.zenith_deg, again.zenith_deg)
    with pytest.raises(ValueError, match="cover"):
        sun_table(43.0, -28.0, t, t).at(np.array([t + 70 * 86400.0]))


def test_parked_energy_integrates_power():
    start = pd.Timestamp("2026-06-21 00:00-02:00")
    w = clear_sky_weather(41.2, -31.6, start, start + pd.Timedelta(days=1))
    park = parked_solar([ROOF], w, start, start + pd.Timedelta(days=1), latitude=41.2,
                        longitude=-31.6, parking=Parking(shading=0.1))
    day = park.energy_wh(park.epoch_s[:1], park.epoch_s[:1] + 86400)[0]
    assert 1500 < day < 3000  # 0.4 kWp flat on a clear midsummer day at 41 °N
    assert park.energy_wh(park.epoch_s[:1], park.epoch_s[:1] + 4 * 3600)[0] == pytest.approx(
        0.0, abs=1.0)  # 00:00-04:00 is night


def test_parking_options_and_empty_panels():
    with pytest.raises(TripsimInputError, match="--parking-shading: 2 is out of range"):
        Parking(shading=2.0)
    start = pd.Timestamp("2026-06-21 00:00Z")
    empty = parked_solar([], constant_weather(), start, start + pd.Timedelta(hours=3),
                         latitude=0.0, longitude=0.0)
    assert isinstance(empty, ParkedSolar) and empty.cum_wh.max() == 0.0


# Facet orientation on a moving vehicle: symmetry and geometry (no outside value needed;
# the orientation against pvlib's ModelChain is in tests/reference/test_solar_yield_pvlib.py).
T_GEOM = pd.date_range("2026-06-21 09:00-02:00", periods=7, freq="h")


@pytest.fixture(scope="module")
def geometry_sky():
    sun = sun_position(T_GEOM, 41.2, -31.6)
    n = T_GEOM.size
    return sky_for(T_GEOM, sun, np.full(n, 800.0), np.full(n, 700.0), np.full(n, 120.0),
                   np.full(n, 20.0))


def _facet(az, tilt=60.0):
    return PanelFacet(area_m2=1.0, efficiency=0.2, tilt_deg=tilt, azimuth_deg=az)


def test_facet_facing_the_sun_gets_more(geometry_sky):
    sun_az = geometry_sky.sun.azimuth_deg
    heading = sun_az  # nose towards the sun: a front facet faces it, a rear facet faces away
    front = facet_power_w([_facet(0.0)], heading, geometry_sky)
    rear = facet_power_w([_facet(180.0)], heading, geometry_sky)
    assert np.all(front > rear)


def test_flat_facet_does_not_care_about_heading(geometry_sky):
    flat = [_facet(0.0, tilt=0.0)]
    a = facet_power_w(flat, 0.0, geometry_sky)
    b = facet_power_w(flat, 137.0, geometry_sky)
    np.testing.assert_allclose(a, b, rtol=1e-12)


def test_turning_round_swaps_left_and_right(geometry_sky):
    left, right = _facet(270.0, tilt=90.0), _facet(90.0, tilt=90.0)
    h = 30.0
    np.testing.assert_allclose(facet_power_w([left], h, geometry_sky),
                               facet_power_w([right], h + 180.0, geometry_sky), rtol=1e-12)
    np.testing.assert_allclose(facet_power_w([right], h, geometry_sky),
                               facet_power_w([left], h + 180.0, geometry_sky), rtol=1e-12)
