"""Stored inputs through the ASGI client: each endpoint, and bad input for each (a 4xx
problem document naming the field, never a 5xx)."""

from __future__ import annotations

import json

import pytest

from tests.api.conftest import DEMO, created, problem_of


def test_vehicle_round_trip(client, demo):
    got = client.get(f"/vehicles/{demo['vehicle']}")
    assert got.status_code == 200
    body = got.json()
    assert body["kind"] == "vehicle" and body["info"]["usable_kwh"] > 0
    assert body["spec"]["vehicle"]["body"]["mass_kg"] > 0
    listed = client.get("/vehicles").json()
    assert demo["vehicle"] in [v["id"] for v in listed["items"]] and listed["total"] >= 2
    raw = client.get(f"/vehicles/{demo['vehicle']}/file")
    assert raw.status_code == 200
    assert raw.content == (DEMO / "vehicles" / "harbour_crossover.toml").read_bytes()


def test_vehicle_as_json_and_delete(client):
    data = {"name": "json car", "body": {"mass_kg": 1500, "cda_m2": 0.6, "crr": 0.009},
            "drivetrain": {"efficiency": 0.9, "regen_efficiency": 0.7},
            "battery": {"usable_kwh": 50}, "auxiliary": {"base_w": 300}}
    r = client.post("/vehicles", files={"file": ("car.json", json.dumps(data).encode())})
    assert r.status_code == 201 and r.headers["location"] == r.json()["href"]
    vid = r.json()["id"]
    assert client.delete(f"/vehicles/{vid}").status_code == 204
    problem_of(client.get(f"/vehicles/{vid}"), 404)
    problem_of(client.delete(f"/vehicles/{vid}"), 404)


@pytest.mark.parametrize(("filename", "content", "status", "words"), [
    ("car.toml", b"[body\nmass_kg = 1", 422, "not valid TOML"),
    ("car.toml", b"[body]\nmass_kg = -5\n", 422, "mass_kg"),
    ("car.json", b"[1, 2]", 422, "expected a table"),
    ("car.json", b"\xff\xfe", 422, "not valid JSON"),
    ("car.exe", b"x", 415, "expected a file ending in .toml, .json"),
])
def test_bad_vehicle_files(client, filename, content, status, words):
    doc = problem_of(client.post("/vehicles", files={"file": (filename, content)}), status)
    assert words in doc["detail"]
    assert doc["errors"][0]["field"] == "file"


def test_vehicle_missing_file_names_the_field(client):
    doc = problem_of(client.post("/vehicles", data={"name": "x"}), 422)
    assert doc["errors"][0]["field"].startswith("file")


def test_route_keeps_segments_length_and_ascent(client, demo):
    r = client.get(f"/routes/{demo['pass']}").json()
    assert r["name"] == "over the pass"
    assert 150 < r["info"]["length_km"] < 300 and r["info"]["ascent_m"] > 500
    assert r["info"]["elevation_source"] == "dem"
    assert r["spec"]["waypoints"][0] == [41.2, -31.6]
    assert {f["role"] for f in r["files"]} == {"source", "dem", "segments"}
    csv = client.get(f"/routes/{demo['pass']}/segments")
    assert csv.status_code == 200 and csv.text.startswith(("start_m", "seg", "lat", "index"))
    assert len(csv.text.splitlines()) == r["info"]["segments"] + 1
    pq = client.get(f"/routes/{demo['pass']}/segments", params={"format": "parquet"})
    assert pq.status_code == 200 and pq.content[:4] == b"PAR1"
    loop = client.get(f"/routes/{demo['loop']}").json()
    assert loop["info"]["length_km"] > 1 and loop["spec"]["waypoints"] is None


def test_route_problems(client):
    gpx = (DEMO / "harbour_loop.gpx").read_bytes()
    osm = (DEMO / "tamsreach.osm").read_bytes()
    doc = problem_of(client.post("/routes", files={"file": ("net.osm", osm)}), 422)
    assert doc["errors"][0]["field"] == "waypoints"
    doc = problem_of(client.post("/routes", files={"file": ("a.gpx", gpx)},
                                 data={"waypoints": "41.2,-31.6;41.3,-31.5"}), 422)
    assert "fixed route" in doc["detail"]
    doc = problem_of(client.post("/routes", files={"file": ("net.osm", osm)},
                                 data={"waypoints": "41.2,-31.6"}), 422)
    assert doc["errors"][0]["field"] == "waypoints"
    doc = problem_of(client.post("/routes", files={"file": ("net.osm", osm)},
                                 data={"waypoints": "10,10;10.1,10.1"}), 422)
    assert doc["errors"][0]["field"] == "waypoints" and "nearest road" in doc["detail"]
    doc = problem_of(client.post("/routes", files={"file": ("a.gpx", b"<gpx><trk>")}), 422)
    assert doc["errors"][0]["field"] == "file" and "well-formed" in doc["detail"]
    doc = problem_of(client.post("/routes", files={"file": ("a.gpx", b"<gpx></gpx>")}), 422)
    assert "a.gpx" in doc["detail"]
    doc = problem_of(client.post("/routes", files={"file": ("a.geojson", b"{nope")}), 422)
    assert "a.geojson" in doc["detail"]
    problem_of(client.post("/routes", files={"file": ("a.kml", gpx)}), 415)
    problem_of(client.post("/routes", files={"file": ("a.gpx", b"")}), 422)
    doc = problem_of(client.post("/routes", files={"file": ("a.gpx", gpx)},
                                 data={"segment_m": "0"}), 422)
    assert doc["errors"][0]["field"].startswith("segment_m")
    doc = problem_of(client.post("/routes", files={"file": ("a.gpx", gpx),
                                                   "dem": ("d.tif", b"not a tiff")}), 422)
    assert "d.tif" in doc["detail"]


def test_sites_and_weather(client, demo):
    chg = client.get(f"/chargers/{demo['chargers']}").json()
    assert chg["info"]["sites"] > 5 and "type2_combo" in chg["info"]["connectors"]
    lod = client.get(f"/lodgings/{demo['lodgings']}").json()
    assert lod["info"]["sites"] >= 3
    wx = client.get(f"/weather/{demo['weather']}").json()
    assert wx["info"]["samples"] == 8760 and wx["info"]["typical_year"]
    for collection in ("chargers", "lodgings", "weather"):
        listed = client.get(f"/{collection}").json()
        assert listed["total"] >= 1 and listed["items"][0]["href"].startswith(f"/{collection}/")


@pytest.mark.parametrize(("collection", "filename", "content", "status", "words"), [
    ("chargers", "s.csv", b"lat,lon,name,connector\n91,0,x,type2\n", 422, "s.csv"),
    ("chargers", "s.csv", b"lat,lon,name,connector\n", 422, "s.csv"),
    ("chargers", "s.txt", b"x", 415, ".csv"),
    ("lodgings", "l.csv", b"lat,lon\n1,2\n", 422, "l.csv"),
    ("lodgings", "l.osm", b"<osm/>", 415, ".csv"),
    ("weather", "w.epw", b"LOCATION,nowhere\n1,2,3\n", 422, "w.epw"),
    ("weather", "w.tm2", b"", 422, "empty"),
    ("weather", "w.pdf", b"%PDF", 415, ".epw"),
])
def test_bad_site_and_weather_files(client, collection, filename, content, status, words):
    doc = problem_of(client.post(f"/{collection}", files={"file": (filename, content)}),
                     status)
    assert words in doc["detail"]


@pytest.mark.parametrize("collection", ["vehicles", "routes", "chargers", "lodgings",
                                        "weather"])
def test_unknown_ids_and_bad_paging(client, collection):
    problem_of(client.get(f"/{collection}/veh-000000000000"), 404)
    problem_of(client.get(f"/{collection}/nothing-like-an-id/file"), 404)
    problem_of(client.delete(f"/{collection}/x"), 404)
    doc = problem_of(client.get(f"/{collection}", params={"limit": 0}), 422)
    assert doc["errors"][0]["field"] == "limit (query)"
    problem_of(client.get(f"/{collection}", params={"offset": "many"}), 422)
    problem_of(client.put(f"/{collection}"), 405)


def test_deleting_an_input_keeps_runs_made_from_it(client, demo):
    data = (DEMO / "harbour_loop.gpx").read_bytes()
    rid = created(client, client.post("/routes", files={"file": ("loop2.gpx", data)},
                                      data={"name": "to delete"}))["id"]
    sim = client.post("/simulations", json={"route": rid, "vehicle": demo["vehicle"],
                                            "speed_kph": 51})
    made = created(client, sim)
    assert client.delete(f"/routes/{rid}").status_code == 204
    run = client.get(made["links"]["self"]).json()
    assert run["inputs"][0]["id"] == rid
    assert any(f["role"] == "input:route:source" for f in run["files"])
    doc = problem_of(client.post("/simulations", json={"route": rid,
                                                       "vehicle": demo["vehicle"]}), 422)
    assert doc["errors"][0]["field"] == "route"
