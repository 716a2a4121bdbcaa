"""Delaunay triangulation of many boundary samples: in one piece, or in strips side by side.

The triangulator is startinpy (MIT; Rust, incremental insertion with exact orientation and
in-circle predicates), the points inserted in Morton (Z-) order so that each walk to the
next point is short. On the boundary samples of the suite's 20,000-bay drawings it took 0.98,
0.22 and 0.27 s (`mixed`, `angled`, `flue_sealed`: 433,000, 108,000 and 114,000 points)
where scipy's Qhull took 3.46, 0.80 and 0.85 s, about 0.7 KiB a point either way. Its
predicates are exact, so the triangulation is the Delaunay triangulation of the jittered
points, which is unique; Qhull's floating-point hull gave 978 of the 866,598 triangles of
`mixed` the other way, across four points on one circle to within its rounding. Up to 2 x
STRIP_POINTS samples, and below `split_points`, one call triangulates them all. Beyond,
they are triangulated in strips along the longer axis: one per STRIP_POINTS (two at least
from `split_points`), each with a margin of its neighbours' points; the first half of the strips
here and the second half in a forked second process where that is possible
(clearway.side_by_side). The strips are the same either way, so the result is.
Neighbours are found by matching the triangles' edges (:func:`neighbours_of`).

A triangle of a strip is a triangle of the whole triangulation when its circumcircle lies
inside the strip's band (the band holds every point there, and the circle holds none of
them); each is kept by the strip holding its circumcentre. A triangle whose circle leaves the
band matters only when its circumcentre lies in the free space (a Voronoi vertex); then the
strip is done again with a wider margin on that side (twice as wide, and as wide as such
circles reach).
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import shapely
import startinpy

from clearway.side_by_side import side_by_side

#: Points per strip where there are more than twice as many.
STRIP_POINTS = 300_000
#: Samples from which the triangulation is made in two strips (at least), side by side in two
#: processes where possible; None: only beyond 2 x STRIP_POINTS, for memory. The first
#: triangulation's empty circles place the cut and size its margins (:func:`strip_bands`),
#: so a strip is seldom done again: with a fixed 8 m margin, the angled suite drawing at
#: 20,000 bays (108,000 samples) had each strip triangulated three times (8, 16 and 32 m);
#: placed and sized, once. The medial axis of the 20,000-bay suite drawings (medians of three,
#: one call -> two strips, seconds): current 0.75 -> 0.64, flue_sealed 0.88 -> 0.70,
#: flue_open 0.80 -> 0.72, dock_columns 0.77 -> 0.58, dock_open 0.73 -> 0.65, angled
#: 0.70 -> 0.66, mixed (433,000 samples) 3.25 -> 2.73. The strips do not depend on the
#: processes at hand, so neither does the result.
SPLIT_POINTS = 60_000
#: First margin of each strip, metres.
MARGIN = 8.0
#: Added to the radius of a circle that a margin is sized to hold, metres.
MARGIN_SLACK = 1.0
#: Positions tried for each boundary between strips (see :func:`strip_bands`).
CUT_CHOICES = 21
#: Points nearer each other than this are one vertex to startinpy (metres; its default is
#: 1 mm). The samples are jittered by a micrometre, so only a point given twice is.
SNAP = 1e-9
#: Bits of each coordinate in the Morton key of the insertion order.
MORTON_BITS = 16


def circumcircles(points: np.ndarray, simplices: np.ndarray):
    """Circumcentres (T, 2) and circumradii (T,) of triangles; non-finite when degenerate."""
    a = points[simplices[:, 0]]
    b = points[simplices[:, 1]] - a
    c = points[simplices[:, 2]] - a
    d = 2.0 * (b[:, 0] * c[:, 1] - b[:, 1] * c[:, 0])
    bb, cc = (b * b).sum(axis=1), (c * c).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        ux = (c[:, 1] * bb - b[:, 1] * cc) / d
        uy = (b[:, 0] * cc - c[:, 0] * bb) / d
    return a + np.stack([ux, uy], axis=1), np.hypot(ux, uy)


def delaunay(points: np.ndarray) -> np.ndarray:
    """The Delaunay triangles (T, 3) of `points` (N, 2), as indices into `points`.

    Counter-clockwise. A point given twice appears under its first index only; where all
    points lie on one line (or there are fewer than three) there are no triangles.

    Examples
    --------
    >>> delaunay(np.array([[0.0, 0.0], [2.0, 0.0], [2.0, 1.0], [0.0, 1.5], [2.0, 0.0]]))
    array([[0, 1, 2],
           [0, 2, 3]])
    """
    points = np.asarray(points, dtype=float).reshape(-1, 2)
    order = morton_order(points)
    triangulation = startinpy.DT()
    triangulation.snap_tolerance = SNAP
    lifted = np.column_stack([points[order], np.zeros(len(points))])
    triangulation.insert(lifted, insertionstrategy="AsIs")
    if triangulation.number_of_vertices() == len(points):
        index = order                 # vertex k + 1 is the k-th point inserted
    else:                             # points given twice: where did each one go?
        triangulation = startinpy.DT()
        triangulation.snap_tolerance = SNAP
        vertex = np.array([triangulation.insert_one_pt([x, y, 0.0])[0]
                           for x, y in points[order].tolist()], dtype=np.int64)
        index = np.zeros(triangulation.number_of_vertices(), dtype=np.int64)
        first = np.unique(vertex, return_index=True)[1]
        index[vertex[first] - 1] = order[first]
    triangles = np.asarray(triangulation.triangles, dtype=np.int64).reshape(-1, 3)
    return index[triangles - 1]


def morton_order(points: np.ndarray, bits: int = MORTON_BITS) -> np.ndarray:
    """Indices that sort `points` (N, 2) along a Morton (Z-order) curve on a 2**bits grid
    over their bounding box; ties in drawing order.

    Examples
    --------
    >>> morton_order(np.array([[1.0, 1.0], [0.0, 0.0], [1.0, 0.0], [0.0, 1.0]])).tolist()
    [1, 2, 3, 0]
    """
    if len(points) == 0:
        return np.zeros(0, dtype=np.int64)
    low = points.min(axis=0)
    span = float(np.ptp(points, axis=0).max()) or 1.0
    cells = ((points - low) * ((2 ** bits - 1) / span)).astype(np.uint64)
    key = np.zeros(len(points), dtype=np.uint64)
    for bit in range(bits):
        one = np.uint64(1 << bit)
        key |= (cells[:, 0] & one) << np.uint64(bit)
        key |= (cells[:, 1] & one) << np.uint64(bit + 1)
    return np.argsort(key, kind="stable")


def neighbours_of(simplices: np.ndarray) -> np.ndarray:
    """Neighbour across the edge opposite each corner (T, 3), -1 where none.

    Edges are numbered corner by corner (edge ``k * T + t`` is opposite corner k of
    triangle t), matched through one sorted int64 key each: an edge of a triangulation
    borders at most two triangles.

    Examples
    --------
    >>> neighbours_of(np.array([[0, 1, 2], [0, 2, 3]])).tolist()
    [[-1, 1, -1], [-1, -1, 0]]
    """
    count = len(simplices)
    a, b = _shared_edges(simplices[:, [1, 2, 0]].T.ravel(), simplices[:, [2, 0, 1]].T.ravel())
    flat = np.full(3 * count, -1, dtype=np.int64)
    flat[a] = b % count
    flat[b] = a % count
    return np.ascontiguousarray(flat.reshape(3, count).T)


def _shared_edges(start, end):
    """Index pairs (i, j) of the edges ``(start[k], end[k])`` given twice, either way round,
    matched through one sorted int64 key each (an edge borders at most two triangles)."""
    low, high = np.minimum(start, end), np.maximum(start, end)
    key = low.astype(np.int64) * (int(high.max(initial=0)) + 1) + high
    order = np.argsort(key, kind="stable")
    twice = np.flatnonzero(key[order][1:] == key[order][:-1])
    return order[twice], order[twice + 1]


def strip_count(count: int, strip_points: int = STRIP_POINTS,
                split_points: int | None = SPLIT_POINTS) -> int:
    """How many strips :func:`triangulate` makes of `count` points (below 2: one call)."""
    strips = count // strip_points
    if split_points is not None and count >= split_points:
        strips = max(strips, 2)
    return strips


def triangulate(points: np.ndarray, free_space=None, *, strip_points: int = STRIP_POINTS,
                neighbours: bool = True, split_points: int | None = SPLIT_POINTS,
                measure: Callable[[np.ndarray], tuple] | None = None, circles=None):
    """Return the Delaunay triangles of `points` (N, 2) that matter, and their neighbours.

    Parameters
    ----------
    points : (N, 2) float ndarray, metres, in general position (jittered)
    free_space : prepared Polygon or MultiPolygon, optional
        Triangles whose circumcentre lies outside it may be left out (strips only); without
        it, one call triangulates every point.
    strip_points : int
        Points per strip where there are more than 2 x strip_points.
    neighbours : bool
        Also return the neighbours.
    split_points : int or None
        From this many points on, at least two strips; None: one call up to
        2 x strip_points.
    measure : callable, optional
        Called with the triangles of each strip (or all of them) in the process that made
        them; returns a tuple of arrays, which are joined strip after strip.
    circles : (centres (C, 2), radii (C,)), optional
        Empty circles centred in the free space from a coarser triangulation of the same
        boundary: they size the margins where the strips meet, and the cuts go where the
        larger strip, margins included, holds the fewest points (:func:`strip_bands`).

    Returns
    -------
    simplices : (T, 3) int ndarray, indices into `points`
    neighbours : (T, 3) int ndarray, as scipy's ``Delaunay.neighbors`` (-1: none kept);
        None when `neighbours` is false.
    measured : tuple of ndarray, only with `measure`: its arrays, joined.
    """
    strips = strip_count(len(points), strip_points, split_points)
    if strips < 2 or free_space is None:
        simplices = delaunay(points)
        result = simplices, neighbours_of(simplices) if neighbours else None
        return result if measure is None else (*result, measure(simplices))
    axis = int(np.argmax(np.ptp(points, axis=0)))
    along = points[:, axis]
    edges, margins = strip_bands(along, strips, circles, axis)
    bands = list(zip(edges[:-1], edges[1:], margins[:-1], margins[1:]))
    half = len(bands) // 2

    def triangles_of(some):
        """The triangles of these strips, joined; their neighbours among themselves; what
        `measure` makes of each strip's triangles."""
        made = [_strip(points, along, axis, band, free_space) for band in some]
        joined = np.concatenate(made) if made else np.zeros((0, 3), dtype=np.int64)
        return (joined, neighbours_of(joined) if neighbours else None,
                [measure(simplices) if measure else () for simplices in made])

    done = side_by_side({"first": lambda: triangles_of(bands[:half]),
                         "second": lambda: triangles_of(bands[half:])}, aside=["second"])
    (first, first_neighbours, first_measured), (second, second_neighbours, second_measured) = \
        done["first"], done["second"]
    simplices = np.concatenate([first, second])
    result = simplices, joined_neighbours(simplices, first_neighbours, second_neighbours) \
        if neighbours else None
    if measure is None:
        return result
    pieces = first_measured + second_measured
    return (*result, tuple(np.concatenate(arrays) for arrays in zip(*pieces)))


def joined_neighbours(simplices: np.ndarray, first: np.ndarray, second: np.ndarray) -> np.ndarray:
    """``neighbours_of(simplices)`` from the neighbours of its first ``len(first)`` triangles
    among themselves (`first`) and of the rest among themselves (`second`): only the edges
    left without a neighbour in either are matched again (those where the two parts meet,
    and the hull's), a small share of all.

    Examples
    --------
    >>> simplices = np.array([[0, 1, 2], [0, 2, 3]])
    >>> alone = np.full((1, 3), -1)
    >>> joined_neighbours(simplices, alone, alone).tolist()
    [[-1, 1, -1], [-1, -1, 0]]
    """
    count = len(first)
    flat = np.concatenate([first, np.where(second >= 0, second + count, -1)])
    triangle, corner = np.nonzero(flat < 0)
    # the edge opposite a corner joins the other two
    i, j = _shared_edges(simplices[triangle, (corner + 1) % 3],
                         simplices[triangle, (corner + 2) % 3])
    flat[triangle[i], corner[i]] = triangle[j]
    flat[triangle[j], corner[j]] = triangle[i]
    return flat


def strip_bands(along: np.ndarray, strips: int, circles=None, axis: int = 0):
    """Boundaries (strips + 1,) of the strips along one axis, and the margin at each, metres.

    Without `circles` the boundaries are the quantiles of `along` and every margin is
    MARGIN. With them (centres (C, 2), radii (C,)), each inner boundary is one of
    CUT_CHOICES positions (quantiles within a quarter of a strip of its own), its margin
    the radius of the largest circle crossing it plus MARGIN_SLACK, MARGIN at least; the
    position taken is the one whose larger side holds the fewest points, margins included
    (the strips run side by side: the larger one sets the time), the nearest to the
    quantile among equals. The outer boundaries are infinite.

    Examples
    --------
    >>> along = np.arange(100.0)
    >>> edges, margins = strip_bands(along, 2)
    >>> edges.tolist(), margins.tolist()
    ([-inf, 49.5, inf], [8.0, 8.0, 8.0])
    >>> hall = (np.array([[40.0, 0.0]]), np.array([12.0]))    # a hall from 28 to 52
    >>> [values.tolist() for values in strip_bands(along, 2, hall)]  # cut beside it
    [[-inf, 53.2125, inf], [8.0, 8.0, 8.0]]
    >>> hall = (np.array([[48.0, 0.0]]), np.array([12.0]))    # from 36 to 60: cut across it
    >>> [values.tolist() for values in strip_bands(along, 2, hall)]
    [[-inf, 49.5, inf], [8.0, 13.0, 8.0]]
    """
    edges = np.quantile(along, np.linspace(0.0, 1.0, strips + 1))
    margins = np.full(strips + 1, MARGIN)
    if circles is not None and len(circles[1]):
        centre, radius = np.asarray(circles[0])[:, axis], np.asarray(circles[1])
        ordered = np.sort(along)
        for k in range(1, strips):
            quantiles = k / strips + np.linspace(-0.25, 0.25, CUT_CHOICES) / strips
            choices = np.quantile(along, quantiles)
            crossing = (centre[None] - radius[None] < choices[:, None]) & \
                (centre[None] + radius[None] > choices[:, None])
            largest = np.where(crossing, radius[None], 0.0).max(axis=1)
            margin = np.maximum(MARGIN, np.where(largest > 0, largest + MARGIN_SLACK, 0.0))
            # points of the strip below the cut and of the one above, margins included
            start = np.searchsorted(ordered, edges[k - 1] - margins[k - 1])
            stop = np.searchsorted(ordered, edges[k + 1] + MARGIN, side="right")
            below = np.searchsorted(ordered, choices + margin, side="right") - start
            above = stop - np.searchsorted(ordered, choices - margin)
            load = np.maximum(below, above)
            best = np.flatnonzero(load == load.min())
            pick = best[np.argmin(np.abs(best - CUT_CHOICES // 2))]
            edges[k], margins[k] = choices[pick], margin[pick]
    edges[0], edges[-1] = -np.inf, np.inf
    return edges, margins


def _strip(points, along, axis, band, free_space):
    """The triangles of the band `low` <= along < `high` whose circumcentres it holds and
    that matter (see the module's text); `band` is (low, high, low margin, high margin)."""
    low, high, below, above = band
    while True:
        members = np.flatnonzero((along >= low - below) & (along <= high + above))
        simplices = members[delaunay(points[members])]
        centre, radius = circumcircles(points, simplices)
        mine = (centre[:, axis] >= low) & (centre[:, axis] < high)
        inside_band = (centre[:, axis] - radius >= low - below) & \
            (centre[:, axis] + radius <= high + above)
        doubtful = np.flatnonzero(mine & ~inside_band & np.isfinite(centre).all(axis=1))
        if len(doubtful):
            doubtful = doubtful[shapely.contains_xy(free_space, centre[doubtful, 0],
                                                    centre[doubtful, 1])]
        if len(doubtful) == 0:
            return simplices[mine & inside_band]
        # a side these circles leave (each leaves one at least, by the same comparison as
        # above): twice its margin, and at least as far as they reach (empty circles about
        # the same centres among all points are no larger)
        left, right = centre[doubtful, axis] - radius[doubtful], \
            centre[doubtful, axis] + radius[doubtful]
        if (left < low - below).any():
            below = max(2 * below, float(low - left.min()) + MARGIN_SLACK)
        if (right > high + above).any():
            above = max(2 * above, float(right.max() - high) + MARGIN_SLACK)
