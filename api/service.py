"""What the service does with a request, apart from HTTP: check, store, submit, look up.

:class:`Service` holds the store and the job pool.  Uploads are checked (size, format,
XML without DTDs or entities) and read in a worker; run requests are expanded into a
:class:`~tripsim.scenario.Scenario` whose file names are references to stored files
(``stored:<sha256><suffix>``), hashed (same inputs, same run), and run in a worker.
Methods here are plain functions that may block: the HTTP layer calls them off the
event loop.
"""

from __future__ import annotations

import bz2
import collections
import contextlib
import csv
import gzip
import io
import json
import threading
import time
import tomllib
from dataclasses import dataclass, field
from pathlib import PurePath
from typing import Any

import defusedxml.ElementTree as SafeET
from defusedxml import DefusedXmlException
from pydantic import BaseModel
from tripsim_api import work
from tripsim_api.jobs import Jobs
from tripsim_api.problems import ProblemError
from tripsim_api.settings import Settings
from tripsim_api.store import Blob, Store, new_id, now, sha256

import tripsim
from tripsim.caution import CAUTION
from tripsim.errors import TripsimInputError

__all__ = ["INPUT_KINDS", "RUN_KINDS", "Recent", "Service"]

#: Stored inputs: kind → (URL collection, id prefix, accepted file suffixes).
INPUT_KINDS: dict[str, tuple[str, str, tuple[str, ...]]] = {
    "vehicle": ("vehicles", "veh", (".toml", ".json")),
    "route": ("routes", "rte", (".gpx", ".geojson", ".json", ".osm", ".osm.xml", ".osm.gz",
                                ".osm.bz2")),
    "chargers": ("chargers", "chg", (".csv", ".osm", ".osm.xml", ".osm.gz", ".osm.bz2")),
    "lodgings": ("lodgings", "lod", (".csv",)),
    "weather": ("weather", "wx", (".epw", ".csv", ".tm2")),
}
#: Runs: kind → (URL collection, id prefix).
RUN_KINDS: dict[str, tuple[str, str]] = {"simulate": ("simulations", "sim"),
                                         "plan": ("plans", "pln"),
                                         "fleet": ("fleet-years", "flt")}
_MEDIA = {".toml": "application/toml", ".json": "application/json", ".gpx": "application/xml",
          ".geojson": "application/geo+json", ".osm": "application/xml",
          ".osm.xml": "application/xml", ".osm.gz": "application/gzip",
          ".osm.bz2": "application/x-bzip2", ".csv": "text/csv", ".epw": "text/plain",
          ".tm2": "text/plain", ".tif": "image/tiff", ".tiff": "image/tiff"}
_XML = (".gpx", ".osm", ".osm.xml", ".osm.gz", ".osm.bz2")
#: An XML file may expand to at most this many times the upload cap when decompressed.
_INFLATE = 8


def suffix_of(filename: str, allowed: tuple[str, ...], field_name: str) -> str:
    """The file's suffix among those allowed (longest first), or a 415 naming the field."""
    name = PurePath(filename or "").name.lower()
    for suffix in sorted(allowed, key=len, reverse=True):
        if name.endswith(suffix) and len(name) > len(suffix):
            return suffix
    raise ProblemError(415, f"{PurePath(filename or '?').name or '?'}: expected a file ending "
                       f"in {', '.join(allowed)}", field=field_name)


class _Capped(io.RawIOBase):
    """A stream that refuses to give more than ``limit`` bytes (a decompression bomb)."""

    def __init__(self, raw: Any, limit: int) -> None:
        self.raw, self.left = raw, limit

    def readable(self) -> bool:
        return True

    def readinto(self, buffer: Any) -> int:
        data = self.raw.read(len(buffer))
        self.left -= len(data)
        if self.left < 0:
            raise ValueError("decompresses to more than the size cap")
        buffer[:len(data)] = data
        return len(data)


def check_xml(data: bytes, suffix: str, filename: str, field_name: str, cap: int) -> None:
    """Parse XML with DTDs, entities and external references refused (defusedxml).

    The parse streams (bounded memory) and stops at the first DTD or entity.
    """
    raw: Any = io.BytesIO(data)
    if suffix.endswith(".gz"):
        raw = gzip.GzipFile(fileobj=raw)
    elif suffix.endswith(".bz2"):
        raw = bz2.BZ2File(raw)
    try:
        for _ in SafeET.iterparse(io.BufferedReader(_Capped(raw, _INFLATE * cap)),
                                  events=("end",), forbid_dtd=True, forbid_entities=True,
                                  forbid_external=True):
            pass
    except DefusedXmlException as exc:
        kind = type(exc).__name__
        raise ProblemError(422, f"{filename}: refused XML with a DTD or entities ({kind}): "
                           "such files can expand without bound or read other files",
                           field=field_name) from None
    except (SafeET.ParseError, ValueError, OSError, EOFError) as exc:
        raise ProblemError(422, f"{filename}: not well-formed XML ({exc})",
                           field=field_name) from None


class Recent:
    """What was looked up lately, kept for a while.

    Runs and inputs do not change once stored; ``ttl_s`` bounds how long another service
    on the same store could still see one that was deleted.
    """

    def __init__(self, size: int = 256, ttl_s: float = 30.0) -> None:
        self.size, self.ttl_s = size, ttl_s
        self.items: collections.OrderedDict[Any, tuple[float, Any]] = collections.OrderedDict()
        self.lock = threading.Lock()

    def get(self, key: Any) -> Any:
        """The value kept under the key, or None (never kept, or too old)."""
        with self.lock:
            hit = self.items.get(key)
            if hit is None or time.monotonic() - hit[0] > self.ttl_s:
                return None
            self.items.move_to_end(key)
            return hit[1]

    def put(self, key: Any, value: Any) -> Any:
        """Keep a value; returns it."""
        with self.lock:
            self.items[key] = (time.monotonic(), value)
            while len(self.items) > self.size:
                self.items.popitem(last=False)
        return value

    def drop(self, key: Any) -> None:
        """Forget a key."""
        with self.lock:
            self.items.pop(key, None)


@dataclass
class Upload:
    """An uploaded file: its name as the client gave it and its bytes."""

    filename: str
    data: bytes


@dataclass
class Expanded:
    """A run request turned into a scenario on stored files."""

    kind: str
    scenario: dict[str, Any]
    paths: dict[str, str] = field(default_factory=dict)  # reference → file on disk
    names: dict[str, str] = field(default_factory=dict)  # file on disk → what the user knows
    used: list[dict[str, Any]] = field(default_factory=list)  # stored inputs read
    blobs: list[Blob] = field(default_factory=list)  # input files the run keeps
    input_hash: str = ""


class Service:
    """The store, the job pool and what the endpoints do with them."""

    def __init__(self, settings: Settings) -> None:
        self.settings = settings
        self.store = Store(settings.db_url, settings.inputs_dir())
        self.jobs = Jobs(self.store, workers=settings.workers, queue_size=settings.queue_size,
                         job_timeout_s=settings.job_timeout_s)
        # Stored inputs and runs do not change: keep the rows and the input hashes met
        # lately (for a while: another service on the same store may delete them).
        self.recent_inputs = Recent(size=256)
        self._deriving = threading.Lock()
        self.recent_hashes = Recent(size=4096)

    def forget(self, item_id: str) -> None:
        """Drop a deleted input or run from what was kept."""
        with self.recent_inputs.lock:
            for key in [k for k in self.recent_inputs.items if k[1] == item_id]:
                self.recent_inputs.items.pop(key)
        with self.recent_hashes.lock:
            for key in [k for k, (_, v) in self.recent_hashes.items.items() if v == item_id]:
                self.recent_hashes.items.pop(key)

    def close(self) -> None:
        """Stop the workers and close the store."""
        self.jobs.close()
        self.store.close()

    # --- inputs ---------------------------------------------------------------------------

    def add_vehicle(self, upload: Upload, name: str | None) -> dict[str, Any]:
        """Store a vehicle file (TOML, or the same tables as JSON), validated."""
        from tripsim.io.vehicle_file import parse_vehicle

        suffix = suffix_of(upload.filename, INPUT_KINDS["vehicle"][2], "file")
        shown = PurePath(upload.filename).name
        try:
            text = upload.data.decode("utf-8")
            data = tomllib.loads(text) if suffix == ".toml" else json.loads(text)
        except (UnicodeDecodeError, tomllib.TOMLDecodeError, json.JSONDecodeError) as exc:
            raise ProblemError(422, f"{shown}: not valid {suffix[1:].upper()}: {exc}",
                               field="file") from None
        if not isinstance(data, dict):
            raise ProblemError(422, f"{shown}: expected a table of vehicle keys", field="file")
        data.setdefault("name", name or PurePath(shown).stem)
        try:
            vehicle = parse_vehicle(data, shown)
        except TripsimInputError as exc:
            raise ProblemError(422, str(exc), field="file") from None
        info = {"name": vehicle.name, "usable_kwh": vehicle.battery.usable_kwh,
                "mass_kg": vehicle.body.mass_kg, "panels": len(vehicle.panels)}
        blob = Blob.of("source", shown, _MEDIA[suffix], upload.data)
        return self.store.add_input("vehicle", "veh", name or vehicle.name, info,
                                    {"vehicle": data}, [blob])

    def _upload_blob(self, kind: str, upload: Upload, field_name: str,
                     allowed: tuple[str, ...] | None = None, role: str = "source") -> Blob:
        suffix = suffix_of(upload.filename, allowed or INPUT_KINDS[kind][2], field_name)
        shown = PurePath(upload.filename).name
        if not upload.data:
            raise ProblemError(422, f"{shown}: the file is empty", field=field_name)
        if suffix in _XML:
            check_xml(upload.data, suffix, shown, field_name, self.settings.max_upload_bytes)
        return Blob.of(role, shown, _MEDIA[suffix], upload.data)

    def _disk(self, blob: Blob, data: bytes) -> str:
        """Write an uploaded file where workers read it (before it is stored)."""
        return str(self.store.write_file(blob.sha256, blob.filename, data))

    def add_route(self, upload: Upload, *, dem: Upload | None, waypoints: str | None,
                  segment_m: float, smooth_m: float, name: str | None,
                  wait: bool | float) -> tuple[str, Any]:
        """Read a route (routed through waypoints on an OSM network) and cut it into segments.

        Returns ("input", row) when done within the wait, else ("job", job id).
        """
        from tripsim.inputs import parse_waypoints

        blob = self._upload_blob("route", upload, "file")
        points = None
        if waypoints:
            try:
                points = parse_waypoints(waypoints)
            except TripsimInputError as exc:
                raise ProblemError(422, exc.problem, field="waypoints") from None
        network = blob.filename.lower().endswith((".osm", ".osm.xml", ".osm.gz", ".osm.bz2"))
        if network and not points:
            raise ProblemError(422, "an OSM road network needs waypoints to route through "
                               '("lat,lon;lat,lon")', field="waypoints")
        if points and not network:
            raise ProblemError(422, f"{blob.filename} is a fixed route: waypoints apply to an "
                               "OSM road network", field="waypoints")
        files = [blob]
        names = {self._disk(blob, upload.data): f"route file {blob.filename}"}
        dem_path = None
        if dem is not None:
            dem_blob = self._upload_blob("route", dem, "dem", (".tif", ".tiff"), role="dem")
            dem_path = self._disk(dem_blob, dem.data)
            names[dem_path] = f"elevation file {dem_blob.filename}"
            files.append(dem_blob)
        route_name = name or PurePath(blob.filename).name.split(".")[0]
        spec = {"waypoints": points, "segment_m": segment_m, "smooth_m": smooth_m,
                "network": network}
        source = next(iter(names))

        def store_result(job_id: str, output: dict[str, Any]) -> None:
            self.store.add_input("route", "rte", route_name, output["info"], spec,
                                 [*files, *output["files"]], job_id=job_id)

        job_id = self.jobs.submit("route", {"file": blob.filename, **spec}, work.prepare_route,
                                  (source, names), dict(waypoints=points, dem=dem_path,
                                                        segment_m=segment_m, smooth_m=smooth_m,
                                                        road_speeds=None, name=route_name),
                                  store_result)
        return self._outcome(job_id, wait)

    def add_sites(self, kind: str, upload: Upload, name: str | None,
                  wait: bool | float) -> tuple[str, Any]:
        """Store a charger set or lodgings after reading them in a worker."""
        blob = self._upload_blob(kind, upload, "file")
        path = self._disk(blob, upload.data)
        names = {path: f"{kind} file {blob.filename}"}
        shown = name or PurePath(blob.filename).name.split(".")[0]

        def store_result(job_id: str, output: dict[str, Any]) -> None:
            self.store.add_input(kind, INPUT_KINDS[kind][1], shown, output["info"], {}, [blob],
                                 job_id=job_id)

        if kind == "weather":
            task, kwargs = work.check_weather, {}
        else:
            task, kwargs = work.check_sites, {"lodgings": kind == "lodgings"}
        job_id = self.jobs.submit(kind, {"file": blob.filename}, task, (path, names), kwargs,
                                  store_result)
        return self._outcome(job_id, wait)

    def stored_input(self, kind: str, input_id: str, field_name: str | None = None
                     ) -> dict[str, Any]:
        """A stored input, or a 404 (a 422 naming the field when a request refers to it)."""
        row = self.recent_inputs.get((kind, input_id))
        if row is None:
            row = self.store.get_input(kind, input_id)
            if row is not None:
                self.recent_inputs.put((kind, input_id), row)
        if row is None:
            collection = INPUT_KINDS[kind][0]
            if field_name:
                raise ProblemError(422, f"no stored {kind} {input_id!r} (see GET /{collection})",
                                   field=field_name)
            raise ProblemError(404, f"no stored {kind} {input_id!r}")
        return row

    # --- runs -----------------------------------------------------------------------------

    def _ref(self, ex: Expanded, row: dict[str, Any], role: str, label: str) -> str:
        f = next(f for f in row["files"] if f["role"] == role)
        suffix = suffix_of(f["filename"], tuple(_MEDIA), "file")
        ref = f"stored:{f['sha256']}{suffix}"
        path = str(self.store.materialize(f["sha256"], f["filename"]))
        ex.paths[ref] = path
        ex.names[path] = f"{label} {row['id']} ({f['filename']})"
        ex.blobs.append(Blob(f"input:{label}:{role}", f["filename"], f["media_type"],
                             f["sha256"], int(f["size"]), "ref", b""))
        return ref

    def _inline(self, ex: Expanded, data: bytes, suffix: str, label: str) -> str:
        sha = sha256(data)
        path = str(self.store.write_file(sha, f"{label}{suffix}", data))
        ref = f"stored:{sha}{suffix}"
        ex.paths[ref], ex.names[path] = path, f"inline {label}"
        ex.blobs.append(Blob.of(f"input:{label}", f"{label}{suffix}", _MEDIA[suffix], data))
        return ref

    def _use(self, ex: Expanded, row: dict[str, Any]) -> None:
        ex.used.append({"id": row["id"], "kind": row["kind"], "name": row["name"],
                        "files": {f["role"]: f["sha256"] for f in row["files"]}})

    def _route(self, ex: Expanded, route: Any) -> dict[str, Any]:
        if isinstance(route, BaseModel) and hasattr(route, "geojson"):
            data = json.dumps(route.geojson, sort_keys=True, separators=(",", ":")).encode()
            return {"file": self._inline(ex, data, ".geojson", "route"),
                    "segment_m": route.segment_m, "smooth_m": route.smooth_m,
                    "name": route.name or "inline route"}
        route_id = route if isinstance(route, str) else route.id
        row = self.stored_input("route", route_id, "route")
        self._use(ex, row)
        spec = row["spec"]
        out = {"file": self._ref(ex, row, "source", "route"), "segment_m": spec["segment_m"],
               "smooth_m": spec["smooth_m"], "name": row["name"]}
        if spec.get("waypoints"):
            out["waypoints"] = spec["waypoints"]
        if any(f["role"] == "dem" for f in row["files"]):
            out["dem"] = self._ref(ex, row, "dem", "route")
        if not isinstance(route, str):
            out["alternatives"] = route.alternatives
            if route.name:
                out["name"] = route.name
        return out

    def _sites(self, ex: Expanded, value: Any, kind: str, field_name: str) -> str:
        if isinstance(value, str):
            row = self.stored_input(kind, value, field_name)
            self._use(ex, row)
            return self._ref(ex, row, "source", kind)
        buf = io.StringIO()
        writer = csv.writer(buf, lineterminator="\n")
        writer.writerow(["lat", "lon", "name", "connector", "power_kw", "ports", "hours"])
        for s in value:
            writer.writerow([repr(s.lat), repr(s.lon), s.name, s.connector or "",
                             "" if s.power_kw is None else repr(s.power_kw),
                             "" if s.ports is None else s.ports, s.hours or ""])
        return self._inline(ex, buf.getvalue().encode(), ".csv", kind)

    def expand(self, kind: str, body: BaseModel) -> Expanded:
        """Turn a run request into a scenario on stored files, and hash its inputs."""
        from tripsim.io.vehicle_file import parse_vehicle

        req = body.model_dump(mode="json", exclude_unset=True)
        ex = Expanded(kind, {})
        sc: dict[str, Any] = {k: v for k, v in req.items()
                              if k not in ("route", "vehicle", "weather", "plan")}
        sc["kind"] = kind
        sc["route"] = self._route(ex, body.route)
        vehicle = body.vehicle
        if isinstance(vehicle, str):
            row = self.stored_input("vehicle", vehicle, "vehicle")
            self._use(ex, row)
            sc["vehicle"] = row["spec"]["vehicle"]
        else:
            try:
                parse_vehicle(vehicle, "vehicle")
            except TripsimInputError as exc:
                raise ProblemError(422, exc.problem, field="vehicle") from None
            sc["vehicle"] = vehicle
        weather = body.weather
        if weather is not None:
            source = weather if isinstance(weather, str) else weather.source
            spec: dict[str, Any] = {"source": "clear-sky"}
            if source != "clear-sky":
                row = self.stored_input("weather", source, "weather")
                self._use(ex, row)
                spec["source"] = self._ref(ex, row, "source", "weather")
            if not isinstance(weather, str):
                spec["cloud"] = weather.cloud
            sc["weather"] = spec
        plan = getattr(body, "plan", None)
        if plan is not None:
            p = req["plan"]
            sc["plan"] = {**{k: v for k, v in p.items() if k not in ("chargers", "lodging")},
                          "chargers": self._sites(ex, plan.chargers, "chargers",
                                                  "plan.chargers")}
            if plan.lodging is not None:
                sc["plan"]["lodging"] = self._sites(ex, plan.lodging, "lodgings",
                                                    "plan.lodging")
        if kind == "fleet":
            sc.setdefault("fleet", {})
        ex.scenario = sc
        canonical = json.dumps({"kind": kind, "scenario": sc, "tripsim": tripsim.__version__},
                               sort_keys=True, separators=(",", ":"))
        ex.input_hash = sha256(canonical.encode())
        self._validate(ex)
        return ex

    @staticmethod
    def _validate(ex: Expanded) -> None:
        """Validate the scenario here, so a bad request is a 422 before any work."""
        from pydantic import ValidationError
        from tripsim_api.problems import conflict_problem

        from tripsim.options import OptionConflict, raw_errors
        from tripsim.scenario import Scenario

        try:
            with raw_errors():
                Scenario.model_validate(ex.scenario)
        except (ValidationError, OptionConflict) as exc:
            raise conflict_problem(exc) from None

    def submit_run(self, kind: str, body: BaseModel, *, wait: bool | float) -> tuple[str, Any]:
        """The stored run with the same inputs, or a new job (waited for when asked).

        Returns ("stored", row), ("run", row) once done, or ("job", id).
        """
        ex = self.expand(kind, body)
        known = self.recent_hashes.get(ex.input_hash)
        if known is not None:
            return "stored", {"id": known, "kind": kind, "stub": True}
        stored = self.store.find_run(ex.input_hash)
        if stored is not None:
            self.recent_hashes.put(ex.input_hash, stored["id"])
            return "stored", stored
        active = self.store.active_job(ex.input_hash)
        if active is not None and self.jobs.done_future(active["id"]) is not None:
            return self._outcome(active["id"], wait)
        request = body.model_dump(mode="json", exclude_unset=True)
        submitted = time.perf_counter()

        def store_result(job_id: str, output: dict[str, Any]) -> None:
            t0 = time.perf_counter()
            prefix = RUN_KINDS[kind][1]
            title = ex.scenario.get("name") or ex.scenario["route"].get("name") or kind
            run = {"id": new_id(prefix), "kind": kind, "name": title,
                   "input_hash": ex.input_hash, "created_at": now(),
                   "tripsim_version": tripsim.__version__, "request": request,
                   "scenario": ex.scenario, "inputs": ex.used, "payload": output["payload"],
                   "text": output["text"], "exit_code": output["exit_code"],
                   "timings": {**output["timings"],
                               "wait_and_run_s": round(t0 - submitted, 4)},
                   "caution": CAUTION}
            self.store.add_run(run, [*output["files"], *ex.blobs], job_id=job_id)

        job_id = self.jobs.submit(kind, request, work.run_scenario,
                                  (ex.scenario, ex.paths, ex.names), {}, store_result,
                                  input_hash=ex.input_hash)
        return self._outcome(job_id, wait)

    def _outcome(self, job_id: str, wait: bool | float) -> tuple[str, Any]:
        """Wait a while for a job: ("job", id), or its stored result.

        ``wait``: seconds, or True for the service's ``sync_wait_s``, False for none.
        """
        seconds = self.settings.sync_wait_s if wait is True else float(wait)
        done = self.jobs.done_future(job_id)
        if seconds > 0 and done is not None:
            try:
                done.result(timeout=seconds)
            except TimeoutError:
                return "job", job_id
        job = self.store.get_job(job_id)
        if job is None or job["state"] in ("queued", "running"):
            return "job", job_id
        if job["state"] == "failed" and job["problem"] and wait:
            p = job["problem"]
            raise ProblemError(int(p.get("status", 500)), p.get("detail", "failed"),
                               title=p.get("title"), errors=p.get("errors"))
        if job["state"] == "done" and job["result_id"]:
            kind = job["result_kind"]
            if kind in RUN_KINDS:
                row = self.store.get_run(kind, job["result_id"])
                return ("run", row) if row is not None else ("job", job_id)
            row = self.store.get_input(kind, job["result_id"])
            return ("input", row) if row is not None else ("job", job_id)
        return "job", job_id

    def run_file(self, kind: str, run_id: str, role: str) -> dict[str, Any] | None:
        """A file of a run, or None.

        A trace's CSV or GeoJSON is made from its Parquet when first asked for, and
        stored with the run.
        """
        row = self.store.run_file(kind, run_id, role)
        if row is not None or role not in work.DERIVED or (kind, role) == ("plan", "geojson"):
            return row
        with self._deriving:
            row = self.store.run_file(kind, run_id, role)
            if row is None:
                source = self.store.run_file(kind, run_id, "trace.parquet")
                if source is None:
                    return None
                blob = work.derive_trace_file(self.store.blob(source["sha256"])[0], role)
                row = self.store.add_run_file(run_id, blob)
        return row

    def wait_for(self, job_id: str, timeout_s: float) -> None:
        """Block until a job of this service has its outcome stored (or the time is up)."""
        done = self.jobs.done_future(job_id)
        if done is not None:
            with contextlib.suppress(TimeoutError):
                done.result(timeout=timeout_s)

