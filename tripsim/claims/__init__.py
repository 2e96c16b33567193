"""Applications for product teams: coast-down runs, range claims, logged drives.

:mod:`~tripsim.claims.coastdown` turns coast-down runs into the road-load coefficients
F0, F1, F2, Cd·A and Crr with their confidence intervals, and predicts the coast of a
vehicle file for a test plan.  :mod:`~tripsim.claims.range_claim` checks a range claim on
a corridor driven lap after lap to the reserve over a weather year.
:mod:`~tripsim.claims.logs` drives a logged drive (or a lab cycle) at its recorded
speeds, holds the model against its battery readings and fits the auxiliary base load
and the drive efficiency.  Names load on first use.
"""

from __future__ import annotations

import importlib
from typing import Any

_EXPORTS = {"CoastdownOptions": "tripsim.claims.coastdown",
            "RoadLoadFit": "tripsim.claims.coastdown",
            "fit_road_load": "tripsim.claims.coastdown",
            "predict_coast": "tripsim.claims.coastdown",
            "Claim": "tripsim.claims.options",
            "ClaimOptions": "tripsim.claims.options",
            "ClaimResult": "tripsim.claims.range_claim",
            "check_claim": "tripsim.claims.range_claim",
            "drive_to_empty": "tripsim.claims.range_claim",
            "LogDrive": "tripsim.claims.logs",
            "LoggedDrive": "tripsim.claims.logs",
            "drive_log": "tripsim.claims.logs",
            "fit_log": "tripsim.claims.logs",
            "prepare_log": "tripsim.claims.logs"}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name not in _EXPORTS:
        raise AttributeError(f"module 'tripsim.claims' has no attribute {name!r}")
    return getattr(importlib.import_module(_EXPORTS[name]), name)
