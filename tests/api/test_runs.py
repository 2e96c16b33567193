"""Simulations, plans, fleet years and jobs through the ASGI client: results, files, the
stored result for the same inputs, background jobs, and bad input (4xx, never 5xx)."""

from __future__ import annotations

import html
import io
import json
import time

import pandas as pd
import pytest

from tests.api.conftest import DEPART, created, problem_of, wait_job
from tripsim.caution import CAUTION


@pytest.fixture(scope="module")
def simulation(client, demo):
    r = client.post("/simulations", json={
        "route": demo["pass"], "vehicle": demo["vehicle"], "weather": demo["weather"],
        "depart": DEPART, "name": "pass by day"})
    return created(client, r)


@pytest.fixture(scope="module")
def plan(client, demo):
    r = client.post("/plans", json={
        "route": demo["pass"], "vehicle": demo["vehicle"], "weather": demo["weather"],
        "depart": DEPART, "start_soc": 0.45,
        "plan": {"chargers": demo["chargers"], "lodging": demo["lodgings"],
                 "options": {"reserve_soc": 0.1, "arrive_soc": 0.15}}})
    return created(client, r)


def test_simulation_result_records_how_it_was_made(client, demo, simulation):
    s = simulation
    assert s["kind"] == "simulate" and s["name"] == "pass by day" and s["exit_code"] == 0
    assert 150 < s["result"]["distance_km"] < 300 and s["result"]["battery_wh"] > 0
    assert s["caution"] == CAUTION and s["tripsim_version"]
    assert len(s["input_hash"]) == 64
    assert {i["kind"] for i in s["inputs"]} == {"route", "vehicle", "weather"}
    assert s["request"]["route"] == demo["pass"]
    assert s["timings"]["compute_s"] > 0 and s["timings"]["wait_and_run_s"] > 0
    assert {"self", "map", "trace_csv", "trace_parquet", "geojson"} <= set(s["links"])
    assert client.get(s["links"]["self"]).json()["result"] == s["result"]


def test_the_same_inputs_return_the_stored_result(client, demo, simulation):
    again = client.post("/simulations", json={
        "name": "pass by day", "depart": DEPART, "weather": demo["weather"],
        "vehicle": demo["vehicle"], "route": demo["pass"]})
    assert again.status_code == 200 and again.json()["id"] == simulation["id"]
    assert "stored" in again.headers["tripsim-stored"]
    other = client.post("/simulations", json={
        "route": demo["pass"], "vehicle": demo["vehicle"], "weather": demo["weather"],
        "depart": DEPART, "name": "pass by day", "start_soc": 0.9})
    assert created(client, other)["id"] != simulation["id"]


def test_simulation_files(client, simulation):
    links = simulation["links"]
    csv = client.get(links["trace_csv"])
    assert csv.status_code == 200 and csv.headers["content-type"].startswith("text/csv")
    table = pd.read_csv(io.StringIO(csv.text))
    assert {"soc", "speed_kph", "clock"} <= set(table.columns) and len(table) > 1000
    pq = client.get(links["trace_parquet"])
    assert pd.read_parquet(io.BytesIO(pq.content)).shape[0] == len(table)
    geo = client.get(links["geojson"]).json()
    assert geo["type"] == "FeatureCollection" and len(geo["features"]) == len(table)
    page = client.get(links["map"])
    assert page.status_code == 200 and "tripsim-route" in page.text
    assert '<script src="/assets/leaflet/leaflet.js"></script>' in page.text
    assert "https://" not in page.text.split("<body")[0]  # nothing from another host
    assert "content-security-policy" in page.headers
    js = client.get("/assets/leaflet/leaflet.js")
    assert js.status_code == 200 and js.headers["content-type"].startswith("text/javascript")
    assert client.get("/assets/leaflet/images/layers.png").content[:4] == b"\x89PNG"
    problem_of(client.get("/assets/leaflet/nothing.js"), 404)
    problem_of(client.get(f"{links['self']}/trace", params={"format": "xlsx"}), 422)
    problem_of(client.get(f"{links['self']}/stops"), 404)


def test_gzip_files_are_sent_as_stored(client, simulation):
    r = client.get(simulation["links"]["trace_csv"], headers={"Accept-Encoding": "gzip"})
    assert (r.headers.get("content-encoding") == "gzip" and r.text.startswith("index,"))  \
        or r.text[:20]


def test_plan_result_and_files(client, demo, plan):
    p = plan
    assert p["kind"] == "plan" and p["result"]["feasible"] is True
    stops = p["result"]["stops"]
    assert len(stops) >= 1 and p["result"]["charging_stops"] >= 1
    assert {i["kind"] for i in p["inputs"]} == {"route", "vehicle", "weather", "chargers",
                                                 "lodgings"}
    table = pd.read_csv(io.StringIO(client.get(p["links"]["stops_csv"]).text))
    assert len(table) == len(stops) and "arrive_soc" in table.columns
    geo = client.get(p["links"]["geojson"]).json()
    assert sum(f["properties"]["feature"] == "stop" for f in geo["features"]) == len(stops)
    page = client.get(p["links"]["map"]).text
    assert page.count("tripsim-stop-item") == len(stops)
    assert "tripsim-profile" in page and html.escape(CAUTION) in page
    assert client.get("/plans").json()["total"] >= 1


def test_plan_without_a_way_keeps_its_diagnosis(client, demo):
    r = client.post("/plans", json={
        "route": demo["pass"], "vehicle": demo["vehicle"], "depart": DEPART,
        "start_soc": 0.2, "plan": {"chargers": [{"lat": 0.0, "lon": 0.0, "name": "far away",
                                                 "connector": "type2"}]}})
    body = created(client, r)
    assert body["exit_code"] == 3 and body["result"]["feasible"] is False
    assert body["result"]["shortfall"]["reason"]
    assert "map" not in body["links"]
    doc = problem_of(client.get(f"/plans/{body['id']}/map"), 404)
    assert "shortfall" in doc["detail"]


def test_inline_route_vehicle_and_sites(client, demo):
    coords = [[-31.60, 41.20], [-31.55, 41.21], [-31.50, 41.20]]
    vehicle = client.get(f"/vehicles/{demo['vehicle']}").json()["spec"]["vehicle"]
    r = client.post("/plans", json={
        "route": {"geojson": {"type": "LineString", "coordinates": coords}, "name": "inline"},
        "vehicle": vehicle, "speed_kph": 80, "start_soc": 0.5,
        "plan": {"chargers": [{"lat": 41.205, "lon": -31.55, "name": "mid",
                               "connector": "type2_combo", "power_kw": 150}]}})
    body = created(client, r)
    assert body["result"]["feasible"] and body["inputs"] == []
    assert any(f["role"] == "input:route" for f in body["files"])


def test_background_job_with_progress_and_result(client, demo):
    r = client.post("/simulations", headers={"Prefer": "respond-async"}, json={
        "route": demo["loop"], "vehicle": demo["van"], "speed_kph": 45,
        "weather": {"source": "clear-sky", "cloud": 0.2}, "depart": DEPART})
    assert r.status_code == 202 and r.headers["location"] == r.json()["href"]
    assert r.headers["retry-after"] == "1"
    job = wait_job(client, r.json())
    assert job["state"] == "done" and job["progress"] == 1.0 and job["started_at"]
    go = client.get(f"{job['href']}/result", follow_redirects=False)
    assert go.status_code == 303 and go.headers["location"] == job["result"]
    assert client.get(job["result"]).json()["result"]["solar_wh"] >= 0
    listed = client.get("/jobs", params={"state": "done"}).json()
    assert any(j["id"] == job["id"] for j in listed["items"])
    problem_of(client.post(f"{job['href']}/cancel"), 409)


def test_fleet_year_is_a_job(client, demo):
    r = client.post("/fleet-years", json={
        "route": demo["loop"], "vehicle": demo["van"], "speed_kph": 50,
        "weather": demo["weather"],
        "fleet": {"schedule": "Mon-Sat@08:00,13:30", "days": 60, "size_search": False}})
    assert r.status_code == 202, r.text
    job = wait_job(client, r.json(), timeout_s=120)
    assert job["state"] == "done", job
    run = client.get(job["result"]).json()
    assert run["kind"] == "fleet" and 0 < run["result"]["days"] <= 60
    daily = client.get(run["links"]["daily_csv"])
    assert len(daily.text.strip().splitlines()) == 61
    assert client.get(run["links"]["runs_parquet"]).content[:4] == b"PAR1"
    assert client.delete(run["links"]["self"]).status_code == 204
    problem_of(client.get(run["links"]["self"]), 404)
    assert client.get(job["href"]).json()["result"] is None


def test_cancel_a_running_job(client, demo):
    r = client.post("/fleet-years", json={
        "route": demo["loop"], "vehicle": demo["van"], "speed_kph": 50,
        "weather": demo["weather"], "fleet": {"days": 3660}})
    assert r.status_code == 202
    job = r.json()
    end = time.monotonic() + 30
    while client.get(job["href"]).json()["state"] == "queued" and time.monotonic() < end:
        time.sleep(0.1)
    cancelled = client.post(f"{job['href']}/cancel")
    assert cancelled.status_code == 200, cancelled.text
    assert cancelled.json()["state"] == "cancelled"
    problem_of(client.get(f"{job['href']}/result", follow_redirects=False), 409)
    # the pool replaced the ended worker: work goes on
    again = client.post("/simulations", json={"route": demo["loop"], "vehicle": demo["van"],
                                              "speed_kph": 44})
    assert created(client, again)["result"]["distance_km"] > 1


@pytest.mark.parametrize(("path", "body", "field", "words"), [
    ("/simulations", {"route": "rte-000000000000", "vehicle": "veh-000000000000"}, "route",
     "no stored route"),
    ("/simulations", {"route": 12, "vehicle": "x"}, "route", ""),
    ("/simulations", {"vehicle": "veh-000000000000"}, "route", "required"),
    ("/simulations", {"route": "ROUTE", "vehicle": "v"}, "route", ""),
    ("/simulations", {"route": "@R", "vehicle": "@V", "extra": 1}, "extra", "unknown"),
    ("/simulations", {"route": "@R", "vehicle": "@V", "start_soc": 1.5}, "start_soc", "1.5"),
    ("/simulations", {"route": "@R", "vehicle": "@V", "conditions": {"temp_c": "warm"}},
     "conditions.temp_c", ""),
    ("/simulations", {"route": "@R", "vehicle": "@V", "conditions": {"temp_c": 99}},
     "conditions.temp_c", "out of range"),
    ("/simulations", {"route": "@R", "vehicle": "@V", "depart": "yesterday"}, "depart",
     "ISO 8601"),
    ("/simulations", {"route": "@R", "vehicle": {"body": {"mass_kg": 1}}}, "vehicle", ""),
    ("/simulations", {"route": "@R", "vehicle": "@V", "weather": "wx-000000000000"},
     "weather", "no stored weather"),
    ("/simulations", {"route": "@R", "vehicle": "@V",
                      "weather": {"source": "@W", "cloud": 0.5}}, "weather.cloud",
     "clear-sky"),
    ("/plans", {"route": "@R", "vehicle": "@V"}, "plan", "required"),
    ("/plans", {"route": "@R", "vehicle": "@V",
                "plan": {"chargers": "@C", "options": {"reserve_soc": 1.5}}},
     "plan.options.reserve_soc", "out of range"),
    ("/plans", {"route": "@R", "vehicle": "@V",
                "plan": {"chargers": "@C", "options": {"max_drive_h": 4}}}, "plan.lodging",
     "places to sleep"),
    ("/plans", {"route": "@R", "vehicle": "@V", "plan": {"chargers": "chg-000000000000"}},
     "plan.chargers", "no stored chargers"),
    ("/plans", {"route": {"id": "@R", "alternatives": 3}, "vehicle": "@V",
                "plan": {"chargers": "@C"}}, "route.alternatives", "network"),
    ("/plans", {"route": "@R", "vehicle": "@V", "plan": {"chargers": []}}, "plan.chargers",
     ""),
    ("/fleet-years", {"route": "@R", "vehicle": "@V", "fleet": {"days": 0}}, "fleet.days",
     ""),
    ("/fleet-years", {"route": "@R", "vehicle": "@V"}, "weather", "weather year"),
    ("/fleet-years", {"route": "@R", "vehicle": "@V", "weather": "@W",
                      "fleet": {"schedule": "Someday@25:00"}}, "fleet.schedule", ""),
])
def test_bad_run_requests(client, demo, path, body, field, words):
    text = json.dumps(body).replace("@R", demo["loop"]).replace("@V", demo["vehicle"]) \
        .replace("@W", demo["weather"]).replace("@C", demo["chargers"])
    doc = problem_of(client.post(path, content=text,
                                 headers={"content-type": "application/json"}), 422)
    fields = [e["field"] for e in doc["errors"]]
    assert fields[0] == field, doc
    assert words in doc["detail"], doc


@pytest.mark.parametrize(("content", "ctype", "status"), [
    ("{not json", "application/json", 422),
    ("[]", "application/json", 422),
    ("route=x", "application/x-www-form-urlencoded", 422),
    ("", "application/json", 422),
])
def test_malformed_bodies(client, content, ctype, status):
    problem_of(client.post("/simulations", content=content, headers={"content-type": ctype}),
               status)


@pytest.mark.parametrize("collection", ["simulations", "plans", "fleet-years"])
def test_unknown_runs(client, collection):
    problem_of(client.get(f"/{collection}/sim-000000000000"), 404)
    problem_of(client.delete(f"/{collection}/sim-000000000000"), 404)
    problem_of(client.get(f"/{collection}/sim-000000000000/trace"), 404)
    listed = client.get(f"/{collection}", params={"limit": 1})
    assert listed.status_code == 200 and listed.json()["limit"] == 1


def test_unknown_jobs_and_routes(client):
    problem_of(client.get("/jobs/job-000000000000"), 404)
    problem_of(client.post("/jobs/job-000000000000/cancel"), 404)
    problem_of(client.get("/jobs/job-000000000000/result"), 404)
    problem_of(client.get("/jobs", params={"state": "sleeping"}), 422)
    problem_of(client.get("/nowhere"), 404)
    problem_of(client.delete("/jobs"), 405)


def test_health_docs_and_front_page(client, simulation, demo):
    h = client.get("/health").json()
    assert h["status"] == "ok" and h["store"] == "sqlite" and h["workers"] == 2
    docs = client.get("/docs").text
    assert "/assets/swagger/swagger-ui-bundle.js" in docs and "cdn" not in docs
    assert client.get("/assets/swagger/swagger-ui.css").status_code == 200
    spec = client.get("/openapi.json").json()
    assert "/plans" in spec["paths"] and "/fleet-years" in spec["paths"]
    front = client.get("/").text
    assert f"/simulations/{simulation['id']}/map" in front and "<form" in front


def test_the_form_runs_a_plan(client, demo):
    r = client.post("/ui/runs", data={"kind": "plan", "route": demo["pass"],
                                      "vehicle": demo["van"], "chargers": demo["chargers"],
                                      "depart": DEPART, "start_soc": "0.8"},
                    follow_redirects=False)
    assert r.status_code == 303, r.text
    target = r.headers["location"]
    assert target.startswith(("/plans/", "/ui/jobs/"))
    if target.startswith("/ui/jobs/"):
        assert "Job" in client.get(target).text
    doc = problem_of(client.post("/ui/runs", data={"kind": "plan", "route": demo["loop"],
                                                   "vehicle": demo["van"]}), 422)
    assert doc["errors"][0]["field"] == "chargers"
    doc = problem_of(client.post("/ui/runs", data={"kind": "simulate", "route": demo["loop"],
                                                   "vehicle": demo["van"],
                                                   "start_soc": "lots"}), 422)
    assert doc["errors"][0]["field"] == "start_soc"
    problem_of(client.get("/ui/jobs/job-000000000000"), 404)


def test_a_full_queue_answers_429_with_retry_after(tmp_path, demo):
    from fastapi.testclient import TestClient
    from tripsim_api.app import create_app
    from tripsim_api.settings import Settings

    from tests.api.conftest import DEMO

    settings = Settings(db_url=f"sqlite:///{tmp_path / 'q.sqlite3'}", workers=1, queue_size=1)
    with TestClient(create_app(settings)) as small:
        van = small.post("/vehicles", files={"file": (
            "van.toml", (DEMO / "vehicles" / "parcel_mule.toml").read_bytes())}).json()["id"]
        loop = created(small, small.post("/routes", files={"file": (
            "loop.gpx", (DEMO / "harbour_loop.gpx").read_bytes())}))["id"]
        wx = created(small, small.post("/weather", files={"file": (
            "wx.epw", (DEMO / "tamsreach.epw").read_bytes())}))["id"]
        long = small.post("/fleet-years", json={"route": loop, "vehicle": van, "speed_kph": 50,
                                                "weather": wx, "fleet": {"days": 3660}})
        assert long.status_code == 202
        doc = problem_of(small.post("/simulations", json={"route": loop, "vehicle": van,
                                                          "speed_kph": 40}), 429)
        assert "queue is full" in doc["detail"]
        r = small.post("/simulations", json={"route": loop, "vehicle": van, "speed_kph": 40})
        assert r.status_code == 429 and int(r.headers["retry-after"]) >= 1
        assert small.post(f"{long.json()['href']}/cancel").json()["state"] == "cancelled"
        waited = small.post("/simulations", headers={"Prefer": "wait=30"},
                            json={"route": loop, "vehicle": van, "speed_kph": 40})
        assert waited.status_code == 201
