"""What the worker processes do: read stored inputs, run scenarios, make the files to store.

Everything here runs in a worker process (see :mod:`tripsim_api.jobs`), never on the
service's event loop.  Functions take plain values (paths of stored inputs written to
disk, scenario dicts) and return plain values: JSON-ready dicts and
:class:`~tripsim_api.store.Blob` files, which the service stores in one transaction.

Runs go through :func:`tripsim.runner.load_inputs` (with a resolver that knows only the
stored inputs of this run: no request can name a server-side path) and
:func:`tripsim.runner.run`, as on the command line.  Files are made with the writers
of :mod:`tripsim.io.export` and the page data of :mod:`tripsim.report.mapview`.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
import threading
import time
from collections.abc import Callable, Mapping
from pathlib import Path
from typing import Any

from tripsim_api.store import Blob

__all__ = ["check_sites", "check_weather", "init_worker", "prepare_route", "run_scenario"]

_progress_queue: Any = None
#: Road networks, chargers, lodgings and weather this worker has read, by stored file
#: (content-addressed paths: a file never changes under its name).
_KEPT: dict[tuple[str, str], Any] = {}


def _watch_parent(parent_pid: int) -> None:
    """End this worker when the service that started it is gone (killed, say)."""
    while True:
        if os.getppid() != parent_pid:
            os._exit(0)
        time.sleep(0.5)


def init_worker(queue: Any, parent_pid: int) -> None:
    """Start a worker: keep the progress queue, watch the parent, load tripsim."""
    global _progress_queue
    _progress_queue = queue
    threading.Thread(target=_watch_parent, args=(parent_pid,), daemon=True).start()
    _warm_up()


def _warm_up() -> None:
    """Load tripsim and its compiled kernels once, not in the first request."""
    import numpy as np

    import tripsim.report.mapview
    import tripsim.runner  # noqa: F401
    from tripsim.io.vehicle_file import parse_vehicle
    from tripsim.route import Route
    from tripsim.segments import segment_route
    from tripsim.simulate import simulate

    vehicle = parse_vehicle({"name": "warm-up", "body": {"mass_kg": 1500.0, "cda_m2": 0.6,
                                                        "crr": 0.009},
                             "drivetrain": {"efficiency": 0.9, "regen_efficiency": 0.7},
                             "battery": {"usable_kwh": 50.0}, "auxiliary": {"base_w": 300.0}})
    route = Route(lat_deg=np.array([45.0, 45.0, 45.001]), lon_deg=np.array([7.0, 7.01, 7.02]),
                  elevation_m=np.array([100.0, 110.0, 105.0]), name="warm-up")
    with contextlib.suppress(Exception):  # a warm-up: the first real run says what fails
        simulate(segment_route(route), vehicle, default_speed_kph=80.0)


def progress(job_id: str | None, fraction: float, message: str) -> None:
    """Tell the service how far a job is (best effort)."""
    if _progress_queue is not None and job_id is not None:
        with contextlib.suppress(Exception):  # progress is never worth failing a job for
            _progress_queue.put_nowait((job_id, fraction, message))


class InputProblem(Exception):  # noqa: N818 - a result, not a crash: the request was bad
    """Bad input found while reading or running: (field, detail) for a problem document."""

    def __init__(self, field: str | None, detail: str) -> None:
        super().__init__(field, detail)  # both in args: the exception crosses processes
        self.field, self.detail = field, detail

    def __str__(self) -> str:
        return f"{self.field}: {self.detail}" if self.field else self.detail


def _scrub(text: str, names: Mapping[str, str]) -> str:
    """A message with server-side paths replaced by what the user knows them as."""
    for path, name in sorted(names.items(), key=lambda kv: -len(kv[0])):
        text = text.replace(path, name)
    return text


def _scrub_all(obj: Any, names: Mapping[str, str]) -> Any:
    """:func:`_scrub` on every string of a JSON-ready value."""
    if isinstance(obj, str):
        return _scrub(obj, names)
    if isinstance(obj, list):
        return [_scrub_all(v, names) for v in obj]
    if isinstance(obj, dict):
        return {k: _scrub_all(v, names) for k, v in obj.items()}
    return obj


#: Flags of a route's preparation → the form fields of ``POST /routes``.
ROUTE_FIELDS = {"--waypoints": "waypoints", "--dem": "dem", "ROUTE": "file",
                "--segment-m": "segment_m", "--smooth-m": "smooth_m"}


def _input_problem(exc: Exception, names: Mapping[str, str], field: str | None,
                   flags: Mapping[str, str] | None = None) -> InputProblem:
    """A tripsim error as a problem, in the request's terms.

    An option's flag becomes the request's field name, a server-side path the name the
    user knows the file by.
    """
    from tripsim.errors import TripsimInputError

    if not isinstance(exc, TripsimInputError):
        return InputProblem(field, _scrub(str(exc), names))
    source, detail = exc.source or "", _scrub(exc.problem, names)
    if source.startswith("--") or source in (flags or {}):
        from tripsim_api.problems import flag_field

        named = (flags or {}).get(source) if flags is not None else flag_field(source)
        return InputProblem(named or field, detail)
    shown = _scrub(source, names)
    if field is None:
        field = next((f for label, f in _LABEL_FIELDS.items() if shown.startswith(label)), None)
    return InputProblem(field, f"{shown}: {detail}" if shown else detail)


#: How the service names a stored file in messages → the field of a run request.
_LABEL_FIELDS = {"route": "route", "inline route": "route", "weather": "weather",
                 "chargers": "plan.chargers", "inline chargers": "plan.chargers",
                 "lodgings": "plan.lodging", "inline lodgings": "plan.lodging"}


def _json_ready(obj: Any) -> Any:
    from tripsim.io.export import to_json_text

    return json.loads(to_json_text(obj))


def _file(folder: Path, role: str, filename: str, media: str,
          write: Callable[[Path], Any]) -> Blob:
    path = folder / filename
    write(path)
    return Blob.of(role, filename, media, path.read_bytes())


# --- inputs -------------------------------------------------------------------------------

def prepare_route(job_id: str | None, source: str, names: dict[str, str], *,
                  waypoints: list[tuple[float, float]] | None, dem: str | None,
                  segment_m: float, smooth_m: float, road_speeds: dict[str, float] | None,
                  name: str) -> dict[str, Any]:
    """Cut a stored route into segments; its length, ascent and the segments as Parquet."""
    from tripsim.errors import TripsimInputError
    from tripsim.inputs import load_segments
    from tripsim.io.export import write_table

    progress(job_id, 0.1, "reading the route")
    try:
        segments = load_segments(source, waypoints=waypoints, dem=dem, max_length_m=segment_m,
                                 smooth_sigma_m=smooth_m, highway_kph=road_speeds)
    except TripsimInputError as exc:
        raise _input_problem(exc, names, "file", ROUTE_FIELDS) from None
    progress(job_id, 0.8, "storing the segments")
    a = segments.attrs
    last = segments.iloc[-1]
    info = {"length_km": float((last["start_m"] + last["length_m"]) / 1000.0),
            "ascent_m": float(a.get("ascent_m", 0.0)), "descent_m": float(a.get("descent_m",
                                                                                0.0)),
            "segments": len(segments), "elevation_source": a.get("elevation_source"),
            "start": [float(segments["lat_deg"].iloc[0]), float(segments["lon_deg"].iloc[0])],
            "end": [float(last["lat_end_deg"]), float(last["lon_end_deg"])],
            "bounds": [float(segments["lat_deg"].min()), float(segments["lon_deg"].min()),
                       float(segments["lat_deg"].max()), float(segments["lon_deg"].max())]}
    plain = segments.copy()
    plain.attrs = {"name": name}
    with tempfile.TemporaryDirectory(prefix="tripsim-") as tmp:
        blob = _file(Path(tmp), "segments", "segments.parquet", "application/vnd.apache.parquet",
                     lambda p: write_table(plain, p))
    return {"info": _json_ready(info), "files": [blob]}


def check_sites(job_id: str | None, path: str, names: dict[str, str], *,
                lodgings: bool) -> dict[str, Any]:
    """Read a charger set or lodgings: how many sites, their connectors and extent."""
    from tripsim.errors import TripsimInputError
    from tripsim.io.chargers_file import read_chargers, read_lodgings

    progress(job_id, 0.2, "reading the sites")
    try:
        sites = read_lodgings(path) if lodgings else read_chargers(path)
    except TripsimInputError as exc:
        raise _input_problem(exc, names, "file") from None
    if not sites:
        raise InputProblem("file", f"{next(iter(names.values()), 'file')}: holds no site")
    connectors: dict[str, int] = {}
    for s in sites:
        for conn, (ports, _kw) in s.connectors.items():
            connectors[conn] = connectors.get(conn, 0) + int(ports)
    lat = [s.lat_deg for s in sites]
    lon = [s.lon_deg for s in sites]
    return {"info": _json_ready({"sites": len(sites), "connectors": connectors,
                                 "bounds": [min(lat), min(lon), max(lat), max(lon)]}),
            "files": []}


def check_weather(job_id: str | None, path: str, names: dict[str, str]) -> dict[str, Any]:
    """Read a weather file: where it belongs and how many samples it holds."""
    from tripsim.errors import TripsimInputError
    from tripsim.io.weather_files import read_weather

    progress(job_id, 0.2, "reading the weather")
    try:
        w = read_weather(path)
    except TripsimInputError as exc:
        raise _input_problem(exc, names, "file") from None
    return {"info": _json_ready({"latitude": w.latitude, "longitude": w.longitude,
                                 "elevation_m": w.elevation_m, "utc_offset_h": w.utc_offset_h,
                                 "typical_year": bool(w.periodic),
                                 "samples": len(w.state_s),
                                 "mean_temp_c": float(w.state["temp_c"].mean())}),
            "files": []}


# --- runs ---------------------------------------------------------------------------------

def run_scenario(job_id: str | None, scenario: dict[str, Any], paths: dict[str, str],
                 names: dict[str, str]) -> dict[str, Any]:
    """Run a scenario on stored inputs; its payload, text, files and timings.

    Parameters
    ----------
    job_id : str or None
        The job, for progress.
    scenario : dict
        A :class:`~tripsim.scenario.Scenario` whose file names are references to stored
        inputs (``stored:<sha256><suffix>``).
    paths : dict
        Reference → the stored file on disk.  The resolver knows nothing else.
    names : dict
        Path on disk → how the user knows the input, for messages.
    """
    from pydantic import ValidationError

    from tripsim.errors import TripsimInputError
    from tripsim.options import OptionConflict, raw_errors
    from tripsim.runner import load_inputs, run
    from tripsim.scenario import Scenario, scenario_error

    t0 = time.perf_counter()
    try:
        with raw_errors():
            sc = Scenario.model_validate(scenario)
    except (ValidationError, OptionConflict) as exc:
        err = scenario_error(exc, flags=False)
        raise InputProblem(_field_of(err.source), err.problem) from None

    def resolve(ref: str, flag: str) -> Path:
        if ref not in paths:
            raise TripsimInputError(f"{ref!r} is not a stored input", flag)
        return Path(paths[ref])

    progress(job_id, 0.1, "reading the inputs")
    if len(_KEPT) > 64:  # stored files do not change; keep what this worker read, bounded
        _KEPT.clear()
    try:
        inputs = load_inputs(sc, resolve=resolve, cache=_KEPT)
        t1 = time.perf_counter()
        progress(job_id, 0.3, f"computing the {sc.kind}")
        result = run(sc, inputs, progress=lambda stage, fraction: progress(
            job_id, 0.3 + 0.5 * min(max(fraction, 0.0), 1.0), stage))
    except TripsimInputError as exc:
        raise _input_problem(exc, names, None) from None
    t2 = time.perf_counter()
    progress(job_id, 0.8, "making the result files")
    with tempfile.TemporaryDirectory(prefix="tripsim-") as tmp:
        files = _result_files(Path(tmp), result, sc.title)
    t3 = time.perf_counter()
    return {"payload": _scrub_all(_json_ready(result.payload), names),
            "text": _scrub(result.text, names),
            "exit_code": int(result.exit_code), "files": files,
            "timings": {"read_s": round(t1 - t0, 4), "compute_s": round(t2 - t1, 4),
                        "files_s": round(t3 - t2, 4)}}


def _field_of(source: str | None) -> str | None:
    """``[plan.options] reserve_soc`` → ``plan.options.reserve_soc``."""
    if not source:
        return None
    if source.startswith("["):
        table, _, key = source[1:].partition("] ")
        return f"{table}.{key}"
    return source


_PARQUET, _CSV, _GEOJSON = "application/vnd.apache.parquet", "text/csv", "application/geo+json"
#: Files made from a run's stored trace when first asked for: role → (file name, media).
DERIVED = {"trace.csv": ("trace.csv", _CSV), "geojson": ("trace.geojson", _GEOJSON)}


def derive_trace_file(parquet: bytes, role: str) -> Blob:
    """A trace file (CSV, or GeoJSON of every segment) from the stored Parquet trace.

    Written by the same writer as the command line's ``--trace``.
    """
    import io

    import pandas as pd

    from tripsim.io.export import write_trace

    trace = pd.read_parquet(io.BytesIO(parquet))
    trace = trace.set_index(trace.columns[0])  # the segment number, as the writer left it
    filename, media = DERIVED[role]
    with tempfile.TemporaryDirectory(prefix="tripsim-") as tmp:
        return _file(Path(tmp), role, filename, media, lambda p: write_trace(trace, p))


def _result_files(folder: Path, result: Any, title: str) -> list[Blob]:
    from tripsim.io.export import to_json_text, write_json, write_table, write_trace
    from tripsim.report.mapview import plan_page_data, trip_page_data

    files: list[Blob] = []

    def page(data: dict[str, Any]) -> Blob:
        return Blob.of("page", "page.json", "application/json", to_json_text(data).encode())

    def traces(trace: Any) -> None:  # CSV and GeoJSON are made from it when first asked for
        files.append(_file(folder, "trace.parquet", "trace.parquet", _PARQUET,
                           lambda p: write_trace(trace, p)))

    if result.trip is not None:
        trip = result.trip
        traces(trip.trace)
        files.append(page(trip_page_data(trip, title=title)))
    elif result.plan is not None:
        from tripsim.report.geo import plan_geojson

        plan = result.plan
        files.append(_file(folder, "stops.csv", "stops.csv", _CSV,
                           lambda p: write_table(plan.stops_table(), p)))
        if plan.trip is not None:
            traces(plan.trip.trace)
            files.append(_file(folder, "geojson", "plan.geojson", _GEOJSON,
                               lambda p: write_json(plan_geojson(plan), p)))
            files.append(page(plan_page_data(plan, plan.sites, title=title)))
    elif result.fleet is not None:
        year = result.fleet
        for name, frame in (("daily", year.daily), ("runs", year.runs)):
            for suffix, media in ((".csv", _CSV), (".parquet", _PARQUET)):
                files.append(_file(folder, f"{name}{suffix}", f"{name}{suffix}", media,
                                   lambda p, f=frame: write_table(f, p)))
    return files
