"""How far a full battery goes, against a time-domain integration by scipy to the empty battery.

The simulator's state-of-charge pass decides where the battery runs empty (``stranded_at_km``,
inside a segment) and its summary reports a ``range_km``.  ``range_km`` is defined as usable
energy over consumption (an identity, checked in ``tests/test_summary.py``); here the
distance actually driven until empty is compared with something tripsim did not compute:

* ``scipy.integrate.solve_ivp`` (DOP853, rtol 1e-10) of the same road-load equations, written
  out here from the vehicle file's numbers (see ``test_energy_vs_solve_ivp.py``), with the
  battery as a state and a terminal event when it is empty: energy counting
  (dE/dt = −P), and the internal-resistance model (Rint, e.g. G. Plett, *Battery Management
  Systems*, vol. 1, Artech House 2015, ch. 2, from memory): terminal power P = V·I with
  V = V_oc(SoC) − I·R, charge capacity Q = E_usable / mean V_oc.  Tolerance 0.02 %: the
  profile is the same and both integrate the state closely (measured: at most 0.005 %,
  from the 100 m segments of the Rint model's per-segment voltage).
* A fact of the trade (common practice): a car that uses about 100 Wh per mile goes about
  1,000 miles on 100 kWh, i.e. about 10 miles per kWh; ±10 %.
"""

import numpy as np
import pytest
from conftest import DEMO, make_vehicle, straight_route
from model_vehicles import STREAMLINED
from pvlib.atmosphere import alt2pres
from scipy.integrate import solve_ivp, trapezoid

from tripsim.drive import DriveOptions
from tripsim.io import read_vehicle
from tripsim.segments import segment_route
from tripsim.simulate import Conditions, simulate
from tripsim.units import M_PER_MI

G = 9.80665  # standard gravity (CGPM 1901)
R_DRY_AIR = 287.05  # J/(kg K), ISO 2533
A_MAX = 1.2
TEMP_C = 20.0  # usable_kwh is specified at 20-25 °C; no climate load at 20 °C


def distance_to_empty_km(vehicle, v_top, *, rint=False, elevation_m=100.0):
    body, dt, bat = vehicle.body, vehicle.drivetrain, vehicle.battery
    m = body.mass_kg + body.payload_kg
    m_eff = body.rotating_mass_factor * body.mass_kg + body.payload_kg
    cda = body.cda_m2 if body.cda_m2 is not None else body.cd * body.frontal_area_m2
    rho = alt2pres(elevation_m) / (R_DRY_AIR * (TEMP_C + 273.15))
    usable_j = bat.usable_kwh * 3.6e6
    if rint:
        soc_x, volts = np.asarray(bat.ocv.x), np.asarray(bat.ocv.y)
        q_coulomb = usable_j / (trapezoid(volts, soc_x) / (soc_x[-1] - soc_x[0]))

    def rhs_for(acc):
        def rhs(_t, y):
            v = y[1]
            force = (0.5 * rho * cda * v * v + m * G * (body.crr + body.crr_per_mps * v)
                     + m_eff * acc)
            p_batt = force * v / dt.efficiency + vehicle.auxiliary.base_w
            if not rint:  # y[2]: energy drawn [J]
                return [v, acc, p_batt]
            ocv = np.interp(1.0 - y[2], soc_x, volts)  # y[2]: charge drawn, share of Q
            r = bat.internal_resistance_ohm
            current = (ocv - np.sqrt(ocv * ocv - 4 * r * p_batt)) / (2 * r)
            return [v, acc, current / q_coulomb]
        return rhs

    def event(fn):
        fn.terminal = True
        return fn

    kw = dict(method="DOP853", rtol=1e-10, atol=1e-9)
    full = 1.0 if rint else usable_j
    p1 = solve_ivp(rhs_for(A_MAX), (0, 1e4), [0.0, 0.0, 0.0],
                   events=event(lambda t, y: y[1] - v_top), **kw)
    p2 = solve_ivp(rhs_for(0.0), (p1.t[-1], 1e7), p1.y[:, -1],
                   events=event(lambda t, y: y[2] - full), **kw)
    assert p2.status == 1  # ended on the empty battery
    return p2.y[0, -1] / 1000.0


def drive_until_empty(vehicle, kph, route_km, *, rint=False):
    seg = segment_route(straight_route(route_km * 1000.0, speed_kph=kph), max_length_m=100.0)
    s = simulate(seg, vehicle, conditions=Conditions(temp_c=TEMP_C), start_soc=1.0,
                 drive=DriveOptions(accel_mps2=A_MAX),
                 battery_model="rint" if rint else "energy").summary
    assert s.stranded and s.capacity_wh == pytest.approx(vehicle.battery.usable_kwh * 1000.0)
    return s


@pytest.mark.parametrize(("name", "kph", "rint"), [("swift_tern", 80.0, False),
                                                   ("swift_tern", 80.0, True),
                                                   ("harbour_crossover", 110.0, False)])
def test_demo_vehicle_drives_as_far_as_the_integration(name, kph, rint):
    vehicle = read_vehicle(DEMO / "vehicles" / f"{name}.toml")
    ref_km = distance_to_empty_km(vehicle, kph / 3.6, rint=rint)
    s = drive_until_empty(vehicle, kph, 1.3 * ref_km, rint=rint)
    assert s.stranded_at_km == pytest.approx(ref_km, rel=2e-4)


def test_streamlined_car_goes_about_ten_miles_per_kwh():
    """The model car of test_trade_facts.py at 60 mph: about 100 Wh/mi, so about 10 mi/kWh."""
    car = make_vehicle(**{**STREAMLINED, "battery": {"usable_kwh": 20.0}})
    kph = 60.0 * M_PER_MI / 1000.0
    ref_km = distance_to_empty_km(car, kph / 3.6)
    s = drive_until_empty(car, kph, 1.3 * ref_km)
    assert s.stranded_at_km == pytest.approx(ref_km, rel=2e-4)
    miles_per_kwh = s.stranded_at_km * 1000.0 / M_PER_MI / 20.0
    assert miles_per_kwh == pytest.approx(10.0, rel=0.1)
