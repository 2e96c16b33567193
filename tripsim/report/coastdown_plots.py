"""Figure of a coast-down fit: deceleration force against speed, and residuals per run."""

from __future__ import annotations

import matplotlib

matplotlib.use("Agg")  # files only, no screen

import matplotlib.pyplot as plt
import numpy as np
from matplotlib.figure import Figure
from scipy.signal import savgol_filter

from tripsim.claims.coastdown import RoadLoadFit
from tripsim.units import mps_to_kph

__all__ = ["coastdown_figure"]

_REFERENCE = "#222222"
_DISPLAY_WINDOW_S = 3.0


def _display_force_n(t: np.ndarray, speed: np.ndarray, effective_mass_kg: float
                     ) -> np.ndarray | None:
    """−m_eff·dv/dt from a Savitzky–Golay derivative over about 3 s, for display only.

    The fit never uses it: it fits v(t) as a whole.  Samples are put on a uniform grid
    at their median spacing first.
    """
    dt = float(np.median(np.diff(t)))
    grid = np.arange(t[0], t[-1] + 0.5 * dt, dt)
    window = max(5, round(_DISPLAY_WINDOW_S / dt) | 1)
    if grid.size < window:
        return None
    slope = savgol_filter(np.interp(grid, t, speed), window, 2, deriv=1, delta=dt)
    return np.interp(t, grid, -effective_mass_kg * slope)


def _model_force_n(t: np.ndarray, fit_mps: np.ndarray, effective_mass_kg: float) -> np.ndarray:
    """−m_eff·dv/dt of the fitted (smooth) speed: the run's road load as driven."""
    return -effective_mass_kg * np.gradient(fit_mps, t)


def coastdown_figure(fit: RoadLoadFit) -> Figure:
    """Deceleration force against speed, with the fits, and each run's speed residuals.

    Parameters
    ----------
    fit : RoadLoadFit
        From :func:`tripsim.claims.coastdown.fit_road_load`.

    Returns
    -------
    matplotlib.figure.Figure
        Top: points are −m_eff·dv/dt of the measured speeds (smoothed for display), thin
        lines each run's fitted road load as driven (its wind, grade and air), the thick
        line F(v) at reference conditions.  Bottom: measured minus fitted speed.
    """
    fig, (ax_f, ax_r) = plt.subplots(2, 1, figsize=(10, 7.5), sharex=True,
                                     gridspec_kw={"height_ratios": [2.2, 1]})
    used = fit.runs.set_index("run")["used"]
    directions = [d for d in dict.fromkeys(fit.runs["direction"]) if isinstance(d, str)]
    colours = plt.get_cmap("tab10")
    for i, (run, s) in enumerate(fit.samples.groupby("run", sort=False)):
        if not used.get(run, False):
            continue
        colour = colours(i % 10)
        t, v, f = (s[c].to_numpy() for c in ("t_s", "speed_mps", "fit_mps"))
        kph = mps_to_kph(v)
        direction = fit.runs.set_index("run").loc[run, "direction"]
        style = "-" if not directions or direction == directions[0] else "--"
        shown = _display_force_n(t, v, fit.effective_mass_kg)
        if shown is not None:
            step = max(1, t.size // 150)
            ax_f.plot(kph[::step], shown[::step], ".", color=colour, ms=2.5, alpha=0.45)
        ax_f.plot(mps_to_kph(f), _model_force_n(t, f, fit.effective_mass_kg), style,
                  color=colour, lw=1.0, label=f"run {run} ({direction})")
        ax_r.plot(kph, mps_to_kph(v - f), ".", color=colour, ms=2.0, alpha=0.6)
    lo, hi = fit.options.min_kph, fit.options.max_kph
    grid = np.linspace(lo, hi, 200)
    ax_f.plot(grid, fit.force_n(grid / 3.6), color=_REFERENCE, lw=2.4,
              label="F(v) at 20 °C, 98.21 kPa, no wind")
    ax_f.set_ylabel("deceleration force  m_eff·(−dv/dt)  [N]")
    ax_f.legend(fontsize=7, ncol=2, frameon=False, loc="upper left")
    ax_f.set_title(f"{fit.vehicle}: Cd·A {fit.cda_m2:.3f} m², Crr {fit.crr:.5f} "
                   f"({len(fit.pairs)} pairs, {len(fit.runs_used)} runs)", fontsize=11)
    ax_r.axhline(0.0, color=_REFERENCE, lw=0.8)
    ax_r.set_ylabel("measured − fitted [km/h]")
    ax_r.set_xlabel("speed [km/h]")
    for ax in (ax_f, ax_r):
        ax.grid(True, alpha=0.3)
    ax_r.set_xlim(lo, hi)
    rejected = fit.runs_rejected
    if rejected:
        text = "rejected: " + "; ".join(f"{r['run']} ({r['reason'].split(':')[0]})"
                                        for r in rejected)
        fig.text(0.01, 0.005, text, fontsize=7, color="#555555")
    fig.tight_layout(rect=(0, 0.02, 1, 1))
    return fig
