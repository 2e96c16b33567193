import numpy as np
import pytest

from tripsim.errors import RouteError
from tripsim.io import read_osm_graph
from tripsim.roadgraph import route_through
from tripsim.route import StopKind

# A-B-C-D along a line eastwards; a private shortcut A-D and a footway A-C; a signal at B;
# B-C has maxspeed:forward=30, maxspeed:backward=70; C-D has no maxspeed (residential).
SMALL_OSM = """<?xml version='1.0' encoding='UTF-8'?>
<osm version='0.6'>
 <node id='1' lat='45.0000' lon='7.0000'/>
 <node id='2' lat='45.0000' lon='7.0100'><tag k='highway' v='traffic_signals'/></node>
 <node id='3' lat='45.0000' lon='7.0200'/>
 <node id='4' lat='45.0000' lon='7.0300'/>
 <node id='5' lat='45.0010' lon='7.0150'/>
 <node id='6' lat='45.0005' lon='7.0100'/>
 <way id='10'><nd ref='1'/><nd ref='2'/><tag k='highway' v='primary'/>
   <tag k='maxspeed' v='50'/></way>
 <way id='11'><nd ref='2'/><nd ref='3'/><tag k='highway' v='primary'/>
   <tag k='maxspeed:forward' v='30'/><tag k='maxspeed:backward' v='70'/></way>
 <way id='12'><nd ref='3'/><nd ref='4'/><tag k='highway' v='residential'/></way>
 <way id='13'><nd ref='1'/><nd ref='5'/><nd ref='4'/><tag k='highway' v='primary'/>
   <tag k='access' v='private'/></way>
 <way id='14'><nd ref='1'/><nd ref='6'/><nd ref='3'/><tag k='highway' v='footway'/></way>
</osm>
"""


@pytest.fixture
def small_graph(tmp_path):
    p = tmp_path / "small.osm"
    p.write_text(SMALL_OSM)
    return read_osm_graph(p, cache=False)


def test_filter_drops_private_and_footways(small_graph):
    assert 5 not in small_graph and 6 not in small_graph
    assert set(small_graph.nodes) == {1, 2, 3, 4}


def test_route_keeps_limits_signals_and_direction(small_graph):
    east = route_through(small_graph, [(45.0, 7.0), (45.0, 7.03)])
    assert east.n_points == 4
    assert east.speed_limit_kph.tolist() == [50.0, 30.0, 30.0]  # residential default 30
    assert east.stop_kind.tolist() == [StopKind.END, StopKind.SIGNALS, 0, StopKind.END]
    west = route_through(small_graph, [(45.0, 7.03), (45.0, 7.0)])
    assert west.speed_limit_kph.tolist() == [30.0, 70.0, 50.0]
    assert west.highway.tolist() == ["residential", "primary", "primary"]


def test_waypoint_off_the_map(small_graph):
    with pytest.raises(RouteError, match=r"waypoint 2 .* km from the nearest road"):
        route_through(small_graph, [(45.0, 7.0), (46.0, 7.0)])


def test_malformed_xml(tmp_path):
    p = tmp_path / "bad.osm"
    p.write_text("<osm><node id='1'")
    with pytest.raises(RouteError, match=r"bad\.osm"):
        read_osm_graph(p, cache=False)


def test_no_drivable_roads(tmp_path):
    p = tmp_path / "paths.osm"
    p.write_text("<osm version='0.6'><node id='1' lat='45' lon='7'/><node id='2' lat='45.01' "
                 "lon='7'/><way id='1'><nd ref='1'/><nd ref='2'/><tag k='highway' v='path'/>"
                 "</way></osm>")
    with pytest.raises(RouteError, match="no road a car may drive"):
        read_osm_graph(p, cache=False)


def test_unreachable_waypoints(tmp_path):
    # two separate one-way pieces: no way back from the second to the first
    p = tmp_path / "oneway.osm"
    p.write_text("<osm version='0.6'><node id='1' lat='45' lon='7'/><node id='2' lat='45' "
                 "lon='7.01'/><way id='1'><nd ref='1'/><nd ref='2'/><tag k='highway' "
                 "v='primary'/><tag k='oneway' v='yes'/></way></osm>")
    G = read_osm_graph(p, cache=False)
    with pytest.raises(RouteError, match="no drivable path from waypoint 1 to waypoint 2"):
        route_through(G, [(45.0, 7.01), (45.0, 7.0)])


def test_cache_round_trip(tmp_path, monkeypatch):
    monkeypatch.setenv("TRIPSIM_CACHE_DIR", str(tmp_path / "cache"))
    p = tmp_path / "small.osm"
    p.write_text(SMALL_OSM)
    first = read_osm_graph(p)
    assert list((tmp_path / "cache").glob("graph-*.pickle"))
    second = read_osm_graph(p)
    assert sorted(first.edges) == sorted(second.edges)


def test_demo_network_pass_route(demo_graph):
    r = route_through(demo_graph, [(41.2, -31.6), (41.238669, -30.030016), (41.2, -29.331582)])
    from tripsim.segments import segment_route

    assert 195_000 < segment_route(r)["length_m"].sum() < 220_000
    assert "motorway" in set(r.highway) and "secondary" in set(r.highway)
    assert (r.stop_kind == StopKind.SIGNALS).sum() >= 2
    assert np.isfinite(r.speed_limit_kph).all()
