"""Fixtures of the service tests: one app with its worker pool for the session, the demo's
inputs stored in it, and helpers that start a real server process."""

from __future__ import annotations

import contextlib
import os
import socket
import subprocess
import sys
import time
from collections.abc import Iterator
from pathlib import Path

import httpx
import pytest
from fastapi.testclient import TestClient
from tripsim_api.app import create_app
from tripsim_api.settings import Settings

ROOT = Path(__file__).resolve().parents[2]
DEMO = ROOT / "routes_demo"
#: Where tests leave files for people to look at (screenshots).
ARTIFACTS = Path(os.environ.get("TRIPSIM_TEST_ARTIFACTS", ROOT / "build" / "test-artifacts"))
#: Waypoints of the demo's trip over the pass (routes_demo/trips.toml).
PASS_WAYPOINTS = "41.2,-31.6;41.238669,-30.030016;41.2,-29.331582"
DEPART = "2026-07-14T08:00:00-02:00"


def problem_of(response: httpx.Response, status: int) -> dict:
    """Check a response is a problem document with this status; return it."""
    assert response.status_code == status, response.text[:500]
    assert response.headers["content-type"].startswith("application/problem+json")
    doc = response.json()
    assert doc["status"] == status and doc["title"]
    assert "Traceback" not in response.text and "/work/" not in response.text
    return doc


def wait_job(client: TestClient | httpx.Client, job: dict, timeout_s: float = 60.0) -> dict:
    """Poll a job until it ends."""
    end = time.monotonic() + timeout_s
    while time.monotonic() < end:
        job = client.get(job["href"]).json()
        if job["state"] not in ("queued", "running"):
            return job
        time.sleep(0.2)
    raise AssertionError(f"job {job['id']} still {job['state']}")


def created(client: TestClient | httpx.Client, response: httpx.Response) -> dict:
    """The stored thing of a 201/200, or of the job of a 202 once it is done."""
    assert response.status_code in (200, 201, 202), response.text[:500]
    body = response.json()
    if response.status_code != 202:
        return body
    job = wait_job(client, body)
    assert job["state"] == "done", job
    return client.get(job["result"]).json()


@pytest.fixture(scope="session")
def service_settings(tmp_path_factory: pytest.TempPathFactory) -> Settings:
    folder = tmp_path_factory.mktemp("service")
    return Settings(db_url=f"sqlite:///{folder / 'tripsim.sqlite3'}", workers=2,
                    max_upload_bytes=8 * 1024 * 1024, sync_wait_s=20.0)


@pytest.fixture(scope="session")
def client(service_settings: Settings) -> Iterator[TestClient]:
    with TestClient(create_app(service_settings), raise_server_exceptions=False) as c:
        yield c


def upload(client: TestClient | httpx.Client, collection: str, path: Path,
           **data: str) -> dict:
    files = {"file": (path.name, path.read_bytes())}
    return created(client, client.post(f"/{collection}", files=files, data=data))


def store_demo(client: TestClient | httpx.Client) -> dict[str, str]:
    """Store the demo's inputs: vehicle, routes (a GPX loop, the pass on the network),
    chargers, lodgings and weather; their ids."""
    ids = {"vehicle": upload(client, "vehicles",
                             DEMO / "vehicles" / "harbour_crossover.toml")["id"],
           "van": upload(client, "vehicles", DEMO / "vehicles" / "parcel_mule.toml")["id"],
           "loop": upload(client, "routes", DEMO / "harbour_loop.gpx")["id"],
           "chargers": upload(client, "chargers", DEMO / "tamsreach.osm")["id"],
           "lodgings": upload(client, "lodgings", DEMO / "lodgings.csv")["id"],
           "weather": upload(client, "weather", DEMO / "tamsreach.epw")["id"]}
    files = {"file": ("tamsreach.osm", (DEMO / "tamsreach.osm").read_bytes()),
             "dem": ("tamsreach_dem.tif", (DEMO / "tamsreach_dem.tif").read_bytes())}
    ids["pass"] = created(client, client.post("/routes", files=files, data={
        "waypoints": PASS_WAYPOINTS, "name": "over the pass"}))["id"]
    return ids


@pytest.fixture(scope="session")
def demo(client: TestClient) -> dict[str, str]:
    return store_demo(client)


# --- a real server ------------------------------------------------------------------------

def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@contextlib.contextmanager
def real_server(db: Path, *, workers: int = 2, extra: tuple[str, ...] = (),
                env: dict[str, str] | None = None) -> Iterator[tuple[str, subprocess.Popen]]:
    """``tripsim serve`` in its own process on loopback; its base URL and process."""
    port = free_port()
    cmd = [sys.executable, "-m", "tripsim.cli", "serve", "--port", str(port), "--db", str(db),
           "--workers", str(workers), *extra]
    log = db.with_suffix(".log").open("ab")
    proc = subprocess.Popen(cmd, stdout=log, stderr=subprocess.STDOUT, cwd=ROOT,
                            env={**os.environ, **(env or {})})
    base = f"http://127.0.0.1:{port}"
    try:
        end = time.monotonic() + 60
        while time.monotonic() < end:
            if proc.poll() is not None:
                raise AssertionError(f"the server stopped: {db.with_suffix('.log').read_text()}")
            with contextlib.suppress(httpx.HTTPError):
                if httpx.get(f"{base}/health", timeout=1).status_code == 200:
                    break
            time.sleep(0.2)
        else:
            raise AssertionError("the server did not start")
        yield base, proc
    finally:
        if proc.poll() is None:
            proc.terminate()
            try:
                proc.wait(timeout=20)
            except subprocess.TimeoutExpired:
                proc.kill()
        log.close()


@pytest.fixture(scope="session")
def live_server(tmp_path_factory: pytest.TempPathFactory) -> Iterator[str]:
    """One real ``tripsim serve`` process for the tests that need a network peer."""
    with real_server(tmp_path_factory.mktemp("live") / "live.sqlite3") as (base, _proc):
        yield base
