"""Applications for product teams: road load from coast-down runs.

:mod:`~tripsim.claims.coastdown` turns coast-down runs into the road-load coefficients
F0, F1, F2, Cd·A and Crr with their confidence intervals, and predicts the coast of a
vehicle file for a test plan.  Range claims and logged drives come later.  Names load on
first use.
"""

from __future__ import annotations

import importlib
from typing import Any

_EXPORTS = {"CoastdownOptions": "tripsim.claims.coastdown",
            "RoadLoadFit": "tripsim.claims.coastdown",
            "fit_road_load": "tripsim.claims.coastdown",
            "predict_coast": "tripsim.claims.coastdown"}

__all__ = sorted(_EXPORTS)


def __getattr__(name: str) -> Any:
    if name not in _EXPORTS:
        raise AttributeError(f"module 'tripsim.claims' has no attribute {name!r}")
    return getattr(importlib.import_module(_EXPORTS[name]), name)
