"""tripsim's weather reader against pvlib's own readers, on the files in the pvlib wheel.

Sources: the TMY3 and TMY2 files that ship with pvlib (open data from NREL):
723170TYA.CSV (Greensboro NC, TMY3), 703165TY.csv (Sand Point AK, TMY3), 12839.tm2
(Miami FL, TMY2); pvlib.iotools.read_tmy3 / read_tmy2 as the independent reader.

Yield of a flat 1 kWp facet: a DC performance ratio of 0.75-1.0 of the horizontal
irradiation (kWh/kWp over kWh/m²), the usual range for crystalline panels before
inverter losses, the top end reached in cold climates where cells run below 25 °C
(common practice; IEA PVPS Task 13 reports, from memory).
"""

from pathlib import Path

import numpy as np
import pandas as pd
import pvlib
import pytest

from tripsim.io.weather_files import read_weather
from tripsim.parking import Parking, parked_solar
from tripsim.vehicle import PanelFacet

DATA = Path(pvlib.__file__).parent / "data"
FILES = {"723170TYA.CSV": "tmy3", "703165TY.csv": "tmy3", "12839.tm2": "tmy2"}


def _pvlib_ghi(name):
    if FILES[name] == "tmy3":
        data, _ = pvlib.iotools.read_tmy3(DATA / name, map_variables=True)
        return data["ghi"], data["temp_air"]
    data, _ = pvlib.iotools.read_tmy2(DATA / name)
    return data["GHI"], data["DryBulb"] / 10.0


@pytest.mark.parametrize("name", list(FILES))
def test_annual_sums_equal_pvlib(name):
    ours = read_weather(DATA / name)
    ghi, temp = _pvlib_ghi(name)
    assert ours.irradiance["ghi_w_m2"].sum() == pytest.approx(ghi.sum(), rel=1e-3)
    assert ours.state["temp_c"].mean() == pytest.approx(temp.mean(), rel=1e-3)


@pytest.mark.parametrize("name", list(FILES))
def test_flat_one_kwp_yield_is_plausible(name):
    w = read_weather(DATA / name)
    kwp = PanelFacet(name="flat", area_m2=5.0, efficiency=0.2, tilt_deg=0.0,
                     system_efficiency=1.0)
    start = pd.Timestamp("2001-01-01", tz="UTC")
    park = parked_solar([kwp], w, start, start + pd.Timedelta(days=365), latitude=w.latitude,
                        longitude=w.longitude, elevation_m=w.elevation_m,
                        parking=Parking(heading_deg=0.0), step_s=900.0)
    yield_kwh = park.cum_wh[np.searchsorted(park.epoch_s, park.epoch_s[0] + 365 * 86400)] / 1000
    ghi_kwh_m2 = w.irradiance["ghi_w_m2"].sum() / 1000
    assert 0.75 * ghi_kwh_m2 <= yield_kwh <= 1.0 * ghi_kwh_m2
