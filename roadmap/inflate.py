"""Grow obstacles by the required clearance and measure exact clearances.

Everything here works on shapely 2 geometry arrays in metres. Clearance always means the
Euclidean distance from a point to the nearest raw obstacle, which for a point inside the
free space equals its distance to the free space's boundary (the free space is the floor
minus every obstacle).
"""

from __future__ import annotations

import math

import numpy as np
import shapely

#: Arc segments per quarter circle when eroding: sagitta c * (1 - cos(pi / 64)) < 0.6 mm at
#: c = 0.5 m, so narrow necks of a few millimetres survive erosion as they should.
QUAD_SEGS = 16
#: Islands (holes of the drivable region) and components smaller than these are ignored, m^2.
MIN_ISLAND_AREA = 0.01
MIN_COMPONENT_AREA = 0.05
#: Distance beyond c + the drivable region at which slivers are cut off, metres.
REACH_SLACK = 0.05
#: Pieces of the free space beyond reach are cut off from this area up, m^2,
SLIVER_AREA = 0.5
#: and hairlines from this perimeter up, metres: pieces thinner on average (2 area /
#: perimeter) than HAIRLINE, metres. A slit between back-to-back rack rows drawn rotated, whose
#: rounded faces miss each other by a grid step, has next to no area but is sampled densely
#: along both sides, and the faces beside it as walls half as thick.
SLIVER_PERIMETER = 4.0
HAIRLINE = 0.001
#: Input vertices are snapped to this grid in the local frame, metres (0.1 mm).
SNAP_GRID = 1e-4
#: The drivable region is where the clearance exceeds c by more than this, metres: 1 um, so
#: a gap of exactly 2c is a wall for the lanes and the drivable region alike.
ABOVE_CLEARANCE = 1e-6


def local_offset(bounds) -> tuple[float, float]:
    """Return the local frame's origin: the bounds' minimum rounded to the nearest 1 km.

    Computing near the origin keeps drawings at survey coordinates (x ~ 5e5 m,
    y ~ 5.4e6 m) as accurate as drawings at the origin.

    Parameters
    ----------
    bounds : (xmin, ymin, xmax, ymax) in metres

    Returns
    -------
    (x0, y0) : floats, metres; (0, 0) for empty or non-finite bounds.

    Examples
    --------
    >>> local_offset((500123.4, 5400987.0, 500200.0, 5401000.0))
    (500000.0, 5401000.0)
    """
    x0, y0 = float(bounds[0]), float(bounds[1])
    if not (math.isfinite(x0) and math.isfinite(y0)):
        return (0.0, 0.0)
    return (round(x0 / 1000.0) * 1000.0, round(y0 / 1000.0) * 1000.0)


def to_local(geometry, offset, *, grid: float = SNAP_GRID):
    """Shift `geometry` (scalar or array) by ``-offset`` and snap its vertices to `grid` m."""
    shift = np.asarray(offset, dtype=float)
    return shapely.transform(geometry, lambda xy: np.round((xy - shift) / grid) * grid)


def to_drawing(geometry, offset):
    """Shift `geometry` (scalar or array) from the local frame back by ``+offset``."""
    shift = np.asarray(offset, dtype=float)
    if not shift.any():
        return geometry
    return shapely.transform(geometry, lambda xy: xy + shift)


def local_floor(free_space) -> tuple[shapely.MultiPolygon, tuple[float, float]]:
    """The free space in the local frame the roadmap is computed in: (floor, offset).

    Its polygons shifted by ``-offset`` (:func:`local_offset` of their extents) and snapped to
    SNAP_GRID, made valid again where the snapping spoilt them. ValueError when the free
    space holds no polygon.
    """
    parts = polygon_parts(free_space)
    if len(parts) == 0:
        raise ValueError("free space is empty; nothing to build a roadmap on")
    offset = local_offset(shapely.total_bounds(parts))
    local = shapely.MultiPolygon(list(to_local(parts, offset)))
    if not shapely.is_valid(local):
        local = shapely.MultiPolygon(list(polygon_parts(shapely.make_valid(local))))
    return local, offset


def drivable_floor(free_space, clearance: float):
    """The roadmap's drivable region (``Roadmap.drivable``) of `free_space` for a required
    clearance of `clearance` metres, in the drawing's frame: what `build_roadmap` makes of
    the same floor, coordinate for coordinate, known before the lanes are.

    Examples
    --------
    >>> round(drivable_floor(shapely.box(0, 0, 10, 2), 0.5).area, 4)
    9.0
    """
    local, offset = local_floor(free_space)
    regions = drivable_region(local, float(clearance) + ABOVE_CLEARANCE)
    return to_drawing(shapely.MultiPolygon(list(regions)), offset)


def polylines(coordinates) -> np.ndarray:
    """LineStrings from a list of (n_i, 2) coordinate arrays, as an object array (L,)."""
    if len(coordinates) == 0:
        return np.empty(0, dtype=object)
    counts = [len(c) for c in coordinates]
    return shapely.linestrings(np.concatenate(coordinates),
                               indices=np.repeat(np.arange(len(counts)), counts))


def polygon_parts(geometry) -> np.ndarray:
    """Return the non-empty polygons of `geometry` as an object array, shape (P,).

    Nested collections are opened too (``make_valid`` returns a GeometryCollection that
    may hold a MultiPolygon).

    Examples
    --------
    >>> nested = shapely.GeometryCollection([shapely.MultiPolygon([shapely.box(0, 0, 1, 1)])])
    >>> len(polygon_parts(nested))
    1
    """
    parts = shapely.get_parts(np.atleast_1d(np.asarray(geometry, dtype=object)))
    while np.isin(shapely.get_type_id(parts), (4, 5, 6, 7)).any():
        parts = shapely.get_parts(parts)
    parts = parts[shapely.get_type_id(parts) == 3]
    return parts[~shapely.is_empty(parts) & (shapely.area(parts) > 0)]


def drivable_region(free_space, clearance: float, *, quad_segs: int = QUAD_SEGS,
                    min_component: float = MIN_COMPONENT_AREA,
                    min_island: float = MIN_ISLAND_AREA) -> np.ndarray:
    """Return where the robot's centre may be: `free_space` eroded by `clearance`.

    Parameters
    ----------
    free_space : Polygon or MultiPolygon, metres
    clearance : float
        Required clearance c = robot radius + margin, metres, > 0.
    min_component, min_island : float
        Components and holes smaller than these areas (m^2) are dropped.

    Returns
    -------
    (K,) object ndarray of Polygon, in a deterministic order (by bounds).

    Examples
    --------
    >>> corridor = shapely.box(0, 0, 10, 2)
    >>> [round(p.area, 6) for p in drivable_region(corridor, 0.5)]
    [9.0]
    """
    eroded = shapely.buffer(free_space, -clearance, quad_segs=quad_segs)
    parts = polygon_parts(eroded)
    parts = parts[shapely.area(parts) >= min_component]
    if len(parts) == 0:
        return parts
    rings, ring_owner = shapely.get_rings(parts, return_index=True)
    first = np.r_[True, ring_owner[1:] != ring_owner[:-1]]
    keep = first | (shapely.area(shapely.polygons(rings)) >= min_island)
    if not keep.all():
        rebuilt = []
        for index in range(len(parts)):
            mine = rings[(ring_owner == index) & keep]
            rebuilt.append(shapely.Polygon(mine[0], list(mine[1:])))
        parts = np.array(rebuilt, dtype=object)
    order = np.lexsort(shapely.bounds(parts).T[::-1])
    return parts[order]


def reached_parts(free_space, regions, clearance: float, *, slack: float = REACH_SLACK,
                  sliver_area: float = SLIVER_AREA, sliver_perimeter: float = SLIVER_PERIMETER,
                  quad_segs: int = QUAD_SEGS) -> np.ndarray:
    """Return the free space that discs of radius `clearance` reach, less its slivers.

    Lanes depend only on the part of the free floor that a disc of the required clearance c
    reaches (the union of every such disc that fits, the drivable region grown by c): at any
    point of clearance d >= c the disc of radius d about it is such a union, so its nearest
    obstacle points are the same for that part and for the whole floor, and any boundary
    added more than c away from the drivable region is at least d + slack away. Slivers
    no disc reaches (flue slots, gaps between a column and a rack) can be left out before
    sampling without moving a lane:

    - a component holding no drivable region is left out whole;
    - from a component holding one region, the pieces beyond the region grown by c + `slack`
      of at least `sliver_area`, and hairlines (thinner than HAIRLINE on average) of at
      least `sliver_perimeter` around, are cut off (smaller pieces, the rounded-off inside
      corners, stay: cutting them would change the sampling of every corner);
    - a component holding two or more is kept whole: the medial axis between its regions,
      below the clearance, locates the narrow passages.

    Parameters
    ----------
    free_space : Polygon or MultiPolygon, metres
    regions : (K,) object ndarray of Polygon, from :func:`drivable_region` of `free_space`
    clearance : float, c, metres
    slack : float, metres, > 0; more than the arc error of the buffers (under 1 mm).

    Returns
    -------
    (P,) object ndarray of Polygon

    Examples
    --------
    >>> hall = shapely.box(0, 0, 10, 4) | shapely.box(0, 5, 10, 5.1)    # a sealed 0.1 m slot
    >>> hall = hall | shapely.box(9.9, 4, 10, 5)                         # opened at one end
    >>> [p.bounds for p in reached_parts(hall, drivable_region(hall, 0.5), 0.5)]
    [(0.0, 0.0, 10.0, 4.0)]
    """
    parts = polygon_parts(free_space)
    if len(regions) == 0:
        return parts[:0]
    region_index, part_index = shapely.STRtree(parts).query(
        shapely.point_on_surface(regions), predicate="intersects")
    holding = np.bincount(part_index, minlength=len(parts))
    single = np.flatnonzero(holding == 1)
    if len(single):
        owner = np.empty(len(parts), dtype=np.int64)
        owner[part_index] = region_index
        grown = shapely.buffer(regions[owner[single]], clearance + slack, quad_segs=quad_segs)
        beyond, piece_of = shapely.get_parts(shapely.difference(parts[single], grown),
                                             return_index=True)
        area, perimeter = shapely.area(beyond), shapely.length(beyond)
        large = (area >= sliver_area) | \
            ((perimeter >= sliver_perimeter) & (2 * area < HAIRLINE * perimeter))
        if large.any():
            parts = parts.copy()
            for index in np.unique(piece_of[large]):
                mine = beyond[large & (piece_of == index)]
                parts[single[index]] = shapely.difference(parts[single[index]],
                                                          shapely.union_all(mine))
    return polygon_parts(parts[holding > 0])


def inflate_obstacles(obstacles, clearance: float, *, quad_segs: int = QUAD_SEGS):
    """Return the union of every obstacle grown by `clearance` metres (one geometry)."""
    parts = polygon_parts(list(obstacles)) if len(obstacles) else np.empty(0, dtype=object)
    if len(parts) == 0:
        return shapely.MultiPolygon()
    try:
        merged = shapely.coverage_union_all(parts) if _is_coverage(parts) else None
    except shapely.errors.GEOSException:
        merged = None
    if merged is None:
        merged = shapely.union_all(parts)
    return shapely.buffer(merged, clearance, quad_segs=quad_segs)


def _is_coverage(parts) -> bool:
    return bool(len(parts) > 1 and shapely.coverage_is_valid(
        shapely.GeometryCollection(list(parts))))


def _ring_links(seg_ring: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Previous and following segment of each one, for segments listed ring by ring."""
    count = len(seg_ring)
    index = np.arange(count)
    first = np.r_[True, seg_ring[1:] != seg_ring[:-1]] if count else np.zeros(0, bool)
    ring_first = np.maximum.accumulate(np.where(first, index, 0)) if count else index
    last = np.r_[first[1:], True] if count else first
    ring_last = np.minimum.accumulate(np.where(last, index, count)[::-1])[::-1]
    return np.where(first, ring_last, index - 1), np.where(last, ring_first, index + 1)


def boundary_segments(free_space) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Split the boundary of `free_space` into straight segments.

    Consecutive collinear segments (rack bays in a row leave a vertex at every joint) are
    merged into one, so the boundary holds one segment per straight run.

    Returns
    -------
    segments : (S, 2, 2) float ndarray
        Start and end point of each segment, metres; zero-length segments dropped.
    previous, following : (S,) int ndarray
        Index of the segment before and after each one along its ring.
    """
    parts = polygon_parts(free_space)
    rings = shapely.get_rings(parts)
    xy, ring = shapely.get_coordinates(rings, return_index=True)
    same = ring[1:] == ring[:-1]
    start, end, seg_ring = xy[:-1][same], xy[1:][same], ring[:-1][same]
    keep = np.any(start != end, axis=1)
    start, end, seg_ring = start[keep], end[keep], seg_ring[keep]
    previous, following = _ring_links(seg_ring)
    direction = end - start
    before = direction[previous]
    cross = before[:, 0] * direction[:, 1] - before[:, 1] * direction[:, 0]
    scale = np.hypot(*before.T) * np.hypot(*direction.T)
    straight = (np.abs(cross) <= 1e-12 * scale) & ((before * direction).sum(axis=1) > 0)
    straight &= ~np.isin(seg_ring, np.unique(seg_ring[straight])[
        np.bincount(seg_ring[~straight], minlength=seg_ring.max(initial=-1) + 1)[
            np.unique(seg_ring[straight])] == 0])  # keep a ring that has no corner at all
    if straight.any():
        start, seg_ring = start[~straight], seg_ring[~straight]
        previous, following = _ring_links(seg_ring)
        end = start[following]
    return np.stack([start, end], axis=1), previous, following
