"""Exact clearance queries: the distance from points to the free space's boundary segments.

A k-d tree over samples of the boundary finds, for each query point, the few segments that
can be nearest; their exact point-to-segment distances are compared in numpy. The answer is
certified, not estimated: every segment lies within ``spacing / 2`` (along itself) of one
of its samples, so a segment at distance ``d`` from a point has a sample within
``sqrt(d**2 + (spacing / 2)**2)`` of it. When the k-th nearest sample is farther than that
bound for the best distance found, no unexamined segment can be nearer; the few points that
fail the test are answered in GEOS's arithmetic instead (its distance to the nearest
segments among more samples, or the STRtree's nearest query). Results agree with
``shapely.distance(point, boundary)`` to rounding.
"""

from __future__ import annotations

from concurrent.futures import ThreadPoolExecutor
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import shapely
from scipy.spatial import cKDTree

from clearway.side_by_side import cores

#: Boundary sampling interval of the index, metres.
SPACING = 0.25
#: Nearest samples examined per query point.
CANDIDATES = 8
#: Nearest samples examined for the points CANDIDATES samples leave in doubt.
WIDER = 16
#: Segments this near the nearest (numpy's arithmetic) are measured by GEOS, metres.
NEAR_TIE = 1e-9
#: Points per block of a query, bounding the temporary arrays to a few tens of MB.
BLOCK = 200_000
#: Queries of this many points or more are answered in blocks of THREAD_BLOCK points on two
#: threads (numpy and the k-d tree release the GIL); the blocks also bound the temporary
#: arrays (peak memory at 20,000 bays fell by 80 to 120 MiB).
THREADED_POINTS, THREAD_BLOCK = 50_000, 16_384
#: Single-nearest-sample queries (`at_least`, `under`) of more points than this use every
#: core (scipy's k-d tree ``workers=-1``).
PARALLEL_NEAREST = 20_000


@dataclass(frozen=True)
class ClearanceField:
    """Exact clearance queries against the boundary of the free space.

    Build it with :func:`clearance_field`; call :meth:`at` with an (N, 2) array of points.
    The distances agree with ``shapely.distance(point, free_space.boundary)`` to rounding.

    Attributes
    ----------
    segments : (S, 2, 2) float ndarray, metres
    samples : (M, 2) float ndarray, boundary samples at most `spacing` apart on each segment
    owner : (M,) int ndarray, the segment of each sample
    spacing : float, metres
    """

    segments: np.ndarray
    samples: np.ndarray
    owner: np.ndarray
    spacing: float

    @cached_property
    def _parts(self):
        """Per segment: start x, start y, direction x, direction y, 1 / length^2."""
        start, direction = self.segments[:, 0], self.segments[:, 1] - self.segments[:, 0]
        length2 = (direction * direction).sum(axis=1)
        inverse = np.divide(1.0, length2, out=np.zeros_like(length2), where=length2 > 0)
        return start[:, 0].copy(), start[:, 1].copy(), direction[:, 0].copy(), \
            direction[:, 1].copy(), inverse

    def _distance(self, xy, segment):
        """Distance from points (N, 2) to segments `segment` (N, K), shape (N, K)."""
        sx, sy, dx, dy, inverse = (part[segment] for part in self._parts)
        ox, oy = xy[:, :1] - sx, xy[:, 1:] - sy
        t = np.clip((ox * dx + oy * dy) * inverse, 0.0, 1.0)
        ox -= t * dx
        oy -= t * dy
        return np.sqrt(ox * ox + oy * oy)

    @cached_property
    def index(self) -> cKDTree:
        return cKDTree(self.samples)

    @cached_property
    def lines(self) -> np.ndarray:
        """The segments as shapely LineStrings, (S,)."""
        return shapely.linestrings(self.segments)

    @cached_property
    def tree(self) -> shapely.STRtree:
        return shapely.STRtree(self.lines)

    def _nearest(self, xy) -> np.ndarray:
        """GEOS's distance from points (N, 2) to the nearest segment, as the STRtree's
        nearest query gives it (the same GEOS distance of the same geometries), metres.

        The k-d tree's WIDER nearest samples certify the nearest segments for most points
        (as in `at`); GEOS measures only those within NEAR_TIE of the nearest in numpy's
        arithmetic (any other is farther in GEOS's too); the STRtree answers the rest.
        """
        k = min(WIDER, len(self.samples))
        reach, nearest = self.index.query(xy, k=k)
        reach, nearest = reach.reshape(len(xy), k), nearest.reshape(len(xy), k)
        segment = self.owner[nearest]
        distance = self._distance(xy, segment)
        best = distance.min(axis=1)
        sure = reach[:, -1] > np.sqrt(best * best + (self.spacing / 2) ** 2) * (1 + 1e-9) + 1e-12
        result = np.full(len(xy), np.inf)
        rows, columns = np.nonzero(sure[:, None] & (distance <= best[:, None] + NEAR_TIE))
        np.minimum.at(result, rows, shapely.distance(shapely.points(xy[rows]),
                                                     self.lines[segment[rows, columns]]))
        rest = np.flatnonzero(~sure)
        if len(rest):
            _, result[rest] = self.tree.query_nearest(shapely.points(xy[rest]),
                                                      return_distance=True, all_matches=False)
        return result

    def distance_to(self, geometry) -> np.ndarray:
        """GEOS's distance from each geometry (N,) to the nearest segment, metres, shape
        (N,): the STRtree's nearest query's answer (inf where there is no segment).

        The same floats, found with few GEOS distances. Each geometry lies within
        `reach` of the mean `centre` of its vertices, and GEOS's distance to the segment
        of the centre's nearest sample, `upper`, is at least its smallest; a segment
        nearer than that lies within upper + reach of the centre, so only those whose
        envelopes meet that box about it are taken. A segment's distance is at least the
        geometry's extent beyond the segment's point nearest the centre, along the line
        from there to the centre (projections onto a line are no farther apart than the
        sets), so GEOS measures only those that bound leaves within reach of `upper`.
        Where two of them lie within NEAR_TIE of the nearest with different values, the
        STRtree answers that geometry (its envelope pruning may settle such a near tie
        either way).

        Examples
        --------
        >>> walls = np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float)
        >>> clearance_field(walls).distance_to(shapely.box([2, 4], 0.5, [3, 5], 1.2)).tolist()
        [0.5, 0.5]
        """
        geometry = np.asarray(geometry, dtype=object).reshape(-1)
        count_of = len(geometry)
        result = np.full(count_of, np.inf)
        if count_of == 0 or len(self.segments) == 0:
            return result
        xy, owner = shapely.get_coordinates(geometry, return_index=True)
        count = np.bincount(owner, minlength=count_of)
        centre = np.zeros((count_of, 2))
        np.add.at(centre, owner, xy)
        centre /= count[:, None]
        reach = np.zeros(count_of)
        np.maximum.at(reach, owner, np.hypot(*(xy - centre[owner]).T))
        _, nearest = self.index.query(centre, k=1)
        upper = shapely.distance(geometry, self.lines[self.owner[nearest]])
        room = upper + reach + 1e-6
        which, segment = self.tree.query(shapely.box(*(centre - room[:, None]).T,
                                                     *(centre + room[:, None]).T))
        # the separating direction: from the segment's point nearest the centre to it
        sx, sy, dx, dy, inverse = (part[segment] for part in self._parts)
        t = np.clip(((centre[which, 0] - sx) * dx + (centre[which, 1] - sy) * dy) * inverse,
                    0.0, 1.0)
        qx, qy = sx + t * dx, sy + t * dy
        ux, uy = centre[which, 0] - qx, centre[which, 1] - qy
        norm = np.hypot(ux, uy)
        scale = np.where(norm > 0, norm, 1.0)
        ux, uy = ux / scale, uy / scale
        vertex = np.minimum(np.arange(count.max())[None], count[:, None] - 1) + \
            (np.cumsum(count) - count)[:, None]
        extent = (xy[vertex, 0][which] * ux[:, None] +
                  xy[vertex, 1][which] * uy[:, None]).min(axis=1) - (qx * ux + qy * uy)
        # far above the rounding of either side, in the local frame's coordinates
        extent -= 1e-9 * (1 + np.abs(qx) + np.abs(qy))
        measure = (norm == 0) | (extent <= upper[which] + 1e-8)
        which, segment = which[measure], segment[measure]
        distance = shapely.distance(geometry[which], self.lines[segment])
        np.minimum.at(result, which, distance)
        tied = (distance <= result[which] + NEAR_TIE) & (distance != result[which])
        doubt = np.unique(which[tied])
        if len(doubt):
            found, distance = self.tree.query_nearest(geometry[doubt], return_distance=True,
                                                      all_matches=False)
            result[doubt[found[0]]] = distance
        return result

    def prepared(self) -> "ClearanceField":
        """Build the indexes the queries use now (GEOS builds an STRtree at its first query,
        not with it) and return the field."""
        if len(self.samples):
            self.index, self._parts, self.tree.query_nearest(shapely.Point(self.samples[0]))
        return self

    def at(self, xy) -> np.ndarray:
        """Return the clearance at each point, metres, shape (N,)."""
        xy = np.asarray(xy, dtype=float).reshape(-1, 2)
        if len(xy) == 0 or len(self.segments) == 0:
            return np.full(len(xy), np.inf)
        if len(xy) >= THREADED_POINTS and cores() > 1:
            blocks = [xy[i:i + THREAD_BLOCK] for i in range(0, len(xy), THREAD_BLOCK)]
            self.prepared()    # the indexes are built here, not raced for by the threads
            # threads joined before returning: a thread left running would keep the build
            # from forking (clearway.side_by_side)
            with ThreadPoolExecutor(2) as pool:
                return np.concatenate(list(pool.map(self._at, blocks)))
        if len(xy) > BLOCK:
            return np.concatenate([self._at(xy[i:i + BLOCK]) for i in range(0, len(xy), BLOCK)])
        return self._at(xy)

    def _at(self, xy) -> np.ndarray:
        """`at` for one block of points, in this thread."""
        k = min(CANDIDATES, len(self.samples))
        reach, nearest = self.index.query(xy, k=k)
        reach, nearest = reach.reshape(len(xy), k), nearest.reshape(len(xy), k)
        segment = self.owner[nearest]
        best = self._distance(xy, segment).min(axis=1)
        if k == len(self.samples):
            return best
        bound = np.sqrt(best * best + (self.spacing / 2) ** 2)
        doubtful = np.flatnonzero(reach[:, -1] <= bound * (1 + 1e-9) + 1e-12)
        if len(doubtful):
            best[doubtful] = self._nearest(xy[doubtful])
        return best

    def at_least(self, xy, distance) -> np.ndarray:
        """Whether the clearance at each point (N, 2) is at least `distance` (scalar or (N,)).

        The same answers as ``at(xy) >= distance``, but a point whose nearest boundary
        sample lies farther than ``distance + spacing / 2`` is settled by that one k-d tree
        query (no boundary point can be nearer than the sample less half a spacing); only
        the others take the full query. In open floor, where the full query often has to
        fall back on the STRtree, that is most of the points.

        Examples
        --------
        >>> walls = np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float)
        >>> clearance_field(walls).at_least([[5, 1], [5, 0.5], [5, 40]], 0.75).tolist()
        [True, False, True]
        """
        xy = np.asarray(xy, dtype=float).reshape(-1, 2)
        distance = np.broadcast_to(np.asarray(distance, dtype=float), (len(xy),))
        if len(xy) == 0 or len(self.segments) == 0:
            return np.ones(len(xy), dtype=bool)
        nearest, _ = self.index.query(xy, k=1, workers=_workers(xy))
        # 1e-9 m: far above the rounding of either distance, so the bound never decides a
        # point that the exact distance would decide the other way
        result = nearest - self.spacing / 2 - 1e-9 >= distance
        rest = np.flatnonzero(~result)
        if len(rest):
            result[rest] = self.at(xy[rest]) >= distance[rest]
        return result

    def under(self, xy, limit: float) -> np.ndarray:
        """The clearance at each point (N, 2) where it may be under `limit` metres, inf
        where it surely is not.

        As in `at_least`, a point whose nearest boundary sample lies farther than
        ``limit + spacing / 2`` has no boundary point within `limit`; a k-d tree query
        bounded by that distance settles such points quickly, and only the others take the
        exact query. Most of a warehouse's lane vertices lie far from every wall: on the
        mixed suite floor at 20,000 bays, 1,476 of 110,019 vertices of the lanes are within
        0.67 m, and the query takes 0.04 s instead of 0.17 s.

        Examples
        --------
        >>> walls = np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float)
        >>> clearance_field(walls).under([[5, 1], [5, 0.5]], 0.75).tolist()
        [inf, 0.5]
        """
        xy = np.asarray(xy, dtype=float).reshape(-1, 2)
        result = np.full(len(xy), np.inf)
        if len(xy) == 0 or len(self.segments) == 0:
            return result
        # 1e-9 m: far above the rounding of the k-d tree's distance (see at_least)
        reach = limit + self.spacing / 2 + 1e-9
        nearest, _ = self.index.query(xy, k=1, distance_upper_bound=reach,
                                      workers=_workers(xy))
        near = np.flatnonzero(np.isfinite(nearest))
        result[near] = self.at(xy[near])
        return result

    def along(self, lines, step: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """Sample `lines` every `step` metres plus every vertex; measure each sample.

        Returns
        -------
        xy : (M, 2) samples, owner : (M,) index of the line, clearance : (M,) metres.
        """
        xy, owner = sample_lines(lines, step)
        return xy, owner, self.at(xy)

    def along_adaptive(self, lines, step: float, *, fine: float, tolerance: float,
                       below: float = -np.inf):
        """Sample `lines` every `step` metres, then every `fine` metres where it matters.

        Along a straight piece the distance to each boundary segment is convex with
        curvature at most 1 / distance, so between two samples L metres apart whose lower
        clearance is d the clearance dips at most L**2 / (8 * (d - L / 2)) below d. Only
        intervals where that dip could bring a value more than `tolerance` below the
        line's lowest sample, or below `below` metres, are sampled again every `fine` m.

        Returns
        -------
        xy : (M, 2), owner : (M,) line index, clearance : (M,) metres, in order along
        each line.
        """
        xy, owner, value = self.along(lines, step)
        if len(xy) < 2:
            return xy, owner, value
        lowest = np.full(int(owner.max()) + 1, np.inf)
        np.minimum.at(lowest, owner, value)
        length = np.hypot(*np.diff(xy, axis=0).T)
        low = np.minimum(value[:-1], value[1:])
        dip = length ** 2 / (8 * np.maximum(low - length / 2, 1e-3))
        refine = (owner[1:] == owner[:-1]) & (dip > tolerance) & \
            ((low - dip < lowest[owner[:-1]] - tolerance) | (low - dip < below))
        interval = np.flatnonzero(refine)
        if len(interval) == 0:
            return xy, owner, value
        count = np.maximum(np.ceil(length[interval] / fine).astype(np.int64) - 1, 0)
        which = np.repeat(np.arange(len(interval)), count)
        step_in = np.arange(len(which)) - np.repeat(np.cumsum(count) - count, count) + 1
        t = (step_in / np.repeat(count + 1, count))[:, None]
        start, end = xy[interval[which]], xy[interval[which] + 1]
        extra = start * (1 - t) + end * t
        at = interval[which] + 1
        return (np.insert(xy, at, extra, axis=0), np.insert(owner, at, owner[at - 1]),
                np.insert(value, at, self.at(extra)))


def _workers(xy) -> int:
    """scipy's ``workers`` for a single-nearest query of the points `xy`."""
    return -1 if len(xy) > PARALLEL_NEAREST else 1


def sample_lines(lines, step: float) -> tuple[np.ndarray, np.ndarray]:
    """Points every `step` metres along `lines` plus every vertex: xy (M, 2), owner (M,)."""
    dense = np.array(lines, dtype=object).reshape(-1)
    # GEOS refuses to segmentize a zero-length line (a station on a lane's end node)
    long = shapely.length(dense) > 0
    dense[long] = shapely.segmentize(dense[long], step)
    return shapely.get_coordinates(dense, return_index=True)


def clearance_field(segments: np.ndarray, *, spacing: float = SPACING) -> ClearanceField:
    """Index boundary `segments` (S, 2, 2), metres, for exact clearance queries.

    Examples
    --------
    >>> walls = np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float)
    >>> clearance_field(walls).at([[5, 1], [5, 0.5], [12, 2]]).tolist()
    [1.0, 0.5, 2.0]
    """
    segments = np.asarray(segments, dtype=float).reshape(-1, 2, 2)
    start, end = segments[:, 0], segments[:, 1]
    pieces = np.maximum(1, np.ceil(np.hypot(*(end - start).T) / spacing)).astype(np.int64)
    owner = np.repeat(np.arange(len(segments)), pieces + 1)
    first = np.cumsum(pieces + 1) - (pieces + 1)
    t = ((np.arange(len(owner)) - first[owner]) / pieces[owner])[:, None]
    samples = start[owner] * (1 - t) + end[owner] * t
    return ClearanceField(segments, samples.reshape(-1, 2), owner, float(spacing))
