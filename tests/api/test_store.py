"""The store on SQLite (always) and PostgreSQL (when $TRIPSIM_TEST_PG_URL names a server:
.ci/run starts one): schema and migrations, transactions, files, lost jobs."""

from __future__ import annotations

import os
import threading
from pathlib import Path

import pytest
import sqlalchemy as sa
from tripsim_api.store import SCHEMA_VERSION, Blob, Store, StoreError, metadata, new_id, now

from tests.api.conftest import DEMO, created

PG_URL = os.environ.get("TRIPSIM_TEST_PG_URL")


def _reset_pg(url: str) -> None:
    engine = sa.create_engine(url)
    with engine.begin() as conn:
        metadata.drop_all(conn)
        conn.execute(sa.text("DROP TABLE IF EXISTS meta CASCADE"))
    engine.dispose()


@pytest.fixture(params=["sqlite", "postgresql"])
def store(request, tmp_path: Path):
    if request.param == "sqlite":
        s = Store(f"sqlite:///{tmp_path / 'store.sqlite3'}", tmp_path / "files")
    else:
        if not PG_URL:
            pytest.skip("no PostgreSQL server: set TRIPSIM_TEST_PG_URL (.ci/run starts one)")
        _reset_pg(PG_URL)
        s = Store(PG_URL, tmp_path / "files")
    yield s
    s.close()


def _run(kind: str = "simulate", input_hash: str | None = None) -> dict:
    return {"id": new_id("sim"), "kind": kind, "name": "a run",
            "input_hash": input_hash or new_id("h").ljust(64, "0"), "created_at": now(),
            "tripsim_version": "0", "request": {}, "scenario": {}, "inputs": [],
            "payload": {"x": 1.5, "nested": {"ok": True}}, "text": "t", "exit_code": 0,
            "timings": {"compute_s": 0.1}, "caution": "c"}


def test_schema_version_and_migrations(store, tmp_path):
    assert store.schema_version() == SCHEMA_VERSION
    again = Store(store.url, tmp_path / "files")  # opening again migrates nothing
    assert again.schema_version() == SCHEMA_VERSION
    with store.engine.begin() as conn:
        conn.execute(sa.text("UPDATE meta SET value = '99' WHERE key = 'schema_version'"))
    with pytest.raises(StoreError, match="newer than this tripsim"):
        Store(store.url, tmp_path / "files")
    again.close()


def test_sqlite_is_wal_with_foreign_keys(tmp_path):
    s = Store(f"sqlite:///{tmp_path / 's.sqlite3'}", tmp_path / "files")
    with s.connection() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert conn.exec_driver_sql("PRAGMA synchronous").scalar() == 2  # FULL
    with pytest.raises(sa.exc.IntegrityError), s.engine.begin() as conn:
        conn.exec_driver_sql("INSERT INTO input_files VALUES ('nope', 'source', 'f', 't', 'x')")
    s.close()


def test_inputs_files_and_their_clean_up(store):
    blob = Blob.of("source", "car.csv", "text/csv", b"[body]\nmass_kg = 1\n" * 100)
    row = store.add_input("vehicle", "veh", "car", {"a": 1}, {"b": 2}, [blob])
    assert store.get_input("vehicle", row["id"])["files"][0]["sha256"] == blob.sha256
    assert store.get_input("route", row["id"]) is None  # the kind is part of the address
    assert store.blob(blob.sha256)[0] == b"[body]\nmass_kg = 1\n" * 100
    assert store.blob(blob.sha256, decoded=False)[1] == "gzip"
    path = store.materialize(blob.sha256, "../../car.csv")
    assert path.read_bytes() == store.blob(blob.sha256)[0] and path.name == "car.csv"
    assert path.parent.parent.parent == store.files_dir  # a name cannot climb out
    rows, total = store.list_inputs("vehicle")
    assert total == 1 and rows[0]["id"] == row["id"]
    # a run keeps the input's file after the input is deleted
    ref = Blob(f"input:{blob.role}", blob.filename, blob.media_type, blob.sha256, blob.size,
               "ref", b"")
    run = store.add_run(_run(), [ref])
    assert store.delete_input("vehicle", row["id"]) and not store.delete_input("vehicle",
                                                                              row["id"])
    assert store.blob(blob.sha256)[0]
    assert store.delete_run("simulate", run["id"])
    with pytest.raises(KeyError):
        store.blob(blob.sha256)


def test_a_run_is_stored_whole_or_not_at_all(store):
    job = store.add_job(new_id("job"), "simulate", {}, "me")
    good = Blob.of("trace.csv", "trace.csv", "text/csv", b"a,b\n1,2\n")
    broken = Blob("page", "page.json", "application/json", "f" * 64, 3, "identity", None)
    with pytest.raises(sa.exc.StatementError):
        store.add_run(_run(), [good, broken], job_id=job["id"])
    assert store.list_runs()[1] == 0
    with pytest.raises(KeyError):
        store.blob(good.sha256)
    assert store.get_job(job["id"])["state"] == "queued"
    run = store.add_run(_run(input_hash="a" * 64), [good], job_id=job["id"])
    assert store.get_job(job["id"])["state"] == "done"
    assert store.get_job(job["id"])["result_id"] == run["id"]
    assert run["payload"] == {"x": 1.5, "nested": {"ok": True}}
    assert store.run_file("simulate", run["id"], "trace.csv")["sha256"] == good.sha256
    assert store.run_file("plan", run["id"], "trace.csv") is None
    # the same inputs again (two jobs raced): the first run stays, the job points to it
    twin = store.add_run(_run(input_hash="a" * 64), [good])
    assert twin["id"] == run["id"] and store.find_run("a" * 64)["id"] == run["id"]


def test_lost_jobs_are_marked_failed(store):
    dead = store.add_job(new_id("job"), "plan", {}, "somehost-that-is-not-this:1:x")
    mine = store.add_job(new_id("job"), "plan", {}, "me")
    import socket

    gone = store.add_job(new_id("job"), "plan", {}, f"{socket.gethostname()}:999999999:y")
    from tripsim_api.jobs import owner_is_dead

    n = store.fail_lost_jobs("me", stale_s=3600, dead_owner=owner_is_dead)
    assert n == 1 and store.get_job(gone["id"])["state"] == "failed"
    assert store.get_job(dead["id"])["state"] == "queued"  # another machine: by heartbeat
    assert store.fail_lost_jobs("me", stale_s=-1, dead_owner=owner_is_dead) == 1
    lost = store.get_job(dead["id"])
    assert lost["state"] == "failed" and "stopped" in lost["problem"]["detail"]
    assert store.get_job(mine["id"])["state"] == "queued"


def test_concurrent_writers(store):
    errors = []

    def write(i: int) -> None:
        try:
            for k in range(5):
                store.add_run(_run(input_hash=f"{i:02d}{k:02d}".ljust(64, "0")),
                              [Blob.of("trace.csv", "t.csv", "text/csv", f"{i},{k}".encode())])
        except Exception as exc:
            errors.append(exc)

    threads = [threading.Thread(target=write, args=(i,)) for i in range(6)]
    for t in threads:
        t.start()
    for t in threads:
        t.join()
    assert not errors and store.list_runs()[1] == 30


def test_the_service_on_postgresql(tmp_path):
    if not PG_URL:
        pytest.skip("no PostgreSQL server: set TRIPSIM_TEST_PG_URL (.ci/run starts one)")
    from fastapi.testclient import TestClient
    from tripsim_api.app import create_app
    from tripsim_api.settings import Settings

    _reset_pg(PG_URL)
    settings = Settings(db_url=PG_URL, workers=1, files_dir=tmp_path / "files")
    with TestClient(create_app(settings)) as client:
        assert client.get("/health").json()["store"] == "postgresql"
        vehicle = client.post("/vehicles", files={"file": (
            "car.toml", (DEMO / "vehicles" / "swift_tern.toml").read_bytes())}).json()["id"]
        route = created(client, client.post("/routes", files={"file": (
            "loop.gpx", (DEMO / "harbour_loop.gpx").read_bytes())}))["id"]
        run = created(client, client.post("/simulations", json={
            "route": route, "vehicle": vehicle, "speed_kph": 50}))
        assert run["result"]["distance_km"] > 1
        assert client.get(run["links"]["trace_parquet"]).content[:4] == b"PAR1"
        again = client.post("/simulations", json={"route": route, "vehicle": vehicle,
                                                  "speed_kph": 50})
        assert again.status_code == 200 and again.json()["id"] == run["id"]
