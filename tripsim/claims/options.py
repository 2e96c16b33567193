"""What a range claim is and how it is checked: light models, no computation.

:class:`Claim` (the claimed distance and its stated conditions) and
:class:`ClaimOptions` (sampling, corridor, the options of the drive) are read by
:mod:`tripsim.scenario` for ``kind = "claim"`` without loading the model;
:mod:`tripsim.claims.range_claim` computes them.
"""

from __future__ import annotations

from typing import Annotated, Any, Literal

from pydantic import AfterValidator, model_validator

from tripsim.options import Count, Number, OptionConflict, Options, option
from tripsim.timebase import parse_hhmm_s, parse_window_h
from tripsim.units import M_PER_MI

__all__ = ["CALENDAR_YEAR", "LAB_TEMP_C", "SENSITIVITY_SAMPLES", "Claim", "ClaimOptions"]

#: The calendar year the typical year's days are placed in (365 days, not a leap year).
CALENDAR_YEAR = 2026
#: Departures over which the sensitivity table is computed (evenly spread).
SENSITIVITY_SAMPLES = 52
#: Temperature of a test laboratory, for what a claim does not state: 23 °C (the
#: type-approval test temperature of UN GTR 15 (WLTP), from memory; common practice).
LAB_TEMP_C = 23.0


class Claim(Options):
    """A range claim: a distance and, optionally, the conditions it was made in.

    Parameters
    ----------
    distance_km : float
        The claimed range. [km]
    unit : {"km", "mi"}, default "km"
        How the claim was stated (reports follow it).
    speed_kph : float, optional
        Stated speed: caps the speed limits. [km/h]
    temp_c : float, optional
        Stated ambient temperature (default :data:`LAB_TEMP_C`). [°C]
    climate : bool, optional
        Stated climate control on or off (default off).
    payload_kg : float, optional
        Stated payload: replaces the vehicle file's. [kg]
    """

    distance_km: Number = option(..., gt=0.0, le=20_000.0, cli="--claim-km")
    unit: Literal["km", "mi"] = option("km")
    speed_kph: Number | None = option(None, ge=5.0, le=300.0, cli="--stated-speed-kph")
    temp_c: Number | None = option(None, ge=-50.0, le=55.0, cli="--stated-temp-c")
    climate: bool | None = option(None, cli="--stated-climate")
    payload_kg: Number | None = option(None, ge=0.0, le=40_000.0, cli="--stated-payload-kg")

    @property
    def distance(self) -> float:
        """The claimed distance in its own unit."""
        return self.distance_km * (1000.0 / M_PER_MI if self.unit == "mi" else 1.0)

    def stated(self) -> dict[str, Any]:
        """The conditions the claim states (only those given)."""
        keys = ("speed_kph", "temp_c", "climate", "payload_kg")
        return {k: getattr(self, k) for k in keys if getattr(self, k) is not None}


def _time_of_day(text: str) -> str:
    parse_hhmm_s(text, "--depart-time")
    return text


def _window(text: str) -> str:
    parse_window_h(text, "--hours")
    return text


class ClaimOptions(Options):
    """How a claim is checked (see the module notes).

    Parameters
    ----------
    corridor : {"auto", "loop", "out-and-back"}, default "auto"
        How the route is driven; "auto": a loop when it ends at its start.
    depart_time : str, default "08:00"
        Local departure every day of the year.
    draws : int, optional
        Instead, this many departures at seeded random dates and hours.
    seed : int, default 1
        Seed of the draws.
    hours : str, default "06:00-20:00"
        Daily window the random departures fall in (local time).
    speed_factor : float, default 1
        Share of the speed limit driven.
    payload_kg : float, optional
        Payload (default: the claim's stated payload, else the vehicle file's). [kg]
    cabin_set_c : float, optional
        Cabin set point (default: the vehicle file's). [°C]
    start_soc, reserve_soc : float, default 1 and 0
        State of charge at the start, and where the range ends.
    crr : float, optional
        Tyres' rolling-resistance coefficient (default: the vehicle file's).
    capacity_factor : float, default 1
        Usable energy as a share of the vehicle file's (ageing).
    sensitivity_samples : int, default 52
        Departures of the sensitivity table (0: no table).
    max_km : float, optional
        Longest drive; a sample that does not run empty by then is reported as at least
        this far (default: the larger of 4 × the claim and 1000 km). [km]
    """

    corridor: Literal["auto", "loop", "out-and-back"] = option("auto", cli="--corridor")
    depart_time: Annotated[str, AfterValidator(_time_of_day)] = option("08:00",
                                                                       cli="--depart-time")
    draws: Count | None = option(None, ge=1, le=20_000, cli="--draws")
    seed: Count = option(1, ge=0, le=2**32 - 1, cli="--seed")
    hours: Annotated[str, AfterValidator(_window)] = option("06:00-20:00", cli="--hours")
    speed_factor: Number = option(1.0, ge=0.2, le=2.0, cli="--speed-factor")
    payload_kg: Number | None = option(None, ge=0.0, le=40_000.0, cli="--payload-kg")
    cabin_set_c: Number | None = option(None, ge=10.0, le=30.0, cli="--cabin-set-c")
    start_soc: Number = option(1.0, gt=0.0, le=1.0, cli="--start-soc")
    reserve_soc: Number = option(0.0, ge=0.0, lt=1.0, cli="--reserve")
    crr: Number | None = option(None, gt=0.0005, le=0.05, cli="--crr")
    capacity_factor: Number = option(1.0, gt=0.2, le=1.2, cli="--capacity-factor")
    sensitivity_samples: Count = option(SENSITIVITY_SAMPLES, ge=0, le=20_000,
                                        cli="--sensitivity-samples")
    max_km: Number | None = option(None, gt=1.0, le=100_000.0, cli="--max-km")

    @model_validator(mode="after")
    def _consistent(self) -> ClaimOptions:
        if self.reserve_soc >= self.start_soc:
            raise OptionConflict("--reserve", f"{self.reserve_soc:g} must be below the start "
                                 f"charge {self.start_soc:g}")
        return self
