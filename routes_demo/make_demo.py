"""Generate the invented demo region "Tamsreach" (seeded, reproducible).

Run from the repository root::

    .venv/bin/python routes_demo/make_demo.py

It writes, beside this script:

* ``tamsreach.osm``       OSM XML road network (motorway, rural roads, towns with signals,
                          a mountain pass with hairpins, a valley road, charging sites);
* ``tamsreach_dem.tif``   elevation raster covering the network (EPSG:4326, float32);
* ``harbour_loop.gpx``    a GPX track with elevation;
* ``old_coast_road.geojson``  a GeoJSON route with ``maxspeed`` properties;
* ``scenarios.toml``      the demo's runs as scenarios (``tripsim run``);
* ``tamsreach.epw``       an invented typical weather year (EPW) at Saltreach;
* ``lodgings.csv``        invented places to sleep, some with a charger.

The vehicle files in ``vehicles/`` are written by hand.

Everything here is invented: the island, its towns, roads and elevations.  It
lies in the open North Atlantic (around 41 °N, 30 °W) where no land is, so it
cannot be mistaken for a real place; its clock is UTC-2 (``Etc/GMT+2``).
"""

from __future__ import annotations

import itertools
import math
from pathlib import Path
from xml.sax.saxutils import quoteattr

import numpy as np

HERE = Path(__file__).resolve().parent
SEED = 20261202
LAT0, LON0 = 41.20, -31.60
KM_PER_DEG_LAT = 111.2
KM_PER_DEG_LON = 111.32 * math.cos(math.radians(LAT0))
TIMEZONE = "Etc/GMT+2"

TOWNS = {  # name: (x_km, y_km, grid half-size km)
    "Saltreach": (0.0, 0.0, 1.5),
    "Brindlemoor": (60.0, 10.0, 1.0),
    "Ostrey": (110.0, 0.0, 1.0),
    "Caddenholt": (150.0, 10.0, 0.5),
    "Pellisford": (190.0, 0.0, 1.5),
    "Lanthorn": (55.0, 45.0, 0.5),
    "Tethby": (120.0, -35.0, 0.5),
}


def to_latlon(x_km: np.ndarray, y_km: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    return LAT0 + np.asarray(y_km) / KM_PER_DEG_LAT, LON0 + np.asarray(x_km) / KM_PER_DEG_LON


# ----------------------------------------------------------------------------------- terrain
def _hills(x: np.ndarray, y: np.ndarray, rng: np.random.Generator) -> np.ndarray:
    out = np.zeros(np.broadcast(x, y).shape)
    for _ in range(8):
        kx, ky = rng.uniform(0.03, 0.15, 2)
        ph = rng.uniform(0, 2 * np.pi)
        out += rng.uniform(4, 9) * np.sin(kx * x + ky * y + ph)
    return out


def terrain_m(x: np.ndarray, y: np.ndarray) -> np.ndarray:
    """Smooth invented terrain [m] at km coordinates (no raster noise)."""
    rng = np.random.default_rng(SEED + 1)
    base = np.interp(x, [-10, 0, 60, 110, 160, 190, 210], [5, 10, 120, 350, 420, 250, 240])
    u = x - 133.0
    profile = np.interp(u, [-25, -8, -2.5, 2.5, 16, 32], [0, 430, 1130, 1130, 350, 0])
    saddle = 1.0 + 0.7 * (1.0 - np.exp(-(((y - 4.0) / 12.0) ** 2)))
    south_end = 1.0 / (1.0 + np.exp(-(y + 22.0) / 2.5))
    north_end = 1.0 / (1.0 + np.exp((y - 50.0) / 4.0))
    coast = np.clip((x + 6.0) / 6.0, 0.0, 1.0)
    return base * coast + profile * saddle * south_end * north_end + _hills(x, y, rng)


def write_dem(path: Path) -> None:
    import rasterio
    from rasterio.transform import from_origin

    res = 0.003
    west, north = to_latlon(-8.0, 55.0)[1], to_latlon(-8.0, 55.0)[0]
    east, south = to_latlon(205.0, -48.0)[1], to_latlon(205.0, -48.0)[0]
    cols = int(np.ceil((east - west) / res))
    rows = int(np.ceil((north - south) / res))
    lon = west + (np.arange(cols) + 0.5) * res
    lat = north - (np.arange(rows) + 0.5) * res
    x = (lon[None, :] - LON0) * KM_PER_DEG_LON
    y = (lat[:, None] - LAT0) * KM_PER_DEG_LAT
    rng = np.random.default_rng(SEED + 2)
    z = terrain_m(x, y) + rng.normal(0.0, 1.5, (rows, cols))  # survey-like raster noise
    profile = {
        "driver": "GTiff", "height": rows, "width": cols, "count": 1, "dtype": "float32",
        "crs": "EPSG:4326", "transform": from_origin(west, north, res, res),
        "compress": "deflate", "predictor": 3, "nodata": -9999.0, "tiled": True,
        "blockxsize": 256, "blockysize": 256,
    }
    with rasterio.open(path, "w", **profile) as dst:
        dst.write(z.astype("float32"), 1)
        dst.update_tags(DESCRIPTION="Invented terrain of the Tamsreach demo region")


# ------------------------------------------------------------------------------------ roads
class Osm:
    """A tiny OSM XML writer: nodes with tags, ways with tags."""

    def __init__(self) -> None:
        self.nodes: dict[int, tuple[float, float, dict[str, str]]] = {}
        self.ways: list[tuple[int, list[int], dict[str, str]]] = []
        self._next_node = 1
        self._next_way = 1

    def node(self, x: float, y: float, tags: dict[str, str] | None = None) -> int:
        nid = self._next_node
        self._next_node += 1
        lat, lon = to_latlon(x, y)
        self.nodes[nid] = (float(lat), float(lon), dict(tags or {}))
        return nid

    def tag(self, nid: int, **tags: str) -> None:
        self.nodes[nid][2].update(tags)

    def way(self, nids: list[int], **tags: str) -> int:
        wid = self._next_way
        self._next_way += 1
        self.ways.append((wid, list(nids), tags))
        return wid

    def write(self, path: Path) -> None:
        lines = ["<?xml version='1.0' encoding='UTF-8'?>",
                 "<osm version='0.6' generator='tripsim make_demo.py (invented data)'>"]
        lat = [v[0] for v in self.nodes.values()]
        lon = [v[1] for v in self.nodes.values()]
        lines.append(f"  <bounds minlat='{min(lat):.6f}' minlon='{min(lon):.6f}' "
                     f"maxlat='{max(lat):.6f}' maxlon='{max(lon):.6f}'/>")
        for nid, (la, lo, tags) in self.nodes.items():
            if tags:
                lines.append(f"  <node id='{nid}' version='1' lat='{la:.7f}' lon='{lo:.7f}'>")
                lines += [f"    <tag k={quoteattr(k)} v={quoteattr(v)}/>" for k, v in tags.items()]
                lines.append("  </node>")
            else:
                lines.append(f"  <node id='{nid}' version='1' lat='{la:.7f}' lon='{lo:.7f}'/>")
        for wid, nids, tags in self.ways:
            lines.append(f"  <way id='{wid}' version='1'>")
            lines += [f"    <nd ref='{n}'/>" for n in nids]
            lines += [f"    <tag k={quoteattr(k)} v={quoteattr(v)}/>" for k, v in tags.items()]
            lines.append("  </way>")
        lines.append("</osm>")
        path.write_text("\n".join(lines) + "\n", encoding="utf-8")


def catmull_rom(points: list[tuple[float, float]], spacing_km: float) -> np.ndarray:
    """Smooth curve through control points, sampled about every ``spacing_km``."""
    p = np.asarray(points, dtype=float)
    p = np.vstack([2 * p[0] - p[1], p, 2 * p[-1] - p[-2]])
    out = [p[1]]
    for i in range(1, len(p) - 2):
        p0, p1, p2, p3 = p[i - 1], p[i], p[i + 1], p[i + 2]
        n = max(2, int(np.ceil(np.linalg.norm(p2 - p1) / spacing_km)))
        t = np.linspace(0, 1, n + 1)[1:, None]
        curve = 0.5 * ((2 * p1) + (-p0 + p2) * t + (2 * p0 - 5 * p1 + 4 * p2 - p3) * t**2
                       + (-p0 + 3 * p1 - 3 * p2 + p3) * t**3)
        out.extend(curve)
    return np.asarray(out)


def meander(points: list[tuple[float, float]], rng: np.random.Generator, amp_km: float,
            every_km: float = 3.0) -> list[tuple[float, float]]:
    """Insert jittered control points so a rural road wanders."""
    out: list[tuple[float, float]] = [points[0]]
    for a, b in itertools.pairwise(points):
        a_, b_ = np.asarray(a), np.asarray(b)
        d = np.linalg.norm(b_ - a_)
        n = max(1, int(d / every_km))
        normal = np.array([-(b_ - a_)[1], (b_ - a_)[0]]) / max(d, 1e-9)
        for k in range(1, n):
            q = a_ + (b_ - a_) * k / n + normal * rng.normal(0, amp_km)
            out.append((float(q[0]), float(q[1])))
        out.append(b)
    return out


def road(osm: Osm, start: int, end: int, via: list[tuple[float, float]], spacing_km: float,
         **tags: str) -> list[int]:
    """A way from node ``start`` through control points ``via`` to node ``end``."""
    ends = [_xy(osm, start), *via, _xy(osm, end)]
    pts = catmull_rom(ends, spacing_km)
    nids = [start] + [osm.node(x, y) for x, y in pts[1:-1]] + [end]
    osm.way(nids, **tags)
    return nids


def _xy(osm: Osm, nid: int) -> tuple[float, float]:
    lat, lon, _ = osm.nodes[nid]
    return (lon - LON0) * KM_PER_DEG_LON, (lat - LAT0) * KM_PER_DEG_LAT


def town(osm: Osm, name: str, rng: np.random.Generator) -> dict[str, int]:
    """A street grid; returns its entry nodes W, E, N, S and its centre C."""
    cx, cy, half = TOWNS[name]
    step = 0.5
    k = round(half / step)
    grid = {(i, j): osm.node(cx + i * step, cy + j * step) for i in range(-k, k + 1)
            for j in range(-k, k + 1)}
    osm.tag(grid[(0, 0)], place="town" if half > 0.6 else "village", name=name)
    for (i, j), nid in grid.items():
        if i == 0 or j == 0:
            if (i, j) != (0, 0) and (abs(i) + abs(j)) % 2 == 0:
                osm.tag(nid, highway="traffic_signals")
        elif rng.random() < 0.3:
            osm.tag(nid, highway="stop")
    osm.tag(grid[(0, 0)], highway="traffic_signals")
    for j in range(-k, k + 1):  # east-west streets
        main = j == 0
        for i in range(-k, k):
            a, b = grid[(i, j)], grid[(i + 1, j)]
            mid = osm.node(cx + (i + 0.5) * step, cy + j * step)
            osm.way([a, mid, b], highway="secondary" if main else "residential",
                    maxspeed="50" if main else "30", name=f"{name} {'High' if main else 'Row'} {j}")
    for i in range(-k, k + 1):  # north-south streets
        main = i == 0
        for j in range(-k, k):
            a, b = grid[(i, j)], grid[(i, j + 1)]
            mid = osm.node(cx + i * step, cy + (j + 0.5) * step)
            osm.way([a, mid, b], highway="tertiary" if main else "residential",
                    **({"maxspeed": "DE:urban"} if main else {}), name=f"{name} Lane {i}")
    # ways a car may not use: the filter must drop them
    a = osm.node(cx - 0.1, cy + 0.1)
    b = osm.node(cx - 0.1, cy + 0.4)
    osm.way([grid[(0, 0)], a, b], highway="footway", name=f"{name} Walk")
    c = osm.node(cx + 0.2, cy - 0.15)
    osm.way([grid[(0, 0)], c], highway="service", access="private")
    return {"W": grid[(-k, 0)], "E": grid[(k, 0)], "N": grid[(0, k)], "S": grid[(0, -k)],
            "C": grid[(0, 0)]}


def hairpins(x0: float, y0: float, x1: float, legs: int, y_span: float,
             radius: float = 0.04) -> list[tuple[float, float]]:
    """Switchback control points climbing east from (x0, y0) to x = x1.

    Legs run north and south along the slope; each ends in a half-circle bend of
    ``radius`` km that moves the road 2·radius further east (uphill).
    """
    pts: list[tuple[float, float]] = []
    dx = (x1 - x0) / legs
    for k in range(legs):
        north = k % 2 == 0
        ya, yb = (y0, y0 + y_span) if north else (y0 + y_span, y0)
        xa = x0 + k * dx
        xb = xa + dx - 2 * radius
        pts.append((0.5 * (xa + xb), 0.5 * (ya + yb)))
        if k == legs - 1:
            pts.append((x1, yb))
            break
        sign = 1.0 if north else -1.0
        for ang in np.linspace(np.pi, 0.0, 7):
            pts.append((xb + radius + radius * np.cos(ang), yb + sign * radius * np.sin(ang)))
    return pts


def motorway(osm: Osm, towns: dict[str, dict[str, int]], rng: np.random.Generator) -> None:
    """Two one-way carriageways from Saltreach to Ostrey with interchanges."""
    ctrl = [(2.0, -3.0), (20.0, -4.5), (35.0, -3.0), (60.0, 5.0 - 2.5), (85.0, -4.0),
            (108.0, -3.0)]
    centre = catmull_rom(ctrl, 0.25)
    tangent = np.gradient(centre, axis=0)
    normal = np.column_stack([-tangent[:, 1], tangent[:, 0]])
    normal /= np.linalg.norm(normal, axis=1, keepdims=True)
    east = centre - normal * 0.015  # drive on the right
    west = centre + normal * 0.015
    east_ids = [osm.node(x, y) for x, y in east]
    west_ids = [osm.node(x, y) for x, y in west]
    tags = {"highway": "motorway", "oneway": "yes", "maxspeed": "120", "ref": "T1",
            "name": "Tamsreach Motorway", "lanes": "2"}
    osm.way(east_ids, **tags)
    osm.way(west_ids[::-1], **tags)
    for name, tx in (("Saltreach", 2.0), ("Brindlemoor", 60.0), ("Ostrey", 108.0)):
        k = int(np.argmin(np.abs(centre[:, 0] - tx)))
        k = min(max(k, 1), len(centre) - 2)
        feeder = osm.node(centre[k, 0], centre[k, 1] + 0.6)
        road(osm, towns[name]["S"], feeder, [], 0.2, highway="primary", maxspeed="70",
             name=f"{name} Motorway Road")
        osm.way([feeder, osm.node(centre[k, 0] + 0.1, centre[k, 1] + 0.2), east_ids[k]],
                highway="motorway_link", maxspeed="60")
        osm.way([feeder, osm.node(centre[k, 0] - 0.1, centre[k, 1] + 0.25), west_ids[k]],
                highway="motorway_link")
    # a service area with a charging site on the eastbound side
    k = int(np.argmin(np.abs(centre[:, 0] - 35.0)))
    a, b = east_ids[k - 2], east_ids[k + 2]
    s1 = osm.node(centre[k - 1, 0], centre[k - 1, 1] - 0.12)
    s2 = osm.node(centre[k, 0], centre[k, 1] - 0.16)
    s3 = osm.node(centre[k + 1, 0], centre[k + 1, 1] - 0.12)
    osm.way([a, s1, s2, s3, b], highway="service", oneway="yes", name="Hollin Rest Area")


def build_network(osm: Osm) -> dict[str, dict[str, int]]:
    rng = np.random.default_rng(SEED)
    towns = {name: town(osm, name, rng) for name in TOWNS}
    motorway(osm, towns, rng)
    # the Old Coast Road through two villages
    quill = osm.node(28.0, 4.0, {"place": "hamlet", "name": "Quillan's Rest"})
    orl = osm.node(86.0, 6.0, {"place": "hamlet", "name": "Orlwick"})
    via = meander([(8.0, 1.0), (20.0, 2.5)], rng, 0.4)[1:]
    road(osm, towns["Saltreach"]["E"], quill, via, 0.12, highway="primary", maxspeed="80",
         name="Old Coast Road")
    road(osm, quill, towns["Brindlemoor"]["W"], meander([(36, 6), (50, 9)], rng, 0.4), 0.12,
         highway="primary", maxspeed="80", name="Old Coast Road")
    road(osm, towns["Brindlemoor"]["E"], orl, meander([(70, 9), (80, 7)], rng, 0.4), 0.12,
         highway="primary", name="Old Coast Road")
    road(osm, orl, towns["Ostrey"]["W"], meander([(95, 4), (103, 1)], rng, 0.4), 0.12,
         highway="primary", maxspeed="80", name="Old Coast Road")
    # the northern loop through Lanthorn
    road(osm, towns["Saltreach"]["N"], towns["Lanthorn"]["W"],
         meander([(2, 10), (15, 28), (35, 42)], rng, 0.6, 2.0), 0.1,
         highway="tertiary", maxspeed="70", name="Moorfield Road")
    road(osm, towns["Lanthorn"]["S"], towns["Brindlemoor"]["N"],
         meander([(56, 35), (59, 20)], rng, 0.5, 2.0), 0.1, highway="unclassified",
         name="Lanthorn Drove")
    # the Wyrmgate Pass: gentle foothills, then hairpins, the saddle, and down to Caddenholt
    foot = osm.node(124.0, 1.6)
    road(osm, towns["Ostrey"]["E"], foot, meander([(115, 0.5), (120, 1.0)], rng, 0.2, 1.5),
         0.08, highway="secondary", maxspeed="80", name="Wyrmgate Road")
    summit = osm.node(131.5, 4.3, {"mountain_pass": "yes", "name": "Wyrmgate Pass"})
    road(osm, foot, summit, [*hairpins(125.0, 2.0, 130.8, 7, 1.2), (131.1, 3.8)], 0.03,
         highway="secondary", maxspeed="60", name="Wyrmgate Road")
    road(osm, summit, towns["Caddenholt"]["W"],
         meander([(135, 5.5), (139, 8.5), (143, 8.0), (147, 10.0)], rng, 0.25, 0.8), 0.05,
         highway="secondary", maxspeed="80", name="Wyrmgate Road")
    road(osm, towns["Caddenholt"]["E"], towns["Pellisford"]["W"],
         meander([(160, 8), (175, 3)], rng, 0.4), 0.12, highway="secondary", maxspeed="90",
         name="Caddenholt Road")
    # the low road round the south end of the range, through Tethby
    road(osm, towns["Ostrey"]["S"], towns["Tethby"]["N"],
         meander([(111, -8), (114, -22)], rng, 0.5), 0.12, highway="primary", maxspeed="90",
         name="Southwater Road")
    road(osm, towns["Tethby"]["E"], towns["Pellisford"]["S"],
         meander([(140, -36), (165, -30), (186, -12)], rng, 0.6), 0.12, highway="primary",
         maxspeed="90", name="Southwater Road")
    return towns


CHARGERS = [  # name, x, y, sockets {osm socket key: (count, kW)}, opening_hours
    ("Saltreach Quay Chargers", 0.3, 0.2, {"type2_combo": (4, 150), "type2": (2, 22)}, "24/7"),
    ("Saltreach Market Hall", -0.6, 0.5, {"type2": (4, 11)}, "Mo-Sa 07:00-21:00"),
    ("Hollin Rest Area", 35.0, -3.3, {"type2_combo": (6, 250), "chademo": (1, 50)}, "24/7"),
    ("Brindlemoor Square", 60.3, 10.1, {"type2_combo": (2, 50), "type2": (2, 22)}, "24/7"),
    ("Orlwick Inn Yard", 86.1, 6.2, {"type2": (2, 11)}, "08:00-22:00"),
    ("Ostrey Gateway Hub", 109.4, -0.4, {"type2_combo": (4, 175), "type2": (2, 22)}, "24/7"),
    ("Caddenholt Village Hall", 150.2, 10.1, {"type2": (2, 7)}, "Mo-Su 08:00-20:00"),
    ("Pellisford Riverside", 190.4, 0.2, {"type2_combo": (8, 300), "type2": (4, 22)}, "24/7"),
    ("Tethby Crossroads", 120.2, -35.1, {"type2_combo": (2, 100)}, "24/7"),
    ("Lanthorn Green", 55.1, 45.2, {"type2": (2, 11), "schuko": (1, 2.3)}, ""),
    ("Southwater Services", 165.0, -30.3, {"type2_combo": (4, 150)}, "24/7"),
]


LODGINGS = [  # name, x, y, connector, kW (None: no charger)
    ("The Tern and Anchor", 0.4, -0.3, None, None),
    ("Brindlemoor Coaching House", 59.8, 10.3, "type2", 11.0),
    ("Ostrey Mill Rooms", 110.3, 0.4, None, None),
    ("Caddenholt Pass Lodge", 149.8, 10.2, "type2", 7.4),
    ("Pellisford Riverside Rooms", 190.2, -0.3, "type2", 22.0),
    ("Tethby Farm Stay", 119.8, -35.2, "schuko", 2.3),
]


def write_lodgings(path: Path) -> None:
    rows = ["lat,lon,name,connector,power_kw"]
    for name, x, y, conn, kw in LODGINGS:
        lat, lon = to_latlon(x, y)
        rows.append(f"{lat:.6f},{lon:.6f},{name},{conn or ''},{'' if kw is None else kw}")
    path.write_text("\n".join(rows) + "\n", encoding="utf-8")


def add_chargers(osm: Osm) -> None:
    for name, x, y, sockets, hours in CHARGERS:
        tags = {"amenity": "charging_station", "name": name,
                "capacity": str(sum(n for n, _ in sockets.values()))}
        for key, (count, kw) in sockets.items():
            tags[f"socket:{key}"] = str(count)
            tags[f"socket:{key}:output"] = f"{kw} kW"
        if hours:
            tags["opening_hours"] = hours
        osm.node(x, y, tags)


# --------------------------------------------------------------------- routes in other formats
def _dem_elevation(lat: np.ndarray, lon: np.ndarray) -> np.ndarray:
    x = (lon - LON0) * KM_PER_DEG_LON
    y = (lat - LAT0) * KM_PER_DEG_LAT
    return terrain_m(x, y)


def write_gpx(path: Path) -> None:
    pts = catmull_rom([(-0.5, 0.0), (3, 2), (8, 1), (12, 4), (9, 8), (3, 9), (-1, 5), (-0.5, 0.0)],
                      0.05)
    lat, lon = to_latlon(pts[:, 0], pts[:, 1])
    ele = _dem_elevation(lat, lon)
    rows = "\n".join(f'      <trkpt lat="{a:.7f}" lon="{o:.7f}"><ele>{e:.1f}</ele></trkpt>'
                     for a, o, e in zip(lat, lon, ele, strict=True))
    path.write_text(
        '<?xml version="1.0" encoding="UTF-8"?>\n'
        '<gpx version="1.1" creator="tripsim make_demo.py (invented data)" '
        'xmlns="http://www.topografix.com/GPX/1/1">\n'
        '  <trk><name>Saltreach harbour loop</name><trkseg>\n'
        f"{rows}\n  </trkseg></trk>\n</gpx>\n", encoding="utf-8")


def write_geojson(path: Path) -> None:
    import json

    legs = [("80", [(1.0, 0.0), (8, 1), (20, 2.5), (28, 4)]),
            ("50", [(28, 4), (29, 4.3)]),
            ("80", [(29, 4.3), (36, 6), (50, 9), (59, 10)])]
    feats = []
    for speed, ctrl in legs:
        pts = catmull_rom(ctrl, 0.1)
        lat, lon = to_latlon(pts[:, 0], pts[:, 1])
        feats.append({"type": "Feature", "properties": {"maxspeed": speed, "highway": "primary"},
                      "geometry": {"type": "LineString",
                                   "coordinates": [[round(o, 7), round(a, 7)]
                                                   for a, o in zip(lat, lon, strict=True)]}})
    doc = {"type": "FeatureCollection", "name": "Old Coast Road, Saltreach to Brindlemoor",
           "features": feats}
    path.write_text(json.dumps(doc) + "\n", encoding="utf-8")


TRIPS = [  # name, description, places (x, y) to route through, departure, weather, vehicles
    ("coast-to-pellisford", "Saltreach to Pellisford by motorway and the Wyrmgate Pass",
     [(0.0, 0.0), (131.5, 4.3), (190.0, 0.0)], "2026-07-14T08:00:00-02:00",
     {"temp_c": 24.0, "wind_speed_mps": 4.0, "wind_from_deg": 270.0}),
    ("low-road", "Ostrey to Pellisford round the range through Tethby",
     [(110.0, 0.0), (120.0, -35.0), (190.0, 0.0)], "2026-07-14T14:00:00-02:00",
     {"temp_c": 28.0, "wind_speed_mps": 6.0, "wind_from_deg": 90.0}),
    ("winter-commute", "Lanthorn to Brindlemoor on a frosty morning",
     [(55.0, 45.0), (60.0, 10.0)], "2026-01-12T07:30:00-02:00",
     {"temp_c": -5.0, "wind_speed_mps": 3.0, "wind_from_deg": 20.0}),
]


def _toml_value(value: object) -> str:
    if isinstance(value, bool):
        return "true" if value else "false"
    if isinstance(value, str):
        return '"' + value.replace("\\", "\\\\").replace('"', '\\"') + '"'
    if isinstance(value, (list, tuple)):
        return "[" + ", ".join(_toml_value(v) for v in value) + "]"
    if isinstance(value, float):
        return repr(round(value, 6))
    return str(value)


def _toml_table(prefix: str, table: dict, lines: list[str]) -> None:
    """Scalars of a table, then its sub-tables as [prefix.key]."""
    for key, value in table.items():
        if not isinstance(value, dict):
            lines.append(f"{key} = {_toml_value(value)}")
    for key, value in table.items():
        if isinstance(value, dict):
            lines += ["", f"[{prefix}.{key}]"]
            _toml_table(f"{prefix}.{key}", value, lines)


def demo_scenarios() -> list[dict]:
    """The demo's runs as scenarios (read by ``tripsim run`` and ``tripsim demo``)."""
    out = []
    vehicles = ["harbour_crossover", "swift_tern", "parcel_mule"]
    for name, desc, places, depart, weather in TRIPS:
        lat, lon = to_latlon(np.array([p[0] for p in places]), np.array([p[1] for p in places]))
        wps = [[round(float(a), 6), round(float(o), 6)] for a, o in zip(lat, lon, strict=True)]
        for v in vehicles:
            out.append({"name": f"{name}--{v}", "description": desc, "kind": "simulate",
                        "vehicle": f"vehicles/{v}.toml", "depart": depart,
                        "route": {"file": "tamsreach.osm", "waypoints": wps,
                                  "dem": "tamsreach_dem.tif", "name": name},
                        "conditions": dict(weather)})
    out.append({"name": "harbour-loop--swift_tern", "description": "A GPX track round Saltreach",
                "kind": "simulate", "vehicle": "vehicles/swift_tern.toml",
                "depart": "2026-04-02T10:00:00-02:00", "speed_kph": 50.0,
                "route": {"file": "harbour_loop.gpx", "name": "harbour-loop"},
                "conditions": {"temp_c": 14.0}})
    out.append({"name": "old-coast-road--parcel_mule",
                "description": "A GeoJSON route with speed limits, elevation from the raster",
                "kind": "simulate", "vehicle": "vehicles/parcel_mule.toml",
                "depart": "2026-04-02T09:00:00-02:00",
                "route": {"file": "old_coast_road.geojson", "dem": "tamsreach_dem.tif",
                          "name": "old-coast-road"},
                "conditions": {"temp_c": 12.0}})
    loop = {"file": "harbour_loop.gpx", "name": "harbour-loop"}
    fleet = {"schedule": "Mon-Sat@08:00,13:30", "policy": "plug-below:0.3:7.4:10",
             "target_share": 0.8, "parking": {"heading_deg": 180.0, "shading": 0.1}}
    out.append({"name": "harbour-parcels", "kind": "fleet",
                "description": "Parcel rounds on the Saltreach harbour loop, twice a day",
                "vehicle": "vehicles/parcel_mule.toml", "speed_kph": 50.0, "route": loop,
                "weather": {"source": "tamsreach.epw"}, "fleet": fleet})
    for v in vehicles:
        out.append({"name": f"harbour-parcels-solar-year--{v}", "kind": "fleet",
                    "description": "A year of the harbour loop on the sun alone",
                    "vehicle": f"vehicles/{v}.toml", "speed_kph": 50.0, "route": loop,
                    "weather": {"source": "tamsreach.epw"},
                    "fleet": {**fleet, "policy": "solar-only", "size_search": False}})
    tour = [(0.0, 0.0), (131.5, 4.3), (190.0, 0.0), (120.0, -35.0), (110.0, 0.0), (0.0, 0.0)]
    lat, lon = to_latlon(np.array([p[0] for p in tour]), np.array([p[1] for p in tour]))
    tour_wps = [[round(float(a), 6), round(float(o), 6)] for a, o in zip(lat, lon, strict=True)]
    out.append({"name": "grand-tour", "kind": "plan",
                "description": "Round the island in two days: the pass out, the low road back",
                "vehicle": "vehicles/harbour_crossover.toml",
                "depart": "2026-07-14T09:00:00-02:00", "start_soc": 0.9,
                "route": {"file": "tamsreach.osm", "waypoints": tour_wps,
                          "dem": "tamsreach_dem.tif"},
                "weather": {"source": "tamsreach.epw"},
                "plan": {"chargers": "tamsreach.osm", "lodging": "lodgings.csv",
                         "speed_factors": [0.9, 1.0, 1.05],
                         "options": {"daily_window_h": [9.0, 17.0], "max_drive_h": 4.0,
                                     "objective": "time"}}})
    out.append({"name": "van-over-the-pass", "kind": "plan",
                "description": "The parcel van from Saltreach to Pellisford in a day",
                "vehicle": "vehicles/parcel_mule.toml",
                "depart": "2026-07-14T08:00:00-02:00", "start_soc": 0.8,
                "route": {"file": "tamsreach.osm", "waypoints": tour_wps[:3],
                          "dem": "tamsreach_dem.tif"},
                "weather": {"source": "tamsreach.epw"},
                "plan": {"chargers": "tamsreach.osm"}})
    return out


def write_scenarios(path: Path) -> None:
    """The demo's runs as a scenario file."""
    lines = ["# The demo's runs in the invented Tamsreach region (written by make_demo.py).",
             "# Run them all with `tripsim run routes_demo/scenarios.toml`, one with --only NAME;",
             "# file names are relative to this folder.  `tripsim demo` runs them and more."]
    for sc in demo_scenarios():
        lines += ["", "[[scenario]]"]
        _toml_table("scenario", sc, lines)
    path.write_text("\n".join(lines) + "\n", encoding="utf-8")


# ----------------------------------------------------------------------------------- weather
def weather_year(seed: int = SEED + 3):
    """An invented typical year for Tamsreach: a mild, sunny oceanic climate."""
    import pandas as pd
    import pvlib

    rng = np.random.default_rng(seed)
    tz = -2.0
    idx = pd.date_range("2001-01-01 00:30", periods=8760, freq="h", tz=int(tz * 3600))
    loc = pvlib.location.Location(LAT0, LON0, altitude=20.0)
    clear = loc.get_clearsky(idx, model="ineichen")
    zenith = loc.get_solarposition(idx)["apparent_zenith"]
    doy = idx.day_of_year.to_numpy()
    season = np.cos(2 * np.pi * (doy - 15) / 365.0)  # +1 mid-January, -1 mid-July
    # cloud cover: a daily Markov chain (wetter in winter) plus hourly variation
    daily = np.empty(365)
    state = 0.4
    for d in range(365):
        mean = 0.42 + 0.22 * season[d * 24]
        state = np.clip(0.6 * state + 0.4 * mean + rng.normal(0, 0.22), 0.0, 1.0)
        daily[d] = state
    cloud = np.clip(np.repeat(daily, 24) + rng.normal(0, 0.1, 8760), 0.0, 1.0)
    ghi = clear["ghi"].to_numpy() * (1.0 - 0.75 * cloud**3.4)
    split = pvlib.irradiance.erbs(ghi, zenith, idx)
    dni = np.nan_to_num(split["dni"].to_numpy())
    dhi = np.nan_to_num(split["dhi"].to_numpy())
    hour = idx.hour.to_numpy() + 0.5
    diurnal = (4.0 - 2.0 * cloud) * np.cos(2 * np.pi * (hour - 15.0) / 24.0)
    noise = np.zeros(8760)
    for k in range(1, 8760):
        noise[k] = 0.95 * noise[k - 1] + rng.normal(0, 0.35)
    temp = 17.0 - 5.5 * np.cos(2 * np.pi * (doy - 45) / 365.0) + diurnal + noise
    wind = np.clip(rng.weibull(2.0, 8760) * (6.5 + 1.5 * season), 0.0, 30.0)
    wdir = (270.0 + 50.0 * np.sin(np.cumsum(rng.normal(0, 0.15, 8760)))) % 360.0
    pressure = 101_600.0 + 800.0 * np.sin(np.cumsum(rng.normal(0, 0.05, 8760)))
    return pd.DataFrame({"temp_c": temp, "pressure_pa": pressure, "wind_mps": wind,
                         "wind_from_deg": wdir, "ghi": ghi, "dni": dni, "dhi": dhi,
                         "cloud": cloud}, index=idx)


def write_epw(path: Path, frame) -> None:
    """Write an EPW file (EnergyPlus weather format) of an invented station."""
    head = [
        "LOCATION,Saltreach Harbour (invented),Tamsreach,XX,invented data,000000,"
        f"{LAT0:.3f},{LON0:.3f},-2.0,20.0",
        "DESIGN CONDITIONS,0",
        "TYPICAL/EXTREME PERIODS,0",
        "GROUND TEMPERATURES,0",
        "HOLIDAYS/DAYLIGHT SAVINGS,No,0,0,0",
        "COMMENTS 1,Invented typical year for the tripsim demo region; not a real place",
        "COMMENTS 2,Generated by routes_demo/make_demo.py (seeded)",
        "DATA PERIODS,1,1,Data,Sunday, 1/ 1,12/31",
    ]
    rows = []
    for t, r in frame.iterrows():
        dew = r.temp_c - 4.0
        rows.append(
            f"2001,{t.month},{t.day},{t.hour + 1},60,invented,{r.temp_c:.1f},{dew:.1f},75,"
            f"{r.pressure_pa:.0f},9999,9999,9999,{r.ghi:.0f},{r.dni:.0f},{r.dhi:.0f},"
            f"999999,999999,999999,9999,{r.wind_from_deg:.0f},{r.wind_mps:.1f},"
            f"{round(10 * r.cloud)},{round(8 * r.cloud)},9999,99999,9,999999999,999,0.999,"
            "999,99,0.2,0,1")
    path.write_text("\n".join(head + rows) + "\n", encoding="utf-8")


def main() -> None:
    osm = Osm()
    build_network(osm)
    add_chargers(osm)
    osm.write(HERE / "tamsreach.osm")
    write_dem(HERE / "tamsreach_dem.tif")
    write_gpx(HERE / "harbour_loop.gpx")
    write_geojson(HERE / "old_coast_road.geojson")
    write_scenarios(HERE / "scenarios.toml")
    write_epw(HERE / "tamsreach.epw", weather_year())
    write_lodgings(HERE / "lodgings.csv")
    print(f"wrote {len(osm.nodes)} nodes, {len(osm.ways)} ways to {HERE / 'tamsreach.osm'}")


if __name__ == "__main__":
    main()
