"""The HTTP service (FastAPI): stored inputs, runs, jobs, files and map pages.

:func:`create_app` builds the application for some :class:`~tripsim_api.settings.Settings`.
Endpoints are plain (blocking) functions, which FastAPI runs in its thread pool; the
computing happens in worker processes (:mod:`tripsim_api.jobs`), so the event loop only
moves bytes.  A request that computes waits up to ``sync_wait_s`` for its result
(201); longer work answers 202 with a job (``Prefer: respond-async`` asks for that
at once; fleet years, alternatives and speed-factor comparisons always do).
"""

from __future__ import annotations

import json
from collections.abc import AsyncIterator
from contextlib import asynccontextmanager
from typing import Annotated, Any, Literal

from fastapi import FastAPI, File, Form, Header, Path, Query, Request, UploadFile
from fastapi.encoders import jsonable_encoder
from fastapi.openapi.docs import get_swagger_ui_html
from fastapi.responses import HTMLResponse, Response
from starlette.concurrency import run_in_threadpool
from tripsim_api import models, pages
from tripsim_api.jobs import QueueFull
from tripsim_api.problems import ProblemError, add_guards, install_handlers
from tripsim_api.service import INPUT_KINDS, RUN_KINDS, Recent, Service, Upload
from tripsim_api.settings import Settings
from tripsim_api.store import SCHEMA_VERSION

import tripsim
from tripsim.caution import CAUTION

__all__ = ["create_app"]

PROBLEM = {"model": models.Problem, "content": {"application/problem+json": {}},
           "description": "a problem document (RFC 9457)"}
ERRORS: dict[int | str, dict[str, Any]] = {"4XX": PROBLEM, "5XX": PROBLEM}
Id = Annotated[str, Path(min_length=1, max_length=64, description="the id")]
Limit = Annotated[int, Query(ge=1, le=1000, description="at most this many")]
Offset = Annotated[int, Query(ge=0, le=1_000_000_000, description="skip this many")]
Prefer = Annotated[str | None, Header(max_length=200, description='"respond-async": answer '
                                      '202 with a job at once; "wait=N": wait up to N s '
                                      "for the result (RFC 7240)")]
Format = Annotated[Literal["csv", "parquet"], Query(description="file format")]
_COLLECTION = {**{k: v[0] for k, v in INPUT_KINDS.items()},
               **{k: v[0] for k, v in RUN_KINDS.items()}}


def _wait_s(prefer: str | None, settings: Settings, *, always_async: bool = False) -> float:
    """How long a request waits for its result (RFC 7240 ``Prefer``).

    ``respond-async``: not at all; ``wait=N``: N seconds (within the request's time
    limit); else the service's ``sync_wait_s``.
    """
    text = (prefer or "").lower()
    if always_async or "respond-async" in text:
        return 0.0
    for part in text.replace(";", ",").split(","):
        key, _, value = part.strip().partition("=")
        if key == "wait" and value.strip().isdigit():
            return min(float(value), max(0.0, settings.request_timeout_s - 5.0))
    return settings.sync_wait_s


def _files(base: str, files: list[dict[str, Any]], hrefs: dict[str, str]) -> list[dict]:
    return [{"role": f["role"], "filename": f["filename"], "media_type": f["media_type"],
             "size": int(f["size"]), "sha256": f["sha256"], "href": hrefs.get(f["role"])}
            for f in files]


def input_out(row: dict[str, Any]) -> dict[str, Any]:
    """A stored input as the API shows it."""
    base = f"/{_COLLECTION[row['kind']]}/{row['id']}"
    hrefs = {"source": f"{base}/file", "segments": f"{base}/segments"}
    return {"id": row["id"], "kind": row["kind"], "name": row["name"],
            "created_at": row["created_at"], "info": row["info"],
            "spec": {k: v for k, v in row["spec"].items() if k != "vehicle"} |
                    ({"vehicle": row["spec"]["vehicle"]} if "vehicle" in row["spec"] else {}),
            "files": _files(base, row.get("files", []), hrefs), "href": base}


_RUN_FILES = {"trace.csv": "trace?format=csv", "trace.parquet": "trace?format=parquet",
              "geojson": "geojson", "stops.csv": "stops", "page": "map",
              "daily.csv": "daily?format=csv", "daily.parquet": "daily?format=parquet",
              "runs.csv": "runs?format=csv", "runs.parquet": "runs?format=parquet"}


def run_out(row: dict[str, Any]) -> dict[str, Any]:
    """A stored run as the API shows it."""
    base = f"/{_COLLECTION[row['kind']]}/{row['id']}"
    hrefs = {role: f"{base}/{tail}" for role, tail in _RUN_FILES.items()}
    links = {"self": base}
    roles = {f["role"] for f in row["files"]}
    if "trace.parquet" in roles:  # made from the trace when first asked for
        links["trace_csv"] = hrefs["trace.csv"]
        links["geojson"] = hrefs["geojson"]
    for f in row["files"]:
        if f["role"] in hrefs:
            key = "map" if f["role"] == "page" else f["role"].replace(".", "_")
            links[key] = hrefs[f["role"]]
    return {"id": row["id"], "kind": row["kind"], "name": row["name"],
            "created_at": row["created_at"], "tripsim_version": row["tripsim_version"],
            "input_hash": row["input_hash"], "exit_code": row["exit_code"],
            "request": row["request"], "inputs": row["inputs"], "timings": row["timings"],
            "caution": row["caution"], "result": row["payload"],
            "files": _files(base, row["files"], hrefs), "links": links}


def job_out(row: dict[str, Any]) -> dict[str, Any]:
    """A job as the API shows it."""
    result = None
    if row["result_id"] and row["result_kind"] in _COLLECTION:
        result = f"/{_COLLECTION[row['result_kind']]}/{row['result_id']}"
    return {"id": row["id"], "kind": row["kind"], "state": row["state"],
            "progress": min(max(float(row["progress"]), 0.0), 1.0), "message": row["message"],
            "created_at": row["created_at"], "started_at": row["started_at"],
            "finished_at": row["finished_at"], "result": result, "problem": row["problem"],
            "href": f"/jobs/{row['id']}"}


def _json(body: Any, status: int = 200, headers: dict[str, str] | None = None) -> Response:
    return _encoded(_encode(body), status, headers)


def _encode(body: Any) -> bytes:
    return json.dumps(jsonable_encoder(body), ensure_ascii=False, allow_nan=False,
                      separators=(",", ":")).encode()


def _encoded(data: bytes, status: int = 200, headers: dict[str, str] | None = None
             ) -> Response:
    return Response(data, status_code=status, headers=headers, media_type="application/json")


def _answer(service: Service, outcome: tuple[str, Any], runs: Recent | None = None
            ) -> Response:
    """201 with the result (200: stored before, same inputs), or 202 with the job."""
    what, value = outcome
    created = what != "stored"
    if what == "job":
        job = service.store.get_job(value)
        return _json(job_out(job), 202, {"Location": f"/jobs/{value}", "Retry-After": "1"})
    if what == "input":
        body = input_out(value)
        return _json(body, 201, {"Location": body["href"]})
    href = f"/{_COLLECTION[value['kind']]}/{value['id']}"
    data = runs.get(value["id"]) if runs is not None else None
    if data is None:
        row = service.store.get_run(value["kind"], value["id"]) if value.get("stub") else value
        if row is None:
            raise ProblemError(404, "the stored result was deleted meanwhile; ask again")
        data = _encode(run_out(row))
    if runs is not None:
        runs.put(value["id"], data)
    headers = {"Location": href}
    if not created:
        headers["Tripsim-Stored"] = "same inputs: the stored result"
    return _encoded(data, 201 if created else 200, headers)


def _queue_full(exc: QueueFull) -> ProblemError:
    return ProblemError(429, str(exc), headers={"Retry-After": str(exc.retry_after_s)})


def _read(upload: UploadFile | None, field: str, cap: int) -> Upload | None:
    if upload is None:
        return None
    data = upload.file.read(cap + 1)
    if len(data) > cap:
        raise ProblemError(413, f"{field}: larger than {cap} bytes", field=field)
    return Upload(upload.filename or field, data)


def _blob_response(service: Service, row: dict[str, Any] | None, request: Request,
                   what: str) -> Response:
    if row is None:
        raise ProblemError(404, f"this run has no {what}")
    accepts_gzip = "gzip" in request.headers.get("accept-encoding", "").lower()
    data, encoding = service.store.blob(row["sha256"], decoded=not accepts_gzip)
    headers = {"ETag": f'"{row["sha256"]}"', "Cache-Control": "private, max-age=3600",
               "Content-Disposition": f'attachment; filename="{row["filename"]}"'}
    if encoding == "gzip":
        headers["Content-Encoding"] = "gzip"
        headers["Vary"] = "Accept-Encoding"
    return Response(data, media_type=row["media_type"], headers=headers)


def _assets() -> dict[str, tuple[bytes, str]]:
    """Leaflet and Swagger UI files, read once, sent from memory."""
    from pathlib import Path as FsPath

    from tripsim.io.web_assets import leaflet_files

    out = {f"leaflet/{name}": (path.read_bytes(), media)
           for name, (path, media) in leaflet_files().items()}
    swagger = FsPath(__file__).resolve().parent / "static" / "swagger"
    media = {".js": "text/javascript", ".css": "text/css", ".png": "image/png"}
    for path in sorted(swagger.glob("*")):
        if path.suffix in media:
            out[f"swagger/{path.name}"] = (path.read_bytes(), media[path.suffix])
    return out


def create_app(settings: Settings | None = None) -> FastAPI:  # noqa: C901 - the routes
    """The service as an ASGI application."""
    settings = settings or Settings()
    state: dict[str, Any] = {}

    @asynccontextmanager
    async def lifespan(app: FastAPI) -> AsyncIterator[None]:
        state["service"] = Service(settings)
        try:
            yield
        finally:
            state.pop("service").close()

    app = FastAPI(title="tripsim", version=tripsim.__version__, lifespan=lifespan,
                  docs_url=None, redoc_url=None, description=(
                      "Electric-vehicle trips on real roads: store vehicles, routes, charger "
                      "sets, lodgings and weather; run simulations, charging plans and fleet "
                      "years on them; fetch results as JSON, traces as CSV or Parquet, "
                      f"GeoJSON and a map page per run.\n\nCaution: {CAUTION}"))
    install_handlers(app)
    tile_origin = None
    if settings.tiles:
        from urllib.parse import urlsplit

        parts = urlsplit(settings.tiles.replace("{s}", "a"))
        tile_origin = f"{parts.scheme}://{parts.netloc}".replace("://a.", "://*.")
    add_guards(app, api_key=settings.api_key, max_body=settings.max_upload_bytes,
               timeout_s=settings.request_timeout_s, tile_origin=tile_origin)
    assets = _assets()
    page_cache = Recent(size=64)  # drawn map pages (drawing takes tens of milliseconds)
    run_cache = Recent(size=512)  # runs as sent (encoding a large result takes a while)

    def svc() -> Service:
        service = state.get("service")
        if service is None:
            raise ProblemError(503, "the service is starting or stopping",
                               headers={"Retry-After": "1"})
        return service

    # --- service --------------------------------------------------------------------------

    @app.get("/health", response_model=models.Health, tags=["service"], responses=ERRORS)
    async def health() -> dict[str, Any]:
        """Is the service up, and how busy."""
        s = svc()
        return {"status": "ok", "tripsim_version": tripsim.__version__,
                "schema_version": SCHEMA_VERSION, "store": s.store.engine.dialect.name,
                "workers": s.jobs.workers, "jobs_active": s.jobs.active(),
                "queue_size": s.jobs.queue_size}

    @app.get("/docs", include_in_schema=False)
    def docs() -> HTMLResponse:
        return get_swagger_ui_html(openapi_url="/openapi.json", title="tripsim API",
                                   swagger_js_url="/assets/swagger/swagger-ui-bundle.js",
                                   swagger_css_url="/assets/swagger/swagger-ui.css",
                                   swagger_favicon_url="/assets/swagger/favicon-32x32.png")

    @app.get("/assets/{name:path}", include_in_schema=False)
    def asset(name: str) -> Response:
        if name not in assets:
            raise ProblemError(404, f"no asset {name!r}")
        data, media = assets[name]
        return Response(data, media_type=media,
                        headers={"Cache-Control": "public, max-age=86400"})

    # --- stored inputs --------------------------------------------------------------------

    def _add_input_routes(kind: str) -> None:  # noqa: C901 - one set of routes per kind
        collection, _prefix, suffixes = INPUT_KINDS[kind]
        tag = collection

        @app.get(f"/{collection}", response_model=models.InputList, tags=[tag],
                 responses=ERRORS, name=f"list_{collection}",
                 summary=f"List stored {collection}")
        def list_inputs(limit: Limit = 100, offset: Offset = 0) -> dict[str, Any]:
            rows, total = svc().store.list_inputs(kind, limit=limit, offset=offset)
            return {"items": [input_out({**r, "files": []}) for r in rows], "total": total,
                    "limit": limit, "offset": offset}

        @app.get(f"/{collection}/{{input_id}}", response_model=models.InputOut, tags=[tag],
                 responses=ERRORS, name=f"get_{kind}", summary=f"A stored {kind}")
        def get_input(input_id: Id) -> dict[str, Any]:
            return input_out(svc().stored_input(kind, input_id))

        @app.delete(f"/{collection}/{{input_id}}", status_code=204, tags=[tag],
                    responses=ERRORS, name=f"delete_{kind}", response_class=Response,
                    summary=f"Delete a stored {kind} (runs keep their copy)")
        def delete_input(input_id: Id) -> Response:
            svc().forget(input_id)
            if not svc().store.delete_input(kind, input_id):
                raise ProblemError(404, f"no stored {kind} {input_id!r}")
            return Response(status_code=204)

        @app.get(f"/{collection}/{{input_id}}/file", tags=[tag], name=f"file_of_{kind}",
                 responses={200: {"content": {"application/octet-stream": {}},
                                  "description": "the file as uploaded"}, **ERRORS},
                 summary=f"The {kind} file as uploaded")
        def input_file(input_id: Id, request: Request) -> Response:
            row = svc().stored_input(kind, input_id)
            f = next((f for f in row["files"] if f["role"] == "source"), None)
            return _blob_response(svc(), f, request, "file")

        created = {201: {"model": models.InputOut, "description": "stored"},
                   202: {"model": models.JobOut, "description": "being read: a job"},
                   **ERRORS}
        if kind == "vehicle":
            @app.post("/vehicles", status_code=201, response_model=None, tags=[tag],
                      responses={201: {"model": models.InputOut}, **ERRORS},
                      summary="Store a vehicle file (TOML, or the same tables as JSON)")
            def add_vehicle(file: Annotated[UploadFile, File(description="vehicle file: "
                                                              ".toml or .json")],
                            name: Annotated[str | None, Form(max_length=200)] = None
                            ) -> Response:
                s = svc()
                upload = _read(file, "file", settings.max_upload_bytes)
                row = s.add_vehicle(upload, name)  # type: ignore[arg-type]
                return _answer(s, ("input", row))
        elif kind == "route":
            @app.post("/routes", status_code=201, response_model=None, tags=[tag],
                      responses=created, summary="Store a route: GPX, GeoJSON, or an OSM "
                      "XML network with waypoints; kept with its segments, length and ascent")
            def add_route(
                file: Annotated[UploadFile, File(description="GPX, GeoJSON or OSM XML "
                                                 "(.osm, .osm.gz, .osm.bz2)")],
                waypoints: Annotated[str | None, Form(
                    max_length=5000, description='for OSM networks: "lat,lon;lat,lon;…"')
                ] = None,
                dem: Annotated[UploadFile | None, File(description="elevation raster "
                                                       "(GeoTIFF)")] = None,
                segment_m: Annotated[float, Form(ge=1.0, le=500.0)] = 25.0,
                smooth_m: Annotated[float, Form(ge=0.0, le=2000.0)] = 40.0,
                name: Annotated[str | None, Form(max_length=200)] = None,
                prefer: Prefer = None,
            ) -> Response:
                s = svc()
                cap = settings.max_upload_bytes
                try:
                    outcome = s.add_route(_read(file, "file", cap),  # type: ignore[arg-type]
                                          dem=_read(dem, "dem", cap) if dem and dem.filename
                                          else None, waypoints=waypoints, segment_m=segment_m,
                                          smooth_m=smooth_m, name=name,
                                          wait=_wait_s(prefer, settings))
                except QueueFull as exc:
                    raise _queue_full(exc) from None
                return _answer(s, outcome)

            @app.get("/routes/{input_id}/segments", tags=[tag], responses={
                200: {"content": {"text/csv": {}, "application/vnd.apache.parquet": {}},
                      "description": "one row a segment"}, **ERRORS},
                summary="The route's segments")
            def segments(input_id: Id, request: Request, format: Format = "csv") -> Response:
                import io

                import pandas as pd

                s = svc()
                row = s.stored_input("route", input_id)
                f = next(f for f in row["files"] if f["role"] == "segments")
                if format == "parquet":
                    return _blob_response(s, f, request, "segments")
                data, _ = s.store.blob(f["sha256"])
                text = pd.read_parquet(io.BytesIO(data)).to_csv(index=False,
                                                                 float_format="%.6g")
                return Response(text, media_type="text/csv", headers={
                    "Content-Disposition": 'attachment; filename="segments.csv"'})
        else:
            what = {"chargers": "charging sites: CSV or OSM XML", "lodgings": "lodgings: CSV",
                    "weather": "weather: EPW, TMY3 (.csv) or TMY2 (.tm2)"}[kind]

            def add_file(file: Annotated[UploadFile, File(description="the file")],
                         name: Annotated[str | None, Form(max_length=200)] = None,
                         prefer: Prefer = None) -> Response:
                s = svc()
                try:
                    outcome = s.add_sites(kind, _read(file, "file",  # type: ignore[arg-type]
                                                      settings.max_upload_bytes),
                                          name, wait=_wait_s(prefer, settings))
                except QueueFull as exc:
                    raise _queue_full(exc) from None
                return _answer(s, outcome)

            app.post(f"/{collection}", status_code=201, response_model=None, tags=[tag],
                     responses=created, name=f"add_{kind}",
                     summary=f"Store {what}")(add_file)

        del suffixes

    for kind in INPUT_KINDS:
        _add_input_routes(kind)

    # --- runs -----------------------------------------------------------------------------

    run_responses = {200: {"model": models.RunOut, "description": "stored before: the same "
                           "inputs"},
                     201: {"model": models.RunOut, "description": "computed and stored"},
                     202: {"model": models.JobOut, "description": "a background job"},
                     **ERRORS}

    def _submit(kind: str, body: Any, prefer: str | None, always_async: bool) -> Response:
        s = svc()
        try:
            outcome = s.submit_run(kind, body, wait=_wait_s(prefer, settings,
                                                              always_async=always_async))
        except QueueFull as exc:
            raise _queue_full(exc) from None
        return _answer(s, outcome, run_cache)

    @app.post("/simulations", status_code=201, response_model=None, tags=["simulations"],
              responses=run_responses, summary="Simulate a trip")
    def add_simulation(body: models.SimulationRequest, prefer: Prefer = None) -> Response:
        return _submit("simulate", body, prefer, False)

    @app.post("/plans", status_code=201, response_model=None, tags=["plans"],
              responses=run_responses, summary="Plan charging stops (and nights)")
    def add_plan(body: models.PlanRequest, prefer: Prefer = None) -> Response:
        slow = (not isinstance(body.route, str) and getattr(body.route, "alternatives", 1) > 1
                ) or bool(body.plan.speed_factors)
        return _submit("plan", body, prefer, slow)

    @app.post("/fleet-years", status_code=202, response_model=None, tags=["fleet years"],
              responses=run_responses, summary="A loop over a weather year (a job)")
    def add_fleet_year(body: models.FleetRequest, prefer: Prefer = None) -> Response:
        return _submit("fleet", body, prefer, True)

    def _add_run_routes(kind: str) -> None:  # noqa: C901 - one set of routes per kind
        collection, _ = RUN_KINDS[kind]
        tag = {"simulate": "simulations", "plan": "plans", "fleet": "fleet years"}[kind]

        @app.get(f"/{collection}", response_model=models.RunList, tags=[tag],
                 responses=ERRORS, name=f"list_{kind}", summary=f"Stored {collection}")
        def list_runs(limit: Limit = 100, offset: Offset = 0) -> dict[str, Any]:
            rows, total = svc().store.list_runs(kind, limit=limit, offset=offset)
            return {"items": [{**r, "href": f"/{collection}/{r['id']}"} for r in rows],
                    "total": total, "limit": limit, "offset": offset}

        @app.get(f"/{collection}/{{run_id}}", response_model=models.RunOut, tags=[tag],
                 responses=ERRORS, name=f"get_{kind}", summary="A stored run and its result",
                 response_class=Response)
        async def get_run(run_id: Id) -> Response:
            # Sent from memory on the event loop when kept; else read in a thread.
            data = run_cache.get(run_id)
            if data is None or not data.startswith(b'{"id":"%s","kind":"%s"' % (
                    run_id.encode(), kind.encode())):
                row = await run_in_threadpool(_run, kind, run_id)
                data = run_cache.put(run_id, _encode(run_out(row)))
            return _encoded(data, headers={"Cache-Control": "private, max-age=60"})

        @app.delete(f"/{collection}/{{run_id}}", status_code=204, response_class=Response,
                    tags=[tag], responses=ERRORS, name=f"delete_{kind}",
                    summary="Delete a stored run")
        def delete_run(run_id: Id) -> Response:
            run_cache.drop(run_id)
            page_cache.drop((kind, run_id))
            svc().forget(run_id)
            if not svc().store.delete_run(kind, run_id):
                raise ProblemError(404, f"no stored {kind} {run_id!r}")
            return Response(status_code=204)

        def file_route(path: str, roles: dict[str | None, str], media: dict[str, Any],
                       summary: str) -> None:
            def get_file(run_id: Id, request: Request, format: Format = "csv") -> Response:
                _run(kind, run_id)
                role = roles.get(format) or roles[None]
                row = svc().run_file(kind, run_id, role)
                return _blob_response(svc(), row, request, summary)

            def get_plain(run_id: Id, request: Request) -> Response:
                _run(kind, run_id)
                row = svc().run_file(kind, run_id, roles[None])
                return _blob_response(svc(), row, request, summary)

            app.get(f"/{collection}/{{run_id}}/{path}", tags=[tag], name=f"{path}_of_{kind}",
                    responses={200: {"content": media, "description": summary}, **ERRORS},
                    summary=summary)(get_file if len(roles) > 1 else get_plain)

        csv_or_parquet = {"text/csv": {}, "application/vnd.apache.parquet": {}}
        if kind in ("simulate", "plan"):
            file_route("trace", {"csv": "trace.csv", "parquet": "trace.parquet",
                                 None: "trace.csv"}, csv_or_parquet,
                       "the trace: one row a segment")
            file_route("geojson", {None: "geojson"}, {"application/geo+json": {}},
                       "route (and stops) as GeoJSON")

            @app.get(f"/{collection}/{{run_id}}/map", response_class=HTMLResponse, tags=[tag],
                     name=f"map_of_{kind}", responses={200: {"content": {"text/html": {}},
                                                             "description": "the map page"},
                                                       **ERRORS},
                     summary="The map page (renders with no network)")
            async def map_page(run_id: Id) -> HTMLResponse:
                cached = page_cache.get((kind, run_id))
                if cached is None:
                    cached = await run_in_threadpool(_draw, kind, run_id)
                return HTMLResponse(cached)

        if kind == "plan":
            file_route("stops", {None: "stops.csv"}, {"text/csv": {}}, "the stops as CSV")
        if kind == "fleet":
            file_route("daily", {"csv": "daily.csv", "parquet": "daily.parquet",
                                 None: "daily.csv"}, csv_or_parquet, "the daily table")
            file_route("runs", {"csv": "runs.csv", "parquet": "runs.parquet",
                                None: "runs.csv"}, csv_or_parquet, "every run of the year")

    def _draw(kind: str, run_id: str) -> bytes:
        """A run's map page, drawn from its stored page data (and kept)."""
        from tripsim.report.mapview import map_page_html

        _run(kind, run_id)
        row = svc().store.run_file(kind, run_id, "page")
        if row is None:
            raise ProblemError(404, "this run has no map: no plan keeps every constraint "
                               "(see its result's shortfall)")
        data = json.loads(svc().store.blob(row["sha256"])[0])
        page = map_page_html(data, assets=pages.LEAFLET, tiles=settings.tiles,
                             tile_attribution=settings.tile_attribution)
        return page_cache.put((kind, run_id), page.encode())

    def _run(kind: str, run_id: str) -> dict[str, Any]:
        row = svc().store.get_run(kind, run_id)
        if row is None:
            raise ProblemError(404, f"no stored {kind} {run_id!r}")
        return row

    for kind in RUN_KINDS:
        _add_run_routes(kind)

    # --- jobs -----------------------------------------------------------------------------

    @app.get("/jobs", response_model=models.JobList, tags=["jobs"], responses=ERRORS,
             summary="Jobs, newest first")
    def list_jobs(limit: Limit = 100, offset: Offset = 0,
                  state: Annotated[Literal["queued", "running", "done", "failed",
                                           "cancelled"] | None, Query()] = None
                  ) -> dict[str, Any]:
        rows, total = svc().store.list_jobs(state=state, limit=limit, offset=offset)
        return {"items": [job_out(r) for r in rows], "total": total, "limit": limit,
                "offset": offset}

    def _job(job_id: str) -> dict[str, Any]:
        row = svc().store.get_job(job_id)
        if row is None:
            raise ProblemError(404, f"no job {job_id!r}")
        return row

    @app.get("/jobs/{job_id}", response_model=models.JobOut, tags=["jobs"], responses=ERRORS,
             summary="A job: its state, progress and result")
    def get_job(job_id: Id) -> dict[str, Any]:
        return job_out(_job(job_id))

    @app.post("/jobs/{job_id}/cancel", response_model=models.JobOut, tags=["jobs"],
              responses=ERRORS, summary="Cancel a queued or running job")
    def cancel_job(job_id: Id) -> dict[str, Any]:
        row = _job(job_id)
        if row["state"] not in ("queued", "running"):
            raise ProblemError(409, f"the job is {row['state']} already")
        s = svc()
        if not s.jobs.cancel(job_id):
            raise ProblemError(409, "the job belongs to another service, or is storing "
                               "its result")
        s.wait_for(job_id, 10.0)
        return job_out(_job(job_id))

    @app.get("/jobs/{job_id}/result", status_code=303, response_class=Response, tags=["jobs"],
             responses={303: {"description": "where the result is"}, **ERRORS},
             summary="Go to the job's result")
    def job_result(job_id: Id) -> Response:
        row = job_out(_job(job_id))
        if row["result"] is None:
            status = 409 if row["state"] in ("queued", "running", "cancelled") else 404
            raise ProblemError(status, f"the job is {row['state']}: no result"
                               + (f" ({row['problem'].get('detail')})" if row["problem"]
                                  else ""))
        return Response(status_code=303, headers={"Location": row["result"]})

    # --- pages ----------------------------------------------------------------------------

    @app.get("/", response_class=HTMLResponse, tags=["pages"], responses=ERRORS,
             summary="Stored runs with links to their pages, and a form to run")
    def index() -> HTMLResponse:
        s = svc()
        rows, total = s.store.list_runs(limit=200)
        inputs = {k: s.store.list_inputs(k, limit=500)[0] for k in INPUT_KINDS}
        return HTMLResponse(pages.index_page(rows, total, inputs, _COLLECTION))

    @app.post("/ui/runs", status_code=303, response_class=Response, tags=["pages"],
              responses={303: {"description": "to the result's map, or the job's page"},
                         **ERRORS}, summary="Run from the front page's form")
    def run_from_form(
        kind: Annotated[Literal["plan", "simulate"], Form()],
        route: Annotated[str, Form(min_length=1, max_length=64)],
        vehicle: Annotated[str, Form(min_length=1, max_length=64)],
        weather: Annotated[str, Form(max_length=64)] = "",
        chargers: Annotated[str, Form(max_length=64)] = "",
        lodging: Annotated[str, Form(max_length=64)] = "",
        depart: Annotated[str, Form(max_length=64)] = "",
        start_soc: Annotated[str, Form(max_length=16)] = "",
        speed_kph: Annotated[str, Form(max_length=16)] = "",
    ) -> Response:
        from pydantic import ValidationError
        from tripsim_api.problems import field_problems

        data: dict[str, Any] = {"route": route, "vehicle": vehicle}
        if weather:
            data["weather"] = weather
        if depart:
            data["depart"] = depart
        if start_soc:
            data["start_soc"] = start_soc
        if speed_kph:
            data["speed_kph"] = speed_kph
        model: type[Any] = models.SimulationRequest
        if kind == "plan":
            model = models.PlanRequest
            if not chargers:
                raise ProblemError(422, "a plan needs a charger set", field="chargers")
            data["plan"] = {"chargers": chargers, **({"lodging": lodging} if lodging else {})}
        try:
            body = model.model_validate(data)
        except ValidationError as exc:
            errors = field_problems(list(exc.errors()), model, prefix=False)
            raise ProblemError(422, f"{errors[0]['field']}: {errors[0]['detail']}",
                               errors=errors) from None
        s = svc()
        try:
            what, value = s.submit_run(kind, body, wait=True)
        except QueueFull as exc:
            raise _queue_full(exc) from None
        if what in ("run", "stored"):
            target = f"/{_COLLECTION[kind]}/{value['id']}"
            return Response(status_code=303, headers={
                "Location": f"{target}/map" if value["exit_code"] == 0 else target})
        return Response(status_code=303, headers={"Location": f"/ui/jobs/{value}"})

    @app.get("/ui/jobs/{job_id}", response_class=HTMLResponse, tags=["pages"],
             responses=ERRORS, summary="A job's page (refreshes until done)")
    def job_page(job_id: Id) -> HTMLResponse:
        row = _job(job_id)
        out = job_out(row)
        href = out["result"]
        if href and row["result_kind"] in ("simulate", "plan"):
            href += "/map"
        return HTMLResponse(pages.job_page(row, href))

    return app

