"""tripsim: electric-vehicle trips on real roads — energy, state of charge and charging.

The few functions most users need::

    import tripsim
    vehicle = tripsim.read_vehicle("car.toml")
    segments = tripsim.load_segments("route.gpx", dem="dem.tif")
    trip = tripsim.simulate(segments, vehicle, conditions=tripsim.Conditions(temp_c=5))
    trip.summary.wh_per_km, trip.trace

    weather = tripsim.read_weather("year.epw")            # sun, wind and temperature in time
    plan = tripsim.plan_trip(segments, vehicle, tripsim.read_chargers("sites.csv"),
                             weather=weather, depart="2026-07-14T08:00+02:00")
    year = tripsim.fleet_year(loop_segments, van, weather,
                              schedule=tripsim.Schedule.parse("Mon-Fri@08:00"))

Estimates only: keep a reserve, check charger availability and local rules.
"""

from __future__ import annotations

import hashlib
import importlib
import os
import sys
from pathlib import Path
from typing import Any

__version__ = "0.1.0"


def _numba_cache_dir() -> str:
    """A folder for compiled kernels, keyed by the hash of tripsim's own source.

    numba invalidates a cached kernel only when its own file changes, not when a
    physics function it calls (and inlines) changes in another file; keying the whole
    cache on the package's source keeps compiled code and source in step.  It also
    keeps the cache out of an installed package's folder.
    """
    digest = hashlib.sha256(__version__.encode())
    for path in sorted(Path(__file__).parent.rglob("*.py")):
        digest.update(path.read_bytes())
    base = os.environ.get("TRIPSIM_CACHE_DIR") or Path(
        os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "tripsim"
    return str(Path(base) / f"numba-{digest.hexdigest()[:16]}")


if "NUMBA_CACHE_DIR" not in os.environ:
    os.environ["NUMBA_CACHE_DIR"] = _numba_cache_dir()
    if "numba" in sys.modules:  # numba read its settings already: tell it directly
        sys.modules["numba"].config.CACHE_DIR = os.environ["NUMBA_CACHE_DIR"]

#: Public name → module that defines it.  Modules load on first use, so ``import tripsim``
#: stays light and heavy libraries (osmnx, pvlib, matplotlib) load only on the path
#: that needs them.
_EXPORTS: dict[str, str] = {
    "CAUTION": "tripsim.caution",
    "ChargingPolicy": "tripsim.fleet.year",
    "Conditions": "tripsim.simulate",
    "DemError": "tripsim.errors",
    "DriveOptions": "tripsim.drive",
    "Parking": "tripsim.parking",
    "PlanOptions": "tripsim.plan.search",
    "Route": "tripsim.route",
    "RouteError": "tripsim.errors",
    "Schedule": "tripsim.fleet.year",
    "SolarOptions": "tripsim.simulate",
    "Summary": "tripsim.summary",
    "Trip": "tripsim.simulate",
    "TripsimInputError": "tripsim.errors",
    "Vehicle": "tripsim.vehicle",
    "VehicleFileError": "tripsim.errors",
    "clear_sky_weather": "tripsim.weather",
    "fleet_year": "tripsim.fleet.year",
    "load_segments": "tripsim.inputs",
    "parse_waypoints": "tripsim.inputs",
    "plan_trip": "tripsim.plan.search",
    "read_chargers": "tripsim.io.chargers_file",
    "read_dem": "tripsim.io",
    "read_lodgings": "tripsim.io.chargers_file",
    "read_osm_graph": "tripsim.io",
    "read_route": "tripsim.io",
    "read_vehicle": "tripsim.io",
    "read_weather": "tripsim.io.weather_files",
    "route_through": "tripsim.roadgraph",
    "segment_route": "tripsim.segments",
    "simulate": "tripsim.simulate",
}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    module = _EXPORTS.get(name)
    if module is None:
        raise AttributeError(f"module 'tripsim' has no attribute {name!r}")
    value = getattr(importlib.import_module(module), name)
    globals()[name] = value
    return value


def __dir__() -> list[str]:
    return sorted([*globals(), *_EXPORTS])
