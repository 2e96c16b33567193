r"""Range claims: a corridor driven lap after lap to the reserve, over a weather year.

A *claim* is a distance (km or mi), sometimes with the conditions it was made in (a
speed, a temperature, climate control on or off, a payload).  :func:`check_claim`
drives a real corridor with the vehicle, from a start charge (default full) until the
state of charge reaches the reserve (default 0); the distance reached is the range.
It does so for many departures sampled from a typical weather year and reports the
distribution of the range, the share of departures on which the claim was reached,
the range by month, an energy breakdown, a one-at-a-time sensitivity table and the
range under the claim's own conditions, with a verdict in careful words.

How a range is driven, on the one model
---------------------------------------
1. *The corridor.*  A route that ends within :data:`LOOP_CLOSE_M` of its start is a
   loop, driven lap after lap through the start line without stopping; any other
   route is driven out and back (the route, then the route reversed: grades negated,
   headings turned, the stops of each direction at their own places), with a full stop
   to turn at each end.
2. *The drive to empty.*  The laps are strung into one course long enough for the
   sample (:meth:`tripsim.energy.Course.from_segments`), and every sampled departure
   is one run of :func:`tripsim.energy.drive_runs` (runs × segments): each run is
   driven in its own weather at its own clock, lap after lap, so the temperature, wind
   and sun on the fifth lap are those of the hour it is driven in — exactly as
   :func:`tripsim.simulate.simulate` would drive the strung-together course.  Runs go
   in batches of at most :data:`CHUNK_SEGMENTS` run-segments (memory): the samples are
   sorted by the distance the first :data:`ESTIMATE_KM` of the corridor suggest (plus
   8 %), so a batch is only as long as its longest sample needs; a sample that does
   not run empty well before the end of its course is driven again on a longer one.
3. *The battery.*  :func:`tripsim.battery.soc_pass`, the one state-of-charge pass,
   walks each run: a full battery refuses regeneration, and the run ends where the
   usable energy above the reserve is spent, inside a segment.  The reserve is taken
   off the bottom of the usable energy: usable × (1 − r) with the start charge
   (s − r)/(1 − r) on that scale, which is the same pass with the floor raised.
4. *Capacity at the pack's temperature* (:func:`tripsim.energy.run_capacity_wh`), with
   the ageing factor on the usable energy: the pack's temperature follows the
   time-weighted mean ambient temperature over the distance actually driven to empty
   (as a simulation takes its trip's mean), found by a fixed-point iteration from the
   mean over the whole course.

Samples, conditions and options
-------------------------------
By default every day of a 365-day calendar year (:data:`CALENDAR_YEAR`, so daylight
saving falls on real dates) departs at one local time of the route; or ``draws``
departures with seeded random dates and hours within a daily window.  A typical year
(EPW, TMY3, TMY2) is periodic, so every date reads its own day of the file.  Options move
the driver's speed factor, the payload, the cabin set point, the start charge, the
reserve, the tyres' Crr and the battery's capacity factor (ageing).

A claim's stated speed caps the speed limits (in the year and under the stated
conditions), and a stated payload replaces the vehicle file's (unless ``payload_kg``
is given): they say how the vehicle is used.  A stated temperature and climate setting
apply only to the run *under the claim's own conditions*: the corridor in fixed air.
What a claim does not state is taken as in a test laboratory: :data:`LAB_TEMP_C`,
calm, no sun, climate control off.  A lab cycle (a speed–time trace,
:mod:`tripsim.claims.logs`) can be set beside it: its range is the energy from the
start charge to the reserve over the cycle's consumption.

The sensitivity table moves one option at a time over a stated span
(:data:`SENSITIVITY`) and gives the median range at each end, over an evenly spread
sub-sample of the departures (:data:`SENSITIVITY_SAMPLES`) so that it costs about two
more years, not fourteen.

Nothing here decides whether a claim is "true": the verdict says on how many sampled
departures the model reached the claimed distance on this corridor, under which
assumptions, and what was not tested.
"""

from __future__ import annotations

from dataclasses import dataclass, field, fields
from pathlib import PurePath
from typing import Any

import numpy as np
import pandas as pd

from tripsim.battery import soc_pass
from tripsim.caution import CAUTION
from tripsim.claims.logs import LogDrive
from tripsim.claims.options import CALENDAR_YEAR, LAB_TEMP_C, Claim, ClaimOptions
from tripsim.drive import DriveOptions
from tripsim.energy import Conditions, Course, Runs, SolarOptions, drive_runs, run_capacity_wh
from tripsim.errors import TripsimInputError
from tripsim.route import StopKind
from tripsim.segments import LOOP_CLOSE_M, STATION_FAR_KM, closing_gap_m, start_distance_km
from tripsim.simulate import simulate
from tripsim.timebase import epoch_seconds, parse_hhmm_s, parse_window_h
from tripsim.units import J_PER_WH, M_PER_MI
from tripsim.vehicle import Vehicle
from tripsim.weather import Weather
from tripsim.zones import route_zone

__all__ = ["CALENDAR_YEAR", "LAB_TEMP_C", "LOOP_CLOSE_M", "SENSITIVITY", "Claim",
           "ClaimOptions", "ClaimResult", "RangeRuns", "RangeSetup", "check_claim",
           "claim_vehicle", "corridor_lap", "drive_to_empty", "drive_to_empty_on",
           "sample_departures"]

#: Most run-segments driven in one batch (memory: about 120 bytes each).
CHUNK_SEGMENTS = 500_000
#: Length of the corridor's first stretch driven to size the courses. [km]
ESTIMATE_KM = 60.0
#: A sample must run empty this far before the end of its course (the course ends in a
#: stop, and the braking before it is not part of the drive). [km]
END_MARGIN_KM = 1.0

#: One-at-a-time sensitivity: option, label, unit, and its span from the base value.
SENSITIVITY: tuple[tuple[str, str, str, Any], ...] = (
    ("speed_factor", "speed factor", "", lambda b: (b * 0.9, b * 1.1)),
    ("payload_kg", "payload", "kg", lambda b: (max(b - 150.0, 0.0), b + 150.0)),
    ("cabin_set_c", "cabin set point", "°C", lambda b: (b - 3.0, b + 3.0)),
    ("crr", "tyre Crr", "", lambda b: (b * 0.85, b * 1.15)),
    ("capacity_factor", "battery capacity factor", "", lambda b: (b - 0.1, b)),
    ("start_soc", "start charge", "", lambda b: (b - 0.1, b)),
    ("reserve_soc", "reserve", "", lambda b: (b, b + 0.1)),
)


# ----------------------------------------------------------------------------- corridor
_COURSE_COLUMNS = ("start_m", "length_m", "slope_length_m", "lat_deg", "lon_deg",
                   "lat_end_deg", "lon_end_deg", "elevation_m", "elevation_end_m", "grade",
                   "heading_deg", "curvature_per_m", "speed_limit_kph", "stop_kind_end")


def _reversed(segments: pd.DataFrame) -> pd.DataFrame:
    """The route driven the other way: segments in reverse, grades negated, headings turned."""
    back = segments.iloc[::-1].reset_index(drop=True)
    kinds = segments["stop_kind_end"].to_numpy()
    # reversed segment j ends where forward segment n-1-j starts: at the end of n-2-j
    rev_kind = np.r_[kinds[-2::-1], StopKind.END].astype(np.int8)
    return pd.DataFrame({
        "start_m": np.r_[0.0, np.cumsum(back["length_m"].to_numpy())[:-1]],
        "length_m": back["length_m"].to_numpy(),
        "slope_length_m": back["slope_length_m"].to_numpy(),
        "lat_deg": back["lat_end_deg"].to_numpy(), "lon_deg": back["lon_end_deg"].to_numpy(),
        "lat_end_deg": back["lat_deg"].to_numpy(), "lon_end_deg": back["lon_deg"].to_numpy(),
        "elevation_m": back["elevation_end_m"].to_numpy(),
        "elevation_end_m": back["elevation_m"].to_numpy(),
        "grade": -back["grade"].to_numpy(),
        "heading_deg": (back["heading_deg"].to_numpy() + 180.0) % 360.0,
        "curvature_per_m": back["curvature_per_m"].to_numpy(),
        "speed_limit_kph": back["speed_limit_kph"].to_numpy(dtype=float),
        "stop_kind_end": rev_kind})


def corridor_lap(segments: pd.DataFrame, corridor: str = "auto",
                 speed_cap_kph: float | None = None) -> tuple[pd.DataFrame, str]:
    """One lap of the corridor as a segments table, and how it is driven.

    Parameters
    ----------
    segments : pandas.DataFrame
        The route (:func:`tripsim.segments.segment_route`).
    corridor : {"auto", "loop", "out-and-back"}
        "auto": a loop when the route ends within :data:`LOOP_CLOSE_M` of its start.
    speed_cap_kph : float, optional
        Caps the speed limits (a claim's stated speed); segments with no limit take it.

    Returns
    -------
    lap : pandas.DataFrame
        The columns the course needs; a loop's end does not stop (the next lap goes on),
        an out-and-back stops to turn at both ends.
    kind : {"loop", "out-and-back"}
    """
    source = str(segments.attrs.get("source", "route"))
    gap = closing_gap_m(segments)
    kind = corridor if corridor != "auto" else ("loop" if gap <= LOOP_CLOSE_M else "out-and-back")
    if kind == "loop" and gap > LOOP_CLOSE_M:
        raise TripsimInputError(f"the route ends {gap / 1000:.2f} km from its start: not a "
                                f"loop (allowed {LOOP_CLOSE_M:.0f} m); drive it "
                                "out-and-back", "--corridor")
    out = pd.DataFrame({c: segments[c].to_numpy() for c in _COURSE_COLUMNS})
    out["speed_limit_kph"] = out["speed_limit_kph"].astype(float)
    kinds = out["stop_kind_end"].to_numpy(dtype=np.int8).copy()
    if kind == "loop":
        if kinds[-1] == StopKind.END:
            kinds[-1] = StopKind.NONE
        out["stop_kind_end"] = kinds
    else:
        kinds[-1] = StopKind.END
        out["stop_kind_end"] = kinds
        out = pd.concat([out, _reversed(out)], ignore_index=True)
        out["start_m"] = np.r_[0.0, np.cumsum(out["length_m"].to_numpy())[:-1]]
    if speed_cap_kph is not None:
        out["speed_limit_kph"] = np.fmin(out["speed_limit_kph"].to_numpy(), speed_cap_kph)
    out.attrs = {"source": source, "name": segments.attrs.get("name", "route")}
    return out, kind


def _laps(lap: pd.DataFrame, km: float) -> pd.DataFrame:
    """Laps strung together, cut after the segment that reaches ``km``."""
    length = lap["length_m"].to_numpy()
    lap_m = float(length.sum())
    n_laps = max(int(np.ceil(km * 1000.0 / lap_m)), 1)
    cols = {c: np.tile(lap[c].to_numpy(), n_laps) for c in _COURSE_COLUMNS}
    ends = np.cumsum(cols["length_m"])
    cut = min(int(np.searchsorted(ends, km * 1000.0)) + 1, ends.size)
    out = pd.DataFrame({c: v[:cut] for c, v in cols.items()})
    out["start_m"] = np.r_[0.0, ends[:cut - 1]]
    out.attrs = dict(lap.attrs)
    return out


def sample_departures(segments: pd.DataFrame, options: ClaimOptions) -> pd.DatetimeIndex:
    """Departures of the samples, local time of the route's start (daylight saving applied).

    Every day of :data:`CALENDAR_YEAR` at ``depart_time``, or ``draws`` seeded random
    dates and hours within ``hours``, in time order.
    """
    days = pd.date_range(f"{CALENDAR_YEAR}-01-01", periods=365, freq="D")
    if options.draws is None:
        walls = days + pd.Timedelta(seconds=parse_hhmm_s(options.depart_time, "--depart-time"))
    else:
        rng = np.random.default_rng(options.seed)
        lo, hi = parse_window_h(options.hours, "--hours")
        day = rng.integers(0, 365, options.draws)
        minute = np.round(rng.uniform(lo, hi, options.draws) * 60.0)
        walls = days[day] + pd.to_timedelta(minute, unit="min")
        walls = walls.sort_values()
    zone = route_zone(segments)
    # a departure in the hour a clock change skips leaves at the same wall time after it;
    # in the hour that repeats it leaves at the first
    return pd.DatetimeIndex(walls).tz_localize(zone, ambiguous=np.ones(len(walls), bool),
                                               nonexistent="shift_forward")


# ----------------------------------------------------------------------------- the drive
def claim_vehicle(vehicle: Vehicle, *, payload_kg: float | None = None,
                  crr: float | None = None, cabin_set_c: float | None = None,
                  climate: bool = True) -> Vehicle:
    """The vehicle with a claim's options applied (validated again).

    ``climate=False`` turns the cabin's heating and cooling off (no heat exchanged with
    the air, no sun through the glass); the base load and the battery's conditioning
    stay.
    """
    data = vehicle.model_dump()
    if payload_kg is not None:
        data["body"]["payload_kg"] = float(payload_kg)
    if crr is not None:
        data["body"]["crr"] = float(crr)
    if cabin_set_c is not None:
        data["auxiliary"]["cabin_set_c"] = float(cabin_set_c)
    if not climate:
        data["auxiliary"].update(cabin_ua_w_per_k=0.0, cabin_solar_aperture_m2=0.0)
    return Vehicle.model_validate(data)


@dataclass(frozen=True)
class RangeSetup:
    """Everything a drive to empty needs besides the corridor and the departures."""

    vehicle: Vehicle
    drive: DriveOptions
    weather: Weather | None = None
    conditions: Conditions | None = None
    solar: SolarOptions | None = None
    start_soc: float = 1.0
    reserve_soc: float = 0.0
    capacity_factor: float = 1.0
    default_speed_kph: float | None = None

    @property
    def kwh(self) -> float:
        """Usable energy at 20-25 °C with the ageing factor [kWh]."""
        return self.vehicle.battery.usable_kwh * self.capacity_factor


@dataclass(frozen=True)
class RangeRuns:
    """Drives to empty, one per departure: all per sample (shape (R,)).

    ``range_km`` is the distance at which the state of charge reached the reserve (or
    ``max_km`` where ``at_least``); ``available_wh`` the energy from the start charge to
    the reserve at the pack's temperature; ``wh_per_km`` = available / range (battery
    energy, net of solar gain); ``pack_temp_c`` the mean ambient temperature the capacity
    was taken at; ``temp_min_c``, ``temp_max_c``, ``headwind_mps`` (time-weighted mean,
    at body height), ``ghi_w_m2`` (mean) describe the air driven through; ``solar_wh``
    the panels' gain while driving; ``hours`` the time to empty; ``course_km`` the
    length of the course the sample was driven on.
    """

    depart_s: np.ndarray
    range_km: np.ndarray
    available_wh: np.ndarray
    wh_per_km: np.ndarray
    pack_temp_c: np.ndarray
    temp_min_c: np.ndarray
    temp_max_c: np.ndarray
    headwind_mps: np.ndarray
    ghi_w_m2: np.ndarray
    solar_wh: np.ndarray
    hours: np.ndarray
    at_least: np.ndarray
    course_km: np.ndarray

    def table(self) -> pd.DataFrame:
        """One row a sample (departures in whole epoch seconds: a CSV keeps them exact)."""
        cols = {k: getattr(self, k) for k in self.__dataclass_fields__}
        cols["depart_s"] = np.rint(self.depart_s).astype(np.int64)
        return pd.DataFrame(cols)


def _lap_cells(lap: pd.DataFrame, setup: RangeSetup) -> tuple[np.ndarray, np.ndarray]:
    """The sun cells of one lap (:attr:`tripsim.energy.Course.sun_cells`)."""
    return Course.from_segments(lap, setup.vehicle, setup.drive,
                                setup.default_speed_kph).sun_cells


def _course(table: pd.DataFrame, setup: RangeSetup,
            lap_cells: tuple[np.ndarray, np.ndarray]) -> Course:
    """The laps as the model drives them, with the sun's places taken from one lap.

    A cell's place is the mean of its points; on laps strung together the points of a
    lap repeat, so taking them from one lap keeps the sun where it is whatever the
    number of laps (a sample's range does not depend on the course it was batched on).
    """
    course = Course.from_segments(table, setup.vehicle, setup.drive, setup.default_speed_kph)
    cell, places = lap_cells
    return course.with_sun_cells(cell[np.arange(course.n) % cell.size], places)


def _drive(course: Course, setup: RangeSetup, depart_s: np.ndarray, *,
           columns: bool = False) -> Runs:
    return drive_runs(course, setup.vehicle, depart_s, drive_opts=setup.drive,
                      weather=setup.weather, conditions=setup.conditions, solar=setup.solar,
                      columns=columns)


def _empty_point(demand: np.ndarray, setup: RangeSetup, usable_wh: float) -> tuple[int, float]:
    """Segment and share of it where the state of charge reaches the reserve (-1: never)."""
    r = setup.reserve_soc
    p = soc_pass(demand[None, :], full_wh=setup.kwh * 1000.0, usable_wh=usable_wh * (1.0 - r),
                 start_soc=(setup.start_soc - r) / (1.0 - r), per_segment=False)
    return int(p.stranded_index[0]), float(p.stranded_fraction[0])


@dataclass(frozen=True)
class _Empty:
    index: int
    fraction: float
    pack_temp_c: float
    usable_wh: float


def _to_empty(runs: Runs, j: int, course: Course, setup: RangeSetup) -> _Empty | None:
    """Where run ``j`` reaches the reserve, with the capacity at the mean temperature so far."""
    demand = np.ascontiguousarray(runs.demand_wh()[j])
    total = runs.time_s[j] + course.dwell_s
    temp = runs.temp_c[j]
    cw = np.r_[0.0, np.cumsum(temp * total)]
    cs = np.r_[0.0, np.cumsum(total)]
    pack = float(runs.temp_mean_c[j])
    got = None
    for _ in range(60):  # to the float's last digits: a batch's course length leaves no trace
        usable = float(run_capacity_wh(setup.vehicle, np.array([pack]), setup.kwh)[0])
        idx, frac = _empty_point(demand, setup, usable)
        if idx < 0:
            return None
        got = _Empty(idx, frac, pack, usable)
        mean = float((cw[idx] + frac * temp[idx] * total[idx])
                     / max(cs[idx] + frac * total[idx], 1e-9))
        if abs(mean - pack) < 1e-11:
            break
        pack = mean
    return got


def _weights(n: int, idx: np.ndarray, frac: np.ndarray) -> np.ndarray:
    """Per run: 1 on the segments driven before the reserve, the share on the last, 0 after."""
    idx = np.atleast_1d(idx)
    frac = np.atleast_1d(frac)
    seg = np.arange(n)[None, :]
    return (seg < idx[:, None]) + (seg == idx[:, None]) * frac[:, None]


def _stats(runs: Runs, rows: np.ndarray, course: Course, empties: list[_Empty],
           setup: RangeSetup) -> dict[str, np.ndarray]:
    """Per-sample figures of runs ``rows`` up to where each reached the reserve."""
    idx = np.array([e.index for e in empties])
    frac = np.array([e.fraction for e in empties])
    w = _weights(course.n, idx, frac)
    tw = w * (runs.time_s[rows] + course.dwell_s)
    hours = tw.sum(axis=1)
    temp = runs.temp_c[rows]
    range_km = (course.start_m[idx] + frac * course.length_m[idx]) / 1000.0
    available = (setup.start_soc - setup.reserve_soc) * np.array([e.usable_wh for e in empties])
    solar = (np.zeros(rows.size) if runs.solar_wh is None
             else (runs.solar_wh[rows] * w).sum(axis=1))
    return {"range_km": range_km, "available_wh": available,
            "wh_per_km": available / np.maximum(range_km, 1e-9),
            "pack_temp_c": np.array([e.pack_temp_c for e in empties]),
            "temp_min_c": np.where(w > 0, temp, np.inf).min(axis=1),
            "temp_max_c": np.where(w > 0, temp, -np.inf).max(axis=1),
            "headwind_mps": (runs.headwind_mps[rows] * tw).sum(axis=1) / hours,
            "ghi_w_m2": (runs.ghi_w_m2[rows] * tw).sum(axis=1) / hours,
            "solar_wh": solar, "hours": hours / 3600.0, "at_least": np.zeros(rows.size, bool)}


def _at_least(runs: Runs, rows: np.ndarray, course: Course, setup: RangeSetup,
              max_km: float) -> dict[str, np.ndarray]:
    """Samples that did not run empty within ``max_km``: reported as at least that far."""
    pack = runs.temp_mean_c[rows]
    usable = run_capacity_wh(setup.vehicle, pack, setup.kwh)
    out = _stats(runs, rows, course, [_Empty(course.n - 1, 1.0, float(p), float(u))
                                      for p, u in zip(pack, usable, strict=True)], setup)
    out.update(range_km=np.full(rows.size, max_km), at_least=np.ones(rows.size, bool),
               wh_per_km=runs.demand_wh()[rows].sum(axis=1) / max_km)
    return out


def _batches(order: np.ndarray, need_km: np.ndarray, seg_per_km: float) -> list[np.ndarray]:
    """Samples (in order of need) grouped so that runs × segments stays under the chunk."""
    out, cur = [], []
    for r in order:
        if cur and (len(cur) + 1) * need_km[r] * seg_per_km > CHUNK_SEGMENTS:
            out.append(np.asarray(cur))
            cur = []
        cur.append(int(r))
    if cur:
        out.append(np.asarray(cur))
    return out


def _estimate_km(lap: pd.DataFrame, setup: RangeSetup, depart_s: np.ndarray,
                 max_km: float, lap_cells: tuple[np.ndarray, np.ndarray]) -> np.ndarray:
    """Range each sample's first :data:`ESTIMATE_KM` of the corridor suggests [km]."""
    head = _laps(lap, min(ESTIMATE_KM, float(lap["length_m"].sum()) / 1000.0))
    km = float(head["length_m"].sum()) / 1000.0
    seg_per_km = len(head) / km
    per_km = np.empty(depart_s.size)
    temp = np.empty(depart_s.size)
    for batch in _batches(np.arange(depart_s.size), np.full(depart_s.size, km), seg_per_km):
        runs = _drive(_course(head, setup, lap_cells), setup, depart_s[batch])
        per_km[batch] = runs.demand_wh().sum(axis=1) / km
        temp[batch] = runs.temp_mean_c
    available = (setup.start_soc - setup.reserve_soc) * run_capacity_wh(
        setup.vehicle, temp, setup.kwh)
    return np.where(per_km > 0.0, available / np.maximum(per_km, 1e-9), max_km)


def drive_to_empty(lap: pd.DataFrame, setup: RangeSetup, depart_s: np.ndarray, *,
                   max_km: float) -> RangeRuns:
    """Drive a corridor lap after lap from each departure until the reserve (module notes).

    Parameters
    ----------
    lap : pandas.DataFrame
        One lap (:func:`corridor_lap`).
    setup : RangeSetup
        Vehicle, driver, air, start charge, reserve, ageing.
    depart_s : array, shape (R,)
        Departures, seconds since the Unix epoch.
    max_km : float
        Longest drive. [km]

    Returns
    -------
    RangeRuns
    """
    depart_s = np.atleast_1d(np.asarray(depart_s, dtype=float))
    n_samples = depart_s.size
    seg_per_km = len(lap) / (float(lap["length_m"].sum()) / 1000.0)
    lap_cells = _lap_cells(lap, setup)
    est = _estimate_km(lap, setup, depart_s, max_km, lap_cells)
    cap_km = max_km + 2.0 * END_MARGIN_KM
    need = np.minimum(est * 1.08 + 2.0 * END_MARGIN_KM + 1.0, cap_km)
    cols: dict[str, np.ndarray] = {}
    todo = np.arange(n_samples)
    while todo.size:
        redo = []
        for batch in _batches(todo[np.argsort(need[todo], kind="stable")], need, seg_per_km):
            km = float(need[batch].max())
            course = _course(_laps(lap, km), setup, lap_cells)
            runs = _drive(course, setup, depart_s[batch])
            limit_m = min(course.start_m[-1] + course.length_m[-1] - END_MARGIN_KM * 1000.0,
                          max_km * 1000.0)
            done, empties, beyond = [], [], []
            for j, r in enumerate(batch):
                e = _to_empty(runs, j, course, setup)
                if e is not None and (course.start_m[e.index] + e.fraction
                                      * course.length_m[e.index]) <= limit_m:
                    done.append(j)
                    empties.append(e)
                elif km >= cap_km - 1e-9:
                    beyond.append(j)
                else:
                    need[r] = min(km * 1.5, cap_km)
                    redo.append(r)
            done_rows = np.asarray(done, dtype=int)
            if done_rows.size:
                _store(cols, batch[done_rows], _stats(runs, done_rows, course, empties, setup),
                       km, n_samples)
            beyond_rows = np.asarray(beyond, dtype=int)
            if beyond_rows.size:
                _store(cols, batch[beyond_rows],
                       _at_least(runs, beyond_rows, course, setup, max_km), km, n_samples)
        todo = np.asarray(redo, dtype=int)
    return RangeRuns(depart_s=depart_s, **cols)


def _drive_part(depart_s: list[float], shared: tuple[pd.DataFrame, RangeSetup, float]
                ) -> list[dict[str, Any]]:
    """A task of the cluster: :func:`drive_to_empty` for some departures, one row each."""
    lap, setup, max_km = shared
    runs = drive_to_empty(lap, setup, np.asarray(depart_s, dtype=float), max_km=max_km)
    names = [f.name for f in fields(RangeRuns)]
    return [{k: getattr(runs, k)[i].item() for k in names} for i in range(len(depart_s))]


def drive_to_empty_on(client: Any, lap: pd.DataFrame, setup: RangeSetup, depart_s: np.ndarray,
                      *, max_km: float) -> RangeRuns:
    """:func:`drive_to_empty` with the departures shared out over a Dask cluster.

    Without a client it is :func:`drive_to_empty` itself.  With one, the corridor and the
    setup (vehicle, weather year) are sent once and the departures go in tasks of about
    a second (:func:`tripsim.parallel.map_runs`); each sample is driven as it would be
    here (a batch only sets how long a course is strung, not where a sample runs empty).
    """
    depart_s = np.atleast_1d(np.asarray(depart_s, dtype=float))
    if client is None:
        return drive_to_empty(lap, setup, depart_s, max_km=max_km)
    from tripsim.parallel import map_runs

    rows = map_runs(_drive_part, depart_s.tolist(), client=client, shared=(lap, setup, max_km),
                    vectorised=True)
    return RangeRuns(**{f.name: np.asarray([r[f.name] for r in rows])
                        for f in fields(RangeRuns)})


def _store(cols: dict[str, np.ndarray], where: np.ndarray, values: dict[str, np.ndarray],
           km: float, n: int) -> None:
    """Put a batch's figures (and the course length they were driven on) in their places."""
    for k, v in {**values, "course_km": np.full(where.size, km)}.items():
        if k not in cols:
            cols[k] = np.zeros(n, dtype=np.asarray(v).dtype)
        cols[k][where] = v


_TERMS = (("aero_wh", "f_aero_n", "distance"), ("rolling_wh", "f_rolling_n", "distance"),
          ("grade_wh", "f_grade_n", "distance"), ("inertia_wh", "f_inertia_n", "distance"),
          ("drive_losses_wh", "drive_loss_w", "moving"),
          ("regen_losses_wh", "regen_loss_w", "moving"),
          ("friction_brakes_wh", "friction_brake_w", "moving"),
          ("aux_wh", "aux_power_w", "all"))


def breakdown_to_empty(lap: pd.DataFrame, setup: RangeSetup, depart_s: float, course_km: float,
                       range_km: float) -> dict[str, float]:
    """Where the energy of one drive to empty went [Wh] (the terms of a trip's breakdown).

    The sample is driven again alone on the same course (the same run, to the bit) with
    the per-segment forces and powers kept, and each term is summed up to the point where
    the reserve was reached.  ``solar_wh`` is negative (a gain); the terms add up to
    ``asked_wh``, the energy traction and auxiliaries asked of the battery, which is the
    available energy plus what a full battery refused.
    """
    course = _course(_laps(lap, course_km), setup, _lap_cells(lap, setup))
    runs = _drive(course, setup, np.array([depart_s]), columns=True)
    end_m = course.start_m + course.length_m
    idx = min(int(np.searchsorted(end_m, range_km * 1000.0)), course.n - 1)
    frac = float(np.clip((range_km * 1000.0 - course.start_m[idx]) / course.length_m[idx],
                         0.0, 1.0))
    w = _weights(course.n, np.array([idx]), np.array([frac]))[0]
    t = runs.time_s[0] * w
    span = {"distance": course.slope_length_m * w, "moving": t, "all": t + course.dwell_s * w}
    out = {name: float(np.sum(runs.columns[col][0] * span[kind])) / J_PER_WH
           for name, col, kind in _TERMS}
    out["solar_wh"] = 0.0 if runs.solar_wh is None else -float(np.sum(runs.solar_wh[0] * w))
    out["asked_wh"] = float(np.sum(runs.demand_wh()[0] * w))
    return out


# ----------------------------------------------------------------------------- the claim
@dataclass(frozen=True, eq=False)
class ClaimResult:
    """A claim checked on a corridor over sampled weather (see :func:`check_claim`).

    Attributes
    ----------
    claim : Claim
    options : ClaimOptions
    vehicle, route, weather : str
        Names for reports.
    corridor : {"loop", "out-and-back"}
    lap_km : float
        Length of one lap. [km]
    samples : pandas.DataFrame
        One row a departure: ``depart`` (local ISO time), ``month`` and the columns of
        :class:`RangeRuns`, with ``meets_claim``.
    used : dict
        The values the year was driven with (speed factor, payload, set point, Crr,
        start charge, reserve, capacity factor, speed cap).
    stated : dict
        The run under the claim's own conditions: those conditions and its range.
    breakdown_wh : dict
        Where the energy went on the median sample (:func:`breakdown_to_empty`).
    median_depart : str
        Departure of that sample.
    sensitivity : list of dict
        One row an option: its span, the median range at each end and at the base.
    sensitivity_samples : int
        Departures the table was computed over.
    cycle : dict or None
        The lab cycle beside the corridor: its consumption and range.
    max_km : float
        Longest drive considered. [km]
    notes : tuple of str
    """

    claim: Claim
    options: ClaimOptions
    vehicle: str
    route: str
    weather: str
    corridor: str
    lap_km: float
    samples: pd.DataFrame
    used: dict[str, Any]
    stated: dict[str, Any]
    breakdown_wh: dict[str, float]
    median_depart: str
    sensitivity: list[dict[str, Any]]
    sensitivity_samples: int
    cycle: dict[str, Any] | None
    max_km: float
    notes: tuple[str, ...] = field(default=())

    @property
    def ranges_km(self) -> np.ndarray:
        """The range of every sample [km]."""
        return self.samples["range_km"].to_numpy()

    def percentile_km(self, q: float) -> float:
        """The q-th percentile of the range (linear between samples) [km]."""
        return float(np.percentile(self.ranges_km, q))

    def share_meeting(self, claim_km: float | None = None) -> float:
        """Share of the samples whose range reached ``claim_km`` (default: the claim)."""
        km = self.claim.distance_km if claim_km is None else claim_km
        return float(np.mean(self.ranges_km >= km))

    def _unit(self, km: float) -> float:
        return km * 1000.0 / M_PER_MI if self.claim.unit == "mi" else km

    def by_month(self) -> pd.DataFrame:
        """Per month of departure: samples, the 10th, 50th and 90th percentile, the share."""
        rows = []
        for month, g in self.samples.groupby("month"):
            r = g["range_km"].to_numpy()
            rows.append({"month": int(month), "samples": int(r.size),
                         "range_km_p10": float(np.percentile(r, 10)),
                         "range_km_p50": float(np.percentile(r, 50)),
                         "range_km_p90": float(np.percentile(r, 90)),
                         "share_meeting_claim": float(np.mean(r >= self.claim.distance_km))})
        return pd.DataFrame(rows)

    def _sample(self, i: int) -> dict[str, Any]:
        row = self.samples.iloc[i]
        return {"depart": row["depart"], "range_km": float(row["range_km"]),
                "at_least": bool(row["at_least"]), "mean_temp_c": float(row["pack_temp_c"]),
                "temp_min_c": float(row["temp_min_c"]), "temp_max_c": float(row["temp_max_c"]),
                "mean_headwind_mps": float(row["headwind_mps"]),
                "mean_ghi_w_m2": float(row["ghi_w_m2"]), "hours": float(row["hours"]),
                "wh_per_km": float(row["wh_per_km"]), "solar_wh": float(row["solar_wh"])}

    def worst(self) -> dict[str, Any]:
        """The conditions of the sample with the shortest range."""
        return self._sample(int(np.argmin(self.ranges_km)))

    def best(self) -> dict[str, Any]:
        """The conditions of the sample with the longest range."""
        return self._sample(int(np.argmax(self.ranges_km)))

    def sampling_text(self) -> str:
        """How the departures were sampled, in words."""
        o = self.options
        if o.draws is None:
            return (f"every day of the typical year at {o.depart_time} local time "
                    f"({len(self.samples)} departures)")
        return (f"{o.draws} departures at random dates and hours between "
                f"{o.hours.replace('-', ' and ')} local time (seed {o.seed})")

    def verdict(self) -> str:
        """What was tested and what the model found, in careful words."""
        u = self.claim.unit
        n_meet = int(self.samples["meets_claim"].sum())
        n = len(self.samples)
        used = self.used
        speed = "at the speed limits" + (f" × {used['speed_factor']:g}"
                                          if used["speed_factor"] != 1.0 else "")
        if used["speed_cap_kph"] is not None:
            speed += f", at most the stated {used['speed_cap_kph']:g} km/h"
        when = (f"on {n_meet} of {n} days of the typical year ({self.weather}), departing at "
                f"{self.options.depart_time} local time" if self.options.draws is None else
                f"on {n_meet} of {n} departures drawn at random dates and hours "
                f"({self.options.hours}, seed {self.options.seed}) in the typical year of "
                f"{self.weather}")
        how = "a loop" if self.corridor == "loop" else "an out-and-back"
        text = (f"On {self.route} driven as {how} of {self._unit(self.lap_km):.1f} {u} "
                f"lap after lap, from "
                f"{used['start_soc']:.0%} charge to {used['reserve_soc']:.0%}, {speed}, with "
                f"{used['payload_kg']:.0f} kg aboard and the cabin held at "
                f"{used['cabin_set_c']:g} °C, the model reached the claimed "
                f"{self.claim.distance:g} {u} {when}. The median range was "
                f"{self._unit(self.percentile_km(50)):.0f} {u} (10th to 90th percentile "
                f"{self._unit(self.percentile_km(10)):.0f} to "
                f"{self._unit(self.percentile_km(90)):.0f} {u}).")
        st = self.stated
        text += (f" Under the claim's own conditions ({st['description']}) it reached "
                 f"{self._unit(st['range_km']):.0f} {u} on this corridor")
        if self.cycle is not None:
            text += (f" and {self._unit(self.cycle['range_km']):.0f} {u} on the lab cycle "
                     f"{self.cycle['source']}")
        text += (". Not tested: other roads, traffic and driving styles; weather beyond this "
                 "typical year (which holds no extremes); battery ageing beyond a capacity "
                 f"factor of {used['capacity_factor']:g}; preconditioning, charging losses and "
                 "tyre wear. These are estimates of the model from the vehicle file's "
                 "parameters, not measurements.")
        return text

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON (``tripsim claim --json``)."""
        u = self.claim.unit
        out: dict[str, Any] = {
            "claim_km": self.claim.distance_km, "claim": {
                "distance": self.claim.distance, "unit": u,
                "stated_conditions": self.claim.stated()},
            "vehicle": self.vehicle, "route": self.route, "weather": self.weather,
            "corridor": {"kind": self.corridor, "lap_km": self.lap_km},
            "samples": len(self.samples), "sampling": self.sampling_text(),
            "range_km_p10": self.percentile_km(10), "range_km_p50": self.percentile_km(50),
            "range_km_p90": self.percentile_km(90),
            "range_km_min": float(self.ranges_km.min()),
            "range_km_max": float(self.ranges_km.max()),
            "share_meeting_claim": self.share_meeting(),
            "samples_meeting_claim": int(self.samples["meets_claim"].sum()),
            "wh_per_km_p50": float(np.percentile(self.samples["wh_per_km"], 50)),
            "worst": self.worst(), "best": self.best(),
            "by_month": self.by_month().to_dict(orient="records"),
            "breakdown_at_median_wh": dict(self.breakdown_wh),
            "median_depart": self.median_depart,
            "sensitivity": self.sensitivity,
            "sensitivity_samples": self.sensitivity_samples,
            "stated": dict(self.stated), "lab_cycle": self.cycle, "used": dict(self.used),
            "max_km": self.max_km, "samples_at_least_max_km": int(self.samples["at_least"].sum()),
            "verdict": self.verdict(), "notes": list(self.notes), "caution": CAUTION,
        }
        if u == "mi":
            for q in (10, 50, 90):
                out[f"range_mi_p{q}"] = self._unit(self.percentile_km(q))
            out["claim_mi"] = self.claim.distance
        return out


def _used(vehicle: Vehicle, claim: Claim, options: ClaimOptions) -> dict[str, Any]:
    """The values the year is driven with: options, else the claim, else the vehicle file."""
    payload = (options.payload_kg if options.payload_kg is not None else
               claim.payload_kg if claim.payload_kg is not None else vehicle.body.payload_kg)
    return {"speed_factor": options.speed_factor, "payload_kg": float(payload),
            "cabin_set_c": float(options.cabin_set_c if options.cabin_set_c is not None
                                 else vehicle.auxiliary.cabin_set_c),
            "crr": float(options.crr if options.crr is not None else vehicle.body.crr),
            "start_soc": options.start_soc, "reserve_soc": options.reserve_soc,
            "capacity_factor": options.capacity_factor, "speed_cap_kph": claim.speed_kph}


def _setup(vehicle: Vehicle, used: dict[str, Any], drive: DriveOptions, *,
           weather: Weather | None, solar: SolarOptions | None,
           default_speed_kph: float | None, conditions: Conditions | None = None,
           climate: bool = True) -> RangeSetup:
    return RangeSetup(
        vehicle=claim_vehicle(vehicle, payload_kg=used["payload_kg"], crr=used["crr"],
                              cabin_set_c=used["cabin_set_c"], climate=climate),
        drive=drive.replace(speed_factor=used["speed_factor"]), weather=weather,
        conditions=conditions, solar=solar, start_soc=used["start_soc"],
        reserve_soc=used["reserve_soc"], capacity_factor=used["capacity_factor"],
        default_speed_kph=default_speed_kph)


def _stated(lap: pd.DataFrame, vehicle: Vehicle, claim: Claim, used: dict[str, Any],
            drive: DriveOptions, default_speed_kph: float | None, depart_s: float,
            max_km: float) -> dict[str, Any]:
    """The corridor in the claim's own conditions (the rest as in a laboratory)."""
    temp = claim.temp_c if claim.temp_c is not None else LAB_TEMP_C
    climate = bool(claim.climate)
    setup = _setup(vehicle, used, drive, weather=None, solar=None,
                   default_speed_kph=default_speed_kph, conditions=Conditions(temp_c=temp),
                   climate=climate)
    runs = drive_to_empty(lap, setup, np.array([depart_s]), max_km=max_km)
    parts = [f"{temp:g} °C" + ("" if claim.temp_c is not None else " (laboratory)"),
             "calm, no sun", f"climate control {'on' if climate else 'off'}",
             f"{used['payload_kg']:.0f} kg aboard"]
    if claim.speed_kph is not None:
        parts.insert(0, f"at most {claim.speed_kph:g} km/h")
    return {"temp_c": temp, "climate": climate, "payload_kg": used["payload_kg"],
            "speed_kph": claim.speed_kph, "description": ", ".join(parts),
            "range_km": float(runs.range_km[0]), "wh_per_km": float(runs.wh_per_km[0]),
            "at_least": bool(runs.at_least[0])}


def _cycle(cycle: LogDrive, vehicle: Vehicle, claim: Claim, used: dict[str, Any],
           drive: DriveOptions) -> dict[str, Any]:
    """A lab cycle beside the corridor: usable energy over the cycle's consumption."""
    temp = claim.temp_c if claim.temp_c is not None else LAB_TEMP_C
    setup = _setup(vehicle, used, drive, weather=None, solar=None, default_speed_kph=None,
                   climate=bool(claim.climate))
    trip = simulate(cycle.segments, setup.vehicle, conditions=Conditions(temp_c=temp),
                    drive=setup.drive, start_soc=used["start_soc"], recorded=cycle.recorded)
    s = trip.summary
    per_km = s.needed_wh / s.distance_km
    usable = float(run_capacity_wh(setup.vehicle, np.array([temp]), setup.kwh)[0])
    available = (used["start_soc"] - used["reserve_soc"]) * usable
    return {"name": str(cycle.segments.attrs.get("name", cycle.source)),
            "source": PurePath(cycle.source).name,
            "cycle_km": s.distance_km, "cycle_h": s.duration_h, "temp_c": temp,
            "wh_per_km": per_km, "available_wh": available, "range_km": available / per_km,
            "range_means": "energy from the start charge to the reserve over the cycle's "
                           "consumption (the cycle repeated, as driven once)"}


def _sub_sample(n: int, k: int) -> np.ndarray:
    if k <= 0:
        return np.zeros(0, dtype=int)
    return np.unique(np.round(np.linspace(0, n - 1, min(k, n))).astype(int))


def _sensitivity_end(item: tuple[str, float], shared: tuple[Any, ...]) -> float:
    """Median range with one option moved to one end of its span (a task of the cluster)."""
    key, value = item
    lap, vehicle, used, drive, common, depart_s, max_km = shared
    setup = _setup(vehicle, {**used, key: value}, drive, **common)
    return float(np.percentile(drive_to_empty(lap, setup, depart_s, max_km=max_km).range_km,
                               50))


def _sensitivity(lap: pd.DataFrame, vehicle: Vehicle, used: dict[str, Any],
                 drive: DriveOptions, common: dict[str, Any], depart_s: np.ndarray,
                 base_km: np.ndarray, max_km: float, client: Any = None
                 ) -> list[dict[str, Any]]:
    from tripsim.parallel import map_runs

    base_p50 = float(np.percentile(base_km, 50))
    spans = []
    for key, label, unit, span in SENSITIVITY:
        base = used[key]
        lo, hi = span(base)
        if key == "start_soc":
            lo = max(lo, used["reserve_soc"] + 0.05)
        if key == "reserve_soc":
            hi = min(hi, used["start_soc"] - 0.05)
        lo, hi = min(lo, base), max(hi, base)  # no room to move (a reserve near the start)
        spans.append((key, label, unit, base, lo, hi))
    ends = [(key, v) for key, _, _, base, lo, hi in spans for v in (lo, hi)
            if abs(v - base) >= 1e-12]
    medians = dict(zip(ends, map_runs(_sensitivity_end, ends, client=client, shared=(
        lap, vehicle, used, drive, common, depart_s, max_km)), strict=True))
    return [{"option": key, "label": label, "unit": unit, "base": base, "low": lo,
             "high": hi, "range_km_low": medians.get((key, lo), base_p50),
             "range_km_high": medians.get((key, hi), base_p50), "range_km_base": base_p50}
            for key, label, unit, base, lo, hi in spans]


def check_claim(segments: pd.DataFrame, vehicle: Vehicle, weather: Weather, claim: Claim,
                options: ClaimOptions | None = None, *, drive: DriveOptions | None = None,
                solar: SolarOptions | None = None, default_speed_kph: float | None = None,
                cycle: LogDrive | None = None, client: Any = None) -> ClaimResult:
    """Check a range claim on a corridor over a weather year (see the module notes).

    Parameters
    ----------
    segments : pandas.DataFrame
        The corridor's route (:func:`tripsim.segments.segment_route`).
    vehicle : Vehicle
        The vehicle file.
    weather : Weather
        A typical year (:func:`tripsim.io.weather_files.read_weather`), or any weather
        covering the sampled departures (a constant one for checks).
    claim : Claim
        The claimed distance and its stated conditions.
    options : ClaimOptions, optional
        Sampling, corridor and the options of the drive.
    drive : DriveOptions, optional
        The driver (its speed factor is the options').
    solar : SolarOptions, optional
        How panels see the sky.
    default_speed_kph : float, optional
        Speed on segments with no known limit. [km/h]
    cycle : LogDrive, optional
        A lab cycle (speed–time trace) to set beside the corridor.
    client : distributed.Client, optional
        Drive the sampled departures and the sensitivity table on this Dask cluster
        (:func:`drive_to_empty_on`); the figures are those of a run in this process.

    Returns
    -------
    ClaimResult
    """
    options = options or ClaimOptions()
    drive = drive or DriveOptions()
    lap, kind = corridor_lap(segments, options.corridor, claim.speed_kph)
    departs = sample_departures(segments, options)
    depart_s = np.asarray(epoch_seconds(departs), dtype=float)
    used = _used(vehicle, claim, options)
    max_km = options.max_km or max(4.0 * claim.distance_km, 1000.0)
    common = dict(weather=weather, solar=solar, default_speed_kph=default_speed_kph)
    setup = _setup(vehicle, used, drive, **common)
    runs = drive_to_empty_on(client, lap, setup, depart_s, max_km=max_km)
    table = runs.table()
    table.insert(0, "depart", [t.isoformat(timespec="minutes") for t in departs])
    table.insert(1, "month", departs.month.to_numpy())
    table["meets_claim"] = table["range_km"] >= claim.distance_km
    median = int(np.argmin(np.abs(runs.range_km - np.percentile(runs.range_km, 50))))
    breakdown = breakdown_to_empty(lap, setup, float(depart_s[median]),
                                   float(runs.course_km[median]), float(runs.range_km[median]))
    sub = _sub_sample(depart_s.size, options.sensitivity_samples)
    sensitivity = (_sensitivity(lap, vehicle, used, drive, common, depart_s[sub],
                                runs.range_km[sub], max_km, client) if sub.size else [])
    stated = _stated(lap, vehicle, claim, used, drive, default_speed_kph, float(depart_s[0]),
                     max_km)
    lab = None if cycle is None else _cycle(cycle, vehicle, claim, used, drive)
    return ClaimResult(
        claim=claim, options=options, vehicle=vehicle.name,
        route=str(segments.attrs.get("name", "route")), weather=_weather_label(weather),
        corridor=kind, lap_km=float(lap["length_m"].sum()) / 1000.0, samples=table,
        used=used, stated=stated, breakdown_wh=breakdown,
        median_depart=str(table["depart"].iloc[median]), sensitivity=sensitivity,
        sensitivity_samples=int(sub.size), cycle=lab, max_km=max_km,
        notes=tuple(_notes(segments, weather, runs, max_km)))


def _weather_label(weather: Weather) -> str:
    """The weather's file name (not its folder) and station, for reports."""
    path, sep, station = weather.source.partition(" (")  # the readers' "path (station)"
    return f"{PurePath(path).name}, {station[:-1]}" if sep else PurePath(path).name


def _notes(segments: pd.DataFrame, weather: Weather, runs: RangeRuns,
           max_km: float) -> list[str]:
    out = []
    km = start_distance_km(segments, weather.latitude, weather.longitude)
    if km > STATION_FAR_KM:
        out.append(f"the weather station is {km:.0f} km from the corridor (more than "
                   f"{STATION_FAR_KM:.0f} km): its weather may not be the corridor's")
    if runs.at_least.any():
        out.append(f"{int(runs.at_least.sum())} samples did not run empty within {max_km:g} km "
                   "(counted as that far)")
    return out
