import numpy as np
import pandas as pd
import pytest
from conftest import DEMO

from tripsim.errors import TripsimInputError
from tripsim.io.weather_files import read_weather
from tripsim.weather import (
    YEAR_S,
    Weather,
    clear_sky_weather,
    conditions_at,
    constant_weather,
    year_seconds,
)


@pytest.fixture(scope="module")
def epw():
    return read_weather(DEMO / "tamsreach.epw")


def test_epw_reads_as_a_typical_year(epw):
    assert epw.periodic and epw.utc_offset_h == -2.0
    assert epw.state_s.size == 8760 and epw.irradiance_s[0] == 1800.0  # mid-interval
    assert 1000 < epw.irradiance["ghi_w_m2"].sum() / 1000 < 2500


def test_any_year_maps_onto_the_typical_year(epw):
    a = conditions_at(epw, pd.DatetimeIndex([pd.Timestamp("2026-07-14 13:00-02:00")]))
    b = conditions_at(epw, pd.DatetimeIndex([pd.Timestamp("1999-07-14 15:00Z")]))
    assert a["temp_c"][0] == pytest.approx(b["temp_c"][0])
    leap = conditions_at(epw, pd.DatetimeIndex([pd.Timestamp("2028-02-29 12:00-02:00")]))
    feb28 = conditions_at(epw, pd.DatetimeIndex([pd.Timestamp("2027-02-28 12:00-02:00")]))
    assert leap["ghi_w_m2"][0] == pytest.approx(feb28["ghi_w_m2"][0])


def test_new_year_wraps(epw):
    t = pd.DatetimeIndex([pd.Timestamp("2026-12-31 23:50-02:00"),
                          pd.Timestamp("2027-01-01 00:10-02:00")])
    c = conditions_at(epw, t)
    assert np.all(np.isfinite(c["temp_c"]))
    assert abs(c["temp_c"][0] - c["temp_c"][1]) < 3.0


def test_year_seconds_folds_leap_days():
    t = pd.DatetimeIndex(["2028-03-01 00:00Z", "2027-03-01 00:00Z"])
    s = year_seconds(t, 0.0)
    assert s[0] == s[1] == 59 * 86400.0


def test_wind_direction_interpolates_through_north():
    w = constant_weather()
    w = Weather(state_s=np.array([0.0, 3600.0, YEAR_S]), irradiance_s=w.irradiance_s,
                irradiance=w.irradiance, periodic=True,
                state={"temp_c": np.zeros(3), "pressure_pa": np.full(3, np.nan),
                       "wind_speed_mps": np.full(3, 5.0),
                       "wind_from_deg": np.array([350.0, 10.0, 350.0])})
    c = conditions_at(w, pd.DatetimeIndex([pd.Timestamp("2026-01-01 00:30Z")]))
    assert abs((c["wind_from_deg"][0] + 180.0) % 360.0 - 180.0) < 0.5  # north, not south


def test_clear_sky_span_and_cloud():
    start = pd.Timestamp("2026-06-21 06:00-02:00")
    clear = clear_sky_weather(41.2, -31.6, start, start + pd.Timedelta(hours=12))
    cloudy = clear_sky_weather(41.2, -31.6, start, start + pd.Timedelta(hours=12),
                               cloud_factor=0.8)
    noon = pd.DatetimeIndex([pd.Timestamp("2026-06-21 12:00-02:00")])
    g_clear = conditions_at(clear, noon)["ghi_w_m2"][0]
    g_cloud = conditions_at(cloudy, noon)["ghi_w_m2"][0]
    assert 800 < g_clear < 1100
    assert g_cloud == pytest.approx(g_clear * (1 - 0.75 * 0.8**3.4), rel=1e-6)
    with pytest.raises(TripsimInputError, match="outside the weather"):
        conditions_at(clear, pd.DatetimeIndex([pd.Timestamp("2026-06-25 12:00Z")]))
    with pytest.raises(TripsimInputError, match="cloud factor"):
        clear_sky_weather(41.2, -31.6, start, start, cloud_factor=1.5)


def _lines(path):
    return path.read_text().splitlines()


def test_truncated_and_malformed_epw(tmp_path, epw):
    lines = _lines(DEMO / "tamsreach.epw")
    short = tmp_path / "short.epw"
    short.write_text("\n".join(lines[:5000]) + "\n")
    with pytest.raises(TripsimInputError, match="holds 4992 hourly rows.*truncated"):
        read_weather(short)
    bad = tmp_path / "bad.epw"
    row = lines[100].split(",")
    row[6] = "450.0"  # dry-bulb temperature
    bad.write_text("\n".join([*lines[:100], ",".join(row), *lines[101:]]) + "\n")
    with pytest.raises(TripsimInputError, match="column temp_c: 1 values .* first at data row 93"):
        read_weather(bad)
    junk = tmp_path / "junk.epw"
    junk.write_text("LOCATION,x\nnot,an,epw\n")
    with pytest.raises(TripsimInputError, match="junk.epw"):
        read_weather(junk)


def test_truncated_tmy3(tmp_path):
    from pathlib import Path

    import pvlib

    src = Path(pvlib.__file__).parent / "data" / "723170TYA.CSV"
    lines = src.read_text().splitlines()
    p = tmp_path / "cut.csv"
    p.write_text("\n".join(lines[:3000]) + "\n")
    with pytest.raises(TripsimInputError, match="truncated"):
        read_weather(p)
    p2 = tmp_path / "garbage.csv"
    p2.write_text("a,b,c\n1,2,3\n")
    with pytest.raises(TripsimInputError, match="garbage.csv"):
        read_weather(p2)


def test_unknown_weather_format(tmp_path):
    with pytest.raises(TripsimInputError, match="unknown weather format"):
        read_weather(tmp_path / "x.txt")
