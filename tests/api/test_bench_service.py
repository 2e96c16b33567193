"""The service's load benchmark runs (tiny sizes); its figures come from
``python -m tripsim_api.bench`` (20 clients for 30 s)."""

from __future__ import annotations

import threading
from http.server import BaseHTTPRequestHandler, ThreadingHTTPServer

import pytest
from tripsim_api.bench import run_load


class _Handler(BaseHTTPRequestHandler):
    protocol_version = "HTTP/1.1"

    def do_GET(self):
        status = 200 if self.path == "/ok" else 503
        self.send_response(status)
        self.send_header("Content-Length", "2")
        self.end_headers()
        self.wfile.write(b"ok")

    def log_message(self, *args):
        pass


@pytest.fixture()
def server():
    httpd = ThreadingHTTPServer(("127.0.0.1", 0), _Handler)
    thread = threading.Thread(target=httpd.serve_forever, daemon=True)
    thread.start()
    yield f"http://127.0.0.1:{httpd.server_address[1]}"
    httpd.shutdown()


def test_run_load_counts_and_times(server):
    f = run_load(server, lambda i: ("GET", "/ok" if i % 4 else "/busy", {}), clients=3,
                 seconds=0.5)
    assert f["requests"] > 20 and f["statuses"].keys() == {"200", "503"}
    assert f["errors"] == f["statuses"]["503"]
    assert 0 < f["p50_ms"] <= f["p95_ms"] <= f["max_ms"]


def test_run_load_stays_on_this_machine():
    with pytest.raises(ValueError, match="only to this machine"):
        run_load("http://192.0.2.1:80", lambda i: ("GET", "/", {}), seconds=0.1)


def test_bench_service_runs_small(live_server):
    from tripsim_api.bench import bench_service

    f = bench_service(clients=2, seconds=0.5, kinds=("stored simulation", "plan, same inputs"),
                      base_url=live_server)
    assert f["route_km"] > 100
    for kind in ("stored simulation", "plan, same inputs"):
        assert f["kinds"][kind]["requests"] > 0 and f["kinds"][kind]["errors"] == 0
