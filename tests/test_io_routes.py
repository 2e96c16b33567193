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


def _gpx_points(points):
    body = "".join(f'<trkpt lat="{a}" lon="{b}"><ele>{e}</ele></trkpt>' for a, b, e in points)
    return ('<gpx version="1.1" creator="t" xmlns="http://www.topografix.com/GPX/1/1"><trk>'
            f"<trkseg>{body}</trkseg></trk></gpx>")


def test_noisy_gnss_elevation_is_accepted_and_a_cliff_is_not(tmp_path):
    """Steps of a few metres between close points are GNSS noise (smoothed later); a 5,000 m
    rise over 11 m is not a road (issue 8, item 6: it gave 1.3 MWh/km)."""
    noisy = tmp_path / "noisy.gpx"
    noisy.write_text(_gpx_points([(41.2 + i * 1e-5, -31.6, 100 + 8 * (i % 2))
                                  for i in range(50)]))  # ±8 m over 1.1 m
    assert read_gpx(noisy).n_points == 50
    cliff = tmp_path / "cliff.gpx"
    cliff.write_text(_gpx_points([(41.2, -31.6, 10), (41.2001, -31.6, 5010),
                                  (41.201, -31.6, 5012)]))
    with pytest.raises(RouteError, match=r"track point 1 \(line 1\) to the next: elevation "
                       r"changes by 5,000 m over 11 m; a road climbs at most 40%"):
        read_gpx(cliff)
    assert read_gpx(cliff, max_grade=None).elevation_m[1] == 5010.0
    assert read_gpx(cliff, use_elevation=False).elevation_m is None  # --dem replaces them


def test_jumps_between_points_are_named_in_a_warning(tmp_path):
    from tripsim.errors import TripsimWarning

    p = tmp_path / "jump.gpx"
    p.write_text(_gpx_points([(41.2, -31.6, 1), (41.201, -31.6, 1), (0.0, 0.0, 1),
                              (41.202, -31.6, 1)]))
    with pytest.warns(TripsimWarning, match=r"2 jump\(s\) longer than 50 km between consecutive "
                      r"points \(track point 2 \(line 1\) to the next, [\d,]+ km, track point 3"):
        read_gpx(p)


def test_geojson_positions_are_named_by_feature_line_and_index(tmp_path):
    doc = {"type": "Feature", "properties": {}, "geometry": {
        "type": "MultiLineString", "coordinates": [[[-31.6, 41.2], [-31.6, 41.21]],
                                                   [[-31.6, 41.22], [-31.6, 95.0]]]}}
    p = tmp_path / "m.geojson"
    p.write_text(json.dumps(doc))
    with pytest.raises(RouteError, match="feature 0 line 1 position 1: lat = 95 is outside"):
        read_geojson(p)


def test_geojson_integer_coordinates_and_measures(tmp_path):
    """Integers are numbers; a fourth number (a measure) is ignored; booleans are not numbers."""
    doc = {"type": "LineString", "coordinates": [[-31, 41, 10, 0.0], [-31, 41.01, 12, 1.5]]}
    p = tmp_path / "i.geojson"
    p.write_text(json.dumps(doc))
    r = read_geojson(p)
    assert r.lat_deg.tolist() == [41.0, 41.01] and r.elevation_m.tolist() == [10.0, 12.0]


def test_cli_prints_a_warning_on_one_line(tmp_path, capsys):
    from tripsim.cli import main

    p = tmp_path / "jump.gpx"
    p.write_text(_gpx_points([(41.2, -31.6, 1), (41.201, -31.6, 1), (41.9, -31.6, 1)]))
    vehicle = str(DEMO / "vehicles" / "swift_tern.toml")
    assert main(["simulate", str(p), "--vehicle", vehicle, "--speed-kph", "50", "--json"]) == 0
    err = capsys.readouterr().err.strip().splitlines()
    assert len(err) == 1 and err[0].startswith("tripsim: warning: ") and "jump.gpx" in err[0]
