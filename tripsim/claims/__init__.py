"""Applications for product teams: road load from coast-down runs.

Range claims and logged drives come later.

:mod:`~tripsim.claims.coastdown` turns coast-down runs into the road-load
coefficients F0, F1, F2, Cd·A and Crr with their confidence intervals, and predicts
the coast of a vehicle file for a test plan.
"""

from __future__ import annotations

from tripsim.claims.coastdown import (
    CoastdownOptions,
    RoadLoadFit,
    fit_road_load,
    predict_coast,
)

__all__ = ["CoastdownOptions", "RoadLoadFit", "fit_road_load", "predict_coast"]
