"""When a delivery loop is driven, and what the dispatcher does when the sun is not enough."""

from __future__ import annotations

from datetime import tzinfo
from typing import Annotated, Literal
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

from pydantic import AfterValidator

from tripsim.errors import TripsimInputError
from tripsim.options import Count, Number, Options, option
from tripsim.timebase import fixed_zone, parse_hhmm_s, parse_weekdays

__all__ = ["CLOSED_ON_SOLAR", "ChargingPolicy", "Schedule"]

#: What "closed on solar alone" means, for help texts and reports.
CLOSED_ON_SOLAR = ("a day closes on solar alone when, with no charging at all, the vehicle "
                   "drives all its runs without running empty")


def _hours_in_order(hours: tuple[float, ...]) -> tuple[float, ...]:
    if not hours:
        raise ValueError("a schedule needs at least one departure")
    if any(not 0.0 <= h < 24.0 for h in hours):
        raise ValueError("departure times must be within 00:00-23:59")
    if sorted(hours) != list(hours):
        raise ValueError("departure times must be in order")
    return hours


def _days(days: frozenset[int]) -> frozenset[int]:
    if not days or not days <= set(range(7)):
        raise ValueError("operating days must be Mon..Sun")
    return days


def _zone(name: str | None) -> str | None:
    if name is not None:
        try:
            ZoneInfo(name)
        except (ValueError, KeyError, ZoneInfoNotFoundError):
            raise ValueError(f"unknown time zone {name!r}") from None
    return name


class Schedule(Options):
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

    departures_h: Annotated[tuple[Number, ...], AfterValidator(_hours_in_order)] = option(
        (8.0,), cli="--schedule")
    weekdays: Annotated[frozenset[Count], AfterValidator(_days)] = option(
        frozenset(range(5)), cli="--schedule")
    utc_offset_h: Number = option(0.0, ge=-14.0, le=14.0, cli="--schedule")
    zone: Annotated[str | None, AfterValidator(_zone)] = option(None, cli="--schedule")

    def __init__(self, departures_h: tuple[float, ...] = (8.0,),
                 weekdays: frozenset[int] = frozenset(range(5)), utc_offset_h: float = 0.0,
                 zone: str | None = None) -> None:
        super().__init__(departures_h=tuple(departures_h), weekdays=frozenset(weekdays),
                         utc_offset_h=utc_offset_h, zone=zone)

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


class ChargingPolicy(Options):
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

    kind: Literal["solar-only", "plug-below"] = option("solar-only", cli="--policy")
    threshold_soc: Number = option(0.3, gt=0.0, le=1.0, cli="--policy")
    power_kw: Number = option(7.4, gt=0.0, le=1000.0, cli="--policy")
    hours: Number = option(10.0, gt=0.0, le=24.0, cli="--policy")

    def __init__(self, kind: str = "solar-only", threshold_soc: float = 0.3,
                 power_kw: float = 7.4, hours: float = 10.0) -> None:
        super().__init__(kind=kind, threshold_soc=threshold_soc, power_kw=power_kw,
                         hours=hours)

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
