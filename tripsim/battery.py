"""State of charge along a trip: energy counting or an internal-resistance model.

Both models walk the segments in order (the state depends on the past), in
compiled loops:

* a full battery accepts no charge: regeneration or solar gain beyond the
  capacity is curtailed (the friction brakes take the braking energy);
* an empty battery delivers nothing: the trip ends where the stored energy runs
  out, at a point inside the segment, and the state of charge stays at zero.
"""

from __future__ import annotations

from dataclasses import dataclass

import numba
import numpy as np

__all__ = ["SocResult", "energy_soc", "energy_soc_with_stops", "rint_soc"]


@dataclass(frozen=True)
class SocResult:
    """Outcome of a state-of-charge pass.

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
    """

    soc_end: np.ndarray
    accepted_wh: np.ndarray
    loss_wh: np.ndarray
    stranded_index: int
    stranded_fraction: float
    power_limited: np.ndarray


def energy_soc(demand_wh: np.ndarray, capacity_wh: float, start_soc: float) -> SocResult:
    r"""State of charge by counting energy in and out of the battery.

    Parameters
    ----------
    demand_wh : array, shape (n,)
        Net energy the vehicle asks of the battery on each segment (negative when
        regeneration or solar gain exceed the draw). [Wh]
    capacity_wh : float
        Usable energy of the battery at the trip's temperature. [Wh]
    start_soc : float
        State of charge at departure, 0-1.

    Returns
    -------
    SocResult

    Notes
    -----
    .. math:: E_{i} = \min(E_{i-1} - d_i,\ E_{max}),\quad SoC_i = E_i / E_{max}

    The trip ends at the first segment where :math:`d_i > E_{i-1}`.
    """
    n = np.size(demand_wh)
    result, _, _ = energy_soc_with_stops(demand_wh, capacity_wh, start_soc,
                                         detour_wh=np.zeros(n), charge_to_soc=np.full(n, np.nan))
    return result


@numba.njit(cache=True)
def _rint_pass(
    power_w, duration_s, capacity_ah, start_soc, r_ohm, ocv_soc, ocv_v
):  # pragma: no cover - compiled
    n = power_w.size
    soc_out = np.zeros(n)
    accepted = np.zeros(n)
    loss = np.zeros(n)
    limited = np.zeros(n, dtype=np.bool_)
    soc = start_soc
    coulomb = capacity_ah * 3600.0
    for i in range(n):
        ocv = np.interp(soc, ocv_soc, ocv_v)
        p = power_w[i]
        p_max = ocv * ocv / (4.0 * r_ohm)  # matched-load limit
        if p > p_max:
            p = p_max
            limited[i] = True
        current = (ocv - np.sqrt(ocv * ocv - 4.0 * r_ohm * p)) / (2.0 * r_ohm)
        dsoc = current * duration_s[i] / coulomb
        if dsoc < 0.0 and soc - dsoc > 1.0:  # charging into a full battery: curtail
            current = -(1.0 - soc) * coulomb / duration_s[i]
            dsoc = soc - 1.0
        if dsoc > soc:
            frac = soc / dsoc
            accepted[i] = ocv * current * duration_s[i] * frac / 3600.0
            loss[i] = current * current * r_ohm * duration_s[i] * frac / 3600.0
            return soc_out, accepted, loss, limited, i, frac
        accepted[i] = ocv * current * duration_s[i] / 3600.0
        loss[i] = current * current * r_ohm * duration_s[i] / 3600.0
        soc -= dsoc
        soc_out[i] = soc
    return soc_out, accepted, loss, limited, -1, 1.0


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
    :math:`V_{oc}^2/(4R)` cannot be delivered and is capped (flagged).
    (Rint model, e.g. Plett, *Battery Management Systems*, vol. 1, Artech
    House 2015, ch. 2.)
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
    soc, accepted, loss, limited, idx, frac = out
    return SocResult(soc, accepted, loss, int(idx), float(frac), limited)


@numba.njit(cache=True)
def _energy_pass_stops(demand_wh, capacity_wh, start_soc, detour_wh, charge_to
                       ):  # pragma: no cover - compiled
    n = demand_wh.size
    soc = np.zeros(n)
    before = np.full(n, np.nan)
    accepted = np.zeros(n)
    charged = np.zeros(n)
    stored = start_soc * capacity_wh
    for i in range(n):
        d = demand_wh[i]
        if d >= 0.0:
            if d > stored:
                accepted[i] = stored
                frac = stored / d if d > 0.0 else 0.0
                return soc, accepted, charged, before, i, frac
            stored -= d
        else:
            room = capacity_wh - stored
            take = -d if -d < room else room
            stored += take
            d = -take
        accepted[i] = d
        if not np.isnan(charge_to[i]):
            half = 0.5 * detour_wh[i]
            if half > stored:
                return soc, accepted, charged, before, i, 1.0
            stored -= half
            before[i] = stored / capacity_wh
            target = charge_to[i] * capacity_wh
            if target > stored:
                charged[i] = target - stored
                stored = target
            stored -= half
            if stored < 0.0:
                return soc, accepted, charged, before, i, 1.0
        soc[i] = stored / capacity_wh
    return soc, accepted, charged, before, -1, 1.0


def energy_soc_with_stops(
    demand_wh: np.ndarray,
    capacity_wh: float,
    start_soc: float,
    *,
    detour_wh: np.ndarray,
    charge_to_soc: np.ndarray,
) -> tuple[SocResult, np.ndarray, np.ndarray]:
    """Energy counting with charging stops at the ends of some segments.

    At a stop (``charge_to_soc`` not NaN) the vehicle drives half its detour, charges up
    to the target state of charge (never down), and drives the other half back.

    Returns
    -------
    result : SocResult
        As :func:`energy_soc` (``accepted_wh`` without the detours).
    charged_wh : array
        Energy put into the battery at each stop. [Wh]
    soc_at_site : array
        State of charge on arrival at each stop's site (NaN elsewhere).
    """
    demand = np.ascontiguousarray(demand_wh, dtype=float)
    soc, accepted, charged, before, idx, frac = _energy_pass_stops(
        demand, float(capacity_wh), float(start_soc),
        np.ascontiguousarray(detour_wh, dtype=float),
        np.ascontiguousarray(charge_to_soc, dtype=float))
    result = SocResult(soc, accepted, np.zeros_like(demand), int(idx), float(frac),
                       np.zeros(demand.size, dtype=bool))
    return result, charged, before
