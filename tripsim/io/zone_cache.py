"""Time-zone names found before, kept on disk so a command need not look them up again.

Finding a zone from coordinates loads boundary data (about half a second); the answers
for places already seen are kept in ``zones.json`` in tripsim's cache folder (keyed by
the place rounded to 1e-4°, about 10 m) and written atomically.  A cache that cannot be
read or written is ignored: the answer is then looked up as usual.
"""

from __future__ import annotations

import contextlib
import json
import os
from pathlib import Path

from tripsim.errors import TripsimInputError
from tripsim.zones import find_zone_name

__all__ = ["cached_zone_name", "zone_cache_path"]

_MAX_ENTRIES = 10_000


def zone_cache_path() -> Path:
    """``$TRIPSIM_CACHE_DIR/zones.json`` (default ``~/.cache/tripsim/zones.json``)."""
    base = os.environ.get("TRIPSIM_CACHE_DIR") or Path(
        os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "tripsim"
    return Path(base) / "zones.json"


def _read(path: Path) -> dict[str, str]:
    with contextlib.suppress(OSError, ValueError):
        if path.is_file() and path.stat().st_size < 2_000_000:
            data = json.loads(path.read_text(encoding="utf-8"))
            if isinstance(data, dict):
                return {str(k): str(v) for k, v in data.items()}
    return {}


def cached_zone_name(lat: float, lon: float) -> str:
    """:func:`tripsim.zones.find_zone_name`, remembered on disk."""
    path = zone_cache_path()
    key = f"{lat:.4f},{lon:.4f}"
    known = _read(path)
    if key in known:
        return known[key]
    name = find_zone_name(lat, lon)
    if len(known) < _MAX_ENTRIES:
        known[key] = name
        with contextlib.suppress(OSError, TripsimInputError):
            from tripsim.io.export import write_json

            path.parent.mkdir(parents=True, exist_ok=True)
            write_json(known, path)
    return name
