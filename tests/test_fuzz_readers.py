"""Mutated demo files through every reader: a result or a TripsimInputError, nothing else.

Byte-wise mutations (flips, insertions, deletions, truncation, repeats) and structural
ones (a value swapped for a number, a boolean, NaN, a subnormal, an empty list, a nested
table, ...; lines deleted or repeated) of small versions of the demo files.  Hypothesis
runs derandomized with a bounded number of examples, so every run tries the same inputs
(about 20 s in all).
"""

from __future__ import annotations

import bz2
import gzip
import re
import warnings
from collections.abc import Callable
from pathlib import Path
from typing import Any

import numpy as np
import pytest
from conftest import DEMO
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from tripsim.errors import TripsimInputError

_SETTINGS = {"derandomize": True, "deadline": None, "database": None,
             "suppress_health_check": [HealthCheck.too_slow, HealthCheck.data_too_large,
                                       HealthCheck.function_scoped_fixture]}

# values a hostile or broken file may hold where a number or a word belongs
_ODD_TEXT = ["nan", "-inf", "inf", "1e-320", "1e308", "-1e308", "99999999999999999999999",
             "0", "-0", "-1", "", " ", "true", "abc", "1e", "0x10", "1_000", "१२", "&amp;",
             "\u00e9", "\ufeff", "\x00", "50 mph", "24/7", "Mo-Su 25:00-26:00"]
_ODD_TOML = ["true", "nan", "inf", "-inf", "1e-320", "1e308", "-1e308", "0", "-1", "[]",
             "[[1]]", "{ a = 1 }", '"x"', "1979-05-27", "[nan]", "[0.0, 1.0]",
             "{ x = [0.0, 1.0], y = [0.0, -2.0] }", '["warp"]', "9" * 30]


def _mutate_bytes(data: bytes, ops: list[tuple[int, int, int, bytes]]) -> bytes:
    """Apply (kind, position, length, payload) edits: 0 flip, 1 insert, 2 delete, 3 cut,
    4 repeat."""
    buf = bytearray(data)
    for kind, pos, length, payload in ops:
        if not buf:
            buf.extend(payload)
            continue
        i = pos % len(buf)
        if kind == 0:
            buf[i] ^= (payload[0] if payload else 0xFF) or 0x01
        elif kind == 1:
            buf[i:i] = payload
        elif kind == 2:
            del buf[i:i + length]
        elif kind == 3:
            del buf[i:]
        else:
            buf[i:i] = buf[i:i + length] * 3
    return bytes(buf)


_byte_ops = st.lists(st.tuples(st.integers(0, 4), st.integers(0, 2**31), st.integers(1, 64),
                               st.binary(min_size=0, max_size=8)), min_size=1, max_size=4)


def _mutate_structure(text: str, kind: str, picks: list[tuple[int, int, int]]) -> str:
    """Swap values for odd ones, or delete/repeat lines, picked by index."""
    lines = text.splitlines()
    for op, a, b in picks:
        if not lines:
            break
        i = a % len(lines)
        if op == 0:  # a value
            if kind == "toml":
                key, sep, _ = lines[i].partition(" = ")
                if sep:
                    lines[i] = f"{key} = {_ODD_TOML[b % len(_ODD_TOML)]}"
            else:
                pattern = {"xml": r"""(=\s*["'])([^"']*)(["'])""", "json": r"(:\s*)([^,{}\[\]]+)()",
                           "csv": r"(^|,)([^,]*)()"}[kind]
                matches = list(re.finditer(pattern, lines[i]))
                if matches:
                    m = matches[b % len(matches)]
                    odd = _ODD_TEXT[(a + b) % len(_ODD_TEXT)]
                    if kind == "json":
                        odd = {"": "null", " ": "[]", "abc": '"abc"'}.get(odd, odd)
                    lines[i] = lines[i][:m.start(2)] + odd + lines[i][m.end(2):]
        elif op == 1:
            del lines[i]
        else:
            lines.insert(i, lines[(i + b) % len(lines)])
    return "\n".join(lines) + "\n"


_structure_ops = st.lists(st.tuples(st.integers(0, 2), st.integers(0, 10**6),
                                     st.integers(0, 10**6)), min_size=1, max_size=4)


def _small_gpx() -> str:
    lines = (DEMO / "harbour_loop.gpx").read_text().splitlines()
    return "\n".join(lines[:40] + lines[-3:]) + "\n"


def _small_geojson() -> str:
    import json

    doc = json.loads((DEMO / "old_coast_road.geojson").read_text())
    for feat in doc["features"]:
        feat["geometry"]["coordinates"] = feat["geometry"]["coordinates"][:8]
    doc["features"] = doc["features"][:3]
    return json.dumps(doc, indent=1)


def _small_osm() -> str:
    """Part of the demo network: the first nodes, the ways built from them, a charger."""
    text = (DEMO / "tamsreach.osm").read_text()
    node_re = re.compile(r"  <node id='(\d+)'[^>]*/>\n|  <node id='(\d+)'[^>]*[^/]>\n.*?</node>\n",
                         flags=re.S)
    found = [(m.group(1) or m.group(2), m.group(0)) for m in node_re.finditer(text)]
    keep = {i for i, _ in found[:120]}
    node_xml = [xml for i, xml in found[:120]]
    way_xml = [m.group(0) for m in re.finditer(r"  <way .*?</way>\n", text, flags=re.S)
               if set(re.findall(r"<nd ref='(\d+)'", m.group(0))) <= keep][:12]
    charger = re.search(r"  <node id='5934'.*?</node>\n", text, flags=re.S).group(0)
    return ("<?xml version='1.0' encoding='UTF-8'?>\n<osm version='0.6'>\n"
            + "".join(node_xml) + charger + "".join(way_xml) + "</osm>\n")


def _small_dem() -> bytes:
    import rasterio
    from rasterio.io import MemoryFile
    from rasterio.transform import from_bounds

    values = np.linspace(0.0, 300.0, 24 * 24, dtype=np.float32).reshape(24, 24)
    with MemoryFile() as mem:
        with mem.open(driver="GTiff", width=24, height=24, count=1, dtype="float32",
                      crs=rasterio.crs.CRS.from_epsg(4326),
                      transform=from_bounds(-31.7, 41.1, -31.5, 41.3, 24, 24)) as dst:
            dst.write(values, 1)
        return bytes(mem.read())


def _pvlib_file(name: str) -> bytes:
    import pvlib

    return (Path(pvlib.__file__).parent / "data" / name).read_bytes()


_CSV = ("lat,lon,name,connector,power_kw,ports,hours\n"
        "41.2017,-31.5964,Quay,type2_combo;type2,150,4,24/7\n"
        "41.2044,-31.6071,Market,type2,11,2,Mo-Sa 07:00-21:00\n")


def _timed_gpx() -> str:
    """Two coast-down runs (track segments) of 20 timed points each."""
    segs = []
    for seg in range(2):
        pts = "".join(f'<trkpt lat="41.3" lon="{-31.0 + (1 - 2 * seg) * 0.0003 * i:.5f}">'
                      f"<time>2026-05-04T07:{seg:02d}:{i:02d}Z</time></trkpt>\n"
                      for i in range(20))
        segs.append(f"<trkseg>\n{pts}</trkseg>\n")
    return ('<?xml version="1.0"?>\n<gpx version="1.1" creator="t" '
            'xmlns="http://www.topografix.com/GPX/1/1">\n<trk><name>flats</name>\n'
            + "".join(segs) + "</trk></gpx>\n")


def _scenario() -> str:
    return (f'kind = "simulate"\nvehicle = "{DEMO / "vehicles" / "swift_tern.toml"}"\n'
            f'speed_kph = 50\n[route]\nfile = "{DEMO / "harbour_loop.gpx"}"\n'
            "[conditions]\ntemp_c = 14\n")


def _read_dem(path: Path) -> Any:
    from tripsim.io.dem import read_dem

    return read_dem(path, bounds_deg=(-31.65, 41.15, -31.55, 41.25))


def _readers() -> dict[str, tuple[str, Callable[[], bytes], Callable[[Path], Any], str]]:
    from tripsim.io import read_osm_graph, read_vehicle
    from tripsim.io.chargers_file import read_chargers, read_lodgings
    from tripsim.io.coastdown_file import read_coastdown_runs
    from tripsim.io.drive_log import read_drive_log
    from tripsim.io.geojson import read_geojson
    from tripsim.io.gpx import read_gpx
    from tripsim.io.scenario_file import read_scenarios
    from tripsim.io.weather_files import read_weather

    def osm(path: Path) -> Any:
        return read_osm_graph(path, cache=False)

    return {  # name: (file name, base bytes, reader, structure kind)
        "vehicle": ("v.toml", lambda: (DEMO / "vehicles" / "swift_tern.toml").read_bytes(),
                    read_vehicle, "toml"),
        "scenarios": ("scenarios.toml", lambda: (DEMO / "scenarios.toml").read_bytes(),
                      read_scenarios, "toml"),
        "gpx": ("r.gpx", lambda: _small_gpx().encode(), read_gpx, "xml"),
        "geojson": ("r.geojson", lambda: _small_geojson().encode(), read_geojson, "json"),
        "osm": ("m.osm", lambda: _small_osm().encode(), osm, "xml"),
        "chargers_osm": ("c.osm", lambda: _small_osm().encode(), read_chargers, "xml"),
        "chargers_csv": ("c.csv", lambda: _CSV.encode(), read_chargers, "csv"),
        "lodgings": ("l.csv", lambda: (DEMO / "lodgings.csv").read_bytes(), read_lodgings,
                     "csv"),
        "epw": ("w.epw", lambda: (DEMO / "tamsreach.epw").read_bytes(), read_weather, "csv"),
        "tmy3": ("w.csv", lambda: _pvlib_file("723170TYA.CSV"), read_weather, "csv"),
        "tmy2": ("w.tm2", lambda: _pvlib_file("12839.tm2"), read_weather, "csv"),
        "dem": ("d.tif", _small_dem, _read_dem, ""),
        "coastdown_csv": ("runs.csv", lambda: "\n".join(
            (DEMO / "coastdown_runs.csv").read_text().splitlines()[:120]).encode(),
            read_coastdown_runs, "csv"),
        "coastdown_gpx": ("runs.gpx", lambda: _timed_gpx().encode(), read_coastdown_runs, "xml"),
        "scenario": ("s.toml", lambda: _scenario().encode(), read_scenarios, "toml"),
        "log_csv": ("log.csv", lambda: "\n".join(
            (DEMO / "drive_log.csv").read_text().splitlines()[:120]).encode(),
            read_drive_log, "csv"),
        "log_gpx": ("log.gpx", lambda: _timed_gpx().encode(), read_drive_log, "xml"),
    }


_BASES: dict[str, bytes] = {}


def _base(name: str) -> bytes:
    if name not in _BASES:
        _BASES[name] = _readers()[name][1]()
    return _BASES[name]


def _outcome(reader: Callable[[Path], Any], path: Path) -> str:
    """Run a reader: "ok" or "error"; any exception other than TripsimInputError fails."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            reader(path)
        except TripsimInputError as exc:
            assert str(exc) and "\n" not in str(exc), repr(exc)
            return "error"
    return "ok"


def _check(name: str, data: bytes, tmp: Path, suffix: str = "") -> str:
    fname, _, reader, _ = _readers()[name]
    path = tmp / (fname + suffix)
    if suffix == ".gz":
        data = gzip.compress(data, mtime=0)
    elif suffix == ".bz2":
        data = bz2.compress(data)
    path.write_bytes(data)
    return _outcome(reader, path)


# examples per reader: slow readers (osmnx, pvlib's TMY2) get fewer
_EXAMPLES = {"vehicle": 200, "scenarios": 150, "gpx": 200, "geojson": 200, "osm": 100,
             "chargers_osm": 60, "chargers_csv": 200, "lodgings": 150, "epw": 30, "tmy3": 12,
             "tmy2": 5, "dem": 100, "coastdown_csv": 80, "coastdown_gpx": 80, "scenario": 100,
             "log_csv": 80, "log_gpx": 80}


@pytest.fixture(scope="module")
def fuzz_dir(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz")


def test_unmutated_bases_read(fuzz_dir):
    """The bases are good files: every reader accepts them as they are."""
    for name in _EXAMPLES:
        assert _check(name, _base(name), fuzz_dir) == "ok", name
    assert _check("osm", _base("osm"), fuzz_dir, ".gz") == "ok"
    assert _check("osm", _base("osm"), fuzz_dir, ".bz2") == "ok"


@pytest.mark.parametrize("name", list(_EXAMPLES))
def test_byte_mutations(name, fuzz_dir):
    @settings(max_examples=_EXAMPLES[name], **_SETTINGS)
    @given(ops=_byte_ops)
    def run(ops):
        _check(name, _mutate_bytes(_base(name), ops), fuzz_dir)

    run()


@pytest.mark.parametrize("name", [n for n, r in _EXAMPLES.items() if n != "dem"])
def test_structural_mutations(name, fuzz_dir):
    kind = _readers()[name][3]

    @settings(max_examples=_EXAMPLES[name], **_SETTINGS)
    @given(picks=_structure_ops)
    def run(picks):
        text = _base(name).decode("utf-8")
        _check(name, _mutate_structure(text, kind, picks).encode("utf-8"), fuzz_dir)

    run()


@pytest.mark.parametrize("suffix", [".gz", ".bz2"])
def test_compressed_osm_mutations(suffix, fuzz_dir):
    """Mutations of the XML inside the archive, and of the archive's own bytes."""
    @settings(max_examples=12, **_SETTINGS)
    @given(ops=_byte_ops, inside=st.booleans())
    def run(ops, inside):
        if inside:
            _check("osm", _mutate_bytes(_base("osm"), ops), fuzz_dir, suffix)
        else:
            packed = gzip.compress(_base("osm"), mtime=0) if suffix == ".gz" else \
                bz2.compress(_base("osm"))
            path = fuzz_dir / f"packed.osm{suffix}"
            path.write_bytes(_mutate_bytes(packed, ops))
            _outcome(_readers()["osm"][2], path)

    run()


_json_values = st.recursive(
    st.none() | st.booleans() | st.integers() | st.floats(allow_nan=False)
    | st.text(max_size=6),
    lambda inner: st.lists(inner, max_size=3) | st.dictionaries(
        st.sampled_from(["type", "coordinates", "geometry", "properties", "features", "name",
                         "maxspeed", "speed_limit_kph", "highway", "LineString"]),
        inner, max_size=3),
    max_leaves=8)


def _replace_in_tree(doc: Any, picks: list[int], value: Any) -> Any:
    """Replace the node reached by following ``picks`` (child indexes, modulo) with ``value``."""
    if not picks or not isinstance(doc, (dict, list)) or not doc:
        return value
    keys = list(doc) if isinstance(doc, dict) else list(range(len(doc)))
    key = keys[picks[0] % len(keys)]
    doc[key] = _replace_in_tree(doc[key], picks[1:], value)
    return doc


def test_geojson_tree_mutations(fuzz_dir):
    """Any JSON value anywhere in the document: the shape is checked at the edge."""
    import json

    from tripsim.io.geojson import read_geojson

    @settings(max_examples=300, **_SETTINGS)
    @given(picks=st.lists(st.integers(0, 50), max_size=7), value=_json_values)
    def run(picks, value):
        doc = _replace_in_tree(json.loads(_base("geojson")), picks, value)
        path = fuzz_dir / "tree.geojson"
        path.write_text(json.dumps(doc))
        _outcome(read_geojson, path)

    run()
