"""A daily delivery loop over a weather year: does it close on solar alone?

The loop is driven on a schedule, day after day, with the battery's energy carried
over.  Every run is driven by the one energy model (:func:`tripsim.energy.drive_runs`,
the same code :func:`tripsim.simulate.simulate` runs for one trip): its speed
profile, road load, auxiliary and cabin load and the sun on its panels follow that
day's weather at its own clock times.  Between runs the panels gain energy while
parked, and a charging policy may plug the vehicle in.  The battery is walked through
every segment of every run in time order by the one state-of-charge pass
(:func:`tripsim.battery.soc_pass`): a full battery refuses regeneration and sun, an
empty one strands the vehicle, and a cold pack has less usable energy (the energy is
kept, not lost: it becomes usable again when the pack is warm).

A stranded run is finished with an emergency charge, reported as *rescue energy*
(``rescue_wh``), separate from the energy the policy plugs in (``grid_wh``).

A day *closes on solar alone* when, with no charging at all, the vehicle drives all
its runs without running empty (no rescue energy): this is judged on a solar-only
pass of the same year whatever the charging policy, because energy a plug-in left in
the battery would otherwise count as sun.  By default the year starts from the
energy it ends with (a warm-up pass), so the first weeks are not carried by an
arbitrary initial charge.

Battery and panel sizing change capacity and solar only; the vehicle's mass is kept
(state the added mass in the vehicle file if it matters).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd

from tripsim.battery import SocPass, soc_pass
from tripsim.drive import DriveOptions
from tripsim.energy import Course, SolarOptions, drive_runs, run_capacity_wh
from tripsim.errors import RouteError, TripsimInputError
from tripsim.fleet.schedule import CLOSED_ON_SOLAR, ChargingPolicy, Schedule
from tripsim.parking import ParkedSolar, Parking, parked_solar
from tripsim.progress import Progress, quiet
from tripsim.segments import LOOP_CLOSE_M, STATION_FAR_KM, closing_gap_m, start_distance_km
from tripsim.timebase import epoch_seconds
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather, conditions_at_seconds, weather_seconds
from tripsim.zones import route_zone

__all__ = ["CLOSED_ON_SOLAR", "LOOP_CLOSE_M", "ChargingPolicy",
           "FleetResult", "Schedule", "check_loop", "fleet_year"]

#: Search ranges of the sizing: usable battery [kWh] and panel area as a multiple of
#: the vehicle's own.
BATTERY_SEARCH_KWH = (1.0, 1000.0)
PANEL_SEARCH_SCALE = (0.0, 40.0)


@dataclass(frozen=True)
class FleetResult:
    """A year of the loop: the daily table, totals, sizing and the run details.

    ``segment_soc`` (events × segments) is kept when asked for (for checks).
    """

    daily: pd.DataFrame
    totals: dict[str, Any]
    runs: pd.DataFrame = field(repr=False)
    segment_soc: np.ndarray | None = field(default=None, repr=False)
    demand_wh: np.ndarray | None = field(default=None, repr=False)


def check_loop(segments: pd.DataFrame, *, tolerance_m: float = LOOP_CLOSE_M) -> None:
    """Raise if the route does not return to its start."""
    gap = closing_gap_m(segments)
    if gap > tolerance_m:
        raise RouteError(f"the loop does not close: it ends {gap / 1000:.2f} km from its start "
                         f"(allowed {tolerance_m:.0f} m)", segments.attrs.get("source", "loop"))


def _hhmm(h: float) -> str:
    return f"{int(h % 24):02d}:{round(h % 1 * 60):02d}"


def _check_schedule(schedule: Schedule, run_h: float) -> None:
    deps = list(schedule.departures_h)
    for a, b in zip(deps, [*deps[1:], deps[0] + 24.0], strict=True):
        if a + run_h > b:
            raise TripsimInputError(
                f"the run leaving at {_hhmm(a)} takes {run_h:.2f} h and overlaps the next "
                f"departure at {_hhmm(b)}", "--schedule")


@dataclass(frozen=True)
class _Year:
    """Everything the state-of-charge pass needs, independent of battery and panel size."""

    dates: pd.DatetimeIndex
    runs: _YearRuns
    run_day: np.ndarray
    event_day: np.ndarray
    event_row: np.ndarray  # row of the runs (-1: an idle day)
    pre_gain_wh: np.ndarray  # at panel scale 1
    post_gain_wh: np.ndarray
    plug_after: np.ndarray
    event_temp_c: np.ndarray
    km: float
    seg_end_km: np.ndarray


def _departures(schedule: Schedule, dates: pd.DatetimeIndex) -> tuple[np.ndarray, np.ndarray]:
    """Day and departure (epoch seconds) of every run, at the local clock of each date."""
    days, walls = [], []
    for d, day in enumerate(dates):
        if day.weekday() in schedule.weekdays:
            for h in schedule.departures_h:
                days.append(d)
                walls.append(day.tz_localize(None) + pd.Timedelta(hours=h))
    if not days:
        raise TripsimInputError("the schedule has no operating day in the date range",
                                "--schedule")
    # a departure in the hour a clock change skips leaves at the same wall time after it;
    # in the hour that repeats it leaves at the first
    local = pd.DatetimeIndex(walls).tz_localize(dates.tz, ambiguous=np.ones(len(walls), bool),
                                                nonexistent="shift_forward")
    return np.array(days), epoch_seconds(local)


def _events(run_day: np.ndarray, n_days: int) -> tuple[np.ndarray, np.ndarray]:
    """Day and runs row of every event: the runs in order, one idle event a day without."""
    days, rows = [], []
    r = 0
    for d in range(n_days):
        if r < run_day.size and run_day[r] == d:
            while r < run_day.size and run_day[r] == d:
                days.append(d)
                rows.append(r)
                r += 1
        else:
            days.append(d)
            rows.append(-1)
    return np.array(days), np.array(rows)


def _day_mean_temp(weather: Weather, day_start_s: np.ndarray) -> np.ndarray:
    hours = day_start_s[:, None] + (np.arange(24) + 0.5)[None, :] * 3600.0
    temp = conditions_at_seconds(weather, weather_seconds(weather, hours.ravel()))["temp_c"]
    return temp.reshape(hours.shape).mean(axis=1)


#: Segment-runs driven at once: the year's runs go through the energy model in batches of
#: about this many, keeping only what the state-of-charge pass needs (memory stays flat).
BATCH_SEGMENT_RUNS = 60_000


@dataclass(frozen=True)
class _YearRuns:
    """What the year keeps of its runs (see :class:`tripsim.energy.Runs`)."""

    depart_s: np.ndarray
    demand_nosolar_wh: np.ndarray
    solar_wh: np.ndarray | None
    sums: dict[str, np.ndarray]
    temp_mean_c: np.ndarray
    duration_s: np.ndarray

    @property
    def use_wh(self) -> np.ndarray:
        """Energy traction and auxiliaries draw on each run [Wh]."""
        return self.sums["use_wh"]

    @property
    def regen_wh(self) -> np.ndarray:
        """Energy regeneration returns on each run [Wh]."""
        return self.sums["regen_wh"]

    def demand_wh(self, panel_scale: float = 1.0) -> np.ndarray:
        """Net battery demand [Wh] with the panels scaled by ``panel_scale``."""
        if self.solar_wh is None:
            return self.demand_nosolar_wh
        return self.demand_nosolar_wh - panel_scale * self.solar_wh


def _drive_year(course: Course, vehicle: Vehicle, depart_s: np.ndarray, weather: Weather,
                solar: SolarOptions, drive_opts: DriveOptions,
                progress: Progress = quiet) -> _YearRuns:
    """Every run of the year through :func:`tripsim.energy.drive_runs`, in batches."""
    n_runs, n = depart_s.size, course.n
    batch = max(1, BATCH_SEGMENT_RUNS // max(n, 1))
    demand = np.empty((n_runs, n))
    solar_wh = np.empty((n_runs, n)) if vehicle.panels else None
    sums: dict[str, np.ndarray] = {}
    temp = np.empty(n_runs)
    duration = np.empty(n_runs)
    for lo in range(0, n_runs, batch):
        hi = min(lo + batch, n_runs)
        progress("driving every run of the year", 0.05 + 0.4 * lo / n_runs)
        runs = drive_runs(course, vehicle, depart_s[lo:hi], drive_opts=drive_opts,
                          weather=weather, solar=solar)
        demand[lo:hi] = runs.demand_nosolar_wh
        if solar_wh is not None:
            solar_wh[lo:hi] = runs.solar_wh if runs.solar_wh is not None else 0.0
        for key, values in runs.sums.items():
            sums.setdefault(key, np.empty(n_runs))[lo:hi] = values
        temp[lo:hi] = runs.temp_mean_c
        duration[lo:hi] = (runs.elapsed_s[:, -1] + runs.time_s[:, -1] + course.dwell_s[-1])
    return _YearRuns(depart_s, demand, solar_wh, sums, temp, duration)


def _prepare(course: Course, vehicle: Vehicle, weather: Weather, schedule: Schedule,
             dates: pd.DatetimeIndex, parking: Parking, solar: SolarOptions,
             drive_opts: DriveOptions, lat_lon_ele: tuple[float, float, float],
             progress: Progress = quiet) -> _Year:
    run_day, depart_s = _departures(schedule, dates)
    runs = _drive_year(course, vehicle, depart_s, weather, solar, drive_opts, progress)
    run_s = runs.duration_s
    _check_schedule(schedule, float(run_s.max() / 3600.0))
    n_days = len(dates)
    bounds = epoch_seconds(pd.date_range(dates[0], periods=n_days + 1, freq="D"))
    day_start, day_end = bounds[:-1], bounds[1:]  # local days: 23 or 25 h on clock changes
    event_day, event_row = _events(run_day, n_days)
    is_run = event_row >= 0
    start = np.where(is_run, depart_s[np.maximum(event_row, 0)], day_start[event_day])
    end = np.where(is_run, start + run_s[np.maximum(event_row, 0)], start)
    last_of_day = np.r_[event_day[1:] != event_day[:-1], True]
    first_of_day = np.r_[True, event_day[1:] != event_day[:-1]]
    prev_end = np.where(first_of_day, day_start[event_day], np.r_[day_start[0], end[:-1]])
    park = _parked(vehicle, weather, parking, solar, day_start[0], day_end[-1], lat_lon_ele)
    pre = park.energy_wh(prev_end, start)
    post = np.where(last_of_day, park.energy_wh(end, day_end[event_day]), 0.0)
    temp = np.where(is_run, runs.temp_mean_c[np.maximum(event_row, 0)],
                    _day_mean_temp(weather, day_start)[event_day])
    end_km = (course.start_m + course.length_m) / 1000.0
    return _Year(dates, runs, run_day, event_day, event_row, pre, post, last_of_day, temp,
                 float(end_km[-1]), end_km)


def _parked(vehicle: Vehicle, weather: Weather, parking: Parking, solar: SolarOptions,
            first_s: float, last_s: float, place: tuple[float, float, float]) -> ParkedSolar:
    lat, lon, ele = place
    start = pd.Timestamp(first_s - 3600.0, unit="s", tz="UTC")
    end = pd.Timestamp(last_s + 3600.0, unit="s", tz="UTC")
    return parked_solar(vehicle.panels, weather, start, end, latitude=lat, longitude=lon,
                        elevation_m=ele, parking=parking, sky_model=solar.sky_model,
                        height_m=vehicle.body.height_m)


def _evaluate(year: _Year, vehicle: Vehicle, policy: ChargingPolicy, start_soc: float | None,
              *, battery_kwh: float | None = None, panel_scale: float = 1.0,
              per_segment: bool = False) -> SocPass:
    kwh = vehicle.battery.usable_kwh if battery_kwh is None else battery_kwh
    usable = run_capacity_wh(vehicle, year.event_temp_c, kwh)
    plug_wh = policy.power_kw * 1000.0 * policy.hours * vehicle.charging.efficiency
    kw = dict(full_wh=kwh * 1000.0, usable_wh=usable, rows=year.event_row,
              pre_gain_wh=panel_scale * year.pre_gain_wh,
              post_gain_wh=panel_scale * year.post_gain_wh,
              plug_after=year.plug_after & (policy.kind == "plug-below"),
              plug_below_soc=policy.threshold_soc, plug_wh=plug_wh, rescue=True)
    demand = year.runs.demand_nosolar_wh
    kw.update(solar_wh=year.runs.solar_wh, panel_scale=panel_scale)
    if start_soc is None:  # warm-up: start the year with the energy it ends with
        warm = soc_pass(demand, start_soc=1.0, per_segment=False, **kw)
        return soc_pass(demand, start_energy_wh=float(warm.energy_after_wh[-1]),
                        per_segment=per_segment, **kw)
    return soc_pass(demand, start_soc=start_soc, per_segment=per_segment, **kw)


def _run_solar_wh(runs: _YearRuns) -> np.ndarray:
    """Energy the panels offer on each run while driving [Wh]."""
    if runs.solar_wh is None:
        return np.zeros(runs.depart_s.size)
    return runs.solar_wh.sum(axis=1)


def _per_event(year: _Year, per_run: np.ndarray) -> np.ndarray:
    return np.where(year.event_row >= 0, per_run[np.maximum(year.event_row, 0)], 0.0)


def _daily(year: _Year, ev: SocPass, panel_scale: float,
           sun_only: SocPass | None = None) -> pd.DataFrame:
    n_days = len(year.dates)
    d = year.event_day
    runs = year.runs

    def by_day(values: np.ndarray) -> np.ndarray:
        return np.bincount(d, values, n_days)

    n_runs = np.bincount(year.run_day, minlength=n_days)
    use = by_day(_per_event(year, runs.use_wh))
    regen = by_day(_per_event(year, runs.regen_wh))
    solar_drive = by_day(_per_event(year, panel_scale * _run_solar_wh(runs)))
    parked = by_day(panel_scale * (year.pre_gain_wh + year.post_gain_wh))
    stranded = ev.stranded_index >= 0
    strand_km = np.full(n_days, np.nan)
    hit = np.flatnonzero(stranded)
    if hit.size:
        first_days, pos = np.unique(d[hit], return_index=True)
        strand_km[first_days] = year.seg_end_km[ev.stranded_index[hit[pos]]]
    first = np.unique(d, return_index=True)[1]
    last = np.r_[first[1:] - 1, d.size - 1]
    soc_min = np.full(n_days, np.inf)
    np.minimum.at(soc_min, d, np.where(year.event_row >= 0, ev.soc_min, ev.soc_start))
    judged = ev if sun_only is None else sun_only
    closed = (n_runs > 0) & (by_day(judged.rescue_wh) <= 1e-6)
    energy_end = ev.energy_after_wh[last]
    energy_begin = np.r_[ev.initial_energy_wh, energy_end[:-1]]
    return pd.DataFrame({
        "date": year.dates.date, "runs": n_runs, "km": n_runs * year.km,
        "use_wh": use, "regen_wh": regen, "drive_wh": use - regen,
        "solar_drive_wh": solar_drive, "solar_parked_wh": parked,
        "refused_wh": by_day(ev.refused_wh), "grid_wh": by_day(ev.grid_wh),
        "rescue_wh": by_day(ev.rescue_wh),
        "soc_start": ev.soc_start[first], "soc_min": soc_min, "soc_end": ev.soc_after[last],
        "energy_begin_wh": energy_begin, "energy_end_wh": energy_end,
        "stranded": by_day(stranded.astype(float)) > 0, "stranded_at_km": strand_km,
        "closed_on_solar": closed,
    })


def _share_closed(daily: pd.DataFrame) -> float:
    operating = daily["runs"] > 0
    return float(daily.loc[operating, "closed_on_solar"].mean()) if operating.any() else 0.0


def _bisect(fn: Any, lo: float, hi: float, target: float, *, rel_tol: float = 0.01,
            max_iter: int = 40) -> float | None:
    """Smallest x in [lo, hi] with fn(x) ≥ target, assuming fn grows with x."""
    if fn(hi) < target:
        return None
    if fn(lo) >= target:
        return lo
    for _ in range(max_iter):
        mid = 0.5 * (lo + hi)
        if fn(mid) >= target:
            hi = mid
        else:
            lo = mid
        if hi - lo <= rel_tol * hi:
            break
    return hi


def _sizing(year: _Year, vehicle: Vehicle, start_soc: float | None,
            target: float, progress: Progress = quiet) -> dict[str, Any]:
    solar_only = ChargingPolicy()  # sizing asks for closure on the sun alone
    steps = [0]

    def share(battery_kwh: float = vehicle.battery.usable_kwh, scale: float = 1.0) -> float:
        steps[0] += 1
        progress("sizing battery and panels", min(0.55 + 0.012 * steps[0], 0.99))
        ev = _evaluate(year, vehicle, solar_only, start_soc, battery_kwh=battery_kwh,
                       panel_scale=scale)
        n_days = len(year.dates)
        rescued = np.bincount(year.event_day, ev.rescue_wh, n_days)
        operating = np.bincount(year.run_day, minlength=n_days) > 0
        return float(np.mean(rescued[operating] <= 1e-6)) if operating.any() else 0.0

    battery = _bisect(lambda b: share(battery_kwh=b), *BATTERY_SEARCH_KWH, target)
    area = sum(f.area_m2 for f in vehicle.panels)
    scale = _bisect(lambda k: share(scale=k), *PANEL_SEARCH_SCALE, target) if area > 0 else None
    panel = None if scale is None else scale * area
    limit = vehicle.body.max_panel_area_m2
    return {"min_battery_kwh_for_target": battery,
            "min_panel_m2_for_target": panel,
            "battery_search_kwh": list(BATTERY_SEARCH_KWH),
            "panel_search_m2": [PANEL_SEARCH_SCALE[0] * area, PANEL_SEARCH_SCALE[1] * area],
            "max_panel_area_m2": limit,
            "panel_fits": None if panel is None or limit is None else bool(panel <= limit)}


def _totals(year: _Year, daily: pd.DataFrame, vehicle: Vehicle) -> dict[str, Any]:
    operating = daily["runs"] > 0
    drive_wh = float(daily["drive_wh"].sum())
    km = float(daily["km"].sum())
    offered = float(daily["solar_drive_wh"].sum() + daily["solar_parked_wh"].sum())
    solar_wh = max(offered - float(daily["refused_wh"].sum()), 0.0)
    wh_per_km = drive_wh / km if km > 0 else np.nan
    return {
        "days": int(operating.sum()),
        "days_in_range": len(daily),
        "days_closed": int(daily.loc[operating, "closed_on_solar"].sum()),
        "share_closed": _share_closed(daily),
        "closed_on_solar_means": CLOSED_ON_SOLAR,
        "days_stranded": int(daily["stranded"].sum()),
        "grid_kwh": float(daily["grid_wh"].sum() / 1000.0),
        "rescue_kwh": float(daily["rescue_wh"].sum() / 1000.0),
        "solar_offered_kwh": offered / 1000.0,
        "solar_kwh": solar_wh / 1000.0,
        "solar_km": solar_wh / wh_per_km if wh_per_km > 0 else 0.0,
        "drive_kwh": drive_wh / 1000.0,
        "km": km,
        "wh_per_km_before_solar": wh_per_km,
        "loop_km": year.km,
        "battery_kwh": vehicle.battery.usable_kwh,
        "panel_m2": float(sum(f.area_m2 for f in vehicle.panels)),
    }


def _warnings(segments: pd.DataFrame, weather: Weather, sizing: dict[str, Any]) -> list[str]:
    out = []
    km = start_distance_km(segments, weather.latitude, weather.longitude)
    if km > STATION_FAR_KM:
        out.append(f"the weather station is {km:.0f} km from the loop (more than "
                   f"{STATION_FAR_KM:.0f} km): its weather may not be the loop's")
    if sizing.get("panel_fits") is False:
        out.append(f"the panel area that would close the target "
                   f"({sizing['min_panel_m2_for_target']:.1f} m²) is more than the vehicle "
                   f"can carry ({sizing['max_panel_area_m2']:.1f} m²)")
    return out


def fleet_year(
    segments: pd.DataFrame,
    vehicle: Vehicle,
    weather: Weather,
    *,
    schedule: Schedule | None = None,
    start_date: str | pd.Timestamp = "2026-01-01",
    days: int = 365,
    policy: ChargingPolicy | None = None,
    parking: Parking | None = None,
    solar: SolarOptions | None = None,
    drive: DriveOptions | None = None,
    start_soc: float | None = None,
    target_share: float = 0.9,
    size_search: bool = True,
    default_speed_kph: float | None = None,
    keep_segments: bool = False,
    progress: Progress = quiet,
) -> FleetResult:
    """Drive a loop day by day over a weather year.

    Parameters
    ----------
    segments : pandas.DataFrame
        The loop (must end within :data:`LOOP_CLOSE_M` of its start).
    vehicle : Vehicle
        The vehicle, with its panels.
    weather : Weather
        A typical year (or a span covering the dates).
    schedule : Schedule, optional
        Default: one run at 08:00, Monday to Friday, local time of the loop
        (:func:`tripsim.zones.route_zone`).
    start_date : date, default 2026-01-01
        First day (local to the schedule).
    days : int, default 365
        Number of days.
    policy : ChargingPolicy, optional
        Default solar-only.
    parking : Parking, optional
        Orientation and shade while parked.
    solar : SolarOptions, optional
        Shading along the route and sky model.
    drive : DriveOptions, optional
        Driver behaviour.
    start_soc : float, optional
        State of charge on the first morning; None starts the year where it ends.
    target_share : float, default 0.9
        Share of operating days that must close on solar alone, for the sizing.
    size_search : bool, default True
        Search the smallest battery and panel area that reach ``target_share``.
    default_speed_kph : float, optional
        Speed on segments with no known limit. [km/h]
    keep_segments : bool, default False
        Keep the state of charge after every segment of every event and the runs'
        demand (for checks; memory grows with runs × segments).
    progress : callable, optional
        ``progress(stage, fraction)`` as the work goes (:mod:`tripsim.progress`).

    Returns
    -------
    FleetResult
        ``daily`` (one row a day), ``totals`` (see DEVELOPERS.md), ``runs``.
    """
    check_loop(segments)
    if not 1 <= days <= 3660:
        raise TripsimInputError(f"days = {days}: expected 1 to 3660", "--days")
    if not (np.isfinite(target_share) and 0.0 < target_share <= 1.0):
        raise TripsimInputError(f"target share {target_share} must be in (0, 1]", "--target")
    if start_soc is not None and not (np.isfinite(start_soc) and 0.0 < start_soc <= 1.0):
        raise TripsimInputError(f"start SoC {start_soc} must be in (0, 1]", "--start-soc")
    schedule = schedule or Schedule(zone=route_zone(segments).key)
    policy = policy or ChargingPolicy()
    parking = parking or Parking()
    solar = solar or SolarOptions()
    drive_opts = drive or DriveOptions()
    tz = schedule.tzinfo
    try:
        first = pd.Timestamp(start_date)
    except ValueError:
        raise TripsimInputError(f"{start_date!r} is not a date", "--start-date") from None
    dates = pd.date_range(first.tz_localize(None).normalize().tz_localize(tz), periods=days,
                          freq="D")
    course = Course.from_segments(segments, vehicle, drive_opts, default_speed_kph)
    place = (float(segments["lat_deg"].iloc[0]), float(segments["lon_deg"].iloc[0]),
             float(segments["elevation_m"].iloc[0]))
    year = _prepare(course, vehicle, weather, schedule, dates, parking, solar, drive_opts, place,
                    progress)
    progress("state of charge through the year", 0.5)
    ev = _evaluate(year, vehicle, policy, start_soc, per_segment=keep_segments)
    sun_only = ev if policy.kind == "solar-only" else _evaluate(year, vehicle, ChargingPolicy(),
                                                                start_soc)
    daily = _daily(year, ev, 1.0, sun_only)
    totals = _totals(year, daily, vehicle)
    totals["target_share"] = target_share
    sizing: dict[str, Any] = {"min_battery_kwh_for_target": None,
                              "min_panel_m2_for_target": None}
    if size_search:
        sizing = _sizing(year, vehicle, start_soc, target_share, progress)
    totals.update(sizing)
    totals["warnings"] = _warnings(segments, weather, sizing)
    progress("done", 1.0)
    runs = year.runs
    run_event = np.flatnonzero(year.event_row >= 0)
    table = pd.DataFrame({
        "depart": pd.to_datetime(runs.depart_s, unit="s", utc=True).tz_convert(tz),
        "day": year.run_day, "soc_start": ev.soc_start[run_event],
        "soc_end": ev.soc_end[run_event], "soc_min": ev.soc_min[run_event],
        "stranded": ev.stranded_index[run_event] >= 0,
        "drive_wh": runs.demand_nosolar_wh.sum(axis=1), "solar_drive_wh": _run_solar_wh(runs),
        "temp_mean_c": runs.temp_mean_c})
    return FleetResult(daily=daily, totals=totals, runs=table,
                       segment_soc=ev.soc[run_event] if keep_segments else None,
                       demand_wh=runs.demand_wh() if keep_segments else None)
