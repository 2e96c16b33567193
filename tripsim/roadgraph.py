"""Road networks from OpenStreetMap: keep the drivable roads, time them, route on them.

:func:`tripsim.io.osm.read_osm_graph` loads an OSM XML file with osmnx and
hands the raw graph to :func:`prepare_graph`, which

1. drops ways a car may not use (footways, tracks, private access, areas):
   ``osmnx.graph_from_xml`` keeps every way it reads;
2. simplifies the topology with osmnx, keeping as endpoints the nodes that carry
   a ``highway`` tag (traffic signals, stop signs) and not merging ways whose
   class or speed tags differ;
3. gives every edge a speed limit (:mod:`tripsim.maxspeed`, direction-aware
   ``maxspeed:forward``/``:backward``) and a travel time.

:func:`route_through` then routes between waypoints by least travel time with
networkx and returns a :class:`tripsim.route.Route` that keeps each edge's full
geometry, ``highway`` class and speed limit, and the stop points on the way.
"""

from __future__ import annotations

import itertools
from collections.abc import Callable, Mapping, Sequence
from typing import Any

import networkx as nx
import numpy as np

from tripsim.errors import RouteError
from tripsim.maxspeed import edge_speed_limit_kph
from tripsim.nearest import NearestPoints
from tripsim.route import Route, StopKind

__all__ = [
    "DRIVABLE_HIGHWAYS",
    "EXTRA_WAY_TAGS",
    "alternative_routes",
    "filter_drivable",
    "network_detour",
    "prepare_graph",
    "route_through",
    "snap_waypoints",
]

#: OSM ``highway`` classes a car may drive on (OSM wiki, *Key:highway*).
DRIVABLE_HIGHWAYS = frozenset(
    {
        "motorway", "motorway_link", "trunk", "trunk_link", "primary", "primary_link",
        "secondary", "secondary_link", "tertiary", "tertiary_link", "unclassified",
        "residential", "living_street", "service", "road",
    }
)
#: Way tags tripsim needs beyond osmnx's default ``useful_tags_way``.
EXTRA_WAY_TAGS = ("maxspeed:forward", "maxspeed:backward", "motor_vehicle", "motorcar")

_CLOSED = frozenset({"no", "private"})
_OPEN = frozenset({"yes", "permissive", "destination", "designated", "customers"})
_NODE_STOPS = {
    "traffic_signals": StopKind.SIGNALS,
    "stop": StopKind.STOP_SIGN,
    "give_way": StopKind.GIVE_WAY,
}


def _first(value: Any) -> Any:
    return value[0] if isinstance(value, list) and value else value


def _is_drivable(data: Mapping[str, Any]) -> bool:
    """Decide from an edge's tags whether a private car may use it."""
    highway = data.get("highway")
    classes = highway if isinstance(highway, list) else [highway]
    if not any(h in DRIVABLE_HIGHWAYS for h in classes):
        return False
    if data.get("area") == "yes" or data.get("service") == "emergency_access":
        return False
    for key in ("motorcar", "motor_vehicle"):  # most specific tag wins (OSM wiki, Key:access)
        value = _first(data.get(key))
        if value in _CLOSED:
            return False
        if value in _OPEN:
            return True
    return _first(data.get("access")) not in _CLOSED


def filter_drivable(G: nx.MultiDiGraph) -> nx.MultiDiGraph:
    """Return a copy of ``G`` with only the edges a private car may use.

    Parameters
    ----------
    G : networkx.MultiDiGraph
        Unsimplified graph from ``osmnx.graph_from_xml``.

    Returns
    -------
    networkx.MultiDiGraph
        The drivable edges and the nodes they touch.
    """
    keep = [(u, v, k) for u, v, k, d in G.edges(keys=True, data=True) if _is_drivable(d)]
    H = G.edge_subgraph(keep).copy()
    H.graph.update(G.graph)
    return H


def _edge_speed(
    data: Mapping[str, Any], defaults: Mapping[str, float] | None
) -> tuple[float, bool]:
    backward = _first(data.get("reversed")) is True
    directional = "maxspeed:backward" if backward else "maxspeed:forward"
    tag = data.get(directional) or data.get("maxspeed")
    return edge_speed_limit_kph(tag, data.get("highway"), defaults=defaults)


def prepare_graph(
    G: nx.MultiDiGraph, *, highway_kph: Mapping[str, float] | None = None
) -> nx.MultiDiGraph:
    """Filter, simplify and time a raw OSM graph.

    Parameters
    ----------
    G : networkx.MultiDiGraph
        Unsimplified graph from ``osmnx.graph_from_xml(..., simplify=False)``.
    highway_kph : mapping, optional
        Speeds by ``highway`` class for edges with no usable ``maxspeed``
        [km/h], merged over :data:`tripsim.maxspeed.DEFAULT_HIGHWAY_KPH`.

    Returns
    -------
    networkx.MultiDiGraph
        Simplified drivable graph; every edge has ``speed_kph``,
        ``speed_from_tag`` and ``travel_time_s``.

    Raises
    ------
    RouteError
        If no drivable road is left.
    """
    H = filter_drivable(G)
    if H.number_of_edges() == 0:
        raise RouteError("the OSM data holds no road a car may drive on")
    import osmnx as ox  # loaded to build a graph, not to use a cached one

    H = ox.simplify_graph(
        H,
        node_attrs_include=["highway"],
        edge_attrs_differ=["highway", "maxspeed", *EXTRA_WAY_TAGS[:2]],
    )
    for _, _, data in H.edges(data=True):
        kph, from_tag = _edge_speed(data, highway_kph)
        data["speed_kph"] = kph
        data["speed_from_tag"] = from_tag
        data["travel_time_s"] = float(data["length"]) / (kph / 3.6)
    return H


def _node_finder(G: nx.MultiDiGraph) -> tuple[np.ndarray, NearestPoints]:
    """Node ids and a nearest-point search over the graph's nodes."""
    ids = np.fromiter(G.nodes, dtype=np.int64, count=G.number_of_nodes())
    lat = np.fromiter((d["y"] for _, d in G.nodes(data=True)), dtype=float, count=ids.size)
    lon = np.fromiter((d["x"] for _, d in G.nodes(data=True)), dtype=float, count=ids.size)
    return ids, NearestPoints(lat, lon)


def snap_waypoints(
    G: nx.MultiDiGraph, waypoints: Sequence[tuple[float, float]], *, max_snap_m: float = 1000.0
) -> list[int]:
    """Nearest graph node to each (lat, lon) waypoint.

    Raises
    ------
    RouteError
        If a waypoint lies farther than ``max_snap_m`` from every node.
    """
    if len(waypoints) < 2:
        raise RouteError(f"routing needs at least 2 waypoints, got {len(waypoints)}", "--waypoints")
    lat = np.array([w[0] for w in waypoints], dtype=float)
    lon = np.array([w[1] for w in waypoints], dtype=float)
    ids, finder = _node_finder(G)
    idx, dist = finder.query(lat, lon)
    nodes = ids[idx]
    for i, d in enumerate(dist):
        if d > max_snap_m:
            raise RouteError(
                f"waypoint {i + 1} ({lat[i]:.5f}, {lon[i]:.5f}) is {d / 1000:.1f} km from the "
                f"nearest road (limit {max_snap_m / 1000:.1f} km): is it inside the map?",
                "--waypoints",
            )
    return [int(n) for n in nodes]


def _best_edge(G: nx.MultiDiGraph, u: int, v: int, weight: str) -> dict[str, Any]:
    return min(G[u][v].values(), key=lambda d: d[weight])


def _path_nodes(G: nx.MultiDiGraph, nodes: Sequence[int], weight: str) -> list[int]:
    path: list[int] = [nodes[0]]
    for i, (a, b) in enumerate(itertools.pairwise(nodes)):
        try:
            leg = nx.shortest_path(G, a, b, weight=weight)
        except nx.NetworkXNoPath:
            raise RouteError(
                f"no drivable path from waypoint {i + 1} to waypoint {i + 2} "
                "(one-way streets, private roads or a disconnected map)",
                "--waypoints",
            ) from None
        path.extend(leg[1:])
    return path


def route_from_path(
    G: nx.MultiDiGraph, path: Sequence[int], *, weight: str = "travel_time_s", name: str = "route",
    source: str = "<graph>",
) -> Route:
    """Turn a node path on a prepared graph into a :class:`Route`.

    Each edge contributes its full geometry; the edge's ``speed_kph`` and
    ``highway`` apply to every piece of it; nodes tagged as traffic signals or
    stop signs become stop points.
    """
    lat: list[float] = [G.nodes[path[0]]["y"]]
    lon: list[float] = [G.nodes[path[0]]["x"]]
    stops: list[int] = [int(StopKind.END)]
    limits: list[float] = []
    classes: list[str] = []
    for u, v in itertools.pairwise(path):
        data = _best_edge(G, u, v, weight)
        if "geometry" in data:
            xs, ys = data["geometry"].xy
            xs, ys = list(xs)[1:], list(ys)[1:]
        else:
            xs, ys = [G.nodes[v]["x"]], [G.nodes[v]["y"]]
        lon.extend(xs)
        lat.extend(ys)
        stops.extend([0] * (len(xs) - 1))
        stops.append(int(_NODE_STOPS.get(_first(G.nodes[v].get("highway")), StopKind.NONE)))
        limits.extend([data["speed_kph"]] * len(xs))
        hw = _first(data.get("highway"))
        classes.extend([hw if isinstance(hw, str) else ""] * len(xs))
    stops[-1] = int(StopKind.END)
    return Route(
        lat_deg=np.array(lat), lon_deg=np.array(lon), speed_limit_kph=np.array(limits),
        highway=np.array(classes, dtype=object), stop_kind=np.array(stops), name=name,
        source=source,
    )


def route_through(
    G: nx.MultiDiGraph,
    waypoints: Sequence[tuple[float, float]],
    *,
    weight: str = "travel_time_s",
    max_snap_m: float = 1000.0,
    name: str = "route",
    source: str = "<graph>",
) -> Route:
    """Route between (lat, lon) waypoints on a prepared graph by least travel time.

    Parameters
    ----------
    G : networkx.MultiDiGraph
        Graph from :func:`prepare_graph`.
    waypoints : sequence of (lat, lon)
        At least two points; the route passes the nearest node of each in turn.
    weight : str, default "travel_time_s"
        Edge attribute to minimise ("length" for the shortest route).
    max_snap_m : float, default 1000
        Largest accepted distance from a waypoint to its nearest node. [m]
    name : str, default "route"
        Label of the route in reports.
    source : str
        The network's file, for error messages.

    Returns
    -------
    Route

    Raises
    ------
    RouteError
        If a waypoint is off the map or no path joins two waypoints.
    """
    nodes = snap_waypoints(G, waypoints, max_snap_m=max_snap_m)
    path = _path_nodes(G, nodes, weight)
    if len(path) < 2:
        raise RouteError("the waypoints snap to the same road node: the route is empty",
                         "--waypoints")
    return route_from_path(G, path, weight=weight, name=name, source=source)


def network_detour(
    G: nx.MultiDiGraph, *, max_snap_m: float = 500.0
) -> Callable[[float, float, float, float], tuple[float, float] | None]:
    """A detour function for :func:`tripsim.plan.sites.snap_sites` on a prepared graph.

    The returned function gives the round trip (metres, seconds) from the graph node
    nearest the route point to the node nearest the site and back, by shortest length
    (travel time of that path), or None when the site is farther than ``max_snap_m``
    from any node or no path exists.
    """
    ids, finder = _node_finder(G)

    def nearest(lat: float, lon: float) -> tuple[int, float]:
        idx, dist = finder.query(lat, lon)
        return int(ids[idx[0]]), float(dist[0])

    def leg(a: int, b: int) -> tuple[float, float]:
        path = nx.shortest_path(G, a, b, weight="length")
        metres = seconds = 0.0
        for u, v in itertools.pairwise(path):
            d = _best_edge(G, u, v, "length")
            metres += float(d["length"])
            seconds += float(d["travel_time_s"])
        return metres, seconds

    def detour(route_lat: float, route_lon: float, site_lat: float, site_lon: float
               ) -> tuple[float, float] | None:
        a, da = nearest(route_lat, route_lon)
        b, db = nearest(site_lat, site_lon)
        if db > max_snap_m or da > max_snap_m:
            return None
        if a == b:
            return 2.0 * db, 2.0 * db / (30 / 3.6)
        try:
            there, back = leg(a, b), leg(b, a)
        except nx.NetworkXNoPath:
            return None
        walk = 2.0 * db  # from the nearest node to the site itself, at parking speed
        return there[0] + back[0] + walk, there[1] + back[1] + walk / (15 / 3.6)

    return detour


def alternative_routes(
    G: nx.MultiDiGraph, waypoints: Sequence[tuple[float, float]], k: int, *,
    weight: str = "travel_time_s", name: str = "route", source: str = "<graph>",
) -> list[Route]:
    """Up to ``k`` loopless routes between two waypoints, fastest first.

    Yen's algorithm through :func:`osmnx.routing.k_shortest_paths`.  With more than two
    waypoints only the fastest route through them is returned.
    """
    if len(waypoints) != 2 or k <= 1:
        return [route_through(G, waypoints, weight=weight, name=name, source=source)]
    from osmnx.routing import k_shortest_paths

    a, b = snap_waypoints(G, waypoints)
    routes = []
    try:
        for i, path in enumerate(k_shortest_paths(G, a, b, k, weight=weight)):
            routes.append(route_from_path(G, path, weight=weight, name=f"{name} #{i + 1}",
                                          source=source))
    except nx.NetworkXNoPath:
        raise RouteError("no drivable path between the waypoints", "--waypoints") from None
    return routes
