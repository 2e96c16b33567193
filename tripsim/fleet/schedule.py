"""When a delivery loop is driven, and what the dispatcher does when the sun is not enough."""

from __future__ import annotations

from dataclasses import dataclass
from datetime import tzinfo
from zoneinfo import ZoneInfo

import numpy as np

from tripsim.errors import TripsimInputError
from tripsim.timebase import fixed_zone, parse_hhmm_s, parse_weekdays

__all__ = ["CLOSED_ON_SOLAR", "ChargingPolicy", "Schedule"]

#: What "closed on solar alone" means, for help texts and reports.
CLOSED_ON_SOLAR = ("a day closes on solar alone when, with no charging at all, the vehicle "
                   "drives all its runs without running empty")


@dataclass(frozen=True)
class Schedule:
    """When the loop is driven.

    Parameters
    ----------
    departures_h : tuple of float
        Departure times, hours after local midnight (8.5 = 08:30).
    weekdays : frozenset of int
        Operating days, 0 = Monday.
    utc_offset_h : float, default 0
        The schedule's local time as a fixed offset from UTC, when ``zone`` is None. [h]
    zone : str, optional
        The schedule's time zone (IANA name, e.g. the route's own zone from
        :func:`tripsim.zones.route_zone`): departures follow the local clock through
        daylight-saving changes.
    """

    departures_h: tuple[float, ...] = (8.0,)
    weekdays: frozenset[int] = frozenset(range(5))
    utc_offset_h: float = 0.0
    zone: str | None = None

    def __post_init__(self) -> None:
        if not self.departures_h:
            raise TripsimInputError("a schedule needs at least one departure", "--schedule")
        if any(not (np.isfinite(h) and 0.0 <= h < 24.0) for h in self.departures_h):
            raise TripsimInputError("departure times must be within 00:00-23:59", "--schedule")
        if sorted(self.departures_h) != list(self.departures_h):
            raise TripsimInputError("departure times must be in order", "--schedule")
        if not self.weekdays or not self.weekdays <= set(range(7)):
            raise TripsimInputError("operating days must be Mon..Sun", "--schedule")
        if not (np.isfinite(self.utc_offset_h) and -14.0 <= self.utc_offset_h <= 14.0):
            raise TripsimInputError("the schedule's UTC offset must be within ±14 h",
                                    "--schedule")

    @property
    def tzinfo(self) -> tzinfo:
        """The schedule's time zone."""
        return ZoneInfo(self.zone) if self.zone else fixed_zone(self.utc_offset_h)

    @classmethod
    def parse(cls, text: str, utc_offset_h: float = 0.0, *, zone: str | None = None
              ) -> Schedule:
        """Parse ``"Mon-Fri@08:00,13:30"`` (days optional: ``"07:00"`` means every day)."""
        days_text, _, times_text = text.rpartition("@")
        days = parse_weekdays(days_text or "mon-sun", "--schedule")
        hours = [parse_hhmm_s(t, "--schedule") / 3600.0
                 for t in filter(None, (p.strip() for p in times_text.split(",")))]
        return cls(tuple(hours), days, utc_offset_h, zone)


@dataclass(frozen=True)
class ChargingPolicy:
    """What the dispatcher does when the sun is not enough.

    Parameters
    ----------
    kind : {"solar-only", "plug-below"}
        Never plug in; or plug in at the end of a day when the state of charge
        is below ``threshold_soc``.
    threshold_soc : float, default 0.3
        For "plug-below".
    power_kw : float, default 7.4
        Charger power at the plug (7.4 kW: single-phase 32 A at 230 V). [kW]
    hours : float, default 10
        Hours plugged in overnight. [h]
    """

    kind: str = "solar-only"
    threshold_soc: float = 0.3
    power_kw: float = 7.4
    hours: float = 10.0

    def __post_init__(self) -> None:
        if self.kind not in ("solar-only", "plug-below"):
            raise TripsimInputError(f"policy {self.kind!r}; expected solar-only or "
                                    "plug-below:SOC", "--policy")
        ok = (np.isfinite(self.threshold_soc) and 0.0 < self.threshold_soc <= 1.0
              and np.isfinite(self.power_kw) and 0.0 < self.power_kw <= 1000.0
              and np.isfinite(self.hours) and 0.0 < self.hours <= 24.0)
        if not ok:
            raise TripsimInputError("plug-below needs 0 < SoC ≤ 1, 0 < kW ≤ 1000 and "
                                    "0 < hours ≤ 24", "--policy")

    @classmethod
    def parse(cls, text: str) -> ChargingPolicy:
        """Parse ``"solar-only"`` or ``"plug-below:0.3[:7.4[:10]]"`` (SoC, kW, hours)."""
        kind, *rest = text.split(":")
        if kind == "solar-only" and not rest:
            return cls()
        if kind != "plug-below" or not 1 <= len(rest) <= 3:
            raise TripsimInputError(f"{text!r}: expected solar-only or plug-below:SOC[:KW[:H]]",
                                    "--policy")
        try:
            values = [float(x) for x in rest]
        except ValueError:
            raise TripsimInputError(f"{text!r}: numbers expected after plug-below",
                                    "--policy") from None
        names = ("threshold_soc", "power_kw", "hours")
        return cls("plug-below", **dict(zip(names, values, strict=False)))
