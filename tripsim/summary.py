"""The summary of a simulated trip and its energy breakdown.

The breakdown adds up to the battery energy by construction (an identity of the
bookkeeping, checked in the unit tests; the physics behind each term is checked
against outside references in ``tests/reference``):

    battery = aero + rolling + grade + inertia        (net work at the wheels)
            + drive losses                            (battery → wheel while driving)
            + regen losses + friction brakes          (braking energy not returned)
            + battery losses                          (internal resistance)
            + auxiliary                               (electronics, climate)
            − solar                                   (panels, as stored in the battery)

Grade and inertia are net terms (the climb minus the descent, speeding up
minus slowing down) and can be negative; what braking does not return to the
battery shows up as regen losses and friction brakes.
"""

from __future__ import annotations

import dataclasses
from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from tripsim.battery import SocResult
from tripsim.caution import CAUTION
from tripsim.units import J_PER_WH, KPH_PER_MPS, M_PER_MI

__all__ = ["Summary", "summarize"]


@dataclass(frozen=True)
class Summary:
    """What a trip took and where the battery stood.

    Energies in Wh, distances in km, durations in h, SoC 0-1, clocks as ISO 8601 to the
    second.  ``battery_wh`` is the energy drawn from the battery (after curtailment at
    full charge), net of the solar gain ``solar_wh``; ``solar_km`` is how far that solar
    energy drives at the trip's consumption before solar.  If the battery runs empty,
    the trip ends there: ``stranded_at_km`` and ``stranded_clock`` say where and when,
    ``battery_wh`` is what was drawn until then, ``needed_wh`` what the whole route
    needs, ``shortfall_wh`` the difference, and ``arrive`` is None.
    """

    vehicle: str
    route: str
    distance_km: float
    driven_km: float
    duration_h: float
    drive_h: float
    battery_wh: float
    needed_wh: float
    regen_wh: float
    aux_wh: float
    solar_wh: float
    solar_km: float
    wh_per_km: float
    wh_per_mi: float
    start_soc: float
    final_soc: float
    min_soc: float
    min_soc_km: float
    stranded: bool
    stranded_at_km: float | None
    stranded_clock: str | None
    shortfall_wh: float
    capacity_wh: float
    range_km: float
    avg_speed_kph: float
    max_speed_kph: float
    ascent_m: float
    ascent_raw_m: float
    descent_m: float
    mean_temp_c: float
    elevation_source: str
    battery_model: str
    depart: str
    arrive: str | None
    power_limited_s: float = 0.0
    breakdown_wh: dict[str, float] = field(default_factory=dict)
    caution: str = CAUTION

    def to_dict(self) -> dict[str, Any]:
        """Plain dict, ready for JSON."""
        return dataclasses.asdict(self)


def _energy(power: np.ndarray | float, seconds: np.ndarray) -> float:
    if np.ndim(power) == 0:
        return float(power) * float(seconds.sum()) / J_PER_WH
    return float((power * seconds).sum() / J_PER_WH)


def _terms(c: dict[str, np.ndarray | float], sl: slice, weight: np.ndarray | float = 1.0
           ) -> dict[str, float]:
    """Sums of the breakdown's terms [Wh] over segments ``sl`` (each segment × ``weight``)."""
    t = c["time_s"][sl] * weight
    dist = c["slope_length_m"][sl] * weight

    def work(col: str) -> float:
        return float((c[col][sl] * dist).sum() / J_PER_WH)

    def col(name: str) -> np.ndarray | float:
        value = c[name]
        return value if np.ndim(value) == 0 else value[sl]

    return {
        "aero_wh": work("f_aero_n"), "rolling_wh": work("f_rolling_n"),
        "grade_wh": work("f_grade_n"), "inertia_wh": work("f_inertia_n"),
        "drive_losses_wh": _energy(col("drive_loss_w"), t),
        "regen_losses_wh": _energy(col("regen_loss_w"), t),
        "friction_brakes_wh": _energy(col("friction_brake_w"), t),
        "aux_wh": _energy(col("aux_power_w"), t + c["dwell_s"][sl] * weight),
        "regen_wh": _energy(col("regen_w"), t),
        "solar_wh": _energy(col("solar_power_w"), t + c["dwell_s"][sl] * weight),
    }


_USED = ("time_s", "dwell_s", "slope_length_m", "start_m", "length_m", "f_aero_n", "f_rolling_n",
         "f_grade_n", "f_inertia_n", "drive_loss_w", "regen_loss_w", "friction_brake_w",
         "aux_power_w", "regen_w", "demand_wh", "soc", "v_end_mps", "solar_power_w", "stop_s",
         "charged_wh", "detour_wh", "soc_at_stop", "temp_c")


def _clock(ts: pd.Timestamp) -> str:
    return ts.round("s").isoformat(timespec="seconds")


def _column(trace: pd.DataFrame, columns: dict[str, Any] | None, name: str
            ) -> np.ndarray | float:
    if columns is not None and name in columns:
        return columns[name]
    values = trace[name]
    if isinstance(values.dtype, pd.SparseDtype) and values.sparse.npoints == 0:
        return float(values.sparse.fill_value)
    return values.to_numpy()


def _sum(value: np.ndarray | float, sl: slice, n: int) -> float:
    if np.ndim(value) == 0:
        return float(value) * len(range(n)[sl])
    return float(np.sum(value[sl]))


def summarize(
    trace: pd.DataFrame,
    soc: SocResult,
    *,
    capacity_wh: float,
    start_soc: float,
    attrs: dict[str, Any],
    vehicle_name: str,
    battery_model: str,
    columns: dict[str, Any] | None = None,
    sums: dict[str, float] | None = None,
) -> Summary:
    """Summarise a trace (see :func:`tripsim.simulate.simulate`).

    ``columns`` may hand over the trace's arrays directly (saves looking them up), and
    ``sums`` the whole route's sums of :data:`tripsim.energy.SUMS` from the compiled
    pass (saves summing the columns again).  When the battery runs empty the sums cover
    the route up to that point (the segment where it happens counts in part).
    """
    c = {k: _column(trace, columns, k) for k in _USED}
    n = c["time_s"].size
    idx = soc.stranded_index
    stranded = idx >= 0
    cut = idx + 1 if stranded else n
    part = soc.stranded_fraction if stranded else 1.0
    terms = dict(_terms(c, slice(0, n)) if sums is None else
                 {**{k: sums[k] for k in ("aero_wh", "rolling_wh", "grade_wh", "inertia_wh",
                                          "drive_losses_wh", "regen_losses_wh",
                                          "friction_brakes_wh", "aux_wh", "regen_wh")},
                  "solar_wh": _terms(c, slice(0, n))["solar_wh"] if np.ndim(
                      c["solar_power_w"]) else _energy(c["solar_power_w"],
                                                       c["time_s"] + c["dwell_s"])})
    if stranded:  # take off what lies beyond the point where the battery ran empty
        for k, v in _terms(c, slice(cut, n)).items():
            terms[k] -= v
        for k, v in _terms(c, slice(idx, cut), 1.0 - part).items():
            terms[k] -= v
    demand = c["demand_wh"]
    detours_wh = _sum(c["detour_wh"], slice(0, cut), n)
    drawn_wh = float(soc.accepted_wh[:cut].sum()) + detours_wh
    needed_wh = float(demand.sum()) + _sum(c["detour_wh"], slice(0, n), n)
    loss_wh = _sum(soc.loss_wh, slice(0, cut), n)
    asked = float(demand[:cut].sum()) - (1.0 - part) * float(demand[idx]) if stranded \
        else float(demand.sum())
    curtailed = float(soc.accepted_wh[:cut].sum()) - loss_wh - asked
    regen_refused = min(max(curtailed, 0.0), terms["regen_wh"])  # full battery: regen first
    solar_wh = terms["solar_wh"] - (max(curtailed, 0.0) - regen_refused)
    regen_wh = terms["regen_wh"] - regen_refused
    end_m = c["start_m"] + c["length_m"]
    distance_km = float(end_m[-1] / 1000.0)
    stranded_at_km = None
    if stranded:
        stranded_at_km = float((c["start_m"][idx] + part * c["length_m"][idx]) / 1000.0)
    driven_km = stranded_at_km if stranded_at_km is not None else distance_km
    lowest = c["soc"] if np.ndim(c["soc_at_stop"]) == 0 else np.fmin(c["soc"], c["soc_at_stop"])
    soc_all = np.concatenate([[start_soc], lowest[:cut if not stranded else idx]])
    i_min = int(np.argmin(soc_all))
    wh_per_km = (drawn_wh - detours_wh) / driven_km if driven_km > 0 else float("nan")
    t_all = c["time_s"] + c["dwell_s"]
    driving_s = float(t_all[:cut].sum()) - (1.0 - part) * float(t_all[idx]) if stranded \
        else float(t_all.sum())
    total_s = driving_s + _sum(c["stop_s"], slice(0, cut), n)
    depart = trace["clock"].iloc[0]
    breakdown = {k: terms[k] for k in ("aero_wh", "rolling_wh", "grade_wh", "inertia_wh",
                                        "drive_losses_wh", "regen_losses_wh")}
    breakdown["friction_brakes_wh"] = (terms["friction_brakes_wh"] + regen_refused
                                       + min(curtailed, 0.0))
    breakdown["battery_losses_wh"] = loss_wh
    breakdown["aux_wh"] = terms["aux_wh"]
    breakdown["solar_wh"] = -solar_wh
    breakdown["detours_wh"] = detours_wh
    gross_wh_per_km = ((drawn_wh + solar_wh - detours_wh) / driven_km if driven_km > 0
                       else np.nan)
    clock_end = depart + pd.Timedelta(seconds=total_s)
    drive_s = float(c["time_s"][:cut].sum()) - ((1.0 - part) * float(c["time_s"][idx])
                                                 if stranded else 0.0)
    temp = c["temp_c"]
    mean_temp = float(temp) if np.ndim(temp) == 0 else float((temp * t_all).sum() / t_all.sum())
    return Summary(
        vehicle=vehicle_name,
        route=str(attrs.get("name", "route")),
        distance_km=distance_km,
        driven_km=float(driven_km),
        duration_h=total_s / 3600.0,
        drive_h=drive_s / 3600.0,
        battery_wh=drawn_wh,
        needed_wh=needed_wh,
        regen_wh=regen_wh,
        aux_wh=breakdown["aux_wh"],
        solar_wh=solar_wh,
        solar_km=float(solar_wh / gross_wh_per_km) if gross_wh_per_km > 0 else 0.0,
        wh_per_km=wh_per_km,
        wh_per_mi=wh_per_km * M_PER_MI / 1000.0,
        start_soc=float(start_soc),
        final_soc=0.0 if stranded else float(c["soc"][-1]),
        min_soc=0.0 if stranded else float(soc_all[i_min]),
        min_soc_km=(stranded_at_km if stranded
                    else float(0.0 if i_min == 0 else end_m[i_min - 1] / 1000.0)),
        stranded=stranded,
        stranded_at_km=stranded_at_km,
        stranded_clock=_clock(clock_end) if stranded else None,
        shortfall_wh=float(max(needed_wh - drawn_wh, 0.0)) if stranded else 0.0,
        capacity_wh=float(capacity_wh),
        range_km=float(capacity_wh / wh_per_km) if wh_per_km > 0 else float("inf"),
        avg_speed_kph=driven_km / (total_s / 3600.0) if total_s > 0 else 0.0,
        max_speed_kph=float(c["v_end_mps"][:cut].max() * KPH_PER_MPS),
        ascent_m=float(attrs.get("ascent_m", 0.0)),
        ascent_raw_m=float(attrs.get("ascent_raw_m", 0.0)),
        descent_m=float(attrs.get("descent_m", 0.0)),
        mean_temp_c=mean_temp,
        elevation_source=str(attrs.get("elevation_source", "none")),
        battery_model=battery_model,
        depart=_clock(depart),
        arrive=None if stranded else _clock(clock_end),
        power_limited_s=float(np.sum(soc.extra_time_s)),
        breakdown_wh=breakdown,
    )
