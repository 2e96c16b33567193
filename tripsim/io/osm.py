"""Read OSM XML road networks through osmnx, with an on-disk cache."""

from __future__ import annotations

import contextlib
import hashlib
import json
import os
import pickle
import xml.etree.ElementTree as ET
from collections.abc import Iterator, Mapping
from pathlib import Path

import networkx as nx
import osmnx as ox

from tripsim.errors import RouteError, TripsimInputError
from tripsim.io.export import atomic_path
from tripsim.roadgraph import EXTRA_WAY_TAGS, prepare_graph

__all__ = ["cache_dir", "read_osm_graph"]

_CACHE_FORMAT = 1


def cache_dir() -> Path:
    """Folder for cached graphs: ``$TRIPSIM_CACHE_DIR``, else ``~/.cache/tripsim``."""
    base = os.environ.get("TRIPSIM_CACHE_DIR") or Path(
        os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache") / "tripsim"
    return Path(base)


@contextlib.contextmanager
def _way_tags(extra: tuple[str, ...]) -> Iterator[None]:
    """Temporarily add way tags to osmnx's (global) list of tags it keeps."""
    saved = list(ox.settings.useful_tags_way)
    ox.settings.useful_tags_way = saved + [t for t in extra if t not in saved]
    try:
        yield
    finally:
        ox.settings.useful_tags_way = saved


def _cache_key(path: Path, highway_kph: Mapping[str, float] | None) -> str:
    st = path.stat()
    ident = json.dumps([str(path.resolve()), st.st_size, st.st_mtime_ns, _CACHE_FORMAT,
                        ox.__version__, sorted((highway_kph or {}).items())])
    return hashlib.sha256(ident.encode()).hexdigest()[:24]


def _load_raw(path: Path) -> nx.MultiDiGraph:
    try:
        with _way_tags(EXTRA_WAY_TAGS):
            return ox.graph_from_xml(path, simplify=False, retain_all=True)
    except ET.ParseError as exc:
        raise RouteError(f"not valid OSM XML: {exc}", path) from None
    except (ValueError, KeyError, ox._errors.InsufficientResponseError) as exc:
        raise RouteError(f"cannot build a road graph: {exc}", path) from None


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
        ``.osm``, ``.osm.bz2`` or ``.osm.gz`` (what ``osmnx.graph_from_xml`` reads).
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
        If the file is missing, not OSM XML, or holds no drivable road.
    """
    path = Path(path)
    if not path.is_file():
        raise RouteError("no such file", path)
    target = cache_dir() / f"graph-{_cache_key(path, highway_kph)}.pickle" if cache else None
    if target is not None and target.is_file():
        with contextlib.suppress(Exception), target.open("rb") as fh:
            return pickle.load(fh)
    try:
        G = prepare_graph(_load_raw(path), highway_kph=highway_kph)
    except RouteError as exc:
        raise RouteError(exc.problem, path) from None
    if target is not None:
        with contextlib.suppress(OSError, TripsimInputError):
            target.parent.mkdir(parents=True, exist_ok=True)
            with atomic_path(target) as tmp, tmp.open("wb") as fh:
                pickle.dump(G, fh, protocol=pickle.HIGHEST_PROTOCOL)
    return G
