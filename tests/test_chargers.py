import numpy as np
import pytest
from conftest import DEMO, straight_route

from tripsim.errors import TripsimInputError
from tripsim.io.chargers_file import read_chargers, read_lodgings
from tripsim.plan.sites import Site, parse_opening_hours, snap_sites, usable_sites
from tripsim.segments import segment_route


def test_opening_hours_forms():
    assert parse_opening_hours("24/7").always
    assert parse_opening_hours(None).always
    every = parse_opening_hours("08:00-22:00").as_array()
    assert every.shape == (7, 2) and every[0].tolist() == [8 * 3600, 22 * 3600]
    week = parse_opening_hours("Mo-Fr 08:00-18:00; Sa 09:00-13:00").as_array()
    assert len(week) == 6 and week[-1].tolist() == [5 * 86400 + 9 * 3600, 5 * 86400 + 13 * 3600]
    night = parse_opening_hours("Su 18:00-02:00").as_array()
    assert night[0, 1] - night[0, 0] == 8 * 3600
    off = parse_opening_hours("Mo-Su 07:00-21:00; Su off").as_array()
    assert len(off) == 6
    assert parse_opening_hours("sunrise-sunset").always  # unknown forms: assumed open


def test_demo_osm_chargers():
    sites = read_chargers(DEMO / "tamsreach.osm")
    assert len(sites) == 11
    quay = next(s for s in sites if s.name == "Saltreach Quay Chargers")
    assert quay.connectors == {"type2_combo": (4, 150.0), "type2": (2, 22.0)}
    hall = next(s for s in sites if s.name == "Saltreach Market Hall")
    assert not hall.opening.always


def test_csv_chargers_and_bad_rows(tmp_path):
    good = tmp_path / "c.csv"
    good.write_text("lat,lon,name,power_kw,connector,ports,hours\n"
                    "45.0,7.0,A,150,ccs,4,24/7\n45.1,7.0,B,,type2;schuko,2,Mo-Fr 08:00-18:00\n")
    a, b = read_chargers(good)
    assert a.connectors == {"type2_combo": (4, 150.0)}
    assert b.connectors["type2"] == (2, 22.0) and b.connectors["schuko"] == (2, 2.3)
    for text, match in [
        ("lat,lon,name,connector\n95,7,A,type2\n", r"line 2: lat = 95 is out of range"),
        ("lat,lon,name,connector\n45,7,A,warp\n", r"line 2: connector 'warp' is unknown"),
        ("lat,lon,name,connector\n45,7,A,type2\n45,x,B,type2\n", r"line 3: lon = 'x'"),
        ("lat,lon,name\n45,7,A\n", "lacks column"),
        ("lat,lon,name,connector\n45,7,A,\n", "line 2: connector is missing"),
    ]:
        bad = tmp_path / "bad.csv"
        bad.write_text(text)
        with pytest.raises(TripsimInputError, match=match):
            read_chargers(bad)
    other = tmp_path / "c.txt"
    other.write_text("x")
    with pytest.raises(TripsimInputError, match="unknown charger format"):
        read_chargers(other)


def test_lodgings_and_usable_connectors():
    lodgings = read_lodgings(DEMO / "lodgings.csv")
    assert {s.kind for s in lodgings} == {"lodging"}
    bed_only = next(s for s in lodgings if not s.connectors)
    seg = segment_route(straight_route(10_000.0, lat0=41.2, lon0=-31.6))
    sites = [Site("a", "far", 41.5, -31.6, {"type2": (1, 22.0)}),
             Site("b", "near", 41.2005, -31.55, {"chademo": (1, 50.0)}), bed_only]
    snapped = snap_sites(sites, seg, max_offset_m=2000.0)
    assert {s.site.site_id for s in snapped} == {bed_only.site_id, "b"}  # "far" is 33 km off
    ok, no = usable_sites(snapped, ["type2", "type2_combo"])
    assert [s.site.site_id for s in no] == ["b"]  # CHAdeMO only: not for this vehicle
    assert [s.site.site_id for s in ok] == [bed_only.site_id]  # a bed without a charger stays
    assert all(s.detour_m >= 2 * s.offset_m for s in snapped)


def test_network_detour_is_used_on_the_demo_graph(demo_graph):
    from tripsim.roadgraph import network_detour, route_through

    r = route_through(demo_graph, [(41.2, -31.6), (41.2899, -30.8834)])
    seg = segment_route(r)
    sites = read_chargers(DEMO / "tamsreach.osm")
    snapped = snap_sites(sites, seg, network_detour=network_detour(demo_graph))
    assert any(s.via_network for s in snapped)
    assert np.all([s.detour_s > 0 for s in snapped])
