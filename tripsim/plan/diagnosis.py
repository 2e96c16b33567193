"""When no plan exists: what breaks, where, by how much, and what would close it.

Three questions in turn, each a relaxation of the planner's problem on the same route
arrays (cumulative energy and time at every place, half-detour costs):

1. **energy** — charging to the maximum at every charger, whatever the time, can the
   trip be made?  If not: the place from which the route gets farthest, where the
   reserve is reached, the next place to charge, the shortfall in Wh, and what would
   close it (a lower reserve or arrival SoC, one more charger on a stretch of road).
2. **days** (plans with a daily window or a driving-hours limit) — driving from the start
   or a lodging to the next lodging or the destination within one day's driving,
   whatever the charge, can the trip be made?  If not: the last place to sleep that can
   be reached, the next one and how far it is, and the day or the lodging that would
   close it.
3. **together** — both hold alone but not at once (charging takes time out of the day,
   or opening hours and the SoC grid get in the way): from the planner's own labels, the
   farthest place any plan leaves, the most charge it leaves with, and where that charge
   runs out.  :func:`tripsim.plan.search.plan_trip` then tries a longer driving day and a
   higher maximum charge on the planner itself and adds those that close it.
"""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

__all__ = ["diagnose"]

_EPS = 1e-6


def _energy_reach(arr: Any, nodes: list, opts: Any, cap: float, start_soc: float,
                  gains: np.ndarray | None) -> np.ndarray:
    """Highest departure energy at each place, charging to the maximum wherever possible.

    The destination holds the arrival energy (−inf where unreachable).
    """
    n = arr.e_node.size
    reserve, top = opts.reserve_soc * cap, opts.max_charge_soc * cap
    arrive = max(opts.arrive_soc, opts.reserve_soc) * cap
    dep = np.full(n, -np.inf)
    dep[0] = start_soc * cap
    for k in range(n - 1):
        if not np.isfinite(dep[k]):
            continue
        start = dep[k] - arr.half_e[k]
        peak = -np.inf
        for j in range(k + 1, n):
            peak = max(peak, arr.span_max[j - 1])
            if start - (peak - arr.e_node[k]) < reserve - _EPS:
                break
            left = start - (arr.e_node[j] - arr.e_node[k]) - arr.half_e[j]
            if j == n - 1:
                if left >= arrive - _EPS:
                    dep[j] = max(dep[j], left)
                continue
            if left < reserve - _EPS:
                continue
            nd, best = nodes[j - 1], left
            if nd.curve is not None:
                best = max(best, top)
            if nd.is_lodging and opts.windowed and gains is not None:
                best = max(best, min(left + gains[j - 1], max(top, left)))
            dep[j] = max(dep[j], best)
    return dep


def _name(nodes: list, j: int, n: int) -> str:
    if j == 0:
        return "the start"
    if j == n - 1:
        return "the destination"
    return nodes[j - 1].snapped.site.name


def _energy_shortfall(trace: pd.DataFrame, nodes: list, arr: Any, opts: Any, cap: float,
                      dep: np.ndarray, gains: np.ndarray | None = None) -> dict[str, Any]:
    n = arr.e_node.size
    r = opts.reserve_soc
    cum_e = np.concatenate([[0.0], np.cumsum(trace["demand_wh"].to_numpy())])
    node_m = np.concatenate([[0.0], (trace["start_m"] + trace["length_m"]).to_numpy()])
    # the place from which the charge carries farthest along the route (the first such:
    # where the charge came from, not a bed passed on the way)
    last, fail_i = 0, -1
    for k in range(n - 1):
        if not np.isfinite(dep[k]):
            continue
        p0 = int(arr.pos[k])
        budget = dep[k] - arr.half_e[k] - r * cap
        over = np.flatnonzero(cum_e[p0:] - cum_e[p0] > budget + _EPS)
        reach = p0 + int(over[0]) if over.size else cum_e.size - 1
        if reach > fail_i:
            last, fail_i = k, reach
    p0 = int(arr.pos[last])
    nxt = next((j for j in range(last + 1, n - 1)
                if nodes[j - 1].curve is not None and arr.pos[j] >= fail_i), n - 1)
    p1 = int(arr.pos[nxt])
    peak = cum_e[p0:p1 + 1].max() - cum_e[p0]

    def gap(reserve: float, arrive: float) -> float:
        budget = dep[last] - arr.half_e[last] - reserve * cap
        need = max(arrive, reserve) * cap if nxt == n - 1 else reserve * cap + arr.half_e[nxt]
        return max(peak, cum_e[p1] - cum_e[p0] + need - reserve * cap) - budget

    shortfall = max(float(gap(r, opts.arrive_soc)), 0.0)
    fixes: dict[str, Any] = {}
    lower = np.floor((r - shortfall / cap) * 1000.0) / 1000.0
    if lower >= 0.0 and gap(lower, opts.arrive_soc) <= _EPS:
        fixes["reserve_soc"] = float(lower)
    if nxt == n - 1:
        arrive = np.floor((max(opts.arrive_soc, r) - shortfall / cap) * 1000.0) / 1000.0
        if arrive >= r and gap(r, arrive) <= _EPS:
            fixes["arrive_soc"] = float(arrive)
    # one more charger at boundary y (no detour) closes it if y is reached above the
    # reserve and, charged there to the maximum, the target is reached
    full = (opts.max_charge_soc - r) * cap
    need_end = (max(opts.arrive_soc, r) * cap if nxt == n - 1
                else r * cap + arr.half_e[nxt]) - r * cap
    good = [y for y in range(p0, min(fail_i - 1, p1) + 1)
            if cum_e[y:p1 + 1].max() - cum_e[y] <= full
            and cum_e[p1] - cum_e[y] + need_end <= full]
    if good:
        lo, hi = node_m[good[0]] / 1000.0, node_m[good[-1]] / 1000.0
        fixes["charger_between_km"] = [float(lo), float(hi)]
        fixes["charger_near_km"] = float(0.5 * (lo + hi))
        fixes["charger_within_km"] = float(0.5 * (hi - lo))
    leaving = dep[last] / cap
    nd = nodes[last - 1] if last > 0 else None
    how = ("start" if nd is None else
           "charged" if nd.curve is not None and abs(leaving - opts.max_charge_soc) < _EPS
           else "overnight" if nd.is_lodging and opts.windowed and gains is not None
           and gains[last - 1] > 0 else "arrived")
    return {"reason": "energy", "stuck_after": _name(nodes, last, n),
            "stuck_after_km": float(node_m[p0] / 1000.0), "leaving_soc": float(leaving),
            "leaving": how, "reserve_soc": float(r), "fails_at_km": float(node_m[fail_i] / 1000.0),
            "next_target": _name(nodes, nxt, n), "next_target_km": float(node_m[p1] / 1000.0),
            "shortfall_wh": shortfall, "fixes": fixes}


def _day_limits(opts: Any) -> tuple[float, str, str]:
    """A day's driving [h], the option that sets it, and how to say it."""
    span = None
    if opts.daily_window_h is not None:
        a, b = opts.daily_window_h
        span = b - a
    drive = opts.max_drive_h
    if span is not None and (drive is None or span <= drive):
        a, b = opts.daily_window_h
        clock = f"{int(a):02d}:{round(a % 1 * 60):02d}-{int(b):02d}:{round(b % 1 * 60):02d}"
        return span, "--daily-window", f"{span:.1f} h of driving, in the window {clock}"
    return float(drive), "--max-drive-h", f"{drive:.1f} h of driving"


def _days_shortfall(trace: pd.DataFrame, nodes: list, arr: Any, opts: Any,
                    first_day_h: float) -> dict[str, Any] | None:
    """The days relaxation: None when the places to sleep allow the trip."""
    n = arr.e_node.size
    day_h, option, limit = _day_limits(opts)
    sleep = [0] + [j for j in range(1, n - 1) if nodes[j - 1].is_lodging] + [n - 1]
    budget = {j: (min(first_day_h, day_h) if j == 0 else day_h) * 3600.0 for j in sleep}

    def leg(k: int, j: int) -> float:
        return float(arr.t_node[j] - arr.t_node[k] + arr.half_t[k] + arr.half_t[j])

    # the least stretch of the day that lets the chain of places to sleep reach each
    excess = dict.fromkeys(sleep, np.inf)
    excess[0] = -np.inf
    for i, k in enumerate(sleep[:-1]):
        for j in sleep[i + 1:]:
            excess[j] = min(excess[j], max(excess[k], leg(k, j) - budget[k]))
    if excess[n - 1] <= _EPS:
        return None
    last = max(k for k in sleep[:-1] if excess[k] <= _EPS)
    nxt = sleep[sleep.index(last) + 1]
    cum_t = np.concatenate([[0.0], np.cumsum((trace["time_s"] + trace["dwell_s"]).to_numpy())])
    node_m = np.concatenate([[0.0], (trace["start_m"] + trace["length_m"]).to_numpy()])
    p0, p1 = int(arr.pos[last]), int(arr.pos[nxt])
    ahead = cum_t - cum_t[p0] + arr.half_t[last]
    over = np.flatnonzero(ahead[p0:] > budget[last] + _EPS)
    ends_i = p0 + int(over[0]) if over.size else cum_t.size - 1
    fixes: dict[str, Any] = {"day_h": float(np.ceil((day_h + excess[n - 1] / 3600.0) * 10) / 10)}
    # one more place to sleep at boundary y closes the gap to the next one
    back = cum_t[p1] - cum_t + arr.half_t[nxt]
    ys = [y for y in range(p0, p1 + 1)
          if ahead[y] <= budget[last] + _EPS and back[y] <= day_h * 3600.0 + _EPS]
    if ys:
        fixes["lodging_between_km"] = [float(node_m[ys[0]] / 1000.0),
                                       float(node_m[ys[-1]] / 1000.0)]
    return {"reason": "days", "stuck_after": _name(nodes, last, n),
            "stuck_after_km": float(node_m[p0] / 1000.0), "day_h": float(day_h),
            "first_day_h": float(min(first_day_h, day_h)), "limited_by": option,
            "limit": limit, "leg_h": leg(last, nxt) / 3600.0,
            "day_ends_km": float(node_m[ends_i] / 1000.0), "next_target": _name(nodes, nxt, n),
            "next_target_km": float(node_m[p1] / 1000.0), "fixes": fixes}


def diagnose(trace: pd.DataFrame, nodes: list, arr: Any, opts: Any, capacity_wh: float,
             start_soc: float, *, sweep: Any = None, night_gain_wh: np.ndarray | None = None,
             first_day_h: float = 24.0) -> dict[str, Any]:
    """Explain an infeasible trip.

    Parameters
    ----------
    trace : pandas.DataFrame
        The simulated trace the planner worked on.
    nodes, arr
        The planner's places and route arrays (:mod:`tripsim.plan.search`).
    opts : PlanOptions
        Constraints of the plan.
    capacity_wh, start_soc : float
        Usable energy and the state of charge at departure.
    sweep : Sweep, optional
        The planner's labels (for the farthest place any plan reaches).
    night_gain_wh : array, optional
        Solar energy parked overnight at each place (lodgings).
    first_day_h : float, default 24
        Driving the first day allows from the departure on. [h]

    Returns
    -------
    dict
        ``reason`` ("energy", "days" or "together"), ``stuck_after`` and
        ``stuck_after_km`` (the place the trip cannot get beyond) and ``fixes``; with
        "energy": ``leaving_soc`` and ``leaving`` ("start", "charged", "overnight": with
        the sun at a lodging, "arrived"),
        ``fails_at_km`` (where the reserve is reached), ``next_target``,
        ``next_target_km``, ``shortfall_wh`` and fixes ``reserve_soc``, ``arrive_soc``,
        ``charger_between_km``/``charger_near_km``/``charger_within_km``; with "days":
        ``day_h``, ``first_day_h``, ``limited_by`` (the option), ``limit`` (in words),
        ``leg_h`` (driving to the next place to sleep), ``day_ends_km``,
        ``next_target``, ``next_target_km`` and fixes ``day_h`` and
        ``lodging_between_km``; with "together": the keys of "energy" for the fullest
        departure from the farthest place any plan leaves, and ``leave_s`` (its clock,
        seconds after the departure).  When the charge and the days both break, the
        "energy" answer holds the "days" one under ``days``.
    """
    dep = _energy_reach(arr, nodes, opts, capacity_wh, start_soc, night_gain_wh)
    days = _days_shortfall(trace, nodes, arr, opts, first_day_h) if opts.windowed else None
    if not np.isfinite(dep[-1]):
        out = _energy_shortfall(trace, nodes, arr, opts, capacity_wh, dep, night_gain_wh)
        if days is not None:
            out["days"] = days  # both break
        return out
    if days is not None:
        return days
    return _together(trace, nodes, arr, opts, capacity_wh, start_soc, sweep)


def _together(trace: pd.DataFrame, nodes: list, arr: Any, opts: Any, cap: float,
              start_soc: float, sweep: Any) -> dict[str, Any]:
    """Where the plans end: the farthest place left, its fullest departure, the shortfall.

    From the planner's labels: the farthest place any plan leaves, the most charge any
    plan leaves it with, and where that charge runs out.
    """
    n = arr.e_node.size
    far, leave_soc, leave_s = 0, start_soc, 0.0
    if sweep is not None:
        D = sweep.departure
        left = np.flatnonzero((D.stops[:n - 1] >= 0).any(axis=(1, 2)))
        far = int(left.max()) if left.size else 0
        if far > 0:
            g = int(np.flatnonzero((D.stops[far] >= 0).any(axis=1)).max())  # the fullest
            slots = np.flatnonzero(D.stops[far, g] >= 0)
            leave_soc = g * opts.soc_step
            leave_s = float(D.clock[far, g, slots].min())
    dep = np.full(n, -np.inf)
    dep[far] = leave_soc * cap
    out = _energy_shortfall(trace, nodes, arr, opts, cap, dep)
    out.update(reason="together", windowed=bool(opts.windowed), leave_s=leave_s, fixes={})
    return out
