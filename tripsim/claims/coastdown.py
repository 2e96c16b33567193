r"""Road load from coast-down runs, in the manner of SAE J2263; the coast of a vehicle file.

A coast-down run is the vehicle rolling in neutral from a high speed to a low one on a
straight, level track, slowed only by its road load.  From runs driven both ways along
the track, :func:`fit_road_load` finds the road-load force at reference conditions,

.. math:: F(v) = F_0 + F_1 v + F_2 v^2,

and from it the drag area Cd·A = 2 F2 / ρ_ref and the rolling-resistance coefficient
Crr = F0 / (m g) (and Crr's rise with speed F1 / (m g)) with confidence intervals.

The procedure
-------------
1. **Crop and check each run.**  A run starts at its highest speed (the first sample at
   or below ``max_kph`` after it) and ends at the first sample below ``min_kph``; J2263
   covers 115 to 15 km/h.  A run is rejected, with its reason, when it is too short,
   when its speed rises on the way down (throttle, brakes, a hump), when the mean wind
   or crosswind is above the limit, when its fit does not converge or leaves large
   residuals, or when it has no partner in the other direction.
2. **Fit each run as a whole.**  The equation of motion, with the force functions of
   :mod:`tripsim.roadload` (the same the trip simulation uses),

   .. math:: m_{eff} \frac{dv}{dt} = -\left[m g (C_{rr} + k v)\cos\theta + m g\sin\theta
             + \tfrac12 \rho\, C_dA\, (v + w)|v + w|\right],

   is integrated with :func:`scipy.integrate.solve_ivp` together with its forward
   sensitivities, and :func:`scipy.optimize.least_squares` moves Crr, k, Cd·A and the
   initial speed until v(t) meets the measured speeds.  No speed is differentiated.
   ρ is the run's air density (its mean temperature and pressure), w the run's mean
   headwind (the measured wind resolved against the heading and averaged over the run,
   as SAE J1263 averages a stationary anemometer) and θ the measured grade (a smooth
   curve through it when it varies), each where the file gives them, else 0.  The
   effective mass is the test mass plus the equivalent mass of the rotating parts,
   (λ − 1)·m_empty with λ the vehicle file's ``rotating_mass_factor``, as the trip
   simulation counts it (payload and instruments add no rotating inertia), unless given.
3. **Pair and average.**  Valid runs are paired in the order driven, each with the next
   valid run in the other direction; a pair's coefficients are the mean of its two runs'.
   A steady wind along the track and a constant grade that the file does not give add
   to one run what they take from the other: their first-order effects cancel.  A
   steady unmeasured wind w leaves F2·w² in F0; each pair reports the headwind and grade
   its two runs imply, (F1,a − F1,b)/(4 F2) and (F0,a − F0,b)/(2 m g), and the option
   ``implied_wind`` removes F2·w² with that headwind.
4. **Reference conditions** (20 °C, 98.21 kPa).  Each run's Cd·A is fitted at its own
   air density, so F2 = ½ ρ_ref Cd·A; F0 is corrected for the tyres' temperature,
   F0,ref = F0 (1 + K0 (T − 20 °C)).
5. **Result and intervals.**  The coefficients are the mean over pairs.  Each interval
   is the wider of a Student-t interval over the pairs' values (run-to-run scatter, n −
   1 degrees of freedom) and a normal interval from the runs' regression covariances
   (s²(JᵀJ)⁻¹ of each fit, propagated through the averages).  They cover scatter, not
   a bias that every pair shares (an unmeasured steady wind, a wrong test mass).

References
----------
SAE J2263, *Road Load Measurement Using Onboard Anemometry and Coastdown Techniques*:
the three-term model, 115 to 15 km/h, reference conditions 20 °C, 98.21 kPa, no wind,
runs in opposite directions, effective mass about 1.03 × the test mass for light
vehicles.  Read in secondary sources (the standard's published abstract and a test
laboratory's summary of it), not in the standard itself.

SAE J1263, *Road Load Measurement and Dynamometer Simulation Using Coastdown
Techniques*: mean wind at most 16 km/h and crosswind at most 8 km/h (read in a
secondary source), used here as the default limits.

G. D. Thompson, *The Vehicle Road Load Problem – An Approach by Non-Linear Modeling*,
US EPA: fit the speed–time record with the solution of the equation of motion
instead of differentiating it (abstract read).

K0 = 8.6·10⁻³ 1/K, the rolling-resistance temperature correction of the road-load
procedure of UN GTR 15 (WLTP), from memory; it is of the order of the 8 % per 10 K
quoted for tyre tests under UN R117 (read in a secondary source).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from pydantic import model_validator
from scipy import stats
from scipy.integrate import solve_ivp
from scipy.interpolate import make_smoothing_spline
from scipy.optimize import least_squares

from tripsim import roadload
from tripsim.air import air_density, headwind_mps, wind_at_height
from tripsim.caution import CAUTION
from tripsim.coastdown import coast
from tripsim.errors import TripsimInputError
from tripsim.options import Count, Number, OptionConflict, Options, option
from tripsim.units import G_MPS2, kph_to_mps, mps_to_kph
from tripsim.vehicle import Vehicle

__all__ = [
    "REFERENCE_PRESSURE_PA",
    "REFERENCE_TEMP_C",
    "ROLLING_TEMP_COEFF_PER_K",
    "CoastdownOptions",
    "RoadLoadFit",
    "fit_road_load",
    "predict_coast",
    "reference_air_density",
]

#: Reference conditions of SAE J2263 (secondary source, see the module docstring).
REFERENCE_TEMP_C = 20.0
REFERENCE_PRESSURE_PA = 98_210.0
#: Rolling-resistance temperature correction K0 [1/K] (UN GTR 15, from memory).
ROLLING_TEMP_COEFF_PER_K = 8.6e-3

_PARAMS = ("crr", "crr_per_mps", "cda_m2")


def reference_air_density() -> float:
    """Air density at the reference conditions, 20 °C and 98.21 kPa [kg/m³] (≈ 1.1671)."""
    return float(air_density(REFERENCE_TEMP_C, REFERENCE_PRESSURE_PA))


class CoastdownOptions(Options):
    """How runs are checked, fitted and corrected.

    Parameters
    ----------
    test_mass_kg : float, optional
        Mass of the vehicle as tested (driver and instruments included); default: the
        vehicle file's mass plus payload. [kg]
    effective_mass_kg : float, optional
        Test mass plus the equivalent mass of the rotating parts; default: the test mass
        plus (``rotating_mass_factor`` − 1) × the file's empty ``mass_kg``, as
        :attr:`tripsim.vehicle.Body.inertial_mass_kg` counts it. [kg]
    min_kph, max_kph : float, default 15 and 115
        Speed range fitted (SAE J2263's). [km/h]
    min_drop_kph : float, default 30
        A run must lose at least this much speed. [km/h]
    min_duration_s : float, default 10
        A run must last at least this long. [s]
    min_samples : int, default 20
        A run must hold at least this many samples.
    max_wind_mps, max_crosswind_mps : float, default 16 and 8 km/h
        Limits on a run's mean wind and mean crosswind (SAE J1263, secondary source).
        [m/s]
    max_rise_kph : float, default 1.5
        A run whose speed (a running median over 5 s) rises by more than this above its
        lowest value so far is not a free coast. [km/h]
    max_rms_kph : float, default 1.0
        A run whose fit leaves a larger root-mean-square residual is rejected. [km/h]
    rolling_temp_coeff_per_k : float, default 0.0086
        K0 of the F0 temperature correction; 0 turns it off. [1/K]
    temp_c, pressure_pa : float, optional
        Air temperature and pressure for runs whose file gives none; without them the
        runs are taken at the reference conditions (and the result says so). [°C], [Pa]
    wind_mps, wind_from_deg : float, optional
        Wind for runs whose file gives none. [m/s], [° from N]
    wind_height_m : float, optional
        Height at which the wind was measured; it is reduced to the vehicle's
        ``height_m`` with the power law of :func:`tripsim.air.wind_at_height`.  Default:
        the wind was measured at the vehicle's height and is used as it is. [m]
    fit_f1 : bool, default True
        Fit F1; False holds it at 0 (a two-term fit, steadier when F1 is poorly
        determined).
    implied_wind : bool, default False
        Remove from each pair's F0 the share F2·w² of the steady headwind w its two runs
        imply (for runs without a measured wind).  Off by default: averaging, as in the
        standard, leaves it in.
    confidence : float, default 0.95
        Level of the confidence intervals.
    """

    test_mass_kg: Number | None = option(None, gt=50.0, le=60_000.0, cli="--test-mass-kg")
    effective_mass_kg: Number | None = option(None, gt=50.0, le=90_000.0,
                                              cli="--effective-mass-kg")
    min_kph: Number = option(15.0, ge=0.0, le=400.0, cli="--min-kph")
    max_kph: Number = option(115.0, gt=0.0, le=400.0, cli="--max-kph")
    min_drop_kph: Number = option(30.0, gt=0.0, le=400.0, cli="--min-drop-kph")
    min_duration_s: Number = option(10.0, gt=0.0, le=3600.0, cli="--min-duration-s")
    min_samples: Count = option(20, ge=3, le=1_000_000, cli="--min-samples")
    max_wind_mps: Number = option(16.0 / 3.6, gt=0.0, le=60.0, cli="--max-wind-mps")
    max_crosswind_mps: Number = option(8.0 / 3.6, gt=0.0, le=60.0, cli="--max-crosswind-mps")
    max_rise_kph: Number = option(1.5, gt=0.0, le=50.0, cli="--max-rise-kph")
    max_rms_kph: Number = option(1.0, gt=0.0, le=50.0, cli="--max-rms-kph")
    rolling_temp_coeff_per_k: Number = option(ROLLING_TEMP_COEFF_PER_K, ge=0.0, le=0.05,
                                              cli="--rolling-temp-coeff")
    temp_c: Number | None = option(None, ge=-50.0, le=60.0, cli="--temp-c")
    pressure_pa: Number | None = option(None, ge=50_000.0, le=110_000.0, cli="--pressure-hpa",
                                        scale=0.01)
    wind_mps: Number | None = option(None, ge=0.0, le=60.0, cli="--wind-mps")
    wind_from_deg: Number | None = option(None, ge=-360.0, le=360.0, cli="--wind-from-deg")
    wind_height_m: Number | None = option(None, ge=0.3, le=100.0, cli="--wind-height-m")
    fit_f1: bool = option(True, cli="--no-f1")
    implied_wind: bool = option(False, cli="--implied-wind")
    confidence: Number = option(0.95, ge=0.5, lt=1.0, cli="--confidence")

    @model_validator(mode="after")
    def _speed_range(self) -> CoastdownOptions:
        if self.min_kph >= self.max_kph:
            raise OptionConflict("--min-kph", f"{self.min_kph:g} must be below --max-kph "
                                 f"({self.max_kph:g})")
        return self


@dataclass
class _Run:
    """One run, cropped, with its conditions; then its fit."""

    run: str
    direction: str | None
    heading_deg: float
    t_s: np.ndarray
    speed_mps: np.ndarray
    temp_c: float
    pressure_pa: float
    density_kg_m3: float
    wind_mps: float
    crosswind_mps: float
    headwind_mps: float
    grade: Any  # a constant, or a smooth curve of time
    reason: str = ""
    params: np.ndarray | None = None  # crr, crr_per_mps, cda_m2, v0 at the run's conditions
    cov: np.ndarray | None = None  # of crr, crr_per_mps, cda_m2
    fit_mps: np.ndarray | None = None
    rms_kph: float = float("nan")
    pair: int | None = None


@dataclass(frozen=True, eq=False)
class RoadLoadFit:
    """Road load at reference conditions fitted to coast-down runs.

    Attributes
    ----------
    f0_n, f1_n_per_mps, f2_n_per_mps2 : float
        F(v) = F0 + F1·v + F2·v² at 20 °C and 98.21 kPa. [N], [N/(m/s)], [N/(m/s)²]
    cda_m2, crr, crr_per_mps : float
        Cd·A = 2 F2 / ρ_ref, Crr = F0 / (m g), Crr's rise with speed F1 / (m g).
    intervals : dict
        ``name → (low, high)`` at ``confidence`` for each of the six values above.
    test_mass_kg, effective_mass_kg : float
        Masses used. [kg]
    runs : pandas.DataFrame
        One row a run: ``run``, ``direction``, ``used``, ``reason``, ``pair``,
        conditions, the run's own fit and its reference coefficients.
    pairs : pandas.DataFrame
        One row a pair: its runs, coefficients, and the headwind and grade it implies.
    samples : pandas.DataFrame
        The fitted samples: ``run``, ``t_s``, ``speed_mps``, ``fit_mps``.
    notes : tuple of str
        What was assumed (missing conditions, ignored columns, …).
    """

    f0_n: float
    f1_n_per_mps: float
    f2_n_per_mps2: float
    cda_m2: float
    crr: float
    crr_per_mps: float
    intervals: dict[str, tuple[float, float]]
    confidence: float
    test_mass_kg: float
    effective_mass_kg: float
    runs: pd.DataFrame
    pairs: pd.DataFrame
    samples: pd.DataFrame
    notes: tuple[str, ...] = ()
    source: str = ""
    vehicle: str = ""
    options: CoastdownOptions = field(default_factory=CoastdownOptions)

    @property
    def runs_used(self) -> list[str]:
        """Runs that entered the result, in the order driven."""
        return self.runs.loc[self.runs["used"], "run"].tolist()

    @property
    def runs_rejected(self) -> list[dict[str, str]]:
        """Runs left out, each with the reason."""
        rows = self.runs.loc[~self.runs["used"], ["run", "reason"]]
        return [{"run": r, "reason": why} for r, why in rows.itertuples(index=False)]

    def force_n(self, speed_mps: Any) -> Any:
        """Road-load force F(v) at reference conditions [N]."""
        return self.f0_n + self.f1_n_per_mps * speed_mps + self.f2_n_per_mps2 * speed_mps**2

    def to_dict(self) -> dict[str, Any]:
        """Plain data for JSON: coefficients, intervals, runs and pairs."""
        out: dict[str, Any] = {"vehicle": self.vehicle, "source": self.source}
        for key in ("f0_n", "f1_n_per_mps", "f2_n_per_mps2", "cda_m2", "crr", "crr_per_mps"):
            out[key] = getattr(self, key)
            out[f"{key}_ci"] = list(self.intervals[key])
        out.update({
            "confidence": self.confidence,
            "ci_method": "the wider of a Student-t interval over the pairs and the runs' "
                         "regression covariance",
            "runs_used": self.runs_used,
            "runs_rejected": self.runs_rejected,
            "pairs_used": len(self.pairs),
            "test_mass_kg": self.test_mass_kg,
            "effective_mass_kg": self.effective_mass_kg,
            "reference": {"temp_c": REFERENCE_TEMP_C,
                          "pressure_kpa": REFERENCE_PRESSURE_PA / 1000.0,
                          "air_density_kg_m3": reference_air_density()},
            "speed_range_kph": [self.options.min_kph, self.options.max_kph],
            "pairs": self.pairs.to_dict(orient="records"),
            "runs": self.runs.to_dict(orient="records"),
            "notes": list(self.notes),
            "caution": CAUTION,
        })
        return out


# ------------------------------------------------------------------------- preparing runs
def _crop(t: np.ndarray, v: np.ndarray, options: CoastdownOptions) -> slice:
    """From the first sample at or below max_kph after the peak to the last one ≥ min_kph."""
    kph = mps_to_kph(v)
    smooth = _running_median(t, kph, 1.0)
    peak = int(np.argmax(smooth))
    below_max = np.flatnonzero(kph[peak:] <= options.max_kph)
    start = peak + (int(below_max[0]) if below_max.size else len(kph))
    under_min = np.flatnonzero(kph[start:] < options.min_kph)
    stop = start + (int(under_min[0]) if under_min.size else len(kph) - start)
    return slice(start, stop)


def _running_median(t: np.ndarray, values: np.ndarray, span_s: float) -> np.ndarray:
    """Centred running median over about ``span_s`` (at least three samples)."""
    if values.size < 3:
        return values
    dt = float(np.median(np.diff(t)))
    window = max(3, round(span_s / dt) | 1) if dt > 0 else 3
    return pd.Series(values).rolling(window, center=True, min_periods=1).median().to_numpy()


def _shape_problem(t: np.ndarray, v: np.ndarray, options: CoastdownOptions) -> str:
    """Why a cropped run cannot be fitted ("" when it can)."""
    kph = mps_to_kph(v)
    if t.size < options.min_samples:
        return (f"too short: {t.size} samples in {options.min_kph:g}-{options.max_kph:g} km/h "
                f"(need {options.min_samples})")
    if t[-1] - t[0] < options.min_duration_s:
        return f"too short: {t[-1] - t[0]:.1f} s (need {options.min_duration_s:g} s)"
    smooth = _running_median(t, kph, 5.0)
    if smooth[0] - smooth[-1] < options.min_drop_kph:
        if smooth[-1] >= smooth[0]:
            return f"speed not falling ({smooth[0]:.1f} → {smooth[-1]:.1f} km/h)"
        return (f"too short: speed falls only {smooth[0] - smooth[-1]:.1f} km/h "
                f"(need {options.min_drop_kph:g})")
    rise = smooth - np.minimum.accumulate(smooth)
    worst = int(np.argmax(rise))
    if rise[worst] > options.max_rise_kph:
        return (f"speed not falling: it rises {rise[worst]:.1f} km/h by t = {t[worst]:.1f} s "
                "(drive, brakes or a slope?)")
    return ""


def _column(frame: pd.DataFrame, name: str, default: float | None) -> np.ndarray | None:
    """A column with gaps filled by its run mean; the default when the column is empty."""
    if name in frame and frame[name].notna().any():
        values = frame[name].to_numpy(dtype=float)
        return np.where(np.isnan(values), np.nanmean(values), values)
    return None if default is None else np.full(len(frame), float(default))


def _circular_mean_deg(deg: np.ndarray) -> float:
    rad = np.radians(deg)
    return float(np.degrees(np.arctan2(np.sin(rad).mean(), np.cos(rad).mean())) % 360.0)


def _constant_or_smooth(t: np.ndarray, values: np.ndarray) -> Any:
    """A constant, or a smooth (C²) curve through a varying series for the integrator.

    A cubic smoothing spline with its smoothness chosen by generalised cross-validation
    (:func:`scipy.interpolate.make_smoothing_spline`): a rough input would force the
    step-size control of the integrator into tiny steps.
    """
    if values.size < 5 or np.ptp(values) == 0.0:
        return float(values.mean()) if values.size else 0.0
    return make_smoothing_spline(t, values)


def _prepare(run_id: str, frame: pd.DataFrame, vehicle: Vehicle, options: CoastdownOptions,
             notes: set[str]) -> _Run:
    """Crop a run, take its conditions, and say why it cannot be used (if so)."""
    t_all = frame["t_s"].to_numpy(dtype=float)
    v_all = frame["speed_mps"].to_numpy(dtype=float)
    part = _crop(t_all, v_all, options)
    sub = frame.iloc[part]
    t, v = t_all[part], v_all[part]
    temp = _column(sub, "temp_c", options.temp_c)
    pressure = _column(sub, "pressure_pa", options.pressure_pa)
    if temp is None:
        notes.add("no air temperature: runs taken at 20 °C (give temp_c or --temp-c)")
        temp = np.full(len(sub), REFERENCE_TEMP_C)
    if pressure is None:
        notes.add("no air pressure: runs taken at 98.21 kPa (give pressure_hpa or "
                  "--pressure-hpa)")
        pressure = np.full(len(sub), REFERENCE_PRESSURE_PA)
    heading = _column(sub, "heading_deg", None)
    wind = _column(sub, "wind_mps", options.wind_mps)
    wind_from = _column(sub, "wind_from_deg", options.wind_from_deg)
    wind_mean = float(np.mean(wind)) if wind is not None and wind.size else float("nan")
    headwind = 0.0
    cross = float("nan")
    if wind is not None and wind_from is not None and heading is not None and wind.size:
        at_body = wind if options.wind_height_m is None else wind_at_height(
            wind, vehicle.body.height_m, reference_height_m=options.wind_height_m)
        headwind = float(np.mean(headwind_mps(at_body, wind_from, heading)))
        cross = abs(float(np.mean(wind * np.sin(np.radians(wind_from - heading)))))
    elif wind is not None:
        notes.add("the wind is used for the wind limit only: its direction and the "
                  "vehicle's heading are both needed to correct for it")
    grade = _column(sub, "grade", 0.0)
    direction = None
    if "direction" in frame and isinstance(frame["direction"].iloc[0], str):
        direction = frame["direction"].iloc[0]
    run = _Run(run=run_id, direction=direction,
               heading_deg=_circular_mean_deg(heading) if heading is not None else np.nan,
               t_s=t, speed_mps=v, temp_c=float(np.mean(temp)) if temp.size else np.nan,
               pressure_pa=float(np.mean(pressure)) if pressure.size else np.nan,
               density_kg_m3=float(np.mean(air_density(temp, pressure))) if temp.size
               else np.nan, wind_mps=wind_mean, crosswind_mps=cross, headwind_mps=headwind,
               grade=_constant_or_smooth(t, grade))
    whole = _running_median(t_all, mps_to_kph(v_all), 5.0)
    if whole.size and whole[-1] >= whole[0]:
        run.reason = f"speed not falling ({whole[0]:.1f} → {whole[-1]:.1f} km/h)"
    else:
        run.reason = _shape_problem(t, v, options) or _wind_problem(run, options)
    return run


def _wind_problem(run: _Run, options: CoastdownOptions) -> str:
    if run.wind_mps > options.max_wind_mps:
        return (f"wind above the limit: mean {run.wind_mps:.1f} m/s "
                f"(limit {options.max_wind_mps:.1f} m/s)")
    if run.crosswind_mps > options.max_crosswind_mps:
        return (f"crosswind above the limit: mean {run.crosswind_mps:.1f} m/s "
                f"(limit {options.max_crosswind_mps:.1f} m/s)")
    return ""


# ---------------------------------------------------------------------------- one run's fit
def _speed_and_sensitivities(p: np.ndarray, run: _Run, mass_kg: float,
                             effective_mass_kg: float) -> tuple[np.ndarray, np.ndarray]:
    """v(t) at the run's samples, and ∂v/∂(crr, crr_per_mps, cda_m2, v0) there."""
    crr, k, cda, v0 = p
    t = run.t_s
    rho = run.density_kg_m3

    wind = run.headwind_mps
    grade_at = run.grade if callable(run.grade) else (lambda _time: run.grade)

    def rhs(time: float, y: np.ndarray) -> np.ndarray:
        v, grade = y[0], float(grade_at(time))
        air = v + wind
        force = (roadload.rolling_force_n(mass_kg, crr, grade, v, k)
                 + roadload.grade_force_n(mass_kg, grade)
                 + roadload.aero_force_n(rho, cda, air * abs(air)))
        # ∂F/∂v: the rolling term's slope is m g k cosθ, the drag's ½ρ CdA · 2|v + w|
        dforce_dv = (roadload.rolling_force_n(mass_kg, k, grade)
                     + roadload.aero_force_n(rho, cda, 2.0 * abs(air)))
        dforce_dp = np.array([roadload.rolling_force_n(mass_kg, 1.0, grade),
                              roadload.rolling_force_n(mass_kg, 0.0, grade, v, 1.0),
                              roadload.aero_force_n(rho, 1.0, air * abs(air)), 0.0])
        return -np.concatenate(([force], dforce_dv * y[1:] + dforce_dp)) / effective_mass_kg

    sol = solve_ivp(rhs, (t[0], t[-1]), [v0, 0.0, 0.0, 0.0, 1.0], t_eval=t, method="DOP853",
                    rtol=1e-9, atol=1e-9)
    if not sol.success or sol.y.shape[1] != t.size:
        raise FloatingPointError(sol.message)
    return sol.y[0], sol.y[1:].T


def _fit_run(run: _Run, vehicle: Vehicle, mass_kg: float, effective_mass_kg: float,
             options: CoastdownOptions) -> None:
    """Fit crr, crr_per_mps, cda_m2 and v0 of one run to its speeds (sets run.params …)."""
    cache: dict[tuple[float, ...], tuple[np.ndarray, np.ndarray]] = {}

    def solve(p: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        key = tuple(p)
        if key not in cache:
            cache.clear()
            cache[key] = _speed_and_sensitivities(p, run, mass_kg, effective_mass_kg)
        return cache[key]

    body = vehicle.body
    free = [0, 1, 2, 3] if options.fit_f1 else [0, 2, 3]

    def full(x: np.ndarray) -> np.ndarray:
        p = np.zeros(4)
        p[free] = x
        return p

    start = np.array([body.crr, body.crr_per_mps, body.drag_area_m2, run.speed_mps[0]])[free]
    try:
        res = least_squares(lambda x: solve(full(x))[0] - run.speed_mps, start,
                            jac=lambda x: solve(full(x))[1][:, free], method="lm",
                            x_scale="jac")
    except (FloatingPointError, ValueError):
        run.reason = "the fit did not converge"
        return
    if not res.success or not np.all(np.isfinite(res.x)):
        run.reason = "the fit did not converge"
        return
    fitted, jac = solve(full(res.x))
    jac = jac[:, free]
    dof = max(run.t_s.size - res.x.size, 1)
    s2 = float(np.sum((fitted - run.speed_mps) ** 2)) / dof
    cov = np.zeros((4, 4))
    cov[np.ix_(free, free)] = s2 * np.linalg.pinv(jac.T @ jac)
    run.params = full(res.x)
    run.cov = cov[:3, :3]
    run.fit_mps = fitted
    run.rms_kph = float(mps_to_kph(np.sqrt(np.mean((fitted - run.speed_mps) ** 2))))
    if run.rms_kph > options.max_rms_kph:
        run.reason = (f"not a free coast: the fit leaves {run.rms_kph:.2f} km/h rms "
                      f"(limit {options.max_rms_kph:g}; brakes, gusts or a gear change?)")


def _at_reference(run: _Run, options: CoastdownOptions) -> np.ndarray:
    """(crr, crr_per_mps, cda_m2) of a run at 20 °C: Crr corrected, CdA fitted at its ρ."""
    assert run.params is not None
    factor = 1.0 + options.rolling_temp_coeff_per_k * (run.temp_c - REFERENCE_TEMP_C)
    return run.params[:3] * np.array([factor, 1.0, 1.0])


def _reference_cov(run: _Run, options: CoastdownOptions) -> np.ndarray:
    assert run.cov is not None
    factor = 1.0 + options.rolling_temp_coeff_per_k * (run.temp_c - REFERENCE_TEMP_C)
    scale = np.array([factor, 1.0, 1.0])
    return run.cov * np.outer(scale, scale)


# --------------------------------------------------------------------------------- pairing
def _assign_directions(runs: list[_Run], source: str) -> None:
    """Label each run's way along the track from ``direction`` or from its heading."""
    labels = sorted({r.direction for r in runs if r.direction is not None})
    if labels:
        if len(labels) > 2:
            raise TripsimInputError(f"column direction: expected two labels (the two ways "
                                    f"along the track), found {len(labels)}: "
                                    f"{', '.join(labels)}", source)
        return
    with_heading = [r for r in runs if np.isfinite(r.heading_deg)]
    if not with_heading:
        raise TripsimInputError("runs cannot be paired: give a direction or heading_deg "
                                "column (the way each run went along the track)", source)
    first = next((r for r in with_heading if not r.reason), with_heading[0])
    for r in with_heading:
        off = abs((r.heading_deg - first.heading_deg + 180.0) % 360.0 - 180.0)
        if off <= 45.0:
            r.direction = f"heading {first.heading_deg:.0f}°"
        elif off >= 135.0:
            r.direction = f"heading {(first.heading_deg + 180.0) % 360.0:.0f}°"
        elif not r.reason:
            r.reason = (f"heading {r.heading_deg:.0f}° is neither along nor against the "
                        f"track (first run {first.heading_deg:.0f}°)")
    for r in runs:
        if r.direction is None and not r.reason:
            r.reason = "no heading: its direction along the track is unknown"


def _pair(runs: list[_Run]) -> list[tuple[_Run, _Run]]:
    """Pair each valid run with the next valid run in the other direction, in order."""
    pairs: list[tuple[_Run, _Run]] = []
    pending: _Run | None = None
    for run in (r for r in runs if not r.reason):
        if pending is None:
            pending = run
        elif run.direction != pending.direction:
            pairs.append((pending, run))
            pending.pair = run.pair = len(pairs)
            pending = None
        else:
            pending.reason = "unpaired: the next valid run went the same way"
            pending = run
    if pending is not None:
        pending.reason = "unpaired: no valid run in the other direction follows it"
    return pairs


# ---------------------------------------------------------------------------------- result
def _interval(values: np.ndarray, reg_var: float, confidence: float) -> tuple[float, float]:
    """Wider of Student-t over the pair values and the normal regression interval."""
    n = values.size
    mean = float(values.mean())
    scatter = float(values.std(ddof=1)) / np.sqrt(n) if n > 1 else 0.0
    half_t = float(stats.t.ppf(0.5 + confidence / 2, n - 1)) * scatter if n > 1 else 0.0
    half_reg = float(stats.norm.ppf(0.5 + confidence / 2)) * np.sqrt(max(reg_var, 0.0))
    half = max(half_t, half_reg)
    return mean - half, mean + half


def _mean_grade(run: _Run) -> float:
    if callable(run.grade):
        return float(np.mean(run.grade(run.t_s)))
    return float(run.grade)


def _tables(runs: list[_Run], pairs: list[tuple[_Run, _Run]], mass_kg: float,
            options: CoastdownOptions) -> tuple[pd.DataFrame, pd.DataFrame]:
    mg, rho_ref = mass_kg * G_MPS2, reference_air_density()
    rows = []
    for r in runs:
        ref = _at_reference(r, options) if r.params is not None else np.full(3, np.nan)
        rows.append({
            "run": r.run, "direction": r.direction, "used": not r.reason, "reason": r.reason,
            "pair": r.pair if not r.reason else None, "samples": int(r.t_s.size),
            "from_kph": float(mps_to_kph(r.speed_mps[0])) if r.t_s.size else np.nan,
            "to_kph": float(mps_to_kph(r.speed_mps[-1])) if r.t_s.size else np.nan,
            "duration_s": float(r.t_s[-1] - r.t_s[0]) if r.t_s.size else 0.0,
            "temp_c": r.temp_c, "pressure_hpa": r.pressure_pa / 100.0,
            "air_density_kg_m3": r.density_kg_m3, "wind_mps": r.wind_mps,
            "headwind_mps": r.headwind_mps, "grade_pct": 100.0 * _mean_grade(r),
            "crosswind_mps": r.crosswind_mps, "rms_kph": r.rms_kph,
            "cda_m2": float(ref[2]), "crr_ref": float(ref[0]), "crr_per_mps": float(ref[1]),
            "f0_n": float(roadload.rolling_force_n(mass_kg, ref[0], 0.0)),
            "f1_n_per_mps": float(roadload.rolling_force_n(mass_kg, 0.0, 0.0, 1.0, ref[1])),
            "f2_n_per_mps2": float(roadload.aero_force_n(rho_ref, ref[2], 1.0)),
        })
    table = pd.DataFrame(rows)
    prows = []
    for i, (a, b) in enumerate(pairs, start=1):
        mean, wind = _pair_values(a, b, mass_kg, options)
        f2 = float(roadload.aero_force_n(rho_ref, mean[2], 1.0))
        prows.append({
            "pair": i, "runs": [a.run, b.run], "directions": [a.direction, b.direction],
            "crr": mean[0], "crr_per_mps": mean[1], "cda_m2": mean[2],
            "f0_n": mg * mean[0], "f1_n_per_mps": mg * mean[1], "f2_n_per_mps2": f2,
            "implied_headwind_mps": wind, "implied_wind_f0_n": f2 * wind**2,
            "implied_grade_pct": 100.0 * float(_at_reference(a, options)[0]
                                               - _at_reference(b, options)[0]) / 2.0,
        })
    return table, pd.DataFrame(prows)


def _pair_values(a: _Run, b: _Run, mass_kg: float, options: CoastdownOptions
                 ) -> tuple[np.ndarray, float]:
    """A pair's (crr, crr_per_mps, cda_m2) and the headwind its runs imply [m/s].

    Runs a and b meet the headwinds +w and −w: F1,a − F1,b = 4 F2 w, and both F0 carry
    F2 w², which ``options.implied_wind`` removes.
    """
    ra, rb = _at_reference(a, options), _at_reference(b, options)
    mean = (ra + rb) / 2.0
    mg = mass_kg * G_MPS2
    f2 = float(roadload.aero_force_n(reference_air_density(), mean[2], 1.0))
    wind = mg * (ra[1] - rb[1]) / (4.0 * f2) if f2 > 0.0 and options.fit_f1 else float("nan")
    if options.implied_wind and np.isfinite(wind):
        mean[0] -= f2 * wind**2 / mg
    return mean, wind


def _combine(pairs: list[tuple[_Run, _Run]], mass_kg: float, options: CoastdownOptions
             ) -> tuple[np.ndarray, dict[str, tuple[float, float]]]:
    """Mean of the pairs' (crr, crr_per_mps, cda_m2) and their intervals."""
    values = np.array([_pair_values(a, b, mass_kg, options)[0] for a, b in pairs])
    n = len(pairs)
    reg = sum((_reference_cov(a, options) + _reference_cov(b, options)) / 4.0
              for a, b in pairs) / n**2
    intervals = {name: _interval(values[:, j], float(reg[j, j]), options.confidence)
                 for j, name in enumerate(_PARAMS)}
    return values.mean(axis=0), intervals


def _runs_in_order(runs: pd.DataFrame) -> list[tuple[str, pd.DataFrame]]:
    return [(str(k), g) for k, g in runs.groupby("run", sort=False)]


def fit_road_load(runs: pd.DataFrame, vehicle: Vehicle,
                  options: CoastdownOptions | None = None) -> RoadLoadFit:
    """Fit F(v) = F0 + F1·v + F2·v² at reference conditions to coast-down runs.

    Parameters
    ----------
    runs : pandas.DataFrame
        From :func:`tripsim.io.coastdown_file.read_coastdown_runs`: ``run``, ``t_s``,
        ``speed_mps`` and optionally ``direction``, ``heading_deg``, ``temp_c``,
        ``pressure_pa``, ``wind_mps``, ``wind_from_deg``, ``grade`` (rise over run).
        ``runs.attrs["source"]`` names the file in messages.
    vehicle : Vehicle
        Test mass (mass + payload) and effective mass (its inertial mass), unless the
        options give them; its road load is the fit's starting point.
    options : CoastdownOptions, optional
        Limits, masses, corrections (defaults: :class:`CoastdownOptions`).

    Returns
    -------
    RoadLoadFit

    Raises
    ------
    TripsimInputError
        When fewer than two valid pairs remain (naming every rejected run and why),
        when runs cannot be paired, or when the result is not physical.

    Notes
    -----
    See the module docstring for the procedure and its references.
    """
    options = options or CoastdownOptions()
    source = str(runs.attrs.get("source", "runs"))
    mass = options.test_mass_kg or vehicle.mass_kg
    m_eff = options.effective_mass_kg or vehicle.inertial_mass_kg + (mass - vehicle.mass_kg)
    notes: set[str] = set(runs.attrs.get("notes", ()))
    prepared = [_prepare(k, g, vehicle, options, notes) for k, g in _runs_in_order(runs)]
    _assign_directions(prepared, source)
    for run in prepared:
        if not run.reason:
            _fit_run(run, vehicle, mass, m_eff, options)
    pairs = _pair(prepared)
    if len(pairs) < 2:
        rejected = "; ".join(f"run {r.run}: {r.reason}" for r in prepared if r.reason)
        raise TripsimInputError(f"{len(pairs)} valid pair(s) of runs in opposite directions; "
                                f"need at least 2 to fit" + (f" ({rejected})" if rejected
                                                             else ""), source)
    mean, intervals = _combine(pairs, mass, options)
    crr, k, cda = (float(x) for x in mean)
    if cda <= 0.0 or crr <= 0.0:
        raise TripsimInputError(f"the fit is not physical (Cd·A {cda:.3f} m², Crr {crr:.5f}); "
                                "check the test mass, the speed unit and the runs", source)
    mg, rho_ref = mass * G_MPS2, reference_air_density()
    intervals = {**intervals,
                 "f0_n": tuple(mg * x for x in intervals["crr"]),
                 "f1_n_per_mps": tuple(mg * x for x in intervals["crr_per_mps"]),
                 "f2_n_per_mps2": tuple(0.5 * rho_ref * x for x in intervals["cda_m2"])}
    run_table, pair_table = _tables(prepared, pairs, mass, options)
    samples = pd.concat([pd.DataFrame({"run": r.run, "t_s": r.t_s, "speed_mps": r.speed_mps,
                                       "fit_mps": r.fit_mps})
                         for r in prepared if r.fit_mps is not None], ignore_index=True)
    return RoadLoadFit(
        f0_n=float(roadload.rolling_force_n(mass, crr, 0.0)),
        f1_n_per_mps=float(roadload.rolling_force_n(mass, 0.0, 0.0, 1.0, k)),
        f2_n_per_mps2=float(roadload.aero_force_n(rho_ref, cda, 1.0)),
        cda_m2=cda, crr=crr, crr_per_mps=k, intervals=intervals,
        confidence=options.confidence, test_mass_kg=mass, effective_mass_kg=m_eff,
        runs=run_table, pairs=pair_table, samples=samples, notes=tuple(sorted(notes)),
        source=source, vehicle=vehicle.name, options=options)


# ------------------------------------------------------------------------ forward direction
def predict_coast(vehicle: Vehicle, from_kph: float, to_kph: float = 15.0, *,
                  temp_c: float = REFERENCE_TEMP_C, pressure_pa: float = REFERENCE_PRESSURE_PA,
                  grade: float = 0.0, headwind: float = 0.0, step_kph: float = 10.0
                  ) -> dict[str, Any]:
    """Time and distance a vehicle file takes to coast from one speed to another.

    For a test plan: how long a run lasts and how much straight track it needs.

    Parameters
    ----------
    vehicle : Vehicle
        Mass, rotating-mass factor, Cd·A, Crr.
    from_kph, to_kph : float
        Speeds at the start and the end of the coast. [km/h]
    temp_c, pressure_pa : float, default 20 °C and 98.21 kPa
        Air. [°C], [Pa]
    grade : float, default 0
        Rise over run. [-]
    headwind : float, default 0
        Steady headwind (negative: tailwind). [m/s]
    step_kph : float, default 10
        Spacing of the intermediate speeds reported. [km/h]

    Returns
    -------
    dict
        ``time_s``, ``distance_m`` and ``milestones`` (speed, time, distance at every
        ``step_kph``), integrated by :func:`tripsim.coastdown.coast`.
    """
    if not 0.0 <= to_kph < from_kph <= 400.0:
        raise TripsimInputError(f"coast from {from_kph:g} to {to_kph:g} km/h: expected "
                                "0 ≤ --to-kph < --from-kph ≤ 400", "--from-kph")
    run = coast(vehicle, kph_to_mps(from_kph), temp_c=temp_c, pressure_pa=pressure_pa,
                grade=grade, headwind_mps=headwind, v_end_mps=kph_to_mps(to_kph),
                sample_s=0.1)
    kph = mps_to_kph(run["speed_mps"].to_numpy())
    if kph[-1] > to_kph + 0.01:
        raise TripsimInputError(f"the vehicle does not slow to {to_kph:g} km/h within an hour "
                                "(a downhill grade?)", "--to-kph")
    t, s = run["time_s"].to_numpy(), run["distance_m"].to_numpy()
    marks = np.arange(from_kph - step_kph, to_kph, -step_kph)
    marks = np.append(marks[marks > to_kph], to_kph)
    milestones = [{"speed_kph": float(m), "time_s": float(np.interp(-m, -kph, t)),
                   "distance_m": float(np.interp(-m, -kph, s))} for m in marks]
    return {"vehicle": vehicle.name, "from_kph": from_kph, "to_kph": to_kph,
            "time_s": float(t[-1]), "distance_m": float(s[-1]), "milestones": milestones,
            "conditions": {"temp_c": temp_c, "pressure_hpa": pressure_pa / 100.0,
                           "air_density_kg_m3": float(air_density(temp_c, pressure_pa)),
                           "grade_pct": 100.0 * grade, "headwind_mps": headwind},
            "mass_kg": vehicle.mass_kg, "effective_mass_kg": vehicle.inertial_mass_kg,
            "cda_m2": vehicle.body.drag_area_m2, "crr": vehicle.body.crr,
            "caution": CAUTION}
