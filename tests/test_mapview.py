"""Map pages: self-contained when standalone, loading only from the service when served;
route, start and finish, stops in a list and on the map, nights, profile and caution."""

from __future__ import annotations

import json
import re

import pytest

from tests.conftest import DEMO, make_vehicle, straight_route
from tripsim.caution import CAUTION
from tripsim.cli import main
from tripsim.io.web_assets import leaflet_files, read_leaflet
from tripsim.report.mapview import (
    MapAssets,
    map_page_html,
    plan_page_data,
    trip_map_html,
    trip_page_data,
)
from tripsim.segments import segment_route
from tripsim.simulate import simulate

REMOTE = re.compile(r"<(script|link|img)\b[^>]*(src|href)=[\"']?(https?:)?//", re.I)


@pytest.fixture(scope="module")
def inline():
    return MapAssets.inline(*read_leaflet())


@pytest.fixture(scope="module")
def drained():
    """A trip that runs the battery empty on a long climb."""
    seg = segment_route(straight_route(60_000.0, climb_m=1500.0, n_points=40))
    return simulate(seg, make_vehicle(battery={"usable_kwh": 8.0}), start_soc=0.9)


def test_leaflet_comes_from_the_package_not_the_network():
    files = leaflet_files()
    assert {"leaflet.js", "leaflet.css", "images/layers.png"} <= set(files)
    script, style, images = read_leaflet()
    assert "Leaflet" in script[:400] and "url(images/" not in style
    assert images["marker-icon.png"].startswith("data:image/png;base64,")


def test_standalone_trip_page_is_self_contained(drained, inline):
    page = trip_map_html(drained, title="climb", assets=inline)
    assert not REMOTE.search(page)
    assert "L.Icon.Default.mergeOptions" in page  # default icons as data: URIs
    assert page.count("tripsim-route") >= 1 and "tripsim-start" in page
    assert "tripsim-finish" in page and "battery empty" in page
    assert "tripsim-profile" in page and "<svg" in page
    assert CAUTION.split(":")[0] in page
    data = trip_page_data(drained, title="climb")
    assert data["stops"][0]["kind"] == "stranded"
    assert data["stops"][0]["km"] == pytest.approx(drained.summary.stranded_at_km)
    assert data["route"]["soc"][-1] == pytest.approx(100 * drained.trace["soc"].iloc[-1],
                                                     abs=0.01)
    assert len(data["route"]["lat"]) == len(data["route"]["soc"])
    json.dumps(data)  # page data are plain JSON


def test_served_page_loads_only_from_the_service(drained):
    linked = MapAssets.linked("/assets/leaflet/leaflet.js", "/assets/leaflet/leaflet.css",
                              "/assets/leaflet/images/")
    data = trip_page_data(drained, title="climb")
    page = map_page_html(data, assets=linked)
    srcs = re.findall(r"<(?:script|link)\b[^>]*(?:src|href)=\"([^\"]+)\"", page)
    assert srcs and all(s.startswith("/assets/") for s in srcs)
    assert "L.tileLayer" not in page
    tiled = map_page_html(data, assets=linked, tiles="https://tiles.example/{z}/{x}/{y}.png",
                          tile_attribution="example tiles")
    assert "L.tileLayer" in tiled and "tiles.example" in tiled


def test_a_page_that_would_load_from_another_host_is_refused(drained):
    remote = MapAssets('<script src="https://cdn.example/leaflet.js"></script>')
    with pytest.raises(ValueError, match="from the network"):
        map_page_html(trip_page_data(drained), assets=remote)


def test_plan_page_lists_every_stop_and_marks_nights(tmp_path, inline):
    from tripsim.inputs import load_segments
    from tripsim.io.chargers_file import read_chargers, read_lodgings
    from tripsim.plan.search import PlanOptions, plan_trip

    seg = load_segments(DEMO / "tamsreach.osm", waypoints=[
        (41.2, -31.6), (41.238669, -30.030016), (41.2, -29.331582)],
        dem=DEMO / "tamsreach_dem.tif")
    vehicle = make_vehicle(battery={"usable_kwh": 58.0})
    sites = read_chargers(DEMO / "tamsreach.osm") + read_lodgings(DEMO / "lodgings.csv")
    plan = plan_trip(seg, vehicle, sites, depart="2026-07-14T08:00-02:00", start_soc=0.6,
                     options=PlanOptions(daily_window_h=(9.0, 17.0), max_drive_h=2.0))
    assert plan.feasible
    data = plan_page_data(plan, plan.sites, title="over the pass")
    nights = [s for s in data["stops"] if s["night"]]
    assert len(data["stops"]) == len(plan.stops) and nights
    page = map_page_html(data, assets=inline)
    assert page.count("tripsim-stop-item") == len(plan.stops)
    assert page.count("tripsim-stop-item night") == len(nights)
    assert len(re.findall(r"marker_\w+\.bindPopup\(", page)) == len(plan.stops)
    for s in plan.stops:
        assert s.name in page
    svg = data["profile_svg"]
    assert svg.startswith("<svg") and svg.count("stroke-dasharray") >= len(plan.stops)
    assert not REMOTE.search(page)


def test_simulate_writes_a_map_page(tmp_path, capsys):
    page = tmp_path / "trip.html"
    assert main(["simulate", str(DEMO / "harbour_loop.gpx"), "--vehicle",
                 str(DEMO / "vehicles" / "swift_tern.toml"), "--speed-kph", "50",
                 "--map", str(page)]) == 0
    text = page.read_text()
    assert "tripsim-route" in text and not REMOTE.search(text)
    assert main(["simulate", str(DEMO / "harbour_loop.gpx"), "--vehicle",
                 str(DEMO / "vehicles" / "swift_tern.toml"), "--speed-kph", "50",
                 "--map", str(tmp_path / "trip.png")]) == 2
    assert "--map" in capsys.readouterr().err


def test_a_loop_has_one_marker_for_start_and_finish(inline):
    loop = segment_route(straight_route(3000.0, n_points=3))
    trip = simulate(loop, make_vehicle())
    data = trip_page_data(trip)
    data["ends"][1] = {**data["ends"][1], "lat": data["ends"][0]["lat"],
                       "lon": data["ends"][0]["lon"]}
    page = map_page_html(data, assets=inline)
    assert '"tripsim-start tripsim-finish"' in page and "\\u003eS/F\\u003c" in page
