"""The sweep's totals as a short text for the terminal."""

from __future__ import annotations

from typing import Any

from tripsim.caution import CAUTION

__all__ = ["format_sweep"]

#: Result columns shown, by kind (those the runs gave).
SHOWN = {"simulate": ("wh_per_km", "battery_wh", "final_soc", "solar_wh", "duration_h"),
         "plan": ("total_h", "charging_stops", "charging_h"),
         "fleet": ("share_closed", "grid_kwh", "rescue_kwh", "solar_kwh",
                   "wh_per_km_before_solar"),
         "claim": ("range_km_p10", "range_km_p50", "range_km_p90", "share_meeting_claim",
                   "wh_per_km_p50")}


def format_sweep(totals: dict[str, Any]) -> str:
    """What a sweep did, where its results are, and the range of its main results."""
    t = totals
    ran, rate = t["ran_now"], t.get("runs_per_s") or 0.0
    where = t["where"] if not t["workers"] else f"{t['workers']} workers"
    lines = [f"sweep {t['name']} ({t['kind']}): {t['runs']:,} runs ({t['shape']})",
             f"  rows     {t['ok'] + t['failed']:,} of {t['runs']:,}: {t['ok']:,} ok, "
             f"{t['failed']:,} failed",
             f"  this run {ran:,} runs in {t['elapsed_s']:.1f} s ({rate:.3g} runs/s, "
             f"{where})" + (f"; {t['from_earlier_passes']:,} done before"
                            if t["from_earlier_passes"] else "")]
    if t.get("results"):
        lines.append(f"  results  {t['results']}/ (Parquet, {t['parts']} parts, a row a run)")
    shown = [c for c in SHOWN.get(t["kind"], ()) if c in t.get("columns", {})]
    if shown:
        lines.append("  " + " " * 24 + f"{'min':>10} {'mean':>10} {'max':>10}")
        for name in shown:
            s = t["columns"][name]
            lines.append(f"  {name:<24}{s['min']:>10.4g} {s['mean']:>10.4g} {s['max']:>10.4g}")
    for f in t.get("failures", [])[:3]:
        lines.append(f"  failed   {f['runs']:,}× {f['error']}")
    lines.append(f"\ncaution: {CAUTION}")
    return "\n".join(lines)
