"""Assemble the networkx lane graph: split lanes at stations, number nodes and edges.

Node ids are ``n<k>`` in sorted (x, y) order (to the micrometre first: `node_order`) and edge
ids ``e<k>`` sorted by their end ids, so the same input always gives the same ids. Clearances are exact distances (shapely/GEOS)
on the final geometry: at each node, and along each edge every COARSE_STEP metres plus
vertices, then every EDGE_STEP metres wherever the curvature bound of the distance leaves
room for a lower value (see ClearanceField.along_adaptive).
"""

from __future__ import annotations

from dataclasses import dataclass

import networkx as nx
import numpy as np
import shapely

from clearway.roadmap.clearance import ClearanceField
from clearway.roadmap.inflate import polylines
from clearway.roadmap.stations import ON_LANE, Attachment

#: Node ids follow (x, y) on this grid first, metres (1 um, far below the 10 um to which axis
#: vertices are merged): nodes on one line across the floor, whose x differ in the last bits
#: of their computation only, are numbered by y, whatever those bits are.
ID_GRID = 1e-6
#: Sampling interval for each edge's clearance_min, metres.
EDGE_STEP = 0.03
#: First sampling interval along each edge, metres.
COARSE_STEP = 0.15
#: Largest error allowed in clearance_min and in the samples below the comfort clearance, m.
CLEARANCE_TOLERANCE = 0.005


@dataclass(frozen=True)
class EdgeSamples:
    """Exact clearance samples along the edges (local frame): xy (M, 2), edge index (M,)."""

    xy: np.ndarray
    owner: np.ndarray
    clearance: np.ndarray
    edge_ids: list
    #: edge ids of the straight links from stations to lanes (not lanes themselves)
    station_links: frozenset = frozenset()


def _cut(coords: np.ndarray, cuts: list[tuple[float, np.ndarray]]):
    """Split polyline `coords` (n, 2) at distances along it; each cut point is given."""
    step = coords[1:] - coords[:-1]
    along = np.concatenate(([0.0], np.cumsum(np.hypot(step[:, 0], step[:, 1]))))
    if not cuts and (along[1:] > 0.0).all():
        return [np.array(coords)]          # what the loop below gives: every point, in order
    pieces, start, current = [], 0.0, coords[:1]
    for distance, point in cuts:
        inner = coords[(along > start) & (along < distance)]
        pieces.append(np.vstack([current, inner, point[None]]))
        start, current = distance, point[None]
    pieces.append(np.vstack([current, coords[along > start]]))
    return pieces


def _station_nodes(lines, ends, station_xy, joins, add_node):
    """Per lane, the cut points (distance, node key, point); plus the station link edges."""
    cuts: dict[int, list] = {}
    links = []
    for index, join in enumerate(joins):
        if not isinstance(join, Attachment):
            continue
        station = ("s", index)
        add_node(station, station_xy[index], "station")
        point = station_xy[index] if join.on_lane else np.array([join.x, join.y])
        line = lines[join.lane]
        length = float(line.length)
        if join.along <= ON_LANE or join.along >= length - ON_LANE:
            end = ends[join.lane][0 if join.along <= ON_LANE else 1]
            target = ("v", end)
            links.append((station, target, None))
            continue
        group = cuts.setdefault(join.lane, [])
        same = [g for g in group if abs(g[0] - join.along) <= ON_LANE]
        if same:
            target = same[0][1]
        else:
            target = station if join.on_lane else ("l", join.lane, len(group))
            if not join.on_lane:
                add_node(target, point, "link")
            group.append((join.along, target, point))
        if target != station:
            links.append((station, target, None))
    return cuts, links


def assemble_graph(lines, ends, vertices, isolated, station_xy, labels, joins,
                   field: ClearanceField, offset, *, refine_below: float = np.inf):
    """Build the MultiGraph in the drawing frame from lanes in the local frame.

    Parameters
    ----------
    lines : (L,) LineString, lanes joining ``ends[i] = (u, v)`` vertex indices, metres
    vertices : (V, 2) float, metres; isolated : list of vertex indices kept alone
    station_xy : (N, 2) float; labels : list of str; joins : Attachment or reason per station
    field : ClearanceField; offset : (x0, y0) of the local frame, metres
    refine_below : float, metres; samples whose clearance may lie below it are exact to
        CLEARANCE_TOLERANCE (the comfort clearance, for pinch points).

    Returns
    -------
    graph : networkx.MultiGraph (edge weights equal lengths here; checks add penalties)
    samples : EdgeSamples along every edge
    stations : dict of station index -> node id, for the stations that joined
    """
    points: dict = {}
    kinds: dict = {}

    def add_node(key, xy, kind=None):
        points.setdefault(key, np.asarray(xy, dtype=float))
        if kind:
            kinds[key] = kind

    for a, b in ends:
        add_node(("v", a), vertices[a])
        add_node(("v", b), vertices[b])
    for vertex in isolated:
        add_node(("v", vertex), vertices[vertex])
    cuts, links = _station_nodes(lines, ends, station_xy, joins, add_node)
    pieces = []
    for index, line in enumerate(lines):
        coords = shapely.get_coordinates(line)
        coords[0], coords[-1] = vertices[ends[index][0]], vertices[ends[index][1]]
        mine = sorted(cuts.get(index, []), key=lambda cut: cut[0])
        nodes = [("v", ends[index][0])] + [cut[1] for cut in mine] + [("v", ends[index][1])]
        for k, piece in enumerate(_cut(coords, [(d, points[key]) for d, key, _ in mine])):
            pieces.append((nodes[k], nodes[k + 1], piece, False))
    for station, target, _ in links:
        pieces.append((station, target, np.vstack([points[station], points[target]]), True))
    keys = list(points)
    xy = np.array([points[key] for key in keys]).reshape(-1, 2)
    shift = np.asarray(offset, dtype=float)
    order = node_order(xy + shift)
    node_id = {keys[i]: f"n{rank}" for rank, i in enumerate(order)}
    number = {keys[i]: rank for rank, i in enumerate(order)}
    pieces.sort(key=lambda p: (min(number[p[0]], number[p[1]]), max(number[p[0]], number[p[1]]),
                               len(p[2]), tuple(p[2].ravel()[:4])))
    local_lines = polylines([piece for _, _, piece, _ in pieces])
    # the same lines in the drawing frame, all in one call (not a LineString per piece)
    geometry = shapely.transform(local_lines, lambda coords: coords + shift)
    lengths = shapely.length(geometry).tolist()
    sample_xy, owner, values = field.along_adaptive(
        local_lines, COARSE_STEP, fine=EDGE_STEP, tolerance=CLEARANCE_TOLERANCE,
        below=refine_below) if pieces else \
        (np.zeros((0, 2)), np.zeros(0, np.int64), np.zeros(0))
    low = np.full(len(pieces), np.inf)
    np.minimum.at(low, owner, values)
    node_clearance = field.at(xy)
    degree = {key: 0 for key in keys}
    for u, v, _, _ in pieces:
        degree[u] += 1
        degree[v] += 1
    graph = nx.MultiGraph()
    for rank, i in enumerate(order):
        key = keys[i]
        kind = kinds.get(key) or ("junction" if degree[key] >= 3 else
                                  "waypoint" if degree[key] == 2 else "end")
        label = labels[key[1]] if key[0] == "s" else ""
        graph.add_node(f"n{rank}", x=float(xy[i, 0] + shift[0]), y=float(xy[i, 1] + shift[1]),
                       clearance=float(node_clearance[i]), kind=kind, label=label)
    edge_ids = []
    for index, (u, v, _, _) in enumerate(pieces):
        length = lengths[index]
        key = f"e{index}"
        edge_ids.append(key)
        graph.add_edge(node_id[u], node_id[v], key=key, length=length, weight=length,
                       clearance_min=float(low[index]), geometry=geometry[index])
    stations = {key[1]: node_id[key] for key in keys if key[0] == "s"}
    station_links = frozenset(edge_ids[i] for i, piece in enumerate(pieces) if piece[3])
    return graph, EdgeSamples(sample_xy, owner, values, edge_ids, station_links), stations


def node_order(xy, *tie_breaks):
    """Return the order in which nodes at `xy` ((N, 2) array, metres) are numbered, shape (N,).

    Sorted by x, then y, both rounded to ID_GRID, then by the exact x and y and then by
    `tie_breaks` (arrays of N sortable values, the first deciding first): two nodes whose
    x agree to the micrometre are numbered by y, so a change in the last bits of x does
    not swap their ids.

    Examples
    --------
    >>> node_order(np.array([[2.0 + 1e-12, 0.0], [2.0, 1.0], [1.0, 5.0]])).tolist()
    [2, 0, 1]
    """
    xy = np.asarray(xy, dtype=float).reshape(-1, 2)
    grid = np.round(xy / ID_GRID)
    return np.lexsort((*reversed(tie_breaks), xy[:, 1], xy[:, 0], grid[:, 1], grid[:, 0]))


def refine_lanes(lines: list[np.ndarray], field: ClearanceField, *, below: float,
                 rounds: int = 3, iterations: int = 30) -> list[np.ndarray]:
    """Insert axis points into chords that cut a corner, on lanes with clearance < `below`.

    Between Voronoi vertices ~0.1 m apart, a chord round a convex obstacle corner cuts
    inside the parabolic medial axis by up to a few millimetres, enough to breach the
    clearance in a neck only millimetres wider than 2c. The clearance is a ridge (tent)
    across the axis, so the axis point is the maximum of the exact clearance on the chord's
    perpendicular bisector: found by golden-section search, for all chords at once.

    Parameters
    ----------
    lines : list of (n_i, 2) float ndarray, metres
    below : float, metres; only chords whose middle has clearance below it are refined.

    Returns
    -------
    list of (m_i, 2) float ndarray, the refined lanes (ends unchanged)
    """
    golden = (np.sqrt(5.0) - 1.0) / 2.0
    for _ in range(rounds):
        if not lines:
            return lines
        counts = np.array([len(line) for line in lines])
        xy = np.concatenate(lines)
        owner = np.repeat(np.arange(len(lines)), counts)
        chord = np.flatnonzero(owner[1:] == owner[:-1])
        a, b = xy[chord], xy[chord + 1]
        # each vertex once, not once per chord it ends; where it is at least below + 0.2 it
        # ends no narrow chord, and its value (inf) neither decides one nor is kept
        at_vertex = field.under(xy, below + 0.2)
        ends = np.minimum(at_vertex[chord], at_vertex[chord + 1])
        narrow = ends < below + 0.2
        chord, a, b, ends = chord[narrow], a[narrow], b[narrow], ends[narrow]
        span = np.hypot(*(b - a).T)
        normal = np.stack([a[:, 1] - b[:, 1], b[:, 0] - a[:, 0]], 1) / \
            np.maximum(span, 1e-12)[:, None]
        fractions = np.linspace(0.0625, 0.9375, 15)
        probes = a[:, None] + fractions[None, :, None] * (b - a)[:, None]
        at_probe = field.at(probes.reshape(-1, 2)).reshape(len(a), len(fractions))
        lowest = np.argmin(at_probe, axis=1)
        middle = probes[np.arange(len(a)), lowest]
        at_middle = at_probe[np.arange(len(a)), lowest]
        sag = (at_middle < ends - 1e-7) & (at_middle < below)
        if not sag.any():
            return lines
        chord, middle, span, normal = chord[sag], middle[sag], span[sag], normal[sag]
        low, high = -span / 2, span / 2
        for _ in range(iterations):
            left, right = high - golden * (high - low), low + golden * (high - low)
            better = field.at(middle + left[:, None] * normal) >= \
                field.at(middle + right[:, None] * normal)
            high = np.where(better, right, high)
            low = np.where(better, low, left)
        point = middle + ((low + high) / 2)[:, None] * normal
        inserted = np.insert(xy, chord + 1, point, axis=0)
        new_owner = np.insert(owner, chord + 1, owner[chord])
        split = np.flatnonzero(np.r_[True, new_owner[1:] != new_owner[:-1]])
        lines = np.split(inserted, split[1:])
    return lines
