"""Load benchmark of the service (a measurement, not a test): ``python -m tripsim_api.bench``.

Starts ``tripsim serve`` on loopback with a new store, stores the demo's inputs (the
route over the pass on the Tamsreach network, with its elevation raster, a vehicle,
chargers, lodgings and the weather year), makes one simulation and one plan, then sends
requests from concurrent clients for a while and reports, for each kind of request:
requests, errors (anything but 2xx), throughput and latency percentiles.

Kinds: a stored simulation (``GET /simulations/{id}``); a plan asked again with the same
inputs (``POST /plans``: validation, the input hash, the stored result); a plan's map
page; and new simulations that are computed each time (a new departure each).
Everything stays on this machine; every loop is bounded in time.
"""

from __future__ import annotations

import argparse
import contextlib
import http.client
import json
import os
import socket
import subprocess
import sys
import tempfile
import threading
import time
import urllib.parse
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

import httpx
import numpy as np

__all__ = ["bench_service", "run_load"]

DEMO = Path(__file__).resolve().parent.parent / "routes_demo"
PASS_WAYPOINTS = "41.2,-31.6;41.238669,-30.030016;41.2,-29.331582"
DEPART = "2026-07-14T08:00:00-02:00"

Request = Callable[[int], tuple[str, str, dict[str, Any]]]


def _client(base: urllib.parse.SplitResult, make: Request, deadline: float, worker: int,
            out: list[tuple[float, int]], timeout_s: float) -> None:
    """One client: a kept-alive connection, one request after the other, until the deadline."""
    conn = http.client.HTTPConnection(base.hostname, base.port, timeout=timeout_s)
    n = 0
    try:
        while time.perf_counter() < deadline:
            method, url, kwargs = make(worker * 1_000_000 + n)
            n += 1
            body, headers = None, {"Connection": "keep-alive", **kwargs.get("headers", {})}
            if "json" in kwargs:
                body = json.dumps(kwargs["json"]).encode()
                headers["Content-Type"] = "application/json"
            t0 = time.perf_counter()
            try:
                conn.request(method, url, body=body, headers=headers)
                response = conn.getresponse()
                response.read()
                status = response.status
            except (OSError, http.client.HTTPException):
                status = 0
                conn.close()
                conn = http.client.HTTPConnection(base.hostname, base.port, timeout=timeout_s)
            out.append((time.perf_counter() - t0, status))
    finally:
        conn.close()


def run_load(base_url: str, make: Request, *, clients: int = 20, seconds: float = 30.0,
             timeout_s: float = 120.0) -> dict[str, Any]:
    """Send requests from concurrent clients for a while; count and time them.

    Each client is a thread with its own kept-alive connection (the standard library's
    HTTP client: little work per request, so the figures are the server's).

    Parameters
    ----------
    base_url : str
        The service, on this machine (``http://127.0.0.1:PORT``).
    make : callable
        ``make(i) -> (method, path, {"json": body} or {})`` for the i-th request.
    clients, seconds : int, float
        Concurrent clients, and how long they send.
    timeout_s : float
        Longest wait for one answer.

    Returns
    -------
    dict
        ``requests``, ``errors`` (not 2xx), ``per_s``, ``p50_ms``, ``p95_ms``,
        ``max_ms``, ``statuses``.
    """
    base = urllib.parse.urlsplit(base_url)
    if base.hostname not in ("127.0.0.1", "localhost", "::1"):
        raise ValueError(f"{base_url}: the benchmark sends only to this machine")
    out: list[tuple[float, int]] = []
    deadline = time.perf_counter() + seconds
    t0 = time.perf_counter()
    threads = [threading.Thread(target=_client, args=(base, make, deadline, w, out, timeout_s))
               for w in range(clients)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    wall = time.perf_counter() - t0
    times = np.array([t for t, _ in out]) * 1000.0
    statuses: dict[str, int] = {}
    for _, s in out:
        statuses[str(s)] = statuses.get(str(s), 0) + 1
    errors = sum(1 for _, s in out if not 200 <= s < 300)

    def pct(q: float) -> float:
        return round(float(np.percentile(times, q)), 1) if len(times) else float("nan")

    return {"requests": len(out), "errors": errors, "per_s": round(len(out) / wall, 1),
            "p50_ms": pct(50), "p95_ms": pct(95),
            "max_ms": round(float(times.max()), 1) if len(times) else float("nan"),
            "statuses": statuses}


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def _server(folder: Path, workers: int | None) -> Iterator[str]:
    port = _free_port()
    cmd = [sys.executable, "-m", "tripsim.cli", "serve", "--port", str(port),
           "--db", str(folder / "bench.sqlite3"), "--queue", "64"]
    if workers:
        cmd += ["--workers", str(workers)]
    with (folder / "server.log").open("wb") as log:
        proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT)
        base = f"http://127.0.0.1:{port}"
        try:
            end = time.monotonic() + 60
            while time.monotonic() < end:
                with contextlib.suppress(httpx.HTTPError):
                    if httpx.get(f"{base}/health", timeout=1).status_code == 200:
                        break
                if proc.poll() is not None:
                    raise RuntimeError((folder / "server.log").read_text())
                time.sleep(0.2)
            yield base
        finally:
            proc.terminate()
            try:
                proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                proc.kill()


def _stored(http: httpx.Client, r: httpx.Response) -> dict[str, Any]:
    body = r.json()
    if r.status_code != 202:
        r.raise_for_status()
        return body
    end = time.monotonic() + 300
    while body["state"] in ("queued", "running") and time.monotonic() < end:
        time.sleep(0.2)
        body = http.get(body["href"]).json()
    if body["state"] != "done":
        raise RuntimeError(f"job {body['id']}: {body['state']} ({body.get('problem')})")
    return http.get(body["result"]).json()


def _upload(http: httpx.Client, collection: str, path: Path) -> str:
    return _stored(http, http.post(f"/{collection}",
                                   files={"file": (path.name, path.read_bytes())}))["id"]


def bench_service(*, clients: int = 20, seconds: float = 30.0, workers: int | None = None,
                  kinds: tuple[str, ...] = ("stored simulation", "plan, same inputs",
                                            "plan map page", "new simulation"),
                  base_url: str | None = None) -> dict[str, Any]:
    """Start a server on the demo's inputs and measure each kind of request.

    ``base_url``: measure a server that runs already (on this machine) instead.
    """
    with contextlib.ExitStack() as stack:
        if base_url is None:
            tmp = stack.enter_context(tempfile.TemporaryDirectory(prefix="tripsim-bench-"))
            base_url = stack.enter_context(_server(Path(tmp), workers))
        return _measure(base_url, clients, seconds, kinds)


def _measure(base: str, clients: int, seconds: float, kinds: tuple[str, ...]
             ) -> dict[str, Any]:
    http = httpx.Client(base_url=base, timeout=300)
    ids = {"vehicle": _upload(http, "vehicles", DEMO / "vehicles" /
                              "harbour_crossover.toml"),
           "chargers": _upload(http, "chargers", DEMO / "tamsreach.osm"),
           "lodgings": _upload(http, "lodgings", DEMO / "lodgings.csv"),
           "weather": _upload(http, "weather", DEMO / "tamsreach.epw")}
    ids["route"] = _stored(http, http.post("/routes", data={"waypoints": PASS_WAYPOINTS},
                                           files={"file": ("tamsreach.osm", (
                                               DEMO / "tamsreach.osm").read_bytes()),
                                               "dem": ("tamsreach_dem.tif", (
                                                   DEMO / "tamsreach_dem.tif"
                                               ).read_bytes())}))["id"]
    sim_body = {"route": ids["route"], "vehicle": ids["vehicle"],
                "weather": ids["weather"], "depart": DEPART}
    plan_body = {**sim_body, "start_soc": 0.45,
                 "plan": {"chargers": ids["chargers"], "lodging": ids["lodgings"]}}
    sim = _stored(http, http.post("/simulations", json=sim_body))
    plan = _stored(http, http.post("/plans", json=plan_body))
    http.get(plan["links"]["map"]).raise_for_status()

    def new_simulation(i: int) -> tuple[str, str, dict[str, Any]]:
        minute = i % 1_000_000
        depart = f"2026-07-{14 + minute // 1440 % 14:02d}T{minute // 60 % 24:02d}:" \
                 f"{minute % 60:02d}:00-02:00"
        return "POST", "/simulations", {"json": {**sim_body, "depart": depart,
                                                 "start_soc": 0.9 - (i // 1_000_000)
                                                 * 0.01},
                                        "headers": {"Prefer": "wait=50"}}

    makers: dict[str, Request] = {
        "stored simulation": lambda i: ("GET", sim["links"]["self"], {}),
        "plan, same inputs": lambda i: ("POST", "/plans", {"json": plan_body}),
        "plan map page": lambda i: ("GET", plan["links"]["map"], {}),
        "new simulation": new_simulation,
    }
    out = {"clients": clients, "seconds": seconds,
           "workers": http.get("/health").json()["workers"],
           "route_km": round(sim["result"]["distance_km"], 1), "kinds": {}}
    for kind in kinds:
        out["kinds"][kind] = run_load(base, makers[kind], clients=clients,
                                      seconds=seconds)
    return out


def main(argv: list[str] | None = None) -> int:
    """``python -m tripsim_api.bench``: print the figures."""
    p = argparse.ArgumentParser(prog="python -m tripsim_api.bench",
                                description="Load benchmark of tripsim serve on loopback.")
    p.add_argument("--clients", type=int, default=20, help="concurrent clients (1-200)")
    p.add_argument("--seconds", type=float, default=30.0, help="per kind of request (1-600)")
    p.add_argument("--workers", type=int, help="worker processes of the server")
    p.add_argument("--json", action="store_true", help="print the figures as JSON")
    args = p.parse_args(argv)
    if not (1 <= args.clients <= 200 and 1 <= args.seconds <= 600):
        p.error("--clients must be 1-200 and --seconds 1-600")
    figures = bench_service(clients=args.clients, seconds=args.seconds, workers=args.workers)
    if args.json:
        print(json.dumps(figures, indent=2))
        return 0
    print(f"tripsim serve on loopback: {figures['clients']} clients, {figures['seconds']:g} s "
          f"per kind, {figures['workers']} workers, the demo route over the pass "
          f"({figures['route_km']} km)")
    print(f"{'request':<20} {'requests':>9} {'errors':>7} {'per s':>7} {'p50 ms':>8} "
          f"{'p95 ms':>8} {'max ms':>8}")
    for kind, f in figures["kinds"].items():
        print(f"{kind:<20} {f['requests']:>9} {f['errors']:>7} {f['per_s']:>7} "
              f"{f['p50_ms']:>8} {f['p95_ms']:>8} {f['max_ms']:>8}")
    return 0


if __name__ == "__main__":  # pragma: no cover
    os.environ.setdefault("PYTHONUNBUFFERED", "1")
    sys.exit(main())
