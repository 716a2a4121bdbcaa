"""Openings in the walls: find the gaps between wall ends that face each other, and say
what fills each one (a door, a window, a closed opening or nothing).

Walls stop at every door and window; the door leaf, its swing and the glazing are drawn on
other layers or in blocks. An opening is found from the wall linework alone: a wall end (the
short face that closes a wall between its two long faces, or the free end of a single-line
wall) whose outward direction meets another wall face, parallel to it, within a few metres,
with nothing of the wall in between. What is drawn inside the gap on the opening layers and
in opening blocks classifies it. All lengths in metres.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass

import numpy as np
import shapely

from clearway.converter.grouping import pairs_within
from clearway.converter.polygons import THICK_WALL_MAX, segments

#: Gaps wider than these are not openings of that kind (metres): an open gap with nothing
#: drawn in it; a door (single, double, sliding, dock and vehicle doors, common practice
#: 0.6 to 4.5 m); a window or glazed front.
MAX_OPEN_WIDTH = 2.6
MAX_DOOR_WIDTH = 6.0
MAX_WINDOW_WIDTH = 12.0
#: A door swing is drawn from 90 degrees down to about a quarter of that, leaf ajar
#: (common practice); a shorter arc is something else.
MIN_SWING_SWEEP = 20.0
#: Narrowest gap taken for an opening, metres (less is a drafting slit).
MIN_OPENING_WIDTH = 0.3
#: A wall piece whose bounding box has a shorter diagonal than this is a column or a pier,
#: not a wall that an opening interrupts (metres).
MIN_WALL_PIECE = 1.2


@dataclass(frozen=True)
class Gap:
    """A gap between two wall faces: from `start` (on a wall end) to `end` along `direction`.

    start, end : (2,) arrays, metres; the middle of the wall at each jamb.
    depth : the wall's thickness at the jamb (0 for a single-line wall), metres.
    quad : Polygon, the gap itself (the jamb face swept across to the other side).
    minor : found from a pier or column (`wall_ends`): an opening only when something fills it.
    """

    start: np.ndarray
    end: np.ndarray
    depth: float
    quad: object
    minor: bool = False

    # computed once: sorting, merging, classifying and reporting the gaps of a large
    # floor ask for them tens of thousands of times
    @functools.cached_property
    def width(self) -> float:
        return float(np.hypot(*(self.end - self.start)))

    @functools.cached_property
    def middle(self) -> np.ndarray:
        return (self.start + self.end) / 2.0


def line_ends(lines):
    """Return (first, second, last, second last) vertices of each line, four (N, 2) arrays.

    Examples
    --------
    >>> first, second, last, before = line_ends([shapely.LineString([(0, 0), (1, 0), (1, 2)])])
    >>> first.tolist(), second.tolist(), last.tolist(), before.tolist()
    ([[0.0, 0.0]], [[1.0, 0.0]], [[1.0, 2.0]], [[1.0, 0.0]])
    """
    xy, line = shapely.get_coordinates(np.asarray(lines, dtype=object), return_index=True)
    start = np.searchsorted(line, np.arange(len(lines)))
    end = np.r_[start[1:], len(xy)] - 1
    return xy[start], xy[start + 1], xy[end], xy[end - 1]


def close_open_wall_ends(lines, *, max_thickness, tolerance=0.01):
    """Return short segments closing double-line walls whose two faces end open.

    A free end of wall linework (reached by one line only) is paired with another free end
    at most `max_thickness` away when both lines run parallel there and the segment between
    the ends is square to them: the two faces of one wall stopping at an opening with no
    jamb line drawn. Closing them lets the wall between the faces become solid.

    Parameters
    ----------
    lines : array of LineString, noded (metres)

    Returns
    -------
    ndarray of LineString
    """
    lines = np.asarray(lines, dtype=object)
    if len(lines) < 2:
        return np.empty(0, dtype=object)
    first, second, last, before = line_ends(lines)
    ends = np.concatenate([first, last])
    inward = np.concatenate([second - first, before - last])
    inward /= np.maximum(np.hypot(inward[:, 0], inward[:, 1]), 1e-12)[:, None]
    key = np.round(ends / tolerance).astype(np.int64)
    _, inverse, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
    free = np.flatnonzero(counts[inverse.ravel()] == 1)
    if len(free) < 2:
        return np.empty(0, dtype=object)
    first, second = pairs_within(ends[free], max_thickness)
    if not len(first):
        return np.empty(0, dtype=object)
    a, b = free[first], free[second]
    across = ends[b] - ends[a]
    length = np.hypot(across[:, 0], across[:, 1])
    ok = length > tolerance
    unit = across / np.maximum(length, 1e-12)[:, None]
    parallel = np.abs(np.sum(inward[a] * inward[b], axis=1)) > 0.97
    same_way = np.sum(inward[a] * inward[b], axis=1) > 0     # both faces run back into the wall
    square = (np.abs(np.sum(unit * inward[a], axis=1)) < 0.26) & \
        (np.abs(np.sum(unit * inward[b], axis=1)) < 0.26)
    keep = ok & parallel & same_way & square
    a, b, length = a[keep], b[keep], length[keep]
    # each free end joins its nearest partner only; between partners equally near, the pair
    # drawn first (the pairs come in the order of their ends' lines), so the choice does not
    # depend on a search tree's internal order (a row of stair treads 0.25 m apart pairs
    # from its first end)
    order = np.argsort(length, kind="stable")
    used, closers = set(), []
    for index in order:
        i, j = int(a[index]), int(b[index])
        if i in used or j in used:
            continue
        used.update((i, j))
        closers.append(shapely.LineString([ends[i], ends[j]]))
    return np.array(closers, dtype=object)


def wall_ends(solid, loose, *, max_thickness, hints=None):
    """Return the wall ends: (middle (E, 2), outward direction (E, 2), face length (E,), minor (E,)).

    A wall end is a face of a solid wall no longer than `max_thickness` + 5 cm whose two
    neighbouring faces turn away from it at about right angles on the same side and run
    back parallel (the end of a bar), on a wall piece larger than a column; or the free end
    of a single-line wall (`loose` lines, face length 0).

    Faces of pieces smaller than a wall (piers between a door and its sidelights, columns)
    are ends only within 0.3 m of `hints` (opening linework and swing arcs, metres); they
    are `minor`, and their gaps count only when something fills them (a door, a window, or
    an overhead door drawn shut as one line across).
    """
    middles, directions, lengths, minor = [], [], [], []
    pieces = shapely.get_parts(solid)
    if len(pieces):
        bounds = shapely.bounds(pieces)
        diagonal = np.hypot(bounds[:, 2] - bounds[:, 0], bounds[:, 3] - bounds[:, 1])
        small = diagonal < MIN_WALL_PIECE
        is_minor = np.zeros(len(pieces), dtype=bool)
        if hints is not None and len(hints) and small.any():
            near = shapely.STRtree(hints).query(pieces[small], predicate="dwithin", distance=0.3)
            is_minor[np.flatnonzero(small)[np.unique(near[0])]] = True
        chosen = ~small | is_minor
        pieces = shapely.orient_polygons(shapely.simplify(pieces[chosen], 0.003), exterior_cw=False)
        for piece, piece_minor in zip(pieces, is_minor[chosen]):
            for ring in shapely.get_rings(piece):
                found = _bar_ends(np.asarray(ring.coords)[:-1, :2], max_thickness)
                middles += found[0]
                directions += found[1]
                lengths += found[2]
                minor += [bool(piece_minor)] * len(found[0])
    loose = _without_ticks(np.asarray(loose, dtype=object))
    if len(loose):
        first, second, last, before = line_ends(loose)
        ends = np.concatenate([first, last])
        outward = np.concatenate([first - second, last - before])
        key = np.round(ends / 0.005).astype(np.int64)
        _, inverse, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
        free = counts[inverse.ravel()] == 1
        norm = np.hypot(outward[:, 0], outward[:, 1])
        free &= norm > 1e-9
        middles += list(ends[free])
        directions += list(outward[free] / norm[free][:, None])
        lengths += [0.0] * int(free.sum())
        minor += [False] * int(free.sum())
    if not middles:
        return np.empty((0, 2)), np.empty((0, 2)), np.empty(0), np.empty(0, dtype=bool)
    return (np.array(middles, dtype=float), np.array(directions, dtype=float), np.array(lengths),
            np.array(minor, dtype=bool))


def _bar_ends(xy, max_thickness):
    """Ends of bars on one counter-clockwise ring `xy` (open, (N, 2)): (middles, outward, lengths)."""
    if len(xy) < 4:
        return [], [], []
    edge = np.roll(xy, -1, axis=0) - xy
    length = np.hypot(edge[:, 0], edge[:, 1])
    unit = edge / np.maximum(length, 1e-12)[:, None]
    before, after = np.roll(unit, 1, axis=0), np.roll(unit, -1, axis=0)
    # material on the left of every edge: a convex corner turns left
    turn_in = before[:, 0] * unit[:, 1] - before[:, 1] * unit[:, 0]
    turn_out = unit[:, 0] * after[:, 1] - unit[:, 1] * after[:, 0]
    antiparallel = np.sum(before * after, axis=1) < -0.9
    # a face as long as a thick masonry wall (up to THICK_WALL_MAX) is the wall's end only
    # where the wall runs back along both its sides for half as long again: a short stub's
    # long side, a pier's side, run back less
    run_back = np.minimum(np.roll(length, 1), np.roll(length, -1))
    thick = (length > max_thickness + 0.05) & (length <= THICK_WALL_MAX + 0.05) & \
        (run_back >= THICK_RUN_BACK * length)
    end = ((length <= max_thickness + 0.05) | thick) & (length >= 0.02) & \
        (turn_in > 0.9) & (turn_out > 0.9) & antiparallel & \
        (np.roll(length, 1) > 0.05) & (np.roll(length, -1) > 0.05)
    index = np.flatnonzero(end)
    middles = list(xy[index] + edge[index] / 2.0)
    outward = [(unit[i, 1], -unit[i, 0]) for i in index]  # right of the edge: out
    return middles, outward, list(length[index])


#: A wall end longer than the usual wall thickness (masonry up to THICK_WALL_MAX) needs the
#: wall to run back along both its sides at least this many times the end's length.
THICK_RUN_BACK = 1.5

#: Short strokes across a single-line wall mark a jamb (common practice); no longer than this.
MAX_TICK = 0.35


def _without_ticks(lines):
    """Drop the short strokes that mark jambs across single-line walls: pieces up to MAX_TICK
    long with a free end, so that the wall line they cross ends free there."""
    if len(lines) < 2:
        return lines
    for _ in range(2):  # a tick crossing the wall is noded into two halves, each with a free end
        first, _, last, _ = line_ends(lines)
        ends = np.concatenate([first, last])
        key = np.round(ends / 0.005).astype(np.int64)
        _, inverse, counts = np.unique(key, axis=0, return_inverse=True, return_counts=True)
        degree = counts[inverse.ravel()]
        count = len(lines)
        free = (degree[:count] == 1) | (degree[count:] == 1)
        attached = (degree[:count] > 1) | (degree[count:] > 1)
        tick = free & attached & (shapely.length(lines) <= MAX_TICK)
        if not tick.any():
            break
        lines = lines[~tick]
    return lines


def find_gaps(solid, loose, *, max_thickness, max_width=MAX_WINDOW_WIDTH, hints=None, loose_cap=0.0):
    """Find the gaps between wall ends and the wall faces they face.

    From each wall end, rays go out along its direction (from the middle and, on a thick
    wall, from points a fifth of the face in from each corner). The gap is accepted when all
    rays meet a wall within `max_width` at nearly the same distance (the face opposite is
    parallel to the end) and the gap swept between holds no wall. Two ends facing each
    other give one gap. `hints` (opening linework, metres) lets piers near them have ends
    (`wall_ends`). A single-line wall's band reaches `loose_cap` beyond the line's end (its
    round cap): rays from such an end start beyond it.

    Returns
    -------
    list of Gap
    """
    middles, directions, lengths, minor = wall_ends(solid, loose, max_thickness=max_thickness,
                                                    hints=hints)
    if not len(middles):
        return []
    loose = np.asarray(loose, dtype=object)
    # the solid walls are one union already: only the single-line walls' bands join them
    # (uniting the 228 wall parts of the mixed suite floor as first drawn, at 20,000 bays,
    # again took 0.12 s)
    walls = shapely.union(solid, shapely.union_all(
        shapely.buffer(loose, 0.005, cap_style="flat"))) if len(loose) else solid
    outline = shapely.boundary(walls)
    tree_target = segments(shapely.get_parts(outline))
    if not len(tree_target):
        return []
    tree = shapely.STRtree(tree_target)
    normals = np.c_[-directions[:, 1], directions[:, 0]]
    offsets = np.array([0.0, -0.3, 0.3])
    start_eps = 0.002
    # every ray at once: one tree query and one intersection over all (ray, segment) pairs
    # (a segment each, not a whole outline ring: a ring of a large wall network holds
    # thousands of vertices, and each ray would cost all of them)
    # three rays from an end wider than 4 cm, one from the others, numbered end by end
    count = np.where(lengths > 0.04, len(offsets), 1)
    owner = np.repeat(np.arange(len(middles)), count)
    offset = offsets[np.arange(len(owner)) - np.repeat(np.cumsum(count) - count, count)]
    lead = np.where(lengths > 0, start_eps, start_eps + loose_cap)[owner]
    origins = middles[owner] + normals[owner] * offset[:, None] * lengths[owner][:, None] + \
        directions[owner] * lead[:, None]
    leads = lead.tolist()
    rays = shapely.linestrings(np.stack([origins, origins + directions[owner] * max_width], axis=1))
    ray_index, target_index = tree.query(rays, predicate="intersects")
    near = _nearest_pairs(origins, directions[owner], tree_target, ray_index, target_index)
    ray_index, target_index = ray_index[near], target_index[near]
    points, point_hit = shapely.get_coordinates(
        shapely.intersection(rays[ray_index], tree_target[target_index]), return_index=True)
    point_ray = ray_index[point_hit]
    first_point = np.searchsorted(point_ray, np.arange(len(rays) + 1))
    first_ray = np.searchsorted(owner, np.arange(len(middles) + 1))
    found, found_distance = [], []
    for index in range(len(middles)):
        direction = directions[index]
        distances = []
        for ray in range(first_ray[index], first_ray[index + 1]):
            hits = points[first_point[ray]:first_point[ray + 1]]
            if not len(hits):
                break
            distances.append(float(np.min((hits - origins[ray]) @ direction)) + leads[ray])
        if len(distances) != first_ray[index + 1] - first_ray[index]:
            continue
        distance = distances[0]
        if distance < MIN_OPENING_WIDTH or max(distances) - min(distances) > 0.02 + 0.02 * distance:
            continue
        found.append(index)
        found_distance.append(distance)
    if not found:
        return []
    found, distance = np.array(found), np.array(found_distance)
    middle, direction, length = middles[found], directions[found], lengths[found]
    wide = length > 0
    # the gap swept between the ends, a little short of both, must hold no wall
    half = normals[found] * (length / 2.0)[:, None] * 0.98
    near = middle + direction * start_eps * 2
    far = middle + direction * (distance - start_eps * 2)[:, None]
    probes = np.empty(len(found), dtype=object)
    probes[wide] = shapely.polygons(np.stack([near - half, near + half, far + half, far - half],
                                             axis=1)[wide])
    probes[~wide] = shapely.linestrings(np.stack([near, far], axis=1)[~wide])
    # a probe meets the walls where it meets one of their pieces: one tree query, instead of
    # a test against every piece of the walls for each probe
    blocked = np.zeros(len(probes), dtype=bool)
    pieces = shapely.STRtree(shapely.get_parts(walls))
    blocked[pieces.query(probes, predicate="intersects")[0]] = True
    blocked[blocked] = shapely.area(shapely.intersection(probes[blocked], walls)) > 1e-6
    keep = ~blocked
    middle, direction, length, distance, wide = (middle[keep], direction[keep], length[keep],
                                                 distance[keep], wide[keep])
    half = normals[found[keep]] * (length / 2.0)[:, None]
    across = middle + direction * distance[:, None]
    quads = np.empty(len(middle), dtype=object)
    quads[wide] = shapely.polygons(np.stack([middle - half, middle + half, across + half,
                                             across - half], axis=1)[wide])
    quads[~wide] = shapely.buffer(shapely.linestrings(np.stack([middle, across], axis=1)[~wide]),
                                  0.005, quad_segs=16, cap_style="flat")
    gaps = [Gap(middle[k].copy(), across[k], float(length[k]), quads[k],
                bool(minor[found[keep][k]])) for k in range(len(middle))]
    return _merge_pairs(gaps)


def _nearest_pairs(origins, directions, targets, ray_index, target_index, *, slack=1e-6):
    """Which (ray, segment) pairs may hold a ray's first hit, shape (P,) of bool.

    `targets` are two-point LineStrings (`polygons.segments`); pair k is ray
    ``ray_index[k]`` (from ``origins`` along the unit ``directions``) and segment
    ``targets[target_index[k]]``, pairs sorted by ray.

    Only the hit nearest each ray's origin counts, and GEOS's intersection of a ray with a
    segment costs far more than this estimate of where it lies along the ray (in numpy,
    within about 1e-10 m unless the two are nearly parallel): a pair whose estimate lies
    more than `slack` metres beyond the nearest estimate of its ray cannot hold the first
    hit. Nearly parallel pairs are always kept, and so every ray keeps at least one pair.
    """
    xy = shapely.get_coordinates(targets[target_index]).reshape(-1, 2, 2)
    start, along = xy[:, 0], xy[:, 1] - xy[:, 0]
    origin, direction = origins[ray_index], directions[ray_index]
    cross = direction[:, 0] * along[:, 1] - direction[:, 1] * along[:, 0]
    reach = np.hypot(along[:, 0], along[:, 1])
    parallel = np.abs(cross) <= 1e-3 * reach
    offset = start - origin
    with np.errstate(divide="ignore", invalid="ignore"):
        distance = (offset[:, 0] * along[:, 1] - offset[:, 1] * along[:, 0]) / cross
    distance[parallel] = -np.inf
    first = np.full(int(ray_index.max()) + 1 if len(ray_index) else 0, np.inf)
    np.minimum.at(first, ray_index[~parallel], distance[~parallel])
    return parallel | (distance <= first[ray_index] + slack)


def _merge_pairs(gaps):
    """Keep one gap of each pair found from both of its ends (the one with the deeper jamb)."""
    if len(gaps) < 2:
        return gaps
    middles = np.array([gap.middle for gap in gaps])
    reach = np.array([0.05 + 0.05 * gap.width for gap in gaps])
    near = {index: [] for index in range(len(gaps))}     # the gaps within each one's reach
    one, other = pairs_within(middles, float(reach.max()))
    apart = np.hypot(*(middles[one] - middles[other]).T)
    for i, j, distance in zip(one.tolist(), other.tolist(), apart.tolist()):
        if distance <= reach[i]:
            near[i].append(j)
        if distance <= reach[j]:
            near[j].append(i)
    order = sorted(range(len(gaps)), key=lambda i: (-gaps[i].depth, gaps[i].width))
    kept, dropped = [], set()
    for index in order:
        if index in dropped:
            continue
        kept.append(gaps[index])
        for other in near[index]:
            if abs(gaps[other].width - gaps[index].width) < reach[index]:
                dropped.add(other)
    return sorted(kept, key=lambda gap: (round(gap.middle[0], 4), round(gap.middle[1], 4)))


def arc_radius(arcs):
    """Return the radius (metres) and sweep (degrees) of flattened arcs, shape (N,) each.

    From the chord c and the arc length s: c / s = sin(t / 2) / (t / 2) for a sweep t, and
    the radius is s / t.
    """
    arcs = np.asarray(arcs, dtype=object)
    if not len(arcs):
        return np.empty(0), np.empty(0)
    length = shapely.length(arcs)
    chord = shapely.distance(shapely.get_point(arcs, 0), shapely.get_point(arcs, -1))
    half = np.linspace(np.pi, 1e-6, 2000)  # half sweep t / 2, decreasing so sinc increases
    ratio = np.divide(chord, length, out=np.zeros_like(length), where=length > 0)
    half_sweep = np.interp(ratio, np.sin(half) / half, half)
    return length / np.maximum(2.0 * half_sweep, 1e-9), np.degrees(2.0 * half_sweep)


def classify_gaps(gaps, *, door_lines, window_lines, other_lines, swing_arcs):
    """Return the kind of each gap: "door", "window", "closed" or "open".

    Parameters
    ----------
    gaps : list of Gap
    door_lines, window_lines, other_lines : arrays of LineString (metres)
        Linework on door layers and in door blocks, on window layers and in window blocks,
        and on opening layers that do not say which.
    swing_arcs : array of LineString
        Arcs from any layer that may be door swings.

    A swing arc of a radius between 0.35 and 1.2 times the gap's width (one leaf or one of
    two) next to the gap makes a door; window linework along the gap, or two or more lines
    spanning most of it on an opening layer that does not say which (glazing, sill), make a
    window; a single straight line across on a door or opening layer and nothing else makes
    a closed opening (an overhead or locked door); other door linework (a sliding door's
    panels) makes a door; nothing makes an open gap.
    """
    kinds = []
    groups = {"door": np.asarray(door_lines, dtype=object),
              "window": np.asarray(window_lines, dtype=object),
              "other": np.asarray(other_lines, dtype=object)}
    trees = {name: shapely.STRtree(lines) for name, lines in groups.items() if len(lines)}
    arcs = np.asarray(swing_arcs, dtype=object)
    radius, sweep = arc_radius(arcs)
    arc_tree = shapely.STRtree(arcs) if len(arcs) else None
    if not gaps:
        return kinds
    # every gap's line, zones and nearby linework at once (buffers and tree queries in one
    # call each; what is found near a gap does not depend on the order it comes in)
    spans = np.array([(gap.start, gap.end) for gap in gaps], dtype=float)
    lines = shapely.linestrings(spans)
    depths = np.array([gap.depth for gap in gaps], dtype=float)
    # quad_segs=16: the default of the geometry method these buffers were drawn with before
    zones = shapely.buffer(lines, np.maximum(depths / 2.0, 0.02) + 0.03, quad_segs=16,
                           cap_style="flat")
    widths = np.array([gap.width for gap in gaps], dtype=float)
    nearby = {name: _split_by_query(tree, zones) for name, tree in trees.items()}
    near_arcs = _split_by_query(arc_tree, shapely.buffer(lines, widths * 1.1, quad_segs=16)) \
        if arc_tree is not None else None
    for number, gap in enumerate(gaps):
        width = gap.width
        line, zone = lines[number], zones[number]
        found = {name: groups[name][nearby[name][number]] for name in trees}
        is_door = False
        if near_arcs is not None:
            near = near_arcs[number]
            if len(near):
                fits = (radius[near] >= 0.35 * width) & (radius[near] <= 1.2 * width) & \
                    (sweep[near] >= MIN_SWING_SWEEP) & (sweep[near] <= 185)
                # the arc must start or end near the gap (hinged at a jamb, closing on it)
                ends = np.concatenate([shapely.get_coordinates(shapely.get_point(arcs[near], 0)),
                                       shapely.get_coordinates(shapely.get_point(arcs[near], -1))])
                close = shapely.distance(shapely.points(ends), line).reshape(2, -1).min(axis=0) \
                    <= 0.15 * width + gap.depth
                candidates = near[fits & close]
                # and the leaf closes along the gap: from its hinge, one end of the swing
                # lies in the gap's direction (a swing beside the gap, of a door in the wall
                # the gap starts from, does not)
                is_door = any(_closes_along(arcs[index], line, width, gap.depth)
                              for index in candidates)
        if is_door:
            kinds.append("door")
            continue
        across = {name: _spanning(lines, line, width) for name, lines in found.items()}
        doors, windows = found.get("door", ()), found.get("window", ())
        # linework that only touches a wide gap at one end (a window beside the wall end
        # the gap starts from) says nothing about the gap
        wide = width > MAX_OPEN_WIDTH
        if len(windows) and across.get("window", 0) >= 1:
            kinds.append("window")
        elif across.get("other", 0) >= 2:
            kinds.append("window")                      # glazing lines on an opening layer
        elif len(doors) and (not wide or _coverage(doors, line, zone) >= 0.5):
            # one straight line across and nothing else: an overhead or locked door drawn
            # shut; panels of a sliding door or anything else drawn there: a door
            single = len(doors) == 1 and across.get("door", 0) == 1 and \
                len(np.asarray(doors[0].coords)) == 2
            kinds.append("closed" if single else "door")
        elif across.get("other", 0) == 1 and len(found.get("other", ())) == 1:
            kinds.append("closed")
        elif len(windows) and (not wide or _coverage(windows, line, zone) >= 0.5):
            kinds.append("window")
        else:
            kinds.append("open")
    return kinds


def loose_glazing(gaps, loose_lines):
    """Which `gaps` hold glazing drawn on layers with no role, shape (N,) bool.

    Two lines or more whose parts within the wall's depth each run along most (75 %) of the
    gap, as glass and sill lines do (layer 0, say). The same lines cross a kitchen run or a
    counter in an open wall, so the caller takes them for a window only where the gap leads
    outside (see `interior.building_interior`). A single line across (a threshold, a change
    of floor finish) says nothing.

    Examples
    --------
    >>> gap = Gap(np.array([0.0, 0.0]), np.array([3.0, 0.0]), 0.3, None)
    >>> glass = [shapely.LineString([(0, y), (3, y)]) for y in (-0.05, 0.05)]
    >>> loose_glazing([gap], glass).tolist(), loose_glazing([gap], glass[:1]).tolist()
    ([True], [False])
    """
    lines = np.asarray(loose_lines, dtype=object)
    found = np.zeros(len(gaps), dtype=bool)
    if not len(gaps) or not len(lines):
        return found
    spans = shapely.linestrings(np.array([(gap.start, gap.end) for gap in gaps], dtype=float))
    depths = np.array([gap.depth for gap in gaps], dtype=float)
    zones = shapely.buffer(spans, np.maximum(depths / 2.0, 0.02) + 0.03, quad_segs=16,
                           cap_style="flat")
    for number, near in enumerate(_split_by_query(shapely.STRtree(lines), zones)):
        if len(near) >= 2:
            inside = shapely.get_parts(shapely.intersection(lines[near], zones[number]))
            found[number] = _spanning(inside[shapely.get_type_id(inside) == 1], spans[number],
                                      gaps[number].width) >= 2
    return found


def _split_by_query(tree, geometries):
    """Return, for each of `geometries`, the indices of the tree's geometries it intersects."""
    index, found = tree.query(geometries, predicate="intersects")
    return np.split(found, np.searchsorted(index, np.arange(1, len(geometries))))


def _closes_along(arc, line, width, depth):
    """True when a swing arc's hinge is by the gap `line` and one of its ends lies from the
    hinge along the gap (within about 30 degrees)."""
    hinge, _, ends = swing_geometry(arc)
    if hinge is None:
        return False
    if shapely.distance(shapely.Point(hinge), line) > 0.15 * width + depth:
        return False
    direction = np.subtract(line.coords[1], line.coords[0])[:2] / max(width, 1e-12)
    way = ends - hinge
    norms = np.maximum(np.hypot(way[:, 0], way[:, 1]), 1e-12)
    return bool(np.any(np.abs(way @ direction) / norms >= 0.85))


def _coverage(lines, across, zone):
    """The share of the gap line `across` that `lines` cover inside `zone`, seen along it."""
    inside = shapely.intersection(np.asarray(lines, dtype=object), zone)
    start = np.asarray(across.coords[0])
    direction = np.subtract(across.coords[1], across.coords[0])
    width = float(np.hypot(*direction))
    if width <= 0:
        return 0.0
    direction = direction / width
    spans = []
    for piece in shapely.get_parts(inside):
        xy = shapely.get_coordinates(piece)
        if len(xy) >= 2:
            along = (xy - start) @ direction
            spans.append((max(float(along.min()), 0.0), min(float(along.max()), width)))
    covered, reach = 0.0, 0.0
    for low, high in sorted(spans):  # union of the intervals
        low = max(low, reach)
        if high > low:
            covered += high - low
            reach = high
    return covered / width


def _spanning(lines, across, width):
    """Count the lines that run along the gap line `across` over most (75 %) of its width."""
    if not len(lines):
        return 0
    direction = np.subtract(across.coords[1], across.coords[0]) / max(width, 1e-12)
    count = 0
    for line in lines:
        xy = np.asarray(line.coords)[:, :2]
        steps = np.diff(xy, axis=0)
        along = np.abs(steps @ direction)
        total = np.hypot(steps[:, 0], steps[:, 1])
        straight = along >= 0.97 * total
        projected = np.sum(along[straight])
        if projected >= 0.75 * width:
            count += 1
    return count


def swing_geometry(arc):
    """Return (hinge (2,), radius, ends (2, 2)) of a flattened circular arc, from the circle
    through its two ends and its middle.

    Examples
    --------
    >>> t = np.radians(np.linspace(0, 90, 17))
    >>> hinge, radius, ends = swing_geometry(shapely.LineString(np.c_[1 + 0.9 * np.cos(t), 2 + 0.9 * np.sin(t)]))
    >>> np.round(hinge, 6).tolist(), round(radius, 6)
    ([1.0, 2.0], 0.9)
    """
    xy = np.asarray(arc.coords)[:, :2]
    a, c = xy[0], xy[-1]
    b = np.asarray(shapely.line_interpolate_point(arc, 0.5, normalized=True).coords[0])[:2]
    d = 2.0 * (a[0] * (b[1] - c[1]) + b[0] * (c[1] - a[1]) + c[0] * (a[1] - b[1]))
    if abs(d) < 1e-12:
        return None, 0.0, np.array([a, c])
    sa, sb, sc = a @ a, b @ b, c @ c
    hinge = np.array([sa * (b[1] - c[1]) + sb * (c[1] - a[1]) + sc * (a[1] - b[1]),
                      sa * (c[0] - b[0]) + sb * (a[0] - c[0]) + sc * (b[0] - a[0])]) / d
    return hinge, float(np.hypot(*(a - hinge))), np.array([a, c])


def open_swept_doorways(lines, rings, swings, *, max_thickness, tolerance=0.03):
    """Cut walls drawn on through a doorway, and take the door leaf away.

    Plans often run the wall straight across a doorway and mark the opening only with the
    leaf and its swing: single-line walls with jamb ticks (schematic and evacuation plans),
    double-line walls with the door block laid over them (its mask hides the wall on paper).
    A door swing (`swings`, flattened arcs, metres) whose hinge (the arc's centre) and one
    end both lie along wall linework that runs on past them marks a doorway there. The
    wall lines parallel to it over that stretch, from the hinge's face back through the
    wall's thickness (up to `max_thickness`), are cut out; the wall linework inside the
    swept sector (the leaf, a line or a thin rectangle) and short strokes across the
    doorway (jamb ticks) go.

    Returns
    -------
    (lines, rings, doorways) : the wall linework left (a ring cut open becomes lines) and the
    (hinge, closed end) pairs cut
    """
    lines = np.asarray(lines, dtype=object)
    rings = np.asarray(rings, dtype=object)
    swings = np.asarray(swings, dtype=object)
    if not len(swings) or not (len(lines) or len(rings)):
        return lines, rings, []
    linework = np.concatenate([lines, rings])
    tree = shapely.STRtree(linework)
    cuts = {}                     # linework index -> regions cut out of it
    sectors, regions, doorways = [], [], []
    for arc in swings:
        hinge, radius, ends = swing_geometry(arc)
        if hinge is None or not len(tree.query(shapely.Point(hinge), predicate="dwithin",
                                               distance=max_thickness)):
            continue
        for closed, free in ((ends[0], ends[1]), (ends[1], ends[0])):
            region, along = _doorway_region(hinge, closed, free, max_thickness, tolerance)
            found = [index for index in tree.query(region, predicate="intersects")
                     if _runs_through(linework[index], region, along, radius)]
            # the wall runs on through the hinge itself (the face the door hangs on); a wall
            # merely parallel to a leaf drawn open is not its doorway
            if not any(shapely.distance(linework[index], shapely.Point(hinge)) <= tolerance
                       for index in found):
                continue
            for index in found:
                cuts.setdefault(index, []).append(region)
            sector = shapely.Polygon(np.vstack([hinge, np.asarray(arc.coords)[:, :2], hinge]))
            # leaves are drawn loosely: a leaf a tenth longer than its swing is still a leaf
            sectors.append(shapely.buffer(sector, max(tolerance, 0.12 * radius)))
            regions.append(region)
            doorways.append((hinge, closed))
            break
    if not doorways:
        return lines, rings, []
    gone = shapely.covered_by(linework, shapely.union_all(sectors))   # leaves in their swing
    opened = np.zeros(len(linework), dtype=bool)
    opened[list(cuts)] = True
    pieces = [shapely.difference(linework[index], shapely.union_all(cuts[index]))
              for index in sorted(cuts) if not gone[index]]
    pieces = shapely.get_parts(np.array(pieces, dtype=object)) if pieces else np.empty(0, object)
    pieces = pieces[~shapely.is_empty(pieces)]
    # strokes across the doorway: jamb ticks, the stop between two leaves (not the bit of
    # wall line left between a hinge and the wall it runs into)
    keep = ~gone & ~opened
    count = len(lines)
    loose = np.concatenate([linework[:count][keep[:count]], pieces])
    doorway = shapely.buffer(shapely.union_all(regions), tolerance)
    stroke = (shapely.length(loose) <= MAX_TICK) & shapely.intersects(loose, doorway)
    stroke[stroke] = ~_along(loose[stroke], doorways)
    return loose[~stroke], linework[count:][keep[count:]], doorways


def _doorway_region(hinge, closed, free, max_thickness, tolerance):
    """The strip a doorway cuts through its wall: from `hinge` to `closed` along the wall,
    a little in front of the hinge on the swing's side (`free` is the swing's open end) and
    `max_thickness` behind it. Returns (Polygon, unit vector along the doorway)."""
    along = np.subtract(closed, hinge)
    along = along / max(float(np.hypot(*along)), 1e-12)
    normal = np.array([-along[1], along[0]])
    if normal @ np.subtract(free, hinge) > 0:
        normal = -normal                                  # away from the swing
    front, back = normal * -(0.05 + tolerance), normal * (max_thickness + tolerance)
    return shapely.Polygon([hinge + front, closed + front, closed + back, hinge + back]), along


def _runs_through(geometry, region, along, radius):
    """True when wall linework runs parallel to the doorway over most of it (within `region`)
    and goes on past it (a leaf drawn closed ends where the doorway does)."""
    inside = shapely.intersection(geometry, region)
    if inside.is_empty or geometry.length - inside.length < 0.1:
        return False
    covered = 0.0
    for part in shapely.get_parts(inside):
        xy = shapely.get_coordinates(part)
        steps = np.diff(xy, axis=0)
        lengths = np.hypot(steps[:, 0], steps[:, 1])
        parallel = np.abs(steps @ along) >= 0.97 * lengths
        covered += float(lengths[parallel].sum())
    return covered >= 0.9 * radius


def _along(lines, doorways):
    """True for each line running along (within 30 degrees of) the doorway it touches."""
    result = np.zeros(len(lines), dtype=bool)
    for index, line in enumerate(lines):
        xy = shapely.get_coordinates(line)
        if len(xy) < 2:
            continue
        direction = xy[-1] - xy[0]
        norm = np.hypot(*direction)
        if norm <= 0:
            continue
        for hinge, closed in doorways:
            way = np.subtract(closed, hinge)
            if abs(direction @ way) >= np.cos(np.radians(30)) * norm * np.hypot(*way) and \
                    shapely.distance(line, shapely.LineString([hinge, closed])) < 0.05:
                result[index] = True
                break
    return result
