"""Charging stops: sites near the route, charging curves, the label-setting search.

Modules: :mod:`~tripsim.plan.sites` (chargers, lodgings, opening hours, snapping and
detours), :mod:`~tripsim.plan.charging` (charge curves and exact charging times),
:mod:`~tripsim.plan.search` (options, the plan, re-simulation rounds),
:mod:`~tripsim.plan.kernel` (the compiled sweep) and :mod:`~tripsim.plan.diagnosis`
(why a trip has no plan and what would close it).  Names load on first use.
"""

from __future__ import annotations

import importlib
from typing import Any

_EXPORTS = {"Plan": "tripsim.plan.search", "PlanOptions": "tripsim.plan.search",
            "PlannedStop": "tripsim.plan.search", "plan_trip": "tripsim.plan.search",
            "Site": "tripsim.plan.sites"}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name not in _EXPORTS:
        raise AttributeError(f"module 'tripsim.plan' has no attribute {name!r}")
    return getattr(importlib.import_module(_EXPORTS[name]), name)
