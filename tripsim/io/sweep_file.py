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

from pathlib import Path
from typing import Any

from tripsim.io._files import read_toml

__all__ = ["read_sweep_file"]


def read_sweep_file(path: str | Path) -> dict[str, Any]:
    """The parsed TOML of a sweep spec (not yet validated).

    Read as scenario files are (:func:`tripsim.io._files.read_toml`, with their size cap):
    a missing file, a folder, a device, a file too large, text that is not UTF-8 or not
    TOML end in a one-line error naming the file.
    """
    return read_toml(path, "scenario")
