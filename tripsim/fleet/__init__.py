"""A delivery loop over a weather year: schedule, charging policy, the year, sizing."""

from __future__ import annotations

from tripsim.fleet.schedule import ChargingPolicy, Schedule
from tripsim.fleet.year import CLOSED_ON_SOLAR, FleetResult, check_loop, fleet_year

__all__ = ["CLOSED_ON_SOLAR", "ChargingPolicy", "FleetResult", "Schedule", "check_loop",
           "fleet_year"]
