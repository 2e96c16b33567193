import math

import numpy as np
import pytest

from tripsim.maxspeed import DEFAULT_HIGHWAY_KPH, NONE_KPH, edge_speed_limit_kph, parse_maxspeed


@pytest.mark.parametrize("value", [None, "", "signals", "variable", "fast", float("nan"), -5, [],
                                   "0"])
def test_values_without_a_number_are_nan(value):
    assert math.isnan(parse_maxspeed(value))


def test_numbers_pass_through():
    assert parse_maxspeed(80) == 80.0
    assert parse_maxspeed(np.float64(30.0)) == 30.0
    assert parse_maxspeed("100") == 100.0


def test_lists_from_osmnx_merges_take_the_lowest():
    assert parse_maxspeed(["50", "30"]) == 30.0
    assert parse_maxspeed(["signals", "70"]) == 70.0


def test_none_speed_is_configurable():
    assert parse_maxspeed("none") == NONE_KPH
    assert parse_maxspeed("none", none_kph=150.0) == 150.0


def test_user_implicit_table_overrides():
    assert parse_maxspeed("ZZ:rural", implicit={"ZZ:rural": 75.0}) == 75.0
    assert math.isnan(parse_maxspeed("ZZ:rural"))


def test_edge_falls_back_to_class_default_and_user_table():
    assert edge_speed_limit_kph(None, "residential") == (DEFAULT_HIGHWAY_KPH["residential"], False)
    assert edge_speed_limit_kph("signals", "motorway") == (DEFAULT_HIGHWAY_KPH["motorway"], False)
    assert edge_speed_limit_kph(None, "residential", defaults={"residential": 20.0}) == (20.0,
                                                                                         False)
    assert edge_speed_limit_kph(None, ["busway", "primary"]) == (DEFAULT_HIGHWAY_KPH["busway"],
                                                                 False)
    assert edge_speed_limit_kph("60", "residential") == (60.0, True)
    assert edge_speed_limit_kph(None, None)[0] == 50.0
