"""The simulator's coast against the closed form of m·dv/dt = −(A + C·v²).

Source: the road-load equation with constant rolling force A = m·g·Crr and
drag C = ½·ρ·Cd·A (T. D. Gillespie, *Fundamentals of Vehicle Dynamics*, SAE
1992, ch. 4; integral from memory, re-derived here):
    t_stop = m/√(A·C) · atan(v0·√(C/A))
    s_stop = m/(2C) · ln(1 + C·v0²/A)
with m the inertial mass (λ·m_empty + m_payload) and A, C from the vehicle file's
numbers, written out here; the air density is the ideal-gas density at 15 °C and
101 325 Pa (ISA sea level, 1.2250 kg/m³).
"""

import numpy as np
import pytest
from conftest import make_vehicle

from tripsim.coastdown import coast
from tripsim.units import G_MPS2


@pytest.mark.parametrize(("cd", "crr", "v0"), [(0.27, 0.0085, 27.0), (0.20, 0.006, 26.8),
                                               (0.35, 0.011, 35.0)])
def test_stop_time_and_distance(cd, crr, v0):
    v = make_vehicle(body={"cd": cd, "crr": crr})
    run = coast(v, v0, temp_c=15.0, pressure_pa=101_325.0)
    rho = 101_325.0 / (287.05287 * 288.15)
    body = v.body
    a_n = (body.mass_kg + body.payload_kg) * G_MPS2 * crr
    c = 0.5 * rho * cd * body.frontal_area_m2
    m = body.rotating_mass_factor * body.mass_kg + body.payload_kg
    t_stop = m / np.sqrt(a_n * c) * np.arctan(v0 * np.sqrt(c / a_n))
    s_stop = m / (2 * c) * np.log1p(c * v0**2 / a_n)
    assert run["time_s"].iloc[-1] == pytest.approx(t_stop, rel=5e-3)
    assert run["distance_m"].iloc[-1] == pytest.approx(s_stop, rel=5e-3)
