"""A delivery loop over a weather year: schedule, charging policy, the year, sizing.

Modules: :mod:`~tripsim.fleet.schedule` (when the loop runs, the charging policy) and
:mod:`~tripsim.fleet.year` (the year, its daily table, totals and sizing).  Names load
on first use.
"""

from __future__ import annotations

import importlib
from typing import Any

_EXPORTS = {"CLOSED_ON_SOLAR": "tripsim.fleet.schedule",
            "ChargingPolicy": "tripsim.fleet.schedule",
            "Schedule": "tripsim.fleet.schedule", "FleetResult": "tripsim.fleet.year",
            "check_loop": "tripsim.fleet.year", "fleet_year": "tripsim.fleet.year"}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name not in _EXPORTS:
        raise AttributeError(f"module 'tripsim.fleet' has no attribute {name!r}")
    return getattr(importlib.import_module(_EXPORTS[name]), name)
