"""Stable node and edge ids across drawing revisions.

Other systems (task lists, charger schedules, traffic rules) refer to node ids, so a rebuilt
graph keeps the id of every node that is still "the same place": same kind, same label for
stations, and within a tolerance of its old position, matched one-to-one by the smallest
total displacement (the linear assignment problem, solved per cluster of candidates).

References
----------
.. [Kuhn55] H. W. Kuhn, "The Hungarian method for the assignment problem", Naval Research
   Logistics Quarterly 2, 1955 (scipy.optimize.linear_sum_assignment).
"""

from __future__ import annotations

import re
from collections import defaultdict
from dataclasses import replace
from typing import Mapping

import networkx as nx
import numpy as np
import shapely
from scipy.sparse import coo_array
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree
from shapely.geometry.base import BaseGeometry

from clearway.roadmap.choices import SAME_PLACE_TOLERANCE
from clearway.roadmap.lanes import node_order
from clearway.roadmap.model import Roadmap
from clearway.roadmap.turns import pair_text, parse_turns
from clearway.sorting import natural_key

_NUMBERED = re.compile(r"^([A-Za-z_]*)(\d+)$")


def _node_class(attrs: dict, same_kind: bool) -> tuple[str, str]:
    label = attrs.get("label", "") or ""
    if label:
        return ("station", label)
    return (attrs.get("kind", "") if same_kind else "", "")


def match_nodes(old: nx.MultiGraph, new: nx.MultiGraph, *,
                tolerance: float = SAME_PLACE_TOLERANCE,
                same_kind: bool = True, fixed: dict[str, str] | None = None) -> dict[str, str]:
    """Pair the nodes of `new` with nodes of `old` that stand for the same place.

    Parameters
    ----------
    old, new : networkx.MultiGraph
        Lane graphs with node attributes x, y (metres), kind and label.
    tolerance : float
        Largest displacement of a matched node, metres. Must be >= 0.
    same_kind : bool
        Also require the same node kind (labelled nodes always need the same label).
    fixed : dict, optional
        {new id: old id} pairs decided beforehand (they take no part in the assignment).

    Returns
    -------
    dict
        {new node id: old node id}, one-to-one, minimising the total displacement among
        the largest possible set of pairs.
    """
    if not tolerance >= 0:
        raise ValueError(f"tolerance must be >= 0 m, got {tolerance}")
    pairs = dict(fixed or {})
    taken = set(pairs.values())
    groups: dict[tuple[str, str], tuple[list, list]] = defaultdict(lambda: ([], []))
    for side, graph, skip in ((0, old, taken), (1, new, set(pairs))):
        for node, attrs in graph.nodes(data=True):
            if node not in skip:
                groups[_node_class(attrs, same_kind)][side].append(node)
    for group in sorted(groups):
        old_nodes, new_nodes = groups[group]
        if old_nodes and new_nodes:
            pairs.update(_assign(old, new, old_nodes, new_nodes, tolerance))
    return pairs


def _xy(graph: nx.MultiGraph, nodes: list[str]) -> np.ndarray:
    return np.array([(graph.nodes[n]["x"], graph.nodes[n]["y"]) for n in nodes], dtype=float)


def _assignment(cost):
    """Rows and columns of the least-cost one-to-one assignment ([Kuhn55]).

    scipy.optimize is imported here: only a rebuild against a previous graph needs it, and
    importing it would cost every build about a tenth of a second.
    """
    from scipy.optimize import linear_sum_assignment

    return linear_sum_assignment(cost)


def _assign(old, new, old_nodes, new_nodes, tolerance) -> dict[str, str]:
    old_xy, new_xy = _xy(old, old_nodes), _xy(new, new_nodes)
    # query a hair wider, then decide with one distance formula for every pair
    hits = cKDTree(new_xy).query_ball_tree(cKDTree(old_xy), tolerance * (1 + 1e-9) + 1e-12)
    rows = np.repeat(np.arange(len(new_xy)), [len(found) for found in hits])
    cols = np.fromiter((c for found in hits for c in found), dtype=int, count=len(rows))
    within = np.hypot(*(new_xy[rows] - old_xy[cols]).T) <= tolerance
    rows, cols = rows[within], cols[within]
    if len(rows) == 0:
        return {}
    size = len(new_xy) + len(old_xy)
    link = coo_array((np.ones(len(rows)), (rows, cols + len(new_xy))), shape=(size, size))
    _, component = connected_components(link, directed=False)
    distance = np.hypot(*(new_xy[rows] - old_xy[cols]).T)
    pairs = {}
    for label in np.unique(component[rows]):
        chosen = component[rows] == label
        sub_rows, row_index = np.unique(rows[chosen], return_inverse=True)
        sub_cols, col_index = np.unique(cols[chosen], return_inverse=True)
        # a non-candidate costs more than any full set of candidates, so the assignment
        # first maximises the number of pairs, then minimises their total displacement
        forbidden = (tolerance + 1.0) * (len(sub_rows) + len(sub_cols) + 1)
        cost = np.full((len(sub_rows), len(sub_cols)), forbidden)
        cost[row_index, col_index] = distance[chosen]
        picked_rows, picked_cols = _assignment(cost)
        for r, c in zip(picked_rows, picked_cols):
            if cost[r, c] < forbidden:
                pairs[new_nodes[sub_rows[r]]] = old_nodes[sub_cols[c]]
    return pairs


def fresh_ids(used, prefix: str):
    """Yield ids ``<prefix><k>`` for k above every number already used with that prefix."""
    numbers = [int(match.group(2)) for match in map(_NUMBERED.match, map(str, used))
               if match and match.group(1) == prefix]
    start = max(numbers, default=-1) + 1
    used = set(map(str, used))
    while True:
        candidate = f"{prefix}{start}"
        start += 1
        if candidate not in used:
            yield candidate


def stable_id_mapping(new_graph: nx.MultiGraph, previous_graph: nx.MultiGraph, *,
                      tolerance: float = SAME_PLACE_TOLERANCE
                      ) -> tuple[dict[str, str], dict[str, str]]:
    """Return ({new node id: id to use}, {new edge id: id to use}); see `assign_stable_ids`."""
    pairs = match_nodes(previous_graph, new_graph, tolerance=tolerance)
    fresh = fresh_ids(previous_graph.nodes, "n")
    nodes = {}
    new_nodes = list(new_graph.nodes)
    order = [new_nodes[i] for i in node_order(_xy(new_graph, new_nodes).reshape(-1, 2),
                                              np.array([str(n) for n in new_nodes]))]
    for node in order:
        nodes[node] = pairs[node] if node in pairs else next(fresh)
    return nodes, _match_edges(previous_graph, new_graph, nodes)


def assign_stable_ids(new_graph: nx.MultiGraph, previous_graph: nx.MultiGraph, *,
                      tolerance: float = SAME_PLACE_TOLERANCE) -> nx.MultiGraph:
    """Return `new_graph` with node and edge ids carried over from `previous_graph`.

    Parameters
    ----------
    new_graph : networkx.MultiGraph
        The graph built from the revised drawing (not modified).
    previous_graph : networkx.MultiGraph
        The graph of the previous revision, e.g. read from its GraphML.
    tolerance : float
        Largest distance a node may have moved and keep its id, metres.

    Returns
    -------
    networkx.MultiGraph
        A copy of `new_graph` in which every node matched by `match_nodes` (same kind,
        same label for stations, within `tolerance`, one-to-one) has its old id, and
        every other node a fresh ``n<k>`` above any id of the previous graph. An edge
        whose two ends kept their ids keeps the id of an old edge between those ids
        (parallel lanes paired by the smallest Hausdorff distance); every other edge
        gets a fresh ``e<k>``. Attributes are copied unchanged.

    Examples
    --------
    >>> old, new = nx.MultiGraph(), nx.MultiGraph()
    >>> old.add_node("n7", x=0.0, y=0.0, kind="end", label="")
    >>> new.add_node("n0", x=0.1, y=0.0, kind="end", label="")
    >>> new.add_node("n1", x=9.0, y=0.0, kind="end", label="")
    >>> sorted(assign_stable_ids(new, old).nodes)
    ['n7', 'n8']
    """
    nodes, edges = stable_id_mapping(new_graph, previous_graph, tolerance=tolerance)
    return _relabel(new_graph, nodes, edges)


def _renamed_turns(attrs: dict, edges: dict) -> dict:
    """A node's attributes with the edge ids in its ``turns`` pairs renamed."""
    attrs = dict(attrs)
    if attrs.get("turns"):
        attrs["turns"] = pair_text({(edges.get(a, a), edges.get(b, b)) for a, b in
                                    parse_turns(attrs["turns"])})
    return attrs


def _relabel(graph: nx.MultiGraph, nodes: dict, edges: dict) -> nx.MultiGraph:
    result = nx.MultiGraph()
    result.graph.update(graph.graph)
    result.add_nodes_from((nodes[node], _renamed_turns(attrs, edges))
                          for node, attrs in graph.nodes(data=True))
    result.add_edges_from((nodes[u], nodes[v], edges[key], dict(attrs))
                          for u, v, key, attrs in graph.edges(keys=True, data=True))
    return result


def carry_ids_over(roadmap: Roadmap, previous_graph: nx.MultiGraph, *,
                   tolerance: float = SAME_PLACE_TOLERANCE,
                   previous_rooms: Mapping[str, BaseGeometry] | None = None) -> Roadmap:
    """Return `roadmap` with its graph's ids carried over from `previous_graph`.

    The findings follow the new ids too (station nodes, pinch point and personnel edges),
    so the report and the graph keep agreeing. See `assign_stable_ids`. With
    `previous_rooms` ({room id: polygon}, drawing frame), room ids are carried over as
    `match_rooms` pairs them; the rooms, passages, stations and nodes follow.
    """
    nodes, edges = stable_id_mapping(roadmap.graph, previous_graph, tolerance=tolerance)
    findings = roadmap.findings
    rooms = (_room_mapping(roadmap.rooms, previous_rooms) if previous_rooms is not None
             else {room.id: room.id for room in roadmap.rooms})
    findings = replace(
        findings,
        stations=tuple(replace(s, node=nodes.get(s.node, s.node), room=rooms.get(s.room, s.room))
                       for s in findings.stations),
        pinch_points=tuple(replace(p, edge=edges.get(p.edge, p.edge))
                           for p in findings.pinch_points),
        personnel=tuple(replace(p, edge=edges.get(p.edge, p.edge)) for p in findings.personnel),
        body=tuple(replace(b, node=nodes.get(b.node, b.node),
                           edges=tuple(edges.get(e, e) for e in b.edges))
                   for b in findings.body))
    graph = _relabel(roadmap.graph, nodes, edges)
    for _, attrs in graph.nodes(data=True):
        for name in ("room", "room_node"):
            if attrs.get(name):
                attrs[name] = rooms.get(attrs[name], attrs[name])
    return replace(
        roadmap, graph=graph, findings=findings,
        rooms=tuple(sorted((replace(room, id=rooms[room.id], node=nodes.get(room.node, room.node))
                            for room in roadmap.rooms), key=lambda room: natural_key(room.id))),
        passages=tuple(replace(p, rooms=tuple(sorted((rooms.get(r, r) for r in p.rooms),
                                                     key=natural_key)))
                       for p in roadmap.passages))


def match_rooms(old: Mapping[str, BaseGeometry], new) -> dict[int, str]:
    """Pair new rooms with the old rooms whose area they keep most of.

    Parameters
    ----------
    old : mapping
        {old room id: polygon}, metres.
    new : sequence of Polygon
        The new rooms, same frame.

    Returns
    -------
    dict
        {index into `new`: old id}, one-to-one. A new room keeps an old room's id when it
        holds more than half of that room's area; a room split in two keeps its id in the
        part holding most of it, and rooms merged into one leave it the id of the one it
        overlaps most (the larger overlap, then the smaller id, wins).

    Examples
    --------
    >>> old = {"r4": shapely.box(0, 0, 4, 4), "r7": shapely.box(4, 0, 8, 4)}
    >>> match_rooms(old, [shapely.box(0, 0, 6, 4), shapely.box(6, 0, 8, 4)])   # r7 halved
    {0: 'r4'}
    """
    ids = sorted(old, key=natural_key)
    polygons = np.array([old[room] for room in ids], dtype=object)
    new = np.asarray(new, dtype=object)
    if len(polygons) == 0 or len(new) == 0:
        return {}
    new_index, old_index = shapely.STRtree(polygons).query(new, predicate="intersects")
    kept = shapely.area(shapely.intersection(new[new_index], polygons[old_index]))
    most = kept > 0.5 * shapely.area(polygons[old_index])
    best: dict[int, tuple[float, int]] = {}
    for n, o, area in zip(new_index[most], old_index[most], kept[most]):
        if n not in best or (area, -o) > (best[n][0], -best[n][1]):
            best[int(n)] = (float(area), int(o))
    return {n: ids[o] for n, (_, o) in sorted(best.items())}


def _room_mapping(rooms, previous_rooms) -> dict[str, str]:
    """{new room id: id to use}: matched rooms keep the old id, others get fresh ones."""
    pairs = match_rooms(previous_rooms, [room.polygon for room in rooms])
    fresh = fresh_ids(previous_rooms, "r")
    return {room.id: pairs[k] if k in pairs else next(fresh)
            for k, room in sorted(enumerate(rooms), key=lambda item: natural_key(item[1].id))}


def match_edge_pairs(old: nx.MultiGraph, new: nx.MultiGraph,
                     mapping: dict[str, str]) -> dict[str, str]:
    """Pair new edges with old ones through their matched end nodes.

    Parameters
    ----------
    mapping : dict
        {new node id: old node id} for matched nodes.

    Returns
    -------
    dict
        {new edge id: old edge id}; parallel lanes between the same two nodes are paired
        one-to-one by the smallest Hausdorff distance between their geometries.
    """
    groups: dict[tuple, list] = defaultdict(list)
    for u, v, key in new.edges(keys=True):
        if u in mapping and v in mapping:
            groups[(mapping[u], mapping[v])].append((u, v, key))
    pairs = {}
    for (a, b), new_edges in groups.items():
        if not old.has_edge(a, b):
            continue
        old_keys = sorted(old[a][b])
        if len(new_edges) == 1 and len(old_keys) == 1:
            pairs[new_edges[0][2]] = old_keys[0]
            continue
        new_lines = [new.edges[edge].get("geometry") for edge in new_edges]
        old_lines = [old[a][b][key].get("geometry") for key in old_keys]
        cost = shapely.hausdorff_distance(np.array(new_lines, dtype=object)[:, None],
                                          np.array(old_lines, dtype=object)[None, :])
        cost = np.nan_to_num(np.asarray(cost, dtype=float), nan=1e9)
        for r, c in zip(*_assignment(cost)):
            pairs[new_edges[r][2]] = old_keys[c]
    return pairs


def _match_edges(old, new, mapping) -> dict[str, str]:
    carried = {node: old_id for node, old_id in mapping.items() if old_id in old}
    pairs = match_edge_pairs(old, new, carried)
    fresh = fresh_ids([key for *_, key in old.edges(keys=True)], "e")
    ordered = sorted(new.edges(keys=True), key=lambda e: (
        sorted((mapping[e[0]], mapping[e[1]])), str(e[2])))
    return {key: pairs[key] if key in pairs else next(fresh) for _, _, key in ordered}

