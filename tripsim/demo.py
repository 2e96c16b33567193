"""``tripsim demo``: the main job, end to end, on the invented Tamsreach region.

Every run of ``routes_demo/scenarios.toml`` (trips of each vehicle, the harbour parcel
loop over a weather year and a solar year of each vehicle on it, two charging plans)
goes through the same runner as ``tripsim run``, reading the region's network,
chargers and weather once; then the product team's coast-down fit, range claim and
logged drive.  It writes the summary, profile figures, fleet figures and plan map pages
(which open offline), and prints a table.  The region, its roads and its vehicles are
invented.
"""

from __future__ import annotations

import contextlib
import os
import sys
import time
from collections.abc import Callable, Iterator
from pathlib import Path
from typing import Any

from tripsim.caution import CAUTION
from tripsim.errors import TripsimInputError
from tripsim.io import read_vehicle
from tripsim.io.export import save_figure, to_json_text, write_json, write_trace
from tripsim.report.text import compare_speeds, demo_fleet_text, demo_trip_table, format_plan

__all__ = ["demo_dir", "run_claim_demo", "run_coastdown_demo", "run_demo", "run_log_demo"]

_ROW_KEYS = ("distance_km", "duration_h", "battery_wh", "wh_per_km", "wh_per_mi", "regen_wh",
             "aux_wh", "final_soc", "min_soc", "ascent_m", "stranded", "stranded_at_km")
_SOLAR_YEAR = "-solar-year--"


def demo_dir() -> Path:
    """The ``routes_demo`` folder of a source checkout."""
    here = Path(__file__).resolve().parent.parent / "routes_demo"
    if not (here / "scenarios.toml").is_file():
        raise TripsimInputError("the demo data is not here (run from a source checkout)", here)
    return here


class _Steps:
    """A line a step on standard error (on a terminal): what ran and how long it took."""

    def __init__(self, total: int, quiet: bool) -> None:
        self.total, self.done = total, 0
        self.show = not quiet and sys.stderr.isatty()
        self.t0 = time.perf_counter()

    def __call__(self, what: str) -> None:
        self.done += 1
        if self.show:
            print(f"  [{self.done:2d}/{self.total}] {what} ({time.perf_counter() - self.t0:.1f} s)",
                  file=sys.stderr, flush=True)


def _scenario_runs(here: Path, out: Path, traces: bool, step: _Steps
                   ) -> tuple[list[dict], dict, dict, dict, list[str]]:
    """Run the scenario file: trips, fleet years and plans, with their files."""
    from tripsim.io.scenario_file import read_scenarios
    from tripsim.runner import load_inputs, run

    cache: dict[tuple[str, str], Any] = {}
    rows: list[dict[str, object]] = []
    trips: dict[str, dict] = {}
    fleets: dict[str, dict] = {}
    plans: dict[str, dict] = {}
    plan_texts: list[str] = []
    seen_routes: set[str] = set()
    for sc in read_scenarios(here / "scenarios.toml"):
        inputs = load_inputs(sc, base=here, cache=cache)
        result = run(sc, inputs)
        if sc.kind == "simulate":
            trip, route = result.trip, sc.route.name or sc.title
            if traces:
                write_trace(trip.trace, out / f"{sc.title}.parquet")
            if route not in seen_routes:  # a profile of each route's first vehicle
                from tripsim.report.plots import trip_profile_figure

                seen_routes.add(route)
                save_figure(trip_profile_figure(trip.trace, trip.summary),
                            out / f"{sc.title}.png")
            s = trip.summary.to_dict()
            trips[sc.title] = s
            rows.append({"trip": route, "vehicle": s["vehicle"], **{k: s[k] for k in _ROW_KEYS}})
        elif sc.kind == "fleet":
            _fleet_result(sc, result, inputs, fleets, out)
        else:
            plans[sc.title], text = _plan_result(sc, result, inputs, out)
            plan_texts.append(text)
        step(f"{sc.title} ({sc.kind})")
    return rows, trips, fleets, plans, plan_texts


def _fleet_result(sc: Any, result: Any, inputs: Any, fleets: dict, out: Path) -> None:
    from tripsim.io.export import write_table
    from tripsim.report.plots import fleet_monthly_figure, fleet_soc_figure

    year = result.fleet
    if _SOLAR_YEAR in sc.title:
        main, key = sc.title.split(_SOLAR_YEAR)
        fleets.setdefault(main, {}).setdefault("solar_year_solar_only", {})[key] = {
            k: year.totals[k] for k in ("solar_kwh", "solar_km", "share_closed", "days_closed",
                                         "days_stranded", "drive_kwh", "panel_m2")}
        return
    title = f"{inputs.vehicle.name}, {sc.title}"
    save_figure(fleet_soc_figure(year.daily, title), out / f"{sc.title}--soc_year.png")
    save_figure(fleet_monthly_figure(year.daily, title), out / f"{sc.title}--monthly.png")
    write_table(year.daily, out / f"{sc.title}--daily.csv")
    fleets.setdefault(sc.title, {}).update(
        {"policy": sc.fleet.policy, "schedule": sc.fleet.schedule,
         "vehicle": inputs.vehicle.name, "totals": year.totals})


def _plan_result(sc: Any, result: Any, inputs: Any, out: Path) -> tuple[dict, str]:
    from tripsim.io.export import write_plan, write_text
    from tripsim.io.web_assets import read_leaflet
    from tripsim.report.mapview import MapAssets, plan_map_html

    plan = result.plan
    write_plan(plan.to_dict(), plan.stops_table(), None,
               json_path=out / f"{sc.title}--plan.json", stops_csv=out / f"{sc.title}--stops.csv")
    if plan.trip is not None:
        write_text(plan_map_html(plan, plan.sites,
                                 title=f"{sc.description or sc.title} — {inputs.vehicle.name}",
                                 assets=MapAssets.inline(*read_leaflet())),
                   out / f"{sc.title}--map.html")
    speeds = result.payload.get("speed_factors", [])
    text = (f"\nplan {sc.title} ({inputs.vehicle.name}): {sc.description or ''}\n"
            + format_plan(plan, compare_speeds(speeds)).split("\n\ncaution")[0])
    return {**plan.to_dict(), "vehicle": inputs.vehicle.name, "speed_factors": speeds}, text


def run_coastdown_demo(here: Path, out: Path) -> tuple[dict, str]:
    """Fit the demo's coast-down runs: write the figure and the ``[body]`` snippet."""
    from tripsim.claims.coastdown import fit_road_load
    from tripsim.io.coastdown_file import read_coastdown_runs
    from tripsim.io.export import write_text
    from tripsim.report.coastdown_plots import coastdown_figure
    from tripsim.report.coastdown_text import body_snippet, demo_coastdown_text

    vehicle = read_vehicle(here / "vehicles" / "harbour_crossover.toml")
    runs = read_coastdown_runs(here / "coastdown_runs.csv")
    runs.attrs["source"] = "routes_demo/coastdown_runs.csv"
    fit = fit_road_load(runs, vehicle)
    save_figure(coastdown_figure(fit), out / "coastdown--harbour_crossover.png")
    write_text(body_snippet(fit, vehicle), out / "coastdown--harbour_crossover--body.toml")
    result = {**fit.to_dict(), "vehicle_file": {"cda_m2": vehicle.body.drag_area_m2,
                                                "crr": vehicle.body.crr}}
    return result, demo_coastdown_text(result)


def _product_runs(here: Path, kind: str) -> list[Any]:
    """The demo's product-team scenarios of one kind, run: (scenario, result) each.

    ``claims.toml`` is a scenario file (``tripsim run``); the runner reads and runs it.
    """
    from tripsim.io.scenario_file import read_scenarios
    from tripsim.runner import load_inputs, run

    out = []
    for sc in read_scenarios(here / "claims.toml"):
        if sc.kind == kind:
            out.append((sc, run(sc, load_inputs(sc, base=here))))
    return out


def run_claim_demo(here: Path, out: Path) -> tuple[dict, str]:
    """Check the demo's range claims (``claims.toml``): write their figures; return results."""
    from tripsim.report.claim_plots import claim_figure
    from tripsim.report.claim_text import demo_claim_text

    results, texts = {}, []
    for sc, result in _product_runs(here, "claim"):
        save_figure(claim_figure(result.claim), out / f"claim--{sc.name}.png")
        results[sc.name] = result.payload
        texts.append(demo_claim_text(result.payload))
    return results, "\n".join(texts)


def run_log_demo(here: Path, out: Path) -> tuple[dict, str]:
    """Drive the demo's logged drives at their recorded speeds; compare and calibrate."""
    from tripsim.report.claim_plots import log_figure
    from tripsim.report.claim_text import demo_log_text

    results, texts = {}, []
    for sc, result in _product_runs(here, "simulate"):
        logged = result.logged
        save_figure(log_figure(logged), out / f"log--{sc.name}.png")
        payload = {**logged.to_dict(), "source": f"routes_demo/{sc.route.file}",
                   "summary": logged.trip.summary.to_dict()}
        results[sc.name] = payload
        texts.append(demo_log_text(payload))
    return results, "\n".join(texts)


@contextlib.contextmanager
def _beside(fn: Callable[..., Any], *args: Any) -> Iterator[Callable[[], Any]]:
    """Run ``fn(*args)`` in a second process while the caller goes on; yield its result getter.

    On a machine with one core (or where a process cannot be started) it runs here
    when its result is asked for.  The process is spawned (not forked: the parent
    holds threads and compiled kernels), so it pays its own imports, about a second.
    """
    import concurrent.futures
    import concurrent.futures.process
    import multiprocessing

    if (os.cpu_count() or 1) < 2:
        yield lambda: fn(*args)
        return
    try:
        pool = concurrent.futures.ProcessPoolExecutor(
            1, mp_context=multiprocessing.get_context("spawn"))
        future = pool.submit(fn, *args)
    except OSError:
        yield lambda: fn(*args)
        return

    def result() -> Any:
        try:
            return future.result()
        except concurrent.futures.process.BrokenProcessPool:  # the process died: do it here
            return fn(*args)

    try:
        yield result
    except BaseException:
        # the caller failed (or was interrupted): do not wait for the second process
        for process in list((getattr(pool, "_processes", None) or {}).values()):
            with contextlib.suppress(Exception):
                process.terminate()  # the executor has no public way to stop it in 3.11
        pool.shutdown(wait=False, cancel_futures=True)
        raise
    pool.shutdown(wait=True)


def run_demo(out: Path, *, as_json: bool = False, traces: bool = True,
             quiet: bool = False) -> int:
    """Run every demo run; write outputs under ``out``; print a table (or JSON).

    With ``traces=False`` only the summary and the figures are written (the small
    results committed in ``routes_demo/results``).  A line a step goes to standard
    error on a terminal (not with ``quiet``).
    """
    from tripsim.io.scenario_file import read_scenarios

    here = demo_dir()
    out.mkdir(parents=True, exist_ok=True)
    step = _Steps(len(read_scenarios(here / "scenarios.toml")) + 3, quiet)
    with _beside(run_claim_demo, here, out) as claim_run:  # on the second core, if any
        rows, trips, fleets, plans, plan_texts = _scenario_runs(here, out, traces, step)
        coastdown, coastdown_text = run_coastdown_demo(here, out)
        step("coast-down fit")
        claims, claims_text = claim_run()
    step("range claim")
    logs, logs_text = run_log_demo(here, out)
    step("logged drive")
    result = {"caution": CAUTION, "trips": trips, "fleets": fleets, "plans": plans,
              "coastdown": coastdown, "claims": claims, "logs": logs}
    write_json(result, out / "summary.json")
    if as_json:
        print(to_json_text(result))
        return 0
    print("tripsim demo — the invented Tamsreach region\n")
    print(demo_trip_table(rows))
    for name, f in fleets.items():
        print(demo_fleet_text(name, f))
    for text in plan_texts:
        print(text)
    print(coastdown_text)
    print(claims_text)
    print(logs_text)
    print(f"\noutputs in {out.resolve()}/ (summary.json, profiles as .png, plan maps as "
          f"--map.html{', traces as .parquet' if traces else ''})")
    print(f"\ncaution: {CAUTION}")
    return 0
