"""OSM XML read for osmnx only after a check of ids, positions, structure and speed tags."""

from __future__ import annotations

import pytest

from tripsim.errors import RouteError, TripsimWarning
from tripsim.io import read_osm_graph


def _osm(nodes: str, ways: str) -> str:
    return f"<?xml version='1.0' encoding='UTF-8'?>\n<osm version='0.6'>\n{nodes}{ways}</osm>\n"


NODES = ("<node id='1' lat='41.2000' lon='-31.6000'/>\n"
         "<node id='2' lat='41.2010' lon='-31.6000'/>\n"
         "<node id='3' lat='41.2020' lon='-31.6000'/>\n")


def _way(maxspeed: str, way_id: int = 10) -> str:
    return (f"<way id='{way_id}'><nd ref='1'/><nd ref='2'/><nd ref='3'/>"
            f"<tag k='highway' v='primary'/><tag k='maxspeed' v='{maxspeed}'/></way>\n")


def test_duplicate_node_id_is_refused_with_the_id(tmp_path):
    """Issue 8, item 8: a second node 2 at the other end of the world made 11,129 km of road."""
    p = tmp_path / "dup.osm"
    p.write_text(_osm(NODES + "<node id='2' lat='-41.0' lon='140.0'/>\n", _way("50")))
    with pytest.raises(RouteError, match=r"dup.osm: line 6: node id 2 appears a second time"):
        read_osm_graph(p, cache=False)


def test_implausible_speed_tags_fall_back_to_the_class_default(tmp_path):
    p = tmp_path / "fast.osm"
    p.write_text(_osm(NODES, _way("9999")))
    with pytest.warns(TripsimWarning, match=r"ignored speed limits outside 1-200 km/h \(way 10 "
                      r"maxspeed=9999\)"):
        G = read_osm_graph(p, cache=False)
    speeds = {d["speed_kph"] for _, _, d in G.edges(data=True)}
    assert speeds == {80.0}  # primary (tripsim.maxspeed.DEFAULT_HIGHWAY_KPH)
    ok = tmp_path / "ok.osm"
    ok.write_text(_osm(NODES, _way("60")))
    assert {d["speed_kph"] for _, _, d in read_osm_graph(ok, cache=False).edges(data=True)} \
        == {60.0}


@pytest.mark.parametrize(("text", "match"), [
    (_osm(NODES + "<tag k='highway' v='stop'/>\n", _way("50")), "<tag> inside <osm>"),
    (_osm(NODES.replace("/>\n<node id='2'", "><node id='2'", 1).replace(
        "'-31.6000'/>\n<node id='3'", "'-31.6000'/></node>\n<node id='3'", 1), _way("50")),
     "<node> inside <node>"),
    (_osm(NODES, "<way id='10'><nd ref='1'/><way id='11'/></way>\n"), "<way> inside <way>"),
    (_osm(NODES, "<relation id='5'><member type='way'/></relation>\n"),
     "<member> needs type and ref"),
])
def test_misplaced_elements_are_refused(tmp_path, text, match):
    p = tmp_path / "odd.osm"
    p.write_text(text)
    with pytest.raises(RouteError, match=match):
        read_osm_graph(p, cache=False)


def test_demo_network_passes_the_check(demo_graph):
    assert demo_graph.number_of_edges() > 100
