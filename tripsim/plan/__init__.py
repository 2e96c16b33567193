"""Charging stops: sites near the route, charging curves, the label-setting search.

Modules: :mod:`~tripsim.plan.sites` (chargers, lodgings, opening hours, snapping and
detours), :mod:`~tripsim.plan.charging` (charge curves and exact charging times),
:mod:`~tripsim.plan.search` (options, the plan, re-simulation rounds),
:mod:`~tripsim.plan.kernel` (the compiled sweep) and :mod:`~tripsim.plan.diagnosis`
(why a trip has no plan and what would close it).
"""

from __future__ import annotations

from tripsim.plan.search import Plan, PlannedStop, PlanOptions, plan_trip
from tripsim.plan.sites import Site

__all__ = ["Plan", "PlanOptions", "PlannedStop", "Site", "plan_trip"]
