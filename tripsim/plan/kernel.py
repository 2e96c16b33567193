"""The compiled label-setting pass of the charging planner (see :mod:`tripsim.plan.search`).

States are (place, SoC grid index) in two layers: *arrival* (at the site, after half the
detour) and *departure* (at the site, after charging or sleeping).  Places are in route
order, so the state graph is acyclic and one sweep in place order settles every state.
Each state keeps up to ``L`` labels that do not dominate each other; with no daily
window one label per state is exact.

A label's costs, compared in the objective's order:

``stops``
    charging stops, plus :data:`NIGHT_STOPS` for every night (fewest nights first);
``clock``
    seconds since the departure (the arrival time at the destination);
``busy_s``
    seconds spent charging and waiting at chargers: the tie-break among plans with the
    same stops and arrival (a short fast charge beats a long slow one before a night).

With a daily window (or a driving-hours limit) a label also carries ``drive_s``, the
driving since the last night, and the driving day is the window: it opens at
``Rules.day_open_s`` (seconds after local midnight) and lasts ``Rules.day_len_s``.  A stop
that runs past the end of the driving day is a night, and nights are spent at lodgings
(:data:`NIGHT`: until the window opens again, charging there if it can): a charging
session elsewhere must end within the day.  This keeps the first-in-first-out property
the label setting rests on (arriving earlier is never worse); letting any long session
become a night would reward arriving later.
"""

from __future__ import annotations

from typing import NamedTuple

import numba
import numpy as np

__all__ = ["CHARGE", "DRIVE", "NIGHT", "NIGHT_STOPS", "START", "Labels", "Places", "Rules",
           "Sweep", "plan_pass"]

#: Label kinds: how the label was reached.
CHARGE, NIGHT, START, DRIVE = 0, 1, 2, 3
#: A night counts as this many charging stops in the first criterion, so that plans
#: minimise nights first (an extra night is never traded for a charging stop).
NIGHT_STOPS = 1000
DAY_S = 86400.0
WEEK_S = 7 * DAY_S
INF = 1e300
#: Clocks and durations closer than this are equal (the tie-break then decides). [s]
EPS_S = 1e-6
#: Energy tolerance of the feasibility checks. [Wh]
EPS_WH = 1e-6


class Labels(NamedTuple):
    """One layer of labels; every field is shaped (places, SoC grid, slots)."""

    stops: np.ndarray  # int32; charging stops + NIGHT_STOPS × nights; -1: empty slot
    clock: np.ndarray  # seconds since the departure
    drive_s: np.ndarray  # driving since the last night (windowed plans)
    busy_s: np.ndarray  # charging and waiting at chargers (the tie-break)
    from_place: np.ndarray  # int32; the label this one was made from: place,
    from_grid: np.ndarray  # int32; grid index
    from_slot: np.ndarray  # int32; and slot
    kind: np.ndarray  # int32; CHARGE, NIGHT, START or DRIVE


class Places(NamedTuple):
    """The places in route order: the start, the sites, the destination.

    Energies are cumulative battery energy along the route at the segment boundary where
    a place joins it; ``peak_wh[k]`` is the highest cumulative energy on the stretch from
    place k to place k + 1 (the drawdown).  Opening hours are packed: place k's weekly
    open intervals are ``open_start/open_end[open_ptr[k]:open_ptr[k] + open_cnt[k]]``
    (seconds after Monday 00:00 local); none means open around the clock.
    """

    energy_wh: np.ndarray
    time_s: np.ndarray
    peak_wh: np.ndarray
    half_wh: np.ndarray  # battery energy of half the detour (there, or back)
    half_s: np.ndarray  # time of half the detour
    is_charger: np.ndarray  # bool
    is_lodging: np.ndarray  # bool
    charge_h: np.ndarray  # (places, grid): hours to charge from empty to each grid value
    open_start: np.ndarray
    open_end: np.ndarray
    open_ptr: np.ndarray  # int64
    open_cnt: np.ndarray  # int64
    night_gain_wh: np.ndarray  # solar energy parked overnight at each lodging


class Rules(NamedTuple):
    """Constraints, objective and clock of one sweep (scalars)."""

    q_wh: float  # energy of one grid step
    start_wh: float  # battery energy at the departure (exact, not on the grid)
    reserve_wh: float  # never below, anywhere
    arrive_wh: float  # at least this at the destination
    n_grid: int
    max_grid: int  # highest charging target (grid index)
    stop_s: float  # fixed time of a charging stop
    lexi: bool  # True: stops, then time; False: time, then stops
    windowed: bool  # days limited by a window or driving hours
    day_open_s: float  # the driving day opens (seconds after local midnight)
    day_len_s: float  # and lasts
    max_drive_s: float  # driving per day
    depart_sod: float  # the departure, seconds after local midnight
    depart_sow: float  # and after Monday 00:00 local


class Sweep(NamedTuple):
    """The two label layers after a sweep."""

    arrival: Labels
    departure: Labels


@numba.njit(cache=True)
def _better(s1, c1, b1, s2, c2, b2, lexi):  # pragma: no cover - compiled
    """True when costs 1 come strictly before costs 2 in the objective's order."""
    if lexi and s1 != s2:
        return s1 < s2
    if c1 < c2 - EPS_S:
        return True
    if c1 > c2 + EPS_S:
        return False
    if s1 != s2:
        return s1 < s2
    return b1 < b2 - EPS_S


@numba.njit(cache=True)
def _no_worse(s1, c1, d1, b1, s2, c2, d2, b2, windowed, by_busy):  # pragma: no cover
    """True when costs 1 dominate costs 2.

    No worse in stops, clock and (windowed) driving today; in time charging and waiting
    too where ``by_busy``, else that only breaks exact ties.
    """
    if s1 > s2 or c1 > c2 + EPS_S or (windowed and d1 > d2 + EPS_S):
        return False
    if by_busy or (s1 == s2 and c1 >= c2 - EPS_S and (not windowed or d1 >= d2 - EPS_S)):
        return b1 <= b2 + EPS_S
    return True


@numba.njit(cache=True)
def _put(L, j, g, q, s, c, d, b, from_place, from_grid, from_slot,
         kind):  # pragma: no cover - compiled
    L.stops[j, g, q] = s
    L.clock[j, g, q] = c
    L.drive_s[j, g, q] = d
    L.busy_s[j, g, q] = b
    L.from_place[j, g, q] = from_place
    L.from_grid[j, g, q] = from_grid
    L.from_slot[j, g, q] = from_slot
    L.kind[j, g, q] = kind


@numba.njit(cache=True)
def _insert(L, j, g, s, c, d, b, from_place, from_grid, from_slot, kind, lexi,
            windowed, by_busy=False):  # pragma: no cover - compiled
    """Insert a label at (j, g) unless an existing one dominates it; drop those it dominates.

    When all slots hold non-dominated labels, the new one replaces the worst in the
    objective's order if it is better (exact for one label without daily windows).
    ``by_busy`` makes the time charging and waiting a full criterion of dominance (at
    lodgings, where the clocks of the labels that sleep there converge overnight).
    """
    n_slots = L.stops.shape[2]
    if n_slots == 1:  # one label: keep the better in the objective's order
        if L.stops[j, g, 0] >= 0 and not _better(s, c, b, L.stops[j, g, 0], L.clock[j, g, 0],
                                                 L.busy_s[j, g, 0], lexi):
            return False
        _put(L, j, g, 0, s, c, d, b, from_place, from_grid, from_slot, kind)
        return True
    for q in range(n_slots):
        if L.stops[j, g, q] >= 0 and _no_worse(L.stops[j, g, q], L.clock[j, g, q],
                                               L.drive_s[j, g, q], L.busy_s[j, g, q],
                                               s, c, d, b, windowed, by_busy):
            return False
    slot = -1
    for q in range(n_slots):
        if L.stops[j, g, q] >= 0 and _no_worse(s, c, d, b, L.stops[j, g, q], L.clock[j, g, q],
                                               L.drive_s[j, g, q], L.busy_s[j, g, q],
                                               windowed, by_busy):
            L.stops[j, g, q] = -1
        if L.stops[j, g, q] < 0 and slot < 0:
            slot = q
    if slot < 0:
        worst = 0
        for q in range(1, n_slots):
            if _better(L.stops[j, g, worst], L.clock[j, g, worst], L.busy_s[j, g, worst],
                       L.stops[j, g, q], L.clock[j, g, q], L.busy_s[j, g, q], lexi):
                worst = q
        if not _better(s, c, b, L.stops[j, g, worst], L.clock[j, g, worst],
                       L.busy_s[j, g, worst], lexi):
            return False
        slot = worst
    _put(L, j, g, slot, s, c, d, b, from_place, from_grid, from_slot, kind)
    return True


@numba.njit(cache=True)
def _day_start(c, R):  # pragma: no cover - compiled
    """The clock at which the driving day that holds clock ``c`` opened."""
    x = R.depart_sod + c - R.day_open_s
    return c - (x - DAY_S * np.floor(x / DAY_S))


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
def _charge_from(A, D, P, R, k, a, la):  # pragma: no cover - compiled
    """Departures from one arrival label at a charger: charge to each grid value.

    In a windowed plan the session must end within the driving day it began in (a night
    is spent at a lodging, :func:`_sleep_at`).
    """
    s, c = A.stops[k, a, la], A.clock[k, a, la]
    dr, b = A.drive_s[k, a, la], A.busy_s[k, a, la]
    ready = c + R.stop_s
    day_end = _day_start(c, R) + R.day_len_s if R.windowed else INF
    p, n_open = P.open_ptr[k], P.open_cnt[k]
    for g in range(a + 1, R.max_grid + 1):
        dur = (P.charge_h[k, g] - P.charge_h[k, a]) * 3600.0
        st = ready
        if n_open > 0:
            st = _session_start(R.depart_sow + ready, dur, P.open_start[p:p + n_open],
                                P.open_end[p:p + n_open])
            if st >= INF:
                break  # longer sessions cannot fit either
            st -= R.depart_sow
        end = st + dur
        if end > day_end + EPS_S:
            break  # past the end of the driving day; longer sessions end later still
        _insert(D, k, g, s + 1, end, dr, b + (end - ready), k, a, la, CHARGE, R.lexi,
                R.windowed)


@numba.njit(cache=True)
def _sleep_at(A, D, P, R, k, a, la):  # pragma: no cover - compiled
    """The overnight departure from one arrival label at a lodging (charging there)."""
    s, c, b = A.stops[k, a, la], A.clock[k, a, la], A.busy_s[k, a, la]
    leave = _day_start(c, R) + DAY_S
    hours = (leave - c) / 3600.0
    g = a
    if P.is_charger[k]:
        while g + 1 < R.n_grid and P.charge_h[k, g + 1] - P.charge_h[k, a] <= hours:
            g += 1
    g = min(g + int(np.floor(P.night_gain_wh[k] / R.q_wh + 1e-9)), max(R.max_grid, a))
    _insert(D, k, g, s + NIGHT_STOPS, leave, 0.0, b, k, a, la, NIGHT, R.lexi, R.windowed)


@numba.njit(cache=True)
def _drive_from(A, D, P, R, k, g, lq):  # pragma: no cover - compiled
    """Arrivals at every later place reachable from one departure label."""
    n = P.energy_wh.size
    s, c = D.stops[k, g, lq], D.clock[k, g, lq]
    dr, b = D.drive_s[k, g, lq], D.busy_s[k, g, lq]
    soc_wh = R.start_wh if k == 0 else g * R.q_wh
    start_wh = soc_wh - P.half_wh[k]
    peak = -INF
    day_end = _day_start(c, R) + R.day_len_s
    for j in range(k + 1, n):
        peak = max(peak, P.peak_wh[j - 1])
        if start_wh - (peak - P.energy_wh[k]) < R.reserve_wh - EPS_WH:
            break  # the drawdown only grows further on
        base = P.time_s[j] - P.time_s[k] + P.half_s[k]
        dt = base + P.half_s[j]
        if R.windowed:
            if c + base > day_end + EPS_S or dr + base > R.max_drive_s + EPS_S:
                break
            if c + dt > day_end + EPS_S or dr + dt > R.max_drive_s + EPS_S:
                continue
        left = start_wh - (P.energy_wh[j] - P.energy_wh[k]) - P.half_wh[j]
        if j == n - 1:
            if left >= R.arrive_wh - EPS_WH:
                _insert(A, j, 0, s, c + dt, dr + dt, b, k, g, lq, DRIVE, R.lexi, R.windowed)
            continue
        if left < R.reserve_wh - EPS_WH:
            continue
        ga = min(int(np.floor(left / R.q_wh + 1e-9)), R.n_grid - 1)
        _insert(A, j, ga, s, c + dt, dr + dt, b, k, g, lq, DRIVE, R.lexi, R.windowed,
                R.windowed and P.is_lodging[j])


@numba.njit(cache=True)
def _prune_by_higher_soc(L, k, lexi):  # pragma: no cover - compiled
    """Drop single labels that a label with more charge at the same place beats.

    More energy in the battery never hurts, so (g, costs) is useless when some g' > g
    has costs no worse in the objective's order (exact when costs add up along a path:
    one label per state, no daily window).
    """
    n_grid = L.stops.shape[1]
    bs, bc, bb = -1, INF, INF
    for g in range(n_grid - 1, -1, -1):
        s = L.stops[k, g, 0]
        if s < 0:
            continue
        c, b = L.clock[k, g, 0], L.busy_s[k, g, 0]
        if bs >= 0 and not _better(s, c, b, bs, bc, bb, lexi):
            L.stops[k, g, 0] = -1
        else:
            bs, bc, bb = s, c, b


@numba.njit(cache=True)
def _charge_fast(A, D, P, R, k):  # pragma: no cover - compiled
    """Charging at a site open around the clock, one label per state, in O(grid).

    Charging from a to g ends at c_a + fixed + 3600·(F_g − F_a), so the best arrival
    for target g is the best of (stops_a, c_a − 3600·F_a, busy_a − 3600·F_a) over a < g:
    a running minimum.
    """
    n_grid = A.stops.shape[1]
    best_s, best_c, best_b, best_a = -1, INF, INF, -1
    for g in range(min(R.max_grid, n_grid - 1) + 1):
        f_s = 3600.0 * P.charge_h[k, g]
        if best_a >= 0:
            _insert(D, k, g, best_s + 1, best_c + R.stop_s + f_s, A.drive_s[k, best_a, 0],
                    best_b + f_s, k, best_a, 0, CHARGE, R.lexi, False)
        s = A.stops[k, g, 0]
        if s >= 0:
            c, b = A.clock[k, g, 0] - f_s, A.busy_s[k, g, 0] - f_s
            if best_a < 0 or _better(s, c, b, best_s, best_c, best_b, R.lexi):
                best_s, best_c, best_b, best_a = s, c, b, g


@numba.njit(cache=True)
def _drive_fast(A, D, P, R, k):  # pragma: no cover - compiled
    """Drives from every departure label at k, one label per state, no daily window.

    For a pair of places (k, j) the arrival grid is the departure grid shifted by a
    constant, and a departure qualifies from a least grid value on: one tight loop.
    """
    n = P.energy_wh.size
    n_grid = A.stops.shape[1]
    q_wh, lexi = R.q_wh, R.lexi
    peak = -INF
    g_top = 0
    for g in range(n_grid - 1, -1, -1):
        if D.stops[k, g, 0] >= 0:
            g_top = g
            break
    for j in range(k + 1, n):
        peak = max(peak, P.peak_wh[j - 1])
        draw = peak - P.energy_wh[k]
        use = (P.energy_wh[j] - P.energy_wh[k]) + P.half_wh[k] + P.half_wh[j]
        dt = P.time_s[j] - P.time_s[k] + P.half_s[k] + P.half_s[j]
        need = R.reserve_wh if j < n - 1 else R.arrive_wh
        if k == 0:  # the start: one exact state
            soc = R.start_wh
            if soc - P.half_wh[k] - draw < R.reserve_wh - EPS_WH:
                break
            left = soc - use
            if left >= need - EPS_WH:
                ga = 0 if j == n - 1 else min(int(np.floor(left / q_wh + 1e-9)), n_grid - 1)
                _insert(A, j, ga, D.stops[0, 0, 0], D.clock[0, 0, 0] + dt, 0.0,
                        D.busy_s[0, 0, 0], 0, 0, 0, DRIVE, lexi, False)
            continue
        if g_top * q_wh - P.half_wh[k] - draw < R.reserve_wh - EPS_WH:
            break  # even the fullest departure cannot cover the drawdown
        g_lo = int(np.ceil((max(R.reserve_wh + P.half_wh[k] + draw, need + use) - EPS_WH)
                           / q_wh))
        for g in range(max(g_lo, 0), g_top + 1):
            s = D.stops[k, g, 0]
            if s < 0:
                continue
            left = g * q_wh - use
            ga = 0 if j == n - 1 else min(int(np.floor(left / q_wh + 1e-9)), n_grid - 1)
            c, b = D.clock[k, g, 0] + dt, D.busy_s[k, g, 0]
            if A.stops[j, ga, 0] >= 0 and not _better(s, c, b, A.stops[j, ga, 0],
                                                      A.clock[j, ga, 0], A.busy_s[j, ga, 0],
                                                      lexi):
                continue
            A.stops[j, ga, 0] = s
            A.clock[j, ga, 0] = c
            A.busy_s[j, ga, 0] = b
            A.from_place[j, ga, 0] = k
            A.from_grid[j, ga, 0] = g
            A.from_slot[j, ga, 0] = 0
            A.kind[j, ga, 0] = DRIVE


@numba.njit(cache=True)
def _departures(A, D, P, R, k):  # pragma: no cover - compiled
    """Turn the arrival labels at place k into departure labels (charge, or sleep)."""
    n_labels = A.stops.shape[2]
    fast = n_labels == 1 and P.open_cnt[k] == 0 and not R.windowed
    if n_labels == 1:
        _prune_by_higher_soc(A, k, R.lexi)
    for a in range(R.n_grid):
        for la in range(n_labels):
            if A.stops[k, a, la] < 0:
                continue
            if P.is_charger[k] and not fast:
                _charge_from(A, D, P, R, k, a, la)
            if P.is_lodging[k] and R.windowed:
                _sleep_at(A, D, P, R, k, a, la)
    if P.is_charger[k] and fast:
        _charge_fast(A, D, P, R, k)
    if n_labels == 1:
        _prune_by_higher_soc(D, k, R.lexi)


@numba.njit(cache=True)
def _drives(A, D, P, R, k):  # pragma: no cover - compiled
    """Push every departure label at place k to the places it can reach."""
    n_labels = D.stops.shape[2]
    if n_labels == 1 and not R.windowed:
        _drive_fast(A, D, P, R, k)
        return
    for g in range(R.n_grid):
        for lq in range(n_labels):
            if D.stops[k, g, lq] >= 0:
                _drive_from(A, D, P, R, k, g, lq)


@numba.njit(cache=True)
def _sweep(A, D, P, R):  # pragma: no cover - compiled
    for k in range(P.energy_wh.size - 1):
        if k > 0:
            _departures(A, D, P, R, k)
        _drives(A, D, P, R, k)


def _layer(shape: tuple[int, int, int]) -> Labels:
    def ints(fill: int) -> np.ndarray:
        return np.full(shape, fill, dtype=np.int32)

    return Labels(stops=ints(-1), clock=np.full(shape, INF), drive_s=np.zeros(shape),
                  busy_s=np.zeros(shape), from_place=ints(0), from_grid=ints(0),
                  from_slot=ints(0), kind=ints(0))


def plan_pass(places: Places, rules: Rules, n_labels: int) -> Sweep:
    """Sweep the places in route order; return the arrival and departure labels.

    Place 0 is the departure (one departure label, kind :data:`START`, at the exact
    energy ``rules.start_wh``, stored at grid index 0), places 1..K the sites, place
    K+1 the destination (its labels at grid index 0).
    """
    shape = (places.energy_wh.size, int(rules.n_grid), int(n_labels))
    A, D = _layer(shape), _layer(shape)
    D.stops[0, 0, 0] = 0
    D.clock[0, 0, 0] = 0.0
    D.kind[0, 0, 0] = START
    _sweep(A, D, places, rules)
    return Sweep(A, D)
