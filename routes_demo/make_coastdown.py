"""Generate the demo's coast-down runs (seeded, reproducible; invented data).

Run from the repository root::

    .venv/bin/python routes_demo/make_coastdown.py

It writes ``coastdown_runs.csv`` beside this script: eleven coast-down runs of a
Harbour Crossover prototype on the Saltreach Flats straight, a test track of the
invented Tamsreach region, driven alternately east (heading 78°) and west (258°) on a
cool morning (14-16 °C) with a light wind from the south-west.  The prototype's "true"
road load (Cd·A 0.745 m², Crr 0.0087 at the morning's temperature, Crr rising 0.00004 per
m/s) differs a little from the vehicle file's estimate, which is what a coast-down test is
for; at 20 °C, after the tyre-temperature correction, Crr is about 0.0083.

The runs are integrated with tripsim's own coast (:func:`tripsim.coastdown.coast`) in
each run's steady wind, air and grade; then the logger's view is added: speed noise at
2 Hz, a gusty anemometer, heading jitter.  Four runs show what the fit rejects: run 6
touches the throttle, run 9 meets too strong a wind, run 11 is cut short, and runs 5 and
10 are left without a partner going the other way.
"""

from __future__ import annotations

import csv
import sys
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from tripsim.air import headwind_mps  # noqa: E402
from tripsim.coastdown import coast  # noqa: E402
from tripsim.io.vehicle_file import parse_vehicle  # noqa: E402

SEED = 20261203
SAMPLE_S = 0.5
TRACK_HEADING_DEG = 78.0
TRACK_GRADE = 0.0015  # rising eastwards
TRUE_BODY = {"mass_kg": 2050.0, "payload_kg": 240.0, "cda_m2": 0.745, "crr": 0.0087,
             "crr_per_mps": 0.00004, "rotating_mass_factor": 1.05, "height_m": 1.65}
#: run: (way, start km/h, end km/h, wind m/s, wind from °, what goes wrong)
RUNS = {
    1: ("E", 121.0, 10.0, 2.4, 215.0, None),
    2: ("W", 120.0, 10.0, 2.6, 212.0, None),
    3: ("E", 122.0, 10.0, 2.2, 220.0, None),
    4: ("W", 121.0, 10.0, 2.9, 218.0, None),
    5: ("E", 120.0, 10.0, 2.6, 213.0, None),
    6: ("W", 121.0, 10.0, 2.7, 214.0, "throttle"),
    7: ("E", 122.0, 10.0, 2.5, 222.0, None),
    8: ("W", 120.0, 10.0, 2.8, 216.0, None),
    9: ("E", 121.0, 10.0, 5.2, 205.0, None),
    10: ("W", 120.0, 10.0, 3.0, 219.0, None),
    11: ("E", 121.0, 96.0, 2.6, 217.0, None),
}


def _vehicle():
    return parse_vehicle({"name": "Harbour Crossover prototype", "body": TRUE_BODY,
                          "drivetrain": {"efficiency": 0.88, "regen_efficiency": 0.68},
                          "battery": {"usable_kwh": 77.0}, "auxiliary": {"base_w": 420.0}})


def _rows(number: int, rng: np.random.Generator) -> list[list[object]]:
    way, v0_kph, v1_kph, wind, wind_from, fault = RUNS[number]
    heading = TRACK_HEADING_DEG if way == "E" else (TRACK_HEADING_DEG + 180.0) % 360.0
    grade = TRACK_GRADE if way == "E" else -TRACK_GRADE
    temp_c = 13.6 + 0.25 * number
    pressure_hpa = 1004.8 - 0.05 * number
    run = coast(_vehicle(), v0_kph / 3.6, temp_c=temp_c, pressure_pa=100.0 * pressure_hpa,
                grade=grade, headwind_mps=float(headwind_mps(wind, wind_from, heading)),
                v_end_mps=v1_kph / 3.6, sample_s=SAMPLE_S)
    t = run["time_s"].to_numpy()[:-1]  # the samples on the logger's clock
    kph = 3.6 * run["speed_mps"].to_numpy()[:-1]
    if fault == "throttle":  # a touch of the throttle: +8 km/h over 2 s at t = 40 s
        kph = kph + 8.0 * np.clip((t - 40.0) / 2.0, 0.0, 1.0)
    kph = kph + rng.normal(0.0, 0.12, t.size)
    gust = np.clip(wind + rng.normal(0.0, 0.4, t.size), 0.0, None)
    rows = []
    for i in range(t.size):
        rows.append([number, f"{t[i]:.1f}", f"{kph[i]:.2f}", way,
                     f"{heading + rng.normal(0.0, 0.3):.1f}", f"{temp_c:.1f}",
                     f"{pressure_hpa:.1f}", f"{gust[i]:.1f}",
                     f"{(wind_from + rng.normal(0.0, 8.0)) % 360.0:.0f}",
                     f"{100.0 * grade:.2f}"])
    return rows


def main() -> None:
    rng = np.random.default_rng(SEED)
    path = HERE / "coastdown_runs.csv"
    with path.open("w", newline="", encoding="utf-8") as fh:
        fh.write("# Coast-down runs of a Harbour Crossover prototype on the Saltreach Flats "
                 "straight\n# (invented test data for the tripsim demo, written by "
                 "routes_demo/make_coastdown.py)\n")
        writer = csv.writer(fh, lineterminator="\n")
        writer.writerow(["run", "t_s", "speed_kph", "direction", "heading_deg", "temp_c",
                         "pressure_hpa", "wind_mps", "wind_from_deg", "grade_pct"])
        for number in RUNS:
            writer.writerows(_rows(number, rng))
    print(f"wrote {path}")


if __name__ == "__main__":
    main()
