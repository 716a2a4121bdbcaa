"""From Voronoi ridges to lanes: merge, chain, prune spurs, split loops.

The sampled axis is a graph on up to a few hundred thousand vertices; every step here works on
its edge arrays with numpy and scipy.sparse.csgraph. Degree-2 runs are chained into lanes by
one depth-first traversal of a graph in which every terminal vertex (degree != 2) is split into
one copy per incident ridge, so that each lane becomes its own path.

Spurs are pruned as in the hierarchical GVG [CB00]_: a leaf lane whose clearance falls
steadily towards its free end runs into a concave corner of the free space (at a 90-degree
corner it falls by sin 45 = 0.71 m per metre); a leaf lane whose clearance stays about constant
is a dead-end aisle and stays. Pruning repeats, re-chaining each time, until nothing changes;
a component is never pruned to nothing (its longest lane from the vertex of greatest clearance
is kept, so that no node is left without an edge).

References
----------
.. [CB00] H. Choset and J. Burdick, "Sensor-based exploration: the hierarchical generalized
   Voronoi graph", International Journal of Robotics Research 19(2), 2000.
.. [LaV06] S. M. LaValle, Planning Algorithms, Cambridge University Press, 2006, sec. 6.2.3.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.sparse import coo_array
from scipy.sparse.csgraph import connected_components, depth_first_order

#: Vertices closer than this are merged, metres.
MERGE_TOLERANCE = 1e-3
#: A leaf lane is a spur when its clearance falls by at least SPUR_SLOPE metres per metre
#: over the last SPUR_PROBE metres before its free end (sin 17.5 deg: pockets narrower than
#: a 35-degree wedge count as aisles).
SPUR_SLOPE = 0.3
SPUR_PROBE = 0.5


@dataclass(frozen=True)
class Chains:
    """Lanes as vertex sequences: lane i is ``order[offsets[i]:offsets[i + 1]]``.

    A closed lane (a cycle with no terminal vertex) repeats its first vertex at the end.
    """

    order: np.ndarray
    offsets: np.ndarray

    def __len__(self) -> int:
        return len(self.offsets) - 1

    def lane(self, index: int) -> np.ndarray:
        return self.order[self.offsets[index]:self.offsets[index + 1]]


def _adjacency(count: int, edges: np.ndarray):
    return coo_array((np.ones(len(edges)), (edges[:, 0], edges[:, 1])),
                     shape=(count, count)).tocsr()


def contract_short_edges(vertices, clearance, edges, tolerance: float = MERGE_TOLERANCE):
    """Merge the ends of edges shorter than `tolerance` metres; drop loops and duplicates.

    Returns
    -------
    vertices (V', 2), clearance (V',), edges (E', 2), with u < v and no duplicates.
    """
    length = np.hypot(*(vertices[edges[:, 0]] - vertices[edges[:, 1]]).T)
    short = edges[length < tolerance]
    if len(short) == 0:
        return vertices, clearance, edges
    _, label = connected_components(_adjacency(len(vertices), short), directed=False)
    count = np.bincount(label).astype(float)
    merged = np.zeros((len(count), 2))
    np.add.at(merged, label, vertices)
    merged /= count[:, None]
    merged_clearance = np.full(len(count), np.inf)
    np.minimum.at(merged_clearance, label, clearance)
    new_edges = np.sort(label[edges], axis=1)
    new_edges = new_edges[new_edges[:, 0] != new_edges[:, 1]]
    new_edges = np.unique(new_edges, axis=0) if len(new_edges) else new_edges.reshape(0, 2)
    return merged, merged_clearance, new_edges


def chain_lanes(count: int, edges: np.ndarray, terminal: np.ndarray | None = None) -> Chains:
    """Chain degree-2 runs of the graph (`count` vertices, `edges` (E, 2)) into lanes.

    Parameters
    ----------
    terminal : (count,) bool ndarray, optional
        Vertices that end lanes even at degree 2 (protected vertices).

    Returns
    -------
    Chains, ordered deterministically by the traversal.
    """
    if len(edges) == 0:
        return Chains(np.zeros(0, dtype=np.int64), np.zeros(1, dtype=np.int64))
    degree = np.bincount(edges.ravel(), minlength=count)
    stop = degree != 2
    if terminal is not None:
        stop |= terminal
    ids = np.arange(len(edges))
    u = np.where(stop[edges[:, 0]], count + 2 * ids, edges[:, 0])
    v = np.where(stop[edges[:, 1]], count + 2 * ids + 1, edges[:, 1])
    split_count = count + 2 * len(edges)
    original = np.concatenate([np.arange(count), edges.ravel()])
    _, label = connected_components(_adjacency(split_count, np.stack([u, v], 1)),
                                    directed=False)
    in_edge = np.zeros(split_count, dtype=bool)
    in_edge[u] = in_edge[v] = True
    # One start per lane: its smallest copy vertex, or its smallest vertex on a closed cycle.
    nodes = np.flatnonzero(in_edge)
    is_copy = nodes >= count
    rank = np.where(is_copy, nodes - split_count, nodes)  # copies sort first
    order_by = np.lexsort((rank, label[nodes]))
    sorted_nodes = nodes[order_by]
    first = np.r_[True, label[sorted_nodes][1:] != label[sorted_nodes][:-1]]
    starts = sorted_nodes[first]
    root = split_count
    rows = np.concatenate([u, np.full(len(starts), root)])
    cols = np.concatenate([v, starts])
    graph = _adjacency(split_count + 1, np.stack([rows, cols], 1))
    visit = depth_first_order(graph, root, directed=False, return_predecessors=False)[1:]
    lane_of = label[visit]
    boundaries = np.flatnonzero(np.r_[True, lane_of[1:] != lane_of[:-1], True])
    closed = ~(visit[boundaries[:-1]] >= count)
    pieces, offsets = [], [0]
    sequence = original[visit]
    for index, (a, b) in enumerate(zip(boundaries[:-1], boundaries[1:])):
        piece = sequence[a:b]
        if closed[index]:
            piece = np.r_[piece, piece[0]]
        pieces.append(piece)
        offsets.append(offsets[-1] + len(piece))
    return Chains(np.concatenate(pieces), np.asarray(offsets, dtype=np.int64))


def _is_spur(points: np.ndarray, clearance: np.ndarray, slope: float, probe: float) -> bool:
    """`points` (n, 2) and `clearance` (n,) run from the free end of a leaf lane inwards."""
    along = np.r_[0.0, np.cumsum(np.hypot(*np.diff(points, axis=0).T))]
    reach = min(probe, along[-1])
    if reach <= MERGE_TOLERANCE:
        return True
    rise = np.interp(reach, along, clearance) - clearance[0]
    return bool(rise >= slope * reach)


def _length(points: np.ndarray) -> float:
    return float(np.hypot(*np.diff(points, axis=0).T).sum())


def prune_spurs(vertices, clearance, edges, *, protected=None, slope: float = SPUR_SLOPE,
                probe: float = SPUR_PROBE, max_rounds: int = 50):
    """Remove leaf lanes that run into concave corners, round after round.

    Parameters
    ----------
    vertices : (V, 2) metres; clearance : (V,) metres; edges : (E, 2)
    protected : (V,) bool ndarray, optional
        Vertices never removed (station attachments); they also end lanes.

    Returns
    -------
    edges : (E', 2) int ndarray, the kept edges
    isolated : (I,) int ndarray, vertices kept alone where a component lost every edge
    """
    count = len(vertices)
    protected = np.zeros(count, bool) if protected is None else protected
    alive = np.asarray(edges, dtype=np.int64)  # int64: the edge keys below reach V**2
    isolated = []
    for _ in range(max_rounds):
        chains = chain_lanes(count, alive, protected)
        degree = np.bincount(alive.ravel(), minlength=count)
        doomed = []
        for index in range(len(chains)):
            lane = chains.lane(index)
            head, tail = lane[0], lane[-1]
            if head == tail:
                continue
            for end, seq in ((head, lane), (tail, lane[::-1])):
                if degree[end] == 1 and not protected[end] and \
                        _is_spur(vertices[seq], clearance[seq], slope, probe):
                    doomed.append(lane)
                    break
        if not doomed:
            break
        drop = np.unique(np.concatenate(
            [np.sort(np.stack([lane[:-1], lane[1:]], 1), axis=1) for lane in doomed]), axis=0)
        _, label = connected_components(_adjacency(count, alive), directed=False)
        key = alive[:, 0] * count + alive[:, 1]
        dropped = np.isin(key, drop[:, 0] * count + drop[:, 1])
        remaining = np.bincount(label[alive[~dropped, 0]], minlength=label.max() + 1)
        emptied = np.unique(label[alive[dropped, 0]])
        for component in emptied[remaining[emptied] == 0]:
            members = np.flatnonzero(label == component)
            best = int(members[np.argmax(clearance[members])])
            # keep the longest doomed lane from the vertex of greatest clearance (a square
            # room's axis is all spurs), so the component keeps an edge, never a lone node
            through = [lane for lane in doomed if best in (lane[0], lane[-1])]
            if not through:
                isolated.append(best)
                continue
            lane = max(through, key=lambda seq: (_length(vertices[seq]), -int(seq[-1])))
            spared = np.sort(np.stack([lane[:-1], lane[1:]], 1), axis=1)
            dropped &= ~np.isin(key, spared[:, 0] * count + spared[:, 1])
            protected = protected.copy()
            protected[[lane[0], lane[-1]]] = True
        alive = alive[~dropped]
    return alive, np.asarray(sorted(set(isolated)), dtype=np.int64)


def split_loops(chains: Chains, vertices) -> tuple[list[np.ndarray], set[int]]:
    """Split every lane that returns to its own start, so the graph has no self-loops.

    Returns the lanes as vertex sequences and the set of vertices that became waypoints
    (the middle of each loop, and the start of each closed cycle).
    """
    lanes, waypoints = [], set()
    for index in range(len(chains)):
        lane = chains.lane(index)
        if lane[0] != lane[-1]:
            lanes.append(lane)
            continue
        along = np.r_[0.0, np.cumsum(np.hypot(*np.diff(vertices[lane], axis=0).T))]
        middle = int(np.clip(np.searchsorted(along, along[-1] / 2), 1, len(lane) - 2))
        lanes.extend([lane[:middle + 1], lane[middle:]])
        waypoints.add(int(lane[middle]))
        waypoints.add(int(lane[0]))
    return lanes, waypoints
