"""A delivery loop over a weather year: schedule, charging policy, the year, sizing."""

from __future__ import annotations

from tripsim.fleet.year import ChargingPolicy, FleetResult, Schedule, check_loop, fleet_year

__all__ = ["ChargingPolicy", "FleetResult", "Schedule", "check_loop", "fleet_year"]
