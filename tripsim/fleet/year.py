"""A daily delivery loop over a weather year: does it close on solar alone?

The loop is driven on a schedule, day after day, with the state of charge carried
over.  Every run takes that day's weather at its own clock times (temperature, air
density and wind in the road load and the auxiliary load; sun on the panels), and
the panels gain energy while parked.  A charging policy may plug the vehicle in.

How the year is computed, and what it leaves out:

* The loop's geometry and speed profile are computed once (at the year's mean
  temperature, calm): the profile depends on weather only where the motor's power
  limits acceleration, which ordinary delivery driving does not reach.
* Each run's road load, auxiliary load and solar power are computed for all runs at
  once as arrays (runs × segments).  Solar power while driving is evaluated on time
  slots of about 30 s of driving (the heading of a slot is the circular mean of its
  segments'), and the sun's position on a 10-minute grid; ``tripsim bench`` reports
  the error both add against segment-by-segment evaluation.
* The state of charge walks through every segment of every run in time order (a
  compiled loop), with parked solar and charging between runs, so a full battery
  refuses regeneration and sun, and an empty one strands the vehicle.  A stranded
  run is finished with an emergency charge, counted as grid energy.
* Battery and panel sizing change capacity and solar only; the vehicle's mass is
  kept (state the added mass in the vehicle file if it matters).

A day *closes on solar alone* when, with no charging at all, the vehicle drives all
its runs without running empty: this is judged on a solar-only pass of the same year
whatever the charging policy, because energy a plug-in left in the battery would
otherwise count as sun.  The policy decides the grid energy and the stranded days
reported beside it.  By default the year starts from the state of charge it ends
with (a warm-up pass), so the first weeks are not carried by an arbitrary initial
charge.
"""

from __future__ import annotations

import re
from dataclasses import dataclass, field
from typing import Any

import numba
import numpy as np
import pandas as pd

from tripsim import air, cabin, roadload
from tripsim.errors import RouteError, TripsimInputError
from tripsim.parking import ParkedSolar, Parking
from tripsim.powertrain import split_wheel_power
from tripsim.segments import GEOD
from tripsim.simulate import Conditions, SolarOptions, simulate
from tripsim.solar import SunPosition, facet_power_w, sky_for, sun_position
from tripsim.units import J_PER_WH
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather, conditions_at, conditions_at_seconds, time_coordinate

__all__ = ["ChargingPolicy", "FleetResult", "Schedule", "check_loop", "fleet_year"]

_DAYS = {"mon": 0, "tue": 1, "wed": 2, "thu": 3, "fri": 4, "sat": 5, "sun": 6}
LOOP_CLOSE_M = 250.0
_SLOT_S = 30.0


@dataclass(frozen=True)
class Schedule:
    """When the loop is driven.

    Parameters
    ----------
    departures_h : tuple of float
        Departure times, hours after local midnight (8.5 = 08:30).
    weekdays : frozenset of int
        Operating days, 0 = Monday.
    utc_offset_h : float, default 0
        The schedule's local standard time. [h]
    """

    departures_h: tuple[float, ...] = (8.0,)
    weekdays: frozenset[int] = frozenset(range(5))
    utc_offset_h: float = 0.0

    def __post_init__(self) -> None:
        if not self.departures_h:
            raise TripsimInputError("a schedule needs at least one departure", "--schedule")
        if any(not 0.0 <= h < 24.0 for h in self.departures_h):
            raise TripsimInputError("departure times must be within 00:00-23:59", "--schedule")
        if sorted(self.departures_h) != list(self.departures_h):
            raise TripsimInputError("departure times must be in order", "--schedule")
        if not self.weekdays or not self.weekdays <= set(range(7)):
            raise TripsimInputError("operating days must be Mon..Sun", "--schedule")

    @classmethod
    def parse(cls, text: str, utc_offset_h: float = 0.0) -> Schedule:
        """Parse ``"Mon-Fri@08:00,13:30"`` (days optional: ``"07:00"`` means every day)."""
        days_text, _, times_text = text.rpartition("@")
        days: set[int] = set()
        for part in filter(None, (p.strip().lower() for p in (days_text or "mon-sun").split(","))):
            lo, _, hi = part.partition("-")
            if lo[:3] not in _DAYS or (hi and hi[:3] not in _DAYS):
                raise TripsimInputError(f"unknown day {part!r}; use Mon..Sun, e.g. Mon-Fri",
                                        "--schedule")
            a, b = _DAYS[lo[:3]], _DAYS[(hi or lo)[:3]]
            days.update(range(a, b + 1) if a <= b else [*range(a, 7), *range(0, b + 1)])
        hours = []
        for t in filter(None, (p.strip() for p in times_text.split(","))):
            m = re.fullmatch(r"(\d{1,2}):(\d{2})", t)
            if not m or int(m[1]) > 23 or int(m[2]) > 59:
                raise TripsimInputError(f"departure {t!r} is not HH:MM", "--schedule")
            hours.append(int(m[1]) + int(m[2]) / 60.0)
        return cls(tuple(hours), frozenset(days), utc_offset_h)


@dataclass(frozen=True)
class ChargingPolicy:
    """What the dispatcher does when the sun is not enough.

    Parameters
    ----------
    kind : {"solar-only", "plug-below"}
        Never plug in; or plug in at the end of a day when the state of charge
        is below ``threshold_soc``.
    threshold_soc : float, default 0.3
        For "plug-below".
    power_kw : float, default 7.4
        Charger power at the plug (7.4 kW: single-phase 32 A at 230 V). [kW]
    hours : float, default 10
        Hours plugged in overnight. [h]
    """

    kind: str = "solar-only"
    threshold_soc: float = 0.3
    power_kw: float = 7.4
    hours: float = 10.0

    def __post_init__(self) -> None:
        if self.kind not in ("solar-only", "plug-below"):
            raise TripsimInputError(f"policy {self.kind!r}; expected solar-only or "
                                    "plug-below:SOC", "--policy")
        if not 0.0 < self.threshold_soc <= 1.0 or self.power_kw <= 0 or self.hours <= 0:
            raise TripsimInputError("plug-below needs 0 < SoC ≤ 1, power > 0 and hours > 0",
                                    "--policy")

    @classmethod
    def parse(cls, text: str) -> ChargingPolicy:
        """Parse ``"solar-only"`` or ``"plug-below:0.3[:7.4[:10]]"`` (SoC, kW, hours)."""
        kind, *rest = text.split(":")
        if kind == "solar-only" and not rest:
            return cls()
        if kind != "plug-below" or not 1 <= len(rest) <= 3:
            raise TripsimInputError(f"{text!r}: expected solar-only or plug-below:SOC[:KW[:H]]",
                                    "--policy")
        try:
            values = [float(x) for x in rest]
        except ValueError:
            raise TripsimInputError(f"{text!r}: numbers expected after plug-below",
                                    "--policy") from None
        names = ("threshold_soc", "power_kw", "hours")
        return cls("plug-below", **dict(zip(names, values, strict=False)))


@dataclass(frozen=True)
class FleetResult:
    """A year of the loop: the daily table, totals, sizing and the run details."""

    daily: pd.DataFrame
    totals: dict[str, Any]
    runs: pd.DataFrame = field(repr=False)


def check_loop(segments: pd.DataFrame, *, tolerance_m: float = LOOP_CLOSE_M) -> None:
    """Raise if the route does not return to its start."""
    lat0, lon0 = segments["lat_deg"].iloc[0], segments["lon_deg"].iloc[0]
    lat1, lon1 = segments["lat_end_deg"].iloc[-1], segments["lon_end_deg"].iloc[-1]
    gap = GEOD.inv(lon0, lat0, lon1, lat1)[2]
    if gap > tolerance_m:
        raise RouteError(f"the loop does not close: it ends {gap / 1000:.2f} km from its start "
                         f"(allowed {tolerance_m:.0f} m)", segments.attrs.get("source", "loop"))


def _check_schedule(schedule: Schedule, run_h: float) -> None:
    deps = list(schedule.departures_h)
    for a, b in zip(deps, [*deps[1:], deps[0] + 24.0], strict=True):
        if a + run_h > b:
            raise TripsimInputError(
                f"the run leaving at {int(a):02d}:{round(a % 1 * 60):02d} takes {run_h:.2f} h and "
                f"overlaps the next departure at {int(b % 24):02d}:{round(b % 1 * 60):02d}",
                "--schedule")


def _circular_mean_deg(deg: np.ndarray, weight: np.ndarray, group: np.ndarray,
                       n_groups: int) -> np.ndarray:
    rad = np.radians(deg)
    s = np.bincount(group, weight * np.sin(rad), n_groups)
    c = np.bincount(group, weight * np.cos(rad), n_groups)
    return np.degrees(np.arctan2(s, c)) % 360.0


@numba.njit(cache=True)
def _year_pass(demand_wh, gap_solar_wh, day_of_run, day_end_solar_wh, capacity_wh, start_soc,
               plug, threshold, plug_wh):  # pragma: no cover - compiled
    """Walk every segment of every run in order; see :func:`fleet_year`."""
    n_runs, n_seg = demand_wh.shape
    n_days = day_end_solar_wh.size
    soc_start = np.zeros(n_runs)
    soc_end = np.zeros(n_runs)
    soc_min = np.zeros(n_runs)
    stranded_at = np.full(n_runs, -1)
    rescue_wh = np.zeros(n_runs)
    solar_refused_wh = np.zeros(n_runs)
    day_grid_wh = np.zeros(n_days)
    day_soc_end = np.zeros(n_days)
    stored = start_soc * capacity_wh[0]
    r = 0
    for d in range(n_days):
        while r < n_runs and day_of_run[r] == d:
            cap = capacity_wh[r]
            gain = gap_solar_wh[r]
            room = cap - stored
            take = gain if gain < room else room
            if take < 0.0:
                take = 0.0
            solar_refused_wh[r] += gain - take
            stored += take
            soc_start[r] = stored / cap
            low = stored
            for i in range(n_seg):
                x = demand_wh[r, i]
                if x >= 0.0:
                    if x > stored:
                        if stranded_at[r] < 0:
                            stranded_at[r] = i
                        rescue_wh[r] += x - stored
                        stored = 0.0
                    else:
                        stored -= x
                else:
                    room = cap - stored
                    take = -x if -x < room else room
                    solar_refused_wh[r] += -x - take
                    stored += take
                if stored < low:
                    low = stored
            soc_end[r] = stored / cap
            soc_min[r] = low / cap
            r += 1
        cap = capacity_wh[r - 1] if r > 0 else capacity_wh[0]
        gain = day_end_solar_wh[d]
        room = cap - stored
        stored += gain if gain < room else (room if room > 0.0 else 0.0)
        if plug and stored < threshold * cap:
            add = plug_wh if plug_wh < cap - stored else cap - stored
            day_grid_wh[d] = add
            stored += add
        day_soc_end[d] = stored / cap
    return (soc_start, soc_end, soc_min, stranded_at, rescue_wh, solar_refused_wh, day_grid_wh,
            day_soc_end)


@dataclass(frozen=True)
class _Year:
    """Everything the state-of-charge pass needs, independent of battery and panel size."""

    dates: pd.DatetimeIndex
    run_day: np.ndarray
    run_depart: pd.DatetimeIndex
    demand_nosolar_wh: np.ndarray  # runs × segments
    drive_solar_wh: np.ndarray  # runs × segments, at scale 1
    gap_solar_wh: np.ndarray  # per run: parked gain since the previous event, at scale 1
    day_end_solar_wh: np.ndarray  # per day: parked gain after the last run to day's end
    run_temp_c: np.ndarray
    km: float
    seg_end_km: np.ndarray


def _runs(schedule: Schedule, dates: pd.DatetimeIndex) -> tuple[np.ndarray, Any]:
    rows = [(d, day + pd.Timedelta(hours=h)) for d, day in enumerate(dates)
            if day.weekday() in schedule.weekdays for h in schedule.departures_h]
    if not rows:
        raise TripsimInputError("the schedule has no operating day in the date range",
                                "--schedule")
    day_idx = np.array([r[0] for r in rows])
    departs = pd.DatetimeIndex([r[1] for r in rows])
    return day_idx, departs


def _prepare(segments: pd.DataFrame, vehicle: Vehicle, weather: Weather, schedule: Schedule,
             dates: pd.DatetimeIndex, parking: Parking, solar: SolarOptions, drive: Any,
             default_speed_kph: float | None) -> _Year:
    base_temp = float(np.mean(weather.state["temp_c"]))
    base = simulate(segments, vehicle, conditions=Conditions(temp_c=base_temp), drive=drive,
                    default_speed_kph=default_speed_kph).trace
    col = {c: base[c].to_numpy() for c in base.columns if c != "clock"}
    total_s = col["time_s"] + col["dwell_s"]
    _check_schedule(schedule, float(total_s.sum() / 3600.0))
    run_day, departs = _runs(schedule, dates)
    # weather on ~30 s slots of driving, gathered back to segments
    slot = np.floor((col["elapsed_s"] + 0.5 * total_s) / _SLOT_S).astype(np.int64)
    n_slots = int(slot.max()) + 1
    slot_mid = (np.arange(n_slots) + 0.5) * _SLOT_S
    x0 = time_coordinate(weather, departs)
    sky = {k: v.reshape(len(departs), n_slots) for k, v in conditions_at_seconds(
        weather, (x0[:, None] + slot_mid[None, :]).ravel()).items()}
    seg_ele = col["elevation_m"] + 0.5 * col["grade"] * col["length_m"]
    slot_ele = np.bincount(slot, seg_ele * total_s, n_slots) / np.maximum(
        np.bincount(slot, total_s, n_slots), 1e-9)
    pressure = np.where(np.isnan(sky["pressure_pa"]),
                        air.pressure_from_elevation(slot_ele)[None, :], sky["pressure_pa"])
    density = air.air_density(sky["temp_c"], pressure)[:, slot]
    wind = air.wind_at_height(sky["wind_speed_mps"], vehicle.body.height_m)[:, slot]
    headwind = air.headwind_mps(wind, sky["wind_from_deg"][:, slot], col["heading_deg"][None, :])
    v0, v1, speed = col["v_start_mps"], col["v_end_mps"], col["speed_mps"]
    fixed = col["f_rolling_n"] + col["f_grade_n"] + col["f_inertia_n"]
    f_total = roadload.aero_force_n(density, vehicle.body.drag_area_m2,
                                    roadload.mean_square_air_speed(v0, v1, headwind))
    f_total += fixed
    split = split_wheel_power(vehicle.drivetrain, f_total * speed, speed, f_total)
    aux = cabin.auxiliary_power_w(vehicle.auxiliary, sky["temp_c"])[:, slot]
    demand = (split.battery_w * col["time_s"] + aux * total_s) / J_PER_WH
    sun = _year_sun(dates, float(col["lat_deg"].mean()), float(col["lon_deg"].mean()),
                    float(col["elevation_m"].mean()))
    drive_solar = _drive_solar_wh(vehicle, sun, sky, departs, slot, slot_mid, total_s,
                                  col["heading_deg"], speed, solar)
    gap, day_end = _parked_gaps(vehicle, weather, sun, dates, departs, run_day, total_s.sum(),
                                parking, solar)
    end_km = (col["start_m"] + col["length_m"]) / 1000.0
    return _Year(dates, run_day, departs, demand, drive_solar, gap, day_end,
                 sky["temp_c"].mean(axis=1), float(end_km[-1]), end_km)


@dataclass(frozen=True)
class _Sun:
    """Sun position tabulated every 10 minutes over the date range (epoch seconds)."""

    epoch_s: np.ndarray
    zenith_deg: np.ndarray
    sin_az: np.ndarray
    cos_az: np.ndarray

    def at(self, times: pd.DatetimeIndex) -> SunPosition:
        t = (times.tz_convert("UTC") - _EPOCH).total_seconds().to_numpy()
        az = np.degrees(np.arctan2(np.interp(t, self.epoch_s, self.sin_az),
                                   np.interp(t, self.epoch_s, self.cos_az))) % 360.0
        return SunPosition(np.interp(t, self.epoch_s, self.zenith_deg), az)


_EPOCH = pd.Timestamp("1970-01-01", tz="UTC")
SUN_STEP_S = 600.0


def _year_sun(dates: pd.DatetimeIndex, lat: float, lon: float,
              elevation_m: float) -> _Sun:
    """SPA on a 10-minute grid; night samples (sun below the horizon all hour) get 180°."""
    times = pd.date_range(dates[0].tz_convert("UTC") - pd.Timedelta(hours=1),
                          dates[-1].tz_convert("UTC") + pd.Timedelta(days=1, hours=1),
                          freq=pd.Timedelta(seconds=SUN_STEP_S))
    hour_local = ((times.hour + times.minute / 60.0 + lon / 15.0) % 24.0).to_numpy()
    maybe_day = np.abs(hour_local - 12.0) < 9.0  # the sun is down 9 h from solar noon
    zen = np.full(times.size, 180.0)
    sin_az = np.zeros(times.size)
    cos_az = np.ones(times.size)
    pos = sun_position(times[maybe_day], lat, lon, elevation_m=elevation_m)
    zen[maybe_day] = pos.zenith_deg
    sin_az[maybe_day] = np.sin(np.radians(pos.azimuth_deg))
    cos_az[maybe_day] = np.cos(np.radians(pos.azimuth_deg))
    return _Sun((times - _EPOCH).total_seconds().to_numpy(), zen, sin_az, cos_az)


def _drive_solar_wh(vehicle: Vehicle, sun: _Sun, sky: dict[str, np.ndarray],
                    departs: pd.DatetimeIndex, slot: np.ndarray, slot_mid: np.ndarray,
                    total_s: np.ndarray, heading_deg: np.ndarray, speed: np.ndarray,
                    solar: SolarOptions) -> np.ndarray:
    n_runs, n_slots = len(departs), slot_mid.size
    if not vehicle.panels:
        return np.zeros((n_runs, slot.size))
    heading = _circular_mean_deg(heading_deg, total_s, slot, n_slots)
    times = pd.DatetimeIndex(np.repeat(departs, n_slots)) + pd.to_timedelta(
        np.tile(slot_mid, n_runs), unit="s")
    light = sky_for(times, sun.at(times), sky["ghi_w_m2"].ravel(), sky["dni_w_m2"].ravel(),
                    sky["dhi_w_m2"].ravel(), sky["temp_c"].ravel(), model=solar.sky_model)
    slot_speed = np.bincount(slot, speed * total_s, n_slots) / np.maximum(
        np.bincount(slot, total_s, n_slots), 1e-9)
    power = facet_power_w(vehicle.panels, np.tile(heading, n_runs), light,
                          air_speed_mps=np.tile(slot_speed, n_runs), shading=solar.shading,
                          model=solar.sky_model, albedo=solar.albedo).reshape(n_runs, n_slots)
    return power[:, slot] * total_s[None, :] / J_PER_WH


def _parked_gaps(vehicle: Vehicle, weather: Weather, sun: _Sun, dates: pd.DatetimeIndex,
                 departs: pd.DatetimeIndex, run_day: np.ndarray, run_s: float,
                 parking: Parking, solar: SolarOptions) -> tuple[np.ndarray, np.ndarray]:
    n_runs, n_days = len(departs), len(dates)
    if not vehicle.panels:
        return np.zeros(n_runs), np.zeros(n_days)
    times = pd.to_datetime(sun.epoch_s, unit="s", utc=True)
    sky = conditions_at(weather, times)
    light = sky_for(times, SunPosition(sun.zenith_deg,
                                       np.degrees(np.arctan2(sun.sin_az, sun.cos_az)) % 360.0),
                    sky["ghi_w_m2"], sky["dni_w_m2"], sky["dhi_w_m2"], sky["temp_c"],
                    model=solar.sky_model)
    power = facet_power_w(vehicle.panels, parking.heading_deg, light,
                          air_speed_mps=sky["wind_speed_mps"], shading=parking.shading,
                          model=solar.sky_model, albedo=solar.albedo)
    park = ParkedSolar.from_power(sun.epoch_s, power)
    dep_s = (departs.tz_convert("UTC") - _EPOCH).total_seconds().to_numpy()
    day_start = (dates.tz_convert("UTC") - _EPOCH).total_seconds().to_numpy()
    day_end = day_start + 86400.0
    # a run's gap starts at the previous event: the end of the previous run on the same day,
    # else the start of its day (the previous day's gain up to midnight is in day_end)
    prev_end = np.where(np.r_[False, run_day[1:] == run_day[:-1]],
                        np.r_[0.0, dep_s[:-1] + run_s], day_start[run_day])
    gap = park.energy_wh(prev_end, dep_s)
    last_end = np.full(n_days, np.nan)
    last_end[run_day] = dep_s + run_s  # the last assignment per day wins: runs are in order
    day_from = np.where(np.isnan(last_end), day_start, last_end)
    return gap, park.energy_wh(day_from, day_end)


def _evaluate(year: _Year, vehicle: Vehicle, policy: ChargingPolicy, start_soc: float | None,
              *, battery_kwh: float | None = None, panel_scale: float = 1.0) -> dict[str, Any]:
    usable = vehicle.battery.usable_kwh if battery_kwh is None else battery_kwh
    factors = np.interp(year.run_temp_c, vehicle.battery.capacity_vs_temp.x,
                        vehicle.battery.capacity_vs_temp.y)
    capacity = usable * 1000.0 * factors
    demand = year.demand_nosolar_wh - panel_scale * year.drive_solar_wh
    plug_wh = policy.power_kw * 1000.0 * policy.hours * vehicle.charging.efficiency
    args = (demand, panel_scale * year.gap_solar_wh, year.run_day,
            panel_scale * year.day_end_solar_wh, capacity)
    tail = (policy.kind == "plug-below", policy.threshold_soc, plug_wh)
    first = 1.0 if start_soc is None else start_soc
    out = _year_pass(*args, first, *tail)
    if start_soc is None:  # warm-up: start the year where it ends
        out = _year_pass(*args, float(out[7][-1]), *tail)
    keys = ("soc_start", "soc_end", "soc_min", "stranded_at", "rescue_wh", "solar_refused_wh",
            "day_grid_wh", "day_soc_end")
    return dict(zip(keys, out, strict=True))


def _daily(year: _Year, ev: dict[str, Any], panel_scale: float,
           solar_only: dict[str, Any] | None = None) -> pd.DataFrame:
    n_days = len(year.dates)
    d = year.run_day
    per_run_drive = year.demand_nosolar_wh.sum(axis=1)
    per_run_solar = panel_scale * year.drive_solar_wh.sum(axis=1)

    def by_day(values: np.ndarray) -> np.ndarray:
        return np.bincount(d, values, n_days)

    runs = np.bincount(d, minlength=n_days)
    stranded = ev["stranded_at"] >= 0
    km_at = np.where(stranded, year.seg_end_km[np.maximum(ev["stranded_at"], 0)], np.nan)
    first_km = pd.Series(km_at).groupby(d).first().reindex(range(n_days)).to_numpy()
    soc_min = pd.Series(ev["soc_min"]).groupby(d).min().reindex(range(n_days)).to_numpy()
    soc_start = pd.Series(ev["soc_start"]).groupby(d).first().reindex(range(n_days)).to_numpy()
    grid = ev["day_grid_wh"] + by_day(ev["rescue_wh"])
    sun_only = ev if solar_only is None else solar_only
    closed = (runs > 0) & (by_day(sun_only["rescue_wh"]) <= 1e-6)
    parked = panel_scale * (by_day(year.gap_solar_wh) + year.day_end_solar_wh)
    return pd.DataFrame({
        "date": year.dates.date, "runs": runs, "km": runs * year.km,
        "drive_wh": by_day(per_run_drive), "solar_drive_wh": by_day(per_run_solar),
        "solar_parked_wh": parked, "solar_refused_wh": by_day(ev["solar_refused_wh"]),
        "soc_start": soc_start, "soc_min": soc_min, "soc_end": ev["day_soc_end"],
        "grid_wh": grid, "stranded": by_day(stranded.astype(float)) > 0,
        "stranded_at_km": first_km,
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
    drive: Any = None,
    start_soc: float | None = None,
    target_share: float = 0.9,
    size_search: bool = True,
    default_speed_kph: float | None = None,
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
        Default: one run at 08:00, Monday to Friday, in the weather's time zone.
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

    Returns
    -------
    FleetResult
        ``daily`` (one row a day), ``totals`` (see DEVELOPERS.md), ``runs``.
    """
    check_loop(segments)
    if not 1 <= days <= 3660:
        raise TripsimInputError(f"days = {days}: expected 1 to 3660", "--days")
    if not 0.0 < target_share <= 1.0:
        raise TripsimInputError(f"target share {target_share} must be in (0, 1]", "--target")
    if start_soc is not None and not 0.0 < start_soc <= 1.0:
        raise TripsimInputError(f"start SoC {start_soc} must be in (0, 1]", "--start-soc")
    schedule = schedule or Schedule(utc_offset_h=weather.utc_offset_h)
    policy = policy or ChargingPolicy()
    parking = parking or Parking()
    solar = solar or SolarOptions()
    tz = _fixed_tz(schedule.utc_offset_h)
    dates = pd.date_range(pd.Timestamp(start_date).tz_localize(None).tz_localize(tz),
                          periods=days, freq="D")
    year = _prepare(segments, vehicle, weather, schedule, dates, parking, solar, drive,
                    default_speed_kph)
    ev = _evaluate(year, vehicle, policy, start_soc)
    sun_only = ev if policy.kind == "solar-only" else _evaluate(year, vehicle, ChargingPolicy(),
                                                                start_soc)
    daily = _daily(year, ev, 1.0, sun_only)
    totals = _totals(year, daily, vehicle)
    totals["target_share"] = target_share
    totals["min_battery_kwh_for_target"] = None
    totals["min_panel_m2_for_target"] = None
    if size_search:
        totals.update(_sizing(year, vehicle, start_soc, target_share))
    runs = pd.DataFrame({"depart": year.run_depart, "day": year.run_day,
                         "soc_start": ev["soc_start"], "soc_end": ev["soc_end"],
                         "soc_min": ev["soc_min"], "stranded": ev["stranded_at"] >= 0,
                         "drive_wh": year.demand_nosolar_wh.sum(axis=1),
                         "solar_drive_wh": year.drive_solar_wh.sum(axis=1)})
    return FleetResult(daily=daily, totals=totals, runs=runs)


def _fixed_tz(offset_h: float) -> Any:
    import datetime as dt

    return dt.timezone(dt.timedelta(hours=offset_h))


def _totals(year: _Year, daily: pd.DataFrame, vehicle: Vehicle) -> dict[str, Any]:
    operating = daily["runs"] > 0
    drive_wh = float(daily["drive_wh"].sum())
    km = float(daily["km"].sum())
    solar_wh = float(daily["solar_drive_wh"].sum() + daily["solar_parked_wh"].sum()
                     - daily["solar_refused_wh"].sum())
    wh_per_km = drive_wh / km if km > 0 else np.nan
    return {
        "days": int(operating.sum()),
        "days_in_range": len(daily),
        "days_closed": int(daily.loc[operating, "closed_on_solar"].sum()),
        "share_closed": _share_closed(daily),
        "days_stranded": int(daily["stranded"].sum()),
        "grid_kwh": float(daily["grid_wh"].sum() / 1000.0),
        "solar_kwh": solar_wh / 1000.0,
        "solar_km": solar_wh / wh_per_km if wh_per_km > 0 else 0.0,
        "drive_kwh": drive_wh / 1000.0,
        "km": km,
        "wh_per_km_before_solar": wh_per_km,
        "loop_km": year.km,
        "battery_kwh": vehicle.battery.usable_kwh,
        "panel_m2": float(sum(f.area_m2 for f in vehicle.panels)),
    }


def _sizing(year: _Year, vehicle: Vehicle, start_soc: float | None,
            target: float) -> dict[str, Any]:
    solar_only = ChargingPolicy()  # sizing asks for closure on the sun alone

    def share(battery_kwh: float = vehicle.battery.usable_kwh, scale: float = 1.0) -> float:
        ev = _evaluate(year, vehicle, solar_only, start_soc, battery_kwh=battery_kwh,
                       panel_scale=scale)
        return _share_closed(_daily(year, ev, scale))

    battery = _bisect(lambda b: share(battery_kwh=b), 1.0, 1000.0, target)
    area = sum(f.area_m2 for f in vehicle.panels)
    scale = _bisect(lambda k: share(scale=k), 0.0, 40.0, target) if area > 0 else None
    return {"min_battery_kwh_for_target": battery,
            "min_panel_m2_for_target": None if scale is None else scale * area}
