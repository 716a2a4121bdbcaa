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

from clearway.roadmap.gvd import unique_rows

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
    new_edges = new_edges[unique_rows(new_edges)[0]] if len(new_edges) \
        else new_edges.reshape(0, 2)
    return merged, merged_clearance, new_edges


def _split(count: int, edges: np.ndarray, stop: np.ndarray):
    """The lanes as components: every vertex in `stop` split into one copy per edge.

    Edge i runs from u[i] to v[i], where an end in `stop` becomes its copy ``count + 2 i``
    (first end) or ``count + 2 i + 1`` (second end); label holds each split vertex's lane.
    """
    ids = np.arange(len(edges))
    u = np.where(stop[edges[:, 0]], count + 2 * ids, edges[:, 0])
    v = np.where(stop[edges[:, 1]], count + 2 * ids + 1, edges[:, 1])
    _, label = connected_components(_adjacency(count + 2 * len(edges), np.stack([u, v], 1)),
                                    directed=False)
    return u, v, label


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
    u, v, label = _split(count, edges, stop)
    split_count = count + 2 * len(edges)
    original = np.concatenate([np.arange(count), edges.ravel()])
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
    begin, end = boundaries[:-1], boundaries[1:]
    closed = visit[begin] < count
    sequence = original[visit]
    # a closed lane repeats its first vertex at its end
    order = np.insert(sequence, end[closed], sequence[begin[closed]])
    offsets = np.r_[0, np.cumsum(end - begin + closed)]
    return Chains(order, offsets.astype(np.int64))


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


#: Below this margin (metres) the vectorised spur test defers to :func:`_is_spur`; its
#: own rounding is about 1e-16 of the total lane length (under 1e-10 m on any floor here).
SPUR_DOUBT = 1e-7


def _spur_lanes(chains: Chains, vertices, clearance, leaf, slope: float, probe: float):
    """Which lanes are spurs (bool per lane): :func:`_is_spur` from either end in `leaf`.

    `leaf` (V,) marks the free ends that may be pruned (degree 1, not protected). One pass
    over all lanes: the distance along each lane is read off one running sum over the
    concatenated lanes, and the clearance at `probe` metres from an end is interpolated
    between the two vertices that straddle it. Lanes within SPUR_DOUBT of the threshold (or
    of the tolerance on short lanes) are decided by :func:`_is_spur` itself, so the answer
    is that function's to the bit.
    """
    order, offsets = chains.order, chains.offsets
    first, last = offsets[:-1], offsets[1:] - 1
    head, tail = order[first], order[last]
    at_head = np.flatnonzero((head != tail) & leaf[head])
    ends = np.concatenate([at_head, np.flatnonzero((head != tail) & leaf[tail])])
    from_head = np.arange(len(ends)) < len(at_head)
    result = np.zeros(len(chains), dtype=bool)
    if len(ends) == 0:
        return result
    step = np.hypot(*np.diff(vertices[order], axis=0).T)
    step[last[:-1]] = 0.0  # no step from one lane into the next
    running = np.r_[0.0, np.cumsum(step)]
    a, b = first[ends], last[ends]
    total = running[b] - running[a]
    reach = np.minimum(probe, total)
    # the point `reach` along from the free end, as a position on the running sum
    at = np.where(from_head, running[a] + reach, running[b] - reach)
    j = np.clip(np.searchsorted(running, at, side="right") - 1, a, np.maximum(b - 1, a))
    span = running[j + 1] - running[j]
    c0, c1 = clearance[order[j]], clearance[order[np.minimum(j + 1, b)]]
    with np.errstate(divide="ignore", invalid="ignore"):
        there = np.where(span > 0, c0 + (c1 - c0) * (at - running[j]) / span, c0)
    rise = there - clearance[np.where(from_head, head[ends], tail[ends])]
    spur = (rise >= slope * reach) | (reach <= MERGE_TOLERANCE)
    doubt = (np.abs(rise - slope * reach) <= SPUR_DOUBT) | \
        (np.abs(reach - MERGE_TOLERANCE) <= SPUR_DOUBT) | (np.abs(total - probe) <= SPUR_DOUBT)
    for k in np.flatnonzero(doubt):
        lane = chains.lane(ends[k])
        seq = lane if from_head[k] else lane[::-1]
        spur[k] = _is_spur(vertices[seq], clearance[seq], slope, probe)
    result[ends[spur]] = True
    return result


def _lane_edges(chains: Chains, lanes: np.ndarray) -> np.ndarray:
    """The edges (E, 2) of the given lanes, each as (low, high) vertex."""
    order, offsets = chains.order, chains.offsets
    size = offsets[lanes + 1] - offsets[lanes] - 1
    begin = np.repeat(offsets[lanes], size) + \
        (np.arange(size.sum()) - np.repeat(np.cumsum(size) - size, size))
    return np.sort(np.stack([order[begin], order[begin + 1]], 1), axis=1)


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
    dirty = None
    for _ in range(max_rounds):
        degree = np.bincount(alive.ravel(), minlength=count)
        if dirty is None:
            chains = chain_lanes(count, alive, protected)
        else:
            # Only lanes through a vertex whose degree or protection changed can differ
            # from the last round's, and every other lane was no spur then: chain those
            # lanes alone (a subset keeps the edges' order, so lanes keep their start,
            # direction and order).
            stop = (degree != 2) | protected
            u, _, label = _split(count, alive, stop)
            lane_of = label[u]
            redo = np.isin(lane_of, lane_of[dirty[alive[:, 0]] | dirty[alive[:, 1]]])
            chains = chain_lanes(count, alive[redo], stop)
        doomed = np.flatnonzero(_spur_lanes(chains, vertices, clearance,
                                            (degree == 1) & ~protected, slope, probe))
        if not len(doomed):
            break
        drop = _lane_edges(chains, doomed)
        drop = drop[unique_rows(drop)[0]]
        dirty = np.zeros(count, dtype=bool)
        dirty[drop] = True
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
            through = [seq for seq in map(chains.lane, doomed) if best in (seq[0], seq[-1])]
            if not through:
                isolated.append(best)
                continue
            lane = max(through, key=lambda seq: (_length(vertices[seq]), -int(seq[-1])))
            spared = np.sort(np.stack([lane[:-1], lane[1:]], 1), axis=1)
            dropped &= ~np.isin(key, spared[:, 0] * count + spared[:, 1])
            protected = protected.copy()
            protected[[lane[0], lane[-1]]] = True
            dirty[[lane[0], lane[-1]]] = True
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
