"""Charging stops: the fewest stops, then the shortest trip, over one day or many.

The planner decides where to stop and how much to charge.  It works on the energies
and times of a simulated trip (so grade, wind, temperature and sun are in them), on a
state-of-charge grid (default 0.5 %):

* states are (place, state of charge) at arrival and at departure, places in route order
  (departure, charging sites, lodgings, destination), so the state graph is acyclic;
* a label-setting sweep (dynamic programming over the places in order) keeps at each
  state the best labels by the objective, lexicographic by default (fewest charging
  stops, then least total time), or least total time; among plans equal on both, the
  least time charging and waiting at chargers wins; with a daily driving window and a
  limit on driving hours a few non-dominated labels (stops, clock, driving today, time
  charging and waiting) are kept per state, and the fewest nights come first (a night is
  never added to save a charging stop); driving starts when the window opens, and any
  stop that runs past the end of a driving day is a night;
* arrival states are rounded down to the grid (never optimistic); charging targets are
  grid values up to the maximum charge; opening hours are respected by waiting.

This is the dynamic programme of the gas-station problem (Khuller, Malekian & Mestre
2011, "To fill or not to fill", ACM Trans. Algorithms 7(3)) with charging-time functions
integrated exactly (Montoya et al. 2017), in the label-setting form of Baum et al. 2019
("Shortest feasible paths with charging stops", Transportation Science 53(6)).

Stops shift the clock, which changes weather and sun: the plan is re-simulated on its
own timeline and re-planned on the new energies until the simulation keeps every
constraint (or the round limit is hit, which is reported).
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Sequence
from dataclasses import dataclass, field, fields
from typing import Any, NamedTuple

import numpy as np
import pandas as pd

from tripsim.drive import DriveOptions
from tripsim.plan.charging import ChargeCurve, charge_curve, cold_factor
from tripsim.plan.kernel import (
    DAY_S,
    EPS_S,
    NIGHT,
    NIGHT_STOPS,
    Places,
    Rules,
    Sweep,
    plan_pass,
)
from tripsim.plan.options import PlanOptions
from tripsim.plan.sites import (
    AC_CONNECTORS,
    DC_CONNECTORS,
    Site,
    SnappedSite,
    snap_sites,
    usable_sites,
)
from tripsim.progress import Progress, quiet
from tripsim.simulate import Conditions, SolarOptions, StopEvents, Trip, simulate
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather
from tripsim.zones import local_time, route_zone

__all__ = ["Plan", "PlanOptions", "PlannedStop", "drawable_kw", "iso_seconds", "plan_trip",
           "window_departure"]


#: Without a daily window or driving-hours limit the planner does not plan days; a stop
#: this long still counts (and shows) as a night: the reduced daily rest period of a
#: driver, 9 h (Regulation (EC) No 561/2006, Art. 4(g) and 8; from memory).
REST_H = 9.0


def iso_seconds(ts: pd.Timestamp) -> str:
    """ISO 8601 to the second, with the time zone: ``2026-07-14T10:55:14-02:00``."""
    return pd.Timestamp(ts).round("s").isoformat(timespec="seconds")


@dataclass(frozen=True)
class PlannedStop:
    """One stop of a plan.

    The time at the site is ``minutes`` = ``overhead_min`` (park, plug, pay) +
    ``charge_min`` + ``wait_min`` (for the site to open) + ``night_min``; the detour
    there and back (``detour_km``, ``detour_min``) comes on top.  A stop that spans the
    end of a driving day counts ``nights`` ≥ 1 and holds its waiting and sleeping in
    ``night_min``; at a lodging (``kind="overnight"``) charging overnight is part of the
    night.  ``power_kw`` is what the vehicle can draw here, the lesser of the site's
    rating per port (``site_kw``) and the vehicle's AC or DC limit.
    """

    kind: str  # "charge" or "overnight" (sleeping at a lodging)
    name: str
    site_id: str
    route_km: float
    lat_deg: float
    lon_deg: float
    arrive: pd.Timestamp
    depart: pd.Timestamp
    arrive_soc: float
    depart_soc: float
    nights: int
    minutes: float
    overhead_min: float
    charge_min: float
    wait_min: float
    night_min: float
    battery_kwh: float
    plug_kwh: float
    connector: str
    power_kw: float
    site_kw: float
    detour_km: float
    detour_min: float

    def to_dict(self) -> dict[str, Any]:
        """Plain dict for JSON (clocks to the second)."""
        d = dict(self.__dict__)
        d["arrive"], d["depart"] = iso_seconds(self.arrive), iso_seconds(self.depart)
        return d


@dataclass
class Plan:
    """A charging plan and its final simulation."""

    feasible: bool
    stops: list[PlannedStop]
    totals: dict[str, Any]
    trip: Trip | None
    rounds: int
    shortfall: dict[str, Any] | None = None
    sites: list[SnappedSite] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def stops_table(self) -> pd.DataFrame:
        """One row a stop (the columns of :class:`PlannedStop`, clocks to the second)."""
        columns = [f.name for f in fields(PlannedStop)]
        return pd.DataFrame([s.to_dict() for s in self.stops], columns=columns)

    def to_dict(self) -> dict[str, Any]:
        """JSON-ready summary (see the CLI's ``--json``)."""
        from tripsim.caution import CAUTION

        return {**self.totals, "feasible": self.feasible, "rounds": self.rounds,
                "stops": [s.to_dict() for s in self.stops], "shortfall": self.shortfall,
                "notes": self.notes, "caution": CAUTION}


@dataclass(frozen=True)
class _Node:
    snapped: SnappedSite | None
    connector: str
    site_kw: float
    curve: ChargeCurve | None
    is_lodging: bool
    vehicle_kw: float = 0.0  # what the vehicle can draw here (lesser of site and vehicle)


def drawable_kw(vehicle: Vehicle, connector: str, site_kw: float) -> float:
    """Power the vehicle can draw on a connector: the lesser of site and vehicle limit.

    AC connectors are limited by the on-board charger (``ac_max_kw``), DC connectors by
    ``dc_max_kw``; both at the plug.
    """
    ch = vehicle.charging
    limit = ch.ac_max_kw if connector in AC_CONNECTORS else ch.dc_max_kw
    return float(min(site_kw, limit))


def _best_plug(site: Site, vehicle: Vehicle) -> tuple[str, float, float] | None:
    """The connector the vehicle draws most power from here: (name, site kW, drawable kW)."""
    best = None
    for conn, (_, kw) in site.connectors.items():
        if conn not in vehicle.charging.connectors:
            continue
        draw = drawable_kw(vehicle, conn, kw)
        if draw > 0 and (best is None or (draw, kw) > (best[2], best[1])):
            best = (conn, float(kw), draw)
    return best


def _build_nodes(sites: Sequence[SnappedSite], vehicle: Vehicle, trace: pd.DataFrame,
                 capacity_kwh: float, *, share_curves: bool = True) -> list[_Node]:
    nodes = []
    temp = trace["temp_c"].to_numpy()
    # sites share a few curves: one per connector kind, site power and cold derating
    curves: dict[tuple[str, float, float], ChargeCurve] = {}
    for s in sites:
        best = None if s.site.opening.never else _best_plug(s.site, vehicle)
        if best is None:
            nodes.append(_Node(s, "", 0.0, None, s.site.kind == "lodging"))
            continue
        conn, kw, draw = best
        t = float(temp[min(s.segment_end, temp.size - 1)])
        key = (conn, kw, cold_factor(t) if conn in DC_CONNECTORS else 1.0)
        curve = curves.get(key) if share_curves else None
        if curve is None:
            curve = curves[key] = charge_curve(vehicle, conn, kw, temp_c=t,
                                               capacity_kwh=capacity_kwh)
        nodes.append(_Node(s, conn, kw, curve, s.site.kind == "lodging", draw))
    return nodes


@dataclass(frozen=True)
class _Arrays:
    e_node: np.ndarray
    t_node: np.ndarray
    span_max: np.ndarray
    pos: np.ndarray  # segment boundary of each node
    half_e: np.ndarray  # battery energy of half a detour (out or back) [Wh]
    half_t: np.ndarray  # time of half a detour [s]


def _route_arrays(trace: pd.DataFrame, nodes: list[_Node]) -> _Arrays:
    demand = trace["demand_wh"].to_numpy()
    cum_e = np.concatenate([[0.0], np.cumsum(demand)])
    total_s = (trace["time_s"] + trace["dwell_s"]).to_numpy()
    cum_t = np.concatenate([[0.0], np.cumsum(total_s)])
    pos = np.fromiter(itertools.chain([0], (n.snapped.segment_end for n in nodes),
                                      [demand.size]), dtype=np.int64, count=len(nodes) + 2)
    # the highest cumulative energy on each stretch between places, ends included
    span = np.maximum(np.maximum.reduceat(cum_e, pos[:-1]), cum_e[pos[1:]])
    # detours cost the route's mean battery energy per metre (never negative)
    wh_per_m = max(float(demand.sum() / max(trace["length_m"].sum(), 1.0)), 0.0)
    detour_m = np.fromiter((n.snapped.detour_m for n in nodes), dtype=float, count=len(nodes))
    detour_s = np.fromiter((n.snapped.detour_s for n in nodes), dtype=float, count=len(nodes))
    half_e = np.r_[0.0, 0.5 * detour_m * wh_per_m, 0.0]
    half_t = np.r_[0.0, 0.5 * detour_s, 0.0]
    return _Arrays(cum_e[pos], cum_t[pos], span, pos, half_e, half_t)


def _opening(nodes: list[_Node]) -> tuple[np.ndarray, ...]:
    starts, ends, ptr, cnt = [], [], [0], [0]
    for n in nodes:
        arr = n.snapped.site.opening.as_array() if n.snapped else np.zeros((0, 2))
        ptr.append(len(starts))
        cnt.append(len(arr))
        starts.extend(arr[:, 0])
        ends.extend(arr[:, 1])
    ptr.append(len(starts))
    cnt.append(0)
    return (np.asarray(starts, float), np.asarray(ends, float), np.asarray(ptr, np.int64),
            np.asarray(cnt, np.int64))


def _seconds_of_day(ts: pd.Timestamp) -> float:
    return (ts.hour * 3600.0 + ts.minute * 60.0 + ts.second + ts.microsecond / 1e6
            + ts.nanosecond / 1e9)


def _at_clock(day: pd.Timestamp, hours: float) -> pd.Timestamp:
    """Local wall-clock time ``hours`` after midnight on the day of ``day``."""
    seconds = round(hours * 3600.0)
    midnight = day.normalize()
    if seconds >= 86400:
        return midnight + pd.Timedelta(days=1)
    return midnight.replace(hour=seconds // 3600, minute=seconds % 3600 // 60,
                            second=seconds % 60)


def window_departure(depart: pd.Timestamp, window_h: tuple[float, float] | None
                     ) -> pd.Timestamp:
    """When driving can start: the departure, or the next opening of the daily window.

    A departure before the window waits for it to open that morning; one at or after
    its end waits for the next morning.
    """
    if window_h is None:
        return depart
    opens, closes = _at_clock(depart, window_h[0]), _at_clock(depart, window_h[1])
    if depart < opens:
        return opens
    if depart >= closes:
        return _at_clock(depart.normalize() + pd.Timedelta(days=1, hours=12), window_h[0])
    return depart


def _day(opts: PlanOptions, depart: pd.Timestamp) -> tuple[float, float]:
    """When the driving day opens (seconds after local midnight) and how long it lasts.

    With a window, the window; with driving hours alone, 24 h from the departure's time
    of day (the driver sets off at that hour every morning).
    """
    if opts.daily_window_h is not None:
        a, b = opts.daily_window_h
        return a * 3600.0, (b - a) * 3600.0
    return _seconds_of_day(depart), DAY_S


def _rules(opts: PlanOptions, capacity_wh: float, start_soc: float, depart: pd.Timestamp,
           n_grid: int, max_grid: int) -> Rules:
    sod = _seconds_of_day(depart)
    day_open, day_len = _day(opts, depart)
    return Rules(
        q_wh=float(opts.soc_step * capacity_wh), start_wh=float(start_soc * capacity_wh),
        reserve_wh=float(opts.reserve_soc * capacity_wh),
        arrive_wh=float(max(opts.arrive_soc, opts.reserve_soc) * capacity_wh),
        n_grid=int(n_grid), max_grid=int(max_grid), stop_s=float(opts.stop_minutes * 60.0),
        lexi=opts.objective == "stops", windowed=bool(opts.windowed),
        day_open_s=float(day_open), day_len_s=float(day_len),
        max_drive_s=float((opts.max_drive_h or 24.0) * 3600.0), depart_sod=float(sod),
        depart_sow=float(depart.weekday() * DAY_S + sod))


def _solve(trace: pd.DataFrame, nodes: list[_Node], vehicle: Vehicle | None,
           opts: PlanOptions, capacity_wh: float, start_soc: float, depart: pd.Timestamp,
           night_gain_wh: np.ndarray) -> tuple[Sweep, _Arrays]:
    arr = _route_arrays(trace, nodes)
    n_grid = round(1.0 / opts.soc_step) + 1
    max_grid = int(np.floor(opts.max_charge_soc / opts.soc_step + 1e-9))
    grid = np.arange(n_grid) * opts.soc_step
    k = len(nodes)
    cum_h = np.zeros((k + 2, n_grid))
    is_charger = np.zeros(k + 2, dtype=np.bool_)
    is_lodging = np.zeros(k + 2, dtype=np.bool_)
    hours: dict[int, np.ndarray] = {}  # one integral per distinct curve
    for i, nd in enumerate(nodes, start=1):
        if nd.curve is not None:
            key = id(nd.curve)
            if key not in hours:
                hours[key] = nd.curve.cumulative_h(grid)
            cum_h[i] = hours[key]
            is_charger[i] = True
        is_lodging[i] = nd.is_lodging
    o_start, o_end, o_ptr, o_cnt = _opening(nodes)
    gains = np.zeros(k + 2)
    gains[1:k + 1] = night_gain_wh
    places = Places(energy_wh=arr.e_node, time_s=arr.t_node, peak_wh=arr.span_max,
                    half_wh=arr.half_e, half_s=arr.half_t, is_charger=is_charger,
                    is_lodging=is_lodging, charge_h=cum_h, open_start=o_start, open_end=o_end,
                    open_ptr=o_ptr, open_cnt=o_cnt, night_gain_wh=gains)
    rules = _rules(opts, capacity_wh, start_soc, depart, n_grid, max_grid)
    labels = max(1, opts.labels) if opts.windowed else 1
    return plan_pass(places, rules, labels), arr


def _before(a: tuple[int, float, float], b: tuple[int, float, float], lexi: bool) -> bool:
    """(stops, clock, busy) a strictly before b in the objective's order (as the kernel)."""
    if lexi and a[0] != b[0]:
        return a[0] < b[0]
    if abs(a[1] - b[1]) > EPS_S:
        return a[1] < b[1]
    if a[0] != b[0]:
        return a[0] < b[0]
    return a[2] < b[2] - EPS_S


def _best_destination(sweep: Sweep, lexi: bool) -> int | None:
    """The slot of the best label at the destination, or None when there is none."""
    A = sweep.arrival
    best: tuple[tuple[int, float, float], int] | None = None
    for q in range(A.stops.shape[2]):
        key = (int(A.stops[-1, 0, q]), float(A.clock[-1, 0, q]), float(A.busy_s[-1, 0, q]))
        if key[0] >= 0 and (best is None or _before(key, best[0], lexi)):
            best = (key, q)
    return None if best is None else best[1]


class _Step(NamedTuple):
    """One stop read back from the labels."""

    place: int
    arrive_grid: int
    depart_grid: int
    kind: int  # CHARGE or NIGHT
    arrive_clock: float
    depart_clock: float
    nights: int
    busy_s: float  # charging and waiting here


def _path(sweep: Sweep, n_nodes: int, slot: int) -> list[_Step]:
    """Walk back from the destination's label in ``slot``; the stops in route order."""
    A, D = sweep
    steps = []
    j, g, q = n_nodes - 1, 0, slot
    while True:
        k, gk, qk = A.from_place[j, g, q], A.from_grid[j, g, q], A.from_slot[j, g, q]
        if k == 0:
            break
        ga, qa = D.from_grid[k, gk, qk], D.from_slot[k, gk, qk]
        steps.append(_Step(
            int(k), int(ga), int(gk), int(D.kind[k, gk, qk]), float(A.clock[k, ga, qa]),
            float(D.clock[k, gk, qk]), int((D.stops[k, gk, qk] - A.stops[k, ga, qa])
                                           // NIGHT_STOPS),
            float(D.busy_s[k, gk, qk] - A.busy_s[k, ga, qa])))
        j, g, q = k, ga, qa
    return steps[::-1]


def _events(path: list[_Step], nodes: list[_Node], arr: _Arrays, opts: PlanOptions
            ) -> StopEvents:
    seg, stop_s, detour, target = [], [], [], []
    for step in path:
        nd = nodes[step.place - 1]
        seg.append(max(int(arr.pos[step.place]) - 1, 0))
        stop_s.append(step.depart_clock - step.arrive_clock + nd.snapped.detour_s)
        detour.append(2.0 * arr.half_e[step.place])
        target.append(step.depart_grid * opts.soc_step)
    return StopEvents(np.asarray(seg, int), np.asarray(stop_s, float), np.asarray(detour, float),
                      np.asarray(target, float))


def _violations(trip: Trip, opts: PlanOptions) -> list[str]:
    tr, s = trip.trace, trip.summary
    problems = []
    if s.stranded:
        problems.append(f"runs empty at km {s.stranded_at_km:.1f}")
    low = np.fmin(tr["soc"].to_numpy(), tr["soc_at_stop"].to_numpy())
    if np.nanmin(low) < opts.reserve_soc - 1e-6:
        i = int(np.nanargmin(low))
        problems.append(f"SoC {100 * low[i]:.1f} % below the reserve at km "
                        f"{(tr['start_m'].iloc[i] + tr['length_m'].iloc[i]) / 1000:.1f}")
    if s.final_soc < max(opts.arrive_soc, opts.reserve_soc) - 1e-6:
        problems.append(f"arrives with {100 * s.final_soc:.1f} %")
    return problems


def _rest_nights(arrive: pd.Timestamp, depart: pd.Timestamp) -> int:
    """Nights in a stop of a plan without days: one per local midnight, at least one."""
    return max(1, (depart.normalize() - arrive.normalize()).days)


def _stops_out(path: list[_Step], nodes: list[_Node], trip: Trip, events: StopEvents,
               opts: PlanOptions) -> list[PlannedStop]:
    tr = trip.trace
    out = []
    clock, time_s, dwell_s = tr["clock"], tr["time_s"].to_numpy(), tr["dwell_s"].to_numpy()
    for step, i in zip(path, events.segment, strict=True):
        nd = nodes[step.place - 1]
        site = nd.snapped.site
        arrive_soc = float(tr["soc_at_stop"].iloc[i])
        depart_soc = max(step.depart_grid * opts.soc_step, arrive_soc)
        arrive = clock.iloc[i] + pd.Timedelta(seconds=float(time_s[i] + dwell_s[i])
                                              + nd.snapped.detour_s / 2)
        stay = float(tr["stop_s"].iloc[i]) - nd.snapped.detour_s
        depart = arrive + pd.Timedelta(seconds=stay)
        if step.kind == NIGHT:
            overhead = charge = 0.0
            nights = 1
        else:
            overhead = opts.stop_minutes * 60.0
            charge = 3600.0 * nd.curve.hours(step.arrive_grid * opts.soc_step,
                                             step.depart_grid * opts.soc_step)
            if opts.windowed:
                nights = step.nights
            else:
                nights = _rest_nights(arrive, depart) if stay >= REST_H * 3600.0 else 0
        rest = max(stay - overhead - charge, 0.0)
        wait, night = (0.0, rest) if nights else (rest, 0.0)
        kwh = float(tr["charged_wh"].iloc[i]) / 1000.0
        out.append(PlannedStop(
            kind="overnight" if step.kind == NIGHT else "charge", name=site.name,
            site_id=site.site_id, route_km=nd.snapped.route_m / 1000.0, lat_deg=site.lat_deg,
            lon_deg=site.lon_deg, arrive=arrive.round("s"), depart=depart.round("s"),
            arrive_soc=arrive_soc, depart_soc=depart_soc, nights=int(nights),
            minutes=stay / 60.0, overhead_min=overhead / 60.0, charge_min=charge / 60.0,
            wait_min=wait / 60.0, night_min=night / 60.0, battery_kwh=kwh,
            plug_kwh=kwh / nd.curve.efficiency if nd.curve is not None else 0.0,
            connector=nd.connector, power_kw=nd.vehicle_kw, site_kw=nd.site_kw,
            detour_km=nd.snapped.detour_m / 1000.0, detour_min=nd.snapped.detour_s / 60.0))
    return out


def _totals(trip: Trip, stops: list[PlannedStop]) -> dict[str, Any]:
    """Counts, energies and the time line.

    drive + detours + overhead + charging + waiting + nights = total.
    """
    s, tr = trip.summary, trip.trace
    depart = tr["clock"].iloc[0]
    total_s = float((tr["time_s"] + tr["dwell_s"] + tr["stop_s"]).sum())
    nights = sum(x.nights for x in stops)
    return {
        "charging_stops": sum(1 for x in stops if x.kind == "charge"),
        "overnight_stops": sum(1 for x in stops if x.nights > 0), "nights": nights,
        "days": nights + 1,
        "drive_h": float((tr["time_s"] + tr["dwell_s"]).sum()) / 3600.0,
        "detour_h": sum(x.detour_min for x in stops) / 60.0,
        "overhead_h": sum(x.overhead_min for x in stops) / 60.0,
        "charge_h": sum(x.charge_min for x in stops) / 60.0,
        "wait_h": sum(x.wait_min for x in stops) / 60.0,
        "night_h": sum(x.night_min for x in stops) / 60.0,
        "total_h": total_s / 3600.0, "distance_km": s.distance_km,
        "charger_kwh": sum(x.plug_kwh for x in stops),
        "solar_kwh": s.solar_wh / 1000.0 + sum(x.battery_kwh for x in stops if x.plug_kwh == 0),
        "start_soc": s.start_soc, "arrival_soc": s.final_soc, "min_soc": s.min_soc,
        "min_soc_km": s.min_soc_km, "depart": iso_seconds(depart),
        "arrive": iso_seconds(depart + pd.Timedelta(seconds=total_s)),
    }


def _site_notes(usable: Sequence[SnappedSite], unusable: Sequence[SnappedSite]) -> list[str]:
    """What the plan assumed about the sites near the route."""
    notes = []
    if unusable:
        notes.append(f"{len(unusable)} site(s) near the route have no connector this vehicle "
                     "can use and were left out")
    for s in usable:
        o = s.site.opening
        if not o.understood:
            notes.append(f"{s.site.name}: opening hours {o.text!r} not understood; assumed "
                         "open (check before you go)")
        elif o.never:
            notes.append(f"{s.site.name}: opening hours {o.text!r} never open; not used for "
                         "charging")
    return notes


def _first_day_h(depart: pd.Timestamp, opts: PlanOptions) -> float:
    """Hours of driving the first day allows, from the departure on."""
    day_open, day_len = _day(opts, depart)
    left = (day_open + day_len - _seconds_of_day(depart)) % DAY_S or DAY_S
    return min(left / 3600.0, opts.max_drive_h or 24.0)


def plan_trip(
    segments: pd.DataFrame,
    vehicle: Vehicle,
    sites: Sequence[Site],
    *,
    options: PlanOptions | None = None,
    depart: pd.Timestamp | str = "2026-06-21T08:00:00Z",
    start_soc: float = 0.9,
    conditions: Conditions | None = None,
    weather: Weather | None = None,
    solar: SolarOptions | None = None,
    drive: DriveOptions | None = None,
    default_speed_kph: float | None = None,
    network_detour: Callable[..., Any] | None = None,
    progress: Progress = quiet,
) -> Plan:
    """Plan charging (and overnight) stops for a trip.

    Parameters
    ----------
    segments : pandas.DataFrame
        The route.
    vehicle : Vehicle
        With ``[charging]`` (curve, AC/DC limits, connectors).
    sites : sequence of Site
        Charging sites and lodgings (``kind="lodging"``).
    options : PlanOptions, optional
        Constraints and objective.
    depart : Timestamp or ISO string, default 2026-06-21 08:00 UTC
        Departure; without an offset, local time of the route.  The plan runs on the
        route's local clock (:func:`tripsim.zones.route_zone`), in which the daily window
        and opening hours are read.  With a daily window, driving starts when the window
        next opens (said so in the plan's notes).
    start_soc : float, default 0.9
        State of charge at departure.
    conditions, weather, solar, drive, default_speed_kph
        As in :func:`tripsim.simulate.simulate`.
    network_detour : callable, optional
        Round-trip detour on a road network (see :func:`tripsim.plan.sites.snap_sites`).
    progress : callable, optional
        ``progress(stage, fraction)`` as the work goes (:mod:`tripsim.progress`).

    Returns
    -------
    Plan
        Feasible with its stops and final simulation, or infeasible with ``shortfall``
        (see :func:`tripsim.plan.diagnosis.diagnose`).
    """
    opts = options or PlanOptions()
    # the window and opening hours are local times of the route: plan on its clock
    asked = local_time(depart, segments).tz_convert(route_zone(segments))
    depart_ts = window_departure(asked, opts.daily_window_h)
    notes = []
    if depart_ts != asked:
        notes.append(f"driving starts when the daily window opens, {depart_ts:%a %d %b %H:%M:%S}"
                     f" (departure asked for {asked:%a %d %b %H:%M:%S})")
    sim = dict(conditions=conditions, weather=weather, solar=solar, drive=drive,
               default_speed_kph=default_speed_kph, depart=depart_ts, start_soc=start_soc)
    base = simulate(segments, vehicle, **sim)
    snapped = snap_sites(sites, segments, max_offset_m=opts.max_offset_m,
                         network_detour=network_detour)
    usable, unusable = usable_sites(snapped, vehicle.charging.connectors)
    notes += _site_notes(usable, unusable)
    nodes = _build_nodes(usable, vehicle, base.trace, base.summary.capacity_wh / 1000.0)
    gains = _night_gains(nodes, vehicle, weather, base.trace, depart_ts, opts)
    lexi = opts.objective == "stops"
    trace = base.trace
    for rounds in range(1, opts.max_rounds + 1):
        progress(f"planning, round {rounds}", 0.2 + 0.7 * (rounds - 1) / opts.max_rounds)
        sweep, arr = _solve(trace, nodes, vehicle, opts, base.summary.capacity_wh, start_soc,
                            depart_ts, gains)
        slot = _best_destination(sweep, lexi)
        if slot is None:
            from tripsim.plan.diagnosis import diagnose

            shortfall = diagnose(trace, nodes, arr, opts, base.summary.capacity_wh, start_soc,
                                 sweep=sweep, night_gain_wh=gains,
                                 first_day_h=_first_day_h(depart_ts, opts))
            _add_tried_fixes(shortfall, trace, nodes, opts, base.summary.capacity_wh,
                             start_soc, depart_ts, gains)
            if "leave_s" in shortfall:
                shortfall["leave_at"] = iso_seconds(
                    depart_ts + pd.Timedelta(seconds=shortfall["leave_s"]))
            totals = {"charging_stops": None, "start_soc": start_soc,
                      "depart": iso_seconds(depart_ts)}
            return Plan(False, [], totals, None, rounds, shortfall, usable, notes)
        path = _path(sweep, len(nodes) + 2, slot)
        events = _events(path, nodes, arr, opts)
        trip = simulate(segments, vehicle, **sim, stops=events)
        problems = _violations(trip, opts)
        if not problems:
            break
        # re-plan on the energies of the re-simulated timeline (its times and energies
        # exclude the stops, which the planner adds itself)
        trace = trip.trace
        notes.append(f"round {rounds}: {'; '.join(problems)}; re-planned")
    stops = _stops_out(path, nodes, trip, events, opts)
    if not opts.windowed:
        notes += [f"{s.name}: a stop of {s.minutes / 60:.1f} h, counted as {s.nights} "
                  "night(s); plan days with --daily-window and --lodging"
                  for s in stops if s.nights]
    if problems:
        notes.append(f"the plan still breaks a constraint after {opts.max_rounds} rounds")
        return Plan(False, stops, _totals(trip, stops), trip, opts.max_rounds,
                    {"reason": "rounds", "problems": problems}, usable, notes)
    return Plan(True, stops, _totals(trip, stops), trip, rounds, None, usable, notes)


def longer_days(opts: PlanOptions, day_h: float) -> PlanOptions:
    """The same options with ``day_h`` hours of driving a day (window end, driving hours)."""
    window = opts.daily_window_h
    if window is not None:
        window = (window[0], min(24.0, window[0] + day_h))
    drive = None if opts.max_drive_h is None else max(opts.max_drive_h, day_h)
    return opts.replace(daily_window_h=window, max_drive_h=drive)


def _hhmm(hours: float) -> str:
    minutes = round(hours * 60.0)
    return f"{minutes // 60:02d}:{minutes % 60:02d}"


def _options_text(now: PlanOptions, longer: PlanOptions) -> str:
    """The command-line options that turn ``now`` into ``longer``."""
    parts = []
    if longer.daily_window_h != now.daily_window_h:
        a, b = longer.daily_window_h
        parts.append(f"--daily-window {_hhmm(a)}-{_hhmm(b)}")
    if longer.max_drive_h != now.max_drive_h:
        parts.append(f"--max-drive-h {longer.max_drive_h:g}")
    return " ".join(parts)


def _add_tried_fixes(shortfall: dict[str, Any], trace: pd.DataFrame, nodes: list[_Node],
                     opts: PlanOptions, capacity_wh: float, start_soc: float,
                     depart: pd.Timestamp, gains: np.ndarray) -> None:
    """Try longer driving days and charging to 100 % on the planner itself.

    Records those that give a plan in ``shortfall["fixes"]`` (``day_h`` with the options
    that give it, ``day_options``, and ``max_charge_soc``); a ``day_h`` found without
    charging is a lower bound to start from.
    """
    reason = shortfall.get("reason")
    if reason not in ("days", "together"):
        return
    fixes = shortfall.setdefault("fixes", {})

    def works(o: PlanOptions) -> bool:
        sweep, _ = _solve(trace, nodes, None, o, capacity_wh, start_soc,
                          window_departure(depart, o.daily_window_h), gains)
        return _best_destination(sweep, o.objective == "stops") is not None

    if opts.windowed:
        span = (opts.daily_window_h[1] - opts.daily_window_h[0] if opts.daily_window_h
                else 24.0)
        now = min(span, opts.max_drive_h or 24.0)
        low = max(fixes.pop("day_h", now), now)
        tries = sorted({min(24.0, low + x) for x in (0.0, 0.5, 1.0, 2.0, 4.0, 8.0)})
        for day_h in tries:
            longer = longer_days(opts, day_h)
            if day_h > now + 1e-9 and works(longer):
                fixes["day_h"] = day_h
                fixes["day_options"] = _options_text(opts, longer)
                break
    if reason == "together" and opts.max_charge_soc < 1.0 and works(
            opts.replace(max_charge_soc=1.0)):
        fixes["max_charge_soc"] = 1.0


def _night_gains(nodes: list[_Node], vehicle: Vehicle, weather: Weather | None,
                 trace: pd.DataFrame, depart: pd.Timestamp, opts: PlanOptions) -> np.ndarray:
    """Solar energy a parked vehicle gains at each lodging overnight and in the morning.

    Taken from the end of the driving day on which the route reaches the lodging (on the
    timeline without stops) to the start of the next, at the lodging, facing south; zero
    without weather or panels.
    """
    from tripsim.parking import Parking, parked_solar

    gains = np.zeros(len(nodes))
    if weather is None or not vehicle.panels or not opts.windowed:
        return gains
    cum_t = np.concatenate([[0.0], np.cumsum((trace["time_s"] + trace["dwell_s"]).to_numpy())])
    for i, nd in enumerate(nodes):
        if not nd.is_lodging:
            continue
        reach = depart + pd.Timedelta(seconds=float(cum_t[nd.snapped.segment_end]))
        if opts.daily_window_h is not None:
            start_h, end_h = opts.daily_window_h
            evening = max(reach, _at_clock(reach, end_h))
            morning = _at_clock(reach.normalize() + pd.Timedelta(days=1, hours=12), start_h)
        else:  # driving hours alone: the day starts at the departure's time of day
            evening = reach
            morning = _at_clock(reach, _seconds_of_day(depart) / 3600.0)
            if morning <= reach:
                morning = _at_clock(reach.normalize() + pd.Timedelta(days=1, hours=12),
                                    _seconds_of_day(depart) / 3600.0)
        if morning <= evening:
            continue
        site = nd.snapped.site
        park = parked_solar(vehicle.panels, weather, evening, morning, latitude=site.lat_deg,
                            longitude=site.lon_deg, parking=Parking(), step_s=900.0)
        gains[i] = float(park.cum_wh[-1] - park.cum_wh[0])
    return gains


def speed_factor_rows(factors: Sequence[float], plan_for: Callable[[float], Plan],
                      known: dict[float, Plan] | None = None) -> list[dict[str, Any]]:
    """One row per driver speed factor: feasible, stops, nights, arrival and total hours.

    ``known`` holds plans already made (e.g. at factor 1.0) so they are not made again.
    """
    rows = []
    for f in factors:
        p = (known or {}).get(f) or plan_for(f)
        rows.append({"speed_factor": f, "feasible": p.feasible,
                     "charging_stops": p.totals.get("charging_stops"),
                     "nights": p.totals.get("nights"), "arrive": p.totals.get("arrive"),
                     "total_h": p.totals.get("total_h")})
    return rows
