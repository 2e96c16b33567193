"""Read a sweep spec (TOML) for ``tripsim sweep``.

A spec is a base scenario (the ``[scenario]`` table: the keys of a scenario file, see
:mod:`tripsim.io.scenario_file`) and the axes along which runs differ (``[axes]``),
crossed as a grid or drawn at random (``[draws]``).  This module only reads the file;
:mod:`tripsim.sweep.spec` validates what it holds and describes every key.  A short
example (file names are relative to the spec's folder)::

    name = "harbour-speeds"
    [scenario]
    kind = "simulate"
    vehicle = "vehicles/swift_tern.toml"
    speed_kph = 50
    route = { file = "harbour_loop.gpx" }
    weather = { source = "tamsreach.epw" }
    [axes]
    "drive.speed_factor" = [0.9, 1.0, 1.1]
    "depart.date" = { start = 2026-01-05, stop = 2026-12-28, step_days = 14 }
    "vehicle.body.payload_kg" = { start = 80, stop = 200, num = 3 }
"""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from tripsim.errors import TripsimInputError

__all__ = ["MAX_SWEEP_BYTES", "read_sweep_file"]

#: A spec file larger than this is not one. [bytes]
MAX_SWEEP_BYTES = 4_000_000


def read_sweep_file(path: str | Path) -> dict[str, Any]:
    """The parsed TOML of a sweep spec (not yet validated).

    Raises
    ------
    TripsimInputError
        Naming the file: missing, a folder, too large, not UTF-8 or not TOML.
    """
    path = Path(path)
    if not path.exists():
        raise TripsimInputError("no such file", path)
    if not path.is_file():
        raise TripsimInputError("is a folder or a special file, expected a sweep spec", path)
    if path.stat().st_size > MAX_SWEEP_BYTES:
        raise TripsimInputError(f"larger than {MAX_SWEEP_BYTES // 1_000_000} MB: not a sweep "
                                "spec", path)
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise TripsimInputError(f"not UTF-8 text (byte {exc.start})", path) from None
    except OSError as exc:
        raise TripsimInputError(f"cannot read ({exc.strerror})", path) from None
    try:
        return tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise TripsimInputError(f"not valid TOML: {exc}", path) from None
    except RecursionError:
        raise TripsimInputError("nested too deeply", path) from None
