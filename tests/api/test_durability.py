"""kill -9 of a real server while it stores results: on restart the store is intact, no
half-stored run is visible, and the jobs it was running are marked failed.

The server holds each run's transaction open for a second before it commits
(``TRIPSIM_STORE_PAUSE_S``, fault injection), so the kill lands inside a write."""

from __future__ import annotations

import os
import signal
import sqlite3
import time
from pathlib import Path

import httpx

from tests.api.conftest import DEMO, created, real_server


def _children(pid: int) -> list[int]:
    out = []
    for entry in Path("/proc").iterdir():
        if entry.name.isdigit():
            try:
                fields = (entry / "stat").read_text().rsplit(")", 1)[1].split()
            except OSError:
                continue
            if int(fields[1]) == pid:
                out.append(int(entry.name))
    return out


def _alive(pid: int) -> bool:
    try:
        state = (Path("/proc") / str(pid) / "stat").read_text().rsplit(")", 1)[1].split()[0]
    except OSError:
        return False
    return state != "Z"


def test_kill_while_storing_then_restart(tmp_path: Path):
    db = tmp_path / "durable.sqlite3"
    with real_server(db, env={"TRIPSIM_STORE_PAUSE_S": "1.0"}) as (base, proc):
        http = httpx.Client(base_url=base, timeout=60)
        vehicle = created(http, http.post("/vehicles", files={"file": (
            "van.toml", (DEMO / "vehicles" / "parcel_mule.toml").read_bytes())}))["id"]
        route = created(http, http.post("/routes", files={"file": (
            "loop.gpx", (DEMO / "harbour_loop.gpx").read_bytes())}))["id"]
        jobs = []
        for i in range(8):
            r = http.post("/simulations", headers={"Prefer": "respond-async"}, json={
                "route": route, "vehicle": vehicle, "speed_kph": 30 + i})
            assert r.status_code == 202, r.text
            jobs.append(r.json()["id"])
        workers = _children(proc.pid)
        assert len(workers) >= 2
        caught = None
        end = time.monotonic() + 120
        while caught is None and time.monotonic() < end:
            listed = http.get("/jobs").json()["items"]
            if sum(j["state"] == "done" and j["kind"] == "simulate" for j in listed) < 2:
                time.sleep(0.05)
                continue
            for job in listed:
                if job["message"] == "storing the result" and job["state"] == "running":
                    caught = job["id"]
                    break
        assert caught is not None, "no job was seen storing its result"
        time.sleep(0.3)  # inside the held transaction
        os.kill(proc.pid, signal.SIGKILL)
        proc.wait(timeout=10)
        end = time.monotonic() + 10
        while any(_alive(w) for w in workers) and time.monotonic() < end:
            time.sleep(0.1)
        assert not any(_alive(w) for w in workers), "workers outlived the killed server"

    con = sqlite3.connect(db)
    assert con.execute("PRAGMA integrity_check").fetchone()[0] == "ok"
    assert con.execute("PRAGMA foreign_key_check").fetchall() == []
    runs = con.execute("SELECT id, input_hash FROM runs").fetchall()
    for run_id, _ in runs:  # every visible run has every file, with its bytes
        roles = {r for (r,) in con.execute("SELECT role FROM run_files WHERE run_id = ?",
                                           (run_id,))}
        assert {"trace.parquet", "page"} <= roles, (run_id, roles)
        for (size,) in con.execute("SELECT length(b.data) FROM run_files f JOIN blobs b "
                                   "ON b.sha256 = f.sha256 WHERE f.run_id = ?", (run_id,)):
            assert size > 0
    states = dict(con.execute("SELECT id, state FROM jobs WHERE id LIKE 'job-%'").fetchall())
    caught_hash = con.execute("SELECT input_hash FROM jobs WHERE id = ?", (caught,)).fetchone()[0]
    assert caught_hash not in {h for _, h in runs}, "the run killed while storing is visible"
    con.close()
    done_before = {j for j in jobs if states.get(j) == "done"}
    assert len(runs) == len(done_before)

    with real_server(db) as (base, _proc):
        http = httpx.Client(base_url=base, timeout=60)
        after = {j: http.get(f"/jobs/{j}").json() for j in jobs}
        assert not [j for j, v in after.items() if v["state"] in ("queued", "running")]
        failed = [v for v in after.values() if v["state"] == "failed"]
        assert failed and all("stopped" in v["problem"]["detail"] for v in failed)
        seen = after[caught]
        hashes = {h for _, h in runs}
        print(f"\ndurability: job seen storing ended {seen['state']}; {len(runs)} runs intact, "
              f"{len(failed)} jobs marked failed")
        assert seen["state"] == "failed", "the job killed while storing is marked failed"
        assert caught_hash not in hashes and len(hashes) == len(runs)
        for v in after.values():
            if v["state"] == "done":
                assert http.get(v["result"]).status_code == 200
        # the lost work can be asked for again and is computed anew
        again = http.post("/simulations", json={"route": route, "vehicle": vehicle,
                                                "speed_kph": 30 + jobs.index(failed[0]["id"])})
        assert created(http, again)["result"]["distance_km"] > 1
