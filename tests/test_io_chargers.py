"""Charging sites and lodgings from files: OSM sockets tripsim does not know are noted."""

from __future__ import annotations

import pytest
from conftest import DEMO

from tripsim.errors import TripsimInputError, TripsimWarning
from tripsim.io.chargers_file import read_chargers, read_lodgings

OSM = """<?xml version='1.0' encoding='UTF-8'?>
<osm version='0.6'>
  <node id='1' lat='41.2' lon='-31.6'>
    <tag k='amenity' v='charging_station'/>
    <tag k='name' v='Quay'/>
    <tag k='socket:type2' v='2'/>
    <tag k='socket:type2:output' v='22 kW'/>
    <tag k='socket:hyperloop' v='1'/>
    <tag k='socket:type2_combo' v='2'/>
    <tag k='socket:type2_combo:output' v='5000 kW'/>
  </node>
</osm>
"""


def test_unknown_osm_sockets_are_skipped_with_a_note(tmp_path):
    p = tmp_path / "sites.osm"
    p.write_text(OSM)
    with pytest.warns(TripsimWarning, match=r"sites.osm: ignored 2 socket tag\(s\) that tripsim "
                      r"does not know or finds implausible \(node 1 socket:hyperloop, node 1 "
                      r"socket:type2_combo:output=5000 kW\)"):
        (site,) = read_chargers(p)
    assert site.connectors == {"type2": (2, 22.0), "type2_combo": (2, 50.0)}  # default power


def test_unknown_csv_connector_names_file_and_line(tmp_path):
    p = tmp_path / "sites.csv"
    p.write_text("lat,lon,name,connector\n41.2,-31.6,a,type2\n41.3,-31.6,b,type2;warp_plug\n")
    with pytest.raises(TripsimInputError, match=r"sites.csv: line 3: connector 'warp_plug' is "
                       "unknown"):
        read_chargers(p)


def test_csv_with_quoted_fields_and_blank_lines(tmp_path):
    p = tmp_path / "beds.csv"
    p.write_text('lat,lon,name\n\n41.2,-31.6,"Inn, by the quay"\n\n')
    (bed,) = read_lodgings(p)
    assert bed.name == "Inn, by the quay" and bed.source.endswith("line 3")


def test_demo_chargers_read_without_notes():
    import warnings

    with warnings.catch_warnings():
        warnings.simplefilter("error", TripsimWarning)
        sites = read_chargers(DEMO / "tamsreach.osm")
    assert len(sites) > 5 and all(s.connectors for s in sites)
