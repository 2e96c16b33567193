"""What a sweep runs: a base scenario, the axes along which its runs differ, and how.

A spec (a TOML file, :mod:`tripsim.io.sweep_file`, or the same as a dict) holds

``[scenario]``
    The base run: the keys of a scenario file (``tripsim run``), with ``kind`` simulate,
    plan, fleet or claim.  File names are relative to the spec's folder.  A sweep writes its
    own results, so ``[scenario.outputs]`` is refused (ask for ``traces = true``).
``[axes]``
    One entry an axis, named by the dotted path of the scenario field it sets
    (``"conditions.temp_c"``, ``"drive.speed_factor"``, ``"route.file"``,
    ``"weather.source"``, ``"plan.options.reserve_soc"``, ``"fleet.policy"``,
    ``"claim.options.speed_factor"``), or:

    - ``"vehicle"``: vehicle files (or inline vehicle tables);
    - ``"vehicle.TABLE.KEY"``: a parameter of the vehicle (``"vehicle.body.mass_kg"``,
      ``"vehicle.body.cda_m2"``, ``"vehicle.body.crr"``,
      ``"vehicle.battery.usable_kwh"``), applied over the vehicle file after it is read;
      ``"vehicle.panels.NAME.KEY"`` sets a key of the panel facet so named, and
      ``"vehicle.panel_area_m2"`` scales every facet so that their areas add up to the
      value.  Setting ``cda_m2`` replaces ``cd`` × ``frontal_area_m2``, and setting
      ``cd`` or ``frontal_area_m2`` drops a ``cda_m2``;
    - ``"depart.date"`` and ``"depart.time"``: the day and the time of day of the
      departure, each replacing its part of the base ``depart`` (default
      2026-06-21 08:00, local time of the route).

    An axis is a grid axis or a drawn axis.  Grid axes take a list of values, or a
    range: ``{ start, stop, step }`` or ``{ start, stop, num }`` (both ends included),
    for dates ``{ start = 2026-01-05, stop = 2026-12-28, step_days = 7 }``.  Drawn
    axes state a distribution: ``{ dist = "uniform", low, high }``,
    ``{ dist = "normal", mean, sd }`` (with ``low`` and ``high`` it is truncated
    there), ``{ dist = "triangular", low, mode, high }`` or
    ``{ dist = "choice", values = [...] }`` (or a range; optional ``weights``).
``[draws]``
    ``n`` and ``method`` (``"lhs"``, a Latin hypercube from
    :class:`scipy.stats.qmc.LatinHypercube`, or ``"monte-carlo"``): the drawn axes
    are drawn ``n`` times from the stated distributions, seeded by ``seed``.

The runs are every point of the grid (the first axis changes slowest) crossed with
the draws: each grid point runs with the same ``n`` draws (common random numbers, so
that two grid points differ by what the grid changes, not by the luck of the draw).
The same spec and seed give the same runs, numbered the same way.

Other top-level keys: ``name``, ``seed`` (default 0), ``traces`` (keep each run's trace,
default false), ``batch_runs`` (runs a task; default: measured, about ``task_s``
seconds a task) and ``task_s`` (default 1).
"""

from __future__ import annotations

import datetime as dt
import functools
import hashlib
import json
import math
from dataclasses import dataclass, field
from pathlib import Path
from typing import Any, Literal

import numpy as np
import pandas as pd
from pydantic import ValidationError

from tripsim.errors import TripsimInputError
from tripsim.options import (
    Count,
    Number,
    OptionConflict,
    Options,
    describe_error,
    option,
    raw_errors,
)
from tripsim.scenario import Scenario, scenario_error

__all__ = ["MAX_RUNS", "Axis", "Distribution", "DrawSpec", "SweepSpec", "load_spec"]

#: Most runs one sweep may hold.
MAX_RUNS = 10_000_000
#: Keys that make an inline table a range of values (not a distribution).
_RANGE_KEYS = {"start", "stop", "step", "num", "step_days"}
_DIST_PARAMS = {"uniform": ({"low", "high"}, set()),
                "normal": ({"mean", "sd"}, {"low", "high"}),
                "triangular": ({"low", "mode", "high"}, set()),
                "choice": (set(), {"values", "weights", *_RANGE_KEYS})}
#: Scenario fields no axis may set (the kind fixes the tables; a sweep writes its own files).
_FIXED = {"kind": "a sweep runs one kind; make one sweep a kind",
          "outputs": "a sweep writes its own results (traces = true keeps the traces)",
          "name": "runs are named by their number and axes"}
_VEHICLE_TABLES = ("body", "drivetrain", "battery", "auxiliary", "charging")


def _plain(value: Any) -> Any:
    """TOML values as the scenario takes them: dates and times as ISO text."""
    if isinstance(value, dt.datetime):
        return value.isoformat()
    if isinstance(value, dt.date):
        return value.isoformat()
    if isinstance(value, dt.time):
        return value.isoformat()
    if isinstance(value, list):
        return [_plain(v) for v in value]
    if isinstance(value, dict):
        return {k: _plain(v) for k, v in value.items()}
    return value


def _number(name: str, key: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, int | float) or not math.isfinite(value):
        raise TripsimInputError(f"{key} = {value!r}: expected a finite number", name)
    return float(value)


def _range(name: str, spec: dict[str, Any]) -> list[Any]:
    """The values of ``{start, stop, step | num}`` or ``{start, stop, step_days}``."""
    unknown = set(spec) - _RANGE_KEYS - {"dist", "weights"}
    if unknown:
        raise TripsimInputError(f"{sorted(unknown)[0]}: unknown key of a range (start, stop, "
                                "step, num, step_days)", name)
    if "start" not in spec or "stop" not in spec:
        raise TripsimInputError("a range needs start and stop", name)
    if "step_days" in spec:
        try:
            first = dt.date.fromisoformat(_plain(spec["start"]))
            last = dt.date.fromisoformat(_plain(spec["stop"]))
        except (TypeError, ValueError):
            raise TripsimInputError("start and stop of a range of days must be dates "
                                    "(YYYY-MM-DD)", name) from None
        step = spec["step_days"]
        if isinstance(step, bool) or not isinstance(step, int) or step < 1:
            raise TripsimInputError(f"step_days = {step!r}: expected a whole number ≥ 1", name)
        if last < first:
            raise TripsimInputError("stop comes before start", name)
        n = (last - first).days // step + 1
        return [(first + dt.timedelta(days=step * k)).isoformat() for k in range(n)]
    start, stop = _number(name, "start", spec["start"]), _number(name, "stop", spec["stop"])
    if ("step" in spec) == ("num" in spec):
        raise TripsimInputError("a range needs either step or num", name)
    whole = all(isinstance(spec[k], int) for k in ("start", "stop", "step") if k in spec)
    if "num" in spec:
        num = spec["num"]
        if isinstance(num, bool) or not isinstance(num, int) or not 1 <= num <= MAX_RUNS:
            raise TripsimInputError(f"num = {num!r}: expected a whole number ≥ 1", name)
        values = np.linspace(start, stop, num)
        whole = False
    else:
        step = _number(name, "step", spec["step"])
        if step == 0 or (stop - start) / step < 0:
            raise TripsimInputError(f"step = {step:g} does not lead from start to stop", name)
        n = math.floor((stop - start) / step + 1e-9) + 1
        if n > MAX_RUNS:
            raise TripsimInputError(f"the range has {n:,} values", name)
        values = start + step * np.arange(n)
    return [int(v) for v in values] if whole else [float(round(v, 12)) for v in values]


@dataclass(frozen=True)
class Distribution:
    """A stated distribution of a drawn axis, mapped from uniform draws on [0, 1)."""

    kind: Literal["uniform", "normal", "triangular", "choice"]
    params: dict[str, float] = field(default_factory=dict)
    values: tuple[Any, ...] = ()
    weights: tuple[float, ...] = ()

    def ppf(self, u: np.ndarray) -> np.ndarray | list[Any]:
        """Values at the quantiles ``u`` (inverse cumulative distribution)."""
        from scipy import stats

        p = self.params
        if self.kind == "uniform":
            return p["low"] + u * (p["high"] - p["low"])
        if self.kind == "normal":
            lo, hi = p.get("low", -np.inf), p.get("high", np.inf)
            a, b = (lo - p["mean"]) / p["sd"], (hi - p["mean"]) / p["sd"]
            return stats.truncnorm.ppf(u, a, b, loc=p["mean"], scale=p["sd"])
        if self.kind == "triangular":
            width = p["high"] - p["low"]
            return stats.triang.ppf(u, (p["mode"] - p["low"]) / width, loc=p["low"],
                                    scale=width)
        cum = np.cumsum(self.weights) / np.sum(self.weights)
        index = np.minimum(np.searchsorted(cum, u, side="right"), len(self.values) - 1)
        return [self.values[i] for i in index]

    @classmethod
    def parse(cls, name: str, spec: dict[str, Any]) -> Distribution:
        """From ``{dist = ..., ...}``, checked (errors name the axis)."""
        kind = spec["dist"]
        if kind not in _DIST_PARAMS:
            raise TripsimInputError(f"dist = {kind!r}: expected one of "
                                    f"{', '.join(_DIST_PARAMS)}", name)
        needed, optional = _DIST_PARAMS[kind]
        keys = set(spec) - {"dist"}
        if keys - needed - optional:
            raise TripsimInputError(f"{sorted(keys - needed - optional)[0]}: not a parameter "
                                    f"of dist = {kind!r}", name)
        if needed - keys:
            raise TripsimInputError(f"dist = {kind!r} needs {', '.join(sorted(needed - keys))}",
                                    name)
        if kind == "choice":
            return cls._choice(name, spec)
        p = {k: _number(name, k, spec[k]) for k in keys}
        if kind == "normal" and p["sd"] <= 0:
            raise TripsimInputError(f"sd = {p['sd']:g}: expected > 0", name)
        lo, hi = p.get("low", -np.inf), p.get("high", np.inf)
        if lo >= hi:
            raise TripsimInputError(f"low = {lo:g} must be below high = {hi:g}", name)
        if kind == "triangular" and not lo <= p["mode"] <= hi:
            raise TripsimInputError(f"mode = {p['mode']:g} must lie between low and high", name)
        return cls(kind, p)

    @classmethod
    def _choice(cls, name: str, spec: dict[str, Any]) -> Distribution:
        if "values" in spec:
            values = spec["values"]
            if not isinstance(values, list) or not values:
                raise TripsimInputError("values must be a non-empty list", name)
        else:
            values = _range(name, spec)
        values = [_plain(v) for v in values]
        weights = spec.get("weights", [1.0] * len(values))
        if not isinstance(weights, list) or len(weights) != len(values):
            raise TripsimInputError(f"weights must be a list of {len(values)} numbers, one a "
                                    "value", name)
        w = [_number(name, "weights", x) for x in weights]
        if min(w) < 0 or sum(w) <= 0:
            raise TripsimInputError("weights must be ≥ 0 and not all 0", name)
        return cls("choice", {}, tuple(values), tuple(w))


@dataclass(frozen=True)
class Axis:
    """One axis: the field it sets, and its grid values or its distribution."""

    name: str
    values: tuple[Any, ...] | None = None
    dist: Distribution | None = None

    @property
    def drawn(self) -> bool:
        """True for an axis drawn from a distribution."""
        return self.dist is not None

    @property
    def on_vehicle(self) -> bool:
        """True for a vehicle parameter (applied over the vehicle after it is read)."""
        return self.name.startswith("vehicle.")

    @classmethod
    def parse(cls, name: str, spec: Any) -> Axis:
        """An axis from its TOML value (a list, a range or a distribution)."""
        where = f"[axes] {name}"
        _check_path(name, where)
        if isinstance(spec, list):
            if not spec:
                raise TripsimInputError("an empty list of values", where)
            return cls(name, tuple(_plain(v) for v in spec))
        if isinstance(spec, dict) and "dist" in spec:
            return cls(name, dist=Distribution.parse(where, spec))
        if isinstance(spec, dict) and "values" in spec and len(spec) == 1:
            return cls.parse(name, spec["values"])
        if isinstance(spec, dict) and set(spec) & _RANGE_KEYS:
            return cls(name, tuple(_range(where, spec)))
        raise TripsimInputError("expected a list of values, a range {start, stop, step} or "
                                "a distribution {dist = ...}", where)


def _check_path(name: str, where: str) -> None:
    """Refuse an axis that names no scenario field or vehicle parameter."""
    from tripsim.vehicle import PanelFacet, Vehicle

    parts = name.split(".")
    if parts[0] in _FIXED:
        raise TripsimInputError(_FIXED[parts[0]], where)
    if name in ("depart.date", "depart.time"):
        return
    if parts[0] == "vehicle" and len(parts) > 1:
        ok = (name == "vehicle.panel_area_m2"
              or (len(parts) == 3 and parts[1] in _VEHICLE_TABLES
                  and parts[2] in getattr(Vehicle.model_fields[parts[1]].annotation,
                                          "model_fields", {}))
              or (len(parts) == 4 and parts[1] == "panels"
                  and parts[3] in PanelFacet.model_fields))
        if not ok:
            raise TripsimInputError(
                "not a vehicle parameter: expected vehicle.TABLE.KEY (tables "
                f"{', '.join(_VEHICLE_TABLES)}), vehicle.panels.NAME.KEY or "
                "vehicle.panel_area_m2", where)
        return
    model: Any = Scenario
    for i, part in enumerate(parts):
        fields = getattr(model, "model_fields", None)
        if fields is None:
            raise TripsimInputError(f"{'.'.join(parts[:i])} is a value, not a table", where)
        if part not in fields:
            raise TripsimInputError(f"{part!r} is not a key of "
                                    f"{'[' + '.'.join(parts[:i]) + ']' if i else 'a scenario'}"
                                    f" (keys: {', '.join(fields)})", where)
        annotation = fields[part].annotation
        nested = [a for a in getattr(annotation, "__args__", (annotation,))
                  if isinstance(a, type) and issubclass(a, Options)]
        model = nested[0] if nested else None


class DrawSpec(Options):
    """How many draws, and how (``[draws]``)."""

    n: Count = option(..., ge=1, le=MAX_RUNS, description="number of draws")
    method: Literal["lhs", "monte-carlo"] = option(
        "lhs", description="lhs: Latin hypercube (scipy.stats.qmc); monte-carlo: independent")


class SweepSpec(Options):
    """A sweep spec as written: see the module notes for every key."""

    name: str | None = option(None, description="the sweep's name in reports")
    seed: Count = option(0, ge=0, le=2**63 - 1, description="seed of the draws")
    draws: DrawSpec | None = None
    traces: bool = option(False, description="keep each run's trace (a Parquet file a run)")
    batch_runs: Count | None = option(None, ge=1, le=100_000,
                                      description="runs a task (default: measured)")
    task_s: Number = option(1.0, ge=0.01, le=3600.0,
                            description="aimed-at duration of a task [s]")
    scenario: dict[str, Any]
    axes: dict[str, Any] = option({}, description="axis name → values or distribution")


def _flatten_axes(axes: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    """``[axes.conditions] temp_c = [...]`` and ``"conditions.temp_c" = [...]`` alike."""
    out: dict[str, Any] = {}
    for key, value in axes.items():
        name = f"{prefix}{key}"
        if isinstance(value, dict) and not (set(value) & (_RANGE_KEYS | {"dist", "values"})):
            out.update(_flatten_axes(value, name + "."))
        else:
            out[name] = value
    return out


def _scenario_problem(exc: ValidationError | OptionConflict) -> TripsimInputError:
    """A scenario error located in the spec's ``[scenario]`` table."""
    err = scenario_error(exc, flags=False)
    where = err.source or ""
    where = f"[scenario.{where[1:]}" if where.startswith("[") else f"[scenario] {where}"
    return TripsimInputError(err.problem, where.rstrip())


def validate_scenario(data: dict[str, Any]) -> Scenario:
    """A scenario from a dict, errors located in ``[scenario]``."""
    try:
        with raw_errors():
            return Scenario.model_validate(data)
    except (ValidationError, OptionConflict) as exc:
        raise _scenario_problem(exc) from None


@dataclass(frozen=True)
class Sweep:
    """A validated spec, ready to expand: the base scenario, the axes and the draws.

    Build it with :func:`load_spec`.
    """

    spec: SweepSpec
    base: Scenario
    base_data: dict[str, Any]
    axes: tuple[Axis, ...]
    folder: Path | None = None
    source: str = "sweep spec"

    @property
    def name(self) -> str:
        """The sweep's name (or its base scenario's)."""
        return self.spec.name or self.base.title

    @property
    def kind(self) -> str:
        """simulate, plan, fleet or claim."""
        return self.base.kind

    @property
    def grid_axes(self) -> tuple[Axis, ...]:
        """Axes crossed as a grid."""
        return tuple(a for a in self.axes if not a.drawn)

    @property
    def drawn_axes(self) -> tuple[Axis, ...]:
        """Axes drawn at random."""
        return tuple(a for a in self.axes if a.drawn)

    @property
    def n_draws(self) -> int:
        """Draws for each grid point (1 without ``[draws]``)."""
        return self.spec.draws.n if self.spec.draws is not None else 1

    @property
    def n_runs(self) -> int:
        """Number of runs."""
        return math.prod(len(a.values or ()) for a in self.grid_axes) * self.n_draws

    @property
    def shape_text(self) -> str:
        """``26 depart.date × 3 drive.speed_factor × 40 draws (lhs)``."""
        parts = [f"{len(a.values or ())} {a.name}" for a in self.grid_axes]
        if self.spec.draws is not None:
            parts.append(f"{self.n_draws} draws ({self.spec.draws.method}: "
                         f"{', '.join(a.name for a in self.drawn_axes)})")
        return " × ".join(parts) or "1 run"

    def fingerprint(self) -> str:
        """A hash of everything that decides the runs and their rows."""
        doc = {"scenario": self.base_data, "axes": [(a.name, a.values, a.dist and (
            a.dist.kind, sorted(a.dist.params.items()), a.dist.values, a.dist.weights))
            for a in self.axes], "draws": self.spec.draws and self.spec.draws.model_dump(),
            "seed": self.spec.seed, "traces": self.spec.traces}
        text = json.dumps(doc, sort_keys=True, default=str)
        return hashlib.sha256(text.encode()).hexdigest()[:24]

    @functools.cached_property
    def plan(self) -> pd.DataFrame:
        """The runs: one row a run (index ``run``), one column an axis.

        Grid points in order (the first axis slowest), each crossed with the draws.
        """
        from tripsim.sweep.expand import expand

        return expand(self)


def _check_values(sweep_base: dict[str, Any], axes: tuple[Axis, ...], plan: pd.DataFrame
                  ) -> None:
    """Each value of each scenario axis, on the base alone, must make a valid scenario."""
    from tripsim.sweep.tasks import scenario_data

    for axis in axes:
        if axis.on_vehicle:
            continue
        column = plan[axis.name]
        if axis.drawn and axis.dist is not None and axis.dist.kind != "choice":
            candidates = [float(column.min()), float(column.max())]
        else:
            candidates = list(axis.values if axis.values is not None else axis.dist.values)
        for value in candidates:
            try:
                with raw_errors():
                    Scenario.model_validate(scenario_data(sweep_base, (axis.name,), (value,)))
            except (ValidationError, OptionConflict) as exc:
                err = scenario_error(exc, flags=False)
                raise TripsimInputError(f"{value!r}: {err.problem} ({err.source})",
                                        f"[axes] {axis.name}") from None
            except TripsimInputError as exc:
                said = exc.problem if exc.problem.startswith(repr(value)) else \
                    f"{value!r}: {exc.problem}"
                raise TripsimInputError(said, f"[axes] {axis.name}") from None


def load_spec(spec: str | Path | dict[str, Any] | SweepSpec, *,
              folder: str | Path | None = None) -> Sweep:
    """A validated sweep from a spec file, a parsed dict or a :class:`SweepSpec`.

    File names in the scenario are relative to ``folder`` (default: the spec file's
    folder, or the working folder for a dict).

    Raises
    ------
    TripsimInputError
        Naming the file, the table or axis and the key, and what was expected.
    """
    source = "sweep spec"
    if isinstance(spec, str | Path):
        from tripsim.io.sweep_file import read_sweep_file

        path = Path(spec)
        doc: Any = read_sweep_file(path)
        source = str(path)
        folder = path.resolve().parent if folder is None else folder
    elif isinstance(spec, SweepSpec):
        doc = spec.model_dump()
    else:
        doc = spec
    try:
        return _load(doc, source, folder)
    except TripsimInputError as exc:
        if exc.source and exc.source.startswith(source):
            raise
        raise TripsimInputError(exc.problem if exc.source else str(exc),
                                f"{source}: {exc.source}" if exc.source else source) from None


def _load(doc: Any, source: str, folder: str | Path | None) -> Sweep:
    if not isinstance(doc, dict):
        raise TripsimInputError("expected a table of sweep keys")
    if "scenario" not in doc:
        raise TripsimInputError("required: the base run ([scenario])", "[scenario]")
    doc = {**doc, "axes": _flatten_axes(doc.get("axes") or {})}
    try:
        with raw_errors():
            spec = SweepSpec.model_validate(doc)
    except ValidationError as exc:
        where, what = describe_error(exc.errors()[0], SweepSpec, flags=False)
        table, _, key = where.rpartition(".")
        raise TripsimInputError(what, f"[{table}] {key}" if table else where) from None
    base_data = _plain(dict(spec.scenario))
    base = validate_scenario(base_data)
    if base.outputs.named():
        raise TripsimInputError(_FIXED["outputs"], "[scenario.outputs]")
    axes = tuple(Axis.parse(name, value) for name, value in spec.axes.items())
    drawn = [a.name for a in axes if a.drawn]
    if drawn and spec.draws is None:
        raise TripsimInputError("a distribution needs [draws] n = … (how many draws)",
                                f"[axes] {drawn[0]}")
    if spec.draws is not None and not drawn:
        raise TripsimInputError("no axis has a distribution to draw from (dist = …)",
                                "[draws]")
    if "depart" in spec.axes and ({"depart.date", "depart.time"} & set(spec.axes)):
        raise TripsimInputError("give the departure as depart, or as depart.date and "
                                "depart.time, not both", "[axes] depart")
    sweep = Sweep(spec, base, base_data, axes, None if folder is None else Path(folder), source)
    if sweep.n_runs > MAX_RUNS:
        raise TripsimInputError(f"{sweep.n_runs:,} runs ({sweep.shape_text}); at most "
                                f"{MAX_RUNS:,}", "[axes]")
    _check_values(base_data, axes, sweep.plan)
    return sweep
