"""Range claims and logged drives for people: tables and lines.

Each function takes results and returns text; none computes physics or reads files.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from tripsim.caution import CAUTION
from tripsim.claims.logs import LoggedDrive
from tripsim.claims.range_claim import ClaimResult
from tripsim.units import M_PER_MI

__all__ = ["demo_claim_text", "demo_log_text", "format_claim", "format_logged_drive"]

_MONTHS = ("Jan", "Feb", "Mar", "Apr", "May", "Jun", "Jul", "Aug", "Sep", "Oct", "Nov", "Dec")


def _dist(km: float, unit: str) -> float:
    return km * 1000.0 / M_PER_MI if unit == "mi" else km


def _wrap(text: str, width: int = 92, indent: str = "  ") -> list[str]:
    import textwrap

    return textwrap.wrap(text, width=width, initial_indent=indent, subsequent_indent=indent)


def _sample_line(label: str, s: dict[str, Any], unit: str) -> str:
    more = "≥ " if s["at_least"] else ""
    return (f"  {label:5s} {more}{_dist(s['range_km'], unit):6.0f} {unit}  departing "
            f"{s['depart']}: {s['mean_temp_c']:5.1f} °C ({s['temp_min_c']:.1f} to "
            f"{s['temp_max_c']:.1f}), headwind {s['mean_headwind_mps']:+.1f} m/s, sun "
            f"{s['mean_ghi_w_m2']:.0f} W/m², {s['wh_per_km']:.0f} Wh/km over {s['hours']:.1f} h")


def _sensitivity_lines(rows: list[dict[str, Any]], unit: str, samples: int) -> list[str]:
    if not rows:
        return []
    out = [f"  one at a time (median range over {samples} of the departures)",
           "    option                      low → high              range at low   at high"]
    for r in rows:
        span = f"{r['low']:.4g} → {r['high']:.4g} {r['unit']}".strip()
        out.append(f"    {r['label']:27s} {span:22s} {_dist(r['range_km_low'], unit):10.0f} "
                   f"{_dist(r['range_km_high'], unit):9.0f} {unit}")
    return out


def format_claim(result: ClaimResult) -> str:
    """The claim's check as a table: distribution, months, breakdown, sensitivity, verdict."""
    d = result.to_dict()
    u = result.claim.unit
    rows = [
        f"range claim: {result.claim.distance:g} {u}, {result.vehicle} on {result.route} "
        f"({'loop' if result.corridor == 'loop' else 'out-and-back'}, "
        f"{_dist(result.lap_km, u):.1f} {u} a lap)",
        f"  weather {result.weather}; {result.sampling_text()}",
        f"  range {u}: p10 {_dist(d['range_km_p10'], u):.0f} · p50 "
        f"{_dist(d['range_km_p50'], u):.0f} · p90 {_dist(d['range_km_p90'], u):.0f} "
        f"(min {_dist(d['range_km_min'], u):.0f}, max {_dist(d['range_km_max'], u):.0f})",
        f"  claim reached on {d['samples_meeting_claim']} of {d['samples']} departures "
        f"({100 * d['share_meeting_claim']:.0f} %); consumption p50 {d['wh_per_km_p50']:.0f} "
        f"Wh/km",
        _sample_line("worst", d["worst"], u),
        _sample_line("best", d["best"], u),
        "  by month   " + "  ".join(f"{_MONTHS[m['month'] - 1]} "
                                     f"{_dist(m['range_km_p50'], u):.0f}"
                                     for m in d["by_month"]),
    ]
    b = d["breakdown_at_median_wh"]
    parts = " · ".join(f"{k.removesuffix('_wh').replace('_', ' ')} {v / 1000:.1f}"
                       for k, v in b.items() if k != "asked_wh" and abs(v) >= 50.0)
    rows.append(f"  energy at the median ({d['median_depart']}), kWh: {parts}")
    st = d["stated"]
    rows.append(f"  under the claim's own conditions ({st['description']}): "
                f"{'≥ ' if st['at_least'] else ''}{_dist(st['range_km'], u):.0f} {u}, "
                f"{st['wh_per_km']:.0f} Wh/km")
    if d["lab_cycle"] is not None:
        c = d["lab_cycle"]
        rows.append(f"  lab cycle {c['name']} ({c['cycle_km']:.1f} km, {c['temp_c']:g} °C): "
                    f"{c['wh_per_km']:.0f} Wh/km, range {_dist(c['range_km'], u):.0f} {u}")
    rows += _sensitivity_lines(d["sensitivity"], u, d["sensitivity_samples"])
    rows += [f"  note: {n}" for n in d["notes"]]
    rows += ["", "verdict:", *_wrap(result.verdict()), "", f"caution: {CAUTION}"]
    return "\n".join(rows)


def demo_claim_text(payload: dict[str, Any]) -> str:
    """A few lines for the demo: the claim, the distribution, the share and the verdict."""
    c = payload["claim"]
    u = c["unit"]
    lines = [f"\nrange claim {c['distance']:g} {u} ({payload['vehicle']} on {payload['route']}, "
             f"{payload['corridor']['kind']}): p10 {_dist(payload['range_km_p10'], u):.0f} · "
             f"p50 {_dist(payload['range_km_p50'], u):.0f} · p90 "
             f"{_dist(payload['range_km_p90'], u):.0f} {u}; reached on "
             f"{payload['samples_meeting_claim']} of {payload['samples']} departures"]
    return "\n".join(lines + _wrap(payload["verdict"]))


def _fit_lines(fit: dict[str, Any]) -> list[str]:
    level = f"{100 * fit['confidence']:.0f} %"
    lo, hi = fit["aux_base_w_ci"]
    rows = [f"  calibration ({fit['readings']} readings {fit['step_s']:g} s apart, {level} "
            "intervals):",
            f"    auxiliary base load {fit['aux_base_w']:7.0f} W     ({lo:.0f} … {hi:.0f}); "
            f"vehicle file {fit['file_aux_base_w']:.0f} W"]
    if fit["drive_efficiency"] is not None:
        elo, ehi = fit["drive_efficiency_ci"]
        rows.append(f"    drive efficiency    {fit['drive_efficiency']:7.3f}       ({elo:.3f} … "
                    f"{ehi:.3f}); vehicle file {fit['file_drive_efficiency']:.3f}")
    else:
        flo, fhi = fit["efficiency_factor_ci"]
        rows.append(f"    efficiency factor on the map {fit['efficiency_factor']:.3f} ({flo:.3f} "
                    f"… {fhi:.3f})")
    rows.append(f"    end of the drive: model − measured {fit['end_diff_pct_before']:+.1f} % "
                f"with the file's values, {fit['end_diff_pct_after']:+.1f} % with the fitted "
                "ones (simulated again)")
    return rows + [f"    note: {n}" for n in fit["notes"]]


def format_logged_drive(logged: LoggedDrive) -> str:
    """Model against measured along a logged drive, at its end, and the calibration."""
    d = logged.to_dict()
    kind = "positions" if d["kind"] == "positions" else "speed–time trace"
    rows = [f"logged drive {d['source']} ({kind}): "
            f"driven at its recorded speeds, {d['logged_km']:.1f} km in {d['logged_h']:.2f} h; "
            f"range at this consumption {d['range_km']:.0f} km (usable energy / consumption)"]
    cmp_ = d["comparison"]
    if cmp_ is not None:
        basis = ("energy drawn (battery_wh)" if cmp_["basis"] == "energy" else
                 f"state of charge × usable {cmp_['capacity_wh'] / 1000:.2f} kWh")
        rows += [f"  model against measured ({basis}); energy drawn since the start:",
                 "      km    min   measured kWh   model kWh    diff   SoC measured  model"]
        for c in cmp_["checkpoints"]:
            soc = ("" if not np.isfinite(c["measured_soc"]) else
                   f"{100 * c['measured_soc']:9.1f} % {100 * c['model_soc']:6.1f} %")
            rows.append(f"  {c['km']:7.1f} {c['elapsed_min']:6.0f} {c['measured_wh'] / 1000:12.2f}"
                        f" {c['model_wh'] / 1000:11.2f} {c['diff_wh'] / 1000:+7.2f}  {soc}")
        e = cmp_["end"]
        rows.append(f"  at the end: measured {e['measured_wh'] / 1000:.2f} kWh, model "
                    f"{e['model_wh'] / 1000:.2f} kWh ({e['diff_pct']:+.1f} %)"
                    + ("" if cmp_["rms_soc_points"] is None else
                       f"; SoC difference rms {cmp_['rms_soc_points']:.2f} points"))
    if d["fit"] is not None:
        rows += _fit_lines(d["fit"])
    rows += [f"  note: {n}" for n in d["notes"]]
    return "\n".join(rows)


def demo_log_text(payload: dict[str, Any]) -> str:
    """Two lines for the demo: the log's end against the model, and the calibration."""
    e = payload["comparison"]["end"]
    fit = payload["fit"]
    text = (f"\nlogged drive {payload['source']}: {payload['logged_km']:.1f} km; model "
            f"{e['model_wh'] / 1000:.2f} kWh against measured {e['measured_wh'] / 1000:.2f} kWh "
            f"({e['diff_pct']:+.1f} %)")
    if fit is not None:
        lo, hi = fit["aux_base_w_ci"]
        elo, ehi = fit["drive_efficiency_ci"] or (np.nan, np.nan)
        text += (f"\n  fitted: auxiliary base load {fit['aux_base_w']:.0f} W ({lo:.0f} … "
                 f"{hi:.0f}; file {fit['file_aux_base_w']:.0f}), drive efficiency "
                 f"{fit['drive_efficiency']:.3f} ({elo:.3f} … {ehi:.3f}; file "
                 f"{fit['file_drive_efficiency']:.3f}); the fitted model ends "
                 f"{fit['end_diff_pct_after']:+.1f} % from the measurement")
    return text
