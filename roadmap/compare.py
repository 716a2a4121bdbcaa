"""What changed between two revisions of a lane graph.

Nodes are paired first by id (a graph built with ``--previous`` keeps its ids), then by
position (same label for stations, within `match_tolerance`, one-to-one by the smallest total
displacement), so two graphs built independently, or by different tool versions, compare too.
"""

from __future__ import annotations

import json
import math
from dataclasses import asdict, dataclass, field

import networkx as nx
import numpy as np

from clearway.config import DEFAULT_COMFORT, default_comfort_clearance
from clearway.roadmap.ids import SAME_PLACE_TOLERANCE, match_edge_pairs, match_nodes
from clearway.sorting import natural_key
from clearway.roadmap.routing import distance_matrix, station_nodes


#: Default route tolerance: a route must change by this share of its length, and by at least
#: ROUTE_TOLERANCE_FLOOR metres, to be listed (measuring noise of a rebuilt lane is a few cm;
#: a robot's schedule notices a per cent).
ROUTE_TOLERANCE_SHARE = 0.01
ROUTE_TOLERANCE_FLOOR = 0.25
#: Two graphs whose node extents overlap by less than this share of the smaller extent are
#: probably different sites (a revision that drops a far station shrinks its extent, but
#: stays inside the old one).
SAME_SITE_OVERLAP = 0.5
#: Extents differing in area by more than this factor are named as a further sign.
SAME_SITE_AREA_RATIO = 4.0
#: Lines of each kind the text summary lists before it summarises the rest.
SUMMARY_LINES = 10


@dataclass(frozen=True)
class NodeChange:
    """A node only one revision has."""

    id: str
    kind: str
    label: str
    x: float                 # metres
    y: float


@dataclass(frozen=True)
class NodeMove:
    """A node both revisions have, at different positions."""

    old_id: str
    new_id: str
    kind: str
    label: str
    x_old: float             # metres
    y_old: float
    x: float
    y: float
    distance: float          # metres


@dataclass(frozen=True)
class EdgeChange:
    """A lane only one revision has."""

    id: str
    source: str
    target: str
    length: float            # metres
    wkt: str


@dataclass(frozen=True)
class RouteChange:
    """A station pair whose reachability or shortest route changed (inf = unreachable)."""

    source: str
    target: str
    before: float            # metres
    after: float             # metres
    delta: float             # after - before, metres; NaN when reachability changed

    @property
    def reachability(self) -> str:
        was, now = math.isfinite(self.before), math.isfinite(self.after)
        return "same" if was == now else ("gained" if now else "lost")


@dataclass(frozen=True)
class PinchChange:
    """A new pinch point: a node or lane of the new graph narrower than before."""

    element: str             # "node" or "edge"
    id: str
    x: float                 # metres (an edge's midpoint)
    y: float
    clearance: float         # metres, now
    before: float            # metres, NaN when it had no counterpart
    reason: str              # "below comfort" or "new narrowing"


@dataclass(frozen=True)
class GraphChanges:
    """Everything `compare_graphs` found; lengths in metres."""

    nodes_added: tuple[NodeChange, ...]
    nodes_removed: tuple[NodeChange, ...]
    nodes_moved: tuple[NodeMove, ...]
    ids_changed: tuple[tuple[str, str], ...]      # (old id, new id) of matched nodes
    edges_added: tuple[EdgeChange, ...]
    edges_removed: tuple[EdgeChange, ...]
    lane_length_before: float
    lane_length_after: float
    stations_added: tuple[str, ...]
    stations_removed: tuple[str, ...]
    routes_changed: tuple[RouteChange, ...]
    new_pinch_points: tuple[PinchChange, ...]
    settings: dict = field(default_factory=dict)
    warnings: tuple[str, ...] = ()

    @property
    def unchanged(self) -> bool:
        return not any((self.nodes_added, self.nodes_removed, self.nodes_moved,
                        self.edges_added, self.edges_removed, self.stations_added,
                        self.stations_removed, self.routes_changed, self.new_pinch_points))

    def to_dict(self) -> dict:
        """Return plain JSON-ready values; inf and NaN become None."""
        data = asdict(self)
        data["ids_changed"] = [list(pair) for pair in self.ids_changed]
        for change, item in zip(self.routes_changed, data["routes_changed"]):
            item["reachability"] = change.reachability
        return _finite(data)

    def to_json(self) -> str:
        """Return the changes as a JSON document (keys sorted, 2-space indent)."""
        return json.dumps(self.to_dict(), indent=2, sort_keys=True, allow_nan=False) + "\n"


def _finite(value):
    if isinstance(value, float):
        return value if math.isfinite(value) else None
    if isinstance(value, dict):
        return {key: _finite(item) for key, item in value.items()}
    if isinstance(value, (list, tuple)):
        return [_finite(item) for item in value]
    return value


def compare_graphs(old: nx.MultiGraph, new: nx.MultiGraph, *,
                   match_tolerance: float = SAME_PLACE_TOLERANCE,
                   move_tolerance: float = 0.01, route_tolerance: float | None = None,
                   comfort_clearance: float | None = None,
                   narrowing_tolerance: float = 0.05) -> GraphChanges:
    """Compare two lane graphs.

    Parameters
    ----------
    old, new : networkx.MultiGraph
        Lane graphs in the in-memory contract (see roadmap.model.Roadmap).
    match_tolerance : float
        A node farther than this from every node of the other revision is added or
        removed, metres; default the one same-place tolerance that ``build --previous``
        uses to keep ids (`roadmap.ids.SAME_PLACE_TOLERANCE`).
    move_tolerance : float
        Matched nodes that moved less than this are not reported as moved, metres.
    route_tolerance : float, optional
        Station-to-station route costs that changed less than this are not reported,
        metres. Default: 1 % of the route's old cost, at least 0.25 m.
    comfort_clearance : float, optional
        Clearance below which a node or lane is a pinch point, metres (nothing above it
        is ever one). Default, as in
        ``build_roadmap``: the new graph's required clearance (graph attribute
        ``required_clearance``) + 0.2 m, or `DEFAULT_COMFORT` when the file does not say.
    narrowing_tolerance : float
        A node below comfort before and after whose clearance fell by more than this and
        is now a strict local minimum of clearance among its neighbours is a new
        narrowing, metres.

    Returns
    -------
    GraphChanges
    """
    if comfort_clearance is None:
        required = new.graph.get("required_clearance")
        comfort_clearance = (default_comfort_clearance(required)
                             if isinstance(required, float) and math.isfinite(required)
                             else DEFAULT_COMFORT)
    for name, value in (("match_tolerance", match_tolerance), ("move_tolerance", move_tolerance),
                        ("route_tolerance", 0.0 if route_tolerance is None else
                         route_tolerance),
                        ("comfort_clearance", comfort_clearance),
                        ("narrowing_tolerance", narrowing_tolerance)):
        if not (isinstance(value, (int, float)) and math.isfinite(value) and value >= 0):
            raise ValueError(f"{name} must be a number >= 0 m, got {value!r}")
    by_id = {node: node for node in new if node in old and _close(old, new, node, node,
                                                                  match_tolerance)}
    pairs = match_nodes(old, new, tolerance=match_tolerance, same_kind=False, fixed=by_id)
    matched_old = set(pairs.values())
    edge_pairs = match_edge_pairs(old, new, pairs)
    matched_old_edges = set(edge_pairs.values())
    moved = []
    for new_id, old_id in pairs.items():
        distance = math.dist(_xy(old, old_id), _xy(new, new_id))
        if distance > move_tolerance:
            attrs = new.nodes[new_id]
            moved.append(NodeMove(old_id, new_id, attrs.get("kind", ""), attrs.get("label", ""),
                                  *_xy(old, old_id), *_xy(new, new_id), float(distance)))
    old_stations, new_stations = station_nodes(old), station_nodes(new)
    return GraphChanges(
        nodes_added=_node_changes(new, set(new) - set(pairs)),
        nodes_removed=_node_changes(old, set(old) - matched_old),
        nodes_moved=tuple(sorted(moved, key=lambda m: (-m.distance, natural_key(m.new_id)))),
        ids_changed=tuple(sorted(((o, n) for n, o in pairs.items() if o != n),
                                key=lambda pair: natural_key(pair[0]))),
        edges_added=_edge_changes(new, lambda key: key not in edge_pairs),
        edges_removed=_edge_changes(old, lambda key: key not in matched_old_edges),
        lane_length_before=_lane_length(old),
        lane_length_after=_lane_length(new),
        stations_added=tuple(sorted(set(new_stations) - set(old_stations))),
        stations_removed=tuple(sorted(set(old_stations) - set(new_stations))),
        routes_changed=_route_changes(old, new, sorted(set(old_stations) & set(new_stations)),
                                      route_tolerance),
        new_pinch_points=_pinch_changes(old, new, pairs, edge_pairs, comfort_clearance,
                                        narrowing_tolerance),
        settings={"match_tolerance": float(match_tolerance),
                  "move_tolerance": float(move_tolerance),
                  "route_tolerance": (None if route_tolerance is None
                                      else float(route_tolerance)),
                  "route_tolerance_rule": (f"max({ROUTE_TOLERANCE_FLOOR} m, "
                                           f"{ROUTE_TOLERANCE_SHARE:.0%} of the old route)"
                                           if route_tolerance is None else "fixed"),
                  "comfort_clearance": float(comfort_clearance),
                  "narrowing_tolerance": float(narrowing_tolerance)},
        warnings=site_warnings(old, new),
    )


def _xy(graph, node) -> tuple[float, float]:
    attrs = graph.nodes[node]
    return float(attrs["x"]), float(attrs["y"])


def _close(old, new, old_id, new_id, tolerance) -> bool:
    same_label = (old.nodes[old_id].get("label", "") or "") == (new.nodes[new_id].get("label", "")
                                                                 or "")
    return same_label and math.dist(_xy(old, old_id), _xy(new, new_id)) <= tolerance


def _node_changes(graph, nodes) -> tuple[NodeChange, ...]:
    return tuple(NodeChange(node, graph.nodes[node].get("kind", ""),
                            graph.nodes[node].get("label", ""), *_xy(graph, node))
                 for node in sorted(nodes, key=lambda n: (_xy(graph, n), n)))


def _edge_changes(graph, keep) -> tuple[EdgeChange, ...]:
    changes = [EdgeChange(key, u, v, float(attrs["length"]), attrs["geometry"].wkt)
               for u, v, key, attrs in graph.edges(keys=True, data=True) if keep(key)]
    return tuple(sorted(changes, key=lambda change: natural_key(change.id)))


def _lane_length(graph) -> float:
    return float(sum(length for *_, length in graph.edges(data="length")))


def _route_changes(old, new, labels, tolerance) -> tuple[RouteChange, ...]:
    if len(labels) < 2:
        return ()
    before = distance_matrix(old, labels)[1]
    after = distance_matrix(new, labels)[1]
    changes = []
    for i, j in zip(*np.triu_indices(len(labels), k=1)):
        was, now = float(before[i, j]), float(after[i, j])
        least = (tolerance if tolerance is not None
                 else max(ROUTE_TOLERANCE_FLOOR, ROUTE_TOLERANCE_SHARE * was))
        if math.isfinite(was) != math.isfinite(now):
            changes.append(RouteChange(labels[i], labels[j], was, now, math.nan))
        elif math.isfinite(was) and abs(now - was) > least:
            changes.append(RouteChange(labels[i], labels[j], was, now, now - was))
    # the biggest change first: lost or gained routes, then by how much the length changed
    return tuple(sorted(changes, key=lambda c: (math.isfinite(c.delta), -abs(c.delta)
                                                if math.isfinite(c.delta) else 0.0)))


def _is_local_minimum(graph, node) -> bool:
    value = graph.nodes[node].get("clearance", math.nan)
    neighbours = [graph.nodes[n].get("clearance", math.nan) for n in graph[node] if n != node]
    return bool(neighbours) and math.isfinite(value) and all(value < other for other in neighbours)


def _pinch_changes(old, new, pairs, edge_pairs, comfort, tolerance) -> tuple[PinchChange, ...]:
    found = []
    for node, attrs in new.nodes(data=True):
        now = float(attrs.get("clearance", math.nan))
        counterpart = pairs.get(node)
        was = float(old.nodes[counterpart].get("clearance", math.nan)) if counterpart else math.nan
        if not now < comfort:       # issue 15: 2.08 m against a 0.65 m comfort is no pinch
            continue
        if not was < comfort:
            found.append(PinchChange("node", node, *_xy(new, node), now, was, "below comfort"))
        elif (now < was - tolerance and _is_local_minimum(new, node)
              and not _is_local_minimum(old, counterpart)):
            found.append(PinchChange("node", node, *_xy(new, node), now, was, "new narrowing"))
    old_edges = {key: attrs for *_, key, attrs in old.edges(keys=True, data=True)}
    for *_, key, attrs in new.edges(keys=True, data=True):
        now = float(attrs.get("clearance_min", math.nan))
        was = (float(old_edges[edge_pairs[key]].get("clearance_min", math.nan))
               if key in edge_pairs else math.nan)
        if now < comfort and not was < comfort:
            middle = attrs["geometry"].interpolate(0.5, normalized=True)
            found.append(PinchChange("edge", key, float(middle.x), float(middle.y), now, was,
                                     "below comfort"))
    return tuple(sorted(found, key=lambda p: (p.element, natural_key(p.id))))


def site_warnings(old, new) -> tuple[str, ...]:
    """Return a warning when the graphs' node extents barely overlap: probably two sites.

    Used by `compare_graphs` and by ``build --previous`` (carrying ids from another site
    would be meaningless). Empty when the extents overlap by SAME_SITE_OVERLAP or more.
    """
    boxes = []
    for graph in (old, new):
        xy = np.array([(a["x"], a["y"]) for _, a in graph.nodes(data=True)], dtype=float)
        if len(xy) == 0:
            return ()
        boxes.append((*xy.min(axis=0), *xy.max(axis=0)))
    (ax0, ay0, ax1, ay1), (bx0, by0, bx1, by1) = boxes
    # padded by a metre, so that a single aisle (a box of no area) still overlaps itself
    widths = [(x1 - x0 + 2.0, y1 - y0 + 2.0) for x0, y0, x1, y1 in boxes]
    inter = (max(0.0, min(ax1, bx1) - max(ax0, bx0) + 2.0)
             * max(0.0, min(ay1, by1) - max(ay0, by0) + 2.0))
    areas = sorted(w * h for w, h in widths)
    overlap = min(1.0, inter / areas[0])
    labels = [set(station_nodes(graph)) for graph in (old, new)]
    reasons = []
    if overlap < SAME_SITE_OVERLAP:
        reasons.append(f"the smaller extent overlaps the other by {overlap:.0%}")
    if min(map(len, labels)) >= 2 and not labels[0] & labels[1]:
        reasons.append("no station label in common")
    if not reasons:     # a revision may drop a far station: sizes alone say little
        return ()
    if areas[1] > SAME_SITE_AREA_RATIO * areas[0]:
        reasons.append(f"one extent is {areas[1] / areas[0]:.0f} times the other")
    names = [graph.graph.get("source") for graph in (old, new)]
    drawings = f" ({names[0]} and {names[1]})" if all(names) else ""
    return (f"the two graphs look like different sites{drawings}: {'; '.join(reasons)}; "
            "pairings, ids and route changes between them mean little",)


def summarize_changes(changes: GraphChanges, *, limit: int = SUMMARY_LINES) -> str:
    """Return a short plain-text account of `changes`, biggest changes first.

    Moves and route changes are listed up to `limit` lines each, largest first; the rest
    are summarised in one line with their range.
    """
    lines = [f"warning: {warning}" for warning in changes.warnings]
    lines += [f"nodes: {len(changes.nodes_added)} added, {len(changes.nodes_removed)} removed, "
              f"{len(changes.nodes_moved)} moved, {len(changes.ids_changed)} renamed",
              f"lanes: {len(changes.edges_added)} added, {len(changes.edges_removed)} removed; "
              f"length {changes.lane_length_before:.2f} m -> {changes.lane_length_after:.2f} m"]
    lines += [f"station added: {label}" for label in changes.stations_added]
    lines += [f"station removed: {label}" for label in changes.stations_removed]
    for pinch in changes.new_pinch_points:
        before = f"{pinch.before:.2f} m" if math.isfinite(pinch.before) else "none"
        lines.append(f"new pinch point at {pinch.element} {pinch.id} ({pinch.x:.2f}, "
                     f"{pinch.y:.2f}): clearance {pinch.clearance:.2f} m, was {before} "
                     f"({pinch.reason}; comfort {changes.settings['comfort_clearance']:.2f} m)")
    routes = changes.routes_changed
    for route in routes[:limit]:
        if route.reachability == "same":
            lines.append(f"route {route.source} - {route.target}: {route.before:.2f} m -> "
                         f"{route.after:.2f} m ({route.delta:+.2f} m)")
        else:
            lines.append(f"route {route.source} - {route.target}: reachability "
                         f"{route.reachability}")
    if len(routes) > limit:
        rest = [abs(route.delta) for route in routes[limit:]]
        lines.append(f"... and {len(rest)} more routes changed by {min(rest):.2f}-"
                     f"{max(rest):.2f} m")
    moves = changes.nodes_moved
    for move in moves[:limit]:
        lines.append(f"moved {move.old_id} -> {move.new_id} ({move.kind}"
                     f"{' ' + move.label if move.label else ''}) by {move.distance:.3f} m")
    if len(moves) > limit:
        rest = [move.distance for move in moves[limit:]]
        lines.append(f"... and {len(rest)} more nodes moved by {min(rest):.3f}-"
                     f"{max(rest):.3f} m")
    if changes.unchanged:
        lines.append("no changes")
    return "\n".join(lines) + "\n"
