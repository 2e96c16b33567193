"""The vehicle: its physical parameters, validated.

A vehicle file is TOML (read by :func:`tripsim.io.vehicle_file.read_vehicle`).
Its tables map one to one onto the models below; every key is named in trade
terms with its unit in the name.  The minimum a file holds::

    [body]
    mass_kg = 1450.0          # empty vehicle, ready to drive
    payload_kg = 80.0
    cd = 0.27
    frontal_area_m2 = 2.25
    crr = 0.0085
    [drivetrain]
    efficiency = 0.90         # battery to wheel while driving
    regen_efficiency = 0.70   # wheel to battery while braking
    [battery]
    usable_kwh = 58.0
    [auxiliary]
    base_w = 350.0

Unknown keys are errors (a typo must not silently fall back to a default).
The models only hold and check parameters; the physics is in
:mod:`tripsim.roadload`, :mod:`tripsim.powertrain`, :mod:`tripsim.battery`
and :mod:`tripsim.cabin`.
"""

from __future__ import annotations

from typing import Annotated, Self

import numpy as np
from pydantic import BaseModel, ConfigDict, Field, model_validator

__all__ = [
    "Auxiliary",
    "Battery",
    "Body",
    "Charging",
    "Curve",
    "Drivetrain",
    "EfficiencyMap",
    "PanelFacet",
    "Vehicle",
]


class _Strict(BaseModel):
    # strict: a number is a number (TOML ``true`` is not 1.0, "5" is not 5); integers
    # still count as floats.  No NaN or infinity anywhere (TOML has ``nan`` and ``inf``).
    model_config = ConfigDict(extra="forbid", frozen=True, str_strip_whitespace=True,
                              strict=True, allow_inf_nan=False)


Fraction = Annotated[float, Field(ge=0.0, le=1.0)]
Efficiency = Annotated[float, Field(gt=0.0, le=1.0)]


class Curve(_Strict):
    """A piecewise-linear curve y(x), given as two equal-length lists.

    ``x`` must increase strictly.  Outside its range the end values hold.
    """

    x: list[float] = Field(min_length=2)
    y: list[float] = Field(min_length=2)

    @model_validator(mode="after")
    def _check(self) -> Self:
        if len(self.x) != len(self.y):
            raise ValueError(f"x has {len(self.x)} values but y has {len(self.y)}; they must match")
        if np.any(np.diff(self.x) <= 0):
            raise ValueError("x must increase strictly")
        if not np.all(np.isfinite(self.x + self.y)):
            raise ValueError("values must be finite numbers")
        return self

    def __call__(self, x: float | np.ndarray) -> float | np.ndarray:
        """Evaluate by linear interpolation (end values held outside)."""
        return np.interp(x, self.x, self.y)


class Body(_Strict):
    """Mass and road-load parameters.

    ``cda_m2`` may replace ``cd`` × ``frontal_area_m2``.  Rolling resistance
    may rise with speed: Crr(v) = crr + crr_per_mps·v.
    """

    mass_kg: float = Field(gt=50.0, le=60_000.0, description="empty vehicle, ready to drive [kg]")
    payload_kg: float = Field(0.0, ge=0.0, le=40_000.0, description="people and load [kg]")
    cd: float | None = Field(None, gt=0.05, le=1.5, description="drag coefficient [-]")
    frontal_area_m2: float | None = Field(None, gt=0.2, le=15.0, description="[m²]")
    cda_m2: float | None = Field(None, gt=0.01, le=15.0, description="Cd × frontal area [m²]")
    crr: float = Field(gt=0.0005, le=0.05, description="rolling-resistance coefficient [-]")
    crr_per_mps: float = Field(0.0, ge=0.0, le=0.001, description="rise of Crr with speed [s/m]")
    rotating_mass_factor: float = Field(
        1.04, ge=1.0, le=1.5,
        description="inertial mass of the empty vehicle (wheels, motor, gears) / its mass [-]"
    )
    height_m: float = Field(1.5, gt=0.3, le=5.0, description="height, for wind at the body [m]")
    max_panel_area_m2: float | None = Field(
        None, gt=0.0, le=100.0, description="body area that can carry solar cells [m²]"
    )

    @model_validator(mode="after")
    def _check_drag(self) -> Self:
        if self.cda_m2 is None and (self.cd is None or self.frontal_area_m2 is None):
            raise ValueError("give either cda_m2, or both cd and frontal_area_m2")
        if self.cda_m2 is not None and self.cd is not None and self.frontal_area_m2 is not None:
            implied = self.cd * self.frontal_area_m2
            if abs(implied - self.cda_m2) > 0.01 * self.cda_m2:
                raise ValueError(
                    f"cda_m2 = {self.cda_m2} disagrees with cd × frontal_area_m2 = {implied:.3f}"
                )
        return self

    @property
    def drag_area_m2(self) -> float:
        """Cd·A [m²]."""
        return self.cda_m2 if self.cda_m2 is not None else self.cd * self.frontal_area_m2

    @property
    def total_mass_kg(self) -> float:
        """Mass with payload [kg]."""
        return self.mass_kg + self.payload_kg

    @property
    def inertial_mass_kg(self) -> float:
        r"""Mass that resists acceleration: the empty vehicle with its rotating parts, and payload.

        The rotating-mass factor belongs to the vehicle (wheels, motor, gears); payload
        adds mass but no rotating inertia: :math:`m_{eff} = \lambda m_{empty} + m_{payload}`
        [kg].
        """
        return self.mass_kg * self.rotating_mass_factor + self.payload_kg


class EfficiencyMap(_Strict):
    """Battery-to-wheel efficiency over wheel speed and wheel torque.

    ``efficiency[i][j]`` belongs to ``speed_kph[i]`` and ``torque_nm[j]``;
    torque is the magnitude at the wheels (the map is used for driving; braking
    uses ``regen_efficiency``).  Bilinear in between, end values outside.
    """

    speed_kph: list[float] = Field(min_length=2)
    torque_nm: list[float] = Field(min_length=2)
    efficiency: list[list[Efficiency]]

    @model_validator(mode="after")
    def _check(self) -> Self:
        if np.any(np.diff(self.speed_kph) <= 0) or np.any(np.diff(self.torque_nm) <= 0):
            raise ValueError("speed_kph and torque_nm must increase strictly")
        shape = np.shape(self.efficiency)
        if shape != (len(self.speed_kph), len(self.torque_nm)):
            raise ValueError(
                f"efficiency must have {len(self.speed_kph)} rows of {len(self.torque_nm)} "
                f"values (one row per speed), got shape {shape}"
            )
        return self


class Drivetrain(_Strict):
    """Motor, inverter and gearing from battery to wheels."""

    efficiency: Efficiency | None = Field(None, description="battery to wheel, driving [-]")
    efficiency_map: EfficiencyMap | None = None
    wheel_radius_m: float = Field(0.32, gt=0.1, le=1.0, description="for torque in the map [m]")
    regen_efficiency: Fraction = Field(description="wheel to battery, braking [-]")
    regen_max_kw: float = Field(60.0, ge=0.0, le=1000.0, description="regeneration cap [kW]")
    regen_fade_kph: float = Field(
        10.0, ge=0.0, le=60.0, description="regen fades linearly to zero below this speed [km/h]"
    )
    motor_max_kw: float = Field(150.0, gt=1.0, le=2000.0, description="peak wheel power [kW]")
    top_speed_kph: float = Field(160.0, gt=10.0, le=400.0, description="[km/h]")

    @model_validator(mode="after")
    def _check(self) -> Self:
        if self.efficiency is None and self.efficiency_map is None:
            raise ValueError("give efficiency or efficiency_map")
        return self


#: Highest heat-pump COP accepted in a vehicle file: automotive heat pumps reach about 2-4
#: in mild weather (common practice, from memory); 10 leaves a wide margin.
MAX_COP = 10.0

#: Usable-capacity factor over ambient temperature used when a vehicle file gives none:
#: typical of lithium-ion packs without preheating (common practice, from memory of
#: cell data sheets and winter range tests), x in °C.
DEFAULT_CAPACITY_VS_TEMP = {"x": [-20.0, -10.0, 0.0, 10.0, 20.0, 40.0],
                            "y": [0.85, 0.91, 0.95, 0.98, 1.0, 1.0]}


class Battery(_Strict):
    """Traction battery.

    ``capacity_vs_temp`` scales ``usable_kwh`` with ambient temperature
    (x in °C, y a factor).  With ``internal_resistance_ohm`` and ``ocv``
    (x SoC 0–1, y open-circuit volts) the simulator can run the Rint model.
    """

    usable_kwh: float = Field(gt=0.1, le=2000.0, description="usable energy at 20-25 °C [kWh]")
    capacity_vs_temp: Curve = Field(default_factory=lambda: Curve(**DEFAULT_CAPACITY_VS_TEMP))
    internal_resistance_ohm: float | None = Field(None, gt=0.0, le=5.0, description="[Ω]")
    ocv: Curve | None = None

    @model_validator(mode="after")
    def _check(self) -> Self:
        if self.ocv is not None:
            if min(self.ocv.x) > 0.0 or max(self.ocv.x) < 1.0:
                raise ValueError("ocv.x (state of charge) must span 0 to 1")
            if min(self.ocv.y) <= 0.0:
                raise ValueError("ocv.y (open-circuit voltage) must be positive")
        factors = np.asarray(self.capacity_vs_temp.y)
        if np.any(factors <= 0.0) or np.any(factors > 1.2):
            raise ValueError("capacity_vs_temp.y (capacity factor) must be in (0, 1.2]")
        return self


class Auxiliary(_Strict):
    """Auxiliary loads and the cabin climate model (see :mod:`tripsim.cabin`)."""

    base_w: float = Field(ge=0.0, le=20_000.0, description="electronics, lights, pumps [W]")
    cabin_set_c: float = Field(21.0, ge=10.0, le=30.0, description="cabin set point [°C]")
    cabin_deadband_k: float = Field(3.0, ge=0.0, le=15.0, description="no climate load within [K]")
    cabin_ua_w_per_k: float = Field(
        110.0, ge=0.0, le=2000.0, description="cabin heat loss incl. ventilation air [W/K]"
    )
    heater_max_w: float = Field(6000.0, ge=0.0, le=30_000.0, description="heating power cap [W]")
    cooler_max_w: float = Field(4000.0, ge=0.0, le=30_000.0, description="cooling power cap [W]")
    heat_pump: bool = Field(False, description="heat pump (COP from heat_pump_cop) or resistive")
    heat_pump_cop: Curve | None = Field(None, description="COP (y) over ambient °C (x)")
    cooling_cop: float = Field(2.0, gt=0.5, le=8.0, description="air-conditioning COP [-]")
    cabin_solar_aperture_m2: float = Field(
        0.6, ge=0.0, le=20.0,
        description="sun through the glass: heat into the cabin per W/m² of horizontal "
        "irradiance (glazing area × transmittance) [m²]",
    )
    battery_heat_below_c: float = Field(
        5.0, ge=-40.0, le=25.0, description="battery warming starts below this ambient [°C]"
    )
    battery_heat_w_per_k: float = Field(
        25.0, ge=0.0, le=1000.0, description="battery warming per K below that [W/K]"
    )
    battery_cool_above_c: float = Field(
        30.0, ge=15.0, le=60.0, description="battery cooling starts above this ambient [°C]"
    )
    battery_cool_w_per_k: float = Field(
        30.0, ge=0.0, le=1000.0, description="battery cooling per K above that [W/K]"
    )

    @model_validator(mode="after")
    def _check_cop(self) -> Self:
        if self.heat_pump_cop is not None:
            cop = np.asarray(self.heat_pump_cop.y)
            if np.any(cop <= 0.0) or np.any(cop > MAX_COP):
                raise ValueError(f"heat_pump_cop.y (COP) must be in (0, {MAX_COP:g}], got "
                                 f"{cop.min():g} to {cop.max():g}")
        return self


class PanelFacet(_Strict):
    """One flat facet of solar cells on the body (used by the solar model).

    Azimuth is measured clockwise from the vehicle's nose: 0 faces forward,
    90 the right-hand side; tilt 0 is flat (roof), 90 vertical.
    """

    name: str = "facet"
    area_m2: float = Field(gt=0.0, le=100.0, description="cell area [m²]")
    efficiency: Efficiency = Field(description="cell efficiency at 25 °C [-]")
    tilt_deg: float = Field(0.0, ge=0.0, le=90.0)
    azimuth_deg: float = Field(0.0, ge=-360.0, le=360.0, description="relative to the nose [°]")
    temp_coeff_per_k: float = Field(-0.0035, ge=-0.02, le=0.0, description="power change [1/K]")
    shading: Fraction = Field(0.0, description="share of light lost to shade [-]")
    system_efficiency: Efficiency = Field(0.93, description="converter and wiring to battery [-]")


class Charging(_Strict):
    """How the vehicle takes charge (used by the charging planner)."""

    ac_max_kw: float = Field(11.0, gt=0.0, le=50.0, description="on-board charger limit [kW]")
    dc_max_kw: float = Field(0.0, ge=0.0, le=1000.0, description="DC fast-charge limit [kW]")
    curve: Curve | None = Field(None, description="DC power (y, kW) over SoC (x, 0-1)")
    efficiency: Efficiency = Field(0.92, description="plug to battery [-]")
    connectors: list[str] = Field(default_factory=lambda: ["type2"])

    @model_validator(mode="after")
    def _check_curve(self) -> Self:
        if self.curve is not None:
            soc, kw = np.asarray(self.curve.x), np.asarray(self.curve.y)
            if soc.min() < 0.0 or soc.max() > 1.0:
                raise ValueError("curve.x (state of charge) must lie within 0 to 1")
            if np.any(kw <= 0.0) or np.any(kw > 1000.0):
                i = int(np.flatnonzero((kw <= 0.0) | (kw > 1000.0))[0])
                raise ValueError(f"curve.y (power) must be above 0 and at most 1000 kW at every "
                                 f"point; got {kw[i]:g} kW at SoC {soc[i]:g}")
        return self


class Vehicle(_Strict):
    """A vehicle as the simulator sees it."""

    name: str = "vehicle"
    body: Body
    drivetrain: Drivetrain
    battery: Battery
    auxiliary: Auxiliary
    panels: list[PanelFacet] = Field(default_factory=list)
    charging: Charging = Field(default_factory=Charging)

    @property
    def mass_kg(self) -> float:
        """Mass with payload [kg]."""
        return self.body.total_mass_kg

    @property
    def inertial_mass_kg(self) -> float:
        """Effective inertial mass [kg] (:attr:`Body.inertial_mass_kg`)."""
        return self.body.inertial_mass_kg

    def battery_temp_c(self, ambient_c: float | np.ndarray) -> float | np.ndarray:
        """Temperature the pack works at in an ambient temperature [°C].

        A vehicle that warms its battery (``battery_heat_w_per_k > 0``) holds it at
        ``battery_heat_below_c`` in colder air, and pays for it in the auxiliary load
        (:mod:`tripsim.cabin`); one that does not works at ambient.  Cold is counted
        once: either as lost capacity or as heating energy, not both.
        """
        aux = self.auxiliary
        if aux.battery_heat_w_per_k > 0.0:
            return np.maximum(ambient_c, aux.battery_heat_below_c)
        return ambient_c

    def capacity_factor(self, ambient_c: float | np.ndarray) -> float | np.ndarray:
        """Usable-capacity factor (``[battery] capacity_vs_temp``) at the pack's temperature.

        The pack's temperature follows :meth:`battery_temp_c`.  Scalars in, a float out;
        arrays in, an array out.
        """
        factor = self.battery.capacity_vs_temp(self.battery_temp_c(ambient_c))
        return float(factor) if np.ndim(factor) == 0 else factor
