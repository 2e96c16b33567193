"""Write the bad-input corpus files (tests/bad_inputs/files/): one small file per case.

Run ``.venv/bin/python tests/bad_inputs/make_corpus.py`` after changing a case here; the
files are committed so that the corpus can be read without running this.  Which file
goes with which command line and expected message is in ``cases.toml``.  Big and
special inputs (FIFOs, /dev/zero, files over a size cap, 100,000-deep nesting) and
variants of the demo weather year are made at run time by ``tests/test_bad_inputs.py``.
"""

from __future__ import annotations

import bz2
import gzip
import shutil
from pathlib import Path

import numpy as np

HERE = Path(__file__).resolve().parent
FILES = HERE / "files"

VEHICLE = """name = "corpus car"
[body]
mass_kg = 1450.0
payload_kg = 80.0
cd = 0.27
frontal_area_m2 = 2.25
crr = 0.0085
[drivetrain]
efficiency = 0.90
regen_efficiency = 0.70
[battery]
usable_kwh = 58.0
[auxiliary]
base_w = 350.0
"""


def vehicle(**replace: str) -> str:
    """The base vehicle with lines ``key = value`` replaced or added (``table.key``)."""
    lines = VEHICLE.splitlines()
    for dotted, value in replace.items():
        table, _, key = dotted.rpartition(".")
        hit = [i for i, ln in enumerate(lines) if ln.split(" = ")[0] == key]
        if hit:
            lines[hit[0]] = f"{key} = {value}"
        else:
            at = lines.index(f"[{table}]") if f"[{table}]" in lines else len(lines)
            if at == len(lines):
                lines.append(f"[{table}]")
                at = len(lines) - 1
            lines.insert(at + 1, f"{key} = {value}")
    return "\n".join(lines) + "\n"


def gpx(points: list[tuple[str, str, str | None]], *, decl: str = "UTF-8") -> str:
    body = "\n".join(
        f'  <trkpt lat="{lat}" lon="{lon}">' + (f"<ele>{ele}</ele>" if ele is not None else "")
        + "</trkpt>" for lat, lon, ele in points)
    return (f'<?xml version="1.0" encoding="{decl}"?>\n<gpx version="1.1" creator="corpus" '
            f'xmlns="http://www.topografix.com/GPX/1/1">\n<trk><name>c</name><trkseg>\n{body}\n'
            "</trkseg></trk>\n</gpx>\n")


PTS = [("41.2000", "-31.6000", "10"), ("41.2010", "-31.6000", "12"),
       ("41.2020", "-31.6000", "13")]


def geojson(coords: str = "[[-31.6, 41.2, 10], [-31.6, 41.201, 12]]",
            props: str = '{"maxspeed": "50"}', geometry: str | None = None) -> str:
    geom = geometry or f'{{"type": "LineString", "coordinates": {coords}}}'
    return ('{"type": "FeatureCollection", "features": [{"type": "Feature", '
            f'"properties": {props}, "geometry": {geom}}}]}}\n')


def osm(nodes: str | None = None, ways: str | None = None) -> str:
    nodes = nodes if nodes is not None else (
        "  <node id='1' lat='41.2000' lon='-31.6000'/>\n"
        "  <node id='2' lat='41.2010' lon='-31.6000'/>\n"
        "  <node id='3' lat='41.2020' lon='-31.6000'/>\n")
    ways = ways if ways is not None else (
        "  <way id='10'><nd ref='1'/><nd ref='2'/><nd ref='3'/>"
        "<tag k='highway' v='primary'/></way>\n")
    return f"<?xml version='1.0' encoding='UTF-8'?>\n<osm version='0.6'>\n{nodes}{ways}</osm>\n"


CSV_OK = "lat,lon,name,connector,power_kw\n41.2,-31.6,Quay charger,type2,22\n"

LAUGHS = ('<?xml version="1.0"?>\n<!DOCTYPE lolz [\n <!ENTITY lol "lol">\n'
          + "".join(f' <!ENTITY lol{i} "{("&lol%s;" % ("" if i == 1 else i - 1)) * 10}">\n'
                    for i in range(1, 10))
          + ']>\n')
EXTERNAL = ('<?xml version="1.0"?>\n<!DOCTYPE r [\n <!ENTITY ext SYSTEM '
            '"file:///etc/passwd">\n]>\n')


def texts() -> dict[str, str | bytes]:
    """Every corpus file by name: str is written as UTF-8, bytes as they are."""
    latin = "é".encode("latin-1")
    return {
        # 4. text that is not UTF-8, byte-order marks, NULs
        "vehicle_latin1.toml": VEHICLE.replace('"corpus car"', '"caf\x00"').encode()
        .replace(b"caf\x00", b"caf" + latin),
        "vehicle_utf16.toml": VEHICLE.encode("utf-16"),
        "vehicle_nul.toml": VEHICLE.replace("[battery]", "[battery]\x00"),
        "vehicle_png.toml": b"\x89PNG\r\n\x1a\n\x00\x00\x00\rIHDR" + bytes(range(256)),
        "route_latin1.geojson": geojson(props='{"name": "caf\x00"}').encode()
        .replace(b"caf\x00", b"caf" + latin),
        "route_utf8_declared_latin1_bytes.gpx": gpx(PTS).replace("<name>c</name>",
                                                                  "<name>caf\x00</name>")
        .encode().replace(b"caf\x00", b"caf" + latin),
        "route_unknown_encoding.gpx": gpx(PTS, decl="x-tamsreach-7"),
        "route_utf16_declared_no_bom.gpx": gpx(PTS, decl="UTF-16"),
        "chargers_latin1.csv": CSV_OK.replace("Quay", "Caf\x00").encode()
        .replace(b"Caf\x00", b"Caf" + latin),
        "lodgings_latin1.csv": b"lat,lon,name\n41.2,-31.6,Caf\x00\n"
        .replace(b"Caf\x00", b"Caf" + latin),
        "map_latin1_bytes.osm": osm().replace("primary'/>", "primary'/><tag k='name' "
                                              "v='caf\x00'/>").encode()
        .replace(b"caf\x00", b"caf" + latin),
        # 5. structure
        "route_feature_number.geojson": '{"type": "FeatureCollection", "features": [5]}\n',
        "route_properties_list.geojson": geojson(props="[1, 2]"),
        "route_properties_string.geojson": geojson(props='"fast"'),
        "route_coordinates_number.geojson": geojson(coords="5"),
        "route_coordinates_string.geojson": geojson(coords='"-31.6,41.2"'),
        "route_position_five_numbers.geojson": geojson(coords="[[1, 2, 3, 4, 5], [1, 2]]"),
        "route_position_string.geojson": geojson(coords='[["-31.6", 41.2], [-31.6, 41.3]]'),
        "route_geometry_null.geojson": geojson(geometry="null"),
        "route_geometry_string.geojson": geojson(geometry='"LineString"'),
        "route_multiline_number.geojson": geojson(
            geometry='{"type": "MultiLineString", "coordinates": [5]}'),
        "route_features_object.geojson": '{"type": "FeatureCollection", "features": {}}\n',
        "route_top_level_list.geojson": "[[-31.6, 41.2], [-31.6, 41.3]]\n",
        "route_type_number.geojson": '{"type": 5}\n',
        "route_nan_literal.geojson": geojson(coords="[[-31.6, NaN], [-31.6, 41.3]]"),
        "route_huge_integer.geojson": geojson(coords=f"[[-31.6, {'4' * 5000}], [-31.6, 41]]"),
        "route_highway_list.geojson": geojson(props='{"highway": ["primary"]}'),
        "route_truncated.geojson": geojson()[:60],
        "vehicle_body_number.toml": VEHICLE.replace("[body]\n", "body = 5\n[x]\n"),
        "vehicle_panels_table.toml": vehicle(**{"panels.area_m2": "1.0"}).replace(
            "[panels]", "[panels]"),
        "vehicle_connectors_string.toml": vehicle(**{"charging.connectors": '"type2"'}),
        "vehicle_not_toml.toml": "[body\nmass_kg = 1\n",
        "vehicle_huge_integer.toml": vehicle(**{"body.mass_kg": "9" * 5000}),
        "scenario_list_number.toml": "scenario = 5\n",
        "scenario_list_of_numbers.toml": "scenario = [1, 2]\n",
        "map_root_gpx.osm": gpx(PTS),
        "map_not_xml.osm": "this is not xml\n",
        "map_node_id_text.osm": osm(nodes="  <node id='one' lat='41.2' lon='-31.6'/>\n", ways=""),
        "map_node_id_too_big.osm": osm(nodes=f"  <node id='{2**70}' lat='41.2' lon='-31.6'/>\n",
                                       ways=""),
        "map_tag_without_value.osm": osm(ways="  <way id='10'><nd ref='1'/><nd ref='2'/>"
                                              "<tag k='highway'/></way>\n"),
        "map_nd_ref_text.osm": osm(ways="  <way id='10'><nd ref='1'/><nd ref='two'/></way>\n"),
        "map_missing_node.osm": osm(ways="  <way id='10'><nd ref='1'/><nd ref='2'/><nd ref='9'/>"
                                         "<tag k='highway' v='primary'/></way>\n"),
        "map_corrupt.osm.gz": b"\x1f\x8b\x08\x00" + bytes(range(7, 200)),
        "map_truncated.osm.gz": gzip.compress(osm().encode(), mtime=0)[:80],
        "map_not_gzip.osm.gz": osm().encode(),
        "map_corrupt.osm.bz2": b"BZh9" + bytes(range(11, 220)),
        "map_truncated.osm.bz2": bz2.compress(osm().encode())[:90],
        "route_root_osm.gpx": osm(),
        "route_trkpt_without_lat.gpx": gpx(PTS).replace('lat="41.2010" ', ""),
        "route_lat_text.gpx": gpx([("north", "-31.6", "1"), *PTS]),
        "route_ele_text.gpx": gpx([("41.2", "-31.6", "high"), *PTS]),
        "route_not_well_formed.gpx": gpx(PTS).replace("</trkseg>", "</trk>"),
        "route_empty.gpx": "",
        "chargers_no_lat_column.csv": "latitude,lon,name,connector\n41.2,-31.6,a,type2\n",
        "chargers_duplicate_column.csv": "lat,lon,name,connector,lat\n41.2,-31.6,a,type2,41\n",
        "chargers_too_many_fields.csv": CSV_OK + "41.2,-31.6,b,type2,22,7,x\n",
        "chargers_unclosed_quote.csv": 'lat,lon,name,connector\n41.2,-31.6,"open,type2\n',
        "chargers_header_only.csv": "lat,lon,name,connector\n",
        "lodgings_no_name_column.csv": "lat,lon\n41.2,-31.6\n",
        "dem_text.tif": "this is not a raster\n",
        "dem_vrt.tif": ('<VRTDataset rasterXSize="2" rasterYSize="2"><VRTRasterBand '
                        'dataType="Float32" band="1"><SimpleSource><SourceFilename>'
                        "/etc/passwd</SourceFilename></SimpleSource></VRTRasterBand>"
                        "</VRTDataset>\n"),
        "dem_truncated.tif": _dem_bytes(np.full((20, 20), 10.0))[:300],
        "dem_no_crs.tif": _dem_bytes(np.full((20, 20), 10.0), crs=None),
        # 6. absurd values
        "route_ele_1e6.gpx": gpx([("41.2000", "-31.6000", "1e6"), *PTS[1:]]),
        "route_ele_1e308.gpx": gpx([("41.2000", "-31.6000", "1e308"), *PTS[1:]]),
        "route_ele_inf.gpx": gpx([("41.2000", "-31.6000", "inf"), *PTS[1:]]),
        "route_all_below_minus_100km.gpx": gpx([(a, b, "-100000") for a, b, _ in PTS]),
        "route_rise_5000m_over_11m.gpx": gpx([("41.2000", "-31.6000", "10"),
                                              ("41.2001", "-31.6000", "5010"),
                                              ("41.2010", "-31.6000", "5012")]),
        "route_lat_subnormal.gpx": gpx([("1e-320", "-31.6000", "10"), *PTS[1:]]),
        "route_lat_91.gpx": gpx([("91", "-31.6000", "10"), *PTS[1:]]),
        "route_lon_200.gpx": gpx([("41.2", "200", "10"), *PTS[1:]]),
        "route_lat_nan.gpx": gpx([("nan", "-31.6", "10"), *PTS[1:]]),
        "route_lat_inf.gpx": gpx([("-inf", "-31.6", "10"), *PTS[1:]]),
        "route_coordinate_true.geojson": geojson(coords="[[-31.6, true], [-31.6, 41.3]]"),
        "route_coordinate_overflow.geojson": geojson(coords="[[-31.6, 1e400], [-31.6, 41.3]]"),
        "route_speed_limit_true.geojson": geojson(props='{"speed_limit_kph": true}'),
        "route_speed_limit_1e300.geojson": geojson(props='{"speed_limit_kph": 1e300}'),
        "route_speed_limit_half.geojson": geojson(props='{"speed_limit_kph": 0.5}'),
        "route_speed_limit_string.geojson": geojson(props='{"speed_limit_kph": "50"}'),
        "route_maxspeed_99999.geojson": geojson(props='{"maxspeed": "99999"}'),
        "route_maxspeed_true.geojson": geojson(props='{"maxspeed": true}'),
        "route_ele_1e6.geojson": geojson(coords="[[-31.6, 41.2, 1e6], [-31.6, 41.201, 12]]"),
        "route_lat_subnormal.geojson": geojson(coords="[[-31.6, 1e-320], [-31.6, 41.201]]"),
        "route_lon_minus_500.geojson": geojson(coords="[[-500, 41.2], [-31.6, 41.201]]"),
        "route_rise_5000m.geojson": geojson(coords="[[-31.6, 41.2, 10], [-31.6, 41.2001, 5010]]"),
        "vehicle_efficiency_true.toml": vehicle(**{"drivetrain.efficiency": "true"}),
        "vehicle_mass_nan.toml": vehicle(**{"body.mass_kg": "nan"}),
        "vehicle_mass_inf.toml": vehicle(**{"body.mass_kg": "inf"}),
        "vehicle_mass_string.toml": vehicle(**{"body.mass_kg": '"1450"'}),
        "vehicle_heat_pump_int.toml": vehicle(**{"auxiliary.heat_pump": "1"}),
        "vehicle_map_speed_nan.toml": vehicle(**{"drivetrain.efficiency": "0.9"}) + (
            "[drivetrain.efficiency_map]\nspeed_kph = [0.0, nan, 120.0]\n"
            "torque_nm = [0.0, 300.0]\nefficiency = [[0.8, 0.9], [0.8, 0.9], [0.8, 0.9]]\n"),
        "vehicle_panel_area_true.toml": VEHICLE + "[[panels]]\narea_m2 = true\nefficiency = 0.2\n",
        "chargers_lat_subnormal.csv": "lat,lon,name,connector\n1e-320,-31.6,a,type2\n",
        "chargers_lat_nan.csv": "lat,lon,name,connector\nnan,-31.6,a,type2\n",
        "chargers_power_1e300.csv": "lat,lon,name,connector,power_kw\n41.2,-31.6,a,type2,1e300\n",
        "chargers_ports_fraction.csv": "lat,lon,name,connector,ports\n41.2,-31.6,a,type2,2.5\n",
        "lodgings_lat_95.csv": "lat,lon,name\n95,-31.6,Inn\n",
        "scenario_temp_true.toml": 'vehicle = "v.toml"\n[route]\nfile = "a.gpx"\n'
                                   "[conditions]\ntemp_c = true\n",
        "scenario_soc_nan.toml": 'vehicle = "v.toml"\nstart_soc = nan\n[route]\nfile = "a.gpx"\n',
        "scenario_factors_bool.toml": 'kind = "plan"\nvehicle = "v.toml"\n[route]\n'
                                      'file = "a.osm"\n[plan]\nchargers = "c.csv"\n'
                                      "speed_factors = [0.9, true]\n",
        "map_node_lat_subnormal.osm": osm(nodes="  <node id='1' lat='1e-320' lon='-31.6'/>\n"
                                                "  <node id='2' lat='41.2' lon='-31.6'/>\n",
                                          ways=""),
        "map_node_lat_91.osm": osm(nodes="  <node id='1' lat='91' lon='-31.6'/>\n", ways=""),
        "map_node_lon_nan.osm": osm(nodes="  <node id='1' lat='41' lon='nan'/>\n", ways=""),
        "dem_fill_1e30.tif": _dem_bytes(np.full((20, 20), 1e30, dtype=np.float32)),
        "dem_fill_minus_32768.tif": _dem_bytes(np.full((20, 20), -32768.0, dtype=np.float32)),
        # 7. charging data
        "chargers_connector_unknown.csv": "lat,lon,name,connector\n41.2,-31.6,a,type7\n",
        "lodgings_connector_unknown.csv": "lat,lon,name,connector\n41.2,-31.6,Inn,warp_plug\n",
        "vehicle_cop_zero.toml": vehicle(**{"auxiliary.heat_pump": "true",
                                            "auxiliary.heat_pump_cop":
                                            "{ x = [-20.0, 10.0], y = [0.0, 3.0] }"}),
        "vehicle_cop_negative.toml": vehicle(**{"auxiliary.heat_pump": "true",
                                                "auxiliary.heat_pump_cop":
                                                "{ x = [-20.0, 10.0], y = [-2.0, 3.0] }"}),
        "vehicle_charge_curve_zero.toml": vehicle(**{"charging.dc_max_kw": "50.0",
                                                     "charging.curve":
                                                     "{ x = [0.0, 1.0], y = [50.0, 0.0] }"}),
        "vehicle_charge_curve_negative.toml": vehicle(**{"charging.dc_max_kw": "50.0",
                                                         "charging.curve":
                                                         "{ x = [0.0, 1.0], y = [-5.0, 50.0] }"}),
        "vehicle_connector_unknown.toml": vehicle(**{"charging.connectors": '["warp_plug"]'}),
        # 8. duplicate OSM ids
        "map_duplicate_node.osm": osm(nodes="  <node id='1' lat='41.2000' lon='-31.6000'/>\n"
                                            "  <node id='2' lat='41.2010' lon='-31.6000'/>\n"
                                            "  <node id='2' lat='-41.0' lon='140.0'/>\n",
                                      ways="  <way id='10'><nd ref='1'/><nd ref='2'/>"
                                           "<tag k='highway' v='primary'/></way>\n"),
        "map_duplicate_way.osm": osm(ways="  <way id='10'><nd ref='1'/><nd ref='2'/></way>\n"
                                          "  <way id='10'><nd ref='2'/><nd ref='3'/></way>\n"),
        # scenario files (tripsim run) and coast-down runs (tripsim coastdown)
        "scenario_latin1.toml": b'kind = "simulate"\nname = "caf' + latin + b'"\n',
        "scenario_not_toml.toml": 'kind = "simulate"\n[route\n',
        "scenario_nul.toml": 'kind = "simulate"\x00\n',
        "scenario_huge_integer.toml": "speed_kph = " + "9" * 5000 + "\n",
        "coastdown_latin1.csv": b"run,t_s,speed_kph\n1,0,100\n# caf" + latin + b"\n",
        "coastdown_utf16.csv": "run,t_s,speed_kph\n1,0,100\n".encode("utf-16"),
        "coastdown_billion_laughs.gpx": LAUGHS + '<gpx version="1.1">&lol9;</gpx>\n',
        "coastdown_lat_subnormal.gpx": _timed_gpx(lat0="1e-320"),
        "coastdown_time_text.gpx": _timed_gpx(stamp="yesterday"),
        "coastdown_no_segments.gpx": gpx([]).replace("<trk><name>c</name><trkseg>\n\n"
                                                     "</trkseg></trk>", ""),
        "coastdown_not_well_formed.gpx": _timed_gpx().replace("</trkseg>", ""),
        # logged drives (tripsim simulate --from-log)
        "log_latin1.csv": b"t,lat,lon\n0,41.2,-31.6\n# caf" + latin + b"\n",
        "log_external_entity.gpx": EXTERNAL + '<gpx version="1.1">&ext;</gpx>\n',
        "log_ele_1e6.gpx": _timed_gpx().replace("</time></trkpt>", "</time><ele>1e6</ele>"
                                                "</trkpt>"),
        "log_lon_subnormal.gpx": _timed_gpx().replace('lon="-31.0000"', 'lon="-1e-320"'),
        "log_time_text.gpx": _timed_gpx(stamp="noon"),
        # XML attacks (refused before any expansion)
        "route_billion_laughs.gpx": LAUGHS + '<gpx version="1.1">&lol9;</gpx>\n',
        "route_external_entity.gpx": EXTERNAL + '<gpx version="1.1">&ext;</gpx>\n',
        "map_billion_laughs.osm": LAUGHS + "<osm version='0.6'>&lol9;</osm>\n",
        "map_external_entity.osm": EXTERNAL + "<osm version='0.6'>&ext;</osm>\n",
    }


def _timed_gpx(*, lat0: str = "41.3", stamp: str | None = None) -> str:
    """A coast-down run: eight points a second apart along a parallel."""
    pts = "".join(f'<trkpt lat="{lat0 if i == 0 else "41.3"}" lon="{-31.0 + 0.0003 * i:.4f}">'
                  f"<time>{stamp or f'2026-05-04T07:00:{i:02d}Z'}</time></trkpt>"
                  for i in range(8))
    return ('<?xml version="1.0"?><gpx version="1.1" creator="corpus" '
            f'xmlns="http://www.topografix.com/GPX/1/1"><trk><name>flats</name><trkseg>{pts}'
            "</trkseg></trk></gpx>\n")


def _dem_bytes(values: np.ndarray, *, crs: str | None = "EPSG:4326") -> bytes:
    """A small GeoTIFF over the demo harbour loop (-31.7..-31.5 E, 41.1..41.3 N)."""
    import rasterio
    from rasterio.io import MemoryFile
    from rasterio.transform import from_bounds

    rows, cols = values.shape
    profile = {"driver": "GTiff", "width": cols, "height": rows, "count": 1,
               "dtype": str(values.dtype), "transform": from_bounds(-31.7, 41.1, -31.5, 41.3,
                                                                    cols, rows)}
    if crs:
        profile["crs"] = rasterio.crs.CRS.from_string(crs)
    with MemoryFile() as mem:
        with mem.open(**profile) as dst:
            dst.write(values, 1)
        return bytes(mem.read())


def main() -> None:
    if FILES.exists():
        shutil.rmtree(FILES)
    FILES.mkdir()
    for name, content in sorted(texts().items()):
        data = content.encode("utf-8") if isinstance(content, str) else content
        (FILES / name).write_bytes(data)
    print(f"wrote {len(texts())} files to {FILES}")


if __name__ == "__main__":
    main()
