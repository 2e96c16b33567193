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

from pathlib import Path
from typing import Any

from pydantic import ValidationError

from tripsim.errors import TripsimInputError
from tripsim.io._files import read_toml
from tripsim.io._limits import SIZE_CAP_MB
from tripsim.options import OptionConflict, raw_errors
from tripsim.scenario import Scenario, scenario_error

__all__ = ["MAX_SCENARIO_BYTES", "read_scenarios", "scenarios_from_dict"]

#: A scenario file larger than this is not one (:data:`tripsim.io._limits.SIZE_CAP_MB`,
#: raised with ``TRIPSIM_MAX_SCENARIO_MB``). [bytes]
MAX_SCENARIO_BYTES = int(SIZE_CAP_MB["scenario"] * 2**20)


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
        labelled = [(f"scenario #{i + 1}" + (f" ({item['name']!r})" if isinstance(
            item.get("name"), str) else ""), item) for i, item in enumerate(items)]
    else:
        labelled = [("", {k: v for k, v in doc.items() if k != "defaults"})]
    out = []
    for label, item in labelled:
        where = f"{source}: {label}" if label else source
        try:
            with raw_errors():
                out.append(Scenario.model_validate(_merge(defaults, item)))
        except (ValidationError, OptionConflict) as exc:
            kind = _merge(defaults, item).get("kind")
            raise scenario_error(exc, flags=False, source=where,
                                 kind=kind if isinstance(kind, str) else None) from None
    names = [s.title for s in out]
    doubled = {n for n in names if names.count(n) > 1}
    if doubled:
        raise TripsimInputError(f"two scenarios are named {sorted(doubled)[0]!r}; give each a "
                                "name of its own", source)
    return out


def read_scenarios(path: str | Path) -> list[Scenario]:
    """Read the scenarios of a TOML file (see the module notes)."""
    path = Path(path)
    return scenarios_from_dict(read_toml(path, "scenario"), str(path))
