"""Charging time and power levels against closed forms and standards.

* A constant-power curve charges ΔE in ΔE/P exactly; a two-piece linear curve matches
  the hand integral ∫ds/(P0 + k s) = ln(P1/P0)/k (calculus).
* Power levels (read in a secondary source, from memory; see docs/REFERENCES.md): SAE J1772 AC
  from 1.44 kW (12 A at 120 V) to 19.2 kW (80 A at 240 V); IEC 62196 Type 2 up to 22 kW
  three-phase (IEC 61851); CCS DC up to 350 kW.  tripsim's default powers by connector
  must lie within those ranges.
"""

import math

import numpy as np
import pytest

from tripsim.plan.charging import ChargeCurve
from tripsim.plan.sites import DEFAULT_CONNECTOR_KW


def test_constant_power_gives_energy_over_power():
    c = ChargeCurve(np.array([0.0, 1.0]), np.array([50.0, 50.0]), 75.0, 0.9)
    assert c.hours(0.1, 0.8) == pytest.approx(0.7 * 75.0 / 50.0, rel=1e-12)


def test_two_piece_curve_matches_hand_integral():
    # 120 kW flat to 50 %, then linear down to 30 kW at 100 %, 80 kWh battery, 20 % → 90 %
    c = ChargeCurve(np.array([0.0, 0.5, 1.0]), np.array([120.0, 120.0, 30.0]), 80.0, 0.92)
    k = (30.0 - 120.0) / 0.5  # kW per unit SoC
    p_90 = 120.0 + k * 0.4
    hand = 80.0 * (0.3 / 120.0 + math.log(p_90 / 120.0) / k)
    assert c.hours(0.2, 0.9) == pytest.approx(hand, rel=1e-12)


def test_default_powers_lie_within_the_standards():
    assert 1.44 <= DEFAULT_CONNECTOR_KW["type1"] <= 19.2  # SAE J1772 AC
    assert DEFAULT_CONNECTOR_KW["type2"] <= 22.0  # IEC 61851 mode 3, three-phase
    for dc in ("type2_combo", "type1_combo"):
        assert 0 < DEFAULT_CONNECTOR_KW[dc] <= 350.0  # CCS
    assert DEFAULT_CONNECTOR_KW["schuko"] == pytest.approx(10 * 230 / 1000)  # 10 A at 230 V
