"""Weather files: gaps interpolated only up to the stated limit, headers checked."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import DEMO

from tripsim.errors import TripsimInputError
from tripsim.io._limits import WEATHER_GAP_MAX_H
from tripsim.io.weather_files import read_weather

_FIRST = 8  # EPW data start on line 9


def _epw_with(tmp_path, edits):
    lines = (DEMO / "tamsreach.epw").read_text().splitlines()
    for row, field, value in edits:
        parts = lines[_FIRST + row].split(",")
        parts[field] = value
        lines[_FIRST + row] = ",".join(parts)
    p = tmp_path / "edited.epw"
    p.write_text("\n".join(lines) + "\n")
    return p


def test_gap_of_the_limit_is_interpolated_linearly(tmp_path):
    """Issue 8, item 10: gaps of 12 h were filled although the limit said 6 h."""
    ref = read_weather(DEMO / "tamsreach.epw").state["temp_c"]
    rows = range(2000, 2000 + WEATHER_GAP_MAX_H)
    temp = read_weather(_epw_with(tmp_path, [(r, 6, "99.9") for r in rows])).state["temp_c"]
    filled = np.flatnonzero(temp != ref)  # 99.9 marks a missing value
    assert filled.size == WEATHER_GAP_MAX_H and np.all(np.diff(filled) == 1)
    a, b = filled[0] - 1, filled[-1] + 1
    expected = np.linspace(ref[a], ref[b], WEATHER_GAP_MAX_H + 2)[1:-1]
    np.testing.assert_allclose(temp[filled], expected)


@pytest.mark.parametrize("hours", [WEATHER_GAP_MAX_H + 1, 12])
def test_longer_gaps_are_refused(tmp_path, hours):
    p = _epw_with(tmp_path, [(r, 6, "99.9") for r in range(2000, 2000 + hours)])
    with pytest.raises(TripsimInputError, match=rf"column temp_c: {hours} consecutive hours "
                       r"missing from data row 2001 .*; gaps of up to 6 h are interpolated"):
        read_weather(p)


def test_missing_pressure_may_run_long(tmp_path):
    """Pressure is then taken from elevation, so a long gap stays missing rather than failing."""
    w = read_weather(_epw_with(tmp_path, [(r, 9, "999999") for r in range(100, 130)]))
    assert np.isnan(w.state["pressure_pa"]).sum() == 30


def test_text_in_a_number_column_is_named(tmp_path):
    p = _epw_with(tmp_path, [(40, 21, "calm")])
    with pytest.raises(TripsimInputError, match=r"column wind_speed: 'calm' at data row 41 "
                       "is not a number"):
        read_weather(p)


@pytest.mark.parametrize(("field", "value", "match"), [
    (8, "1e12", r"header: TZ = 1e\+12 is outside -12 to 14 h"),
    (6, "999", "header: latitude = 999 is outside -90 to 90°"),
    (9, "-100000", "header: altitude = -100000 is outside -500 to 9000 m"),
])
def test_epw_header_is_checked(tmp_path, field, value, match):
    """Issue 8, item 6: a time zone of 1e12 or a latitude of 999 were taken as read."""
    lines = (DEMO / "tamsreach.epw").read_text().splitlines()
    parts = lines[0].split(",")
    parts[field] = value
    p = tmp_path / "header.epw"
    p.write_text("\n".join([",".join(parts), *lines[1:]]) + "\n")
    with pytest.raises(TripsimInputError, match=match):
        read_weather(p)


def test_month_13_is_one_line(tmp_path):
    """Issue 8, item 10: pandas' four-line hint ended up in the message."""
    p = _epw_with(tmp_path, [(0, 1, "13")])
    with pytest.raises(TripsimInputError) as err:
        read_weather(p)
    assert "\n" not in str(err.value) and "month 13 is outside 1 to 12" in str(err.value)
