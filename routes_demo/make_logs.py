"""Generate the demo's product-team files (seeded, reproducible; invented data).

Run from the repository root::

    .venv/bin/python routes_demo/make_logs.py

It writes, beside this script:

* ``drive_log.csv``  a logged drive of a Harbour Crossover prototype from the west side of
  Saltreach, through the town's signals and along the motorway, to Brindlemoor on a cool
  March morning: 1 Hz time (ISO 8601 with the offset), position, speed, GPS elevation and
  the battery's state of charge in percent.  The prototype differs from the vehicle file
  the way a prototype does: its auxiliary base load is 600 W (the file says 420 W) and
  its drive efficiency 0.85 (the file says 0.88), which is what the calibration should
  find.  The drive is simulated by tripsim itself in the demo weather year, then seen
  through a logger: GPS noise of 1.5 m, speed to 0.1 km/h with 0.15 km/h of noise,
  elevation with 2 m of noise, state of charge to 0.01 % with 0.01 % of noise, and four
  minutes parked with the car on before leaving (the base load alone draws the battery);
* ``lab_cycle.csv``  the "Tamsreach mixed cycle", an invented speed-time trace of about
  half an hour (town, suburban and open-road phases at 1 Hz) to set beside the corridor;
* ``claims.toml``  a scenario file (``tripsim run``) with the demo's range claim (the
  Harbour Crossover's invented brochure figure, 480 km at 23 °C with climate control off,
  checked on the northern loop over the demo weather year) and the logged drive, as
  ``tripsim demo`` runs them.
"""

from __future__ import annotations

import sys
from pathlib import Path

import numpy as np
import pandas as pd

HERE = Path(__file__).resolve().parent
sys.path.insert(0, str(HERE.parent))

from tripsim.claims.logs import log_from_trace  # noqa: E402
from tripsim.drive import DriveOptions  # noqa: E402
from tripsim.inputs import load_segments, parse_waypoints  # noqa: E402
from tripsim.io import read_vehicle  # noqa: E402
from tripsim.io.weather_files import read_weather  # noqa: E402
from tripsim.simulate import simulate  # noqa: E402

SEED = 20261204
DRIVE_WAYPOINTS = "41.200000,-31.617900;41.289928,-30.883658"
DRIVE_DEPART = "2026-03-18T07:40:00-02:00"
START_SOC = 0.92
IDLE_S = 240
TRUE_AUX_BASE_W = 600.0
TRUE_EFFICIENCY = 0.85
LOOP_WAYPOINTS = ("41.200000,-31.600000;41.604676,-30.943353;41.289928,-30.883658;"
                  "41.200000,-31.600000")
M_PER_DEG = 111_195.0


def _prototype():
    vehicle = read_vehicle(HERE / "vehicles" / "harbour_crossover.toml")
    data = vehicle.model_dump()
    data["name"] = "Harbour Crossover prototype"
    data["auxiliary"]["base_w"] = TRUE_AUX_BASE_W
    data["drivetrain"]["efficiency"] = TRUE_EFFICIENCY
    return type(vehicle).model_validate(data)


def _with_idle(log: pd.DataFrame, aux_w: float) -> pd.DataFrame:
    """Parked with the car on before leaving: the base and climate load alone."""
    t = np.arange(IDLE_S, dtype=float)
    first = log.iloc[0]
    capacity_wh = float(log["battery_wh"].iloc[-1]) / max(START_SOC - log["soc"].iloc[-1], 1e-9)
    used = aux_w * (IDLE_S - t) / 3600.0  # energy still to be used before departure
    idle = pd.DataFrame({"t_s": t, "lat_deg": first["lat_deg"], "lon_deg": first["lon_deg"],
                         "speed_mps": 0.0, "elevation_m": first["elevation_m"],
                         "battery_wh": -used, "soc": START_SOC + used / capacity_wh})
    moving = log.assign(t_s=log["t_s"] + IDLE_S)
    out = pd.concat([idle, moving], ignore_index=True)
    out["battery_wh"] -= out["battery_wh"].iloc[0]
    out.attrs = {"start": log.attrs["start"] - pd.Timedelta(seconds=IDLE_S)}
    return out


def write_drive_log(path: Path, rng: np.random.Generator) -> None:
    segments = load_segments(HERE / "tamsreach.osm", waypoints=parse_waypoints(DRIVE_WAYPOINTS),
                             dem=HERE / "tamsreach_dem.tif")
    weather = read_weather(HERE / "tamsreach.epw")
    # the prototype left at the logged clock; the idle before it is added below
    trip = simulate(segments, _prototype(), weather=weather, start_soc=START_SOC,
                    depart=pd.Timestamp(DRIVE_DEPART) + pd.Timedelta(seconds=IDLE_S),
                    drive=DriveOptions(signal_wait_s=30.0))
    log = _with_idle(log_from_trace(trip.trace, start_soc=START_SOC),
                     float(trip.trace["aux_power_w"].iloc[0]))
    n = len(log)
    lat = log["lat_deg"] + rng.normal(0.0, 1.5, n) / M_PER_DEG
    lon = log["lon_deg"] + rng.normal(0.0, 1.5, n) / (M_PER_DEG * np.cos(np.radians(lat)))
    kph = np.maximum(3.6 * log["speed_mps"] + rng.normal(0.0, 0.15, n), 0.0)
    kph[log["speed_mps"].to_numpy() == 0.0] = 0.0
    clock = log.attrs["start"] + pd.to_timedelta(log["t_s"], unit="s")
    out = pd.DataFrame({
        "t": [c.isoformat() for c in clock],
        "lat": np.round(lat, 7), "lon": np.round(lon, 7), "speed_kph": np.round(kph, 1),
        "elevation_m": np.round(log["elevation_m"] + rng.normal(0.0, 2.0, n), 1),
        "soc": np.round(100.0 * (log["soc"] + rng.normal(0.0, 1e-4, n)), 2)})
    with path.open("w", encoding="utf-8", newline="") as fh:
        fh.write("# A logged drive of a Harbour Crossover prototype, Saltreach to Brindlemoor "
                 "(invented data for the tripsim demo,\n# written by routes_demo/make_logs.py; "
                 "soc in percent)\n")
        out.to_csv(fh, index=False, lineterminator="\n")


def _phase(v_kph: float, accel: float, decel: float, cruise_s: float, idle_s: float) -> list:
    """Idle, accelerate to v, cruise, brake to rest: 1 Hz speeds [km/h]."""
    v = v_kph / 3.6
    up = np.arange(0.0, v, accel)
    down = np.arange(v, 0.0, -decel)
    return [*np.zeros(int(idle_s)), *up, *np.full(int(cruise_s), v), *down]


def write_lab_cycle(path: Path, rng: np.random.Generator) -> None:
    speeds: list[float] = []
    for _ in range(9):  # town: short trips between stops
        speeds += _phase(rng.uniform(28, 50), rng.uniform(0.8, 1.2), rng.uniform(0.8, 1.1),
                         rng.uniform(15, 50), rng.uniform(10, 30))
    for _ in range(4):  # suburban
        speeds += _phase(rng.uniform(55, 75), rng.uniform(0.7, 1.0), rng.uniform(0.7, 1.0),
                         rng.uniform(60, 120), rng.uniform(10, 20))
    speeds += _phase(100.0, 0.6, 0.8, 240.0, 15.0)  # open road
    speeds += _phase(115.0, 0.5, 0.8, 40.0, 5.0)
    speeds += [0.0] * 15
    kph = 3.6 * np.asarray(speeds)
    frame = pd.DataFrame({"t_s": np.arange(kph.size, dtype=float),
                          "speed_kph": np.round(kph, 1)})
    with path.open("w", encoding="utf-8", newline="") as fh:
        fh.write("# The Tamsreach mixed cycle: an invented speed-time trace for the tripsim "
                 "demo (written by routes_demo/make_logs.py)\n")
        frame.to_csv(fh, index=False, lineterminator="\n")


def _toml_points(text: str) -> str:
    """"lat,lon;lat,lon" as a TOML array of [lat, lon] pairs."""
    pairs = [p.split(",") for p in text.split(";")]
    return "[" + ", ".join(f"[{float(a)!r}, {float(b)!r}]" for a, b in pairs) + "]"


CLAIMS = f"""# Product-team demo: a range claim and a logged drive (written by make_logs.py), as
# scenarios: `tripsim run routes_demo/claims.toml` checks the claim and drives the log;
# `tripsim demo` runs them with the rest.  Everything here is invented: the vehicle, its
# brochure figure and the drive.  File names are relative to this folder.

[[scenario]]
kind = "claim"
name = "crossover-480"
description = "The Harbour Crossover's brochure range, 480 km at 23 °C with climate control off"
vehicle = "vehicles/harbour_crossover.toml"

[scenario.route]
file = "tamsreach.osm"
waypoints = {_toml_points(LOOP_WAYPOINTS)}
dem = "tamsreach_dem.tif"
name = "the northern loop (Saltreach, Lanthorn, Brindlemoor)"

[scenario.weather]
source = "tamsreach.epw"

[scenario.claim]
km = 480.0
stated_temp_c = 23.0
stated_climate = false
cycle = "lab_cycle.csv"

[[scenario]]
kind = "simulate"
name = "brindlemoor-commute"
description = "A prototype logged from Saltreach to Brindlemoor on a March morning"
vehicle = "vehicles/harbour_crossover.toml"

[scenario.route]
file = "drive_log.csv"
from_log = true

[scenario.weather]
source = "tamsreach.epw"
"""


def main() -> None:
    rng = np.random.default_rng(SEED)
    write_drive_log(HERE / "drive_log.csv", rng)
    write_lab_cycle(HERE / "lab_cycle.csv", rng)
    (HERE / "claims.toml").write_text(CLAIMS, encoding="utf-8")
    print("wrote drive_log.csv, lab_cycle.csv and claims.toml")


if __name__ == "__main__":
    main()
