"""Sun position against the NREL SPA worked example.

Source: I. Reda, A. Andreas (2004, revised 2008), "Solar Position Algorithm for Solar
Radiation Applications", NREL/TP-560-34302, table A4.1 (values from memory, see
docs/REFERENCES.md): 2003-10-17 12:30:30 local time (UTC−7), 39.742476° N,
105.1786° W, 1830.14 m, 820 mbar, 11 °C, ΔT = 67 s → topocentric zenith 50.11162°,
azimuth 194.34024° (eastward from north).
"""

import numpy as np
import pandas as pd
import pvlib
import pytest

from tripsim.solar import sun_at, sun_cells, sun_position
from tripsim.timebase import epoch_seconds


def test_spa_worked_example():
    t = pd.DatetimeIndex([pd.Timestamp("2003-10-17 12:30:30-07:00")])
    pos = sun_position(t, 39.742476, -105.1786, elevation_m=1830.14, pressure_pa=82_000.0,
                       temp_c=11.0, delta_t_s=67.0)
    # pvlib's apparent zenith includes refraction, as the paper's topocentric zenith does
    assert pos.zenith_deg[0] == pytest.approx(50.11162, abs=1e-3)
    assert pos.azimuth_deg[0] == pytest.approx(194.34024, abs=1e-3)


@pytest.mark.parametrize(("lat", "lon", "day"), [
    (41.2, -31.6, "2026-06-21"),   # the demo region at midsummer
    (41.2, -31.6, "2026-12-21"),
    (-33.9, 151.2, "2026-03-20"),  # southern hemisphere, an equinox
    (64.1, -21.9, "2026-06-21"),   # above 58.5°: the sun barely sets
])
def test_the_models_sun_table_against_pvlib_spa(lat, lon, day):
    """The table the model reads (10-minute SPA grid, interpolated; ``sun_at`` in cells)
    is within 0.05° of zenith and 0.1° of azimuth of pvlib's SPA at every minute with the
    sun up (pvlib.solarposition.get_solarposition, method "nrel_numpy": an independent
    evaluation of the same algorithm at each moment)."""
    t = pd.date_range(f"{day} 00:00", periods=24 * 60, freq="1min", tz="UTC")
    seconds = epoch_seconds(t)
    cell, places = sun_cells(np.full(t.size, lat), np.full(t.size, lon), np.zeros(t.size))
    table = sun_at(seconds, cell, places)
    exact = pvlib.solarposition.get_solarposition(t, lat, lon, method="nrel_numpy")
    up = exact["apparent_zenith"].to_numpy() < 89.0
    assert up.sum() > 300  # minutes of daylight checked
    dzen = table.zenith_deg - exact["apparent_zenith"].to_numpy()
    assert np.abs(dzen)[up].max() < 0.05
    daz = (table.azimuth_deg - exact["azimuth"].to_numpy() + 180) % 360 - 180
    assert np.abs(daz)[up & (exact["apparent_zenith"].to_numpy() > 1.0)].max() < 0.1
