"""The compiled label-setting pass of the charging planner (see :mod:`tripsim.plan.search`).

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
    if n_slots == 1:  # one label: keep the better in the objective's order
        if stops[j, g, 0] >= 0 and not _better(s, c, stops[j, g, 0], clock[j, g, 0], lexi):
            return False
        stops[j, g, 0] = s
        clock[j, g, 0] = c
        drive[j, g, 0] = d
        ps[j, g, 0] = a_s
        pg[j, g, 0] = a_g
        pl[j, g, 0] = a_l
        pk[j, g, 0] = kind
        return True
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


@numba.njit(cache=True)
def _prune_by_higher_soc(stops, clock, k, lexi):  # pragma: no cover - compiled
    """Drop single labels that a label with more charge at the same place dominates.

    More energy in the battery never hurts, so (g, stops, clock) is useless when some
    g' > g has stops' ≤ stops and clock' ≤ clock.  For the time objective stops do not
    count.
    """
    n_grid = stops.shape[1]
    best = np.full(64, INF)  # least clock seen at higher SoC, by number of stops (capped)
    best_any = INF
    for g in range(n_grid - 1, -1, -1):
        s = stops[k, g, 0]
        if s < 0:
            continue
        c = clock[k, g, 0]
        if not lexi:
            if best_any <= c + 1e-9:
                stops[k, g, 0] = -1
            else:
                best_any = c
            continue
        key = min(s, 63)
        dominated = False
        for t in range(key + 1):
            if best[t] <= c + 1e-9:
                dominated = True
                break
        if dominated:
            stops[k, g, 0] = -1
        elif c < best[key]:
            best[key] = c


@numba.njit(cache=True)
def _charge_fast(A, D, k, cum_h, max_grid, fixed_s, lexi):  # pragma: no cover - compiled
    """Charging at a site open around the clock, one label per state, in O(grid).

    Charging from a to g ends at c_a + fixed + 3600·(F_g − F_a), so the best arrival
    for target g is the best of (stops_a, c_a − 3600·F_a) over a < g: a running minimum.
    """
    n_grid = A[0].shape[1]
    best_s, best_c, best_a = -1, INF, -1
    for g in range(min(max_grid, n_grid - 1) + 1):
        if best_a >= 0:
            c = best_c + fixed_s + 3600.0 * cum_h[k, g]
            _insert(D[0], D[1], D[2], D[3], D[4], D[5], D[6], k, g, best_s + 1, c,
                    A[2][k, best_a, 0], k, best_a, 0, 0, lexi, False)
        s = A[0][k, g, 0]
        if s >= 0:
            c = A[1][k, g, 0] - 3600.0 * cum_h[k, g]
            if best_a < 0 or _better(s, c, best_s, best_c, lexi):
                best_s, best_c, best_a = s, c, g


@numba.njit(cache=True)
def _drive_fast(A, D, k, s0_wh, e_node, t_node, span_max, half_e, half_t, q_wh, reserve_wh,
                arrive_wh, lexi):  # pragma: no cover - compiled
    """Drives from every departure label at k, one label per state, no daily window.

    For a pair of places (k, j) the arrival grid is the departure grid shifted by a
    constant, and a departure qualifies from a least grid value on: one tight loop.
    """
    n = e_node.size
    n_grid = A[0].shape[1]
    peak = -INF
    g_top = 0
    for g in range(n_grid - 1, -1, -1):
        if D[0][k, g, 0] >= 0:
            g_top = g
            break
    for j in range(k + 1, n):
        peak = max(peak, span_max[j - 1])
        draw = peak - e_node[k]
        use = (e_node[j] - e_node[k]) + half_e[k] + half_e[j]
        dt = t_node[j] - t_node[k] + half_t[k] + half_t[j]
        need = reserve_wh if j < n - 1 else arrive_wh
        if k == 0:  # the start: one exact state
            soc = s0_wh
            if soc - half_e[k] - draw < reserve_wh - 1e-6:
                break
            left = soc - use
            if left >= need - 1e-6:
                ga = 0 if j == n - 1 else min(int(np.floor(left / q_wh + 1e-9)), n_grid - 1)
                _insert(A[0], A[1], A[2], A[3], A[4], A[5], A[6], j, ga, D[0][0, 0, 0],
                        D[1][0, 0, 0] + dt, 0.0, 0, 0, 0, 3, lexi, False)
            continue
        if g_top * q_wh - half_e[k] - draw < reserve_wh - 1e-6:
            break  # even the fullest departure cannot cover the drawdown
        g_lo = int(np.ceil((max(reserve_wh + half_e[k] + draw, need + use) - 1e-6) / q_wh))
        for g in range(max(g_lo, 0), g_top + 1):
            s = D[0][k, g, 0]
            if s < 0:
                continue
            left = g * q_wh - use
            ga = 0 if j == n - 1 else min(int(np.floor(left / q_wh + 1e-9)), n_grid - 1)
            c = D[1][k, g, 0] + dt
            if A[0][j, ga, 0] >= 0 and not _better(s, c, A[0][j, ga, 0], A[1][j, ga, 0], lexi):
                continue
            A[0][j, ga, 0] = s
            A[1][j, ga, 0] = c
            A[3][j, ga, 0] = k
            A[4][j, ga, 0] = g
            A[5][j, ga, 0] = 0
            A[6][j, ga, 0] = 3


def _layer(shape):
    return (np.full(shape, -1, dtype=np.int64), np.full(shape, INF), np.zeros(shape),
            np.zeros(shape, dtype=np.int64), np.zeros(shape, dtype=np.int64),
            np.zeros(shape, dtype=np.int64), np.zeros(shape, dtype=np.int64))


@numba.njit(cache=True)
def _departures(A, D, k, cum_h, is_charger, is_lodging, open_start, open_end, open_ptr,
                open_cnt, night_gain_wh, q_wh, n_grid, max_grid, fixed_s, lexi, windowed,
                win_start, depart_sod, depart_sow):  # pragma: no cover - compiled
    """Turn the arrival labels at place k into departure labels (charge, or sleep)."""
    n_labels = A[0].shape[2]
    fast = n_labels == 1 and open_cnt[k] == 0
    if n_labels == 1:
        _prune_by_higher_soc(A[0], A[1], k, lexi)
    for a in range(n_grid):
        for la in range(n_labels):
            if A[0][k, a, la] < 0:
                continue
            if is_charger[k] and not fast:
                _charge_from(A, D, k, a, la, cum_h, open_start, open_end, open_ptr, open_cnt,
                             max_grid, fixed_s, depart_sow, lexi, windowed)
            if is_lodging[k] and windowed:
                _sleep_at(A, D, k, a, la, cum_h, is_charger, night_gain_wh, q_wh, n_grid,
                          max_grid, win_start, depart_sod, lexi, windowed)
    if is_charger[k] and fast:
        _charge_fast(A, D, k, cum_h, max_grid, fixed_s, lexi)
    if n_labels == 1:
        _prune_by_higher_soc(D[0], D[1], k, lexi)


@numba.njit(cache=True)
def _drives(A, D, k, s0_wh, e_node, t_node, span_max, half_e, half_t, q_wh, reserve_wh,
            arrive_wh, n_grid, win_end, max_drive, depart_sod, lexi,
            windowed):  # pragma: no cover - compiled
    """Push every departure label at place k to the places it can reach."""
    n_labels = D[0].shape[2]
    if n_labels == 1 and not windowed:
        _drive_fast(A, D, k, s0_wh, e_node, t_node, span_max, half_e, half_t, q_wh,
                    reserve_wh, arrive_wh, lexi)
        return
    for g in range(n_grid):
        for lq in range(n_labels):
            if D[0][k, g, lq] < 0:
                continue
            soc_wh = s0_wh if k == 0 else g * q_wh
            _drive_from(A, D, k, g, lq, soc_wh, e_node, t_node, span_max, half_e, half_t,
                        q_wh, reserve_wh, arrive_wh, n_grid, win_end, max_drive, depart_sod,
                        lexi, windowed)


@numba.njit(cache=True)
def _sweep(A, D, e_node, t_node, span_max, half_e, half_t, is_charger, is_lodging, cum_h,
           open_start, open_end, open_ptr, open_cnt, night_gain_wh, cap_wh, step, s0_wh,
           reserve_wh, arrive_wh, n_grid, max_grid, fixed_s, lexi, windowed, win_start,
           win_end, max_drive, depart_sod, depart_sow):  # pragma: no cover - compiled
    q_wh = step * cap_wh
    for k in range(e_node.size - 1):
        if k > 0:
            _departures(A, D, k, cum_h, is_charger, is_lodging, open_start, open_end,
                        open_ptr, open_cnt, night_gain_wh, q_wh, n_grid, max_grid, fixed_s,
                        lexi, windowed, win_start, depart_sod, depart_sow)
        _drives(A, D, k, s0_wh, e_node, t_node, span_max, half_e, half_t, q_wh, reserve_wh,
                arrive_wh, n_grid, win_end, max_drive, depart_sod, lexi, windowed)


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
