"""Read vehicle files (TOML) into validated :class:`tripsim.vehicle.Vehicle` models."""

from __future__ import annotations

from pathlib import Path
from typing import Any

import pydantic

from tripsim.errors import TripsimInputError, VehicleFileError
from tripsim.io._files import read_toml
from tripsim.io._validation import format_validation_error
from tripsim.plan.sites import check_connector
from tripsim.vehicle import Vehicle

__all__ = ["parse_vehicle", "read_vehicle"]


def _check_connectors(vehicle: Vehicle, source: str) -> Vehicle:
    names = vehicle.charging.connectors
    try:
        known = [check_connector(c, "") for c in names]
    except TripsimInputError as exc:
        raise VehicleFileError(f"[charging] connectors: {exc.problem}", source) from None
    return vehicle if known == names else vehicle.model_copy(
        update={"charging": vehicle.charging.model_copy(update={"connectors": known})})


def parse_vehicle(data: dict[str, Any], source: str = "<vehicle>") -> Vehicle:
    """Validate a vehicle given as a dict (the parsed TOML).

    Raises
    ------
    VehicleFileError
        Naming the key, the value and the allowed range of each problem.
    """
    try:
        vehicle = Vehicle.model_validate(data)
    except pydantic.ValidationError as exc:
        problems = [format_validation_error(e) for e in exc.errors()]
        raise VehicleFileError("; ".join(problems), source) from None
    return _check_connectors(vehicle, source)


def read_vehicle(path: str | Path) -> Vehicle:
    """Read and validate a vehicle file.

    Parameters
    ----------
    path : str or Path
        TOML file (UTF-8, at most 1 MB) with the tables ``[body]``,
        ``[drivetrain]``, ``[battery]``, ``[auxiliary]`` and optionally
        ``[[panels]]`` and ``[charging]``.

    Returns
    -------
    Vehicle

    Raises
    ------
    VehicleFileError
        If the file is missing, not a regular file, not UTF-8 TOML, or a key is
        unknown, missing, of the wrong type (``true`` where a number belongs) or out
        of range.
    """
    path = Path(path)
    data = read_toml(path, "vehicle", error=VehicleFileError)
    data.setdefault("name", path.stem)
    return parse_vehicle(data, str(path))
