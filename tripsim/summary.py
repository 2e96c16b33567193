"""The summary of a simulated trip and its energy breakdown.

The breakdown adds up to the battery energy by construction:

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

    Energies in Wh, distances in km, durations in h, SoC 0-1.  ``battery_wh``
    is the energy the route needs from the battery (after curtailment at full
    charge), net of the solar gain ``solar_wh``; ``solar_km`` is how far that
    solar energy drives at the trip's consumption before solar.  If the battery
    runs empty, ``stranded_at_km`` says where and
    ``shortfall_wh`` how much more energy the trip needed.
    """

    vehicle: str
    route: str
    distance_km: float
    duration_h: float
    drive_h: float
    battery_wh: float
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
    shortfall_wh: float
    capacity_wh: float
    range_km: float
    avg_speed_kph: float
    max_speed_kph: float
    ascent_m: float
    ascent_raw_m: float
    descent_m: float
    elevation_source: str
    battery_model: str
    depart: str
    arrive: str
    breakdown_wh: dict[str, float] = field(default_factory=dict)
    caution: str = CAUTION

    def to_dict(self) -> dict[str, Any]:
        """Plain dict, ready for JSON."""
        return dataclasses.asdict(self)


def _breakdown(c: dict[str, np.ndarray], regen_refused_wh: float, solar_wh: float,
               loss_wh: float) -> dict[str, float]:
    t, dist = c["time_s"], c["slope_length_m"]

    def work(col: str) -> float:
        return float(np.dot(c[col], dist) / J_PER_WH)

    def energy(col: str, seconds: np.ndarray = t) -> float:
        return float(np.dot(c[col], seconds) / J_PER_WH)

    return {
        "aero_wh": work("f_aero_n"),
        "rolling_wh": work("f_rolling_n"),
        "grade_wh": work("f_grade_n"),
        "inertia_wh": work("f_inertia_n"),
        "drive_losses_wh": energy("drive_loss_w"),
        "regen_losses_wh": energy("regen_loss_w"),
        "friction_brakes_wh": energy("friction_brake_w") + regen_refused_wh,
        "battery_losses_wh": loss_wh,
        "aux_wh": energy("aux_power_w", t + c["dwell_s"]),
        "solar_wh": -solar_wh,
    }


_USED = ("time_s", "dwell_s", "slope_length_m", "start_m", "length_m", "f_aero_n", "f_rolling_n",
         "f_grade_n", "f_inertia_n", "drive_loss_w", "regen_loss_w", "friction_brake_w",
         "aux_power_w", "regen_w", "demand_wh", "soc", "v_end_mps", "solar_power_w", "stop_s",
         "charged_wh", "detour_wh", "soc_at_stop")


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
    """
    c = {k: (columns[k] if columns is not None and k in columns else trace[k].to_numpy())
         for k in _USED}
    n = c["soc"].size
    idx = soc.stranded_index
    stranded = idx >= 0
    cut = idx if stranded else n
    demand = c["demand_wh"]
    curtailed = float(np.sum(soc.accepted_wh[:cut] - soc.loss_wh[:cut] - demand[:cut]))
    detours_wh = float(c["detour_wh"].sum())
    battery_wh = float(np.sum(soc.accepted_wh[:cut]) + np.sum(demand[cut:])) + detours_wh
    regen_all = float(np.dot(c["regen_w"], c["time_s"]) / J_PER_WH)
    solar_all = float(np.dot(c["solar_power_w"], c["time_s"] + c["dwell_s"]) / J_PER_WH)
    regen_refused = min(max(curtailed, 0.0), regen_all)  # a full battery refuses regen first
    solar_wh = solar_all - (max(curtailed, 0.0) - regen_refused)
    regen_wh = regen_all - regen_refused
    end_m = c["start_m"] + c["length_m"]
    distance_km = float(end_m[-1] / 1000.0)
    lowest = np.fmin(c["soc"], c["soc_at_stop"])  # a site can be the low point
    soc_all = np.concatenate([[start_soc], lowest[:cut]])
    i_min = int(np.argmin(soc_all))
    wh_per_km = (battery_wh - detours_wh) / distance_km if distance_km > 0 else float("nan")
    total_s = float(c["time_s"].sum() + c["dwell_s"].sum() + c["stop_s"].sum())
    stranded_at_km = None
    if stranded:
        stranded_at_km = float((c["start_m"][idx] + soc.stranded_fraction * c["length_m"][idx])
                               / 1000.0)
    depart = trace["clock"].iloc[0]
    breakdown = _breakdown(c, regen_refused + min(curtailed, 0.0), solar_wh,
                           float(soc.loss_wh.sum()))
    breakdown["detours_wh"] = detours_wh
    gross_wh_per_km = ((battery_wh + solar_wh - detours_wh) / distance_km if distance_km > 0
                       else np.nan)
    return Summary(
        vehicle=vehicle_name,
        route=str(attrs.get("name", "route")),
        distance_km=distance_km,
        duration_h=total_s / 3600.0,
        drive_h=float(c["time_s"].sum() / 3600.0),
        battery_wh=battery_wh,
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
        shortfall_wh=float(battery_wh - start_soc * capacity_wh) if stranded else 0.0,
        capacity_wh=float(capacity_wh),
        range_km=float(capacity_wh / wh_per_km) if wh_per_km > 0 else float("inf"),
        avg_speed_kph=distance_km / (total_s / 3600.0),
        max_speed_kph=float(c["v_end_mps"].max() * KPH_PER_MPS),
        ascent_m=float(attrs.get("ascent_m", 0.0)),
        ascent_raw_m=float(attrs.get("ascent_raw_m", 0.0)),
        descent_m=float(attrs.get("descent_m", 0.0)),
        elevation_source=str(attrs.get("elevation_source", "none")),
        battery_model=battery_model,
        depart=depart.isoformat(),
        arrive=(depart + pd.Timedelta(seconds=total_s)).isoformat(),
        breakdown_wh=breakdown,
    )
