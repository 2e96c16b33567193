"""The compiled label-setting pass of the charging planner (see :mod:`tripsim.planner`).

States are (node, SoC grid index) in two layers: *arrival* (at the site, after half the
detour) and *departure* (at the site, after charging or sleeping).  Nodes are in route
order, so the state graph is acyclic and one sweep in node order settles every state.
Each state keeps up to ``L`` labels (charging stops, clock, driving time today) that do
not dominate each other; with no daily window one label per state is exact.
"""

from __future__ import annotations

import numba
import numpy as np

WEEK_S = 7 * 86400.0
#: A night counts as this many charging stops in the first criterion, so that plans
#: minimise nights first (an extra night is never traded for a charging stop).
NIGHT = 1000
DAY_S = 86400.0
INF = 1e300


@numba.njit(cache=True)
def _better(s1, c1, s2, c2, lexi):  # pragma: no cover - compiled
    if lexi:
        return s1 < s2 or (s1 == s2 and c1 < c2)
    return c1 < c2 or (c1 == c2 and s1 < s2)


@numba.njit(cache=True)
def _dominates(s1, c1, d1, s2, c2, d2, lexi, windowed):  # pragma: no cover - compiled
    return ((s1 <= s2 or not lexi) and c1 <= c2 + 1e-9
            and (d1 <= d2 + 1e-9 or not windowed))


@numba.njit(cache=True)
def _insert(stops, clock, drive, ps, pg, pl, pk, j, g, s, c, d, a_s, a_g, a_l, kind, lexi,
            windowed):  # pragma: no cover - compiled
    """Insert a label at (j, g) unless an existing one dominates it; drop those it dominates.

    When all slots hold non-dominated labels, the new one replaces the worst in the
    objective's order if it is better (exact for one label without daily windows).
    """
    n_slots = stops.shape[2]
    for q in range(n_slots):
        if stops[j, g, q] >= 0 and _dominates(stops[j, g, q], clock[j, g, q], drive[j, g, q],
                                              s, c, d, lexi, windowed):
            return False
    slot = -1
    for q in range(n_slots):
        if stops[j, g, q] >= 0 and _dominates(s, c, d, stops[j, g, q], clock[j, g, q],
                                              drive[j, g, q], lexi, windowed):
            stops[j, g, q] = -1
        if stops[j, g, q] < 0 and slot < 0:
            slot = q
    if slot < 0:
        worst = 0
        for q in range(1, n_slots):
            if _better(stops[j, g, worst], clock[j, g, worst], stops[j, g, q], clock[j, g, q],
                       lexi):
                worst = q
        if not _better(s, c, stops[j, g, worst], clock[j, g, worst], lexi):
            return False
        slot = worst
    stops[j, g, slot] = s
    clock[j, g, slot] = c
    drive[j, g, slot] = d
    ps[j, g, slot] = a_s
    pg[j, g, slot] = a_g
    pl[j, g, slot] = a_l
    pk[j, g, slot] = kind
    return True


@numba.njit(cache=True)
def _session_start(t_week, duration, starts, ends):  # pragma: no cover - compiled
    """Earliest start ≥ t_week (seconds of week, may exceed a week) of a session that fits."""
    n = starts.size
    if n == 0:
        return t_week
    base = np.floor(t_week / WEEK_S) * WEEK_S
    best = INF
    for w in range(3):
        for i in range(n):
            s = base + w * WEEK_S + starts[i]
            e = base + w * WEEK_S + ends[i]
            start = s if s > t_week else t_week
            if start + duration <= e + 1e-6 and start < best:
                best = start
        if best < INF:
            return best
    return INF


@numba.njit(cache=True)
def _charge_from(A, D, k, a, la, cum_h, open_start, open_end, open_ptr, open_cnt, max_grid,
                 fixed_s, depart_sow, lexi, windowed):  # pragma: no cover - compiled
    """Departures from one arrival label at a charger: charge to each grid value."""
    s, c, dr = A[0][k, a, la], A[1][k, a, la], A[2][k, a, la]
    for g in range(a + 1, max_grid + 1):
        dur = (cum_h[k, g] - cum_h[k, a]) * 3600.0
        t0 = c + fixed_s
        if open_cnt[k] > 0:
            p = open_ptr[k]
            st = _session_start(depart_sow + t0, dur, open_start[p:p + open_cnt[k]],
                                open_end[p:p + open_cnt[k]])
            if st >= INF:
                break  # longer sessions cannot fit either
            t0 = st - depart_sow
        _insert(D[0], D[1], D[2], D[3], D[4], D[5], D[6], k, g, s + 1, t0 + dur, dr, k, a, la,
                0, lexi, windowed)


@numba.njit(cache=True)
def _sleep_at(A, D, k, a, la, cum_h, is_charger, night_gain_wh, q_wh, n_grid, max_grid,
              win_start, depart_sod, lexi, windowed):  # pragma: no cover - compiled
    """The overnight departure from one arrival label at a lodging."""
    s, c = A[0][k, a, la], A[1][k, a, la]
    sod = (depart_sod + c) % DAY_S
    day0 = c - sod  # the clock at the start of this local day
    nxt = day0 + win_start if sod < win_start else day0 + DAY_S + win_start
    hours = (nxt - c) / 3600.0
    g = a
    if is_charger[k]:
        while g + 1 < n_grid and cum_h[k, g + 1] - cum_h[k, a] <= hours:
            g += 1
    g = min(g + int(np.floor(night_gain_wh[k] / q_wh + 1e-9)), max(max_grid, a))
    _insert(D[0], D[1], D[2], D[3], D[4], D[5], D[6], k, g, s + NIGHT, nxt, 0.0, k, a, la, 1,
            lexi, windowed)


@numba.njit(cache=True)
def _drive_from(A, D, k, g, lq, soc_wh, e_node, t_node, span_max, half_e, half_t, q_wh,
                reserve_wh, arrive_wh, n_grid, win_end, max_drive, depart_sod, lexi,
                windowed):  # pragma: no cover - compiled
    """Arrivals at every later place reachable from one departure label."""
    n = e_node.size
    s, c, dr = D[0][k, g, lq], D[1][k, g, lq], D[2][k, g, lq]
    start_wh = soc_wh - half_e[k]
    peak = -INF
    day_end = c - (depart_sod + c) % DAY_S + win_end
    for j in range(k + 1, n):
        peak = max(peak, span_max[j - 1])
        if start_wh - (peak - e_node[k]) < reserve_wh - 1e-6:
            break  # the drawdown only grows further on
        base = t_node[j] - t_node[k] + half_t[k]
        dt = base + half_t[j]
        if windowed:
            if c + base > day_end + 1e-6 or dr + base > max_drive + 1e-6:
                break
            if c + dt > day_end + 1e-6 or dr + dt > max_drive + 1e-6:
                continue
        left = start_wh - (e_node[j] - e_node[k]) - half_e[j]
        if j == n - 1:
            if left >= arrive_wh - 1e-6:
                _insert(A[0], A[1], A[2], A[3], A[4], A[5], A[6], j, 0, s, c + dt, dr + dt,
                        k, g, lq, 3, lexi, windowed)
            continue
        if left < reserve_wh - 1e-6:
            continue
        ga = min(int(np.floor(left / q_wh + 1e-9)), n_grid - 1)
        _insert(A[0], A[1], A[2], A[3], A[4], A[5], A[6], j, ga, s, c + dt, dr + dt, k, g, lq,
                3, lexi, windowed)


def _layer(shape):
    return (np.full(shape, -1, dtype=np.int64), np.full(shape, INF), np.zeros(shape),
            np.zeros(shape, dtype=np.int64), np.zeros(shape, dtype=np.int64),
            np.zeros(shape, dtype=np.int64), np.zeros(shape, dtype=np.int64))


@numba.njit(cache=True)
def _sweep(A, D, e_node, t_node, span_max, half_e, half_t, is_charger, is_lodging, cum_h,
           open_start, open_end, open_ptr, open_cnt, night_gain_wh, cap_wh, step, s0_wh,
           reserve_wh, arrive_wh, n_grid, max_grid, fixed_s, lexi, windowed, win_start,
           win_end, max_drive, depart_sod, depart_sow):  # pragma: no cover - compiled
    q_wh = step * cap_wh
    n_labels = A[0].shape[2]
    for k in range(e_node.size - 1):
        for a in range(n_grid if k > 0 else 0):
            for la in range(n_labels):
                if A[0][k, a, la] < 0:
                    continue
                if is_charger[k]:
                    _charge_from(A, D, k, a, la, cum_h, open_start, open_end, open_ptr,
                                 open_cnt, max_grid, fixed_s, depart_sow, lexi, windowed)
                if is_lodging[k] and windowed:
                    _sleep_at(A, D, k, a, la, cum_h, is_charger, night_gain_wh, q_wh, n_grid,
                              max_grid, win_start, depart_sod, lexi, windowed)
        for g in range(n_grid):
            for lq in range(n_labels):
                if D[0][k, g, lq] < 0:
                    continue
                soc_wh = s0_wh if k == 0 else g * q_wh
                _drive_from(A, D, k, g, lq, soc_wh, e_node, t_node, span_max, half_e, half_t,
                            q_wh, reserve_wh, arrive_wh, n_grid, win_end, max_drive,
                            depart_sod, lexi, windowed)


def plan_pass(e_node, t_node, span_max, half_e, half_t, is_charger, is_lodging, cum_h,
              open_start, open_end, open_ptr, open_cnt, night_gain_wh, cap_wh, step, s0_wh,
              reserve_wh, arrive_wh, n_grid, max_grid, fixed_s, lexi, windowed, win_start,
              win_end, max_drive, depart_sod, depart_sow, n_labels):
    """Sweep the places in route order; return the arrival and departure label arrays.

    Node 0 is the departure (one departure label at SoC ``s0_wh``, exact, stored at grid
    index 0), nodes 1..K the sites, node K+1 the destination (its labels at grid 0).
    Each layer is (stops, clock, driving today, parent node, parent grid, parent slot,
    kind) with kind 0 = charge, 1 = overnight, 2 = start, 3 = drive.
    """
    shape = (e_node.size, n_grid, n_labels)
    A, D = _layer(shape), _layer(shape)
    D[0][0, 0, 0] = 0
    D[1][0, 0, 0] = 0.0
    D[6][0, 0, 0] = 2
    _sweep(A, D, e_node, t_node, span_max, half_e, half_t, is_charger, is_lodging, cum_h,
           open_start, open_end, open_ptr, open_cnt, night_gain_wh, float(cap_wh), float(step),
           float(s0_wh), float(reserve_wh), float(arrive_wh), int(n_grid), int(max_grid),
           float(fixed_s), bool(lexi), bool(windowed), float(win_start), float(win_end),
           float(max_drive), float(depart_sod), float(depart_sow))
    return A + D
