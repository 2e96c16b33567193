"""Coast-down results for people: the fit's table, the ``[body]`` snippet, the coast plan.

Each function takes results and returns text; none computes physics or reads files.
"""

from __future__ import annotations

from typing import Any

import numpy as np

from tripsim.caution import CAUTION
from tripsim.claims.coastdown import (
    REFERENCE_PRESSURE_PA,
    REFERENCE_TEMP_C,
    RoadLoadFit,
    reference_air_density,
)
from tripsim.vehicle import Vehicle

__all__ = ["body_snippet", "demo_coastdown_text", "format_coast_prediction",
           "format_road_load"]


def _ci(fit: RoadLoadFit, key: str, fmt: str) -> str:
    lo, hi = fit.intervals[key]
    return f"{format(lo, fmt)} … {format(hi, fmt)}"


def _rejected_lines(fit: RoadLoadFit) -> list[str]:
    return [f"    run {r['run']}: {r['reason']}" for r in fit.runs_rejected]


def format_road_load(fit: RoadLoadFit, vehicle: Vehicle) -> str:
    """The fitted road load as a table, with the runs, the pairs and the snippet."""
    level = f"{100 * fit.confidence:.0f} %"
    body = vehicle.body
    rows = [
        f"road load of {fit.vehicle} from {fit.source}",
        f"  at {REFERENCE_TEMP_C:g} °C and {REFERENCE_PRESSURE_PA / 1000:.2f} kPa "
        f"(ρ {reference_air_density():.4f} kg/m³), no wind, level road; test mass "
        f"{fit.test_mass_kg:.0f} kg, effective {fit.effective_mass_kg:.0f} kg",
        f"                     value        {level} interval       vehicle file",
        f"  F0            {fit.f0_n:10.1f} N     {_ci(fit, 'f0_n', '.1f'):>20}",
        f"  F1            {fit.f1_n_per_mps:10.3f} N/(m/s) {_ci(fit, 'f1_n_per_mps', '.3f'):>18}",
        f"  F2            {fit.f2_n_per_mps2:10.4f} N/(m/s)² "
        f"{_ci(fit, 'f2_n_per_mps2', '.4f'):>17}",
        f"  Cd·A          {fit.cda_m2:10.3f} m²    {_ci(fit, 'cda_m2', '.3f'):>20}"
        f"       {body.drag_area_m2:.3f}",
        f"  Crr           {fit.crr:10.5f}       {_ci(fit, 'crr', '.5f'):>20}"
        f"       {body.crr:.5f}",
        f"  Crr per m/s   {fit.crr_per_mps:10.2e}       {_ci(fit, 'crr_per_mps', '.1e'):>20}"
        f"       {body.crr_per_mps:.2e}",
        f"  runs used: {', '.join(fit.runs_used)} ({len(fit.pairs)} pairs)",
    ]
    if fit.runs_rejected:
        rows += ["  runs rejected:", *_rejected_lines(fit)]
    rows.append("  pair  runs          Cd·A m²   Crr       implied headwind  implied grade")
    for p in fit.pairs.to_dict(orient="records"):
        wind = p["implied_headwind_mps"]
        wind_text = f"{wind:+5.2f} m/s" if np.isfinite(wind) else "    –    "
        rows.append(f"  {p['pair']:4d}  {' + '.join(p['runs']):12s}  {p['cda_m2']:.3f}     "
                    f"{p['crr']:.5f}   {wind_text}         {p['implied_grade_pct']:+.2f} %")
    rows += [f"  note: {n}" for n in fit.notes]
    rows += ["", body_snippet(fit, vehicle), f"caution: {CAUTION}"]
    return "\n".join(rows)


def body_snippet(fit: RoadLoadFit, vehicle: Vehicle) -> str:
    """A ``[body]`` table for the vehicle file with the measured road load.

    Mass, payload and height are the file's; Cd·A replaces ``cda_m2`` (or ``cd`` when
    the file gives ``cd`` and ``frontal_area_m2``); Crr, its rise with speed and the
    rotating-mass factor follow the fit (the factor is the file's unless an effective
    mass was given: then 1 + (effective − test mass) / empty mass).
    A negative F1 is written as ``crr_per_mps = 0`` (the file allows no fall with speed).
    """
    body = vehicle.body
    level = f"{100 * fit.confidence:.0f} %"
    lines = [
        f"# road load from coast-down runs ({fit.source}; runs {', '.join(fit.runs_used)})",
        f"# at 20 °C, 98.21 kPa: F0 = {fit.f0_n:.1f} N, F1 = {fit.f1_n_per_mps:.3f} N/(m/s), "
        f"F2 = {fit.f2_n_per_mps2:.4f} N/(m/s)²",
        f"# Cd·A {fit.cda_m2:.3f} m² ({level}: {_ci(fit, 'cda_m2', '.3f')}), "
        f"Crr {fit.crr:.5f} ({level}: {_ci(fit, 'crr', '.5f')}); test mass "
        f"{fit.test_mass_kg:.0f} kg",
    ]
    k = fit.crr_per_mps
    if k < 0:
        lines.append(f"# F1 came out negative ({fit.f1_n_per_mps:.3f} N/(m/s)): written as "
                     "crr_per_mps = 0; consider a fit without F1")
    factor = 1.0 + (fit.effective_mass_kg - fit.test_mass_kg) / body.mass_kg
    keys: dict[str, Any] = {"mass_kg": body.mass_kg, "payload_kg": body.payload_kg}
    if body.cd is not None and body.frontal_area_m2 is not None and body.cda_m2 is None:
        keys["cd"] = f"{fit.cda_m2 / body.frontal_area_m2:.4f}"
        keys["frontal_area_m2"] = body.frontal_area_m2
    else:
        keys["cda_m2"] = f"{fit.cda_m2:.4f}"
        if body.frontal_area_m2 is not None:
            keys["frontal_area_m2"] = body.frontal_area_m2
    keys.update({"crr": f"{fit.crr:.5f}", "crr_per_mps": f"{max(k, 0.0):.6f}",
                 "rotating_mass_factor": f"{factor:.4f}", "height_m": body.height_m})
    lines.append("[body]")
    lines += [f"{key} = {value}" for key, value in keys.items()]
    return "\n".join(lines) + "\n"


def format_coast_prediction(pred: dict[str, Any]) -> str:
    """The predicted coast of a vehicle file: total and at each intermediate speed."""
    c = pred["conditions"]
    rows = [
        f"coast of {pred['vehicle']} from {pred['from_kph']:g} to {pred['to_kph']:g} km/h",
        f"  {c['temp_c']:g} °C, {c['pressure_hpa']:.1f} hPa (ρ {c['air_density_kg_m3']:.4f} "
        f"kg/m³), grade {c['grade_pct']:+.2f} %, headwind {c['headwind_mps']:+.1f} m/s; "
        f"Cd·A {pred['cda_m2']:.3f} m², Crr {pred['crr']:.5f}",
        f"  time {pred['time_s']:.1f} s, distance {pred['distance_m']:.0f} m of straight track",
        "    speed km/h    time s    distance m",
        *(f"    {m['speed_kph']:10.0f} {m['time_s']:9.1f} {m['distance_m']:13.0f}"
          for m in pred["milestones"]),
        "",
        f"caution: {CAUTION}",
    ]
    return "\n".join(rows)


def demo_coastdown_text(result: dict[str, Any]) -> str:
    """Two lines for the demo: the fit against the vehicle file, runs used and rejected."""
    lo, hi = result["cda_m2_ci"]
    clo, chi = result["crr_ci"]
    file = result["vehicle_file"]
    rejected = ", ".join(f"{r['run']} ({r['reason'].split(':')[0]})"
                         for r in result["runs_rejected"])
    return (f"\ncoast-down of the {result['vehicle']} ({result['source']}): Cd·A "
            f"{result['cda_m2']:.3f} m² ({lo:.3f} … {hi:.3f}), Crr {result['crr']:.5f} "
            f"({clo:.5f} … {chi:.5f}) at 20 °C; the vehicle file has Cd·A "
            f"{file['cda_m2']:.3f} m², Crr {file['crr']:.5f}\n  runs used "
            f"{', '.join(result['runs_used'])}; rejected {rejected or 'none'}")
