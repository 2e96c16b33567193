"""Read OSM XML road networks through osmnx, with an on-disk cache.

Before osmnx sees a file, :func:`checked_osm_xml` reads it once the way every
tripsim reader reads text (regular file, size cap, ``.gz``/``.bz2`` decompressed
with the cap, UTF-8 or the declared encoding) and streams it through defusedxml's
parser, refusing what osmnx would silently get wrong: duplicate node or way ids (a
second node with the same id moves the road), positions that are not places, ids
that are not 64-bit integers, ways that refer to nodes the file does not hold.
"""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import pickle
import re
import tempfile
import warnings
import xml.etree.ElementTree as ET
from array import array
from collections.abc import Iterator, Mapping
from pathlib import Path
from typing import Any

import networkx as nx
import numpy as np

from tripsim.errors import RouteError, TripsimInputError, TripsimWarning
from tripsim.io._files import decode_text, input_file, read_bytes
from tripsim.io._limits import SPEED_LIMIT_KPH, check_coordinate
from tripsim.io._xml import parse_xml_text
from tripsim.io.export import atomic_path
from tripsim.maxspeed import parse_maxspeed
from tripsim.roadgraph import EXTRA_WAY_TAGS, prepare_graph

__all__ = ["cache_dir", "checked_osm_xml", "read_osm_graph"]

#: Where the elements osmnx reads may stand (OSM XML, API v0.6); others are ignored.
_PARENTS = {"node": ("osm",), "way": ("osm",), "relation": ("osm",),
            "tag": ("node", "way", "relation"), "nd": ("way",), "member": ("relation",)}
_CACHE_FORMAT = 2  # 2: graphs built from checked files only
_INT64 = (-(2**63), 2**63 - 1)
_SHOW = 5  # ids named in a warning


def cache_dir() -> Path:
    """Folder for cached graphs: ``$TRIPSIM_CACHE_DIR``, else ``~/.cache/tripsim``."""
    base = os.environ.get("TRIPSIM_CACHE_DIR") or Path(
        os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "tripsim"
    return Path(base)


class _OsmCheck:
    """Streams through OSM XML checking ids, positions and way members."""

    def __init__(self, path: Path, error: type[TripsimInputError]) -> None:
        self.path = path
        self.error = error
        self.parser: Any = None
        self.stack: list[str] = []
        self.ids: dict[str, set[int]] = {"node": set(), "way": set(), "relation": set()}
        self.refs = array("q")
        self.way_ids = array("q")
        self.way_starts = array("q")

    def _fail(self, problem: str) -> None:
        line = self.parser.CurrentLineNumber if self.parser is not None else 0
        raise self.error(f"line {line}: {problem}", self.path)

    def _int(self, attrs: dict[str, str], key: str, what: str) -> int:
        text = attrs.get(key)
        if text is None:
            self._fail(f"{what} has no {key}")
        try:
            value = int(text)
        except ValueError:
            value = None
        if value is None or not _INT64[0] <= value <= _INT64[1]:
            self._fail(f"{what} {key}={text[:40]!r} is not a 64-bit integer")
        return value

    def start(self, name: str, attrs: dict[str, str]) -> None:
        parent = self.stack[-1] if self.stack else None
        self.stack.append(name)
        if parent is None:
            if name != "osm":
                self._fail(f"the root element is <{name}>; OSM XML starts with <osm>")
            return
        allowed = _PARENTS.get(name)
        if allowed is not None and parent not in allowed:
            self._fail(f"<{name}> inside <{parent}>; expected it in <{'> or <'.join(allowed)}>")
        if name in self.ids:
            self._element(name, attrs)
        elif name == "nd":
            self.refs.append(self._int(attrs, "ref", "<nd>"))
        elif name == "tag" and (attrs.get("k") is None or attrs.get("v") is None):
            self._fail("<tag> needs both k and v")
        elif name == "member" and (attrs.get("ref") is None or attrs.get("type") is None):
            self._fail("<member> needs type and ref")

    def _element(self, name: str, attrs: dict[str, str]) -> None:
        osm_id = self._int(attrs, "id", f"<{name}>")
        seen = self.ids[name]
        if osm_id in seen:
            moves = " (a repeated node would move the road)" if name == "node" else ""
            self._fail(f"{name} id {osm_id} appears a second time; OSM ids are unique{moves}")
        seen.add(osm_id)
        if name == "node":
            for axis in ("lat", "lon"):
                text = attrs.get(axis)
                try:
                    value = float(text) if text is not None else None
                except ValueError:
                    value = None
                if value is None:
                    self._fail(f"node {osm_id}: {axis}={text!r} is not a number")
                reason = check_coordinate(value, axis)
                if reason:
                    self._fail(f"node {osm_id}: {axis}={text} {reason}")
        elif name == "way":
            self.way_ids.append(osm_id)
            self.way_starts.append(len(self.refs))

    def end(self, name: str) -> None:
        self.stack.pop()

    def check_way_nodes(self) -> None:
        """Refuse ways that refer to nodes the file does not hold (a clipped extract)."""
        if not len(self.refs):
            return
        refs = np.frombuffer(self.refs, dtype=np.int64)
        nodes = np.fromiter(self.ids["node"], dtype=np.int64, count=len(self.ids["node"]))
        missing = ~np.isin(refs, nodes)
        if missing.any():
            k = int(np.flatnonzero(missing)[0])
            way = self.way_ids[int(np.searchsorted(self.way_starts, k, side="right")) - 1]
            raise self.error(
                f"way {way} refers to node {int(refs[k])}, which the file does not hold "
                f"({int(missing.sum())} such references): a clipped extract? Export complete "
                "ways", self.path)


_DECLARATION = re.compile(r"^<\?xml[^>]*\?>")


@contextlib.contextmanager
def checked_osm_xml(path: str | Path, *, error: type[TripsimInputError] = RouteError,
                    complete_ways: bool = True) -> Iterator[Path]:
    """Check an OSM XML file and yield a plain UTF-8 ``.osm`` path for osmnx.

    Parameters
    ----------
    path : str or Path
        ``.osm``, ``.osm.xml``, ``.osm.gz`` or ``.osm.bz2``.
    error : type, default RouteError
        The exception raised.
    complete_ways : bool, default True
        Refuse ways with members missing from the file (a road network needs them).

    Yields
    ------
    Path
        ``path`` itself when it is plain UTF-8 XML, else a temporary decompressed,
        re-encoded copy (removed afterwards).
    """
    path = Path(path)
    raw = read_bytes(path, "osm", error=error, decompress=True)
    text = decode_text(raw, path, xml=True, error=error)
    handler = _OsmCheck(path, error)
    parse_xml_text(text, handler, path, what="OSM XML", error=error)
    if complete_ways:
        handler.check_way_nodes()
    del handler
    packed = path.name.lower().endswith((".gz", ".bz2"))
    if not packed and text.encode("utf-8") == raw:
        del raw, text
        yield path
        return
    del raw
    with tempfile.TemporaryDirectory(prefix="tripsim-osm-") as tmp:
        plain = Path(tmp) / "map.osm"
        plain.write_text(_DECLARATION.sub("", text, count=1), encoding="utf-8")
        del text
        yield plain


@contextlib.contextmanager
def _way_tags(extra: tuple[str, ...]) -> Iterator[None]:
    """Temporarily add way tags to osmnx's (global) list of tags it keeps."""
    import osmnx as ox

    saved = list(ox.settings.useful_tags_way)
    ox.settings.useful_tags_way = saved + [t for t in extra if t not in saved]
    try:
        yield
    finally:
        ox.settings.useful_tags_way = saved


def _cache_key(path: Path, *extra: Any) -> str:
    from importlib.metadata import version  # osmnx itself loads only to build a graph

    st = path.stat()
    ident = json.dumps([str(path.resolve()), st.st_size, st.st_mtime_ns, _CACHE_FORMAT,
                        version("osmnx"), *extra], default=str)
    return hashlib.sha256(ident.encode()).hexdigest()[:24]


def cached_file(path: Path, kind: str, *extra: Any) -> Path:
    """Where what was built from an OSM file is kept (:func:`cache_dir`).

    Keyed on the file's path, size and modification time, the cache format, osmnx's
    version and ``extra`` (the options it was built with).
    """
    return cache_dir() / f"{kind}-{_cache_key(path, *extra)}.pickle"


def load_cached(target: Path | None) -> Any:
    """What :func:`store_cached` kept at ``target``, or None (absent or unreadable)."""
    if target is None or not target.is_file():
        return None
    with contextlib.suppress(Exception), target.open("rb") as fh:
        return pickle.load(fh)
    return None


def store_cached(target: Path | None, value: Any) -> None:
    """Keep ``value`` at ``target``, atomically; a cache that cannot be written is skipped."""
    if target is None:
        return
    with contextlib.suppress(OSError, TripsimInputError):
        target.parent.mkdir(parents=True, exist_ok=True)
        with atomic_path(target) as tmp, tmp.open("wb") as fh:
            pickle.dump(value, fh, protocol=pickle.HIGHEST_PROTOCOL)


def _load_raw(plain: Path, path: Path) -> nx.MultiDiGraph:
    import osmnx as ox

    try:
        with _way_tags(EXTRA_WAY_TAGS):
            return ox.graph_from_xml(plain, simplify=False, retain_all=True)
    except ET.ParseError as exc:
        raise RouteError(f"not valid OSM XML: {exc}", path) from None
    except (ValueError, KeyError, ox._errors.InsufficientResponseError) as exc:
        raise RouteError(f"cannot build a road graph: {exc}", path) from None


def _drop_implausible_limits(G: nx.MultiDiGraph, path: Path) -> None:
    """Remove ``maxspeed`` tags outside the plausible range (the class default applies)."""
    lo, hi = SPEED_LIMIT_KPH
    dropped: dict[Any, str] = {}
    for _, _, data in G.edges(data=True):
        for key in ("maxspeed", "maxspeed:forward", "maxspeed:backward"):
            value = data.get(key)
            if value is None:
                continue
            kph = parse_maxspeed(value)
            if np.isfinite(kph) and not lo <= kph <= hi:
                dropped.setdefault(data.get("osmid"), f"{key}={value}")
                del data[key]
    if dropped:
        shown = ", ".join(f"way {w} {tag}" for w, tag in list(dropped.items())[:_SHOW])
        more = f" and {len(dropped) - _SHOW} more" if len(dropped) > _SHOW else ""
        warnings.warn(f"{path}: ignored speed limits outside {lo:g}-{hi:g} km/h ({shown}{more}); "
                      "those roads use their class's default speed", TripsimWarning,
                      stacklevel=3)


def read_osm_graph(
    path: str | Path,
    *,
    highway_kph: Mapping[str, float] | None = None,
    cache: bool = True,
) -> nx.MultiDiGraph:
    """Load an OSM XML file as a prepared, drivable road graph.

    Parameters
    ----------
    path : str or Path
        ``.osm``, ``.osm.xml``, ``.osm.bz2`` or ``.osm.gz``.
    highway_kph : mapping, optional
        Speeds by ``highway`` class for roads without ``maxspeed`` [km/h].
    cache : bool, default True
        Keep the prepared graph in :func:`cache_dir`, keyed on the file's path,
        size and modification time, so later runs skip parsing.

    Returns
    -------
    networkx.MultiDiGraph
        See :func:`tripsim.roadgraph.prepare_graph`.

    Raises
    ------
    RouteError
        If the file is missing, not OSM XML, holds duplicate ids, impossible
        positions or incomplete ways, or no drivable road.

    Warns
    -----
    TripsimWarning
        When ``maxspeed`` tags outside :data:`tripsim.io._limits.SPEED_LIMIT_KPH`
        are ignored (naming the ways).
    """
    path = input_file(path, "osm", error=RouteError)
    target = cached_file(path, "graph", sorted((highway_kph or {}).items())) if cache else None
    kept = load_cached(target)
    if kept is not None:
        return kept
    with checked_osm_xml(path) as plain:
        raw = _load_raw(plain, path)
    _drop_implausible_limits(raw, path)
    try:
        G = prepare_graph(raw, highway_kph=highway_kph)
    except RouteError as exc:
        raise RouteError(exc.problem, path) from None
    store_cached(target, G)
    return G
