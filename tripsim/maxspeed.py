"""Speed limits from OpenStreetMap ``maxspeed`` tags, with defaults by road class.

The tag grammar follows the OpenStreetMap wiki page *Key:maxspeed*:

* a plain number is km/h (``"50"``); a unit may follow: ``"30 mph"``,
  ``"10 knots"`` (``"km/h"``, ``"kmh"``, ``"kph"`` are accepted too);
* ``"none"`` means no posted limit (for example on parts of German motorways);
* ``"walk"`` means walking pace;
* ``"signals"`` and ``"variable"`` mean the limit is shown on electronic signs
  and is not in the data;
* a country-implicit value ``"XX:zone"`` (``"DE:urban"``, ``"GB:nsl_single"``)
  stands for that country's statutory limit for such a road;
* several values separated by ``";"`` (different lanes or conditions).

osmnx's own ``add_edge_speeds`` fills missing speeds with the mean of the
loaded graph for that road class (so results depend on the map extent) and
leaves ``"none"``, ``"walk"`` and lists unparsed; tripsim parses the tags here
and falls back to a documented table that the user can override.
"""

from __future__ import annotations

import math
import re
from collections.abc import Iterable, Mapping
from typing import Any

import numpy as np

from tripsim.units import M_PER_MI, M_PER_NMI

__all__ = [
    "DEFAULT_HIGHWAY_KPH",
    "IMPLICIT_KPH",
    "NONE_KPH",
    "WALK_KPH",
    "edge_speed_limit_kph",
    "parse_maxspeed",
]

#: Speed a driver holds where the tag says ``"none"`` [km/h].  130 km/h is the
#: advisory speed ("Richtgeschwindigkeit") on German motorways without a
#: limit (from memory of the StVO Autobahn-Richtgeschwindigkeits-Verordnung).
NONE_KPH = 130.0

#: Walking pace for ``maxspeed=walk`` [km/h]; common practice reads it as
#: 4–7 km/h, tripsim takes 6.
WALK_KPH = 6.0

#: Statutory limits behind country-implicit values [km/h].  From memory of the
#: table on the OSM wiki page *Default speed limits*; extend or override it by
#: passing ``implicit=`` to :func:`parse_maxspeed`.  ``None`` marks "no limit".
IMPLICIT_KPH: dict[str, float | None] = {
    "AT:urban": 50.0, "AT:rural": 100.0, "AT:trunk": 100.0, "AT:motorway": 130.0,
    "BE:urban": 50.0, "BE:rural": 70.0, "BE:motorway": 120.0,
    "CH:urban": 50.0, "CH:rural": 80.0, "CH:trunk": 100.0, "CH:motorway": 120.0,
    "CZ:urban": 50.0, "CZ:rural": 90.0, "CZ:motorway": 130.0,
    "DE:urban": 50.0, "DE:rural": 100.0, "DE:motorway": None, "DE:bicycle_road": 30.0,
    "DE:zone30": 30.0, "DE:zone:30": 30.0, "DE:living_street": WALK_KPH,
    "DK:urban": 50.0, "DK:rural": 80.0, "DK:motorway": 130.0,
    "ES:urban": 50.0, "ES:rural": 90.0, "ES:motorway": 120.0,
    "FI:urban": 50.0, "FI:rural": 80.0, "FI:motorway": 120.0,
    "FR:urban": 50.0, "FR:rural": 80.0, "FR:motorway": 130.0, "FR:zone30": 30.0,
    "GB:nsl_single": 60.0 * M_PER_MI / 1000.0, "GB:nsl_dual": 70.0 * M_PER_MI / 1000.0,
    "GB:motorway": 70.0 * M_PER_MI / 1000.0,
    "UK:nsl_single": 60.0 * M_PER_MI / 1000.0, "UK:nsl_dual": 70.0 * M_PER_MI / 1000.0,
    "UK:motorway": 70.0 * M_PER_MI / 1000.0,
    "IT:urban": 50.0, "IT:rural": 90.0, "IT:trunk": 110.0, "IT:motorway": 130.0,
    "NL:urban": 50.0, "NL:rural": 80.0, "NL:trunk": 100.0, "NL:motorway": 130.0,
    "NO:urban": 50.0, "NO:rural": 80.0, "NO:motorway": 110.0,
    "PL:urban": 50.0, "PL:rural": 90.0, "PL:expressway": 120.0, "PL:motorway": 140.0,
    "PT:urban": 50.0, "PT:rural": 90.0, "PT:motorway": 120.0,
    "RU:urban": 60.0, "RU:rural": 90.0, "RU:motorway": 110.0, "RU:living_street": 20.0,
    "SE:urban": 50.0, "SE:rural": 70.0, "SE:motorway": 110.0,
}

#: Speeds assumed where a road has no usable ``maxspeed`` tag, by its OSM
#: ``highway`` class [km/h].  These are tripsim's own choices, typical of
#: statutory limits in Europe; override them per call with ``defaults=``.
DEFAULT_HIGHWAY_KPH: dict[str, float] = {
    "motorway": 110.0,
    "motorway_link": 60.0,
    "trunk": 90.0,
    "trunk_link": 50.0,
    "primary": 80.0,
    "primary_link": 50.0,
    "secondary": 70.0,
    "secondary_link": 40.0,
    "tertiary": 60.0,
    "tertiary_link": 40.0,
    "unclassified": 50.0,
    "road": 50.0,
    "residential": 30.0,
    "living_street": 10.0,
    "service": 20.0,
    "busway": 50.0,
}
#: Used when the road class itself is missing or not in the table [km/h].
FALLBACK_KPH = 50.0

_NUMBER_UNIT = re.compile(
    r"^\s*(?P<num>\d+(?:[.,]\d+)?)\s*(?P<unit>mph|knots?|kn|km/h|kmh|kph)?\s*$",
    re.IGNORECASE,
)
_UNIT_KPH = {
    None: 1.0,
    "km/h": 1.0,
    "kmh": 1.0,
    "kph": 1.0,
    "mph": M_PER_MI / 1000.0,
    "knot": M_PER_NMI / 1000.0,
    "knots": M_PER_NMI / 1000.0,
    "kn": M_PER_NMI / 1000.0,
}


def _parse_one(
    text: str, *, none_kph: float, walk_kph: float, implicit: Mapping[str, float | None]
) -> float:
    match = _NUMBER_UNIT.match(text)
    if match:
        unit = match["unit"].lower() if match["unit"] else None
        return float(match["num"].replace(",", ".")) * _UNIT_KPH[unit]
    word = text.strip()
    low = word.lower()
    if low == "none":
        return none_kph
    if low == "walk":
        return walk_kph
    if ":" in word:
        country, _, zone = word.partition(":")
        key = f"{country.upper()}:{zone.lower()}"
        if key in implicit:
            value = implicit[key]
            return none_kph if value is None else float(value)
        if zone.lower() in ("living_street", "walk"):
            return walk_kph
        # "XX:zone30", "XX:zone:20" carry their number
        digits = re.search(r"(\d+)", zone)
        if digits and zone.lower().startswith("zone"):
            return float(digits[1])
    return math.nan  # "signals", "variable", unknown words


def parse_maxspeed(
    value: Any,
    *,
    none_kph: float = NONE_KPH,
    walk_kph: float = WALK_KPH,
    implicit: Mapping[str, float | None] | None = None,
) -> float:
    """Parse one OSM ``maxspeed`` value into km/h.

    Parameters
    ----------
    value : str, number, list of those, or None
        The tag value as found in the data.  Lists (from osmnx when it merged
        ways, or ``"50;30"`` in the tag) give their lowest speed: where lanes or
        conditions differ, the lowest is the one every driver may meet.
    none_kph : float, default :data:`NONE_KPH`
        Speed for ``"none"`` (no posted limit). [km/h]
    walk_kph : float, default :data:`WALK_KPH`
        Speed for ``"walk"``. [km/h]
    implicit : mapping, optional
        Country-implicit values, ``{"DE:urban": 50.0, ...}``; ``None`` in the
        mapping means "no limit".  Defaults to :data:`IMPLICIT_KPH`.

    Returns
    -------
    float
        Limit in km/h, or NaN when the value says nothing numeric
        (missing, ``"signals"``, ``"variable"``, unknown words).

    References
    ----------
    OpenStreetMap wiki, *Key:maxspeed* and *Default speed limits*.

    Examples
    --------
    >>> parse_maxspeed("30 mph")
    48.28032
    >>> parse_maxspeed("50;30")
    30.0
    """
    table = IMPLICIT_KPH if implicit is None else implicit
    if value is None:
        return math.nan
    if isinstance(value, (int, float, np.integer, np.floating)):
        return float(value) if np.isfinite(value) and value > 0 else math.nan
    if isinstance(value, str):
        parts: Iterable[Any] = value.split(";") if ";" in value else [value]
        if len(parts) == 1:
            kph = _parse_one(value, none_kph=none_kph, walk_kph=walk_kph, implicit=table)
            return kph if kph > 0 else math.nan
    else:
        parts = value
    speeds = [parse_maxspeed(p, none_kph=none_kph, walk_kph=walk_kph, implicit=table)
              for p in parts]
    finite = [s for s in speeds if np.isfinite(s)]
    return min(finite) if finite else math.nan


def edge_speed_limit_kph(
    maxspeed: Any,
    highway: Any,
    *,
    defaults: Mapping[str, float] | None = None,
    none_kph: float = NONE_KPH,
    implicit: Mapping[str, float | None] | None = None,
) -> tuple[float, bool]:
    """Speed limit of one road edge: its tag when usable, else its class default.

    Parameters
    ----------
    maxspeed : tag value or None
        The edge's ``maxspeed`` (see :func:`parse_maxspeed`).
    highway : str, list of str, or None
        The edge's OSM ``highway`` class; for a list the first known class
        counts.
    defaults : mapping, optional
        Speeds by ``highway`` class [km/h]; merged over
        :data:`DEFAULT_HIGHWAY_KPH`.
    none_kph, implicit
        As in :func:`parse_maxspeed`.

    Returns
    -------
    speed_kph : float
        The limit. [km/h]
    from_tag : bool
        True when the value came from the tag, False when from the table.
    """
    kph = parse_maxspeed(maxspeed, none_kph=none_kph, implicit=implicit)
    if np.isfinite(kph):
        return kph, True
    table = dict(DEFAULT_HIGHWAY_KPH)
    if defaults:
        table.update(defaults)
    classes = highway if isinstance(highway, (list, tuple)) else [highway]
    for hw in classes:
        if isinstance(hw, str) and hw in table:
            return float(table[hw]), False
    return float(table.get("_fallback", FALLBACK_KPH)), False
