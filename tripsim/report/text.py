"""Human-readable reports: the tables and lines the command line and the demo print.

Each function takes results (summaries, plans, fleet totals) and returns text; none
computes physics or reads files.
"""

from __future__ import annotations

import pandas as pd

from tripsim.caution import CAUTION
from tripsim.summary import Summary

__all__ = ["compare_routes", "compare_speeds", "demo_fleet_text", "demo_trip_table",
           "format_fleet", "format_plan", "format_summary", "hours_text", "split_seconds",
           "time_line"]


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
        (f"  distance       {s.stranded_at_km:9.1f} km of {s.distance_km:.1f} km before the "
         f"battery ran empty   time {hours_text(s.duration_h)}  (avg {s.avg_speed_kph:.0f} km/h)"
         if s.stranded else
         f"  distance       {s.distance_km:9.1f} km     time    {hours_text(s.duration_h)}"
         f"  (avg {s.avg_speed_kph:.0f} km/h)"),
        f"  battery energy {s.battery_wh / 1000:9.2f} kWh    {s.wh_per_km:.0f} Wh/km · "
        f"{s.wh_per_mi:.0f} Wh/mi",
        f"  regenerated    {s.regen_wh / 1000:9.2f} kWh    auxiliary {s.aux_wh / 1000:.2f} kWh",
        *([f"  solar gain     {s.solar_wh / 1000:9.2f} kWh    = {s.solar_km:.1f} km of driving"]
          if s.solar_wh > 0 else []),
        f"  state of charge {soc_line}",
        f"  range at this rate {s.range_km:.0f} km   climb {s.ascent_m:.0f} m "
        f"(unsmoothed {s.ascent_raw_m:.0f} m, elevation: {s.elevation_source})",
        f"  breakdown kWh  {parts}",
        (f"  depart {s.depart}  empty at {s.stranded_clock}: no arrival" if s.stranded else
         f"  depart {s.depart}  arrive {s.arrive}"),
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
        *([f"  ({totals['closed_on_solar_means']})"] if totals.get("closed_on_solar_means")
          else []),
        "",
        f"caution: {CAUTION}",
    ])


def _clock(text: str | pd.Timestamp) -> str:
    """A plan's clock to the second: ``Tue 14 Jul 10:55:14``."""
    return f"{pd.Timestamp(text).round('s'):%a %d %b %H:%M:%S}"


def _zone(ts: pd.Timestamp) -> str:
    """The clock's offset from UTC: ``UTC−02:00``."""
    minutes = round(ts.utcoffset().total_seconds() / 60)
    sign = "+" if minutes >= 0 else "−"
    return f"UTC{sign}{abs(minutes) // 60:02d}:{abs(minutes) % 60:02d}"


def _hms(seconds: int) -> str:
    return f"{seconds // 3600}:{seconds % 3600 // 60:02d}:{seconds % 60:02d}"


def split_seconds(parts: list[float], total: float) -> list[int]:
    """Whole seconds for each part that add up to the rounded total (largest remainder)."""
    want = round(total)
    floors = [int(p // 1) for p in parts]
    order = sorted(range(len(parts)), key=lambda i: parts[i] - floors[i], reverse=True)
    short = want - sum(floors)
    for i in order[:max(short, 0)]:
        floors[i] += 1
    return floors


def time_line(totals: dict) -> str:
    """The plan's time line to the second.

    driving + charging + stop overhead + detours + waiting + nights = door to door.
    """
    names = ("driving", "charging", "stop overhead", "detours", "waiting", "nights")
    keys = ("drive_h", "charge_h", "overhead_h", "detour_h", "wait_h", "night_h")
    secs = split_seconds([3600.0 * totals[k] for k in keys], 3600.0 * totals["total_h"])
    return (" + ".join(f"{_hms(s)} {n}" for s, n in zip(secs, names, strict=True))
            + f" = {_hms(sum(secs))} door to door")


def _stop_line(i: int, s: object) -> str:
    where = f"  {i:2d}. km {s.route_km:6.1f}  {_clock(s.arrive)}  {s.name:28.28s}"
    soc = f"{100 * s.arrive_soc:3.0f}% → {100 * s.depart_soc:3.0f}%"
    plug = (f"{s.connector} {s.power_kw:.0f} kW" + (f" (site {s.site_kw:.0f} kW)"
                                                    if s.site_kw > s.power_kw + 0.05 else "")
            if s.connector else "no charger for this vehicle")
    if s.kind == "overnight":
        return (f"{where} night until {_clock(s.depart)}, {soc}"
                + (f", {s.battery_kwh:.1f} kWh overnight on {plug}" if s.battery_kwh > 0.05
                   and s.connector else ""))
    what = (f"charge {s.charge_min:3.0f} min (+{s.overhead_min:.0f} min stop"
            + (f", {s.wait_min:.0f} min wait" if s.wait_min >= 0.5 else "") + ")")
    if s.nights:
        what = (f"{s.nights} night(s) here, until {_clock(s.depart)}: charge "
                f"{s.charge_min:.0f} min (+{s.overhead_min:.0f} min stop)")
    return f"{where} {what}, {soc}, {s.battery_kwh:5.1f} kWh, {plug}"


def _energy_lines(sf: dict) -> list[str]:
    fx = sf.get("fixes", {})
    how = {"start": "", "charged": " (charged to the maximum)",
           "overnight": " (after the night there, with the sun)",
           "arrived": " (as it arrived; no charger)"}[sf["leaving"]]
    rows = ["no plan keeps every constraint: the charge runs short.",
            f"  leaving {sf['stuck_after']} (km {sf['stuck_after_km']:.0f}) with "
            f"{100 * sf['leaving_soc']:.0f} %{how}, the reserve "
            f"({100 * sf['reserve_soc']:.0f} %) is reached at km {sf['fails_at_km']:.0f}, "
            f"short of {sf['next_target']} (km {sf['next_target_km']:.0f}) by "
            f"{sf['shortfall_wh'] / 1000:.1f} kWh"]
    if "reserve_soc" in fx:
        rows.append(f"  a reserve of {100 * fx['reserve_soc']:.1f} % would close it")
    if "arrive_soc" in fx:
        rows.append(f"  arriving with {100 * fx['arrive_soc']:.1f} % would close it")
    if "charger_near_km" in fx:
        rows.append(f"  a charger within {fx['charger_within_km']:.0f} km of km "
                    f"{fx['charger_near_km']:.0f} would close it")
    if "speed_factor" in fx:
        rows.append(f"  driving at {fx['speed_factor']:.2f} × the limits would close it")
    if "days" in sf:  # the days break too
        rows += ["the driving days are too short as well:", *_days_lines(sf["days"])[1:]]
    return rows


def _days_lines(sf: dict) -> list[str]:
    fx = sf.get("fixes", {})
    first = ("" if sf["stuck_after"] != "the start" or sf["first_day_h"] >= sf["day_h"]
             else f"; the first day has {sf['first_day_h']:.1f} h left after the departure")
    rows = ["no plan keeps every constraint: the driving days are too short.",
            f"  a day allows {sf['limit']} ({sf['limited_by']}){first}",
            f"  from {sf['stuck_after']} (km {sf['stuck_after_km']:.0f}) the next place to "
            f"sleep, {sf['next_target']} (km {sf['next_target_km']:.0f}), is "
            f"{sf['leg_h']:.1f} h of driving away; the day's driving ends near km "
            f"{sf['day_ends_km']:.0f}"]
    if "lodging_between_km" in fx:
        lo, hi = fx["lodging_between_km"]
        rows.append(f"  a place to sleep between km {lo:.0f} and km {hi:.0f} would bridge "
                    "this gap (--lodging)")
    if "day_h" in fx:
        rows.append(f"  days of {fx['day_h']:.1f} h of driving would close it "
                    f"({fx.get('day_options') or sf['limited_by']})")
    return rows


def _together_lines(sf: dict) -> list[str]:
    fx = sf.get("fixes", {})
    what = "the driving days" if sf.get("windowed") else "the sites' opening hours"
    rows = [f"no plan keeps every constraint: the charge and {what} do not fit together "
            "(each alone would allow the trip).",
            f"  the farthest any plan gets is {sf['stuck_after']} (km "
            f"{sf['stuck_after_km']:.0f}), leaving {_clock(sf['leave_at'])} with at most "
            f"{100 * sf['leaving_soc']:.1f} %"]
    if sf["shortfall_wh"] > 0:
        rows.append(f"  that reaches the reserve ({100 * sf['reserve_soc']:.0f} %) at km "
                    f"{sf['fails_at_km']:.0f}, {sf['shortfall_wh'] / 1000:.1f} kWh short of "
                    f"{sf['next_target']} (km {sf['next_target_km']:.0f}); more charge "
                    f"before it does not fit {what}")
    if "day_h" in fx:
        rows.append(f"  days of {fx['day_h']:.1f} h of driving would close it "
                    f"({fx['day_options']})")
    if "max_charge_soc" in fx:
        rows.append(f"  charging up to {100 * fx['max_charge_soc']:.0f} % would close it "
                    "(--max-charge-soc)")
    return rows


def _infeasible_lines(plan: object) -> list[str]:
    sf = plan.shortfall or {}
    lines = {"energy": _energy_lines, "days": _days_lines, "together": _together_lines}
    if sf.get("reason") in lines:
        return lines[sf["reason"]](sf)
    if sf.get("reason") == "rounds":
        return ["the plan still breaks a constraint on its own simulation: "
                + "; ".join(sf.get("problems", []))]
    return ["no plan keeps every constraint."]


def format_plan(plan: object, extra: list[str]) -> str:
    """Human-readable plan: counts and clocks, the time line, one line a stop, notes."""
    t = plan.totals
    if not plan.feasible and plan.trip is None:
        head = _infeasible_lines(plan)
        return "\n".join([*head, f"  departure {_clock(t['depart'])} with "
                          f"{100 * t['start_soc']:.0f} %", *plan.notes, *extra, "",
                          f"caution: {CAUTION}"])
    arrive = pd.Timestamp(t["arrive"])
    rows = [] if plan.feasible else _infeasible_lines(plan)
    rows += [
        f"{t['charging_stops']} charging stop(s), {t['nights']} night(s), {t['days']} driving "
        f"day(s); depart {_clock(t['depart'])}, arrive {_clock(arrive)} ({_zone(arrive)})",
        f"  time line: {time_line(t)}",
        f"  state of charge {100 * t['start_soc']:.0f}% at the start, arrive with "
        f"{100 * t['arrival_soc']:.0f}%, lowest {100 * t['min_soc']:.0f}% at km "
        f"{t['min_soc_km']:.1f} (plan settled in {plan.rounds} round(s))"]
    rows += [_stop_line(i, s) for i, s in enumerate(plan.stops, start=1)]
    rows += [*plan.notes, *extra, "", f"caution: {CAUTION}"]
    return "\n".join(rows)


def compare_routes(plans: list) -> list[str]:
    """One line for each alternative route: stops, nights and arrival, best first."""
    if len(plans) < 2:
        return []
    rows = []
    best = plans[0][1]
    for i, (seg, p) in enumerate(plans):
        name = seg.attrs.get("name")
        label = "best route" if i == 0 else "alternative"
        if not p.feasible:
            rows.append(f"{label} {name}: no feasible plan")
            continue
        more = ("" if i == 0 or not best.feasible else
                f" (+{p.totals['total_h'] - best.totals['total_h']:.2f} h)")
        rows.append(f"{label} {name}: {p.totals['charging_stops']} stop(s), "
                    f"{p.totals['nights']} night(s), arrive {_clock(p.totals['arrive'])}, "
                    f"{p.totals['total_h']:.2f} h{more}")
    return rows


def compare_speeds(rows: list[dict]) -> list[str]:
    """One line for every driver speed factor, then the fastest door to door."""
    if not rows:
        return []
    out = ["driver speed factors:"]
    for r in rows:
        if not r["feasible"]:
            out.append(f"  {r['speed_factor']:.2f} × the limits: no plan keeps every constraint")
            continue
        out.append(f"  {r['speed_factor']:.2f} × the limits: {r['charging_stops']} stop(s), "
                   f"{r['nights']} night(s), arrive {_clock(r['arrive'])} "
                   f"({r['total_h']:.2f} h)")
    ok = sorted((r for r in rows if r["feasible"]), key=lambda r: r["total_h"])
    if not ok:
        return [*out, "no speed factor gives a feasible plan"]
    line = (f"fastest door to door: {ok[0]['speed_factor']:.2f} × the limits, "
            f"{ok[0]['total_h']:.2f} h with {ok[0]['charging_stops']} stop(s)")
    if len(ok) > 1:
        line += (f", {60 * (ok[1]['total_h'] - ok[0]['total_h']):.0f} min ahead of "
                 f"{ok[1]['speed_factor']:.2f}")
    return [*out, line]


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
