"""Run a sweep: read the shared inputs once, run the batches, write each part as it comes.

1. The spec is validated and expanded (:mod:`tripsim.sweep.spec`,
   :mod:`tripsim.sweep.expand`); runs that already have a row in the output folder are
   left out (resuming).
2. Runs are grouped by the inputs they read (route, vehicle file, weather, sites): each
   group's inputs are read once here (:func:`tripsim.runner.load_inputs`, sharing every
   file between groups) and sent to the cluster once (``shared`` of
   :func:`tripsim.parallel.iter_batches`).
3. Batches of runs are tasks (:func:`tripsim.sweep.tasks.run_batch`); each finished
   batch is written at once as a Parquet part (:mod:`tripsim.io.sweep_results`), so a
   stop at any moment loses only the batches in flight.
4. ``totals.json`` sums it up: counts, timings, failures and the range of each result.
"""

from __future__ import annotations

import json
import time
from collections import Counter
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from tripsim.caution import CAUTION
from tripsim.errors import TripsimInputError
from tripsim.progress import Progress, quiet
from tripsim.sweep.spec import Axis, Sweep, SweepSpec, load_spec, validate_scenario
from tripsim.sweep.tasks import Group, Outcome, failure_text, overlay_vehicle, run_chunks, warm_up

__all__ = ["execute_sweep", "input_axes", "open_output", "run_sweep", "sweep_frame"]

def _clear_sky(sweep: Sweep) -> bool:
    """Might a run use a tabulated clear sky (whose table depends on the departure)?"""
    if sweep.base.weather is not None and sweep.base.weather.clear_sky:
        return True
    for axis in sweep.axes:
        if axis.name.split(".")[0] == "weather":
            values = axis.values if axis.values is not None else axis.dist.values  # type: ignore[union-attr]
            if any("clear-sky" in json.dumps(v, default=str) for v in values):
                return True
    return False


def input_axes(sweep: Sweep) -> list[str]:
    """Axes that change what a run reads.

    Route, vehicle file, weather, sites, and a claim's lab cycle.
    """
    clear = _clear_sky(sweep)
    names = []
    for axis in sweep.axes:
        root = axis.name.split(".")[0]
        if (axis.name == "vehicle" or root in ("route", "weather")
                or axis.name in ("plan", "plan.chargers", "plan.lodging", "claim",
                                 "claim.cycle")
                or (clear and root in ("depart", "conditions", "fleet"))):
            names.append(axis.name)
    return names


#: Most runs in a chunk of departures driven together, and most runs × segments.
CHUNK_RUNS = 64
CHUNK_RUN_SEGMENTS = 200_000

#: Axes that change only the departure (runs differing in these are driven together).
DEPARTURE_AXES = ("depart", "depart.date", "depart.time")


def _departures_last(plan: pd.DataFrame, runs: np.ndarray, codes: np.ndarray) -> np.ndarray:
    """An order of ``runs``: by input group, then by every other axis, departures last.

    Batches are cut in this order, so runs that differ only in their departure are
    neighbours and land in the same batch, where they are driven together.
    """
    keys = [codes]
    for name in plan.columns:
        if name not in DEPARTURE_AXES:
            values = plan[name].to_numpy()[runs]
            if values.dtype == object:
                values = np.array([_key_text(v) for v in values], dtype=object)
            keys.append(pd.factorize(values, sort=True)[0])
    return np.lexsort(keys[::-1])


def _key_text(value: Any) -> str:
    return json.dumps(value.item() if isinstance(value, np.generic) else value,
                      sort_keys=True, default=str)


def _candidates(axis: Axis, plan: pd.DataFrame) -> list[Any]:
    """Values of an axis worth checking: every listed value, or the drawn extremes."""
    if axis.values is not None:
        return list(axis.values)
    if axis.dist is not None and axis.dist.kind == "choice":
        return list(axis.dist.values)
    column = plan[axis.name]
    return [float(column.min()), float(column.max())]


def _load_groups(sweep: Sweep, plan: pd.DataFrame, runs: np.ndarray
                 ) -> tuple[np.ndarray, dict[int, Group]]:
    """Group index of each run to do, and each group's shared inputs (read once)."""
    from tripsim.runner import load_inputs
    from tripsim.sweep.tasks import scenario_data

    names = tuple(a.name for a in sweep.axes)
    by_input = input_axes(sweep)
    if by_input:
        texts = [[_key_text(v) for v in plan[n].to_numpy()[runs]] for n in by_input]
        keys = ["\x1f".join(t) for t in zip(*texts, strict=True)]
        codes, _ = pd.factorize(pd.Series(keys, dtype=object))
    else:
        codes = np.zeros(len(runs), dtype=np.int64)
    memo: dict[Any, Any] = {}
    groups: dict[int, Group] = {}
    first = pd.Series(np.arange(len(runs))).groupby(codes).first()
    for code, position in first.items():
        row = plan.iloc[int(runs[position])]
        values = tuple(row[n] for n in by_input)
        try:
            sc = validate_scenario(scenario_data(sweep.base_data, tuple(by_input), values))
            inputs = load_inputs(sc, base=sweep.folder, cache=memo)
            error = None
        except Exception as exc:
            inputs, error = None, failure_text(exc)
        groups[int(code)] = Group(sweep.base_data, names, inputs, error, sweep.spec.traces)
    if groups and all(g.error is not None for g in groups.values()):
        raise TripsimInputError(next(iter(groups.values())).error or "no inputs")
    _check_vehicle_axes(sweep, plan, groups)
    return np.asarray(codes, dtype=np.int64), groups


def _check_vehicle_axes(sweep: Sweep, plan: pd.DataFrame, groups: dict[int, Group]) -> None:
    """Each vehicle parameter value must make a valid vehicle of each vehicle read."""
    vehicles = {id(g.inputs.vehicle): g.inputs.vehicle for g in groups.values()
                if g.inputs is not None}
    for axis in sweep.axes:
        if not axis.on_vehicle:
            continue
        for value in _candidates(axis, plan):
            for vehicle in vehicles.values():
                try:
                    overlay_vehicle(vehicle, ((axis.name.removeprefix("vehicle."), value),))
                except TripsimInputError as exc:
                    raise TripsimInputError(f"{value!r}: {exc.problem}",
                                            f"[axes] {axis.name}") from None


def _axis_column(values: pd.Series) -> pd.Series:
    """An axis as a Parquet column: numbers and words as they are, tables as JSON text."""
    if values.dtype != object:
        return values
    if all(isinstance(v, str) for v in values):
        return values
    return values.map(lambda v: json.dumps(v, sort_keys=True, default=str))


def sweep_frame(outcomes: list[Outcome], plan: pd.DataFrame,
                trace_paths: dict[int, str] | None = None) -> pd.DataFrame:
    """The rows of finished runs: ``run``, the axes, ``ok``, ``error``, then the results.

    A result named like an axis (``depart``, ``start_soc``) is kept as ``result.NAME``.
    """
    runs = np.array([o.run for o in outcomes], dtype=np.int64)
    axes = plan.loc[runs].reset_index(drop=True)
    frame = pd.DataFrame({"run": runs})
    for name in plan.columns:
        frame[name] = _axis_column(axes[name])
    frame["ok"] = [o.ok for o in outcomes]
    frame["error"] = pd.Series([o.error for o in outcomes], dtype=object)
    if trace_paths is not None:
        frame["trace"] = pd.Series([trace_paths.get(o.run) for o in outcomes], dtype=object)
    results = pd.DataFrame([o.result for o in outcomes])
    taken = set(frame.columns)
    results.columns = [f"result.{c}" if c in taken else c for c in results.columns]
    return pd.concat([frame, results], axis=1)


def _stats(frame: pd.DataFrame, axes: list[str]) -> dict[str, dict[str, float]]:
    """min, mean and max of every numeric result over the runs that finished."""
    ok = frame[frame["ok"].astype(bool)]
    skip = {"run", *axes}
    out = {}
    for name in ok.columns:
        if name in skip or ok[name].dtype == object or ok[name].dtype == bool:
            continue
        values = pd.to_numeric(ok[name], errors="coerce")
        values = values[np.isfinite(values)]
        if len(values):
            out[name] = {"min": float(values.min()), "mean": float(values.mean()),
                         "max": float(values.max())}
    return out


def _lost(chunks: list[list[tuple[int, tuple[Any, ...]]]], exc: BaseException
          ) -> list[list[Outcome]]:
    """Runs of a task that failed as a whole (its worker died again and again)."""
    text = f"the task failed ({failure_text(exc)})"
    return [[Outcome(run, False, text) for run, _ in chunk] for chunk in chunks]


def _shareable(sweep: Sweep) -> bool:
    """Can runs of this sweep that differ only in departure be driven together?"""
    base = sweep.base
    return (base.kind == "simulate" and base.battery_model == "energy"
            and not base.route.from_log
            and not any(a.name in ("battery_model", "route.from_log") for a in sweep.axes)
            and not _clear_sky(sweep))


def _split(bucket: list[Any], group: Group) -> list[list[Any]]:
    """A bucket of departures cut into even chunks of a bounded size."""
    segments = len(group.inputs.routes[0]) if group.inputs is not None else 1
    most = max(1, min(CHUNK_RUNS, CHUNK_RUN_SEGMENTS // max(segments, 1)))
    n = -(-len(bucket) // most)
    size = -(-len(bucket) // n)
    return [bucket[i:i + size] for i in range(0, len(bucket), size)]


def _chunks(sweep: Sweep, plan: pd.DataFrame, runs: np.ndarray, codes: np.ndarray,
            groups: dict[int, Group]) -> list[list[tuple[int, tuple[Any, ...]]]]:
    """The runs to do as chunks: runs differing only in departure, or single runs.

    A chunk is the unit batches are made of, so a chunk's departures are driven
    together; chunks of the same departures (at another speed, with another load)
    cover the same days, so they share the sun tables a worker keeps.  A chunk holds
    at most :data:`CHUNK_RUNS` runs and :data:`CHUNK_RUN_SEGMENTS` runs × segments.
    """
    order = _departures_last(plan, runs, codes)
    columns = [plan[c].to_numpy() for c in plan.columns]
    if not _shareable(sweep):
        return [[(int(r), tuple(col[r] for col in columns))] for r in runs[order]]
    others = [plan.columns.get_loc(c) for c in plan.columns if c not in DEPARTURE_AXES]
    out: list[list[tuple[int, tuple[Any, ...]]]] = []
    bucket: list[tuple[int, tuple[Any, ...]]] = []
    key: tuple[Any, ...] | None = None
    code = 0
    for position in order:
        run = int(runs[position])
        values = tuple(col[run] for col in columns)
        this = (int(codes[position]), *(_key_text(values[i]) for i in others))
        if this != key and bucket:
            out.extend(_split(bucket, groups[code]))
            bucket = []
        key, code = this, int(codes[position])
        bucket.append((run, values))
    if bucket:
        out.extend(_split(bucket, groups[code]))
    return out


def open_output(sweep: Sweep, out: str | Path) -> set[int]:
    """Make ``out`` ready for the sweep (or check it holds this sweep); the runs done there.

    Raises
    ------
    TripsimInputError
        ``--out`` cannot be written, or holds another sweep or other files.
    """
    from tripsim.io import sweep_results as store

    store.open_sweep_folder(out, {"name": sweep.name, "fingerprint": sweep.fingerprint(),
                                  "spec": sweep.source, "kind": sweep.kind,
                                  "runs": sweep.n_runs, "axes": list(sweep.plan.columns),
                                  "shape": sweep.shape_text, "caution": CAUTION})
    return store.done_runs(out)


def execute_sweep(sweep: Sweep, *, client: Any = None, out: str | Path | None = None,
                  progress: Progress = quiet) -> tuple[dict[str, Any], pd.DataFrame | None]:
    """Run a validated sweep; returns its totals and, without ``out``, its rows.

    With ``out`` every finished batch is written there at once, runs with a row there
    already are not run again, and the rows are read back with
    :func:`tripsim.io.sweep_results.read_results`.
    """
    from tripsim.io import sweep_results as store
    from tripsim.parallel import iter_batches

    t0 = time.perf_counter()
    plan = sweep.plan
    done = open_output(sweep, out) if out is not None else set()
    todo = np.setdiff1d(plan.index.to_numpy(), np.fromiter(done, dtype=np.int64, count=len(done)))
    frames: list[pd.DataFrame] = []
    counts = Counter({"ok": 0, "failed": 0})
    work: dict[str, float] = {}
    errors: Counter[str] = Counter()
    if len(todo):
        progress("reading the inputs", len(done) / max(sweep.n_runs, 1))
        codes, groups = _load_groups(sweep, plan, todo)
        code_of = dict(zip(todo.tolist(), codes.tolist(), strict=True))
        chunks = _chunks(sweep, plan, todo, codes, groups)
        batches = iter_batches(run_chunks, chunks, client=client, shared=groups,
                               group=lambda chunk: code_of[chunk[0][0]], vectorised=True,
                               batch_size=sweep.spec.batch_runs, task_s=sweep.spec.task_s,
                               warm_up=warm_up, on_error=_lost, stats=work)
        progress("starting the workers", len(done) / max(sweep.n_runs, 1))
        t_start = time.perf_counter()
        for _, done_chunks in batches:
            outcomes = [o for chunk in done_chunks for o in chunk]
            traces = _write_traces(outcomes, out) if sweep.spec.traces else None
            frame = sweep_frame(outcomes, plan, traces)
            if out is not None:
                store.write_part(out, frame, f"{min(o.run for o in outcomes):09d}")
            else:
                frames.append(frame)
            for o in outcomes:
                counts["ok" if o.ok else "failed"] += 1
                if not o.ok:
                    errors[o.error or "?"] += 1
            progress(*_progress(len(done), counts, len(todo), sweep.n_runs,
                                time.perf_counter() - t_start))
    rows = (pd.concat(frames, ignore_index=True).sort_values("run").reset_index(drop=True)
            if frames else None)
    if out is not None and len(todo):
        store.conform_parts(out)  # one table for any Parquet reader
    everything = store.read_results(out) if out is not None and (done or len(todo)) else rows
    elapsed = time.perf_counter() - t0
    counts.update(work)
    totals = _totals(sweep, everything, counts, errors, len(done), elapsed, client, out)
    if out is not None:
        store.write_sweep_totals(out, totals)
    return totals, rows


def _write_traces(outcomes: list[Outcome], out: str | Path | None) -> dict[int, str]:
    from tripsim.io import sweep_results as store

    paths = {}
    for o in outcomes:
        if o.trace is not None and out is not None:
            path = store.write_sweep_trace(out, o.run, o.trace)
            paths[o.run] = f"{store.TRACES}/{path.name}"
    return paths


def _progress(before: int, counts: Counter[str], todo: int, total: int, elapsed: float
              ) -> tuple[str, float]:
    now = counts["ok"] + counts["failed"]
    rate = now / elapsed if elapsed > 0 else 0.0
    text = f"{before + now}/{total} runs, {counts['failed']} failed, {rate:.3g} runs/s"
    if rate > 0 and now < todo:
        left = (todo - now) / rate
        text += f", {left:.0f} s left" if left < 120 else f", {left / 60:.1f} min left"
    return text, (before + now) / max(total, 1)


def _totals(sweep: Sweep, rows: pd.DataFrame | None, counts: Counter[str],
            errors: Counter[str], before: int, elapsed: float, client: Any,
            out: str | Path | None) -> dict[str, Any]:
    from tripsim.io import sweep_results as store
    from tripsim.sweep.cluster import dashboard_link

    ran = counts["ok"] + counts["failed"]
    all_ok = int(rows["ok"].sum()) if rows is not None else 0
    workers = len(client.scheduler_info().get("workers", {})) if client is not None else 0
    totals: dict[str, Any] = {
        "name": sweep.name, "kind": sweep.kind, "spec": sweep.source,
        "shape": sweep.shape_text, "runs": sweep.n_runs,
        "ok": all_ok, "failed": (len(rows) - all_ok) if rows is not None else 0,
        "from_earlier_passes": before, "ran_now": ran, "ok_now": counts["ok"],
        "failed_now": counts["failed"], "tasks_now": int(counts["tasks"]),
        "task_s": counts["task_s"], "task_cpu_s": counts["task_cpu_s"], "elapsed_s": elapsed,
        "runs_per_s": ran / elapsed if elapsed > 0 else None,
        "workers": workers, "where": "in this process" if client is None else (
            getattr(client.scheduler, "address", None) or "dask"),
        "dashboard": dashboard_link(client) if client is not None else None,
        "seed": sweep.spec.seed, "fingerprint": sweep.fingerprint(),
        "results": None if out is None else str(Path(out) / store.RUNS),
        "parts": None if out is None else len(store.part_files(out)),
        "columns": _stats(rows, list(sweep.plan.columns)) if rows is not None else {},
        "failures": [{"error": e, "runs": n} for e, n in errors.most_common(10)],
        "caution": CAUTION,
    }
    return totals


def run_sweep(spec: str | Path | dict[str, Any] | SweepSpec, client: Any = None, *,
              out: str | Path | None = None, workers: int | None = None,
              folder: str | Path | None = None, progress: Progress = quiet) -> Any:
    """Run a sweep spec; the rows as a pandas DataFrame, or as a Dask DataFrame with ``out``.

    Parameters
    ----------
    spec : path, dict or SweepSpec
        The spec (:mod:`tripsim.sweep.spec`): a TOML file, or the same as a dict.
    client : distributed.Client, optional
        The cluster to run on.  Without one, a local cluster of ``workers`` processes
        is started for the sweep (and closed after it); ``workers=0`` runs every batch
        in this process.
    out : path, optional
        Folder for the Parquet dataset (resumable: runs with a row there already are
        not run again).  Then the result is a Dask DataFrame over it (one partition a
        part file, Arrow-backed columns); without ``out``, a pandas DataFrame.
    workers : int, optional
        Worker processes of the local cluster (default: one a core).
    folder : path, optional
        Folder that the scenario's file names are relative to (default: the spec
        file's, or the working folder for a dict).
    progress : callable, optional
        ``progress(stage, fraction)`` (:mod:`tripsim.progress`).

    Returns
    -------
    pandas.DataFrame or dask.dataframe.DataFrame
        One row a run, by run number: ``run``, one column an axis, ``ok``, ``error``,
        and the run's summary (a simulation's :class:`tripsim.summary.Summary`, a plan's
        totals, a fleet year's totals).  A pandas frame carries the totals in
        ``.attrs["totals"]``; with ``out`` they are in ``out/totals.json``.

    Examples
    --------
    >>> import tripsim                                          # doctest: +SKIP
    >>> rows = tripsim.sweep("routes_demo/sweep_harbour.toml", workers=2)
    >>> rows.groupby("drive.speed_factor")["wh_per_km"].mean()
    """
    sweep = load_spec(spec, folder=folder)
    if client is None and workers != 0:
        from tripsim.sweep.cluster import dask_client

        with dask_client(workers, dashboard=False) as local:
            return _finish(sweep, local, out, progress)
    return _finish(sweep, client, out, progress)


def _finish(sweep: Sweep, client: Any, out: str | Path | None,
            progress: Callable[[str, float], None]) -> Any:
    totals, rows = execute_sweep(sweep, client=client, out=out, progress=progress)
    if out is not None:
        from tripsim.io.sweep_results import results_dask

        return results_dask(out)
    assert rows is not None or sweep.n_runs == 0
    frame = rows if rows is not None else pd.DataFrame()
    frame.attrs["totals"] = totals
    return frame
