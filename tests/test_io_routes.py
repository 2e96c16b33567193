import json

import numpy as np
import pytest
from conftest import DEMO

from tripsim.errors import RouteError
from tripsim.io import read_route
from tripsim.io.geojson import read_geojson
from tripsim.io.gpx import read_gpx

GPX = """<?xml version="1.0"?>
<gpx version="1.1" creator="test" xmlns="http://www.topografix.com/GPX/1/1">
 <trk><name>t</name><trkseg>
  <trkpt lat="45.0" lon="7.0">{e1}</trkpt>
  <trkpt lat="45.001" lon="7.0">{e2}</trkpt>
  <trkpt lat="45.002" lon="7.0"><ele>103</ele></trkpt>
 </trkseg></trk>
</gpx>"""


def test_gpx_track_with_elevation(tmp_path):
    p = tmp_path / "a.gpx"
    p.write_text(GPX.format(e1="<ele>100</ele>", e2="<ele>101</ele>"))
    r = read_gpx(p)
    assert r.n_points == 3 and r.elevation_m.tolist() == [100.0, 101.0, 103.0]
    assert np.isnan(r.speed_limit_kph).all()


def test_gpx_partial_elevation_is_an_error_unless_ignored(tmp_path):
    p = tmp_path / "a.gpx"
    p.write_text(GPX.format(e1="<ele>100</ele>", e2=""))
    with pytest.raises(RouteError, match="NaN"):
        read_gpx(p)
    assert read_gpx(p, use_elevation=False).elevation_m is None


def test_gpx_route_points_when_no_track(tmp_path):
    p = tmp_path / "r.gpx"
    p.write_text('<gpx version="1.1" creator="t" xmlns="http://www.topografix.com/GPX/1/1"><rte>'
                 '<rtept lat="45" lon="7"/><rtept lat="45.01" lon="7"/></rte></gpx>')
    assert read_gpx(p).n_points == 2


@pytest.mark.parametrize(("text", "match"), [
    ("<gpx><trk>", "not well-formed GPX"),
    ('<gpx version="1.1" creator="t"><trk><trkseg><trkpt lat="45" lon="7"/></trkseg></trk></gpx>',
     "holds 1"),
])
def test_malformed_gpx(tmp_path, text, match):
    p = tmp_path / "bad.gpx"
    p.write_text(text)
    with pytest.raises(RouteError, match=match) as err:
        read_gpx(p)
    assert "bad.gpx" in str(err.value)


def test_geojson_multiline_with_limits(tmp_path):
    doc = {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"maxspeed": "30 mph"},
         "geometry": {"type": "LineString", "coordinates": [[7.0, 45.0, 10], [7.0, 45.01, 12]]}},
        {"type": "Feature", "properties": {"speed_limit_kph": 90},
         "geometry": {"type": "MultiLineString",
                      "coordinates": [[[7.0, 45.02, 14], [7.0, 45.03, 15]]]}}]}
    p = tmp_path / "r.geojson"
    p.write_text(json.dumps(doc))
    r = read_geojson(p)
    assert r.n_points == 4
    assert r.speed_limit_kph == pytest.approx([30 * 1.609344, 90.0, 90.0])
    assert r.elevation_m.tolist() == [10, 12, 14, 15]


@pytest.mark.parametrize(("text", "match"), [
    ("{not json", "invalid JSON at line 1"),
    ('{"type": "Point", "coordinates": [7, 45]}', "expected LineString"),
    ('{"type": "LineString", "coordinates": [[7, 45], ["x", 45]]}', "not \\[lon, lat"),
    ('{"type": "LineString", "coordinates": [[7, 45]]}', "holds 1 positions"),
    ('{"type": "Feature", "properties": {"speed_limit_kph": -3}, "geometry": '
     '{"type": "LineString", "coordinates": [[7, 45], [7, 45.1]]}}', "speed_limit_kph"),
])
def test_malformed_geojson(tmp_path, text, match):
    p = tmp_path / "bad.geojson"
    p.write_text(text)
    with pytest.raises(RouteError, match=match):
        read_geojson(p)


def test_read_route_dispatch_errors(tmp_path):
    with pytest.raises(RouteError, match="unknown route format"):
        read_route(tmp_path / "x.kml")
    with pytest.raises(RouteError, match="no such file"):
        read_route(tmp_path / "x.gpx")
    with pytest.raises(RouteError, match="needs --waypoints"):
        read_route(DEMO / "tamsreach.osm")
    with pytest.raises(RouteError, match="only applies to OSM"):
        read_route(DEMO / "harbour_loop.gpx", waypoints=[(41.2, -31.6), (41.3, -31.6)])


def test_demo_files_read():
    assert read_route(DEMO / "harbour_loop.gpx").elevation_source == "file"
    r = read_route(DEMO / "old_coast_road.geojson")
    assert np.isfinite(r.speed_limit_kph).all()
