"""Figures of a trip: elevation, speed and state of charge against distance."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")  # files only, no screen

import matplotlib.pyplot as plt
import numpy as np
import pandas as pd
from matplotlib.figure import Figure

from tripsim.summary import Summary

__all__ = ["fleet_monthly_figure", "fleet_soc_figure", "trip_profile_figure"]

_LAND = "#8c6d46"
_SPEED = "#1f5f8b"
_LIMIT = "#9aa5ad"
_SOC = "#2e8b57"
_LOW = "#c0392b"


def trip_profile_figure(trace: pd.DataFrame, summary: Summary | None = None) -> Figure:
    """Three stacked panels against distance: elevation, speed with limit, SoC.

    Parameters
    ----------
    trace : pandas.DataFrame
        From :func:`tripsim.simulate.simulate`.
    summary : Summary, optional
        Adds a title and marks the lowest SoC or the stranding point.

    Returns
    -------
    matplotlib.figure.Figure
    """
    km = (trace["start_m"].to_numpy() + trace["length_m"].to_numpy()) / 1000.0
    fig, (ax_e, ax_v, ax_s) = plt.subplots(3, 1, figsize=(10, 7), sharex=True,
                                           gridspec_kw={"height_ratios": [1, 1, 1.2]})
    ele = trace["elevation_m"].to_numpy()
    ax_e.fill_between(km, ele, ele.min() - 10, color=_LAND, alpha=0.35, linewidth=0)
    ax_e.plot(km, ele, color=_LAND, linewidth=1.2)
    ax_e.set_ylabel("elevation [m]")
    ax_v.plot(km, trace["speed_limit_kph"], color=_LIMIT, linewidth=1.0, label="limit")
    ax_v.plot(km, trace["speed_kph"], color=_SPEED, linewidth=1.0, label="simulated")
    ax_v.set_ylabel("speed [km/h]")
    ax_v.legend(loc="lower right", fontsize=8, frameon=False)
    reached = trace["reached"].to_numpy()
    soc = 100.0 * trace["soc"].to_numpy()
    ax_s.plot(km[reached], soc[reached], color=_SOC, linewidth=1.6)
    ax_s.set_ylim(0, 100)
    ax_s.set_ylabel("state of charge [%]")
    ax_s.set_xlabel("distance [km]")
    if summary is not None:
        fig.suptitle(f"{summary.route} — {summary.vehicle}: {summary.wh_per_km:.0f} Wh/km, "
                     f"{summary.distance_km:.1f} km", fontsize=11)
        if summary.stranded and summary.stranded_at_km is not None:
            ax_s.axvline(summary.stranded_at_km, color=_LOW, linestyle="--")
            ax_s.annotate("battery empty", (summary.stranded_at_km, 5), color=_LOW, fontsize=9)
        else:
            ax_s.plot([summary.min_soc_km], [100 * summary.min_soc], "o", color=_LOW, ms=4)
    for ax in (ax_e, ax_v, ax_s):
        ax.grid(True, alpha=0.3)
    ax_s.set_xlim(0, float(np.max(km)))
    fig.tight_layout()
    return fig


def fleet_soc_figure(daily: pd.DataFrame, title: str = "") -> Figure:
    """State of charge over the year: each day's range (lowest to start) and its end."""
    dates = pd.to_datetime(daily["date"])
    fig, ax = plt.subplots(figsize=(11, 4))
    low = 100 * daily["soc_min"].fillna(daily["soc_end"])
    high = 100 * daily["soc_start"].fillna(daily["soc_end"])
    ax.fill_between(dates, low, high, color=_SOC, alpha=0.25, linewidth=0, label="day's range")
    ax.plot(dates, 100 * daily["soc_end"], color=_SOC, linewidth=1.0, label="end of day")
    stranded = daily["stranded"].to_numpy()
    if stranded.any():
        ax.plot(dates[stranded], np.zeros(int(stranded.sum())), "v", color=_LOW, ms=4,
                label="stranded")
    ax.set_ylim(-3, 100)
    ax.set_ylabel("state of charge [%]")
    ax.legend(loc="lower left", fontsize=8, frameon=False, ncol=3)
    ax.grid(True, alpha=0.3)
    ax.set_title(title, fontsize=11)
    fig.tight_layout()
    return fig


def fleet_monthly_figure(daily: pd.DataFrame, title: str = "") -> Figure:
    """Monthly energy: consumption of the runs against solar gain (driving and parked)."""
    month = pd.to_datetime(daily["date"]).dt.month
    sums = daily.assign(month=month).groupby("month")[
        ["drive_wh", "solar_drive_wh", "solar_parked_wh", "grid_wh"]].sum() / 1000.0
    x = sums.index.to_numpy()
    fig, ax = plt.subplots(figsize=(9, 4))
    ax.bar(x - 0.2, sums["drive_wh"], width=0.4, color=_SPEED, label="runs' consumption")
    ax.bar(x + 0.2, sums["solar_parked_wh"], width=0.4, color="#e3a21a", label="solar, parked")
    ax.bar(x + 0.2, sums["solar_drive_wh"], width=0.4, bottom=sums["solar_parked_wh"],
           color="#f5d061", label="solar, driving")
    ax.plot(x, sums["grid_wh"], "o-", color=_LOW, ms=3, linewidth=1, label="grid")
    ax.set_xticks(range(1, 13), ["J", "F", "M", "A", "M", "J", "J", "A", "S", "O", "N", "D"])
    ax.set_ylabel("energy per month [kWh]")
    ax.legend(fontsize=8, frameon=False)
    ax.grid(True, axis="y", alpha=0.3)
    ax.set_title(title, fontsize=11)
    fig.tight_layout()
    return fig
