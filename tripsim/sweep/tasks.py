"""What a worker does with a batch of runs: scenario, vehicle, run, small summary.

A task gets run numbers with their axis values and, shared by every task of its group,
the base scenario and the inputs read once by the client (:class:`Group`).  For each
run it builds the scenario (the base with the axis values set, validated as every
scenario is), applies the vehicle parameters of the run over the vehicle read from its
file, and computes it with :func:`tripsim.runner.run` — the same path as ``tripsim
simulate``, ``plan`` and ``fleet``.  Simulations that differ only in their departure
are driven together (:mod:`tripsim.sweep.departures`).

Each run gives an :class:`Outcome`: its summary flattened to named numbers and words
(``breakdown_wh.aero_wh``), or the error that stopped it — a failed run is a row,
never the end of the sweep.  Traces travel back only when the spec asks for them.
"""

from __future__ import annotations

import dataclasses
import datetime as dt
import math
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd
from pydantic import ValidationError

from tripsim.errors import TripsimInputError
from tripsim.options import OptionConflict, raw_errors
from tripsim.runner import Inputs
from tripsim.scenario import Scenario, scenario_error
from tripsim.vehicle import Vehicle

__all__ = ["Group", "Outcome", "failure_text", "flatten", "overlay_vehicle", "run_batch",
           "run_chunks", "scenario_data", "warm_up"]

#: Payload keys left out of a row: the same text on every row (the caution, definitions).
_DROP = frozenset({"caution", "closed_on_solar_means"})


@dataclass(frozen=True)
class Group:
    """What all runs of a task share: the base scenario, the axis names, the inputs read.

    ``error`` holds why the inputs could not be read (every run of the group fails
    with it).
    """

    base: dict[str, Any]
    names: tuple[str, ...]
    inputs: Inputs | None
    error: str | None = None
    traces: bool = False


@dataclass
class Outcome:
    """One run's result: its flattened summary, or its error; the trace when asked."""

    run: int
    ok: bool
    error: str | None = None
    result: dict[str, Any] = dataclasses.field(default_factory=dict)
    trace: pd.DataFrame | None = None


def failure_text(exc: BaseException) -> str:
    """One line for the error of a failed run."""
    if isinstance(exc, ValidationError | OptionConflict):
        return str(scenario_error(exc, flags=False))
    text = str(exc) if isinstance(exc, TripsimInputError) else f"{type(exc).__name__}: {exc}"
    return " ".join(text.split())


def flatten(payload: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    """A run's JSON payload as flat columns.

    Tables become dotted names (``breakdown_wh.aero_wh``), lists of words one text
    (``"; "``-joined); other lists (a plan's stops, its comparisons) are left out: they
    are detail, kept in the traces.
    """
    out: dict[str, Any] = {}
    for key, value in payload.items():
        if key in _DROP:
            continue
        name = f"{prefix}{key}"
        if isinstance(value, dict):
            out.update(flatten(value, name + "."))
        elif isinstance(value, list | tuple):
            if all(isinstance(v, str) for v in value):
                out[name] = "; ".join(value)
        elif isinstance(value, np.generic):
            out[name] = value.item()
        elif value is None or isinstance(value, bool | int | float | str):
            out[name] = value
        elif isinstance(value, dt.date | pd.Timestamp):
            out[name] = value.isoformat()
    return out


def _set(data: dict[str, Any], path: list[str], value: Any) -> None:
    """Set a dotted path, copying the tables on the way (the base is never changed)."""
    head, rest = path[0], path[1:]
    if not rest:
        data[head] = value
        return
    inner = data.get(head)
    inner = dict(inner) if isinstance(inner, dict) else {}
    _set(inner, rest, value)
    data[head] = inner


def _depart(base: str | None, date: Any, time: Any) -> str:
    """The base departure with its day and/or time of day replaced."""
    from tripsim.simulate import DEFAULT_DEPART

    ts = pd.Timestamp(base or DEFAULT_DEPART)
    if date is not None:
        try:
            d = dt.date.fromisoformat(str(date))
        except ValueError:
            raise TripsimInputError(f"{date!r}: expected a date YYYY-MM-DD",
                                    "depart.date") from None
        ts = ts.replace(year=d.year, month=d.month, day=d.day)
    if time is not None:
        try:
            t = dt.time.fromisoformat(str(time))
        except ValueError:
            raise TripsimInputError(f"{time!r}: expected a time of day HH:MM",
                                    "depart.time") from None
        ts = ts.replace(hour=t.hour, minute=t.minute, second=t.second, microsecond=0)
    return ts.isoformat()


def scenario_data(base: dict[str, Any], names: tuple[str, ...], values: tuple[Any, ...]
                  ) -> dict[str, Any]:
    """A run's scenario as a dict: the base with its axis values set.

    A table given as an axis value (``route = [{file = ...}, ...]``) replaces the
    base's table; vehicle parameters are not set here (see :func:`overlay_vehicle`).
    """
    data = dict(base)
    date = time = None
    for name, value in zip(names, values, strict=True):
        if name.startswith("vehicle."):
            continue
        if name == "depart.date":
            date = value
        elif name == "depart.time":
            time = value
        else:
            _set(data, name.split("."), _native(value))
    if date is not None or time is not None:
        data["depart"] = _depart(data.get("depart"), date, time)
    return data


def _native(value: Any) -> Any:
    if isinstance(value, np.generic):
        return value.item()
    return value


def vehicle_params(names: tuple[str, ...], values: tuple[Any, ...]
                   ) -> tuple[tuple[str, Any], ...]:
    """The run's vehicle parameters: (key under ``vehicle.``, value)."""
    return tuple((n.removeprefix("vehicle."), _native(v))
                 for n, v in zip(names, values, strict=True) if n.startswith("vehicle."))


def overlay_vehicle(vehicle: Vehicle, params: tuple[tuple[str, Any], ...]) -> Vehicle:
    """The vehicle with some parameters set, validated again.

    Keys are ``TABLE.KEY``, ``panels.NAME.KEY`` or ``panel_area_m2`` (all facets scaled
    to that total; 0 removes them).  Setting ``body.cda_m2`` drops ``cd`` and
    ``frontal_area_m2``; setting either of those drops ``cda_m2``.
    """
    from tripsim.io.vehicle_file import parse_vehicle

    if not params:
        return vehicle
    data = vehicle.model_dump()
    for key, value in params:
        parts = key.split(".")
        if key == "panel_area_m2":
            total = sum(p["area_m2"] for p in data["panels"])
            if total <= 0:
                raise TripsimInputError("the vehicle has no panels to size",
                                        "vehicle.panel_area_m2")
            data["panels"] = ([] if value == 0 else
                              [{**p, "area_m2": p["area_m2"] * value / total}
                               for p in data["panels"]])
        elif parts[0] == "panels":
            hits = [p for p in data["panels"] if p["name"] == parts[1]]
            if not hits:
                names = ", ".join(p["name"] for p in data["panels"]) or "none"
                raise TripsimInputError(f"no panel named {parts[1]!r} (panels: {names})",
                                        f"vehicle.{key}")
            for p in hits:
                p[parts[2]] = value
        else:
            table, name = parts
            data[table][name] = value
            if key == "body.cda_m2":
                data["body"]["cd"] = data["body"]["frontal_area_m2"] = None
            elif key in ("body.cd", "body.frontal_area_m2"):
                data["body"]["cda_m2"] = None
    return parse_vehicle(data, "vehicle parameters")


def _scenario(group: Group, values: tuple[Any, ...]) -> Scenario:
    with raw_errors():
        return Scenario.model_validate(scenario_data(group.base, group.names, values))


def _payload_and_trace(sc: Scenario, inputs: Inputs) -> tuple[dict[str, Any], Any]:
    from tripsim.runner import run

    result = run(sc, inputs)
    trace = None
    if result.trip is not None:
        trace = result.trip.trace
    elif result.fleet is not None:
        trace = result.fleet.daily
    elif result.plan is not None and result.plan.trip is not None:
        trace = result.plan.trip.trace
    elif result.claim is not None:
        trace = result.claim.samples  # a row a sampled departure
    return result.payload, trace


def _ok(run: int, payload: dict[str, Any], trace: Any, keep: bool) -> Outcome:
    return Outcome(run, True, None, flatten(payload), trace if keep else None)


def run_batch(items: list[tuple[int, tuple[Any, ...]]], group: Group) -> list[Outcome]:
    """Run a batch: ``items`` are (run number, axis values); one outcome an item, in order.

    Never raises for a run: its error becomes its outcome.
    """
    if group.error is not None or group.inputs is None:
        return [Outcome(run, False, group.error or "no inputs") for run, _ in items]
    out: dict[int, Outcome] = {}
    vehicles: dict[tuple[tuple[str, Any], ...], Vehicle] = {}
    shared: dict[tuple[str, Any], list[tuple[int, Scenario, Inputs]]] = {}
    from tripsim.sweep.departures import can_share_departures

    for run, values in items:
        try:
            sc = _scenario(group, values)
            params = vehicle_params(group.names, values)
            if params not in vehicles:
                vehicles[params] = overlay_vehicle(group.inputs.vehicle, params)
            inputs = dataclasses.replace(group.inputs, vehicle=vehicles[params])
        except Exception as exc:
            out[run] = Outcome(run, False, failure_text(exc))
            continue
        key = (sc.model_dump_json(exclude={"depart"}), params) if can_share_departures(sc) \
            else ("", run)
        shared.setdefault(key, []).append((run, sc, inputs))
    for runs in shared.values():
        if len(runs) > 1:
            out.update(_together(runs, group.traces))
        else:
            out.update(_one_by_one(runs, group.traces))
    return [out[run] for run, _ in items]


def run_chunks(chunks: list[list[tuple[int, tuple[Any, ...]]]], group: Group
               ) -> list[list[Outcome]]:
    """:func:`run_batch` on a batch made of chunks; the outcomes chunk by chunk."""
    outcomes = iter(run_batch([item for chunk in chunks for item in chunk], group))
    return [[next(outcomes) for _ in chunk] for chunk in chunks]


def _together(runs: list[tuple[int, Scenario, Inputs]], keep: bool) -> dict[int, Outcome]:
    """Runs that differ only in departure, driven at once (one by one if that fails)."""
    from tripsim.sweep.departures import simulate_departures

    try:
        done = simulate_departures([sc for _, sc, _ in runs], runs[0][2])
    except Exception:  # find which run fails, and why, one by one
        return _one_by_one(runs, keep)
    return {run: _ok(run, summary.to_dict(), trace, keep)
            for (run, _, _), (summary, trace) in zip(runs, done, strict=True)}


def _one_by_one(runs: list[tuple[int, Scenario, Inputs]], keep: bool) -> dict[int, Outcome]:
    out = {}
    for run, sc, inputs in runs:
        try:
            payload, trace = _payload_and_trace(sc, inputs)
            out[run] = _ok(run, payload, trace, keep)
        except Exception as exc:
            out[run] = Outcome(run, False, failure_text(exc))
    return out


def warm_up() -> None:
    """Load once in a worker what runs need: the modules and the compiled kernels.

    A simulation of a 200 m road under a clear sky, with a panel, loads the speed
    profile, segment, sun and state-of-charge kernels from numba's cache (compiling
    them once on a machine whose cache has none), so no task pays for them.
    """
    import pandas as pd

    from tripsim.io.vehicle_file import parse_vehicle
    from tripsim.route import Route
    from tripsim.segments import segment_route
    from tripsim.simulate import simulate
    from tripsim.weather import clear_sky_weather

    lon = 7.0 + np.array([0.0, 0.00127, 0.00254])  # about 100 m apart at 45° N
    route = Route(lat_deg=np.full(3, 45.0), lon_deg=lon,
                  elevation_m=np.array([100.0, 101.0, 100.0]),
                  speed_limit_kph=np.array([50.0, 50.0]), name="warm-up")
    vehicle = parse_vehicle({"body": {"mass_kg": 1000.0, "cda_m2": 0.6, "crr": 0.01},
                             "drivetrain": {"efficiency": 0.9, "regen_efficiency": 0.7},
                             "battery": {"usable_kwh": 40.0}, "auxiliary": {"base_w": 300.0},
                             "panels": [{"area_m2": 1.0, "efficiency": 0.2}]})
    segments = segment_route(route, max_length_m=25.0)
    depart = pd.Timestamp("2026-06-21T10:00Z")
    sky = clear_sky_weather(45.0, 7.0, depart - pd.Timedelta(hours=1),
                            depart + pd.Timedelta(hours=2))
    for weather in (None, sky):
        trip = simulate(segments, vehicle, depart=depart, weather=weather)
        if not math.isfinite(trip.summary.battery_wh):  # pragma: no cover - a broken install
            raise RuntimeError("tripsim's warm-up simulation gave no energy")
