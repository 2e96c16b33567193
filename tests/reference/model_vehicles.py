"""Model vehicles for the checks against facts of the trade (see test_trade_facts.py).

Frontal area and Crr are our choices in plausible ranges: 1.75 m² for a small, low
two-seater (compact cars are about 2.0-2.2 m²); Crr 0.006 for low-resistance tyres (EU
tyre label class A is ≤ 6.5 kg/t, Regulation (EC) 1222/2009).
"""

from tripsim.units import LB_PER_KG

STREAMLINED = {
    "body": {"mass_kg": 2000.0 / LB_PER_KG - 80.0, "payload_kg": 80.0, "cd": 0.20,
             "frontal_area_m2": 1.75, "crr": 0.006, "rotating_mass_factor": 1.03},
    "drivetrain": {"efficiency": 0.92, "regen_efficiency": 0.75},
    "battery": {"usable_kwh": 40.0},
    "auxiliary": {"base_w": 250.0},
}
CROSSOVER = {
    "body": {"mass_kg": 2200.0 - 100.0, "payload_kg": 100.0, "cd": 0.29, "frontal_area_m2": 2.6,
             "crr": 0.009, "rotating_mass_factor": 1.05},
    "drivetrain": {"efficiency": 0.88, "regen_efficiency": 0.68},
    "battery": {"usable_kwh": 75.0},
    "auxiliary": {"base_w": 400.0},
}
