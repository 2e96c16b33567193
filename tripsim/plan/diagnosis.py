"""When no plan exists: where the trip breaks, by how much, and what would close it."""

from __future__ import annotations

from typing import Any

import numpy as np
import pandas as pd

__all__ = ["diagnose"]


def _reachable(arr: Any, half_e: np.ndarray, cap: float, s0: float, reserve: float,
               max_soc: float) -> tuple[np.ndarray, np.ndarray]:
    """Departure energy at each node when charging to the maximum wherever possible."""
    n = arr.e_node.size
    dep = np.full(n, -np.inf)
    dep[0] = s0 * cap
    for k in range(n - 1):
        if not np.isfinite(dep[k]):
            continue
        peak = -np.inf
        for j in range(k + 1, n):
            peak = max(peak, arr.span_max[j - 1])
            start = dep[k] - half_e[k]
            if start - (peak - arr.e_node[k]) < reserve * cap - 1e-6:
                break
            left = start - (arr.e_node[j] - arr.e_node[k]) - half_e[j]
            if left >= reserve * cap - 1e-6:
                dep[j] = max(dep[j], max(left, max_soc * cap) if j < n - 1 else left)
    return dep, np.isfinite(dep)


def diagnose(trace: pd.DataFrame, nodes: list, arr: Any, opts: Any, capacity_wh: float,
             start_soc: float) -> dict[str, Any]:
    """Explain an infeasible trip.

    Returns
    -------
    dict
        ``stuck_after`` (the last place that can be reached, with its km), ``fails_at_km``
        (where the state of charge would reach the reserve leaving it full),
        ``next_target`` and ``next_target_km``, ``shortfall_wh``, and ``fixes``: a lower
        reserve that would close the gap (when one would), and the stretch of road where
        one more charger (with no detour) would close it.
    """
    n = arr.e_node.size
    half_e = arr.half_e
    cap, r, m = capacity_wh, opts.reserve_soc, opts.max_charge_soc
    dep, ok = _reachable(arr, half_e, cap, start_soc, r, m)
    cum_e = np.concatenate([[0.0], np.cumsum(trace["demand_wh"].to_numpy())])
    node_m = np.concatenate([[0.0], (trace["start_m"] + trace["length_m"]).to_numpy()])
    last = int(np.flatnonzero(ok[:-1]).max())
    start_wh = dep[last] - half_e[last]
    budget = start_wh - r * cap
    p0 = int(arr.pos[last])
    over = np.flatnonzero(cum_e[p0:] - cum_e[p0] > budget)
    fail_i = p0 + (int(over[0]) if over.size else cum_e.size - 1)
    fails_km = float(node_m[fail_i] / 1000.0)
    nxt = next((j for j in range(last + 1, n) if arr.pos[j] >= fail_i), n - 1)
    need_end = (max(opts.arrive_soc, r) * cap if nxt == n - 1 else r * cap + half_e[nxt])
    p1 = int(arr.pos[nxt])
    drawdown = max(cum_e[p0:p1 + 1].max() - cum_e[p0], cum_e[p1] - cum_e[p0] + need_end - r * cap)
    shortfall = float(drawdown - budget)
    name = "the start" if last == 0 else nodes[last - 1].snapped.site.name
    target = "the destination" if nxt == n - 1 else nodes[nxt - 1].snapped.site.name
    fixes: dict[str, Any] = {}
    if shortfall < r * cap:
        fixes["reserve_soc"] = float(np.floor((r - shortfall / cap) * 1000) / 1000)
    # one more charger at km y (no detour) closes it if y is reachable and, from y charged
    # to the maximum, the target is reachable
    full = (m - r) * cap
    target_need = need_end - r * cap
    ys = np.arange(p0, min(fail_i, p1) + 1)
    good = [y for y in ys if cum_e[y:p1 + 1].max() - cum_e[y] <= full
            and cum_e[p1] - cum_e[y] + target_need <= full]
    if good:
        lo, hi = node_m[good[0]] / 1000.0, node_m[good[-1]] / 1000.0
        fixes["charger_between_km"] = [float(lo), float(hi)]
        fixes["charger_near_km"] = float(0.5 * (lo + hi))
        fixes["charger_within_km"] = float(0.5 * (hi - lo))
    return {"stuck_after": name, "stuck_after_km": float(node_m[p0] / 1000.0),
            "fails_at_km": fails_km, "next_target": target,
            "next_target_km": float(node_m[p1] / 1000.0), "shortfall_wh": shortfall,
            "fixes": fixes}
