"""Human-readable reports: the tables and lines the command line and the demo print.

Each function takes results (summaries, plans, fleet totals) and returns text; none
computes physics or reads files.
"""

from __future__ import annotations

import pandas as pd

from tripsim.caution import CAUTION
from tripsim.summary import Summary

__all__ = ["compare_routes", "compare_speeds", "demo_fleet_text", "demo_trip_table",
           "format_fleet", "format_plan", "format_summary", "hours_text"]


def hours_text(h: float) -> str:
    """Hours as ``"3 h 05 min"``."""
    minutes = round(h * 60)
    return f"{minutes // 60} h {minutes % 60:02d} min"


def format_summary(s: Summary) -> str:
    """Human-readable table of a trip summary."""
    b = s.breakdown_wh
    parts = " · ".join(f"{k.removesuffix('_wh').replace('_', ' ')} {v / 1000:.2f}"
                       for k, v in b.items() if abs(v) >= 0.5)
    soc_line = (f"{100 * s.start_soc:.0f}% → EMPTY at km {s.stranded_at_km:.1f} "
                f"(short by {s.shortfall_wh / 1000:.2f} kWh)" if s.stranded else
                f"{100 * s.start_soc:.0f}% → {100 * s.final_soc:.1f}%  "
                f"(lowest {100 * s.min_soc:.1f}% at km {s.min_soc_km:.1f})")
    rows = [
        f"{s.route}  ·  {s.vehicle}",
        f"  distance       {s.distance_km:9.1f} km     time    {hours_text(s.duration_h)}"
        f"  (avg {s.avg_speed_kph:.0f} km/h)",
        f"  battery energy {s.battery_wh / 1000:9.2f} kWh    {s.wh_per_km:.0f} Wh/km · "
        f"{s.wh_per_mi:.0f} Wh/mi",
        f"  regenerated    {s.regen_wh / 1000:9.2f} kWh    auxiliary {s.aux_wh / 1000:.2f} kWh",
        *([f"  solar gain     {s.solar_wh / 1000:9.2f} kWh    = {s.solar_km:.1f} km of driving"]
          if s.solar_wh > 0 else []),
        f"  state of charge {soc_line}",
        f"  range at this rate {s.range_km:.0f} km   climb {s.ascent_m:.0f} m "
        f"(unsmoothed {s.ascent_raw_m:.0f} m, elevation: {s.elevation_source})",
        f"  breakdown kWh  {parts}",
        f"  depart {s.depart}  arrive {s.arrive}",
        "",
        f"caution: {CAUTION}",
    ]
    return "\n".join(rows)


def format_fleet(totals: dict, name: str) -> str:
    """Human-readable fleet totals, with what "closed on solar" means and any warnings."""
    def opt(value: float | None, unit: str, search: list[float] | None) -> str:
        if value is not None:
            return f"{value:.1f} {unit}"
        span = f" {search[0]:g}-{search[1]:g} {unit}" if search else ""
        return f"not reachable in the search range{span}"

    rescue = totals.get("rescue_kwh", 0.0)
    sizing = []
    if "min_battery_kwh_for_target" in totals and (
            totals.get("battery_search_kwh") or totals["min_battery_kwh_for_target"] is not None):
        fits = totals.get("panel_fits")
        sizing = [
            f"  to close {100 * totals['target_share']:.0f} % of days on solar: battery "
            f"{opt(totals['min_battery_kwh_for_target'], 'kWh', totals.get('battery_search_kwh'))}"
            f" (now {totals['battery_kwh']:.0f}), or panels "
            f"{opt(totals['min_panel_m2_for_target'], 'm²', totals.get('panel_search_m2'))}"
            f" (now {totals['panel_m2']:.1f}"
            + ("" if fits is None else
               f"; the body carries at most {totals['max_panel_area_m2']:.1f}"
               + ("" if fits else ": MORE THAN THE VEHICLE CAN CARRY")) + ")"]
    return "\n".join([
        f"{name}: {totals['loop_km']:.1f} km loop, {totals['days']} operating days",
        f"  closed on solar alone  {totals['days_closed']} days "
        f"({100 * totals['share_closed']:.0f} %)   stranded {totals['days_stranded']} days",
        f"  consumption            {totals['drive_kwh']:.0f} kWh over {totals['km']:.0f} km "
        f"({totals['wh_per_km_before_solar']:.0f} Wh/km before solar)",
        f"  solar                  {totals['solar_kwh']:.0f} kWh = {totals['solar_km']:.0f} km"
        f"   grid {totals['grid_kwh']:.0f} kWh"
        + (f"   rescue {rescue:.0f} kWh (emergency charge on stranded days)" if rescue > 0
           else ""),
        *sizing,
        *[f"  warning: {w}" for w in totals.get("warnings", [])],
        f"  ({totals.get('closed_on_solar_means', '')}, judged with no charging at all)",
        "",
        f"caution: {CAUTION}",
    ])


def format_plan(plan: object, extra: list[str]) -> str:
    """Human-readable plan."""
    t = plan.totals
    if not plan.feasible:
        sf = plan.shortfall or {}
        rows = ["no plan keeps every constraint."]
        if "fails_at_km" in sf:
            rows.append(f"  leaving {sf['stuck_after']} (km {sf['stuck_after_km']:.0f}) with a "
                        f"full charge, the reserve is reached at km {sf['fails_at_km']:.0f}, "
                        f"short of {sf['next_target']} (km {sf['next_target_km']:.0f}) by "
                        f"{sf['shortfall_wh'] / 1000:.1f} kWh")
            fx = sf.get("fixes", {})
            if "reserve_soc" in fx:
                rows.append(f"  a reserve of {100 * fx['reserve_soc']:.1f} % would close it")
            if "charger_near_km" in fx:
                rows.append(f"  a charger within {fx['charger_within_km']:.0f} km of km "
                            f"{fx['charger_near_km']:.0f} would close it")
            if "speed_factor" in fx:
                rows.append(f"  driving at {fx['speed_factor']:.2f} × the limits would close it")
        return "\n".join(rows + extra + ["", f"caution: {CAUTION}"])
    rows = [f"{t['charging_stops']} charging stop(s), {t['overnight_stops']} night(s), "
            f"{t['days']} day(s): {t['total_h']:.2f} h in all ({t['drive_h']:.2f} h driving, "
            f"{t['charge_h']:.2f} h charging); arrive with {100 * t['arrival_soc']:.0f} %, "
            f"lowest {100 * t['min_soc']:.0f} % (plan settled in {plan.rounds} round(s))"]
    for i, s in enumerate(plan.stops, start=1):
        what = (f"{s.minutes:4.0f} min, {100 * s.arrive_soc:3.0f}% → {100 * s.depart_soc:3.0f}%, "
                f"{s.battery_kwh:5.1f} kWh, {s.connector} {s.power_kw:.0f} kW"
                if s.kind == "charge" else f"night until {s.depart.round('min'):%a %H:%M}, "
                f"{100 * s.arrive_soc:.0f}% → {100 * s.depart_soc:.0f}%")
        rows.append(f"  {i:2d}. km {s.route_km:6.1f}  {s.arrive:%a %H:%M}  {s.name:28.28s} {what}")
    rows += [*plan.notes, *extra, "", f"caution: {CAUTION}"]
    return "\n".join(rows)


def compare_routes(plans: list) -> list[str]:
    """One line comparing the best route with the runner-up (alternative routes)."""
    if len(plans) < 2:
        return []
    (s1, p1), (s2, p2) = plans[0], plans[1]
    if not p2.feasible:
        return [f"runner-up route {s2.attrs.get('name')}: no feasible plan"]
    return [f"best route {s1.attrs.get('name')}; runner-up {s2.attrs.get('name')}: "
            f"{p2.totals['charging_stops']} stop(s), {p2.totals['total_h']:.2f} h "
            f"(+{p2.totals['total_h'] - p1.totals['total_h']:.2f} h)"]


def compare_speeds(rows: list[dict]) -> list[str]:
    """One line naming the fastest driver speed factor door to door."""
    ok = sorted((r for r in rows if r["feasible"]), key=lambda r: r["total_h"])
    if not ok:
        return [] if not rows else ["no speed factor gives a feasible plan"]
    out = [f"fastest door to door: {ok[0]['speed_factor']:.2f} × the limits, "
           f"{ok[0]['total_h']:.2f} h with {ok[0]['charging_stops']} stop(s)"]
    if len(ok) > 1:
        out[0] += (f", {60 * (ok[1]['total_h'] - ok[0]['total_h']):.0f} min ahead of "
                   f"{ok[1]['speed_factor']:.2f}")
    return out


def demo_fleet_text(name: str, f: dict) -> str:
    """The demo's fleet block: the year of one vehicle and a solar year of each other."""
    rows = [f"\nfleet loop {name} ({f['schedule']}, {f['policy']}):",
            format_fleet(f["totals"], f["vehicle"]).split("\n\ncaution")[0],
            "\n  a year on the sun alone, each vehicle on the same loop:"]
    for key, s in f["solar_year_solar_only"].items():
        rows.append(f"    {key:18s} {s['panel_m2']:4.1f} m²  solar {s['solar_kwh']:6.0f} kWh"
                    f" = {s['solar_km']:6.0f} km   closed {100 * s['share_closed']:3.0f} % of"
                    " days")
    return "\n".join(rows)


def demo_trip_table(rows: list[dict[str, object]]) -> str:
    """The demo's table of trips, one row per trip and vehicle."""
    frame = pd.DataFrame(rows)
    frame["kWh"] = frame.pop("battery_wh") / 1000
    frame["time"] = frame.pop("duration_h").map(lambda h: f"{int(h)}:{round(h % 1 * 60):02d}")
    soc = (100 * frame.pop("final_soc")).round(0).astype(int).astype(str) + "%"
    empty = "EMPTY at km " + frame["stranded_at_km"].fillna(0).round(0).astype(int).astype(str)
    frame["SoC end"] = soc.where(~frame["stranded"].astype(bool), empty)
    cols = ["trip", "vehicle", "distance_km", "time", "kWh", "wh_per_km", "wh_per_mi", "SoC end"]
    return frame[cols].to_string(index=False, float_format=lambda v: f"{v:.1f}")
