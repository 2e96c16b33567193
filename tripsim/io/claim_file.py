"""Read product-team specs (TOML): range claims (``[[claim]]``) and logged drives (``[[log]]``).

The demo keeps its claim and its logged drive in ``routes_demo/claims.toml``; the keys
mirror the options of ``tripsim claim`` and ``tripsim simulate --from-log``.  Paths are
relative to the file's folder; ``vehicle`` names a file in the ``vehicles/`` folder beside
it (without ``.toml``).
"""

from __future__ import annotations

import tomllib
from pathlib import Path

import pydantic
from pydantic import BaseModel, ConfigDict, Field

from tripsim.errors import TripsimInputError
from tripsim.io._validation import format_validation_error

__all__ = ["ClaimSpec", "LogSpec", "read_claim_specs", "read_log_specs"]


class _Spec(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)

    name: str = Field(min_length=1)
    description: str = ""
    vehicle: str = Field(min_length=1)
    weather: Path | None = None


class ClaimSpec(_Spec):
    """A range claim to check (``[[claim]]``): the claim, its corridor and its weather."""

    route: Path
    corridor: str | None = None
    waypoints: str | None = None
    dem: Path | None = None
    weather: Path
    speed_kph: float | None = Field(None, gt=0.0, le=300.0)
    claim_km: float = Field(gt=0.0, le=20_000.0)
    stated_speed_kph: float | None = None
    stated_temp_c: float | None = None
    stated_climate: bool | None = None
    stated_payload_kg: float | None = None
    cycle: Path | None = None
    depart_time: str = "08:00"
    sensitivity_samples: int = Field(52, ge=0, le=20_000)


class LogSpec(_Spec):
    """A logged drive to hold the model against (``[[log]]``)."""

    log: Path
    dem: Path | None = None


def _load(path: Path) -> dict:
    try:
        return tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise TripsimInputError(f"cannot read the file ({exc.strerror})", path) from None
    except tomllib.TOMLDecodeError as exc:
        raise TripsimInputError(f"not valid TOML: {exc}", path) from None


def _specs(path: Path, table: str, model: type[_Spec], paths: tuple[str, ...]) -> list:
    out = []
    for i, raw in enumerate(_load(path).get(table, [])):
        try:
            spec = model.model_validate(raw)
        except pydantic.ValidationError as exc:
            problems = "; ".join(format_validation_error({**e, "loc": (table, str(i), *e["loc"])})
                                 for e in exc.errors())
            raise TripsimInputError(problems, path) from None
        update = {k: path.parent / getattr(spec, k) for k in paths if getattr(spec, k)}
        out.append(spec.model_copy(update=update))
    return out


def read_claim_specs(path: str | Path) -> list[ClaimSpec]:
    """Read ``[[claim]]`` tables; relative paths resolve beside the file."""
    return _specs(Path(path), "claim", ClaimSpec, ("route", "dem", "weather", "cycle"))


def read_log_specs(path: str | Path) -> list[LogSpec]:
    """Read ``[[log]]`` tables; relative paths resolve beside the file."""
    return _specs(Path(path), "log", LogSpec, ("log", "dem", "weather"))
