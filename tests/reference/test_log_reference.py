"""Logged drives against what they were made from, and against the steady closed form.

1. A log synthesised by the simulator itself — a vehicle whose auxiliary base load
   (650 W) and drive efficiency (0.84) differ from the vehicle file's (350 W, 0.90),
   seen through a 1 Hz logger with 1 m of GPS noise, 0.1 m/s of speed noise and a noisy
   state of charge (or energy counter) — recovers both within 3 %.  The reference is the
   truth the log was made with (an identity of the model with itself, so the check is of
   the log's preparation and the fit, not of the physics).
2. A constant-speed speed–time trace matches the steady closed form of the road-load
   equation, (½ρ·CdA·v² + m·g·Crr)/η + P_aux/v, with the ideal-gas density at the
   International Standard Atmosphere's pressure (ISO 2533, from memory), and its range is
   the usable energy over that consumption.
"""

import numpy as np
import pandas as pd
import pytest
from conftest import make_vehicle

from tripsim.claims.logs import drive_log, log_from_trace, prepare_log
from tripsim.drive import DriveOptions
from tripsim.route import Route
from tripsim.segments import GEOD, segment_route
from tripsim.simulate import Conditions, simulate

TRUE_BASE_W, TRUE_EFFICIENCY = 650.0, 0.84
M_PER_DEG = 111_195.0


def commute():
    """Town with signals, a stop sign with a long wait, open road, town again."""
    parts = [(8000.0, 50.0, 500.0), (40000.0, 100.0, 0.0), (8000.0, 50.0, 500.0)]
    dist = np.arange(0.0, sum(p[0] for p in parts) + 100.0, 100.0)
    lon, lat, _ = GEOD.fwd(np.full(dist.size, 7.0), np.full(dist.size, 45.0),
                           np.full(dist.size, 60.0), dist)
    limits = np.zeros(dist.size - 1)
    stops = np.zeros(dist.size, dtype=np.int8)
    start = 0.0
    for length, kph, every in parts:
        limits[(dist[:-1] >= start) & (dist[:-1] < start + length)] = kph
        if every:
            stops[(dist % every == 0) & (dist > start) & (dist < start + length)] = 3
        start += length
    stops[80] = 2  # a stop sign where the driver waits five minutes
    ele = 100.0 + 30.0 * np.sin(dist / 4000.0)
    return segment_route(Route(lat_deg=np.asarray(lat), lon_deg=np.asarray(lon),
                               elevation_m=ele, speed_limit_kph=limits, stop_kind=stops))


@pytest.fixture(scope="module")
def clean_log():
    truth = make_vehicle(auxiliary={"base_w": TRUE_BASE_W},
                         drivetrain={"efficiency": TRUE_EFFICIENCY})
    trip = simulate(commute(), truth, conditions=Conditions(temp_c=15.0), start_soc=0.95,
                    drive=DriveOptions(signal_wait_s=60.0, stop_sign_wait_s=300.0),
                    depart="2026-05-04T08:00:00+02:00")
    return log_from_trace(trip.trace, start_soc=0.95)


def noisy(log, basis, seed):
    rng = np.random.default_rng(seed)
    out = log.copy()
    n = len(out)
    out["speed_mps"] = np.maximum(out["speed_mps"] + rng.normal(0.0, 0.1, n), 0.0)
    out["lat_deg"] += rng.normal(0.0, 1.0, n) / M_PER_DEG
    out["lon_deg"] += rng.normal(0.0, 1.0, n) / (M_PER_DEG * np.cos(np.radians(45.0)))
    if basis == "soc":  # a BMS reading to 0.01 % with 0.02 % of noise
        out["soc"] = np.round(out["soc"] + rng.normal(0.0, 2e-4, n), 4)
        out = out.drop(columns=["battery_wh"])
    else:  # an energy counter with 10 Wh of noise
        out["battery_wh"] = out["battery_wh"] + rng.normal(0.0, 10.0, n)
        out = out.drop(columns=["soc"])
    out.attrs = {**log.attrs, "source": f"synthetic ({basis})"}
    return out


@pytest.mark.parametrize(("basis", "seed"), [("soc", 0), ("soc", 1), ("energy", 0),
                                             ("energy", 1)])
def test_synthetic_log_recovers_base_load_and_efficiency(clean_log, basis, seed):
    log = prepare_log(noisy(clean_log, basis, seed))
    result = drive_log(log, make_vehicle(), conditions=Conditions(temp_c=15.0))
    fit = result.fit
    assert fit.aux_base_w == pytest.approx(TRUE_BASE_W, rel=0.03)
    assert fit.drive_efficiency == pytest.approx(TRUE_EFFICIENCY, rel=0.03)
    assert fit.file_aux_base_w == 350.0 and fit.file_drive_efficiency == 0.90
    # with the file's values the model misses by ~11 %; with the fitted ones it closes
    assert fit.end_diff_pct_before < -8.0
    assert abs(fit.end_diff_pct_after) < 1.0


def isa_density(elevation_m, temp_c):
    p = 101_325.0 * (1.0 - 2.25577e-5 * elevation_m) ** 5.25588
    return p / (287.05 * (temp_c + 273.15))


def test_constant_speed_trace_matches_the_steady_closed_form():
    v_kph, hours, temp = 80.0, 1.0, 20.0
    t = np.arange(0.0, hours * 3600.0 + 1.0)
    samples = pd.DataFrame({"t_s": t, "speed_mps": np.full(t.size, v_kph / 3.6)})
    samples.attrs = {"kind": "trace", "start": None, "source": "steady trace", "notes": []}
    log = prepare_log(samples)
    vehicle = make_vehicle()
    trip = drive_log(log, vehicle, conditions=Conditions(temp_c=temp)).trip
    v = v_kph / 3.6
    force = 0.5 * isa_density(100.0, temp) * 0.27 * 2.25 * v**2 + 1530.0 * 9.80665 * 0.0085
    wh_per_km = (force / 0.90 + 350.0 / v) * 1000.0 / 3600.0
    s = trip.summary
    assert s.distance_km == pytest.approx(v_kph * hours, rel=1e-9)
    assert s.wh_per_km == pytest.approx(wh_per_km, rel=1e-4)
    assert s.range_km == pytest.approx(58_000.0 / wh_per_km, rel=1e-4)
