"""Charging sites: connectors, power, opening hours, and where they sit on a route.

Sites come from OSM (``amenity=charging_station`` with ``socket:*`` tags) or CSV,
read in :mod:`tripsim.io.chargers_file`.  This module holds them, decides which a
vehicle can use, and measures the detour each costs from the route.
"""

from __future__ import annotations

import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field

import numpy as np
import pandas as pd

from tripsim.errors import TripsimInputError
from tripsim.segments import GEOD
from tripsim.timebase import parse_hhmm_s, parse_weekdays

__all__ = [
    "AC_CONNECTORS",
    "DC_CONNECTORS",
    "DEFAULT_CONNECTOR_KW",
    "DETOUR_CIRCUITY",
    "OpeningHours",
    "Site",
    "SnappedSite",
    "parse_opening_hours",
    "snap_sites",
]

#: Power assumed for a connector whose output is not given [kW], and the standard behind
#: it (read in a secondary source, from memory; see docs/REFERENCES.md): SAE J1772 AC
#: levels from 1.44 kW (12 A, 120 V) to 19.2 kW (80 A, 240 V), taken at 7.4 kW (32 A
#: single phase);
#: IEC 62196 Type 2 up to 22 kW three-phase (IEC 61851 mode 3); DC: CCS and CHAdeMO sites
#: are commonly 50 kW when older or unlabelled (CCS goes up to 350 kW); a domestic socket
#: (CEE 7/4) is 2.3 kW (10 A at 230 V).
DEFAULT_CONNECTOR_KW: dict[str, float] = {
    "type1": 7.4,
    "type2": 22.0,
    "type2_cable": 22.0,
    "schuko": 2.3,
    "cee_blue": 3.7,
    "type1_combo": 50.0,
    "type2_combo": 50.0,
    "chademo": 50.0,
}
AC_CONNECTORS = frozenset({"type1", "type2", "type2_cable", "schuko", "cee_blue"})
DC_CONNECTORS = frozenset({"type1_combo", "type2_combo", "chademo"})

#: Road distance over straight-line distance where no network path is known: 1.3, a
#: typical circuity of road networks (common practice; Ballou, Rahardja & Sakai 2002
#: report about 1.2-1.4 for road travel, from memory).
DETOUR_CIRCUITY = 1.3



@dataclass(frozen=True)
class OpeningHours:
    """Weekly open intervals in seconds since Monday 00:00 local time.

    ``intervals_s`` is None when open around the clock, or when the text was not
    understood (``understood`` False: assumed open, and the plan says so); an empty
    tuple means never open.
    """

    intervals_s: tuple[tuple[float, float], ...] | None = None
    text: str = ""
    understood: bool = True

    @property
    def always(self) -> bool:
        """True when open around the clock or unknown (assumed open: check locally)."""
        return self.intervals_s is None

    @property
    def never(self) -> bool:
        """True when the hours leave no time open in the week (``Mo-Su off``)."""
        return self.intervals_s is not None and not self.intervals_s

    def as_array(self) -> np.ndarray:
        """Intervals as an (n, 2) array; empty when always open."""
        if self.intervals_s is None:
            return np.zeros((0, 2))
        return np.asarray(self.intervals_s, dtype=float).reshape(-1, 2)


_RULE = re.compile(r"(?:([A-Za-z,\- ]+?)\s+)?([\d:,\- ]+|off)")


def _parse_rules(raw: str) -> list[tuple[float, float]]:
    """Weekly intervals of an ``opening_hours`` text; TripsimInputError when not understood."""
    intervals: list[tuple[float, float]] = []
    for rule in filter(None, (r.strip() for r in raw.split(";"))):
        m = _RULE.fullmatch(rule)
        if not m:
            raise TripsimInputError(f"{rule!r} is not a rule tripsim reads")
        days = sorted(parse_weekdays(m[1], "opening_hours")) if m[1] else list(range(7))
        if m[2].strip() == "off":
            intervals = [(a, b) for a, b in intervals if int(a // 86400) not in days]
            continue
        for span in m[2].split(","):
            ends = span.split("-")
            if len(ends) != 2:
                raise TripsimInputError(f"{span.strip()!r} is not a range HH:MM-HH:MM")
            start_t, end_t = (parse_hhmm_s(x, "opening_hours", allow_24=True) for x in ends)
            if end_t <= start_t:
                end_t += 86400.0
            intervals.extend((d * 86400.0 + start_t, d * 86400.0 + end_t) for d in days)
    return intervals


def parse_opening_hours(text: str | None, where: str | None = None) -> OpeningHours:
    """Parse the common forms of the OSM ``opening_hours`` tag.

    Understood: ``24/7``; ``08:00-22:00`` (every day); ``Mo-Fr 08:00-18:00; Sa
    09:00-13:00``; several time ranges ``Mo-Su 06:00-12:00,13:00-22:00``; ranges past
    midnight (``18:00-02:00``); ``off``.

    Parameters
    ----------
    text : str or None
        The hours; empty or None: open around the clock.
    where : str, optional
        File and line of a user's own data (CSV): text that is not understood is an
        error naming it.  Without it (OSM data), such text is kept, marked not
        understood and assumed open, so a plan never rules a site out on a misreading.

    Raises
    ------
    TripsimInputError
        With ``where``, for hours tripsim does not understand (``Mo-Su 25:00-26:00``).

    References
    ----------
    OpenStreetMap wiki, *Key:opening_hours* (specification, from memory).
    """
    if text is None or not str(text).strip():
        return OpeningHours(None, "")
    raw = str(text).strip()
    if raw.lower() in ("24/7", "mo-su 00:00-24:00", "00:00-24:00"):
        return OpeningHours(None, raw)
    try:
        intervals = _parse_rules(raw)
    except TripsimInputError as exc:
        if where is not None:
            raise TripsimInputError(
                f"hours = {raw!r} is not understood ({exc.problem}); expected e.g. 24/7, "
                "08:00-22:00 or Mo-Fr 08:00-18:00; Sa 09:00-13:00", where) from None
        return OpeningHours(None, raw, understood=False)
    return OpeningHours(tuple(sorted(intervals)), raw)


@dataclass(frozen=True)
class Site:
    """A charging site (or a lodging, with or without a charger).

    Attributes
    ----------
    site_id, name : str
        Identity for reports.
    lat_deg, lon_deg : float
        Position.
    connectors : mapping of str to (ports, kW)
        Usable connectors; ``kW`` is the output of one port.
    opening : OpeningHours
        When it can be used.
    kind : {"charger", "lodging"}
        A lodging is where the driver can sleep; it may have a charger too.
    source : str
        File and line or OSM id, for error messages and reports.
    """

    site_id: str
    name: str
    lat_deg: float
    lon_deg: float
    connectors: Mapping[str, tuple[int, float]] = field(default_factory=dict)
    opening: OpeningHours = field(default_factory=OpeningHours)
    kind: str = "charger"
    source: str = ""

    def best_connector(self, vehicle_connectors: Sequence[str]) -> tuple[str, float] | None:
        """The most powerful connector the vehicle can use here, or None."""
        usable = [(c, kw) for c, (_, kw) in self.connectors.items() if c in vehicle_connectors]
        return max(usable, key=lambda x: x[1]) if usable else None


@dataclass(frozen=True)
class SnappedSite:
    """A site placed on a route: where it joins and what the detour costs (round trip)."""

    site: Site
    segment_end: int  # index of the segment boundary (node) where the detour leaves the route
    route_m: float
    offset_m: float  # straight-line distance from the route
    detour_m: float
    detour_s: float
    via_network: bool


def snap_sites(
    sites: Sequence[Site],
    segments: pd.DataFrame,
    *,
    max_offset_m: float = 2000.0,
    detour_speed_kph: float = 40.0,
    network_detour: object | None = None,
) -> list[SnappedSite]:
    """Sites within ``max_offset_m`` of the route, each with its detour.

    Parameters
    ----------
    sites : sequence of Site
        Candidates.
    segments : pandas.DataFrame
        The route's segments.
    max_offset_m : float, default 2000
        Keep sites at most this far (straight line) from the route. [m]
    detour_speed_kph : float, default 40
        Speed on detours when no network path gives a time. [km/h]
    network_detour : callable, optional
        ``f(route_lat, route_lon, site_lat, site_lon) -> (metres, seconds) or None``,
        the round trip on a road network (see
        :func:`tripsim.roadgraph.network_detour`); where it returns None, or is not
        given, the round trip is 2 × straight line × :data:`DETOUR_CIRCUITY`.

    Returns
    -------
    list of SnappedSite
        In route order.
    """
    if not sites:
        return []
    lat = np.r_[segments["lat_deg"].to_numpy(), segments["lat_end_deg"].iloc[-1]]
    lon = np.r_[segments["lon_deg"].to_numpy(), segments["lon_end_deg"].iloc[-1]]
    node_m = np.r_[segments["start_m"].to_numpy(),
                   segments["start_m"].iloc[-1] + segments["length_m"].iloc[-1]]
    slat = np.array([s.lat_deg for s in sites])
    slon = np.array([s.lon_deg for s in sites])
    from tripsim.nearest import NearestPoints  # scipy's KD-tree: only when sites are placed

    idx, _ = NearestPoints(lat, lon).query(slat, slon)
    _, _, offset = GEOD.inv(slon, slat, lon[idx], lat[idx])
    out = []
    for site, i, off in zip(sites, idx, np.atleast_1d(offset), strict=True):
        if off > max_offset_m:
            continue
        found = network_detour(lat[i], lon[i], site.lat_deg, site.lon_deg) if network_detour \
            else None
        if found is None:
            dist = 2.0 * off * DETOUR_CIRCUITY
            out.append(SnappedSite(site, int(i), float(node_m[i]), float(off), dist,
                                   dist / (detour_speed_kph / 3.6), False))
        else:
            out.append(SnappedSite(site, int(i), float(node_m[i]), float(off), float(found[0]),
                                   float(found[1]), True))
    return sorted(out, key=lambda s: (s.route_m, s.site.site_id))


def usable_sites(
    snapped: Sequence[SnappedSite], vehicle_connectors: Sequence[str]
) -> tuple[list[SnappedSite], list[SnappedSite]]:
    """Split sites into those the vehicle can charge at and those it cannot.

    Lodgings always stay usable as places to sleep, even when their charger does not
    fit the vehicle (it is then not used).
    """
    ok, no = [], []
    for s in snapped:
        if s.site.kind == "lodging" or s.site.best_connector(vehicle_connectors) is not None:
            ok.append(s)
        else:
            no.append(s)
    return ok, no


def check_connector(name: str, where: str) -> str:
    """Normalise a connector name; raise on one tripsim does not know."""
    key = name.strip().lower().replace(" ", "_").replace("-", "_")
    aliases = {"ccs": "type2_combo", "ccs2": "type2_combo", "ccs1": "type1_combo",
               "j1772": "type1", "domestic": "schuko"}
    key = aliases.get(key, key)
    if key not in DEFAULT_CONNECTOR_KW:
        raise TripsimInputError(
            f"connector {name!r} is unknown; expected one of {', '.join(DEFAULT_CONNECTOR_KW)}",
            where)
    return key
