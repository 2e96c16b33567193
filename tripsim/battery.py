r"""State of charge: the one energy-counting pass, and an internal-resistance model.

The battery holds energy (Wh).  Its nominal content runs from 0 to ``full_wh``; in
the cold part of it cannot be drawn (the usable capacity at the pack's temperature,
``usable_wh``, is less than ``full_wh``), and that part is taken at the bottom: the
pack counts as empty when what is left equals ``full_wh − usable_wh``.  Energy is
never created or destroyed by a change of temperature: it only becomes usable or
unusable.  The state of charge reported everywhere is the usable share,

.. math:: SoC = (E - E_{floor}) / E_{usable}, \quad E_{floor} = E_{full} - E_{usable},

which is 0 when the pack is empty at its temperature and 1 when it is full.

:func:`soc_pass` walks every segment of every run in order (a compiled loop):

* a full battery accepts no charge: regeneration or solar gain beyond ``full_wh``
  is refused (the friction brakes take the braking energy);
* an empty battery delivers nothing: the run ends where the usable energy runs out,
  at a point inside the segment (or, for a fleet, an emergency charge brings the
  vehicle home and is counted);
* between runs, parked solar gain and plug-in charging (a fleet's day) and, at the
  ends of segments, charging stops (a planned trip) add energy.

The same pass serves :func:`tripsim.simulate.simulate` (one run), the fleet year
(many runs of one loop) and the planner's re-simulation (one run with stops).
"""

from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

__all__ = ["SocPass", "SocResult", "energy_soc", "rint_soc", "soc_pass"]

_EMPTY2 = np.zeros((0, 0))


@dataclass(frozen=True)
class SocResult:
    """Outcome of a state-of-charge pass over one trip.

    Attributes
    ----------
    soc_end : array, shape (n,)
        State of charge at the end of each segment, 0-1 (0 after stranding).
    accepted_wh : array, shape (n,)
        Energy actually taken from (positive) or stored into (negative) the
        battery on each segment, after curtailment and stranding. [Wh]
    loss_wh : array, shape (n,)
        Internal-resistance loss (zero for the energy model). [Wh]
    stranded_index : int
        Segment where the battery ran empty, or -1.
    stranded_fraction : float
        Share of that segment covered before it ran empty.
    power_limited : array of bool, shape (n,)
        Segments where the battery could not deliver the power asked
        (internal-resistance model only).
    extra_time_s : array, shape (n,)
        Time the power limit added to a segment (internal-resistance model). [s]
    """

    soc_end: np.ndarray
    accepted_wh: np.ndarray
    loss_wh: np.ndarray
    stranded_index: int
    stranded_fraction: float
    power_limited: np.ndarray
    extra_time_s: np.ndarray


@dataclass(frozen=True)
class SocPass:
    """Outcome of :func:`soc_pass` over runs × segments.

    Per run (shape (R,)): ``soc_start`` (after the gain before the run),
    ``soc_end`` (after its last segment), ``soc_min``, ``soc_after`` (after the
    events that follow the run), ``energy_start_wh`` and ``energy_after_wh`` (the
    battery's content on the nominal scale), ``stranded_index`` (-1 if none),
    ``stranded_fraction``, ``rescue_wh`` (emergency charge), ``refused_wh`` (gain a
    full battery refused), ``grid_wh`` (plug-in charging after the run).

    Per segment (shape (R, n), empty unless asked for): ``soc``, ``accepted_wh``,
    ``charged_wh`` (at a stop) and ``soc_at_site`` (on arrival at a stop, NaN
    elsewhere).  ``initial_energy_wh`` is the content before the first run.
    """

    soc_start: np.ndarray
    soc_end: np.ndarray
    soc_min: np.ndarray
    soc_after: np.ndarray
    energy_start_wh: np.ndarray
    energy_after_wh: np.ndarray
    stranded_index: np.ndarray
    stranded_fraction: np.ndarray
    rescue_wh: np.ndarray
    refused_wh: np.ndarray
    grid_wh: np.ndarray
    soc: np.ndarray
    accepted_wh: np.ndarray
    charged_wh: np.ndarray
    soc_at_site: np.ndarray
    initial_energy_wh: float


@numba.njit(cache=True)
def _store(e, gain, full):  # pragma: no cover - compiled
    """Add a gain up to full; return (new content, refused)."""
    room = full - e
    take = gain if gain < room else room
    if take < 0.0:
        take = 0.0
    return e + take, gain - take


@numba.njit(cache=True)
def _visit_stop(e, half, target, floor, cap):  # pragma: no cover - compiled
    """A charging stop: half the detour, charge up to the target, back; (e, soc at site, charged).

    Returns e = NaN when the detour cannot be driven.
    """
    if e - half < floor:
        return np.nan, np.nan, 0.0
    e -= half
    at_site = (e - floor) / cap
    charged = target - e if target > e else 0.0
    e += charged
    if e - half < floor:
        return np.nan, at_site, charged
    return e - half, at_site, charged


@numba.njit(cache=True)
def _run_segments(demand, solar, scale, row, e, floor, full, cap, rescue, detour, charge_to,
                  per_seg, r, s_soc, s_acc, s_chg, s_site):  # pragma: no cover - compiled
    """Walk one run's segments; return (e, lowest e, stranded index, fraction, rescue, refused)."""
    low = e
    strand, frac, rescued, refused = -1, 1.0, 0.0, 0.0
    stops = detour.shape[0] > 0
    sun = solar.shape[0] > 0
    for i in range(demand.shape[1] if row >= 0 else 0):
        d = demand[row, i] - scale * solar[row, i] if sun else demand[row, i]
        if d < 0.0:
            e_new, lost = _store(e, -d, full)
            refused += lost
            taken = e - e_new
            e = e_new
        elif e - d >= floor:
            e -= d
            taken = d
        else:  # runs empty on this segment
            have = e - floor if e > floor else 0.0
            if strand < 0:
                strand, frac = i, (have / d if d > 0.0 else 0.0)
            if not rescue:
                if per_seg:
                    s_acc[r, i] = have
                return e - have, e - have, strand, frac, rescued, refused
            rescued += floor - (e - d)
            e, taken = floor, d
        if per_seg:
            s_acc[r, i] = taken
        if stops and not np.isnan(charge_to[row, i]):
            e_new, at_site, charged = _visit_stop(e, 0.5 * detour[row, i],
                                                  floor + charge_to[row, i] * cap, floor, cap)
            if per_seg:
                s_site[r, i], s_chg[r, i] = at_site, charged
            if np.isnan(e_new):  # cannot reach the site, or get back from it
                return floor, floor, i, 1.0, rescued, refused
            low = min(low, e - 0.5 * detour[row, i])
            e = e_new
        low = min(low, e)
        if per_seg:
            s_soc[r, i] = (e - floor) / cap
    return e, low, strand, frac, rescued, refused


@numba.njit(cache=True)
def _soc_kernel(demand, solar, scale, rows, full, usable, start_e, pre_gain, post_gain,
                plug_after, plug_below, plug_wh, rescue, detour, charge_to, per_seg
                ):  # pragma: no cover - compiled
    n_runs = rows.size
    n = demand.shape[1]
    out = np.zeros((9, n_runs))  # soc start, end, min, after; e start, after; rescue, refused, grid
    strand = np.full(n_runs, -1, dtype=np.int64)
    frac = np.ones(n_runs)
    shape = (n_runs, n) if per_seg else (0, 0)
    s_soc, s_acc, s_chg = np.zeros(shape), np.zeros(shape), np.zeros(shape)
    s_site = np.full(shape, np.nan)
    e = start_e
    for r in range(n_runs):
        cap = usable[r]
        floor = full - cap
        e, lost = _store(e, pre_gain[r], full)
        out[4, r] = e
        out[0, r] = max(e - floor, 0.0) / cap
        e, low, strand[r], frac[r], out[6, r], refused = _run_segments(
            demand, solar, scale, rows[r], e, floor, full, cap, rescue, detour, charge_to,
            per_seg, r, s_soc, s_acc, s_chg, s_site)
        out[1, r] = max(e - floor, 0.0) / cap
        out[2, r] = max(low - floor, 0.0) / cap
        e, lost2 = _store(e, post_gain[r], full)
        out[7, r] = lost + refused + lost2
        if plug_after[r] and (e - floor) < plug_below * cap:
            e_new, _ = _store(e, plug_wh, full)
            out[8, r] = e_new - e
            e = e_new
        out[5, r] = e
        out[3, r] = max(e - floor, 0.0) / cap
    return (out[0], out[1], out[2], out[3], out[4], out[5], strand, frac, out[6], out[7], out[8],
            s_soc, s_acc, s_chg, s_site, start_e)


def soc_pass(
    demand_wh: np.ndarray,
    *,
    full_wh: float,
    usable_wh: np.ndarray | float,
    start_soc: float | None = None,
    start_energy_wh: float | None = None,
    rows: np.ndarray | None = None,
    pre_gain_wh: np.ndarray | None = None,
    post_gain_wh: np.ndarray | None = None,
    plug_after: np.ndarray | None = None,
    plug_below_soc: float = 0.0,
    plug_wh: float = 0.0,
    rescue: bool = False,
    detour_wh: np.ndarray | None = None,
    charge_to_soc: np.ndarray | None = None,
    per_segment: bool = True,
    solar_wh: np.ndarray | None = None,
    panel_scale: float = 1.0,
) -> SocPass:
    r"""Count energy in and out of the battery over runs × segments.

    Parameters
    ----------
    demand_wh : array, shape (R, n) or (n,)
        Net energy asked of the battery on each segment of each run (negative when
        regeneration or solar gain exceed the draw). [Wh]
    full_wh : float
        Nominal content of a full battery (usable energy at 20-25 °C). [Wh]
    usable_wh : float or array, shape (R,)
        Usable energy at each run's pack temperature (≤ ``full_wh``). [Wh]
    start_soc : float, optional
        State of charge before the first run, 0-1 (of the first run's usable energy).
    start_energy_wh : float, optional
        Or the content before the first run on the nominal scale (0 to ``full_wh``).
    rows : array of int, shape (R,), optional
        Row of ``demand_wh`` each run drives (default: run r drives row r); -1 is a
        run with no driving (an idle day: only its gains and plug-in).
    pre_gain_wh, post_gain_wh : array, shape (R,), optional
        Energy offered before and after each run (parked solar). [Wh]
    plug_after : array of bool, shape (R,), optional
        Whether the vehicle may be plugged in after the run (after ``post_gain_wh``).
    plug_below_soc : float, default 0
        It is plugged in when its state of charge is below this.
    plug_wh : float, default 0
        Energy a plug-in puts into the battery (charger power × hours × efficiency),
        up to full. [Wh]
    rescue : bool, default False
        Bring an empty vehicle home with an emergency charge (counted in
        ``rescue_wh``) instead of ending the run.
    detour_wh, charge_to_soc : array, shape (R, n), optional
        Charging stops at the ends of segments (``charge_to_soc`` not NaN): the
        vehicle drives half the detour, charges up to the target (never down) and
        drives back.
    per_segment : bool, default True
        Return the per-segment arrays.
    solar_wh : array, shape (R, n), optional
        Solar energy offered on each segment, taken off the demand after scaling by
        ``panel_scale`` (so a panel-size search needs no new demand array). [Wh]
    panel_scale : float, default 1
        Factor on ``solar_wh``.

    Returns
    -------
    SocPass

    Notes
    -----
    With :math:`E` the content, :math:`d_i` the demand and the floor
    :math:`E_{floor,r} = E_{full} - E_{usable,r}`:

    .. math:: E_i = \min(E_{i-1} - d_i,\ E_{full}), \quad
              \text{empty when } E_{i-1} - d_i < E_{floor,r}.

    Balance, exactly: content after = content before + gains taken + grid +
    rescue − draws, and gains taken = gains offered − refused.
    """
    demand = np.ascontiguousarray(np.atleast_2d(demand_wh), dtype=float)
    rows_ = (np.arange(demand.shape[0]) if rows is None
             else np.ascontiguousarray(rows, dtype=np.int64))
    n_runs = rows_.size
    usable = np.broadcast_to(np.asarray(usable_wh, dtype=float), (n_runs,)).copy()
    if np.any(usable <= 0.0) or np.any(usable > full_wh * (1.0 + 1e-12)):
        raise ValueError("usable energy must be positive and at most the full content")
    usable = np.minimum(usable, full_wh)

    def runs(x: np.ndarray | None, dtype: type = float) -> np.ndarray:
        if x is None:
            return np.zeros(n_runs, dtype=dtype)
        return np.ascontiguousarray(np.broadcast_to(x, (n_runs,)), dtype=dtype)

    stops = charge_to_soc is not None
    detour = (np.ascontiguousarray(np.broadcast_to(detour_wh, demand.shape), dtype=float)
              if stops and detour_wh is not None else
              (np.zeros(demand.shape) if stops else _EMPTY2))
    charge_to = (np.ascontiguousarray(np.broadcast_to(charge_to_soc, demand.shape), dtype=float)
                 if stops else _EMPTY2)
    if (start_soc is None) == (start_energy_wh is None):
        raise ValueError("give start_soc or start_energy_wh")
    if start_soc is not None:
        start_e = full_wh - usable[0] + float(start_soc) * usable[0]
    else:
        start_e = min(max(float(start_energy_wh), 0.0), float(full_wh))
    solar = (_EMPTY2 if solar_wh is None
             else np.ascontiguousarray(np.broadcast_to(solar_wh, demand.shape), dtype=float))
    out = _soc_kernel(demand, solar, float(panel_scale), rows_, float(full_wh), usable, start_e,
                      runs(pre_gain_wh), runs(post_gain_wh), runs(plug_after, np.bool_),
                      float(plug_below_soc), float(plug_wh), bool(rescue), detour, charge_to,
                      bool(per_segment))
    return SocPass(*out)


def energy_soc(demand_wh: np.ndarray, capacity_wh: float, start_soc: float) -> SocResult:
    """One trip at one temperature through :func:`soc_pass` (usable = full = ``capacity_wh``).

    Returns
    -------
    SocResult
    """
    p = soc_pass(np.asarray(demand_wh, dtype=float)[None, :], full_wh=capacity_wh,
                 usable_wh=capacity_wh, start_soc=start_soc)
    n = np.size(demand_wh)
    return SocResult(p.soc[0], p.accepted_wh[0], np.zeros(n), int(p.stranded_index[0]),
                     float(p.stranded_fraction[0]), np.zeros(n, dtype=bool), np.zeros(n))


@numba.njit(cache=True)
def _rint_pass(power_w, duration_s, capacity_ah, start_soc, r_ohm, ocv_soc, ocv_v
               ):  # pragma: no cover - compiled
    n = power_w.size
    soc_out = np.zeros(n)
    accepted = np.zeros(n)
    loss = np.zeros(n)
    extra = np.zeros(n)
    limited = np.zeros(n, dtype=np.bool_)
    soc = start_soc
    coulomb = capacity_ah * 3600.0
    for i in range(n):
        ocv = np.interp(soc, ocv_soc, ocv_v)
        p = power_w[i]
        dt = duration_s[i]
        p_max = ocv * ocv / (4.0 * r_ohm)  # matched-load limit
        if p > p_max:  # the energy still has to come out, at the most power there is
            dt = p * dt / p_max
            extra[i] = dt - duration_s[i]
            p = p_max
            limited[i] = True
        current = (ocv - np.sqrt(max(ocv * ocv - 4.0 * r_ohm * p, 0.0))) / (2.0 * r_ohm)
        dsoc = current * dt / coulomb
        if dsoc < 0.0 and soc - dsoc > 1.0:  # charging into a full battery: curtail
            current = -(1.0 - soc) * coulomb / dt
            dsoc = soc - 1.0
        if dsoc > soc:
            frac = soc / dsoc
            accepted[i] = ocv * current * dt * frac / 3600.0
            loss[i] = current * current * r_ohm * dt * frac / 3600.0
            return soc_out, accepted, loss, limited, extra, i, frac
        accepted[i] = ocv * current * dt / 3600.0
        loss[i] = current * current * r_ohm * dt / 3600.0
        soc -= dsoc
        soc_out[i] = soc
    return soc_out, accepted, loss, limited, extra, -1, 1.0


def rint_soc(
    power_w: np.ndarray,
    duration_s: np.ndarray,
    *,
    capacity_wh: float,
    start_soc: float,
    resistance_ohm: float,
    ocv_soc: np.ndarray,
    ocv_v: np.ndarray,
) -> SocResult:
    r"""State of charge with an internal-resistance (Rint) battery model.

    Parameters
    ----------
    power_w : array, shape (n,)
        Net power asked at the battery terminals on each segment (negative
        when charging). [W]
    duration_s : array, shape (n,)
        Duration of each segment. [s]
    capacity_wh : float
        Usable energy at the open-circuit voltage curve; the charge capacity
        is :math:`Q = E / \int_0^1 V_{oc}(s)\,ds`. [Wh]
    start_soc : float
        State of charge at departure.
    resistance_ohm : float
        Internal resistance. [Ω]
    ocv_soc, ocv_v : array
        Open-circuit voltage curve over state of charge. [-], [V]

    Returns
    -------
    SocResult
        ``accepted_wh`` is the chemical energy taken from the cells, terminal
        energy plus ``loss_wh``.

    Notes
    -----
    With terminal power P and :math:`V = V_{oc} - I R`,
    :math:`I = (V_{oc} - \sqrt{V_{oc}^2 - 4 R P}) / (2R)`; the cells give
    :math:`V_{oc} I` and lose :math:`I^2 R`.  Power beyond
    :math:`V_{oc}^2/(4R)` cannot be delivered: the segment's energy is then drawn
    at that power over a longer time (flagged in ``power_limited``, the added time
    in ``extra_time_s``), so no energy is lost from the account.  (Rint model, e.g.
    Plett, *Battery Management Systems*, vol. 1, Artech House 2015, ch. 2.)
    """
    soc_x = np.ascontiguousarray(ocv_soc, dtype=float)
    volts = np.ascontiguousarray(ocv_v, dtype=float)
    mean_ocv = float(np.trapezoid(volts, soc_x) / (soc_x[-1] - soc_x[0]))
    capacity_ah = capacity_wh / mean_ocv
    out = _rint_pass(
        np.ascontiguousarray(power_w, dtype=float),
        np.ascontiguousarray(np.maximum(duration_s, 1e-9), dtype=float),
        capacity_ah, float(start_soc), float(resistance_ohm), soc_x, volts,
    )
    soc, accepted, loss, limited, extra, idx, frac = out
    return SocResult(soc, accepted, loss, int(idx), float(frac), limited, extra)
