"""Runs that differ only in their departure, simulated at once.

:func:`tripsim.simulate.simulate` drives a route once (one run of
:func:`tripsim.energy.drive_runs`).  A sweep over departure days and hours drives the
same route with the same vehicle, driver and weather year many times: here the runs of
such a batch go through ``drive_runs`` together (runs × segments, the way the fleet
year drives its runs), and each run is then finished exactly as ``simulate`` finishes
its one run — the same state-of-charge pass, trace and summary functions, taken from
:mod:`tripsim.simulate` itself.  The result of each run is the same, number for number,
as ``simulate`` on that departure (``tests/test_sweep.py`` checks it to 1e-9); only the
work per run is smaller (the fixed costs of the sky, the sun tables and the compiled
passes are paid once a batch).
"""

from __future__ import annotations

import dataclasses
import importlib
from typing import Any

import numpy as np
import pandas as pd

from tripsim.battery import SocResult, soc_pass
from tripsim.energy import Course, Runs, drive_runs, run_capacity_wh
from tripsim.runner import Inputs
from tripsim.scenario import Scenario
from tripsim.summary import Summary, summarize
from tripsim.timebase import epoch_seconds
from tripsim.zones import local_time

__all__ = ["MAX_RUN_SEGMENTS", "can_share_departures", "simulate_departures"]

#: The module (``tripsim.simulate`` as an attribute may be the function of that name).
_sim = importlib.import_module("tripsim.simulate")

#: Runs × segments driven at once, at most (bounds the memory of a batch: about 150 MB).
MAX_RUN_SEGMENTS = 500_000


def can_share_departures(sc: Scenario) -> bool:
    """True when runs of this scenario may be driven together over their departures.

    Simulations with energy counting, on a weather year or fixed conditions (a clear sky
    is tabulated around each departure, so each departure has its own), of a route
    (a logged drive has its own clock).
    """
    return (sc.kind == "simulate" and sc.battery_model == "energy" and not sc.route.from_log
            and (sc.weather is None or not sc.weather.clear_sky))


def _run(runs: Runs, r: int) -> Runs:
    """Run ``r`` of ``runs`` as a single run (views, no copies)."""
    one: dict[str, Any] = {}
    for f in dataclasses.fields(Runs):
        value = getattr(runs, f.name)
        if isinstance(value, np.ndarray):
            value = value[r:r + 1]
        elif isinstance(value, dict):
            value = {k: v[r:r + 1] for k, v in value.items()}
        one[f.name] = value
    return Runs(**one)


def simulate_departures(scenarios: list[Scenario], inputs: Inputs
                        ) -> list[tuple[Summary, pd.DataFrame]]:
    """Simulate scenarios that differ only in ``depart``, at once.

    Parameters
    ----------
    scenarios : list of Scenario
        Simulations for which :func:`can_share_departures` holds, equal but for their
        departure.
    inputs : Inputs
        Their route, vehicle and weather (:func:`tripsim.runner.load_inputs`).

    Returns
    -------
    list of (Summary, DataFrame)
        Each run's summary and trace, as :func:`tripsim.simulate.simulate` returns them.
    """
    sc = scenarios[0]
    segments, vehicle = inputs.routes[0], inputs.vehicle
    start_soc = 1.0 if sc.start_soc is None else sc.start_soc
    _sim._check_options(start_soc, "energy")
    clocks = [local_time(s.depart if s.depart is not None else _sim.DEFAULT_DEPART, segments)
              for s in scenarios]
    course = Course.from_segments(segments, vehicle, sc.drive, sc.speed_kph)
    n = course.n
    out: list[tuple[Summary, pd.DataFrame]] = []
    step = max(1, MAX_RUN_SEGMENTS // max(n, 1))
    for first in range(0, len(clocks), step):
        chunk = clocks[first:first + step]
        runs = drive_runs(course, vehicle, np.array([epoch_seconds(c) for c in chunk]),
                          drive_opts=sc.drive, weather=inputs.weather, conditions=sc.conditions,
                          solar=sc.solar, stop_s=np.zeros(n), columns=True)
        demand = runs.demand_wh()
        capacity = run_capacity_wh(vehicle, runs.temp_mean_c)
        full_wh = vehicle.battery.usable_kwh * 1000.0
        for r, clock in enumerate(chunk):
            p = soc_pass(demand[r][None, :], full_wh=full_wh, usable_wh=float(capacity[r]),
                         start_soc=start_soc)
            soc = SocResult(p.soc[0], p.accepted_wh[0], 0.0, int(p.stranded_index[0]),
                            float(p.stranded_fraction[0]), np.zeros(0, dtype=bool), np.zeros(0))
            cols = _sim._columns(segments, course, _run(runs, r), 0.0, 0.0, 0.0, np.nan)
            trace, data = _sim._trace(cols, soc, clock)
            summary = summarize(trace, soc, capacity_wh=float(capacity[r]), start_soc=start_soc,
                                attrs=dict(segments.attrs), vehicle_name=vehicle.name,
                                battery_model="energy", columns=data,
                                sums={k: float(v[r]) for k, v in runs.sums.items()})
            out.append((summary, trace))
    return out
