"""The planner's constraints and objective.

A light module, so that describing a plan (a scenario) does not load the planner.
"""

from __future__ import annotations

from typing import Literal

from pydantic import model_validator

from tripsim.options import Count, Number, OptionConflict, Options, option

__all__ = ["PlanOptions"]


class PlanOptions(Options):
    """Constraints and objective of a charging plan.

    Parameters
    ----------
    reserve_soc : float, default 0.10
        The state of charge never falls below this anywhere on the route.
    arrive_soc : float, default 0.15
        At least this at the destination.
    max_charge_soc : float, default 0.8
        Never charge above this.
    stop_minutes : float, default 5
        Fixed time per charging stop: park, plug, pay. [min]
    objective : {"stops", "time"}, default "stops"
        "stops": fewest charging stops, then least total time; "time": least total time.
    soc_step : float, default 0.005
        State-of-charge grid.
    max_offset_m : float, default 2000
        Sites farther than this from the route are ignored. [m]
    daily_window_h : (float, float) or None
        Driving allowed between these local hours (e.g. (8, 19)); None: no limit.
    max_drive_h : float or None
        Longest driving per day. [h]
    labels : int, default 6
        Labels kept per state with a daily window (1 without: exact).
    max_rounds : int, default 5
        Re-simulation and re-planning rounds.
    """

    reserve_soc: Number = option(0.10, ge=0.0, lt=1.0, cli="--reserve")
    arrive_soc: Number = option(0.15, ge=0.0, le=1.0, cli="--arrive-soc")
    max_charge_soc: Number = option(0.8, gt=0.0, le=1.0, cli="--max-charge-soc")
    stop_minutes: Number = option(5.0, ge=0.0, le=240.0, cli="--stop-minutes")
    objective: Literal["stops", "time"] = option("stops", cli="--objective")
    soc_step: Number = option(0.005, ge=0.001, le=0.1, cli="--soc-step")
    max_offset_m: Number = option(2000.0, ge=0.0, le=50_000.0, cli="--max-offset-km",
                                  scale=0.001)
    daily_window_h: tuple[Number, Number] | None = option(None, cli="--daily-window")
    max_drive_h: Number | None = option(None, ge=0.25, le=24.0, cli="--max-drive-h")
    labels: Count = option(6, ge=1, le=64, cli="--labels")
    max_rounds: Count = option(5, ge=1, le=20, cli="--max-rounds")

    @model_validator(mode="after")
    def _consistent(self) -> PlanOptions:
        if self.reserve_soc >= self.max_charge_soc:
            raise OptionConflict("--reserve", f"the reserve ({self.reserve_soc:.0%}) must be "
                                 f"below the maximum charge ({self.max_charge_soc:.0%})")
        if self.arrive_soc > self.max_charge_soc:
            raise OptionConflict("--arrive-soc", f"{self.arrive_soc} must be within 0 and the "
                                 f"maximum charge ({self.max_charge_soc})")
        if self.daily_window_h is not None:
            a, b = self.daily_window_h
            if not 0 <= a < b <= 24:
                raise OptionConflict("--daily-window", f"{a}-{b} h is not a range within the day")
        return self

    @property
    def windowed(self) -> bool:
        """True when days are limited (window or driving hours)."""
        return self.daily_window_h is not None or self.max_drive_h is not None
