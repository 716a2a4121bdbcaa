"""Linework to polygons: solid walls, filled areas, the enclosure, free space and leaks.

All lengths in metres. Inputs are shapely arrays as `Parts.geometries` returns them: open
lines, closed rings (as line strings) and filled polygons.
"""

from __future__ import annotations

import contextlib
from concurrent.futures import ThreadPoolExecutor

import numpy as np
import shapely

from clearway.converter.grouping import components, pairs_within
from clearway.side_by_side import cores, meanwhile

#: Closing widths (metres) tried, smallest first, when looking for gaps in the enclosure.
LEAK_WIDTHS = (0.25, 0.5, 1.0, 2.0, 4.0, 8.0)

#: An arc on a wall layer with a radius in this range (metres, a door leaf's width) and a
#: sweep of at most DOOR_SWING_MAX_SWEEP degrees that bounds no solid wall is a door swing.
DOOR_SWING_RADII = (0.5, 1.6)
DOOR_SWING_MAX_SWEEP = 120.0

_EMPTY = shapely.MultiPolygon()

#: Corners of tiles this close (metres) are one corner, when tiles (rack bays) almost meet
#: edge to edge: rotated bays whose insertion points a drawing rounds to 0.1 mm meet
#: 0.1-0.14 mm apart, and their exact union costs nine times their coverage union.
TILE_SNAP = 2e-4


def as_multipolygon(geometry):
    """Return the polygonal parts of `geometry` as one MultiPolygon (empty if none)."""
    parts = shapely.get_parts(geometry)
    parts = parts[(shapely.get_type_id(parts) == 3) & ~shapely.is_empty(parts)]
    if not len(parts):
        return _EMPTY
    return shapely.multipolygons(parts)


def fill_holes(geometry):
    """Return `geometry` with every hole filled."""
    parts = shapely.get_parts(as_multipolygon(geometry))
    if not len(parts):
        return _EMPTY
    return shapely.union_all(shapely.polygons(shapely.get_exterior_ring(parts)))


def union_polygons(polygons):
    """Union an array of polygons; a coverage union first when they tile edge to edge.

    Rack bays placed side by side and back to back share their edges exactly (coordinates
    are snapped), and shapely's coverage union merges such a tiling far faster than a
    general union. Overlapping input falls back to `shapely.union_all`.
    """
    return union_tiling(polygons)[0]


def union_tiling(polygons):
    """Return (union, tiled) of an array of polygons, as `union_polygons` does.

    tiled : bool
        True when the polygons tile edge to edge and the coverage union merged them: it only
        drops the shared edges and computes no new vertex, so every input polygon lies
        exactly (to the last bit) inside the union.
    """
    polygons = np.asarray(polygons, dtype=object)
    polygons = polygons[~shapely.is_empty(polygons)]
    if len(polygons) == 0:
        return _EMPTY, False
    if len(polygons) > 8:
        merged = _tiled_union(polygons)
        if merged is not None:
            return merged, True
        snapped = snap_corners(polygons, TILE_SNAP)
        merged = _tiled_union(snapped) if snapped is not None else None
        if merged is not None:
            return merged, False     # the tiles moved: the input may stick out by TILE_SNAP
        inside = inside_others(polygons)
        if inside.any():
            # what lies inside another polygon adds nothing to the union: a rack row's
            # footprint over its uprights, or a column inside a wall's face
            polygons = polygons[~inside]
            merged = _tiled_union(polygons) if len(polygons) > 8 else None
            if merged is not None:
                return merged, False
    return as_multipolygon(shapely.union_all(polygons)), False


def inside_others(polygons):
    """Return which of `polygons` (valid) another of them covers, shape (N,); of polygons
    equal to one another, all but the first.

    Examples
    --------
    >>> row, upright = shapely.box(0, 0, 27, 1.1), shapely.box(0, 0, 0.1, 1.1)
    >>> inside_others(np.array([upright, row, shapely.box(0, 0, 27, 1.1)])).tolist()
    [True, False, True]
    """
    polygons = np.asarray(polygons, dtype=object)
    inner, outer = shapely.STRtree(polygons).query(polygons)
    # only a polygon within another's bounds can lie inside it: the exact test for those pairs
    low, high = np.split(shapely.bounds(polygons), 2, axis=1)
    pairs = (inner != outer) & (low[inner] >= low[outer]).all(axis=1) & \
        (high[inner] <= high[outer]).all(axis=1)
    inner, outer = inner[pairs], outer[pairs]
    containers = polygons[np.unique(outer)]
    containers = containers[~shapely.is_prepared(containers)]
    shapely.prepare(containers)      # a prepared polygon answers covers() 20 times faster
    try:
        pairs = shapely.covers(polygons[outer], polygons[inner])
    finally:
        shapely.destroy_prepared(containers)
    inner, outer = inner[pairs], outer[pairs]
    # a polygon covered by one it also covers is equal to it: only the later one goes
    mutual = np.isin(outer * len(polygons) + inner, inner * len(polygons) + outer)
    inside = np.zeros(len(polygons), dtype=bool)
    inside[inner[~mutual | (outer < inner)]] = True
    return inside


def _tiled_union(polygons):
    """The coverage union of `polygons` when they tile edge to edge (it is valid and has
    their total area), else None."""
    try:
        merged = coverage_union(polygons)
    except shapely.errors.GEOSException:
        return None
    total = float(np.sum(shapely.area(polygons)))
    if merged.is_valid and abs(merged.area - total) <= 1e-9 * max(total, 1.0):
        return as_multipolygon(merged)
    return None


def snap_corners(polygons, tolerance):
    """`polygons` with corners at most `tolerance` apart moved onto one of them, or None
    when no corner moves, a group of such corners spans more than `tolerance` or a moved
    polygon is not valid.

    Each group of corners joined by distances up to `tolerance` moves onto its lowest
    corner (x, then y), so the result does not depend on the order of `polygons`.

    Examples
    --------
    >>> bays = np.array([shapely.box(0, 0, 2.7, 1.1), shapely.box(2.7001, 0, 5.4, 1.1)])
    >>> [p.bounds for p in snap_corners(bays, 2e-4)]
    [(0.0, 0.0, 2.7, 1.1), (2.7, 0.0, 5.4, 1.1)]
    """
    xy = shapely.get_coordinates(polygons)
    corners, which = np.unique(xy, axis=0, return_inverse=True)
    which = which.ravel()
    near, other = pairs_within(corners, tolerance)
    if not len(near):
        return None
    group = components(len(corners), near, other)
    lowest = np.full(int(group.max()) + 1, len(corners))
    np.minimum.at(lowest, group, np.arange(len(corners)))   # corners are sorted: x, then y
    onto = corners[lowest[group]]
    if (np.hypot(*(corners - onto).T) > tolerance).any():
        return None
    snapped = shapely.set_coordinates(polygons.copy(), onto[which])
    if not shapely.is_valid(snapped).all():
        return None
    return snapped


def coverage_union(polygons):
    """Return ``shapely.coverage_union_all(polygons)``, merged group by group where it can.

    The coverage union of a whole warehouse's rack bays costs more than twice as much for
    twice the bays (GEOS's noding and ring building over every bay at once), while the
    bays fall apart into many groups (runs of bays) that share no vertex with each other.
    GEOS builds the union from the bays' edges in input order, and groups that share no
    vertex share no edge or node: the union of each group alone, its members in input
    order, gives the same rings, vertex for vertex, and the union of all lists the groups'
    polygons in the order of their first edges. So when each group merges into one
    polygon whose outline closes on a segment of its first member's outline (its first edge
    comes from that member), the groups' polygons in the order of their first
    members are the union; otherwise, or for few or small groups (nothing to gain), the
    union is taken whole.

    Examples
    --------
    >>> bays = np.array([shapely.box(x, y, x + 2.7, y + 1.1) for y in (0.0, 5.0)
    ...                  for x in (0.0, 2.7, 5.4)])
    >>> shapely.to_wkb(coverage_union(bays)) == shapely.to_wkb(shapely.coverage_union_all(bays))
    True
    """
    polygons = np.asarray(polygons, dtype=object)
    merged = _coverage_union_by_group(polygons)
    return merged if merged is not None else shapely.coverage_union_all(polygons)


def _coverage_union_by_group(polygons, *, min_groups=16, min_size=4):
    """The coverage union of `polygons` as `coverage_union` describes, or None."""
    count = len(polygons)
    if count < min_groups * min_size:
        return None
    xy, owner = shapely.get_coordinates(polygons, return_index=True)
    sort = np.lexsort((xy[:, 1], xy[:, 0]))
    new = np.r_[True, np.any(xy[sort][1:] != xy[sort][:-1], axis=1)]
    vertex = np.empty(len(xy), dtype=int)
    vertex[sort] = np.cumsum(new) - 1                    # the same number for the same point
    nodes = count + int(vertex.max()) + 1
    label = components(nodes, owner, count + vertex)
    _, label = np.unique(label[:count], return_inverse=True)
    label = label.ravel()
    groups = int(label.max()) + 1
    if groups < min_groups or count < min_size * groups:
        return None
    first_member = np.full(groups, count)
    np.minimum.at(first_member, label, np.arange(count))
    rank = np.empty(groups, dtype=int)
    rank[np.argsort(first_member)] = np.arange(groups)
    group = rank[label]                                  # groups numbered by first member
    if groups < min_groups:
        return None
    order = np.argsort(group, kind="stable")                         # members in input order
    start = np.searchsorted(group[order], np.arange(groups + 1))
    size = np.diff(start)
    merged = np.empty(groups, dtype=object)
    bucket = np.ceil(np.log2(size)).astype(int)                      # pad each to a power of 2
    for level in np.unique(bucket):
        chosen = np.flatnonzero(bucket == level)
        table = np.full((len(chosen), int(size[chosen].max())), None, dtype=object)
        column = np.arange(table.shape[1])
        filled = column[None, :] < size[chosen][:, None]
        table[filled] = polygons[order[(start[chosen][:, None] + column[None, :])[filled]]]
        merged[chosen] = shapely.coverage_union_all(table, axis=1)
    if not (shapely.get_type_id(merged) == 3).all():
        return None
    # each polygon's outline closes on a segment of its group's first member (GEOS starts a
    # ring at the second point of its first edge, whose first segment so closes the ring)
    rings = shapely.get_exterior_ring(merged)
    head = shapely.get_coordinates(shapely.get_point(rings, -2))
    then = shapely.get_coordinates(shapely.get_point(rings, -1))
    outline, member = shapely.get_coordinates(
        shapely.get_exterior_ring(polygons[order[start[:-1]]]), return_index=True)
    same = member[1:] == member[:-1]
    tail, tip, member = outline[:-1][same], outline[1:][same], member[1:][same]
    along = np.all(tail == head[member], axis=1) & np.all(tip == then[member], axis=1)
    back = np.all(tail == then[member], axis=1) & np.all(tip == head[member], axis=1)
    if not (np.bincount(member[along | back], minlength=groups) > 0).all():
        return None
    return shapely.multipolygons(merged)                 # in the order of the first members


#: Metres; far above the rounding error of a computed midpoint, far below any drawn detail.
MIDPOINT_SLACK = 1e-6


def covered(geometries, area, *, pieces=None):
    """Return which of `geometries` `area` covers, shape (N,): ``shapely.covered_by``.

    Testing thousands of wall edges against the union of every wall costs each test about
    the size of the union (the edges lie on its boundary, so GEOS computes the full
    relation even with `area` prepared): quadratic growth. `pieces`, polygons each known to
    lie exactly inside `area` (the tiles of a coverage union, `union_tiling`), settle most
    edges against one small piece each: covered by a piece means covered by `area`. Only
    the edges no single piece covers are tested against `area` itself, prepared (an edge
    partly outside it is rejected from a point outside, without the full relation).

    Before that, an edge each of whose segments is, coordinates for coordinates, a side
    of a valid piece is covered without GEOS: each segment lies on the boundary of a piece
    inside `area` (the wall edges that bound the solid faces polygonized from them: all
    but the loose ones; the tree's predicate costs several microseconds a pair).

    Examples
    --------
    >>> tiles = np.array([shapely.box(0, 0, 2, 3), shapely.box(2, 0, 4, 3)])
    >>> room = shapely.union_all(tiles)
    >>> lines = [shapely.LineString([(0, 0), (1, 0)]), shapely.LineString([(1, 1), (3, 1)]),
    ...          shapely.LineString([(1, 1), (5, 1)])]
    >>> covered(lines, room, pieces=tiles).tolist()
    [True, True, False]
    >>> along_edge = shapely.LineString([(0, 0), (4, 0)])
    >>> touching = shapely.LineString([(4, 0), (6, 0)])
    >>> covered([along_edge, touching], room).tolist()
    [True, False]
    """
    geometries = np.asarray(geometries, dtype=object)
    result = np.zeros(len(geometries), dtype=bool)
    if pieces is not None and len(pieces) and len(geometries):
        pieces = np.asarray(pieces, dtype=object)
        result = _on_sides(geometries, pieces[shapely.is_valid(pieces)])
        rest = np.flatnonzero(~result)
        if len(rest):
            inside, _ = shapely.STRtree(pieces).query(geometries[rest], predicate="covered_by")
            result[rest[inside]] = True
    rest = np.flatnonzero(~result)
    if len(rest):
        was_prepared = shapely.is_prepared(area)
        shapely.prepare(area)
        try:
            # a line whose midpoint lies clearly outside is not covered: settled by one point
            # test (the full relation of a line that only touches `area` costs about its
            # size); "clearly": a line along the edge of `area` has its computed midpoint a
            # rounding error off it, perhaps outside
            line = shapely.get_type_id(geometries[rest]) == 1
            middle = shapely.line_interpolate_point(geometries[rest[line]], 0.5, normalized=True)
            outside = np.zeros(len(rest), dtype=bool)
            outside[line] = ~shapely.dwithin(area, middle, MIDPOINT_SLACK)
            rest = rest[~outside]
            result[rest] = shapely.covers(area, geometries[rest])
        finally:
            if not was_prepared:
                shapely.destroy_prepared(area)  # no side effect on the caller's geometry
    return result


def _segment_keys(lines):
    """Each straight segment of `lines` as one 32-byte key (its ends in (x, y) order) and
    the index of its line, shapes (S,) and (S,)."""
    xy, line = shapely.get_coordinates(lines, return_index=True)
    same = line[1:] == line[:-1]
    ends = np.concatenate([xy[:-1][same], xy[1:][same]], axis=1)
    swap = (ends[:, 0] > ends[:, 2]) | ((ends[:, 0] == ends[:, 2]) & (ends[:, 1] > ends[:, 3]))
    ends[swap] = ends[swap][:, [2, 3, 0, 1]]
    return np.ascontiguousarray(ends).view(np.dtype((np.void, 32))).ravel(), line[1:][same]


def _on_sides(lines, polygons):
    """Which of `lines` (N,) have every segment equal to a side of one of `polygons`.

    Examples
    --------
    >>> lines = [shapely.LineString([(2, 0), (0, 0), (0, 3)]), shapely.LineString([(0, 0), (1, 0)])]
    >>> _on_sides(lines, [shapely.box(0, 0, 2, 3)]).tolist()
    [True, False]
    """
    lines = np.asarray(lines, dtype=object)
    result = np.zeros(len(lines), dtype=bool)
    if not len(lines) or not len(polygons):
        return result
    sides, _ = _segment_keys(shapely.get_rings(np.asarray(polygons, dtype=object)))
    keys, line = _segment_keys(lines)
    off = np.zeros(len(lines), dtype=bool)
    off[line[~np.isin(keys, sides)]] = True
    result[np.unique(line)] = True    # a line with no segment (a point) is not settled here
    return result & ~off


def segments(lines):
    """Return the straight segments of `lines` as two-point LineStrings, in order.

    Examples
    --------
    >>> [line.wkt for line in segments([shapely.LineString([(0, 0), (1, 0), (1, 2)])])]
    ['LINESTRING (0 0, 1 0)', 'LINESTRING (1 0, 1 2)']
    """
    xy, line = shapely.get_coordinates(np.asarray(lines, dtype=object), return_index=True)
    same = line[1:] == line[:-1]
    return shapely.linestrings(np.stack([xy[:-1][same], xy[1:][same]], axis=1))


def node_lines(lines, *, gap_tolerance):
    """Node linework and close endpoint gaps below `gap_tolerance` metres.

    A free end (a node only one edge reaches) within `gap_tolerance` of other linework is
    joined to its nearest point there: endpoint to endpoint and endpoint to segment
    (a T-junction drawn a millimetre short). An overshoot, a piece at most `gap_tolerance`
    long that runs on past a junction to a free end (a wall face drawn a millimetre too
    long at a corner), is dropped: left in, it would become a loose band that bulges the
    wall's end and hides the opening beside it.

    Returns
    -------
    ndarray of LineString
        Noded edges; duplicated, reversed, overlapping and zero-length input does no harm.
    """
    lines = np.asarray(lines, dtype=object)
    lines = lines[~shapely.is_empty(lines) & (shapely.length(lines) > 0)]
    if not len(lines):
        return np.empty(0, dtype=object)
    # merged at degree-2 nodes only, the union's edges still meet only at its nodes: a
    # second union would node nothing and give back the same lines (0.4 s on 30,000 edges)
    edges = shapely.get_parts(shapely.line_merge(shapely.union_all(lines)))
    if gap_tolerance <= 0:
        return edges
    ends = np.concatenate([shapely.get_coordinates(shapely.get_point(edges, 0)),
                           shapely.get_coordinates(shapely.get_point(edges, -1))])
    nodes, inverse, counts = np.unique(ends, axis=0, return_inverse=True, return_counts=True)
    degree = counts[inverse.reshape(2, -1)]
    overshoot = (shapely.length(edges) <= gap_tolerance) & (
        ((degree[0] == 1) & (degree[1] >= 3)) | ((degree[1] == 1) & (degree[0] >= 3)))
    if overshoot.any():
        edges = edges[~overshoot]
        counts = counts - np.bincount(inverse.reshape(2, -1)[:, overshoot].ravel(),
                                      minlength=len(counts))
        nodes, counts = nodes[counts > 0], counts[counts > 0]
    free = shapely.points(nodes[counts == 1])
    if not len(free):
        return edges
    tree = shapely.STRtree(edges)
    point_index, edge_index = tree.query(free, predicate="dwithin", distance=gap_tolerance)
    distance = shapely.distance(free[point_index], edges[edge_index])
    keep = distance > 0
    point_index, edge_index, distance = point_index[keep], edge_index[keep], distance[keep]
    if not len(point_index):
        return edges
    order = np.lexsort((distance, point_index))
    first = order[np.r_[True, point_index[order][1:] != point_index[order][:-1]]]
    connectors = shapely.shortest_line(free[point_index[first]], edges[edge_index[first]])
    return shapely.get_parts(shapely.union_all(np.concatenate([edges, connectors])))


def bands(lines, width):
    """Return lines widened to `width` metres (round ends) as a MultiPolygon."""
    if not len(lines):
        return _EMPTY
    return as_multipolygon(shapely.union_all(shapely.buffer(lines, width / 2.0, quad_segs=2)))


def inscribed_radius(faces, tolerance, *, above, below=0.0):
    """Return the radius of each face's largest inscribed circle, metres, shape (N,).

    Exact within `tolerance` metres (GEOS's maximum inscribed circle) for every face that
    could have a radius between `below` and `above`; a wider face may get a smaller radius
    that still exceeds `above`, a narrower one gets `below`, a bound its radius does not
    exceed. A first pass with a tolerance of `above` settles wide faces (a room or a whole
    floor, whose fine search dominates the cost) and only the others are refined. A circle
    centred inside its face is a lower bound of the true radius, so a first-pass radius over
    ``above + 2 * tolerance`` proves the fine one exceeds `above` too. Before that, a face
    whose interior point (``point_on_surface``) lies farther than ``above + 2 * tolerance``
    from its edge gets that distance, a lower bound of its radius as well: a hall's floor
    round hundreds of columns needs no search at all.

    Narrow faces (wall bands, columns: thousands in a warehouse, each a slow fine search)
    are settled by erosion before any search: a face that a negative buffer of `below`
    leaves empty has no point farther than `below` from its edge (up to GEOS's arc
    approximation and input simplification, below 2 % of `below`), so its radius and the
    searches', which never exceed it, are at most that (`below` lies well under `above`).

    Examples
    --------
    >>> faces = np.array([shapely.box(0, 0, 10, 0.3), shapely.box(0, 0, 50, 40)])
    >>> inscribed_radius(faces, 0.006, above=0.303).round(2).tolist()
    [0.15, 20.0]
    >>> inscribed_radius(faces, 0.006, above=0.303, below=0.27).round(2).tolist()
    [0.27, 20.0]
    """
    faces = np.asarray(faces, dtype=object)
    radius = np.zeros(len(faces))
    # a point inside a face that far from its edge already proves it wide: the floor of a
    # whole hall round hundreds of columns, whose coarse search alone costs tens of ms
    wide = np.zeros(len(faces), bool)
    roomy = np.flatnonzero(shapely.area(faces) > np.pi * (above + 2.0 * tolerance) ** 2)
    if len(roomy):
        probe = shapely.point_on_surface(faces[roomy])
        clear = shapely.distance(probe, shapely.boundary(faces[roomy]))
        xy = shapely.get_coordinates(probe)
        proven = (clear > above + 2.0 * tolerance) & \
            shapely.contains_xy(faces[roomy], xy[:, 0], xy[:, 1])
        wide[roomy[proven]] = True
        radius[roomy[proven]] = clear[proven]
    rest = np.flatnonzero(~wide)
    if below > 0 and len(rest):
        # eroded first: a face the erosion empties has a radius of about `below` at most,
        # which the coarse search could only have found unsure (its circle is no larger),
        # so it needs no search at all (the thousands of wall bands and columns)
        narrow = shapely.is_empty(shapely.buffer(faces[rest], -below))
        radius[rest[narrow]] = below
        rest = rest[~narrow]
    circles = shapely.maximum_inscribed_circle(faces[rest], max(above, tolerance))
    centre = shapely.get_coordinates(shapely.get_point(circles, 0))
    inside = shapely.contains_xy(faces[rest], centre[:, 0], centre[:, 1])
    radius[rest] = np.where(inside, shapely.length(circles), 0.0)
    unsure = np.zeros(len(faces), bool)
    unsure[rest] = radius[rest] <= above + 2.0 * tolerance
    if unsure.any():
        radius[unsure] = shapely.length(shapely.maximum_inscribed_circle(faces[unsure], tolerance))
    return radius


def door_swings(arcs):
    """Return the arcs that look like door swings: leaf-sized radius, sweep up to 120 degrees.

    The sweep follows from the chord c and the arc length s of each flattened arc:
    c / s = sin(t / 2) / (t / 2) for a sweep t, and the radius is s / t.

    Examples
    --------
    >>> t = np.radians(np.linspace(0, 90, 33))
    >>> quarter = shapely.LineString(np.c_[0.9 * np.cos(t), 0.9 * np.sin(t)])
    >>> half = shapely.LineString(np.c_[5 * np.cos(2 * t), 5 * np.sin(2 * t)])
    >>> len(door_swings([quarter, half]))
    1
    """
    arcs = np.asarray(arcs, dtype=object)
    if not len(arcs):
        return arcs
    length = shapely.length(arcs)
    chord = shapely.distance(shapely.get_point(arcs, 0), shapely.get_point(arcs, -1))
    half = np.linspace(np.pi, 1e-6, 2000)  # half sweep t / 2, decreasing so sinc increases
    ratio = np.divide(chord, length, out=np.zeros_like(length), where=length > 0)
    half_sweep = np.interp(ratio, np.sin(half) / half, half)
    radius = length / np.maximum(2.0 * half_sweep, 1e-9)
    low, high = DOOR_SWING_RADII
    keep = (radius >= low) & (radius <= high) & \
        (np.degrees(2.0 * half_sweep) <= DOOR_SWING_MAX_SWEEP + 1.0)
    return arcs[keep]


#: Closed wall-layer faces up to this wide (metres) with no text inside are solid too: thick
#: masonry walls drawn as two outlines, shafts and ducts (common practice: masonry and
#: exterior walls up to about 0.8 m, old buildings more). A room this narrow would carry its
#: name or number, or join its neighbours through an opening.
THICK_WALL_MAX = 1.2


def crossed_boxes(faces, tolerance):
    """Mark the faces (F,) that are the four triangles of a box drawn with both diagonals.

    A box with a cross is how plans draw a lift shaft, a duct riser or a void (common
    practice): no floor, though its triangles are as wide as small rooms and a name ("LIFT")
    may sit in one. Four triangles meeting at one vertex whose union is a convex
    quadrilateral are such a box. Vertices added on the box's sides where walls meet them
    are dropped first (simplified within `tolerance`, metres).

    Examples
    --------
    >>> box = shapely.box(0, 0, 2, 3).exterior
    >>> cross = [shapely.LineString([(0, 0), (2, 3)]), shapely.LineString([(0, 3), (2, 0)])]
    >>> def faces_of(lines):
    ...     return shapely.get_parts(shapely.polygonize(shapely.get_parts(shapely.union_all(lines))))
    >>> crossed_boxes(faces_of([box, *cross]), 1e-3).tolist()
    [True, True, True, True]
    >>> crossed_boxes(faces_of([box, cross[0]]), 1e-3).tolist()
    [False, False]
    """
    faces = np.asarray(faces, dtype=object)
    marked = np.zeros(len(faces), dtype=bool)
    # simplifying keeps every ring (GEOS's topology-preserving simplifier never drops a
    # hole), so only faces without holes can become triangles; a hall with a hole for each
    # of a thousand columns cost most of the simplifying
    plain = np.flatnonzero(shapely.get_num_interior_rings(faces) == 0)
    simple = shapely.simplify(faces[plain], tolerance)
    three = shapely.get_num_coordinates(simple) == 4
    triangle = plain[three]
    if len(triangle) < 4:
        return marked
    corners = shapely.get_coordinates(shapely.get_exterior_ring(simple[three]))
    corners = corners.reshape(-1, 4, 2)[:, :3].reshape(-1, 2)
    # simplifying keeps vertices where they are: the four triangles share the crossing exactly
    _, vertex, count = np.unique(corners, axis=0, return_inverse=True, return_counts=True)
    vertex = vertex.ravel()
    for shared in np.flatnonzero(count == 4):
        owners = triangle[np.flatnonzero(vertex == shared) // 3]
        if len(np.unique(owners)) != 4:
            continue
        box = shapely.simplify(shapely.union_all(faces[owners]), tolerance)
        if box.geom_type == "Polygon" and not box.interiors and \
                len(box.exterior.coords) == 5 and \
                box.area >= (1 - 1e-6) * box.convex_hull.area:
            marked[owners] = True
    return marked


def wall_regions(lines, rings, fills, *, gap_tolerance, max_wall_thickness, nominal_wall_thickness,
                 arcs=(), texts=None):
    """Return (solid walls, enclosed area, loose wall lines) from wall-layer linework, metres.

    Linework stays linework: it is noded and polygonized, and a face whose largest inscribed
    circle has a diameter of at most `max_wall_thickness` is solid (the band between two wall
    faces, a column drawn as a circle); so is a face up to THICK_WALL_MAX wide with no text
    inside (`texts`, (N, 2) points) when texts are given; wider faces are rooms. The two faces
    of a double-line wall that stop open at an opening are closed first
    (`openings.close_open_wall_ends`). Edges that bound no solid face (dangling lines, a
    single-line outline) become bands `nominal_wall_thickness` wide. Filled polygons
    (hatches, solids, wide polylines) are solid. `arcs` are the ARC entities among `lines`:
    one that bounds no solid face and looks like a door swing (`door_swings`) is the path of
    a door leaf, not a wall, and gets no band (it would close the doorway).

    Returns
    -------
    solid : MultiPolygon
    enclosed : MultiPolygon
        Everything the linework and fills enclose, holes filled (rooms and walls together).
    loose : ndarray of LineString
        The edges that became bands (single-line walls), door swings left out.

    Examples
    --------
    >>> outer = shapely.box(0, 0, 10, 8).exterior
    >>> inner = shapely.box(0.3, 0.3, 9.7, 7.7).exterior
    >>> solid, enclosed, _ = wall_regions([], [outer, inner], [], gap_tolerance=0.01,
    ...     max_wall_thickness=0.6, nominal_wall_thickness=0.05)
    >>> round(solid.area, 6), enclosed.area
    (10.44, 80.0)
    """
    from clearway.converter.openings import close_open_wall_ends

    edges = node_lines(np.concatenate([np.asarray(lines, dtype=object),
                                       np.asarray(rings, dtype=object)]), gap_tolerance=gap_tolerance)
    if len(edges):
        caps = close_open_wall_ends(edges, max_thickness=max_wall_thickness)
        if len(caps):
            edges = shapely.get_parts(shapely.union_all(np.concatenate([edges, caps])))
    faces = np.empty(0, dtype=object)
    if len(edges):
        faces = shapely.get_parts(shapely.polygonize(edges))
    # the faces tile the plane (polygonize): their coverage union, for the enclosed area, is
    # made on a second thread while the solid faces are found (GEOS releases the GIL)
    with meanwhile(lambda: shapely.coverage_union_all(faces) if len(faces) else None) as tiling:
        solid, loose, banded = _solid_walls(edges, faces, fills, arcs, texts,
                                            max_wall_thickness, nominal_wall_thickness)
    # the fills and the bands are then added as a handful of geometries; the solid faces are
    # among the faces, so the solid (with every round column again) is not united a second time
    tiled = np.array([tiling.result()] if len(faces) else [], dtype=object)
    fills = np.asarray(fills, dtype=object)
    enclosed = fill_holes(shapely.union_all(np.concatenate([tiled, fills, [banded]])))
    return solid, enclosed, loose


def _solid_walls(edges, faces, fills, arcs, texts, max_wall_thickness, nominal_wall_thickness):
    """`wall_regions`' solid walls from the noded `edges` and their `faces`: (solid, loose
    edges, their bands)."""
    if len(faces):
        tolerance = max(max_wall_thickness / 100.0, 1e-4)
        above = (max(max_wall_thickness, THICK_WALL_MAX if texts is not None else 0) + tolerance) / 2
        # 0.9: the erosion's approximation (under 2 %) stays inside the solid decision's margin
        radius = inscribed_radius(faces, tolerance, above=above, below=0.9 * max_wall_thickness / 2)
        solid = 2.0 * radius <= max_wall_thickness + tolerance
        if texts is not None:
            thick = ~solid & (2.0 * radius <= THICK_WALL_MAX + tolerance)
            if thick.any() and len(texts):
                points = shapely.points(np.asarray(texts, dtype=float).reshape(-1, 2))
                face_index, _ = shapely.STRtree(points).query(faces[thick], predicate="contains")
                named = np.zeros(int(thick.sum()), bool)
                named[np.unique(face_index)] = True
                thick[np.flatnonzero(thick)[named]] = False
            solid |= thick
        solid |= crossed_boxes(faces, tolerance)
        solid_faces = faces[solid]
    else:
        solid_faces = faces
    fills = np.asarray(fills, dtype=object)
    pieces = np.concatenate([solid_faces, fills])
    solid, tiled = union_tiling(pieces)
    loose, banded = np.empty(0, dtype=object), _EMPTY
    if len(edges):
        loose = edges[~covered(edges, solid, pieces=pieces if tiled else None)] \
            if not solid.is_empty else edges
        swings = door_swings(arcs)
        if len(loose) and len(swings):
            # merged edges may run on from a swing into its leaf: cut the swing out of them
            swing = shapely.buffer(shapely.union_all(swings), 1e-6)
            loose = shapely.get_parts(shapely.difference(loose, swing))
            loose = loose[~shapely.is_empty(loose)]
        banded = bands(loose, nominal_wall_thickness)
        if len(loose):  # else the solid stays as united above, its columns not again
            solid = as_multipolygon(shapely.union_all([solid, banded]))
    return solid, loose, banded


#: Racking rows drawn as beam lines along both faces with the uprights as small posts
#: between them and nothing drawn across the row: two parallel beam lines at most this far
#: apart (metres; single rows are 0.8-1.2 m deep, back-to-back pairs drawn as one 2.2-2.6 m,
#: common practice) with no racking line between them, and posts standing between them,
#: fill the strip between them.
BEAM_PAIR_DEPTH = 2.7
#: The fewest posts (closed racking shapes that fit between the lines, no more than
#: POST_SIZE metres across) that make a pair of beam lines a row; a post counts when it
#: stands between the lines, level with the pair or up to POST_REACH metres beyond it.
BEAM_PAIR_POSTS = 2
POST_SIZE = 0.5
POST_REACH = 0.3
#: Lines within this angle (radians, 0.5 degree) are parallel.
PARALLEL = 0.0087


def beam_pairs(lines, posts, *, min_depth=0.05):
    """Return the strips between pairs of parallel beam lines with posts between them.

    A rack row drawn as two beam lines with the uprights as small squares (or circles, or
    blocks) inside them, and no frame drawn across the row, encloses nothing, so its inside
    would read as floor open at both ends. A pair of parallel `lines` segments
    `min_depth` to BEAM_PAIR_DEPTH metres apart with no other segment of `lines` between
    them, and with at least BEAM_PAIR_POSTS `posts` standing between them (centre inside the
    band between the lines, within POST_REACH of the pair's common stretch), is a row: the
    strip over their common stretch is returned. An aisle between two such rows has the
    posts of both rows outside it and stays floor, however narrow.

    Parameters
    ----------
    lines : array of LineString, metres; open racking linework
    posts : array of Polygon, metres; closed racking shapes

    Returns
    -------
    ndarray of Polygon

    Examples
    --------
    >>> beams = segments([shapely.LineString([(0, 0), (10, 0)]),
    ...                   shapely.LineString([(0, 1), (10, 1)])])
    >>> posts = [shapely.box(x, 0, x + 0.1, 0.1) for x in (0, 5, 9.9)]
    >>> len(beam_pairs(beams, np.array([shapely.box(4, 3, 5, 4)])))  # no posts between: an aisle
    0
    >>> [round(strip.area, 9) for strip in beam_pairs(beams, np.array(posts))]
    [10.0]
    """
    none = np.empty(0, dtype=object)
    posts = np.asarray(posts, dtype=object)
    if len(lines) < 2 or not len(posts):
        return none
    box = shapely.bounds(posts)
    small = posts[np.hypot(box[:, 2] - box[:, 0], box[:, 3] - box[:, 1]) <= POST_SIZE * 1.5]
    if not len(small):
        return none
    lines = segments(lines)
    # a row's beam lines have posts beside them, on one face at least
    near_post = np.unique(shapely.STRtree(small).query(lines, predicate="dwithin",
                                                       distance=POST_REACH)[0])
    if not len(near_post):
        return none
    beside_post = np.zeros(len(lines), dtype=bool)
    beside_post[near_post] = True
    a, direction, normal, left, right, d, lo, hi = _parallel_pairs(lines, near_post,
                                                                   BEAM_PAIR_DEPTH)
    keep = (np.abs(d) >= min_depth) & (np.abs(d) <= BEAM_PAIR_DEPTH) & (hi - lo > POST_SIZE)
    left, right, d, lo, hi = left[keep], right[keep], d[keep], lo[keep], hi[keep]
    # a pair is a row only when no other line on the same side runs between over its stretch
    once = (left < right) | ~beside_post[right]      # a pair of two such lines counts once
    keep = once & _nothing_between(left, d, lo, hi)
    left, d, lo, hi = left[keep], d[keep], lo[keep], hi[keep]
    if not len(left):
        return none
    origin, along, across = a[left], direction[left], normal[left] * d[:, None]
    reach = _bands(origin, along, across, lo - POST_REACH, hi + POST_REACH)
    centres = shapely.centroid(small)
    band, post = shapely.STRtree(centres).query(reach, predicate="contains_properly")
    posts_in = np.bincount(band, minlength=len(left))
    # the strip runs on over the posts at its ends: beams drawn bay by bay between the
    # posts leave no gap at each frame
    vertices, owner = shapely.get_coordinates(small, return_index=True)
    per_post = np.bincount(owner, minlength=len(small))
    first = np.cumsum(per_post) - per_post
    hit = np.repeat(np.arange(len(band)), per_post[post])
    vertex = first[post][hit] + np.arange(len(hit)) - np.repeat(np.cumsum(per_post[post])
                                                                 - per_post[post], per_post[post])
    t = ((vertices[vertex] - origin[band[hit]]) * along[band[hit]]).sum(axis=1)
    t0, t1 = lo.copy(), hi.copy()
    np.minimum.at(t0, band[hit], t)
    np.maximum.at(t1, band[hit], t)
    row = posts_in >= BEAM_PAIR_POSTS
    return _bands(origin[row], along[row], across[row], t0[row], t1[row])


#: Racking lines with nothing across them and no posts: the widest gap (metres) between
#: two parallel lines that is a flue between back-to-back rows (0.1 to 0.3 m, common
#: practice), not a rack or an aisle.
FLUE_WIDTH = 0.35
#: How far across (metres) a line's neighbours are looked for; a side with none that near
#: faces open floor (or a wall, drawn on another layer).
ROW_LOOK = 6.0
#: Lines and common stretches shorter than this (metres) take no part: a row is at least
#: a bay long.
ROW_MIN_LENGTH = 1.0
#: A line with a wall this near behind it (metres) does not face open floor: it may be a
#: row's back against the wall or the front of a shelf drawn as one line, the wall its back.
WALL_BEHIND = 0.5


def beam_rows(lines, walls=None):
    """Return the strips between parallel racking lines that bound rack rows, drawn with
    nothing across the rows and no posts (:func:`beam_pairs` takes rows with posts).

    Each line is a face of a rack row: on one side of it is the rack, on the other an aisle,
    open floor or a wall, unless it faces a flue (a gap no wider than FLUE_WIDTH to a row
    behind it), and then the rack is on its other side. The gaps between neighbouring
    parallel lines (overlapping by ROW_MIN_LENGTH at least, nothing between them) are
    labelled rack or aisle from what is certain, and each line's rule carries the labels
    across a block of rows: a side with no line within ROW_LOOK, and no wall within
    WALL_BEHIND, is open, so the gap on the line's other side is a rack; a gap wider than
    BEAM_PAIR_DEPTH is an aisle. Narrow aisles between double rows (1.8 m between rows
    2.4 m deep) are told from the rows so, which no threshold on widths could do. A block
    whose labels contradict each other, or that nothing anchors, is left as it is drawn.

    Parameters
    ----------
    lines : array of LineString, metres; open racking linework
    walls : shapely geometry or None, the walls, metres

    Returns
    -------
    ndarray of Polygon, the rack gaps over each pair's common stretch

    Examples
    --------
    >>> faces = [0.0, 1.1, 4.1, 5.2]    # two 1.1 m rows with a 3 m aisle between them
    >>> rows = beam_rows(shapely.linestrings([[(0, y), (20, y)] for y in faces]))
    >>> sorted(round(strip.area, 9) for strip in rows)
    [22.0, 22.0]
    """
    none = np.empty(0, dtype=object)
    lines = segments(lines)
    lines = lines[shapely.length(lines) >= ROW_MIN_LENGTH]
    if len(lines) < 2:
        return none
    a, direction, normal, left, right, d, lo, hi = _parallel_pairs(
        lines, np.arange(len(lines)), ROW_LOOK)
    length = shapely.length(lines)
    keep = (np.abs(d) > 1e-6) & (np.abs(d) <= ROW_LOOK) & (hi - lo >= ROW_MIN_LENGTH)
    left, right, d, lo, hi = left[keep], right[keep], d[keep], lo[keep], hi[keep]
    if not len(left):
        return none
    # neighbours only: no other line on the same side between them over their stretch
    keep = _nothing_between(left, d, lo, hi, slack=1e-6)
    left, right, d, lo, hi = left[keep], right[keep], d[keep], lo[keep], hi[keep]
    # a gap is one pair of lines, seen from either: its label is shared
    key = np.minimum(left, right) * len(lines) + np.maximum(left, right)
    gaps, gap_of = np.unique(key, return_inverse=True)
    width = np.zeros(len(gaps))
    width[gap_of] = np.abs(d)
    flue = width <= FLUE_WIDTH
    side = (d > 0).astype(int)                      # 0: right of the line, 1: left
    label = np.full(len(gaps), -1)                  # 1 rack, 0 aisle, -1 not known yet
    label[width > BEAM_PAIR_DEPTH] = 0
    # per line and side, its gaps; a side with none (and no wall behind) is open, one with
    # a flue faces a row
    by_side = {}
    for line, where, gap in zip(left.tolist(), side.tolist(), gap_of.tolist()):
        by_side.setdefault((line, where), []).append(gap)
    walled = np.zeros((len(lines), 2), dtype=bool)
    if walls is not None and not walls.is_empty:
        shapely.prepare(walls)
        # a strip beside the line but for its ends, which may run into an end wall
        for where, sign in ((0, -1.0), (1, 1.0)):
            behind = _bands(a + normal * sign * 1e-6, direction,
                            normal * sign * WALL_BEHIND, np.full(len(lines), WALL_BEHIND),
                            length - WALL_BEHIND)
            walled[:, where] = shapely.intersects(walls, behind)
    anchor = label.copy()       # what is certain of each gap; 2: certain both ways
    rules = []                  # (gaps on one side, gaps on the other): one rack, one not
    for line in range(len(lines)):
        sides = [[g for g in by_side.get((line, where), []) if not flue[g]] for where in (0, 1)]
        faces = [any(flue[g] for g in by_side.get((line, where), [])) for where in (0, 1)]
        for where in (0, 1):
            if sides[where] and (faces[1 - where] or not (by_side.get((line, 1 - where))
                                                          or walled[line, 1 - where])):
                for g in sides[where]:      # the rack is on this side
                    anchor[g] = 1 if anchor[g] in (-1, 1) else 2
        if sides[0] and sides[1] and not (faces[0] or faces[1]):
            rules.append((sides[0], sides[1]))
    # carry the labels: the gaps on one side of a line share a label, the other side's is
    # the other one (the gaps joined with the parity of their labels, in one pass)
    joins = [(side[0], g, 0) for one, two in rules for side in (one, two) for g in side[1:]]
    joins += [(one[0], two[0], 1) for one, two in rules]
    label = _two_labels(len(gaps), joins, anchor, too_wide=width > BEAM_PAIR_DEPTH)
    # a contradiction anywhere in a block of rows (lines joined by gaps) leaves the whole
    # block as drawn
    first, second = gaps // len(lines), gaps % len(lines)
    block = components(len(lines), first, second)
    spoilt = np.isin(block, block[first[label == 2]])
    rack = (label[gap_of] == 1) & ~spoilt[left]
    # each rack gap once, over the common stretch seen from one of its lines
    once = np.zeros(len(left), dtype=bool)
    once[np.unique(gap_of, return_index=True)[1]] = True
    rack &= once
    if not rack.any():
        return none
    origin, along = a[left[rack]], direction[left[rack]]
    across = normal[left[rack]] * d[rack][:, None]
    return _bands(origin, along, across, lo[rack], hi[rack])


def _parallel_pairs(lines, among, reach):
    """Pairs of parallel segments (two-point LineStrings) within `reach` metres of each
    other, the first of each pair from `among` (sorted), grouped by it: each segment's
    start (S, 2), unit direction and left normal; the pairs' first and second segments,
    the second's offset across the first (its middle's, positive to the left) and their
    common stretch along the first, from `lo` to `hi` metres from its start."""
    xy = shapely.get_coordinates(lines).reshape(-1, 2, 2)
    a, b = xy[:, 0], xy[:, 1]
    length = np.hypot(*(b - a).T)
    direction = (b - a) / length[:, None]
    normal = np.c_[-direction[:, 1], direction[:, 0]]
    query, right = shapely.STRtree(lines).query(lines[among], predicate="dwithin",
                                                distance=reach)
    left = among[query]
    u, v = direction[left], direction[right]
    keep = (left != right) & (np.abs(u[:, 0] * v[:, 1] - u[:, 1] * v[:, 0]) < PARALLEL)
    left, right = left[keep], right[keep]
    # the other line's ends on this line's axis: along (t) and across (d)
    ta = ((a[right] - a[left]) * direction[left]).sum(axis=1)
    tb = ((b[right] - a[left]) * direction[left]).sum(axis=1)
    d = (((a[right] + b[right]) / 2 - a[left]) * normal[left]).sum(axis=1)
    lo = np.maximum(0.0, np.minimum(ta, tb))
    hi = np.minimum(length[left], np.maximum(ta, tb))
    return a, direction, normal, left, right, d, lo, hi


def _nothing_between(left, d, lo, hi, slack=0.0):
    """Which pairs (as `_parallel_pairs` gives them, `left` sorted) have no other pair of
    the same first segment on the same side nearer across, overlapping their stretch by
    more than `slack` metres."""
    start = np.searchsorted(left, left, side="left")
    count = np.searchsorted(left, left, side="right") - start
    pair = np.repeat(np.arange(len(left)), count)
    other = start[pair] + np.arange(len(pair)) - np.repeat(np.cumsum(count) - count, count)
    inside = ((np.sign(d[other]) == np.sign(d[pair])) & (np.abs(d[other]) < np.abs(d[pair]) - 1e-6)
              & (hi[other] > lo[pair] + slack) & (lo[other] < hi[pair] - slack))
    return np.bincount(pair[inside], minlength=len(left)) == 0


def _two_labels(count, joins, anchor, too_wide):
    """Labels 0 or 1 for `count` items joined by `joins`, (a, b, parity) each: a's label
    xor b's is the parity. `anchor` (count,) fixes some: 0 or 1, -1 free, 2 both (already a
    contradiction). Returns (count,): each item's label where a fixed item settles its
    group, -1 where nothing does, and 2 throughout a group whose joins or anchors
    contradict each other or that labels 1 an item `too_wide` (count,) for it.

    Examples
    --------
    >>> _two_labels(4, [(0, 1, 1), (1, 2, 1)], np.array([1, -1, -1, -1]),
    ...             np.zeros(4, bool)).tolist()
    [1, 0, 1, -1]
    >>> _two_labels(3, [(0, 1, 1), (1, 2, 1), (0, 2, 1)], np.array([-1, -1, -1]),
    ...             np.zeros(3, bool)).tolist()           # an odd cycle
    [2, 2, 2]
    """
    parent, parity = list(range(count)), [0] * count    # parity: label xor its parent's

    def find(item):
        path = []
        while parent[item] != item:
            path.append(item)
            item = parent[item]
        total = 0
        for node in reversed(path):     # nearest the root first: compress the path
            total ^= parity[node]
            parity[node], parent[node] = total, item
        return item

    bad = set()
    for a, b, odd in joins:
        root_a, root_b = find(a), find(b)
        if root_a == root_b:
            if parity[a] ^ parity[b] != odd:
                bad.add(root_a)
            continue
        parent[root_a], parity[root_a] = root_b, parity[a] ^ parity[b] ^ odd
        if root_a in bad:
            bad.add(root_b)
    value = {}
    for item in np.flatnonzero(anchor >= 0).tolist():
        root = find(item)
        own = 2 if anchor[item] == 2 else int(anchor[item]) ^ parity[item]
        if own == 2 or value.get(root, own) != own:
            bad.add(root)
        value[root] = own
    label = np.full(count, -1)
    for item in range(count):
        root = find(item)
        if root in value:
            label[item] = value[root] ^ parity[item] if value[root] != 2 else 2
    for item in np.flatnonzero(too_wide & (label == 1)).tolist():
        bad.add(find(item))
    for item in range(count):
        if find(item) in bad:
            label[item] = 2
    return label


def _bands(origin, along, across, t0, t1):
    """Rectangles from `t0` to `t1` along the unit vectors `along`, spanning `across`."""
    start, end = origin + along * t0[:, None], origin + along * t1[:, None]
    return shapely.polygons(np.stack([start, end, end + across, start + across], axis=1))


#: Endpoint gaps up to this wide (metres) are closed in racking, keep-out and shared-zone
#: linework, whatever the drawing's gap tolerance: an outline drawn without snapping (a
#: rack row's corners a few centimetres short) would otherwise enclose nothing, and the
#: inside of the rack would read as floor with a lane through it. No robot passes a gap
#: this narrow, so closing one never takes away a way through.
FILL_GAP = 0.1


def filled_regions(lines, rings, fills, *, gap_tolerance, nominal_thickness, posts=False,
                   walls=None, loose_out=None):
    """Return the area racking, keep-out or shared-zone linework covers, metres.

    Closed shapes are filled; open lines that together enclose faces, alone or with the
    outlines of closed shapes they reach, fill those faces (a rack row drawn as two beam
    lines between upright frames drawn as rectangles: each bay is closed by two beams and
    two frames), endpoint gaps up to `gap_tolerance` or FILL_GAP closed; with `posts`
    (racking), two parallel lines with small closed shapes standing between them fill the
    strip between them (:func:`beam_pairs`), and parallel lines that bound rack rows with
    nothing across them fill the rows (:func:`beam_rows`, beside `walls`); open lines that
    enclose nothing and lie outside every filled area become bands `nominal_thickness`
    wide (those that bound no filled area are appended to `loose_out`, a list, where
    given).

    Examples
    --------
    >>> corner = 0.03          # a 2 m x 1 m outline whose corners stop 3 cm short
    >>> sides = [((corner, 0), (2 - corner, 0)), ((2, corner), (2, 1 - corner)),
    ...          ((2 - corner, 1), (corner, 1)), ((0, 1 - corner), (0, corner))]
    >>> area = filled_regions(shapely.linestrings(sides), [], [], gap_tolerance=0.01,
    ...                       nominal_thickness=0.1)
    >>> round(area.area, 9)     # analytic: 2 m^2 less four corner triangles of 0.03^2 / 2
    1.9982
    """
    rings = np.asarray(rings, dtype=object)
    polygons = shapely.make_valid(shapely.polygons(rings)) if len(rings) else rings
    shapes = np.concatenate([polygons, np.asarray(fills, dtype=object)])
    area = union_polygons(shapes)
    lines = np.asarray(lines, dtype=object)
    if len(lines) and not area.is_empty:
        lines = lines[~covered(lines, area, pieces=shapes)]
        if len(lines):
            # lines that stray from the closed shapes by rounding alone (a rotated rack row's
            # lines between bays, each end placed on its own, 0.1 mm out of the row's
            # outline) close nothing: no faces need finding for them
            lines = lines[~shapely.covered_by(lines, shapely.buffer(area, TILE_SNAP))]
    if not len(lines):
        return area
    if len(polygons):
        _, reached = shapely.STRtree(polygons).query(lines, predicate="dwithin",
                                                     distance=max(gap_tolerance, 1e-9))
        outlines = shapely.get_parts(shapely.boundary(polygons[np.unique(reached)]))
        lines = np.concatenate([lines, outlines])
    edges = node_lines(lines, gap_tolerance=max(gap_tolerance, FILL_GAP))
    faces = shapely.get_parts(shapely.polygonize(edges))
    filled = union_polygons(np.concatenate([faces, [area]]))
    # each face and shape lies inside `filled`: most edges are settled by one of them
    loose = edges[~covered(edges, filled, pieces=np.concatenate([faces, shapes]))]
    if posts and len(loose) > 1 and len(polygons):
        strips = beam_pairs(loose, polygons)
        if len(strips):
            filled = union_polygons(np.concatenate([strips, [filled]]))
            loose = loose[~covered(loose, filled, pieces=strips)]
    if posts and len(loose) > 1:
        strips = beam_rows(loose, walls)
        if len(strips):
            filled = union_polygons(np.concatenate([strips, [filled]]))
            loose = loose[~covered(loose, filled, pieces=strips)]
    if loose_out is not None and len(loose):
        # lines along a filled area's edge (within 1 mm) that rounding keeps from being
        # covered (a rotated row's faces) bound something: only the others are loose
        probe = shapely.line_interpolate_point(loose[:, None], [0.0, 0.5, 1.0], normalized=True)
        loose_out.extend(loose[~(shapely.distance(filled, probe) <= 1e-3).all(axis=1)])
    return as_multipolygon(shapely.union_all([filled, bands(loose, nominal_thickness)]))


def boundary_regions(lines, rings, fills, *, gap_tolerance, nominal_thickness):
    """Return (boundary band, area inside the boundary) from boundary-layer linework, metres.

    Only the outline counts: the faces the linework closes are filled, and the band follows
    the outline of their union; lines inside it (a floor grid, tile joints, a level change
    drawn on the same layer) are not obstacles.
    """
    edges = node_lines(np.concatenate([np.asarray(lines, dtype=object),
                                       np.asarray(rings, dtype=object)]), gap_tolerance=gap_tolerance)
    faces = shapely.get_parts(shapely.polygonize(edges)) if len(edges) else edges
    inside = fill_holes(shapely.union_all(np.concatenate([faces, np.asarray(fills, dtype=object)])))
    outline = shapely.get_parts(shapely.boundary(inside)) if not inside.is_empty else edges[:0]
    return bands(outline, nominal_thickness), inside


def free_space(container, obstacles):
    """Return `container` minus the union of `obstacles`, one polygon per component.

    The result is normalized (`shapely.normalize`: parts, rings and each ring's first vertex
    in a canonical order), so that how the obstacles were united, which decides where GEOS
    starts each ring, does not decide where the boundary is sampled.
    """
    blocked = union_touching(shapely.get_parts(
        [geometry for geometry in obstacles if not geometry.is_empty]))
    free = as_multipolygon(shapely.difference(container, blocked))
    parts = shapely.get_parts(free)
    return shapely.normalize(as_multipolygon(parts[shapely.area(parts) > 1e-6]))


def union_touching(polygons):
    """Return the union of an array of valid polygons, united only in groups that touch.

    Polygons that share no point need no union: a warehouse's round columns each touch a
    rack row or nothing, and one union of all of them (each part of every region again)
    costs n log n where the groups cost a few polygons each. The groups' unions share no
    point, so together they are a valid MultiPolygon with the same area as the whole union;
    the order of its parts and rings differs (see `free_space`).

    Examples
    --------
    >>> parts = np.array([shapely.box(0, 0, 2, 1), shapely.box(1, 0, 3, 1), shapely.box(5, 0, 6, 1)])
    >>> merged = union_touching(parts)
    >>> len(merged.geoms), merged.area, merged.equals(shapely.union_all(parts))
    (2, 4.0, True)
    """
    polygons = np.asarray(polygons, dtype=object)
    polygons = polygons[~shapely.is_empty(polygons)] if len(polygons) else polygons
    count = len(polygons)
    if count < 2:
        return as_multipolygon(shapely.union_all(polygons))
    left, right = shapely.STRtree(polygons).query(polygons, predicate="intersects")
    label = components(count, left, right)
    order = np.argsort(label, kind="stable")
    start = np.searchsorted(label[order], np.arange(label.max() + 2))
    pieces = []
    for begin, end in zip(start[:-1], start[1:]):
        members = polygons[order[begin:end]]
        pieces.append(members if len(members) == 1 else
                      shapely.get_parts(shapely.union_all(members)))
    return as_multipolygon(np.concatenate(pieces))


#: How far, in closing widths, a morphological closing with mitred joins reaches: a point
#: the closing of the walls adds or leaves out because of one piece lies within a mitred
#: grow (GEOS's default mitre limit, 5 half-widths) and a mitred shrink of it, 5 widths, and
#: a margin of a fifth of a width.
CLOSING_REACH = 5.2


def pieces_near_edge(walls, area, reach):
    """Return the pieces of `walls` outside `area` or within `reach` metres of its edge, as
    a MultiPolygon; None when that is every piece.

    Whatever a closing of the walls adds or removes because of a piece farther than the
    closing's reach inside `area` lies inside `area`: united with `area`, the closing of
    these pieces alone covers the same ground as that of all of them.

    Examples
    --------
    >>> hall = shapely.box(0, 0, 100, 60)
    >>> walls = shapely.MultiPolygon([shapely.box(0, 0, 100, 0.3), shapely.box(50, 30, 50.4, 30.4),
    ...                               shapely.box(5, 30, 5.4, 30.4)])
    >>> len(pieces_near_edge(walls, hall, 10.0).geoms)
    2
    """
    pieces = shapely.get_parts(walls)
    if len(pieces) < 2:
        return None
    shapely.prepare(area)
    try:
        inside = shapely.contains_properly(area, pieces)
    finally:
        shapely.destroy_prepared(area)
    keep = ~inside
    inner = np.flatnonzero(inside)
    if len(inner):
        edge = shapely.STRtree(segments(shapely.get_parts(shapely.boundary(area))))
        keep[inner[edge.query(pieces[inner], predicate="dwithin", distance=reach)[0]]] = True
    if keep.all():
        return None
    return shapely.multipolygons(pieces[keep])


#: A pocket of the walls' outline that the closing fills whole is floor, not a notch in the
#: facade, when it is at least POCKET_DEPTH times as deep as its mouths are wide, no wider
#: than POCKET_MAX_WIDTH, and each mouth spans at least POCKET_MOUTH_SPAN of its width: a
#: corridor whose end is open with nothing drawn across it. An entrance recess or the bays
#: between pilasters are shallower, a courtyard is wider, and a space whose openings are
#: slits at its tapering ends (the wedge under a roof drawn in a section) is no corridor.
POCKET_DEPTH = 3.0
POCKET_MAX_WIDTH = 4.0
POCKET_MOUTH_SPAN = 0.8


def _deep_pockets(closed, base, min_area):
    """Return [(x, y, mouth width), ...] and the pockets of `closed` outside `base` that are
    deep and narrow like a corridor (POCKET_DEPTH, POCKET_MAX_WIDTH, POCKET_MOUTH_SPAN),
    metres."""
    parts = shapely.get_parts(shapely.difference(closed, base))
    parts = parts[shapely.area(parts) >= min_area]
    leaks, pockets = [], []
    for part in parts:
        near = shapely.intersection(base, shapely.buffer(shapely.envelope(part), 0.01))
        mouths = shapely.get_parts(shapely.line_merge(shapely.difference(
            shapely.boundary(part), shapely.buffer(near, 1e-4))))
        spans = shapely.length(mouths)
        if not len(mouths) or part.area < POCKET_DEPTH * spans.sum() ** 2:
            continue
        width = 2.0 * shapely.maximum_inscribed_circle(part, 1e-3).length
        if width > POCKET_MAX_WIDTH or spans.min() < POCKET_MOUTH_SPAN * width:
            continue
        middles = shapely.line_interpolate_point(mouths, 0.5, normalized=True)
        leaks += [(float(middle.x), float(middle.y), float(span))
                  for middle, span in zip(middles, spans)]
        pockets.append(part)
    return leaks, pockets


def find_leaks(walls, enclosed, *, widths=LEAK_WIDTHS, min_area=1.0):
    """Find gaps in the walls through which the building's floor escapes to the outside.

    The walls are closed morphologically (grown by w / 2, shrunk by w / 2) for growing w.
    The area this newly encloses at the largest w is the floor that escaped; the smallest w
    that seals most of it (90 %) finds the gaps: the closing patches touching both that floor
    and the outside. Patches filling the outside corners of the walls touch no floor.
    Floor the closing fills itself, a pocket deep and narrow like a corridor open at its end
    (`_deep_pockets`), escaped too: its mouth is a gap.

    Returns
    -------
    leaks : list of (x, y, width)
        Middle of each gap and its width, metres.
    sealed : MultiPolygon
        `enclosed` plus the floor the gaps let out.
    """
    base = fill_holes(enclosed)
    if walls.is_empty:
        return [], base

    def closing(width, pieces=walls):
        """(closed, sealed, newly enclosed) at this closing width: the walls closed, the
        closed walls and the floor with their holes filled, and what the filling added."""
        closed = shapely.buffer(shapely.buffer(pieces, width / 2.0, join_style="mitre"),
                                -width / 2.0, join_style="mitre")
        covered = shapely.union_all([closed, base])
        # where `covered` has no hole, nothing is newly enclosed and it is sealed as it is:
        # the overlay of two nearly identical geometries, the slowest call here, is not made
        # (on a floor that escapes, the closings too narrow to seal it spent 0.23 s of 0.31 s
        # each in it)
        if not shapely.get_num_interior_rings(shapely.get_parts(covered)).any():
            return closed, covered, _EMPTY
        sealed = fill_holes(covered)
        return closed, sealed, shapely.difference(sealed, covered)

    # the widest closing alone decides whether anything escaped (the usual answer: no);
    # pieces of wall deep inside the floor cannot change that answer, so it is first asked
    # without them, and only a leak found that way is looked for again with every piece
    outer = pieces_near_edge(walls, base, CLOSING_REACH * widths[-1])
    if outer is not None:
        closed, _, escaped = closing(widths[-1], outer)
        if escaped.area < min_area:
            return _with_pockets([], base, closed, min_area)
    # the widest closing first, then from the narrowest up; made two at a time on two
    # threads, the narrowest is ready as soon as a leak is found (when none is, the usual
    # answer, it was made alongside the widest for nothing, on the other core)
    with contextlib.closing(_two_at_a_time(closing, [widths[-1], *widths[:-1]])) as trials:
        widest = last_closed, _, escaped = next(trials)
        if escaped.area < min_area:
            return _with_pockets([], base, last_closed, min_area)
        # the widest closing seals all that escaped, when no narrower one seals most of it
        closed, sealed, interior = next((trial for trial in trials
                                         if trial[2].area >= 0.9 * escaped.area), widest)
    outside = shapely.difference(shapely.envelope(walls).buffer(max(widths) * 2.0), base)
    exterior = shapely.difference(outside, sealed)
    patches = shapely.get_parts(shapely.difference(closed, walls))
    # drop the slivers the closing leaves along thin (single-line) walls: open by 1 mm
    patches = shapely.get_parts(shapely.buffer(shapely.buffer(patches, -1e-3), 1e-3))
    patches = patches[~shapely.is_empty(patches)]
    near = shapely.buffer(patches, 1e-6)
    opening = shapely.intersects(near, interior) & shapely.intersects(near, exterior)
    inner_edge = shapely.boundary(interior)
    leaks = []
    for patch, grown in zip(patches[opening], near[opening]):
        span = shapely.length(shapely.intersection(grown, inner_edge))
        centre = patch.centroid
        leaks.append((float(centre.x), float(centre.y), float(span)))
    return _with_pockets(leaks, as_multipolygon(sealed), last_closed, min_area)


def _two_at_a_time(closing, widths):
    """Yield ``closing(width)`` for each of `widths` in turn, made two at a time on two
    threads (one at a time on one core).

    Each closing is a few GEOS calls on every wall piece, which release the GIL, so two take
    little more than the time of one. A closing does not depend on the others, so the
    answers are the same as one at a time. Close the generator when done with it: that
    shuts its threads (a thread left running would keep the build from forking,
    clearway.side_by_side).
    """
    if cores() < 2:
        for width in widths:
            yield closing(width)
        return
    with ThreadPoolExecutor(2) as pool:
        for start in range(0, len(widths), 2):
            yield from list(pool.map(closing, widths[start:start + 2]))


def _with_pockets(leaks, sealed, closed, min_area):
    """`leaks` and `sealed` with the deep pockets of `closed` outside `sealed` added."""
    more, pockets = _deep_pockets(closed, fill_holes(sealed), min_area)
    if not pockets:
        return sorted(leaks), sealed
    return sorted(leaks + more), as_multipolygon(shapely.union_all([sealed, *pockets]))
