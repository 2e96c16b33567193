"""tripsim: electric-vehicle trips on real roads — energy, state of charge and charging.

The few functions most users need::

    import tripsim
    vehicle = tripsim.read_vehicle("car.toml")
    segments = tripsim.load_segments("route.gpx", dem="dem.tif")
    trip = tripsim.simulate(segments, vehicle, conditions=tripsim.Conditions(temp_c=5))
    trip.summary.wh_per_km, trip.trace

Estimates only: keep a reserve, check charger availability and local rules.
"""

from __future__ import annotations

from tripsim.caution import CAUTION
from tripsim.drive import DriveOptions
from tripsim.errors import DemError, RouteError, TripsimInputError, VehicleFileError
from tripsim.io import read_dem, read_osm_graph, read_route, read_vehicle
from tripsim.roadgraph import route_through
from tripsim.route import Route
from tripsim.segments import segment_route
from tripsim.simulate import Conditions, Trip, simulate
from tripsim.summary import Summary
from tripsim.trips import load_segments, parse_waypoints
from tripsim.vehicle import Vehicle

__version__ = "0.1.0"

__all__ = [
    "CAUTION",
    "Conditions",
    "DemError",
    "DriveOptions",
    "Route",
    "RouteError",
    "Summary",
    "Trip",
    "TripsimInputError",
    "Vehicle",
    "VehicleFileError",
    "load_segments",
    "parse_waypoints",
    "read_dem",
    "read_osm_graph",
    "read_route",
    "read_vehicle",
    "route_through",
    "segment_route",
    "simulate",
]
