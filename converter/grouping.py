"""Connected groups and near pairs, in numpy alone.

The reader runs in a process of its own beside the build's imports (see
clearway.side_by_side). Importing scipy costs it about 0.35 s before it can start
(scipy.sparse.csgraph alone about 0.25 s), more than the graph work it did here on any
drawing, so the reader groups and pairs points with these two functions instead. The
roadmap stage, in the other process, keeps scipy.

Both are checked against scipy (csgraph.connected_components, cKDTree.query_pairs) in
tests/converter/test_grouping.py.
"""

from __future__ import annotations

import numpy as np


def components(count: int, first, second) -> np.ndarray:
    """Label the connected components of an undirected graph.

    Parameters
    ----------
    count : number of nodes, 0 .. count - 1.
    first, second : the ends of each edge (equal lengths; self-loops and repeats are fine).

    Returns
    -------
    labels : (count,) int64, 0, 1, ... numbered in the order of each component's lowest
        node (the numbering of scipy.sparse.csgraph.connected_components).

    Roots are hooked onto the lower root of every edge that still joins two trees, and the
    trees are flattened after each round; the edges inside a tree are dropped as they
    appear, so each round works on fewer edges (a few rounds on floor plans; on a path
    drawn in the worst order, about log2(count) rounds).

    Examples
    --------
    >>> components(6, [0, 4, 2], [1, 3, 4]).tolist()
    [0, 0, 1, 1, 1, 2]
    """
    parent = np.arange(count, dtype=np.int64)
    first = np.asarray(first, dtype=np.int64).ravel()
    second = np.asarray(second, dtype=np.int64).ravel()
    while len(first):
        a, b = parent[first], parent[second]
        apart = a != b
        first, second, a, b = first[apart], second[apart], a[apart], b[apart]
        if not len(first):
            break
        # every node points at a root here, and a root is its tree's lowest node: hooking
        # the higher root under the lower keeps both true
        np.minimum.at(parent, np.maximum(a, b), np.minimum(a, b))
        while True:
            above = parent[parent]
            if np.array_equal(above, parent):
                break
            parent = above
    _, labels = np.unique(parent, return_inverse=True)
    return labels.astype(np.int64).ravel()


def pairs_within(points, reach: float) -> tuple[np.ndarray, np.ndarray]:
    """All pairs of `points` at most `reach` apart.

    Parameters
    ----------
    points : (N, 2) array of finite coordinates.
    reach : distance, >= 0, in the points' units.

    Returns
    -------
    i, j : int64 arrays, i < j, sorted by i then j (each pair once).

    The points are binned on a square grid of side `reach`; a pair that close lies in one
    cell or in two neighbouring cells, so each cell is compared with itself and with four
    of its eight neighbours (the other four see it from their side).

    Examples
    --------
    >>> i, j = pairs_within([(0, 0), (3, 4), (0, 1), (10, 0)], 5.0)
    >>> list(zip(i.tolist(), j.tolist()))
    [(0, 1), (0, 2), (1, 2)]
    """
    points = np.asarray(points, dtype=float).reshape(-1, 2)
    empty = np.empty(0, dtype=np.int64)
    if len(points) < 2:
        return empty, empty
    reach = float(reach)
    low = points.min(axis=0)
    span = points.max(axis=0) - low
    # a cell no smaller than a 2**-30 share of the extents: at most 2**30 cells a side, so
    # the cell numbers (column * cells a column + row) fit in int64
    cell = max(reach, float(span.max()) * 2.0 ** -30, 1e-300)
    key = np.floor((points - low) / cell).astype(np.int64)
    width = int(key[:, 1].max()) + 3                    # cells per column, with room around
    code = (key[:, 0] + 1) * width + (key[:, 1] + 1)
    order = np.argsort(code, kind="stable")
    code_sorted = code[order]
    cells, start, size = np.unique(code_sorted, return_index=True, return_counts=True)
    heads, tails = [], []
    for step in (0, 1, width - 1, width, width + 1):    # same, up, right-down, right, right-up
        neighbour = np.searchsorted(cells, cells + step)
        found = neighbour < len(cells)
        found[found] = cells[neighbour[found]] == cells[found] + step
        here, there = np.flatnonzero(found), neighbour[found]
        # every point of the cell against every point of the neighbour, in one go
        count = size[here] * size[there]
        if not count.sum():
            continue
        pair = np.repeat(np.arange(len(here)), count)
        rank = np.arange(count.sum()) - np.repeat(np.cumsum(count) - count, count)
        a = start[here][pair] + rank // size[there][pair]
        b = start[there][pair] + rank % size[there][pair]
        if step == 0:
            keep = a < b
            a, b = a[keep], b[keep]
        heads.append(order[a])
        tails.append(order[b])
    if not heads:
        return empty, empty
    i, j = np.concatenate(heads), np.concatenate(tails)
    i, j = np.minimum(i, j), np.maximum(i, j)
    offset = points[i] - points[j]
    close = np.hypot(offset[:, 0], offset[:, 1]) <= reach
    i, j = i[close], j[close]
    sort = np.lexsort((j, i))
    return i[sort].astype(np.int64), j[sort].astype(np.int64)
