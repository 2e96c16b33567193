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


def _energy(power: np.ndarray, seconds: np.ndarray) -> float:
    return float((power * seconds).sum() / J_PER_WH)


def _breakdown(c: dict[str, np.ndarray], cut: int, regen_refused_wh: float, solar_wh: float,
               loss_wh: float) -> dict[str, float]:
    t, dist = c["time_s"][:cut], c["slope_length_m"][:cut]

    def work(col: str) -> float:
        return float((c[col][:cut] * dist).sum() / J_PER_WH)

    def energy(col: str, seconds: np.ndarray = t) -> float:
        return _energy(c[col][:cut], seconds)

    return {
        "aero_wh": work("f_aero_n"),
        "rolling_wh": work("f_rolling_n"),
        "grade_wh": work("f_grade_n"),
        "inertia_wh": work("f_inertia_n"),
        "drive_losses_wh": energy("drive_loss_w"),
        "regen_losses_wh": energy("regen_loss_w"),
        "friction_brakes_wh": energy("friction_brake_w") + regen_refused_wh,
        "battery_losses_wh": loss_wh,
        "aux_wh": energy("aux_power_w", t + c["dwell_s"][:cut]),
        "solar_wh": -solar_wh,
    }


_USED = ("time_s", "dwell_s", "slope_length_m", "start_m", "length_m", "f_aero_n", "f_rolling_n",
         "f_grade_n", "f_inertia_n", "drive_loss_w", "regen_loss_w", "friction_brake_w",
         "aux_power_w", "regen_w", "demand_wh", "soc", "v_end_mps", "solar_power_w", "stop_s",
         "charged_wh", "detour_wh", "soc_at_stop", "temp_c")


def _clock(ts: pd.Timestamp) -> str:
    return ts.round("s").isoformat(timespec="seconds")


def summarize(
    trace: pd.DataFrame,
    soc: SocResult,
    *,
    capacity_wh: float,
    start_soc: float,
    attrs: dict[str, Any],
    vehicle_name: str,
    battery_model: str,
    columns: dict[str, np.ndarray] | None = None,
) -> Summary:
    """Summarise a trace (see :func:`tripsim.simulate.simulate`).

    ``columns`` may hand over the trace's arrays directly (saves looking them up).
    When the battery runs empty the sums cover the route up to that point (the
    segment where it happens counts in part).
    """
    c = {k: (columns[k] if columns is not None and k in columns else trace[k].to_numpy())
         for k in _USED}
    n = c["soc"].size
    idx = soc.stranded_index
    stranded = idx >= 0
    cut = idx + 1 if stranded else n
    frac = np.ones(cut)
    if stranded:
        frac[idx] = soc.stranded_fraction
    demand = c["demand_wh"]
    detours_wh = float(c["detour_wh"][:cut].sum())
    drawn_wh = float(soc.accepted_wh[:cut].sum()) + detours_wh
    needed_wh = float(demand.sum()) + float(c["detour_wh"].sum())
    curtailed = float(np.sum(soc.accepted_wh[:cut] - soc.loss_wh[:cut] - demand[:cut] * frac))
    t_all = c["time_s"] + c["dwell_s"]
    regen_all = _energy(c["regen_w"][:cut] * frac, c["time_s"][:cut])
    solar_all = _energy(c["solar_power_w"][:cut] * frac, t_all[:cut])
    regen_refused = min(max(curtailed, 0.0), regen_all)  # a full battery refuses regen first
    solar_wh = solar_all - (max(curtailed, 0.0) - regen_refused)
    regen_wh = regen_all - regen_refused
    end_m = c["start_m"] + c["length_m"]
    distance_km = float(end_m[-1] / 1000.0)
    stranded_at_km = None
    if stranded:
        stranded_at_km = float((c["start_m"][idx] + soc.stranded_fraction * c["length_m"][idx])
                               / 1000.0)
    driven_km = stranded_at_km if stranded_at_km is not None else distance_km
    lowest = np.fmin(c["soc"], c["soc_at_stop"])  # a site can be the low point
    soc_all = np.concatenate([[start_soc], lowest[:cut if not stranded else idx]])
    i_min = int(np.argmin(soc_all))
    wh_per_km = (drawn_wh - detours_wh) / driven_km if driven_km > 0 else float("nan")
    seconds = t_all[:cut] * frac
    total_s = float(seconds.sum() + c["stop_s"][:cut].sum())
    depart = trace["clock"].iloc[0]
    breakdown = _breakdown(c, cut, regen_refused + min(curtailed, 0.0), solar_wh,
                           float(soc.loss_wh[:cut].sum()))
    if stranded:  # the last segment counts in part: take off the share not driven
        last = _breakdown({k: v[idx:idx + 1] for k, v in c.items()}, 1, 0.0, 0.0, 0.0)
        for k, v in last.items():
            breakdown[k] -= (1.0 - soc.stranded_fraction) * v
    breakdown["detours_wh"] = detours_wh
    gross_wh_per_km = ((drawn_wh + solar_wh - detours_wh) / driven_km if driven_km > 0
                       else np.nan)
    clock_end = depart + pd.Timedelta(seconds=total_s)
    return Summary(
        vehicle=vehicle_name,
        route=str(attrs.get("name", "route")),
        distance_km=distance_km,
        driven_km=float(driven_km),
        duration_h=total_s / 3600.0,
        drive_h=float((c["time_s"][:cut] * frac).sum() / 3600.0),
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
        mean_temp_c=float((c["temp_c"] * t_all).sum() / t_all.sum()),
        elevation_source=str(attrs.get("elevation_source", "none")),
        battery_model=battery_model,
        depart=_clock(depart),
        arrive=None if stranded else _clock(clock_end),
        power_limited_s=float(soc.extra_time_s.sum()),
        breakdown_wh=breakdown,
    )
