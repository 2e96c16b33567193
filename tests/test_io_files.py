"""Reading text the one way: BOMs, declared XML encodings, compressed OSM, size caps, XML attacks.

The refusals themselves are in the corpus (tests/bad_inputs); these are the inputs that
must now be read, and the bounds on memory.
"""

from __future__ import annotations

import bz2
import codecs
import gzip
import json
import tracemalloc

import numpy as np
import pytest
from conftest import DEMO

from tripsim.errors import RouteError, TripsimInputError, VehicleFileError
from tripsim.io import read_osm_graph, read_route, read_vehicle
from tripsim.io._files import decode_text, read_bytes, read_text
from tripsim.io._limits import size_cap_bytes
from tripsim.io.chargers_file import read_lodgings
from tripsim.io.geojson import read_geojson
from tripsim.io.gpx import read_gpx

GPX = ('<?xml version="1.0" encoding="{enc}"?>\n<gpx version="1.1" creator="t" '
       'xmlns="http://www.topografix.com/GPX/1/1"><trk><name>Caf\u00e9 loop</name><trkseg>'
       '<trkpt lat="41.2" lon="-31.6"><ele>10</ele></trkpt>'
       '<trkpt lat="41.201" lon="-31.6"><ele>11</ele></trkpt></trkseg></trk></gpx>\n')


def test_geojson_with_a_byte_order_mark_is_read(tmp_path):
    """Issue 8, item 4: a GeoJSON with a BOM was refused while GPX and CSV with one were read."""
    doc = {"type": "LineString", "coordinates": [[-31.6, 41.2], [-31.6, 41.21]]}
    p = tmp_path / "bom.geojson"
    p.write_bytes(codecs.BOM_UTF8 + json.dumps(doc).encode())
    assert read_geojson(p).n_points == 2


@pytest.mark.parametrize("encoding", ["ISO-8859-1", "windows-1252", "UTF-8"])
def test_gpx_in_its_declared_encoding_is_read(tmp_path, encoding):
    """Issue 8, item 4: a GPX declared ISO-8859-1 was refused."""
    p = tmp_path / "latin.gpx"
    p.write_bytes(GPX.format(enc=encoding).encode(encoding))
    r = read_gpx(p)
    assert r.name == "Café loop (track)" and r.n_points == 2


def test_gpx_in_utf16_with_a_byte_order_mark_is_read(tmp_path):
    p = tmp_path / "wide.gpx"
    p.write_bytes(GPX.format(enc="UTF-16").encode("utf-16"))
    assert read_gpx(p).name == "Café loop (track)"


@pytest.mark.parametrize("reader", ["vehicle", "csv"])
def test_utf8_bom_is_dropped_everywhere(tmp_path, reader):
    if reader == "vehicle":
        p = tmp_path / "car.toml"
        p.write_bytes(codecs.BOM_UTF8 + (DEMO / "vehicles" / "swift_tern.toml").read_bytes())
        assert read_vehicle(p).name == "Swift Tern"
    else:
        p = tmp_path / "beds.csv"
        p.write_bytes(codecs.BOM_UTF8 + (DEMO / "lodgings.csv").read_bytes())
        assert len(read_lodgings(p)) == len(read_lodgings(DEMO / "lodgings.csv"))


def test_decoding_errors_name_the_byte_and_offset(tmp_path):
    with pytest.raises(TripsimInputError, match=r"x.toml: is not UTF-8 text: byte 0xff at offset "
                       r"3 \(line 2\)"):
        decode_text(b"a\nb\xff", tmp_path / "x.toml")
    with pytest.raises(TripsimInputError, match="is not ISO-8859-7 text"):
        decode_text(b'<?xml version="1.0" encoding="ISO-8859-7"?><a>\xff</a>', "x.gpx", xml=True)


def _tiny_osm(encoding: str = "UTF-8", name: str = "Quay Road") -> str:
    return (f"<?xml version='1.0' encoding='{encoding}'?>\n<osm version='0.6'>\n"
            "<node id='1' lat='41.2000' lon='-31.6000'/>\n"
            "<node id='2' lat='41.2010' lon='-31.6000'/>\n"
            "<node id='3' lat='41.2020' lon='-31.6000'/>\n"
            "<way id='10'><nd ref='1'/><nd ref='2'/><nd ref='3'/>"
            f"<tag k='highway' v='primary'/><tag k='name' v='{name}'/></way>\n</osm>\n")


def test_osm_in_a_declared_encoding_and_compressed_is_read(tmp_path):
    plain = tmp_path / "plain.osm"
    plain.write_text(_tiny_osm())
    latin = tmp_path / "latin.osm"
    latin.write_bytes(_tiny_osm("ISO-8859-1", "Caf\u00e9 Road").encode("latin-1"))
    packed_gz = tmp_path / "map.osm.gz"
    packed_gz.write_bytes(gzip.compress(plain.read_bytes()))
    packed_bz2 = tmp_path / "map.osm.bz2"
    packed_bz2.write_bytes(bz2.compress(plain.read_bytes()))
    ref = read_osm_graph(plain, cache=False)
    for path in (latin, packed_gz, packed_bz2):
        G = read_osm_graph(path, cache=False)
        assert G.number_of_edges() == ref.number_of_edges() > 0
    names = {d.get("name") for _, _, d in read_osm_graph(latin, cache=False).edges(data=True)}
    assert names == {"Café Road"}


def test_demo_network_compressed_routes_like_the_plain_file(tmp_path):
    packed = tmp_path / "tamsreach.osm.gz"
    packed.write_bytes(gzip.compress((DEMO / "tamsreach.osm").read_bytes()))
    wp = [(41.2, -31.6), (41.238669, -30.030016)]
    a = read_route(DEMO / "tamsreach.osm", waypoints=wp, cache=False)
    b = read_route(packed, waypoints=wp, cache=False)
    np.testing.assert_array_equal(a.lat_deg, b.lat_deg)


def test_size_caps_are_raised_by_environment(tmp_path, monkeypatch):
    p = tmp_path / "padded.toml"
    p.write_text((DEMO / "vehicles" / "swift_tern.toml").read_text()
                 + ("#" * 99 + "\n") * 15_000)  # 1.5 MB of comments
    with pytest.raises(VehicleFileError, match="a vehicle file is at most 1.0 MB"):
        read_vehicle(p)
    monkeypatch.setenv("TRIPSIM_MAX_VEHICLE_MB", "2")
    assert size_cap_bytes("vehicle") == 2 * 2**20
    assert read_vehicle(p).name == "Swift Tern"


def test_special_files_are_never_opened(tmp_path):
    """/dev/zero read until memory ran out and a FIFO blocked forever (issue 8, item 9)."""
    import os

    fifo = tmp_path / "pipe.gpx"
    os.mkfifo(fifo)
    for path in (fifo, "/dev/zero"):
        with pytest.raises(TripsimInputError, match="is not a regular file"):
            read_bytes(path, "gpx")
    with pytest.raises(TripsimInputError, match="is a folder, expected a file"):
        read_text(tmp_path, "vehicle")


def _laughs(levels: int, root: str) -> str:
    ents = "".join(f'<!ENTITY l{i} "{f"&l{i - 1};" * 10}">' for i in range(1, levels))
    return (f'<?xml version="1.0"?><!DOCTYPE r [<!ENTITY l0 "lol">{ents}]>'
            f"<{root}>&l{levels - 1};</{root}>")


@pytest.mark.parametrize("kind", ["gpx", "osm"])
def test_entity_expansion_is_refused_in_bounded_memory(tmp_path, kind):
    """10**14 "lol"s if expanded; refused at the first declaration, in well under 2 MB."""
    p = tmp_path / f"bomb.{kind}"
    p.write_text(_laughs(15, kind))
    tracemalloc.start()
    try:
        with pytest.raises(RouteError, match="declares XML entities"):
            (read_gpx if kind == "gpx" else read_osm_graph)(p)
        peak = tracemalloc.get_traced_memory()[1]
    finally:
        tracemalloc.stop()
    assert peak < 2 * 2**20


def test_external_entities_are_not_fetched(tmp_path):
    secret = tmp_path / "secret.txt"
    secret.write_text("41.5")
    p = tmp_path / "ext.gpx"
    p.write_text(f'<?xml version="1.0"?><!DOCTYPE gpx [<!ENTITY s SYSTEM "{secret.as_uri()}">]>'
                 '<gpx><trk><trkseg><trkpt lat="&s;" lon="1"/><trkpt lat="1" lon="1"/>'
                 "</trkseg></trk></gpx>")
    with pytest.raises(RouteError, match="declares XML entities") as err:
        read_gpx(p)
    assert "41.5" not in str(err.value)
