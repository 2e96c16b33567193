import numpy as np
import pytest
from conftest import make_vehicle

from tripsim.errors import TripsimInputError
from tripsim.plan.charging import ChargeCurve, charge_curve, cold_factor

DC_VEHICLE = dict(charging={"ac_max_kw": 11.0, "dc_max_kw": 150.0, "efficiency": 0.9,
                            "connectors": ["type2", "type2_combo"],
                            "curve": {"x": [0.0, 0.5, 0.8, 1.0], "y": [150.0, 120.0, 60.0, 10.0]}})


def test_ac_is_flat_at_the_lower_limit():
    v = make_vehicle(**DC_VEHICLE)
    c = charge_curve(v, "type2", 22.0)
    assert c.power_kw(0.3) == pytest.approx(11.0 * 0.9)
    assert c.hours(0.2, 0.7) == pytest.approx(0.5 * 58.0 / (11.0 * 0.9))


def test_dc_is_capped_by_the_site_with_crossings():
    v = make_vehicle(**DC_VEHICLE)
    c = charge_curve(v, "type2_combo", 100.0)
    assert c.power_kw(0.1) == pytest.approx(90.0)  # the site: 100 kW at the plug, 90 into cells
    assert c.power_kw(0.9) == pytest.approx(35.0)  # the vehicle's taper
    assert c.power_kw(0.7) == pytest.approx(80.0)  # below the cap again past the crossing
    assert np.isclose(c.soc, 0.65).any()  # where the taper crosses the cap


def test_cold_derates_dc():
    assert cold_factor(20.0) == 1.0 and cold_factor(-20.0) == 0.5
    assert cold_factor(2.5) == pytest.approx(0.75)
    v = make_vehicle(**DC_VEHICLE)
    warm = charge_curve(v, "type2_combo", 350.0, temp_c=20.0)
    cold = charge_curve(v, "type2_combo", 350.0, temp_c=-10.0)
    assert cold.hours(0.1, 0.8) > 1.5 * warm.hours(0.1, 0.8)


def test_inverse_and_plug_energy():
    c = ChargeCurve(np.array([0.0, 0.5, 1.0]), np.array([100.0, 100.0, 20.0]), 60.0, 0.92)
    for a, b in [(0.1, 0.4), (0.2, 0.9), (0.55, 0.95)]:
        assert c.soc_after(a, c.hours(a, b)) == pytest.approx(b, abs=1e-9)
    assert c.soc_after(0.5, 100.0) == 1.0
    assert c.plug_kwh(0.2, 0.7) == pytest.approx(30.0 / 0.92)
    assert c.hours(0.7, 0.2) == 0.0


def test_vehicle_without_dc():
    v = make_vehicle(charging={"dc_max_kw": 0.0})
    with pytest.raises(TripsimInputError, match="cannot charge on DC"):
        charge_curve(v, "chademo", 50.0)
