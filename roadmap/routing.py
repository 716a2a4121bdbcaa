"""Shortest routes on the lane graph: Dijkstra, A*, and the station distance matrix.

References
----------
.. [Dij59] E. W. Dijkstra, "A note on two problems in connexion with graphs",
   Numerische Mathematik 1, 1959.
.. [HNR68] P. E. Hart, N. J. Nilsson, B. Raphael, "A formal basis for the heuristic
   determination of minimum cost paths", IEEE Trans. SSC 4(2), 1968.
"""

from __future__ import annotations

import difflib
import heapq
import math
from dataclasses import dataclass
from typing import Iterable

import networkx as nx
import numpy as np
import shapely
from scipy.sparse import csr_array
from scipy.sparse.csgraph import dijkstra
from shapely.geometry import LineString

from clearway.roadmap.choices import ROUTE_METHODS
from clearway.sorting import natural_key
from clearway.roadmap.turns import parse_turns


@dataclass(frozen=True)
class Route:
    """One route through the lane graph, from its first node to its last.

    nodes : node ids, source first
    edges : edge ids (keys) driven, one fewer than nodes
    length : driven distance, metres (sum of edge lengths)
    cost : sum of edge weights, metres (equals length unless lanes carry a penalty)
    clearance_min : smallest clearance along the route, metres (NaN if the graph has none)
    geometry : LineString from the source node to the target node
    """

    nodes: tuple[str, ...]
    edges: tuple[str, ...]
    length: float
    cost: float
    clearance_min: float
    geometry: LineString


def resolve_node(graph: nx.MultiGraph, name: str) -> str:
    """Return the node id for `name`: a node id, a station label, a room id or a room name.

    A node id wins over a label of the same spelling, a station label over a room; labels
    and room names match exactly first, then ignoring case (``dock-1`` finds ``DOCK-1``).
    A room stands for its room node (node attribute ``room_node``). A label shared by
    several stations, or a name by several rooms, is refused as ambiguous, naming the
    candidates. An unknown name is answered with the closest labels and room names ("did
    you mean") and the full list of stations.

    Raises
    ------
    ValueError
        Nothing is called `name`, or the name is ambiguous.

    Examples
    --------
    >>> graph = nx.MultiGraph()
    >>> graph.add_node("n0", x=0.0, y=0.0, kind="station", label="DOCK-1")
    >>> graph.add_node("n1", x=5.0, y=0.0, kind="end", label="", room="r0", room_node="r0",
    ...                room_names="2.14\\nKITCHEN")
    >>> resolve_node(graph, "DOCK-1"), resolve_node(graph, "n0"), resolve_node(graph, "dock-1")
    ('n0', 'n0', 'n0')
    >>> resolve_node(graph, "r0"), resolve_node(graph, "2.14"), resolve_node(graph, "kitchen")
    ('n1', 'n1', 'n1')
    """
    if not isinstance(name, str):
        raise TypeError(f"node name must be a string, got {type(name).__name__}")
    if name in graph:
        return name
    labelled = [(node, label) for node, label in graph.nodes(data="label") if label]
    found = _named(labelled, name)
    if len(found) > 1:
        raise ValueError(f"station {name!r} is ambiguous: nodes {', '.join(found)}; "
                         "give a node id instead")
    if found:
        return found[0]
    rooms = room_nodes(graph)
    if name in rooms:
        return rooms[name][0]
    found = _named([(room, text) for room, (_, names) in rooms.items() for text in names], name)
    if len(found) > 1:
        raise ValueError(f"room {name!r} is ambiguous: rooms "
                         + ", ".join(f"{room} ({' / '.join(rooms[room][1])})" for room in found)
                         + "; give a room id instead")
    if found:
        return rooms[found[0]][0]
    stations = sorted({label for _, label in labelled})
    folded = {text.casefold(): text for text in
              sorted({text for _, names in rooms.values() for text in names}) + stations}
    close = [folded[key] for key in
             difflib.get_close_matches(name.casefold(), list(folded), n=3, cutoff=0.6)]
    message = f"no node{', station or room' if rooms else ' or station'} called {name!r}"
    if close:
        message += f"; did you mean {' or '.join(repr(label) for label in close)}?"
    if stations:
        message += f" (stations: {', '.join(stations)})"
    raise ValueError(message)


def _named(pairs, name: str) -> list[str]:
    """The owners in `pairs` (owner, text) whose text is `name`, else is it ignoring case."""
    found = sorted({owner for owner, text in pairs if text == name})
    return found or sorted({owner for owner, text in pairs
                            if text.casefold() == name.casefold()})


def room_nodes(graph: nx.MultiGraph) -> dict[str, tuple[str, tuple[str, ...]]]:
    """Return {room id: (room node id, room names)} for every room with a room node.

    Room ids in natural order (``r2`` before ``r10``); the names as the node attribute
    ``room_names`` holds them, one a line.
    """
    found = {attrs["room_node"]: (node, tuple(filter(None, str(attrs.get("room_names") or "")
                                                     .split("\n"))))
             for node, attrs in graph.nodes(data=True) if attrs.get("room_node")}
    return dict(sorted(found.items(), key=lambda item: natural_key(item[0])))


def display_name(graph: nx.MultiGraph, node: str) -> str:
    """Return how a person names `node`: its station label, else its room's first name or
    id for a room node, else its node id."""
    attrs = graph.nodes[node]
    names = str(attrs.get("room_names") or "").split("\n")
    return attrs.get("label") or names[0] or attrs.get("room_node") or node


def lightest_edges(graph: nx.MultiGraph, *, weight: str = "weight") -> nx.Graph:
    """Collapse parallel lanes to the lightest one; drop self-loops.

    Returns
    -------
    networkx.Graph
        Same nodes (with their attributes); each edge carries ``weight`` (the chosen
        lane's `weight` attribute, metres) and ``key`` (its edge id).
    """
    simple = nx.Graph()
    simple.add_nodes_from(graph.nodes(data=True))
    for u, v, key, value in graph.edges(keys=True, data=weight):
        if u == v:
            continue
        value = float(value)
        if not value >= 0:
            raise ValueError(f"edge {key!r} has {weight} {value}; weights must be >= 0 m")
        if not simple.has_edge(u, v) or value < simple.edges[u, v]["weight"] or (
                value == simple.edges[u, v]["weight"] and key < simple.edges[u, v]["key"]):
            simple.add_edge(u, v, weight=value, key=key)
    return simple


def shortest_route(graph: nx.MultiGraph, source: str, target: str, *,
                   method: str = "astar", avoid: Iterable[str] = ()) -> Route:
    """Return the lightest route from `source` to `target`.

    Parameters
    ----------
    graph : networkx.MultiGraph
        The lane graph (nodes with x, y; edges with weight, length, geometry).
    source, target : str
        Node ids or station labels (see `resolve_node`).
    method : {"astar", "dijkstra"}
        A* uses the straight-line distance as its heuristic, scaled down if any lane
        weighs less than the straight line between its nodes, so it stays admissible
        and consistent and finds the same cost as Dijkstra.
    avoid : iterable of str
        Node ids or station labels the route must not pass through.

    Returns
    -------
    Route

    Raises
    ------
    ValueError
        Unknown node, bad method, or an end node listed in `avoid`.
    networkx.NetworkXNoPath
        The two nodes are not connected (without the avoided nodes).

    Examples
    --------
    >>> graph = nx.MultiGraph()
    >>> for node, x in (("a", 0.0), ("b", 4.0), ("c", 10.0)):
    ...     graph.add_node(node, x=x, y=0.0, clearance=1.0, label="")
    >>> for u, v, key in (("a", "b", "e0"), ("b", "c", "e1")):
    ...     line = LineString([(graph.nodes[u]["x"], 0), (graph.nodes[v]["x"], 0)])
    ...     _ = graph.add_edge(u, v, key, geometry=line, length=line.length,
    ...                        weight=line.length, clearance_min=1.0)
    >>> route = shortest_route(graph, "c", "a")
    >>> route.nodes, route.length, route.geometry.wkt
    (('c', 'b', 'a'), 10.0, 'LINESTRING (10 0, 4 0, 0 0)')
    """
    if method not in ROUTE_METHODS:
        raise ValueError(f"method must be one of {', '.join(ROUTE_METHODS)}, got {method!r}")
    source, target = resolve_node(graph, source), resolve_node(graph, target)
    avoided = {resolve_node(graph, name) for name in avoid}
    for end in (source, target):
        if end in avoided:
            raise ValueError(f"cannot avoid {display_name(graph, end)}: it is an end of the "
                             "route")
    rules = turn_rules(graph)
    if rules is not None:
        found = _turn_search(graph, source, target, rules, avoided,
                             _heuristic(graph) if method == "astar" else None)
        if found is None:
            avoiding = sorted(display_name(graph, node) for node in avoided)
            raise nx.NetworkXNoPath(f"no route from {display_name(graph, source)} to "
                                    f"{display_name(graph, target)} with the allowed turns"
                                    + (" avoiding " + ", ".join(avoiding) if avoiding
                                       else ""))
        return _make_route(graph, *found)
    simple = lightest_edges(graph)
    if avoided:
        simple = nx.restricted_view(simple, avoided, [])
    try:
        if method == "dijkstra":
            nodes = nx.dijkstra_path(simple, source, target, weight="weight")
        else:
            nodes = nx.astar_path(simple, source, target, heuristic=_heuristic(graph),
                                  weight="weight")
    except nx.NetworkXNoPath:
        avoiding = sorted(display_name(graph, node) for node in avoided)
        raise nx.NetworkXNoPath(f"no route from {display_name(graph, source)} to "
                                f"{display_name(graph, target)}"
                                + (" avoiding " + ", ".join(avoiding) if avoiding
                                   else "")) from None
    keys = [simple.edges[u, v]["key"] for u, v in zip(nodes, nodes[1:])]
    return _make_route(graph, nodes, keys)


def turn_rules(graph: nx.MultiGraph) -> dict[str, set[tuple[str, str]]] | None:
    """The allowed turns per node from the ``turns`` attributes; None when there are none.

    A node without the attribute allows every turn; one with an empty string allows none
    (the robot may still start or stop there).
    """
    rules = {node: parse_turns(text) for node, text in graph.nodes(data="turns")
             if text is not None}
    return rules or None


def _turn_search(graph: nx.MultiGraph, source: str, target: str | None, rules, avoided=(),
                 heuristic=None, *, weight: str = "weight"):
    """Dijkstra (A* with `heuristic`) over (node, edge arrived by) states, so that a route
    only turns from one edge to the next where the node allows it.

    Returns (nodes, edge keys) of the lightest route to `target`, None when there is none;
    with ``target=None``, {node: lightest cost} for every node reached.
    """
    start = (source, None)
    cost = {start: 0.0}
    parent = {}
    reached: dict[str, float] = {}
    queue = [(0.0, 0.0, 0, start)]
    counter = 1
    while queue:
        _, spent, _, state = heapq.heappop(queue)
        if spent > cost.get(state, math.inf):
            continue
        node, arrived = state
        reached.setdefault(node, spent)
        if node == target:
            nodes, keys = [node], []
            while state in parent:
                state, key = parent[state]
                nodes.append(state[0])
                keys.append(key)
            return nodes[::-1], keys[::-1]
        allowed = rules.get(node)
        for _, other, key, value in graph.edges(node, keys=True, data=weight):
            if other in avoided or other == node:
                continue
            if arrived is not None and allowed is not None and (arrived, key) not in allowed:
                continue
            value = float(value)
            if not value >= 0:
                raise ValueError(f"edge {key!r} has {weight} {value}; weights must be >= 0 m")
            step = (other, key)
            total = spent + value
            if total < cost.get(step, math.inf):
                cost[step] = total
                parent[step] = (state, key)
                guess = total + (heuristic(other, target) if heuristic else 0.0)
                heapq.heappush(queue, (guess, total, counter, step))
                counter += 1
    return reached if target is None else None


def _heuristic(graph: nx.MultiGraph):
    xy = {node: (attrs["x"], attrs["y"]) for node, attrs in graph.nodes(data=True)}
    scale = 1.0
    for u, v, value in graph.edges(data="weight"):
        straight = math.dist(xy[u], xy[v])
        if straight > 0:
            scale = min(scale, float(value) / straight)

    def estimate(node, goal):
        return scale * math.dist(xy[node], xy[goal])

    return estimate


def _make_route(graph: nx.MultiGraph, nodes: list[str], keys: list[str]) -> Route:
    start = graph.nodes[nodes[0]]
    coords = [np.array([[start["x"], start["y"]]])]
    length = cost = 0.0
    clearances = [graph.nodes[node].get("clearance", math.nan) for node in nodes]
    for u, v, key in zip(nodes, nodes[1:], keys):
        attrs = graph.edges[u, v, key]
        xy = shapely.get_coordinates(attrs["geometry"])
        here = graph.nodes[u]
        if math.dist(xy[-1], (here["x"], here["y"])) < math.dist(xy[0], (here["x"], here["y"])):
            xy = xy[::-1]
        coords.append(xy[1:])
        length += float(attrs["length"])
        cost += float(attrs["weight"])
        clearances.append(attrs.get("clearance_min", math.nan))
    xy = np.concatenate(coords)
    if len(xy) == 1:
        xy = np.repeat(xy, 2, axis=0)
    values = np.asarray(clearances, dtype=float)
    clearance_min = float(np.nanmin(values)) if np.isfinite(values).any() else math.nan
    return Route(nodes=tuple(nodes), edges=tuple(keys), length=length, cost=cost,
                 clearance_min=clearance_min, geometry=LineString(xy))


def station_nodes(graph: nx.MultiGraph) -> dict[str, str]:
    """Return {label: node id} for every labelled node, sorted by label."""
    return dict(sorted((label, node) for node, label in graph.nodes(data="label") if label))


def distance_matrix(graph: nx.MultiGraph, stations: Iterable[str] | None = None, *,
                    weight: str = "weight") -> tuple[tuple[str, ...], np.ndarray]:
    """Return the shortest route cost between every pair of stations.

    Parameters
    ----------
    graph : networkx.MultiGraph
    stations : iterable of str, optional
        Station labels or node ids, in the order wanted; default every labelled node,
        sorted by label.
    weight : str
        Edge attribute to add up: "weight" (default) or "length".

    Returns
    -------
    labels : tuple of str, length N
        The names as given (labels when defaulted).
    matrix : (N, N) ndarray of float
        Route costs in metres; ``inf`` where no route exists; 0 on the diagonal.

    Examples
    --------
    >>> graph = nx.MultiGraph()
    >>> graph.add_node("n0", x=0.0, y=0.0, label="A")
    >>> graph.add_node("n1", x=3.0, y=4.0, label="B")
    >>> graph.add_node("n2", x=9.0, y=9.0, label="C")
    >>> graph.add_edge("n0", "n1", "e0", weight=5.0)
    'e0'
    >>> distance_matrix(graph)[1].tolist()
    [[0.0, 5.0, inf], [5.0, 0.0, inf], [inf, inf, 0.0]]
    """
    if stations is None:
        named = station_nodes(graph)
        labels, targets = tuple(named), list(named.values())
    else:
        labels = tuple(stations)
        targets = [resolve_node(graph, name) for name in labels]
    if not targets:
        return labels, np.zeros((0, 0))
    rules = turn_rules(graph)
    if rules is not None:
        costs = np.full((len(targets), len(targets)), np.inf)
        for row, node in enumerate(targets):
            reached = _turn_search(graph, node, None, rules, weight=weight)
            costs[row] = [reached.get(other, np.inf) for other in targets]
        return labels, np.minimum(costs, costs.T).astype(float)
    simple = lightest_edges(graph, weight=weight)
    order = list(simple.nodes)
    index = {node: position for position, node in enumerate(order)}
    rows, cols, values = [], [], []
    for u, v, value in simple.edges(data="weight"):
        rows.append(index[u])
        cols.append(index[v])
        values.append(value)  # csgraph keeps explicitly stored zeros as edges
    matrix = csr_array((values, (rows, cols)), shape=(len(order), len(order)))
    columns = [index[node] for node in targets]
    costs = dijkstra(matrix, directed=False, indices=columns)[:, columns]
    # both directions are the same routes; summed in another order they may differ in the
    # last bit, so keep the smaller and hand planners an exactly symmetric matrix
    return labels, np.minimum(costs, costs.T).astype(float)
