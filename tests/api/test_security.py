"""Limits and refusals: API key, binding beyond loopback, upload cap, XML with entities
(service and command line), no server-side paths, no stack traces."""

from __future__ import annotations

import time
import tracemalloc

import pytest
from fastapi.testclient import TestClient
from tripsim_api.app import create_app
from tripsim_api.problems import ProblemError
from tripsim_api.service import check_xml
from tripsim_api.settings import Settings, SettingsError, check_bind, read_api_key

from tests.api.conftest import DEMO, ROOT, problem_of
from tripsim.cli import main

LAUGHS = (b'<?xml version="1.0"?>\n<!DOCTYPE lolz [\n <!ENTITY lol "lol">\n'
          + b"".join(f' <!ENTITY lol{i} "{f"&lol{i - 1};" * 10 if i > 1 else "&lol;" * 10}">'
                     f"\n".encode() for i in range(1, 10))
          + b']>\n<gpx version="1.1" creator="x"><trk><name>&lol9;</name><trkseg>'
            b'<trkpt lat="41.2" lon="-31.6"/><trkpt lat="41.21" lon="-31.5"/></trkseg></trk>'
            b"</gpx>\n")
EXTERNAL = (b'<?xml version="1.0"?>\n<!DOCTYPE gpx [ <!ENTITY secret SYSTEM '
            b'"file:///etc/passwd"> ]>\n<gpx version="1.1" creator="x"><trk><name>&secret;'
            b'</name><trkseg><trkpt lat="41.2" lon="-31.6"/><trkpt lat="41.21" lon="-31.5"/>'
            b"</trkseg></trk></gpx>\n")


def test_binding_beyond_loopback_needs_a_key():
    check_bind("127.0.0.1", None)
    check_bind("::1", None)
    check_bind("localhost", None)
    with pytest.raises(SettingsError, match="needs an API key"):
        check_bind("0.0.0.0", None)
    check_bind("0.0.0.0", "k" * 32)
    with pytest.raises(SettingsError, match="too short"):
        read_api_key("short")


def test_serve_refuses_to_start_on_all_addresses_without_a_key(tmp_path, capsys,
                                                               monkeypatch):
    for var in ("TRIPSIM_API_KEY", "TRIPSIM_API_KEY_FILE"):
        monkeypatch.delenv(var, raising=False)
    assert main(["serve", "--host", "0.0.0.0", "--db", str(tmp_path / "s.sqlite3")]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "needs an API key" in err
    assert not (tmp_path / "s.sqlite3").exists()  # refused before the store is opened
    key_file = tmp_path / "key"
    key_file.write_text("tiny\n")
    assert main(["serve", "--host", "0.0.0.0", "--api-key-file", str(key_file),
                 "--db", str(tmp_path / "s.sqlite3")]) == 2
    assert "too short" in capsys.readouterr().err
    assert main(["serve", "--port", "70000"]) == 2
    assert "--port" in capsys.readouterr().err


def test_api_key_is_required_when_set(tmp_path):
    key = "k3y-" + "x" * 28
    settings = Settings(db_url=f"sqlite:///{tmp_path / 'k.sqlite3'}", workers=1, api_key=key)
    with TestClient(create_app(settings)) as client:
        doc = problem_of(client.get("/vehicles"), 401)
        assert "X-API-Key" in doc["detail"]
        assert client.get("/vehicles").headers["www-authenticate"].startswith("Bearer")
        problem_of(client.get("/vehicles", headers={"X-API-Key": key[:-1] + "y"}), 401)
        problem_of(client.get("/", headers={"Authorization": "Basic " + key}), 401)
        assert client.get("/vehicles", headers={"X-API-Key": key}).status_code == 200
        assert client.get("/vehicles", headers={"Authorization": f"Bearer {key}"}
                          ).status_code == 200
        problem_of(client.get("/assets/leaflet/leaflet.js"), 401)


def test_uploads_over_the_cap_get_413(client, service_settings):
    big = b"x" * (service_settings.max_upload_bytes + 10)
    doc = problem_of(client.post("/routes", files={"file": ("a.gpx", big)}), 413)
    assert str(service_settings.max_upload_bytes) in doc["detail"]

    def chunks():  # no Content-Length: the cap counts what arrives
        for _ in range(service_settings.max_upload_bytes // 65536 + 2):
            yield b"y" * 65536

    problem_of(client.post("/simulations", content=chunks(),
                           headers={"content-type": "application/json"}), 413)


@pytest.mark.parametrize(("name", "content"), [("bomb.gpx", LAUGHS), ("xxe.gpx", EXTERNAL),
                                               ("bomb.osm", LAUGHS.replace(b"gpx", b"osm"))])
def test_xml_with_entities_is_refused(client, name, content):
    t0 = time.perf_counter()
    doc = problem_of(client.post("/routes", files={"file": (name, content)},
                                 data={"waypoints": "41.2,-31.6;41.21,-31.5"}
                                 if name.endswith(".osm") else {}), 422)
    assert time.perf_counter() - t0 < 5
    assert "DTD or entities" in doc["detail"] and doc["errors"][0]["field"] == "file"
    assert "root:" not in doc["detail"]
    problem_of(client.post("/chargers", files={"file": (name.replace(".gpx", ".osm"),
                                                        content)}), 422)


def test_xml_check_uses_bounded_memory():
    bomb = LAUGHS.replace(b"&lol9;", b"&lol9;" * 50)
    tracemalloc.start()
    with pytest.raises(ProblemError):
        check_xml(bomb, ".gpx", "bomb.gpx", "file", 1_000_000)
    _, peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    assert peak < 5_000_000
    import gzip

    inflating = gzip.compress(b"<gpx>" + b" " * 20_000_000 + b"</gpx>")
    with pytest.raises(ProblemError, match="not well-formed"):
        check_xml(inflating, ".osm.gz", "big.osm.gz", "file", 1_000_000)


@pytest.mark.parametrize(("name", "content"), [("bomb.gpx", LAUGHS), ("xxe.gpx", EXTERNAL),
                                               ("bomb.osm", LAUGHS.replace(b"gpx", b"osm")),
                                               ("xxe.osm", EXTERNAL.replace(b"gpx", b"osm"))])
def test_command_line_refuses_xml_with_entities(tmp_path, capsys, name, content):
    path = tmp_path / name
    path.write_bytes(content)
    extra = ["--waypoints", "41.2,-31.6;41.21,-31.5", "--no-cache"] \
        if name.endswith(".osm") else []
    assert main(["simulate", str(path), "--vehicle", str(DEMO / "vehicles" / "swift_tern.toml"),
                 "--speed-kph", "50", *extra]) == 2
    out = capsys.readouterr()
    assert out.err.count("\n") == 1 and "Traceback" not in out.err
    assert "root:" not in out.err + out.out


def test_no_paths_or_traces_in_answers(client, demo):
    r = client.post("/simulations", json={"route": demo["loop"], "vehicle": demo["vehicle"]})
    doc = problem_of(r, 422)
    assert "speed limit" in doc["detail"] and "harbour_loop.gpx" in doc["detail"]
    assert str(ROOT) not in r.text and ".files" not in r.text
    assert "access-control-allow-origin" not in client.options(
        "/vehicles", headers={"Origin": "https://elsewhere.example",
                              "Access-Control-Request-Method": "GET"}).headers
    assert client.get("/vehicles").headers["x-content-type-options"] == "nosniff"
