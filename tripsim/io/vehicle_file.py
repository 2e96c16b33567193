"""Read vehicle files (TOML) into validated :class:`tripsim.vehicle.Vehicle` models."""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

import pydantic

from tripsim.errors import VehicleFileError
from tripsim.io._validation import format_validation_error
from tripsim.vehicle import Vehicle

__all__ = ["parse_vehicle", "read_vehicle"]


def parse_vehicle(data: dict[str, Any], source: str = "<vehicle>") -> Vehicle:
    """Validate a vehicle given as a dict (the parsed TOML).

    Raises
    ------
    VehicleFileError
        Naming the key, the value and the allowed range of each problem.
    """
    try:
        return Vehicle.model_validate(data)
    except pydantic.ValidationError as exc:
        problems = [format_validation_error(e) for e in exc.errors()]
        raise VehicleFileError("; ".join(problems), source) from None


def read_vehicle(path: str | Path) -> Vehicle:
    """Read and validate a vehicle file.

    Parameters
    ----------
    path : str or Path
        TOML file with the tables ``[body]``, ``[drivetrain]``, ``[battery]``,
        ``[auxiliary]`` and optionally ``[[panels]]`` and ``[charging]``.

    Returns
    -------
    Vehicle

    Raises
    ------
    VehicleFileError
        If the file is missing, not TOML, or a key is unknown, missing or out of
        range.
    """
    path = Path(path)
    try:
        data = tomllib.loads(path.read_text(encoding="utf-8"))
    except OSError as exc:
        raise VehicleFileError(f"cannot read the file ({exc.strerror})", path) from None
    except tomllib.TOMLDecodeError as exc:
        raise VehicleFileError(f"not valid TOML: {exc}", path) from None
    data.setdefault("name", path.stem)
    return parse_vehicle(data, str(path))
