"""The generalized Voronoi diagram of the obstacles, from a Voronoi diagram of boundary samples.

The generalized Voronoi diagram (GVD) of the obstacles inside the free space is the set of
points with two or more nearest obstacle points: the medial axis of the free space. Restricted
to clearance >= c it is the GVD of the obstacles grown by c, the roadmap of maximum clearance
[CB00]_, [Lat91]_, [LaV06]_.

Method: sample the free space's boundary every `step` metres plus every vertex, jitter the
samples by a micrometre (into general position), triangulate them (Delaunay), and
take the circumcentres (the Voronoi vertices) that fall inside the free space, joined by the
Voronoi ridges between samples that are not neighbours along the boundary. Each Voronoi
vertex is then moved onto the exact bisector of the boundary segments its three samples lie
on (a few Gauss-Newton steps on the distance differences), which removes the sampling error
of about ``(step / 2)**2 / (2 * width)`` and keeps lanes through necks only millimetres wider
than 2c. Everything runs on numpy arrays; no Python loop touches a ridge.

References
----------
.. [CB00] H. Choset and J. Burdick, "Sensor-based exploration: the hierarchical generalized
   Voronoi graph", International Journal of Robotics Research 19(2), 2000.
.. [Lat91] J.-C. Latombe, Robot Motion Planning, Kluwer, 1991, ch. 4 (retraction).
.. [LaV06] S. M. LaValle, Planning Algorithms, Cambridge University Press, 2006, sec. 6.2.3.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from clearway.roadmap.delaunay import circumcircles, strip_count, triangulate
from clearway.roadmap.inflate import boundary_segments
from clearway.roadmap.inside import contains_points

#: Jitter of the samples before triangulation, metres (deterministic, seeded).
JITTER = 1e-6
#: A boundary vertex turning by more than asin(BEND) (2 degrees) is a corner: lanes bend
#: round it or meet its bisector there; the chord across a smaller bend stays within mm.
BEND = 0.035
#: Dense samples reach this fraction of the local width from every corner: bisectors from
#: a corner meet the lane about half a width along the faces.
CORNER_REACH = 0.75
#: Vertices are merged when they agree to this grid after correction, metres.
MERGE_GRID = 1e-5
#: Vertices corrected together; the arithmetic is per vertex, so any chunk gives the same bits.
CHUNK = 32_768


@dataclass(frozen=True)
class MedialAxis:
    """A sampled medial axis: vertices, their clearance and the ridges joining them.

    Attributes
    ----------
    vertices : (V, 2) float ndarray, metres (local frame)
    clearance : (V,) float ndarray, metres; distance to the boundary segments of the
        vertex's generating samples after correction (exact up to rounding on the axis).
    edges : (E, 2) int ndarray; vertex index pairs, u < v, unique, no self-loops.
    """

    vertices: np.ndarray
    clearance: np.ndarray
    edges: np.ndarray

    def restrict(self, keep: np.ndarray) -> "MedialAxis":
        """Return the sub-axis on vertices where `keep` (V,) is true, re-indexed."""
        new_index = np.cumsum(keep) - 1
        both = keep[self.edges].all(axis=1)
        return MedialAxis(self.vertices[keep], self.clearance[keep],
                          new_index[self.edges[both]].reshape(-1, 2))


def sample_boundary(segments: np.ndarray, following: np.ndarray, step: float):
    """Sample every segment every `step` metres, starting at each segment's first vertex.

    Parameters
    ----------
    segments : (S, 2, 2) float ndarray, metres
    following : (S,) int ndarray, the next segment along the ring
    step : float, metres, > 0

    Returns
    -------
    xy : (N, 2) float ndarray
    owner : (N,) int ndarray, the segment of each sample
    successor : (N,) int ndarray, the next sample along the ring
    """
    start, end = segments[:, 0], segments[:, 1]
    pieces = np.maximum(1, np.ceil(np.hypot(*(end - start).T) / step)).astype(np.int64)
    return _cut(segments, following, pieces)


def _cut(segments, following, pieces):
    """Cut segment i into pieces[i] equal parts; return samples as sample_boundary does."""
    start, end = segments[:, 0], segments[:, 1]
    owner = np.repeat(np.arange(len(segments)), pieces)
    first = np.cumsum(pieces) - pieces
    within = np.arange(len(owner)) - first[owner]
    t = (within / pieces[owner])[:, None]
    xy = start[owner] * (1 - t) + end[owner] * t
    is_last = within == pieces[owner] - 1
    successor = np.where(is_last, first[following[owner]], np.arange(len(owner)) + 1)
    return xy, owner, successor


def _corners(segments, previous) -> np.ndarray:
    """Whether each segment's first vertex turns by more than asin(BEND), shape (S,)."""
    direction = segments[:, 1] - segments[:, 0]
    direction = direction / np.hypot(*direction.T)[:, None]
    before = direction[previous]
    turn = np.abs(before[:, 0] * direction[:, 1] - before[:, 1] * direction[:, 0])
    return (turn > BEND) | ((before * direction).sum(axis=1) < 0)


def adaptive_samples(segments, previous, following, step: float, *, coarse: float, rng,
                     probe: float | None = None, free_space=None):
    """Sample the boundary every `step` metres where the axis needs it, else up to `coarse`.

    A first Delaunay triangulation of samples `probe` metres apart (default 2 * coarse)
    measures the local width: an edge of length l between samples of two segments that do
    not meet spans a passage about l wide (or a wall l thick, whose end needs the same). Near such a sample the step becomes l / 1.5
    (circumcentres stay inside the passage); where the edge's other end is a corner, the
    lane bends round it on a parabola, and sqrt(0.04 * l) keeps the chord between Voronoi
    vertices within 5 mm of it (sagitta step**2 / (8 l)). Within 0.75 l of a corner of its
    own segment (where bisectors from the corner meet the lane in a junction) the step is
    `step`. Long straight faces facing each other need no more than `coarse`: their
    bisector is straight.

    `free_space` (prepared), when given, lets the first triangulation run in strips
    (:func:`roadmap.delaunay.triangulate`).

    Returns
    -------
    xy, owner, successor : as :func:`sample_boundary`
    probe : (points (P, 2), simplices (T, 3)), the first triangulation; None without one
    """
    probe = 2 * coarse if probe is None else probe
    if coarse <= step or len(segments) < 3:
        return (*sample_boundary(segments, following, step), None)
    xy, owner, successor = sample_boundary(segments, following, probe)
    # one call up to 600,000 probe samples (at 2 m apart, few floors have as many): the
    # widths come from every edge, also of triangles outside the free space
    jittered = xy + rng.uniform(-JITTER, JITTER, xy.shape)
    simplices, _ = triangulate(jittered, free_space, neighbours=False, split_points=None)
    pairs = np.concatenate([simplices[:, [0, 1]], simplices[:, [1, 2]], simplices[:, [2, 0]]])
    a, b = pairs[:, 0], pairs[:, 1]
    apart = (owner[a] != owner[b]) & (following[owner[a]] != owner[b]) & \
        (previous[owner[a]] != owner[b])
    a, b = a[apart], b[apart]
    length = np.hypot(*(xy[a] - xy[b]).T)
    corner = _corners(segments, previous)
    vertex = np.r_[True, owner[1:] != owner[:-1]] & corner[owner]
    bend = np.minimum(length / 1.5, np.sqrt(0.04 * length))
    width = np.full(len(xy), np.inf)
    np.minimum.at(width, a, length)
    np.minimum.at(width, b, length)
    wanted = np.minimum(width / 1.5, coarse)
    np.minimum.at(wanted, a, np.where(vertex[b] & ~vertex[a], bend, coarse))
    np.minimum.at(wanted, b, np.where(vertex[a] & ~vertex[b], bend, coarse))
    before = np.empty_like(successor)
    before[successor] = np.arange(len(successor))
    wanted = np.minimum(np.minimum(wanted, wanted[successor]), wanted[before])
    wanted = np.clip(np.minimum(wanted, wanted[successor]), step, coarse)
    # the interval from sample k to the next reaches within 0.75 * width of a corner
    reach = CORNER_REACH * np.minimum(width, width[successor])
    from_start = np.hypot(*(xy - segments[owner, 0]).T)
    next_to_end = np.where(owner[successor] == owner,
                           np.hypot(*(segments[owner, 1] - xy[successor]).T), 0.0)
    wanted[(corner[owner] & (from_start <= reach)) |
           (corner[following[owner]] & (next_to_end <= reach))] = step
    pieces = np.maximum(1, np.ceil(np.hypot(*(xy[successor] - xy).T) / wanted)).astype(np.int64)
    fine, fine_owner, fine_successor = _cut(np.stack([xy, xy[successor]], axis=1), successor,
                                            pieces)
    return fine, owner[fine_owner], fine_successor, (jittered, simplices)


def free_circles(points, simplices, free_space):
    """Centres (C, 2) and radii (C,) of the circumcircles of `simplices` centred in
    `free_space` (prepared): the triangulation's empty circles that hold Voronoi vertices."""
    centres, radii = circumcircles(points, simplices)
    finite = np.flatnonzero(np.isfinite(centres).all(axis=1))
    finite = finite[contains_points(free_space, centres[finite, 0], centres[finite, 1])]
    return centres[finite], radii[finite]


def _features(segments, previous, following, owner):
    """The segment `owner` (K,) and its two ring neighbours, as the columns the distance needs.

    Returns three tuples, one per segment: start x, start y, direction x, direction y and
    squared length, each (K,) float ndarray, metres (m² for the last).
    """
    features = []
    for index in (owner, previous[owner], following[owner]):
        start = segments[index, 0]
        direction = segments[index, 1] - start
        dx, dy = direction[:, 0].copy(), direction[:, 1].copy()
        features.append((start[:, 0].copy(), start[:, 1].copy(), dx, dy, dx * dx + dy * dy))
    return features


def _nearest_on(px, py, feature):
    """Nearest point (x, y) on the segments of `feature` (see :func:`_features`) to the
    points (px, py), each (K,), and its distance (K,)."""
    sx, sy, dx, dy, length2 = feature
    with np.errstate(divide="ignore", invalid="ignore"):
        t = np.clip(((px - sx) * dx + (py - sy) * dy) / length2, 0.0, 1.0)
    t = np.where(length2 > 0, t, 0.0)
    nx, ny = sx + t * dx, sy + t * dy
    return nx, ny, np.hypot(px - nx, py - ny)


def _feature_distance(px, py, features):
    """Nearest point (x, y) and distance from the points (px, py) to three `features`."""
    bx, by, best = _nearest_on(px, py, features[0])
    for feature in features[1:]:
        nx, ny, dist = _nearest_on(px, py, feature)
        closer = dist < best
        best = np.where(closer, dist, best)
        bx, by = np.where(closer, nx, bx), np.where(closer, ny, by)
    return bx, by, best


def _pseudo_inverse(matrices: np.ndarray) -> np.ndarray:
    """Closed-form pseudo-inverse of (K, 2, 2) matrices (inverse, or J^T / |J|^2 at rank 1)."""
    a, b = matrices[:, 0, 0], matrices[:, 0, 1]
    c, d = matrices[:, 1, 0], matrices[:, 1, 1]
    det = a * d - b * c
    norm2 = a * a + b * b + c * c + d * d
    regular = np.abs(det) > 1e-3 * norm2
    safe_det = np.where(regular, det, 1.0)
    inverse = np.stack([np.stack([d, -b], axis=1), np.stack([-c, a], axis=1)], axis=1)
    inverse /= safe_det[:, None, None]
    rank_one = np.swapaxes(matrices, 1, 2) / np.maximum(norm2, 1e-300)[:, None, None]
    rank_one[norm2 < 1e-18] = 0.0
    return np.where(regular[:, None, None], inverse, rank_one)


def correct_vertices(centres, generators, segments, previous, following, *,
                     iterations: int = 2, max_move: float = 0.2):
    """Move Voronoi vertices onto the exact bisector of their generators' boundary segments.

    Gauss-Newton on ``[d0 - d1, d0 - d2] = 0`` with the minimum-norm step (the pseudo-inverse
    handles generators on the same side, whose distance differences vanish identically).

    Parameters
    ----------
    centres : (K, 2) float ndarray, metres
    generators : (K, 3) int ndarray, each vertex's segment per generating sample
    segments, previous, following : from :func:`roadmap.inflate.boundary_segments`
    max_move : float, metres; a vertex that would move farther keeps its position.

    Returns
    -------
    corrected : (K, 2) float ndarray
    clearance : (K,) float ndarray, the smallest of the three feature distances, metres
    """
    corrected, clearance = np.empty_like(centres), np.empty(len(centres))
    for low in range(0, len(centres), CHUNK):   # each vertex on its own: chunks stay in cache
        part = slice(low, low + CHUNK)
        corrected[part], clearance[part] = _correct(
            centres[part], [_features(segments, previous, following, generators[part, k])
                            for k in range(3)], iterations, max_move)
    return corrected, clearance


def _correct(centres, features, iterations, max_move):
    """correct_vertices on one chunk; `features` per generator from :func:`_features`."""
    current = centres.copy()
    for _ in range(iterations):
        px, py = current[:, 0].copy(), current[:, 1].copy()
        near = [_feature_distance(px, py, feature) for feature in features]
        dist = [d for _, _, d in near]
        units = []
        for qx, qy, d in near:
            scale = np.maximum(d, 1e-12)
            units.append(np.stack([(px - qx) / scale, (py - qy) / scale], axis=1))
        jacobian = np.stack([units[0] - units[1], units[0] - units[2]], axis=1)
        residual = np.stack([dist[0] - dist[1], dist[0] - dist[2]], axis=1)
        update = np.einsum("kij,kj->ki", _pseudo_inverse(jacobian), residual)
        current = current - np.nan_to_num(update)
    moved = np.hypot(*(current - centres).T)
    current = np.where((moved <= max_move)[:, None], current, centres)
    px, py = current[:, 0].copy(), current[:, 1].copy()
    dist = [_feature_distance(px, py, feature)[2] for feature in features]
    return current, np.minimum(np.minimum(dist[0], dist[1]), dist[2])


def unique_rows(pairs: np.ndarray):
    """The first index of each distinct row of `pairs` (N, 2) int, rows in sorted order,
    and each row's place among them: ``np.unique(pairs, axis=0, return_index=True,
    return_inverse=True)[1:]``, through one int64 key a row (one 1-D sort, several times
    faster than sorting rows; the same stable order).

    Examples
    --------
    >>> first, inverse = unique_rows(np.array([[2, -1], [0, 5], [2, -1], [0, 4]]))
    >>> first.tolist(), inverse.tolist()
    ([3, 1, 0], [2, 1, 2, 0])
    >>> unique_rows(np.array([[0, 70000], [70000, 0]], dtype=np.int32))[0].tolist()
    [0, 1]
    """
    pairs = np.asarray(pairs)
    if len(pairs):
        low, high = pairs.min(axis=0).tolist(), pairs.max(axis=0).tolist()
        span = high[1] - low[1] + 1
        if (high[0] - low[0] + 1) * span < 2 ** 63:
            # in int64 whatever the rows' type: an int32 product would wrap round
            key = (pairs[:, 0].astype(np.int64) - low[0]) * span + \
                (pairs[:, 1].astype(np.int64) - low[1])
            _, first, inverse = np.unique(key, return_index=True, return_inverse=True)
            return first, inverse.ravel()
    _, first, inverse = np.unique(pairs, axis=0, return_index=True, return_inverse=True)
    return first, inverse.ravel()


def medial_axis(free_space, *, step: float = 0.25, coarse: float | None = None,
                seed: int = 0) -> MedialAxis:
    """Return the sampled medial axis of `free_space` (every clearance, not yet restricted).

    Parameters
    ----------
    free_space : Polygon or MultiPolygon, metres, ideally near the origin
    step : float
        Boundary sampling interval where the axis needs it, metres, > 0; 0.25 m keeps
        lanes within 1 cm.
    coarse : float, optional
        Largest sampling interval, along faces whose bisector is straight (see
        :func:`adaptive_samples`), metres; default 4 * step; `step` samples uniformly.
    seed : int
        Seed of the deterministic jitter.

    Returns
    -------
    MedialAxis

    Examples
    --------
    >>> axis = medial_axis(shapely.box(0, 0, 10, 2))
    >>> lane = axis.vertices[axis.clearance > 0.99]
    >>> bool(abs(lane[:, 1] - 1.0).max() < 1e-6)
    True
    """
    if not step > 0:
        raise ValueError(f"step must be > 0 m, got {step}")
    segments, previous, following = boundary_segments(free_space)
    empty = MedialAxis(np.zeros((0, 2)), np.zeros(0), np.zeros((0, 2), dtype=np.int64))
    if len(segments) < 3:
        return empty
    rng = np.random.default_rng(seed)
    coarse = 4 * step if coarse is None else max(float(coarse), step)
    shapely.prepare(free_space)
    xy, owner, successor, probe = adaptive_samples(segments, previous, following, step,
                                                   coarse=coarse, rng=rng,
                                                   free_space=free_space)
    # where the samples are triangulated in strips, the first triangulation's empty circles
    # place the cuts between them and size their margins
    circles = free_circles(*probe, free_space) \
        if probe is not None and strip_count(len(xy)) >= 2 else None
    simplices, neighbours, (inside, corrected, clearance) = triangulate(
        xy + rng.uniform(-JITTER, JITTER, xy.shape), free_space, circles=circles,
        measure=lambda simplices: _voronoi_vertices(simplices, xy, owner, segments,
                                                    previous, following, free_space))
    if not inside.any():
        return empty
    # Ridges: the Delaunay edge opposite vertex k of triangle t is shared with neighbour n.
    tri = np.repeat(np.arange(len(simplices)), 3)
    corner = np.tile(np.arange(3), len(simplices))
    other = neighbours.ravel()
    g0 = simplices[tri, (corner + 1) % 3]
    g1 = simplices[tri, (corner + 2) % 3]
    take = (other > tri) & inside[tri] & inside[np.maximum(other, 0)]
    take &= (successor[g0] != g1) & (successor[g1] != g0)
    tri, other = tri[take], other[take]
    used = np.flatnonzero(inside)
    key = np.round(corrected / MERGE_GRID).astype(np.int64)
    first, merged = unique_rows(key)
    compact = np.full(len(simplices), -1, dtype=np.int64)
    compact[used] = merged
    edges = np.sort(np.stack([compact[tri], compact[other]], axis=1), axis=1)
    edges = edges[edges[:, 0] != edges[:, 1]]
    edges = edges[unique_rows(edges)[0]] if len(edges) else edges.reshape(0, 2)
    vertices = corrected[first]
    best = np.full(len(first), np.inf)
    np.minimum.at(best, merged, clearance)
    return MedialAxis(vertices, best, edges)


def _voronoi_vertices(simplices, xy, owner, segments, previous, following, free_space):
    """Which of the Delaunay triangles `simplices` have their circumcentre in `free_space`,
    and for those, in order, the Voronoi vertex on the exact bisector and its clearance
    (:func:`correct_vertices`)."""
    centres, _ = circumcircles(xy, simplices)
    finite = np.isfinite(centres).all(axis=1)
    inside = np.zeros(len(simplices), dtype=bool)
    inside[finite] = contains_points(free_space, centres[finite, 0], centres[finite, 1])
    used = np.flatnonzero(inside)
    corrected, clearance = correct_vertices(centres[used], owner[simplices[used]],
                                            segments, previous, following)
    return inside, corrected, clearance


def generalized_voronoi(free_space, clearance: float, *, step: float = 0.25,
                        seed: int = 0) -> MedialAxis:
    """Return the GVD of the obstacles grown by `clearance` metres, before any pruning.

    It is the medial axis of `free_space` where the clearance is at least `clearance`.

    Examples
    --------
    >>> room = shapely.box(0, 0, 6, 4)      # central segment y = 2 from x = 2 to x = 4
    >>> gvd = generalized_voronoi(room, 0.5)
    >>> bool((gvd.clearance >= 0.5).all())
    True
    """
    axis = medial_axis(free_space, step=step, seed=seed)
    return axis.restrict(axis.clearance >= clearance)
