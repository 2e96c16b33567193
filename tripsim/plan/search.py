"""Charging stops: the fewest stops, then the shortest trip, over one day or many.

The planner decides where to stop and how much to charge.  It works on the energies
and times of a simulated trip (so grade, wind, temperature and sun are in them), on a
state-of-charge grid (default 0.5 %):

* states are (place, state of charge) at arrival and at departure, places in route order
  (departure, charging sites, lodgings, destination), so the state graph is acyclic;
* a label-setting sweep (dynamic programming over the places in order) keeps at each
  state the best labels by the objective, lexicographic by default (fewest charging
  stops, then least total time), or least total time; with a daily driving window and a
  limit on driving hours a few non-dominated labels (stops, clock, driving today) are
  kept per state, and the fewest nights come first (a night is never added to save a
  charging stop);
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
from typing import Any

import numpy as np
import pandas as pd

from tripsim.drive import DriveOptions
from tripsim.errors import TripsimInputError
from tripsim.plan.charging import ChargeCurve, charge_curve
from tripsim.plan.kernel import plan_pass
from tripsim.plan.sites import Site, SnappedSite, snap_sites, usable_sites
from tripsim.simulate import Conditions, SolarOptions, StopEvents, Trip, simulate
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather

__all__ = ["Plan", "PlanOptions", "PlannedStop", "plan_trip"]


@dataclass(frozen=True)
class PlanOptions:
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

    reserve_soc: float = 0.10
    arrive_soc: float = 0.15
    max_charge_soc: float = 0.8
    stop_minutes: float = 5.0
    objective: str = "stops"
    soc_step: float = 0.005
    max_offset_m: float = 2000.0
    daily_window_h: tuple[float, float] | None = None
    max_drive_h: float | None = None
    labels: int = 6
    max_rounds: int = 5

    def __post_init__(self) -> None:
        def bad(msg: str, opt: str) -> None:
            raise TripsimInputError(msg, opt)

        if not 0.0 <= self.reserve_soc < 1.0:
            bad(f"reserve {self.reserve_soc} must be within 0 to 1", "--reserve")
        if not 0.0 < self.max_charge_soc <= 1.0:
            bad(f"maximum charge {self.max_charge_soc} must be within 0 to 1", "--max-charge-soc")
        if self.reserve_soc >= self.max_charge_soc:
            bad(f"the reserve ({self.reserve_soc:.0%}) must be below the maximum charge "
                f"({self.max_charge_soc:.0%})", "--reserve")
        if not 0.0 <= self.arrive_soc <= self.max_charge_soc:
            bad(f"arrival SoC {self.arrive_soc} must be within 0 and the maximum charge",
                "--arrive-soc")
        if self.objective not in ("stops", "time"):
            bad(f"objective {self.objective!r}: expected stops or time", "--objective")
        if not 0.001 <= self.soc_step <= 0.1:
            bad(f"SoC step {self.soc_step} must be within 0.001 to 0.1", "--soc-step")
        if self.stop_minutes < 0:
            bad("stop minutes must not be negative", "--stop-minutes")
        if self.daily_window_h is not None:
            a, b = self.daily_window_h
            if not 0 <= a < b <= 24:
                bad(f"daily window {a}-{b} h is not a range within the day", "--daily-window")
        if self.max_drive_h is not None and self.max_drive_h <= 0:
            bad("max driving hours must be positive", "--max-drive-h")

    @property
    def windowed(self) -> bool:
        """True when days are limited (window or driving hours)."""
        return self.daily_window_h is not None or self.max_drive_h is not None


@dataclass(frozen=True)
class PlannedStop:
    """One stop of a plan."""

    kind: str  # "charge" or "overnight"
    name: str
    site_id: str
    route_km: float
    lat_deg: float
    lon_deg: float
    arrive: pd.Timestamp
    depart: pd.Timestamp
    arrive_soc: float
    depart_soc: float
    wait_min: float
    charge_min: float
    minutes: float
    battery_kwh: float
    plug_kwh: float
    connector: str
    power_kw: float
    detour_km: float

    def to_dict(self) -> dict[str, Any]:
        """Plain dict for JSON."""
        d = dict(self.__dict__)
        d["arrive"], d["depart"] = self.arrive.isoformat(), self.depart.isoformat()
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
        """One row a stop (the columns of :class:`PlannedStop`)."""
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


def _tz_offset_s(ts: pd.Timestamp) -> float:
    off = ts.utcoffset()
    return 0.0 if off is None else off.total_seconds()


def _build_nodes(sites: Sequence[SnappedSite], vehicle: Vehicle, trace: pd.DataFrame,
                 capacity_kwh: float) -> list[_Node]:
    nodes = []
    temp = trace["temp_c"].to_numpy()
    for s in sites:
        best = s.site.best_connector(vehicle.charging.connectors)
        curve = None
        conn, kw = ("", 0.0) if best is None else best
        if best is not None:
            t = float(temp[min(s.segment_end, temp.size - 1)])
            curve = charge_curve(vehicle, conn, kw, temp_c=t, capacity_kwh=capacity_kwh)
        nodes.append(_Node(s, conn, kw, curve, s.site.kind == "lodging"))
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
    pos = np.array([0] + [n.snapped.segment_end for n in nodes] + [demand.size])
    span = np.array([cum_e[a:b + 1].max() for a, b in itertools.pairwise(pos)])
    # detours cost the route's mean battery energy per metre (never negative)
    wh_per_m = max(float(demand.sum() / max(trace["length_m"].sum(), 1.0)), 0.0)
    half_e = np.r_[0.0, [0.5 * n.snapped.detour_m * wh_per_m for n in nodes], 0.0]
    half_t = np.r_[0.0, [0.5 * n.snapped.detour_s for n in nodes], 0.0]
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


def _solve(trace: pd.DataFrame, nodes: list[_Node], vehicle: Vehicle, opts: PlanOptions,
           capacity_wh: float, start_soc: float, depart: pd.Timestamp,
           night_gain_wh: np.ndarray) -> tuple[Any, _Arrays]:
    arr = _route_arrays(trace, nodes)
    n_grid = round(1.0 / opts.soc_step) + 1
    max_grid = int(np.floor(opts.max_charge_soc / opts.soc_step + 1e-9))
    grid = np.arange(n_grid) * opts.soc_step
    k = len(nodes)
    cum_h = np.zeros((k + 2, n_grid))
    is_charger = np.zeros(k + 2, dtype=np.bool_)
    is_lodging = np.zeros(k + 2, dtype=np.bool_)
    for i, nd in enumerate(nodes, start=1):
        if nd.curve is not None:
            cum_h[i] = nd.curve.cumulative_h(grid)
            is_charger[i] = True
        is_lodging[i] = nd.is_lodging
    o_start, o_end, o_ptr, o_cnt = _opening(nodes)
    local = depart + pd.Timedelta(0)
    sod = local.hour * 3600.0 + local.minute * 60.0 + local.second
    sow = local.weekday() * 86400.0 + sod
    win = opts.daily_window_h or (0.0, 24.0)
    labels = max(1, opts.labels) if opts.windowed else 1
    gains = np.zeros(k + 2)
    gains[1:k + 1] = night_gain_wh
    out = plan_pass(
        arr.e_node, arr.t_node, arr.span_max, arr.half_e, arr.half_t, is_charger, is_lodging,
        cum_h,
        o_start, o_end, o_ptr, o_cnt, gains, capacity_wh, opts.soc_step,
        start_soc * capacity_wh, opts.reserve_soc * capacity_wh,
        max(opts.arrive_soc, opts.reserve_soc) * capacity_wh, n_grid, max_grid,
        opts.stop_minutes * 60.0, opts.objective == "stops", opts.windowed, win[0] * 3600.0,
        win[1] * 3600.0, (opts.max_drive_h or 24.0) * 3600.0, sod, sow, labels)
    return out, arr


def _best_destination(out: Any, lexi: bool) -> int | None:
    stops, clock = out[0][-1, 0], out[1][-1, 0]
    best = None
    for q in range(stops.size):
        if stops[q] < 0:
            continue
        key = (stops[q], clock[q]) if lexi else (clock[q], stops[q])
        if best is None or key < best[0]:
            best = (key, q)
    return None if best is None else best[1]


def _path(out: Any, n_nodes: int, slot: int) -> list[tuple[int, int, int, int, float, float]]:
    """Walk parents back from the destination.

    Returns (node, arrive grid, depart grid, kind, arrive clock, depart clock) for each
    stop, in route order.
    """
    a_ps, a_pg, a_pl = out[3], out[4], out[5]
    a_clock, d_clock = out[1], out[8]
    d_pg, d_pl, d_pk = out[11], out[12], out[13]
    stops = []
    j, g, q = n_nodes - 1, 0, slot
    while True:
        k, gk, qk = a_ps[j, g, q], a_pg[j, g, q], a_pl[j, g, q]
        if k == 0:
            break
        kind = d_pk[k, gk, qk]
        ga, qa = d_pg[k, gk, qk], d_pl[k, gk, qk]
        stops.append((int(k), int(ga), int(gk), int(kind), float(a_clock[k, ga, qa]),
                      float(d_clock[k, gk, qk])))
        j, g, q = k, ga, qa
    return stops[::-1]


def _events(path: list[tuple], nodes: list[_Node], arr: _Arrays, opts: PlanOptions
            ) -> StopEvents:
    seg, stop_s, detour, target = [], [], [], []
    for k, _ga, gd, _kind, t_arr, t_dep in path:
        nd = nodes[k - 1]
        seg.append(max(int(arr.pos[k]) - 1, 0))
        stop_s.append(t_dep - t_arr + nd.snapped.detour_s)
        detour.append(2.0 * arr.half_e[k])
        target.append(gd * opts.soc_step)
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


def _stops_out(path: list[tuple], nodes: list[_Node], trip: Trip, events: StopEvents,
               opts: PlanOptions) -> list[PlannedStop]:
    tr = trip.trace
    out = []
    clock_arr = tr["clock"]
    for (k, _ga, gd, kind, _t_arr, _t_dep), i in zip(path, events.segment, strict=True):
        nd = nodes[k - 1]
        site = nd.snapped.site
        arrive_soc = float(tr["soc_at_stop"].iloc[i])
        depart_soc = max(gd * opts.soc_step, arrive_soc)
        seg_end = clock_arr.iloc[i] + pd.Timedelta(seconds=float(tr["time_s"].iloc[i]
                                                               + tr["dwell_s"].iloc[i]))
        arrive = seg_end + pd.Timedelta(seconds=nd.snapped.detour_s / 2)
        stay = float(tr["stop_s"].iloc[i]) - nd.snapped.detour_s
        charge_h = nd.curve.hours(arrive_soc, depart_soc) if nd.curve is not None else 0.0
        is_night = kind == 1
        wait = 0.0 if is_night else max(stay - opts.stop_minutes * 60 - charge_h * 3600, 0.0)
        kwh = float(tr["charged_wh"].iloc[i]) / 1000.0
        out.append(PlannedStop(
            kind="overnight" if is_night else "charge", name=site.name, site_id=site.site_id,
            route_km=nd.snapped.route_m / 1000.0, lat_deg=site.lat_deg, lon_deg=site.lon_deg,
            arrive=arrive, depart=arrive + pd.Timedelta(seconds=stay), arrive_soc=arrive_soc,
            depart_soc=depart_soc, wait_min=wait / 60.0, charge_min=charge_h * 60.0,
            minutes=stay / 60.0, battery_kwh=kwh,
            plug_kwh=kwh / nd.curve.efficiency if nd.curve is not None else 0.0,
            connector=nd.connector,
            power_kw=nd.site_kw, detour_km=nd.snapped.detour_m / 1000.0))
    return out


def _totals(trip: Trip, stops: list[PlannedStop], depart: pd.Timestamp) -> dict[str, Any]:
    s = trip.summary
    charge = [x for x in stops if x.kind == "charge"]
    nights = [x for x in stops if x.kind == "overnight"]
    arrive = pd.Timestamp(s.arrive)
    days = (arrive.normalize() - depart.normalize()).days + 1
    return {
        "charging_stops": len(charge), "overnight_stops": len(nights), "days": int(days),
        "drive_h": s.drive_h,
        "charge_h": sum(x.charge_min for x in charge) / 60.0,
        "stop_h": sum(x.minutes for x in charge) / 60.0,
        "total_h": s.duration_h, "distance_km": s.distance_km,
        "charger_kwh": sum(x.plug_kwh for x in stops),
        "solar_kwh": s.solar_wh / 1000.0 + sum(x.battery_kwh for x in stops if x.plug_kwh == 0),
        "arrival_soc": s.final_soc, "min_soc": s.min_soc, "min_soc_km": s.min_soc_km,
        "depart": s.depart, "arrive": s.arrive,
    }


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
        Departure (time-zone aware).
    start_soc : float, default 0.9
        State of charge at departure.
    conditions, weather, solar, drive, default_speed_kph
        As in :func:`tripsim.simulate.simulate`.
    network_detour : callable, optional
        Round-trip detour on a road network (see :func:`tripsim.plan.sites.snap_sites`).

    Returns
    -------
    Plan
        Feasible with its stops and final simulation, or infeasible with ``shortfall``.
    """
    opts = options or PlanOptions()
    depart_ts = pd.Timestamp(depart)
    if depart_ts.tzinfo is None:
        raise TripsimInputError("departure needs a time zone", "--depart")
    sim = dict(conditions=conditions, weather=weather, solar=solar, drive=drive,
               default_speed_kph=default_speed_kph, depart=depart_ts, start_soc=start_soc)
    base = simulate(segments, vehicle, **sim)
    snapped = snap_sites(sites, segments, max_offset_m=opts.max_offset_m,
                         network_detour=network_detour)
    usable, unusable = usable_sites(snapped, vehicle.charging.connectors)
    notes = []
    if unusable:
        notes.append(f"{len(unusable)} site(s) near the route have no connector this vehicle "
                     "can use and were left out")
    _check_first_leg(base.trace, usable, opts)
    nodes = _build_nodes(usable, vehicle, base.trace, base.summary.capacity_wh / 1000.0)
    gains = _night_gains(nodes, vehicle, weather, base.trace, depart_ts, opts)
    trace = base.trace
    for rounds in range(1, opts.max_rounds + 1):
        out, arr = _solve(trace, nodes, vehicle, opts, base.summary.capacity_wh, start_soc,
                             depart_ts, gains)
        slot = _best_destination(out, opts.objective == "stops")
        if slot is None:
            from tripsim.plan.diagnosis import diagnose

            arr_now = _route_arrays(trace, nodes)
            return Plan(False, [], {"charging_stops": None}, None, rounds,
                        diagnose(trace, nodes, arr_now, opts, base.summary.capacity_wh,
                                 start_soc), usable, notes)
        path = _path(out, len(nodes) + 2, slot)
        events = _events(path, nodes, arr, opts)
        trip = simulate(segments, vehicle, **sim, stops=events)
        problems = _violations(trip, opts)
        if not problems:
            stops = _stops_out(path, nodes, trip, events, opts)
            return Plan(True, stops, _totals(trip, stops, depart_ts), trip, rounds, None,
                        usable, notes)
        # re-plan on the energies of the re-simulated timeline (its times and energies
        # exclude the stops, which the planner adds itself)
        trace = trip.trace
        notes.append(f"round {rounds}: {'; '.join(problems)}; re-planned")
    stops = _stops_out(path, nodes, trip, events, opts)
    notes.append(f"the plan still breaks a constraint after {opts.max_rounds} rounds")
    return Plan(False, stops, _totals(trip, stops, depart_ts), trip, opts.max_rounds,
                {"reason": problems}, usable, notes)


def _night_gains(nodes: list[_Node], vehicle: Vehicle, weather: Weather | None,
                 trace: pd.DataFrame, depart: pd.Timestamp, opts: PlanOptions) -> np.ndarray:
    """Solar energy a parked vehicle gains at each lodging overnight and in the morning.

    Taken from the end of the driving window on the day the route reaches the lodging
    (on the timeline without stops) to the start of the next day's window, at the
    lodging, facing south; zero without weather or panels.
    """
    from tripsim.parking import Parking, parked_solar

    gains = np.zeros(len(nodes))
    if weather is None or not vehicle.panels or not opts.windowed:
        return gains
    start_h, end_h = opts.daily_window_h or (0.0, 24.0)
    cum_t = np.concatenate([[0.0], np.cumsum((trace["time_s"] + trace["dwell_s"]).to_numpy())])
    for i, nd in enumerate(nodes):
        if not nd.is_lodging:
            continue
        reach = depart + pd.Timedelta(seconds=float(cum_t[nd.snapped.segment_end]))
        day = reach.normalize()
        evening = day + pd.Timedelta(hours=end_h)
        morning = day + pd.Timedelta(days=1, hours=start_h)
        site = nd.snapped.site
        park = parked_solar(vehicle.panels, weather, evening, morning, latitude=site.lat_deg,
                            longitude=site.lon_deg, parking=Parking(), step_s=900.0)
        gains[i] = float(park.cum_wh[-1] - park.cum_wh[0])
    return gains


def _check_first_leg(trace: pd.DataFrame, sites: Sequence[SnappedSite], opts: PlanOptions) -> None:
    if not opts.windowed:
        return
    cum_t = np.cumsum((trace["time_s"] + trace["dwell_s"]).to_numpy())
    first = next((s.segment_end for s in sites), len(trace))
    first_h = float(cum_t[max(first - 1, 0)] / 3600.0)
    span = opts.daily_window_h[1] - opts.daily_window_h[0] if opts.daily_window_h else 24.0
    limit = min(span, opts.max_drive_h or 24.0)
    if first_h > limit:
        raise TripsimInputError(
            f"a day's driving ({limit:.1f} h) is shorter than the first leg: {first_h:.1f} h "
            "to the first place to stop", "--daily-window")


def speed_factor_rows(factors: Sequence[float], plan_for: Callable[[float], Plan],
                      known: dict[float, Plan] | None = None) -> list[dict[str, Any]]:
    """One row per driver speed factor: feasible, charging stops, total hours.

    ``known`` holds plans already made (e.g. at factor 1.0) so they are not made again.
    """
    rows = []
    for f in factors:
        p = (known or {}).get(f) or plan_for(f)
        rows.append({"speed_factor": f, "feasible": p.feasible,
                     "charging_stops": p.totals.get("charging_stops"),
                     "total_h": p.totals.get("total_h")})
    return rows


def with_speed_factor(drive: DriveOptions | None, factor: float) -> DriveOptions:
    """Driver options with another speed factor."""
    return (drive or DriveOptions()).replace(speed_factor=factor)
