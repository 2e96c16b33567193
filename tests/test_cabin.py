import numpy as np
import pytest

from tripsim.cabin import auxiliary_power_w, cabin_heat_demand_w, cabin_params, climate_power_w
from tripsim.compiled import jitted
from tripsim.vehicle import Auxiliary


def params(**kw):
    return cabin_params(Auxiliary(**{"base_w": 0.0, **kw}))


def test_no_climate_load_inside_deadband():
    p = params(base_w=300.0)
    assert auxiliary_power_w(21.0, 0.0, p) == pytest.approx(300.0)
    assert climate_power_w(np.array([18.5, 23.5]), 0.0, p).tolist() == [0.0, 0.0]


def test_heating_grows_with_cold_and_is_capped():
    p = params(cabin_ua_w_per_k=100.0, heater_max_w=2000.0, battery_heat_w_per_k=0.0)
    heat, cool = cabin_heat_demand_w(np.array([10.0, 0.0, -30.0]), 0.0, p)
    assert heat.tolist() == [800.0, 1800.0, 2000.0]
    assert cool.tolist() == [0.0, 0.0, 0.0]


def test_sun_through_the_glass_offsets_heating_and_adds_to_cooling():
    p = params(cabin_ua_w_per_k=100.0, cabin_solar_aperture_m2=0.6, battery_heat_w_per_k=0.0)
    heat_dark, _ = cabin_heat_demand_w(0.0, 0.0, p)
    heat_sun, _ = cabin_heat_demand_w(0.0, 800.0, p)
    assert heat_dark - heat_sun == pytest.approx(0.6 * 800.0)
    _, cool_dark = cabin_heat_demand_w(30.0, 0.0, p)
    _, cool_sun = cabin_heat_demand_w(30.0, 800.0, p)
    assert cool_sun - cool_dark == pytest.approx(480.0)
    # a sunny mild day needs cooling although the air is inside the deadband
    heat, cool = cabin_heat_demand_w(22.0, 900.0, p)
    assert heat == 0.0 and cool == pytest.approx(100.0 * (22.0 - 24.0) + 540.0)


def test_heat_pump_beats_resistive_heater():
    resistive = params()
    pump = params(heat_pump=True)
    assert climate_power_w(0.0, 0.0, pump) < climate_power_w(0.0, 0.0, resistive)
    custom = params(heat_pump=True, heat_pump_cop={"x": [-10, 10], "y": [2, 4]},
                    battery_heat_w_per_k=0.0)
    assert climate_power_w(0.0, 0.0, custom) == pytest.approx(110 * 18 / 3.0)
    weak = params(heat_pump=True, heat_pump_cop={"x": [-10, 10], "y": [0.5, 0.5]},
                  battery_heat_w_per_k=0.0)  # below COP 1 the resistive element takes over
    assert climate_power_w(0.0, 0.0, weak) == pytest.approx(110 * 18)


def test_cooling_and_nan():
    p = params()
    assert climate_power_w(35.0, 0.0, p) == pytest.approx(110 * 11 / 2.0 + 30 * 5)
    assert np.isnan(climate_power_w(np.array([np.nan]), 0.0, p)[0])


def test_compiled_twin_equals_the_numpy_function():
    p = params(heat_pump=True, cabin_solar_aperture_m2=0.8)
    twin = jitted(auxiliary_power_w)
    for t, g in [(-20.0, 0.0), (-3.0, 400.0), (21.0, 0.0), (33.0, 950.0)]:
        assert twin(t, g, p) == auxiliary_power_w(t, g, p)
