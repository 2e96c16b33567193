"""Figures of a range claim (distribution, months, sensitivity) and of a logged drive."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")  # files only, no screen

import matplotlib.pyplot as plt
import numpy as np
from matplotlib.axes import Axes
from matplotlib.figure import Figure

from tripsim.claims.logs import LoggedDrive, measured_energy_wh
from tripsim.claims.range_claim import ClaimResult
from tripsim.units import M_PER_MI

__all__ = ["claim_figure", "log_figure", "range_by_month_axes", "range_distribution_axes",
           "sensitivity_axes"]

_RANGE = "#1f5f8b"
_CLAIM = "#c0392b"
_SPAN = "#9ab8cf"
_MEASURED = "#222222"
_MODEL = "#2e8b57"
_MONTHS = ("J", "F", "M", "A", "M", "J", "J", "A", "S", "O", "N", "D")


def _to_unit(km: np.ndarray | float, unit: str) -> np.ndarray | float:
    return np.asarray(km) * 1000.0 / M_PER_MI if unit == "mi" else km


def range_distribution_axes(ax: Axes, result: ClaimResult) -> None:
    """Histogram of the samples' ranges, the claim and the 10th/50th/90th percentiles."""
    u = result.claim.unit
    r = _to_unit(result.ranges_km, u)
    claim = result.claim.distance
    lo, hi = float(min(r.min(), claim)), float(max(r.max(), claim))
    bins = np.linspace(lo - 0.02 * (hi - lo + 1), hi + 0.02 * (hi - lo + 1), 30)
    ax.hist(r, bins=bins, color=_RANGE, alpha=0.8)
    ax.axvline(claim, color=_CLAIM, lw=2.0, label=f"claim {claim:g} {u}")
    for q, style in ((10, ":"), (50, "--"), (90, ":")):
        ax.axvline(float(np.percentile(r, q)), color="#333333", ls=style, lw=1.0,
                   label=f"p{q} {np.percentile(r, q):.0f} {u}")
    share = result.share_meeting()
    ax.set_title(f"range over {r.size} departures: claim reached on {100 * share:.0f} %",
                 fontsize=10)
    ax.set_xlabel(f"range [{u}]")
    ax.set_ylabel("departures")
    ax.legend(fontsize=7, frameon=False)


def range_by_month_axes(ax: Axes, result: ClaimResult) -> None:
    """Range by month of departure: 10th-90th percentile bars, the median, the claim."""
    u = result.claim.unit
    m = result.by_month()
    x = m["month"].to_numpy()
    p10, p50, p90 = (_to_unit(m[f"range_km_p{q}"].to_numpy(), u) for q in (10, 50, 90))
    ax.bar(x, p90 - p10, bottom=p10, color=_SPAN, width=0.6, label="p10 to p90")
    ax.plot(x, p50, "o", color=_RANGE, ms=4, label="median")
    ax.axhline(result.claim.distance, color=_CLAIM, lw=1.5, label="claim")
    lo = float(min(np.min(p10), result.claim.distance))
    hi = float(max(np.max(p90), result.claim.distance))
    pad = 0.08 * (hi - lo) + 1.0
    ax.set_ylim(lo - pad, hi + pad)
    ax.set_xticks(range(1, 13), _MONTHS)
    ax.set_ylabel(f"range [{u}]")
    ax.set_title("by month of departure", fontsize=10)
    ax.legend(fontsize=7, frameon=False)


def sensitivity_axes(ax: Axes, result: ClaimResult) -> None:
    """One-at-a-time sensitivity: the median range at each end of each option's span."""
    u = result.claim.unit
    rows = result.sensitivity
    if not rows:
        ax.text(0.5, 0.5, "no sensitivity table (--sensitivity-samples 0)", ha="center",
                va="center", fontsize=9, transform=ax.transAxes)
        ax.set_axis_off()
        return
    base = float(_to_unit(rows[0]["range_km_base"], u))
    y = np.arange(len(rows))
    for i, r in enumerate(rows):
        lo, hi = (float(_to_unit(r[k], u)) - base for k in ("range_km_low", "range_km_high"))
        ax.barh(i, lo, left=base, color="#d98880", height=0.6)
        ax.barh(i, hi, left=base, color="#7fb3d5", height=0.6)
    labels = [f"{r['label']} {r['low']:.3g}/{r['high']:.3g}" for r in rows]
    ax.set_yticks(y, labels, fontsize=7)
    ax.axvline(base, color="#333333", lw=1.0)
    ax.axvline(result.claim.distance, color=_CLAIM, lw=1.5)
    ax.invert_yaxis()
    ax.set_xlabel(f"median range [{u}] (red: low end, blue: high end)")
    ax.set_title(f"one at a time, over {result.sensitivity_samples} departures", fontsize=10)


def claim_figure(result: ClaimResult) -> Figure:
    """The three figures of a claim on one page: distribution, months, sensitivity."""
    fig = plt.figure(figsize=(11, 8))
    grid = fig.add_gridspec(2, 2, height_ratios=[1, 1.1])
    range_distribution_axes(fig.add_subplot(grid[0, 0]), result)
    range_by_month_axes(fig.add_subplot(grid[0, 1]), result)
    sensitivity_axes(fig.add_subplot(grid[1, :]), result)
    fig.suptitle(f"{result.vehicle} on {result.route}: claim {result.claim.distance:g} "
                 f"{result.claim.unit}", fontsize=11)
    fig.tight_layout()
    return fig


def log_figure(logged: LoggedDrive) -> Figure:
    """A logged drive: speed as logged, and the energy drawn, model against measured."""
    tr = logged.trip.trace
    km = (tr["start_m"].to_numpy() + tr["length_m"].to_numpy()) / 1000.0
    fig, (ax_v, ax_e) = plt.subplots(2, 1, figsize=(10, 6.5), sharex=True,
                                     gridspec_kw={"height_ratios": [1, 1.3]})
    ax_v.plot(km, 3.6 * tr["v_end_mps"].to_numpy(), color=_RANGE, lw=0.8)
    ax_v.set_ylabel("speed as logged [km/h]")
    model = tr["cum_battery_wh"].to_numpy() / 1000.0
    ax_e.plot(km, model, color=_MODEL, lw=1.4, label="model, vehicle file")
    if logged.fitted_trip is not None:
        fitted = logged.fitted_trip.trace["cum_battery_wh"].to_numpy() / 1000.0
        ax_e.plot(km, fitted, color=_MODEL, lw=1.0, ls="--", label="model, fitted")
    if logged.comparison is not None:

        measured = measured_energy_wh(logged.log, logged.comparison.capacity_wh)[1:] / 1000.0
        ax_e.plot(km, measured, color=_MEASURED, lw=1.0, label="measured")
    ax_e.set_ylabel("energy drawn since the start [kWh]")
    ax_e.set_xlabel("distance [km]")
    ax_e.legend(fontsize=8, frameon=False)
    for ax in (ax_v, ax_e):
        ax.grid(True, alpha=0.3)
    s = logged.trip.summary
    fig.suptitle(f"{s.route} — {s.vehicle}: {s.distance_km:.1f} km as logged", fontsize=11)
    fig.tight_layout()
    return fig
