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

from tripsim.caution import CAUTION
from tripsim.drive import DriveOptions
from tripsim.errors import DemError, RouteError, TripsimInputError, VehicleFileError
from tripsim.fleet import ChargingPolicy, Schedule, fleet_year
from tripsim.io import read_dem, read_osm_graph, read_route, read_vehicle
from tripsim.io.chargers_file import read_chargers, read_lodgings
from tripsim.io.weather_files import read_weather
from tripsim.parking import Parking
from tripsim.planner import PlanOptions, plan_trip
from tripsim.roadgraph import route_through
from tripsim.route import Route
from tripsim.segments import segment_route
from tripsim.simulate import Conditions, SolarOptions, Trip, simulate
from tripsim.summary import Summary
from tripsim.trips import load_segments, parse_waypoints
from tripsim.vehicle import Vehicle
from tripsim.weather import clear_sky_weather

__version__ = "0.1.0"

__all__ = [
    "CAUTION",
    "ChargingPolicy",
    "Conditions",
    "DemError",
    "DriveOptions",
    "Parking",
    "PlanOptions",
    "Route",
    "RouteError",
    "Schedule",
    "SolarOptions",
    "Summary",
    "Trip",
    "TripsimInputError",
    "Vehicle",
    "VehicleFileError",
    "clear_sky_weather",
    "fleet_year",
    "load_segments",
    "parse_waypoints",
    "plan_trip",
    "read_chargers",
    "read_dem",
    "read_lodgings",
    "read_osm_graph",
    "read_route",
    "read_vehicle",
    "read_weather",
    "route_through",
    "segment_route",
    "simulate",
]
