import numpy as np
import pytest

from tripsim.cabin import auxiliary_power_w, cabin_heat_demand_w, climate_power_w
from tripsim.vehicle import Auxiliary


def test_no_climate_load_inside_deadband():
    aux = Auxiliary(base_w=300.0)
    assert auxiliary_power_w(aux, 21.0) == pytest.approx(300.0)
    assert climate_power_w(aux, np.array([18.5, 23.5])).tolist() == [0.0, 0.0]


def test_heating_grows_with_cold_and_is_capped():
    aux = Auxiliary(base_w=0.0, cabin_ua_w_per_k=100.0, heater_max_w=2000.0,
                    battery_heat_w_per_k=0.0)
    heat, cool = cabin_heat_demand_w(aux, np.array([10.0, 0.0, -30.0]))
    assert heat.tolist() == [800.0, 1800.0, 2000.0]
    assert cool.tolist() == [0.0, 0.0, 0.0]


def test_heat_pump_beats_resistive_heater():
    resistive = Auxiliary(base_w=0.0)
    pump = Auxiliary(base_w=0.0, heat_pump=True)
    assert climate_power_w(pump, 0.0) < climate_power_w(resistive, 0.0)
    custom = Auxiliary(base_w=0.0, heat_pump=True, heat_pump_cop={"x": [-10, 10], "y": [2, 4]},
                       battery_heat_w_per_k=0.0)
    assert climate_power_w(custom, 0.0) == pytest.approx(110 * 18 / 3.0)


def test_cooling_and_nan():
    aux = Auxiliary(base_w=0.0)
    assert climate_power_w(aux, 35.0) == pytest.approx((110 * 11 + 500) / 2.0 + 30 * 5)
    assert np.isnan(climate_power_w(aux, np.array([np.nan]))[0])
