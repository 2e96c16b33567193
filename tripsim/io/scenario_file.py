"""Read scenarios from a TOML file (``tripsim run FILE``).

A file holds one scenario (its keys at the top) or a list of them (``[[scenario]]``),
with an optional ``[defaults]`` table merged under each.  The keys are those of
:class:`~tripsim.scenario.Scenario`; file names in it are relative to the file's folder.
A minimal simulation::

    kind = "simulate"
    vehicle = "vehicles/swift_tern.toml"
    speed_kph = 50
    [route]
    file = "harbour_loop.gpx"
    [conditions]
    temp_c = 14

Errors name the file, the scenario (``scenario #2``), the table and the key.
"""

from __future__ import annotations

import tomllib
from pathlib import Path
from typing import Any

from pydantic import ValidationError

from tripsim.errors import TripsimInputError
from tripsim.options import OptionConflict, raw_errors
from tripsim.scenario import Scenario, scenario_error

__all__ = ["MAX_SCENARIO_BYTES", "read_scenarios", "scenarios_from_dict"]

#: A scenario file larger than this is not one. [bytes]
MAX_SCENARIO_BYTES = 4_000_000


def _merge(base: dict[str, Any], over: dict[str, Any]) -> dict[str, Any]:
    out = dict(base)
    for key, value in over.items():
        if isinstance(value, dict) and isinstance(out.get(key), dict):
            out[key] = _merge(out[key], value)
        else:
            out[key] = value
    return out


def scenarios_from_dict(doc: dict[str, Any], source: str = "scenario") -> list[Scenario]:
    """Scenarios from a parsed document (TOML or JSON)."""
    if not isinstance(doc, dict):
        raise TripsimInputError("expected a table of scenario keys", source)
    defaults = doc.get("defaults", {})
    if not isinstance(defaults, dict):
        raise TripsimInputError("[defaults] must be a table", source)
    if "scenario" in doc:
        items = doc["scenario"]
        if not isinstance(items, list) or not items or not all(isinstance(i, dict)
                                                                for i in items):
            raise TripsimInputError("[[scenario]] must be a list of tables", source)
        extra = set(doc) - {"scenario", "defaults"}
        if extra:
            raise TripsimInputError(f"{sorted(extra)[0]}: unknown key beside [[scenario]] "
                                    "(put it in [defaults] or in each scenario)", source)
        labelled = [(f"scenario #{i + 1}", item) for i, item in enumerate(items)]
    else:
        labelled = [("", {k: v for k, v in doc.items() if k != "defaults"})]
    out = []
    for label, item in labelled:
        where = f"{source}: {label}" if label else source
        try:
            with raw_errors():
                out.append(Scenario.model_validate(_merge(defaults, item)))
        except (ValidationError, OptionConflict) as exc:
            raise scenario_error(exc, flags=False, source=where) from None
    names = [s.title for s in out]
    doubled = {n for n in names if names.count(n) > 1}
    if doubled:
        raise TripsimInputError(f"two scenarios are named {sorted(doubled)[0]!r}; give each a "
                                "name of its own", source)
    return out


def read_scenarios(path: str | Path) -> list[Scenario]:
    """Read the scenarios of a TOML file (see the module notes)."""
    path = Path(path)
    if not path.exists():
        raise TripsimInputError("no such file", path)
    if not path.is_file():
        raise TripsimInputError("is a folder or a special file, expected a scenario file",
                                path)
    if path.stat().st_size > MAX_SCENARIO_BYTES:
        raise TripsimInputError(f"larger than {MAX_SCENARIO_BYTES // 1_000_000} MB: not a "
                                "scenario file", path)
    try:
        text = path.read_bytes().decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        raise TripsimInputError(f"not UTF-8 text (byte {exc.start})", path) from None
    except OSError as exc:
        raise TripsimInputError(f"cannot read ({exc.strerror})", path) from None
    try:
        doc = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise TripsimInputError(f"not valid TOML: {exc}", path) from None
    except RecursionError:
        raise TripsimInputError("nested too deeply", path) from None
    return scenarios_from_dict(doc, str(path))
