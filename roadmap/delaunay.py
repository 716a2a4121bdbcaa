"""Delaunay triangulation of many boundary samples: one Qhull call, or strips side by side.

Qhull's time grows about linearly with the samples of these floors (measured here on the
mixed suite drawing tiled 1, 4 and 8 times: 11, 11 and 12 us a point) and its memory is about
0.7 KiB a point. Up to 2 x STRIP_POINTS samples (or below `split_points`, when a caller
sets it) one call triangulates them all, and its neighbours come with it. Beyond, they are
triangulated in strips along the longer axis: one per STRIP_POINTS (two at least from
`split_points`), each with a margin of its neighbours' points; the first half of the strips
here and the second half in a forked second process where that is possible
(clearway.side_by_side). The strips are the same either way, so the result is.

A triangle of a strip is a triangle of the whole triangulation when its circumcircle lies
inside the strip's band (the band holds every point there, and the circle holds none of
them); each is kept by the strip holding its circumcentre. A triangle whose circle leaves the
band matters only when its circumcentre lies in the free space (a Voronoi vertex); then the
strip is done again with twice the margin. Neighbours are then found by matching the
triangles' edges.

Where four or more samples lie on one circle to within rounding (regular samples on
parallel faces, less the micrometre jitter), the triangulation is not unique and Qhull's
choice depends on the points it is given: a strip may split such a quadrilateral the other
way than one call over all points would. Both are Delaunay triangulations with the same
circumcentres, to rounding.
"""

from __future__ import annotations

from typing import Callable

import numpy as np
import shapely
from scipy.spatial import Delaunay

from clearway.side_by_side import side_by_side

#: Points per strip where there are more than twice as many.
STRIP_POINTS = 300_000
#: Samples from which the triangulation is made in strips (two at least), side by side in two
#: processes where possible; None: only beyond 2 x STRIP_POINTS, for memory. Off by default:
#: with the fixed first margin, a floor with wide open areas where the strips meet has its
#: strips redone, each with twice the margin. On the angled suite drawing at 20,000 bays
#: (112,000 samples) each strip was triangulated three times (8, 16 and 32 m), 3.4 s of
#: Qhull CPU against 1.3 s for one call. Where no strip is redone (current, 95,000 samples)
#: the two strips take 0.84 and 0.71 s CPU side by side against 1.22 s for one call. Margins
#: sized from the floor's clearance where the strips meet would let it earn its place.
SPLIT_POINTS = None
#: First margin of each strip, metres.
MARGIN = 8.0
#: scipy's options for 2-D Delaunay ("Qbb Qc Qz Q12", with "Qt") plus "Q5": Qhull then
#: skips its last pass, which measures how far each point lies above the facets (the outer
#: planes; for its precision report and its list of near-coplanar points, none here after
#: the jitter). The triangles and neighbours are the same, bit for bit, on the suite and
#: sample drawings; Qhull takes about 15 % less time (433,000 samples: 6.3 -> 5.3 s CPU).
QHULL_OPTIONS = "Qbb Qc Qz Q12 Qt Q5"


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


def neighbours_of(simplices: np.ndarray) -> np.ndarray:
    """Neighbour across the edge opposite each corner (T, 3), -1 where none."""
    count = len(simplices)
    first = np.concatenate([simplices[:, 1], simplices[:, 2], simplices[:, 0]])
    second = np.concatenate([simplices[:, 2], simplices[:, 0], simplices[:, 1]])
    low, high = np.minimum(first, second), np.maximum(first, second)
    owner = np.tile(np.arange(count), 3)
    corner = np.repeat(np.arange(3), count)
    # one int64 key per edge sorts faster than lexsort on two columns; stable, so the
    # order is lexsort's
    key = low.astype(np.int64) * (int(high.max(initial=0)) + 1) + high
    order = np.argsort(key, kind="stable")
    ordered = key[order]
    same = ordered[1:] == ordered[:-1]
    a, b = order[:-1][same], order[1:][same]
    result = np.full((count, 3), -1, dtype=np.int64)
    result[owner[a], corner[a]] = owner[b]
    result[owner[b], corner[b]] = owner[a]
    return result


def triangulate(points: np.ndarray, free_space=None, *, strip_points: int = STRIP_POINTS,
                neighbours: bool = True, split_points: int | None = SPLIT_POINTS,
                measure: Callable[[np.ndarray], tuple] | None = None):
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

    Returns
    -------
    simplices : (T, 3) int ndarray, indices into `points`
    neighbours : (T, 3) int ndarray, as scipy's ``Delaunay.neighbors`` (-1: none kept);
        None when `neighbours` is false.
    measured : tuple of ndarray, only with `measure`: its arrays, joined.
    """
    count = len(points)
    strips = count // strip_points
    if split_points is not None and count >= split_points:
        strips = max(strips, 2)
    if strips < 2 or free_space is None:
        triangulation = Delaunay(points, qhull_options=QHULL_OPTIONS)
        result = triangulation.simplices, triangulation.neighbors
        return result if measure is None else (*result, measure(triangulation.simplices))
    axis = int(np.argmax(np.ptp(points, axis=0)))
    along = points[:, axis]
    edges = np.quantile(along, np.linspace(0.0, 1.0, strips + 1))
    edges[0], edges[-1] = -np.inf, np.inf
    bands = list(zip(edges[:-1], edges[1:]))
    half = len(bands) // 2

    def triangles_of(some):
        made = [_strip(points, along, axis, low, high, free_space) for low, high in some]
        return [(simplices, measure(simplices) if measure else ()) for simplices in made]

    done = side_by_side({"first": lambda: triangles_of(bands[:half]),
                         "second": lambda: triangles_of(bands[half:])}, aside=["second"])
    pieces = done["first"] + done["second"]
    simplices = np.concatenate([simplices for simplices, _ in pieces])
    result = simplices, neighbours_of(simplices) if neighbours else None
    if measure is None:
        return result
    return (*result, tuple(np.concatenate(arrays) for arrays in zip(*(m for _, m in pieces))))


def _strip(points, along, axis, low, high, free_space):
    """The triangles of the band `low` <= along < `high` whose circumcentres it holds and
    that matter (see the module's text)."""
    margin = MARGIN
    while True:
        members = np.flatnonzero((along >= low - margin) & (along <= high + margin))
        simplices = members[Delaunay(points[members], qhull_options=QHULL_OPTIONS).simplices]
        centre, radius = circumcircles(points, simplices)
        mine = (centre[:, axis] >= low) & (centre[:, axis] < high)
        inside_band = (centre[:, axis] - radius >= low - margin) & \
            (centre[:, axis] + radius <= high + margin)
        doubtful = np.flatnonzero(mine & ~inside_band & np.isfinite(centre).all(axis=1))
        if len(doubtful) == 0 or not shapely.contains_xy(
                free_space, centre[doubtful, 0], centre[doubtful, 1]).any():
            return simplices[mine & inside_band]
        margin *= 2.0
