"""Shared fixtures: small vehicles and routes built in memory, and the demo files."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tripsim.io.vehicle_file import parse_vehicle
from tripsim.route import Route
from tripsim.segments import GEOD

ROOT = Path(__file__).resolve().parent.parent
DEMO = ROOT / "routes_demo"

BASE_VEHICLE = {
    "name": "test car",
    "body": {"mass_kg": 1450.0, "payload_kg": 80.0, "cd": 0.27, "frontal_area_m2": 2.25,
             "crr": 0.0085},
    "drivetrain": {"efficiency": 0.90, "regen_efficiency": 0.70},
    "battery": {"usable_kwh": 58.0},
    "auxiliary": {"base_w": 350.0},
}


def make_vehicle(**tables: dict) -> object:
    """The base vehicle with some keys replaced: make_vehicle(body={"cd": 0.3})."""
    data = {k: dict(v) if isinstance(v, dict) else v for k, v in BASE_VEHICLE.items()}
    for table, values in tables.items():
        if isinstance(values, dict) and isinstance(data.get(table), dict):
            data[table].update(values)
        else:
            data[table] = values
    return parse_vehicle(data)


def straight_route(
    length_m: float,
    *,
    lat0: float = 45.0,
    lon0: float = 7.0,
    azimuth_deg: float = 90.0,
    n_points: int = 2,
    climb_m: float = 0.0,
    speed_kph: float | None = 100.0,
    stops: list[int] | None = None,
) -> Route:
    """A geodesic straight line, optionally climbing uniformly, with a uniform limit."""
    dist = np.linspace(0.0, length_m, n_points)
    lon, lat, _ = GEOD.fwd(np.full(n_points, lon0), np.full(n_points, lat0),
                           np.full(n_points, azimuth_deg), dist)
    ele = climb_m * dist / length_m + 100.0
    kinds = np.zeros(n_points, dtype=np.int8)
    for s in stops or []:
        kinds[s] = 3
    limits = None if speed_kph is None else np.full(n_points - 1, speed_kph)
    return Route(lat_deg=np.asarray(lat), lon_deg=np.asarray(lon), elevation_m=ele,
                 speed_limit_kph=limits, stop_kind=kinds, name="straight")


@pytest.fixture
def vehicle():
    return make_vehicle()


@pytest.fixture(scope="session")
def demo_graph():
    from tripsim.io import read_osm_graph

    return read_osm_graph(DEMO / "tamsreach.osm", cache=False)


@pytest.fixture(autouse=True, scope="session")
def _private_graph_cache(tmp_path_factory):
    """Keep the tests' OSM graph cache out of the user's cache folder."""
    import os

    old = os.environ.get("TRIPSIM_CACHE_DIR")
    os.environ["TRIPSIM_CACHE_DIR"] = str(tmp_path_factory.mktemp("graph-cache"))
    yield
    if old is None:
        os.environ.pop("TRIPSIM_CACHE_DIR", None)
    else:
        os.environ["TRIPSIM_CACHE_DIR"] = old
