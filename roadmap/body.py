"""The robot's body along the lanes: swept footprints, side clearance, trimmed dead ends.

A rectangular robot drives a lane with its rotation centre on the lane and its heading along
the lane's tangent. A lane polyline is driven as straight moves along its segments and
turns in place at its vertices (the Voronoi lanes are dense where they bend, so this follows
a smooth bend to within the polyline's own deviation from it).

The swept area of each move is covered by convex hulls of footprints (a straight move's
hull is measured as its two end footprints and the band between them, see `move_gaps`):

- a straight move sweeps exactly the convex hull of the footprints at its two ends (the
  Minkowski sum of a convex shape and a segment);
- a turn in place is split into steps of at most MAX_STEP_ANGLE; the hull of the footprints
  at both ends of a step misses only the sagitta of the arcs the corners travel,
  ``swing * (1 - cos(step / 2))``, at most 0.32 mm for a 1 m swing radius.

A move is passable when its hull keeps at least the margin from every obstacle (distance to
the free space's boundary, exact through shapely/GEOS), i.e. the footprint grown by the
margin stays clear. The hull's distance is the body's side clearance, ``clearance_body``.
A disc robot's footprint is its centre point grown by radius + margin.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from clearway.roadmap.inflate import polylines
from clearway.roadmap.lanes import EdgeSamples
from clearway.roadmap.model import BodyShortfall, Robot

#: Largest heading change covered by one hull, radians (about 2.9 degrees).
MAX_STEP_ANGLE = 0.05
#: Bisection steps when trimming a dead end back to where the body fits (2**-20 of a move).
TRIM_STEPS = 20
#: Trimmed lanes shorter than this are dropped, metres.
MIN_LANE = 0.05
#: With no margin, a hull crossing the boundary by more than this is refused, metres; its
#: gap is CROSSING (below any margin's least gap, and not -0.0, which prints "-0.00").
OVERLAP = 1e-6
CROSSING = -1e-6


def core(robot: Robot) -> tuple[np.ndarray, float]:
    """Return the footprint's core points in the body frame and how far it is grown.

    Returns
    -------
    points : (K, 2) float ndarray, metres; x forward, y left, origin the rotation centre
    grow : float, metres; the footprint is the convex hull of `points` grown by `grow`
        minus the margin (so the clear distance needed from `points`' hull is `grow`)
    """
    if robot.length is None:
        return np.zeros((1, 2)), robot.radius + robot.margin
    forward, left = robot.centre
    half_l, half_w = robot.length / 2, robot.width / 2
    corners = np.array([[half_l, half_w], [-half_l, half_w], [-half_l, -half_w],
                        [half_l, -half_w]]) - np.array([forward, left])
    return corners, robot.margin


def place(points: np.ndarray, xy: np.ndarray, heading: np.ndarray) -> np.ndarray:
    """Body-frame `points` (K, 2) at poses `xy` (N, 2), `heading` (N,) rad -> (N, K, 2)."""
    cos, sin = np.cos(heading)[:, None], np.sin(heading)[:, None]
    x, y = points[:, 0][None], points[:, 1][None]
    return np.stack([xy[:, :1] + cos * x - sin * y, xy[:, 1:] + sin * x + cos * y], axis=-1)


def hulls(robot: Robot, a_xy, a_heading, b_xy, b_heading) -> np.ndarray:
    """Convex hulls of the footprint cores at pose pairs a, b: (N,) shapely geometries."""
    points, _ = core(robot)
    both = np.concatenate([place(points, np.asarray(a_xy, float).reshape(-1, 2),
                                 np.asarray(a_heading, float).ravel()),
                           place(points, np.asarray(b_xy, float).reshape(-1, 2),
                                 np.asarray(b_heading, float).ravel())], axis=1)
    count = len(both)
    if count == 0:
        return np.empty(0, dtype=object)
    return shapely.convex_hull(shapely.multipoints(
        both.reshape(-1, 2), indices=np.repeat(np.arange(count), both.shape[1])))


def gaps(field, geometry) -> np.ndarray:
    """Exact distance from each geometry to the free space's boundary, metres, shape (N,)."""
    return field.distance_to(geometry)


def hull_gaps(robot: Robot, field, hull) -> np.ndarray:
    """`gaps` of a rectangle's hulls (N,), with CROSSING for each that crosses the boundary
    where no margin is set.

    GEOS measures 0 whether a hull touches the boundary or crosses it. With a margin both
    fall short of it; with none, a touch passes and a crossing must not: a hull still
    within 0 of the boundary when shrunk by OVERLAP crosses it by more than rounding.
    """
    gap = gaps(field, hull)
    if robot.least_gap <= 0 and robot.length is not None:
        zero = np.flatnonzero(gap <= 0)
        if len(zero):
            shrunk = shapely.buffer(np.asarray(hull, dtype=object)[zero], -OVERLAP,
                                    join_style="mitre")
            gap[zero[gaps(field, shrunk) <= 0]] = CROSSING
    return gap


def reach(robot: Robot) -> tuple[float, float]:
    """Radii about the rotation centre, metres: the largest disc inside the footprint and
    the smallest one holding it (the swing radius)."""
    if robot.length is None:
        return robot.radius, robot.radius
    forward, left = robot.centre
    return (min(robot.length / 2 - abs(forward), robot.width / 2 - abs(left)), robot.swing)


def move_gaps(robot: Robot, field, a_xy, a_heading, b_xy, b_heading, *,
              band=None, alone=None, owner=None) -> np.ndarray:
    """Clear distance left beside the body over each move a -> b, metres, shape (M,).

    A turn step or a step along an arc is its hull. A straight move is split, since its long
    hull reaches many boundary segments: the footprints at both ends, and the band between
    them, whose distance is the segment's clearance less the body's half-width (exact
    beside the segment; where the nearest obstacle lies beyond an end, the footprint there
    is nearer, or the value is on the safe side). `band`, (M,) metres, gives a known lower
    bound of each segment's clearance instead (a lane's, known from building it); then a
    turn step whose pivot leaves more room than that is given its lower bound, as it
    cannot be the smallest gap of its lane. `alone`, (M, 2) bool, says which ends of each straight move need their footprint
    measured (default both): where a turn step starts or ends there, its hull holds it.

    With `band`, a rectangle's footprint is first bounded from its centre: every point of
    it lies within the half diagonal of the centre, so the centre's clearance less that
    bounds the footprint's gap from below, and the hull of two footprints lies within half
    the largest corner displacement between them of one of them (see manoeuvres.py). An
    end footprint whose bound exceeds the band less the half-width is not measured (the
    band decides that move: the same value). `owner`, (M,) int, the polyline of each move,
    says that only each polyline's smallest gap is wanted: a turn step whose bound exceeds
    the smallest gap of its polyline's straight moves (and the margin) gets that bound
    instead of its exact gap, which is larger still; the smallest gap, which move has it
    and which moves fall short of the margin stay those of measuring every move.
    """
    a_xy, b_xy = (np.asarray(v, float).reshape(-1, 2) for v in (a_xy, b_xy))
    a_heading, b_heading = (np.asarray(v, float).ravel() for v in (a_heading, b_heading))
    points, grow = core(robot)
    half = np.abs(points[:, 1]).max()
    outer = np.hypot(*points.T).max()
    gap = np.empty(len(a_xy))
    straight = (a_heading == b_heading) & np.any(a_xy != b_xy, axis=1)
    other = np.flatnonzero(~straight)
    if band is not None:
        # a turn in place keeps the body within `outer` of its pivot: where that leaves
        # more than the band beside the body, it cannot be the smallest gap; say so
        turning = other[np.all(a_xy[other] == b_xy[other], axis=1)]
        low = field.at(a_xy[turning]) - outer
        roomy = low >= np.broadcast_to(np.asarray(band, float), a_xy.shape[:1])[turning] - half
        gap[turning[roomy]] = low[roomy]
        other = np.setdiff1d(other, turning[roomy])
    bounded = band is not None and robot.length is not None
    line = np.flatnonzero(straight)
    if len(line):
        xy, heading = np.vstack([a_xy[line], b_xy[line]]), np.r_[a_heading[line],
                                                                 b_heading[line]]
        need = np.ones(2 * len(line), bool) if alone is None else \
            np.asarray(alone, bool)[line].T.ravel()
        side = gaps(field, shapely.linestrings(np.stack([a_xy[line], b_xy[line]], axis=1))) \
            if band is None else np.broadcast_to(np.asarray(band, float), a_xy.shape[:1])[line]
        ends = np.full(2 * len(line), np.inf)
        if bounded:
            # a footprint the band leaves no nearer than its bound: min(end, band) is band
            wanted = np.flatnonzero(need)
            low = _footprint_bounds(robot, field, xy[wanted], heading[wanted])
            need[wanted[low > np.r_[side, side][wanted] - half + 1e-9]] = False
        ends[need] = hull_gaps(robot, field, hulls(robot, xy[need], heading[need], xy[need],
                                       heading[need]))
        ends = ends.reshape(2, -1).min(axis=0)
        gap[line] = np.minimum(ends, side - half)
    if bounded and owner is not None and len(other):
        # only each polyline's smallest gap is wanted: its straight moves' smallest bounds
        # it from above; a turn step bounded above that (and the margin) cannot be it
        owner = np.asarray(owner)
        lane = np.full(int(owner.max()) + 1, np.inf)
        np.minimum.at(lane, owner[line], gap[line])
        corners = np.concatenate([place(points, a_xy[other], a_heading[other]),
                                  place(points, b_xy[other], b_heading[other])], axis=1)
        shift = np.hypot(*(corners[:, len(points):] - corners[:, :len(points)])
                         .transpose(2, 0, 1)).max(axis=1)
        low = np.minimum(_footprint_bounds(robot, field, a_xy[other], a_heading[other]),
                         _footprint_bounds(robot, field, b_xy[other], b_heading[other])) - \
            shift / 2
        clear = (low > lane[owner[other]] + 1e-9) & (low >= robot.margin)
        gap[other[clear]] = low[clear]
        other = other[~clear]
    gap[other] = hull_gaps(robot, field, hulls(robot, a_xy[other], a_heading[other], b_xy[other],
                                   b_heading[other]))
    return gap - (grow - robot.margin)


def _footprint_bounds(robot: Robot, field, xy: np.ndarray, heading: np.ndarray) -> np.ndarray:
    """A lower bound of a rectangular footprint's gap at each pose, metres, shape (N,): the
    clearance of its centre less its half diagonal."""
    centre = place(-np.asarray(robot.centre, float)[None], xy, heading)[:, 0]
    return field.at(centre) - np.hypot(robot.length / 2, robot.width / 2)


def contact(robot: Robot, field, driven: "Moves", move: int) -> np.ndarray:
    """Where the body of one move comes nearest an obstacle: the obstacle's point, (2,)."""
    hull = hulls(robot, driven.a_xy[move], driven.a_heading[move], driven.b_xy[move],
                 driven.b_heading[move])[0]
    nearest = field.tree.query_nearest(hull, all_matches=False)[0]
    line = shapely.shortest_line(hull, field.tree.geometries[nearest])
    return shapely.get_coordinates(line)[-1]


def angle_between(a, b):
    """Signed heading change from `a` to `b`, radians in (-pi, pi]."""
    return -((np.pi - (np.asarray(b) - np.asarray(a))) % (2 * np.pi) - np.pi)


@dataclass(frozen=True)
class Moves:
    """The moves of driving polylines: straight moves and turn steps, as pose pairs.

    a_xy, b_xy : (M, 2) float; a_heading, b_heading : (M,) float, radians
    owner : (M,) int, the polyline of each move; at : (M,) float, distance along it, metres
    """

    a_xy: np.ndarray
    a_heading: np.ndarray
    b_xy: np.ndarray
    b_heading: np.ndarray
    owner: np.ndarray
    at: np.ndarray


def moves(lines: list[np.ndarray]) -> Moves:
    """Split each polyline (n_i, 2) into straight moves and turn steps, in driving order."""
    counts = [len(c) for c in lines]
    if sum(counts) == 0:
        empty = np.zeros((0, 2))
        return Moves(empty, np.zeros(0), empty, np.zeros(0), np.zeros(0, np.int64),
                     np.zeros(0))
    xy = np.concatenate([np.asarray(c, float).reshape(-1, 2) for c in lines])
    owner = np.repeat(np.arange(len(lines)), counts)
    same = owner[1:] == owner[:-1]
    keep = np.r_[True, ~same | (np.hypot(*np.diff(xy, axis=0).T) > 1e-9)]
    xy, owner = xy[keep], owner[keep]
    segment = np.flatnonzero(owner[1:] == owner[:-1])        # move from xy[k] to xy[k + 1]
    step = xy[segment + 1] - xy[segment]
    heading = np.arctan2(step[:, 1], step[:, 0])
    length = np.hypot(*step.T)
    first = np.r_[True, owner[segment[1:]] != owner[segment[:-1]]]
    run = np.cumsum(length)
    base = np.maximum.accumulate(np.where(first, run - length, 0.0))
    along = run - length - base                               # where each move starts
    # turn at the vertex between consecutive moves of one polyline
    joint = np.flatnonzero(~first[1:])
    turn = angle_between(heading[joint], heading[joint + 1])
    pieces = np.maximum(1, np.ceil(np.abs(turn) / MAX_STEP_ANGLE)).astype(np.int64)
    which = np.repeat(np.arange(len(joint)), pieces)
    rank = np.arange(len(which)) - np.repeat(np.cumsum(pieces) - pieces, pieces)
    start_angle = heading[joint][which] + turn[which] * rank / pieces[which]
    end_angle = heading[joint][which] + turn[which] * (rank + 1) / pieces[which]
    pivot = xy[segment[joint + 1]][which]
    a_xy = np.vstack([xy[segment], pivot])
    b_xy = np.vstack([xy[segment + 1], pivot])
    a_heading = np.r_[heading, start_angle]
    b_heading = np.r_[heading, end_angle]
    move_owner = np.r_[owner[segment], owner[segment[joint + 1]][which]]
    at = np.r_[along, along[joint + 1][which]]
    sub = np.r_[np.full(len(segment), np.iinfo(np.int64).max), rank]
    order = np.lexsort((sub, at, move_owner))
    return Moves(a_xy[order], a_heading[order], b_xy[order], b_heading[order],
                 move_owner[order], at[order])


def side_clearance(robot: Robot, field, lines: list[np.ndarray], *, band=None):
    """The body's side clearance along each polyline driven heading along it.

    `band`, (L,) metres, is a known lower bound of each polyline's clearance (see
    `move_gaps`); without it every straight move's clearance is measured.

    Returns
    -------
    moves : Moves
    gap : (M,) float, metres; the clear distance left beside the body over each move
        (see `move_gaps`)
    lowest : (L,) float, metres; per polyline the smallest gap (inf for a point)
    """
    driven = moves(lines)
    # moves come in driving order: a straight move's ends lie in the turn steps before and
    # after it, except at the polyline's own two ends
    first = np.r_[True, driven.owner[1:] != driven.owner[:-1]]
    last = np.r_[driven.owner[1:] != driven.owner[:-1], True]
    gap = move_gaps(robot, field, driven.a_xy, driven.a_heading, driven.b_xy,
                    driven.b_heading,
                    band=None if band is None else np.asarray(band, float)[driven.owner],
                    alone=np.stack([first, last], axis=1),
                    owner=None if band is None else driven.owner)
    lowest = np.full(len(lines), np.inf)
    np.minimum.at(lowest, driven.owner, gap)
    # a polyline without a move (a station on its node) holds the body heading along
    # whatever lane it joins: its side clearance is its clearance less the half-width
    still = [i for i in np.flatnonzero(np.isinf(lowest)) if len(lines[i])]
    if still:
        lowest[still] = field.at(np.array([lines[i][0] for i in still])) - \
            (robot.clearance - robot.margin)
    return driven, gap, lowest


def _trim(robot: Robot, field, coords: np.ndarray) -> np.ndarray | None:
    """Cut a lane driven from coords[0] back to where the body last fits; None if nowhere."""
    driven, gap, _ = side_clearance(robot, field, [coords], band=[robot.clearance])
    bad = np.flatnonzero(gap < robot.least_gap)
    if len(bad) == 0:
        return coords
    first = bad[0]
    start, heading = driven.a_xy[first], driven.a_heading[first]
    end = driven.b_xy[first]
    kept = coords[np.r_[0.0, np.cumsum(np.hypot(*np.diff(coords, axis=0).T))]
                  < driven.at[first] - 1e-9]
    if np.allclose(start, end):           # a turn step fails: stop before turning
        tail = start[None]
    else:                                  # a straight move fails part way: bisect
        low, high = 0.0, 1.0
        for _ in range(TRIM_STEPS):
            middle = (low + high) / 2
            point = start + middle * (end - start)
            if move_gaps(robot, field, start, heading, point, heading,
                         band=robot.clearance)[0] >= robot.least_gap:
                low = middle
            else:
                high = middle
        tail = np.vstack([start, start + low * (end - start)])
    trimmed = np.vstack([kept, tail])
    trimmed = trimmed[np.r_[True, np.hypot(*np.diff(trimmed, axis=0).T) > 1e-9]]
    length = float(np.hypot(*np.diff(trimmed, axis=0).T).sum()) if len(trimmed) > 1 else 0.0
    return trimmed if length >= MIN_LANE else None


@dataclass(frozen=True)
class Shortfall:
    """Where a lane is too tight for the body: position (local frame) and the gap there."""

    x: float
    y: float
    gap: float
    note: str = ""


def fit_lanes(robot: Robot, field, lines, ends, vertices):
    """Keep the lanes the body can drive heading along them; trim dead ends to fit.

    A lane with a free end (an end vertex no other lane touches) is cut back from that end
    to where the body last fits driving in from the other end, and the end vertex moves
    there (the body's front stops the margin short of a dead end's wall). Every other lane
    that is too tight anywhere is dropped.

    Parameters
    ----------
    lines : (L,) LineString, local frame; ends : list of (u, v) vertex indices
    vertices : (V, 2) float; updated in place where a dead end is trimmed

    Returns
    -------
    lines, ends : the kept (and trimmed) lanes
    dropped : list of Shortfall, one per lane dropped (where the body comes nearest an
        obstacle: that obstacle's point, and the gap)
    """
    coords = [shapely.get_coordinates(line) for line in lines]
    if not coords:
        return lines, ends, []
    # every lane keeps the clearance c = half-width + margin along it (it was cut there)
    driven, gap, lowest = side_clearance(robot, field, coords,
                                         band=np.full(len(coords), robot.clearance))
    degree = np.bincount(np.asarray(ends, dtype=np.int64).ravel(), minlength=len(vertices))
    kept_lines, kept_ends, short = [], [], []
    for index, (u, v) in enumerate(ends):
        if lowest[index] >= robot.least_gap:
            kept_lines.append(coords[index])
            kept_ends.append((u, v))
            continue
        trimmed = None
        if degree[v] == 1 and u != v:
            trimmed = _trim(robot, field, coords[index])
            free = v
        if trimmed is None and degree[u] == 1 and u != v:
            trimmed = _trim(robot, field, coords[index][::-1])
            trimmed = None if trimmed is None else trimmed[::-1]
            free = u
        if trimmed is None:
            mine = np.flatnonzero(driven.owner == index)
            worst = mine[np.argmin(gap[mine])]
            x, y = contact(robot, field, driven, worst)
            short.append(Shortfall(float(x), float(y), float(gap[worst])))
            continue
        vertices[free] = trimmed[-1] if free == v else trimmed[0]
        kept_lines.append(trimmed)
        kept_ends.append((u, v))
    return polylines(kept_lines), kept_ends, short


def fit_edges(robot: Robot, field, graph, samples, joins, station_nodes, offset):
    """Set every edge's ``clearance_body``; drop the edges the body cannot drive.

    These are mostly a station's straight approach: the station then gets a reason instead
    of its join. Node kinds are renewed where an edge went; nodes left alone go too, except
    stations.

    Returns
    -------
    samples : EdgeSamples without the dropped edges' samples
    joins : list, the stations' joins with reasons where their approach went
    shortfalls : list of BodyShortfall ("link" or "lane"), drawing frame
    """
    shift = np.asarray(offset, dtype=float)
    edges = list(graph.edges(keys=True, data=True))
    driven, gap, lowest = side_clearance(
        robot, field, [shapely.get_coordinates(data["geometry"]) - shift
                       for _, _, _, data in edges],
        band=[data["clearance_min"] for _, _, _, data in edges])
    station_of = {node: index for index, node in station_nodes.items()}
    joins, shortfalls, dropped, touched = list(joins), [], set(), set()
    for index, (u, v, key, data) in enumerate(edges):
        if lowest[index] >= robot.least_gap:
            data["clearance_body"] = float(lowest[index])
            continue
        mine = np.flatnonzero(driven.owner == index)
        worst = mine[np.argmin(gap[mine])]
        x, y = contact(robot, field, driven, worst) + shift
        station = next((station_of[n] for n in (u, v) if n in station_of), None)
        link = key in samples.station_links
        shortfalls.append(BodyShortfall(
            "link" if link else "lane", float(x), float(y), robot.margin, float(gap[worst]),
            (key,), "" if station is None else station_nodes[station],
            f"{robot.short_beside(gap[worst])}; edge dropped"))
        if link and station is not None:
            joins[station] = ("the body does not fit along its approach: "
                              + robot.short_beside(gap[worst]).replace("the body", "it"))
        dropped.add(key)
        touched.update((u, v))
    if not dropped:
        return samples, joins, shortfalls
    graph.remove_edges_from([(u, v, key) for u, v, key, _ in edges if key in dropped])
    for node in sorted(touched):
        kind = graph.nodes[node]["kind"]
        degree = graph.degree(node)
        if kind == "station":
            continue
        if degree == 0:
            graph.remove_node(node)
        elif kind in ("junction", "waypoint", "end"):
            graph.nodes[node]["kind"] = ("junction" if degree >= 3 else
                                         "waypoint" if degree == 2 else "end")
    gone = np.isin(np.asarray(samples.edge_ids, dtype=object)[samples.owner],
                   list(dropped)) if len(samples.owner) else np.zeros(0, bool)
    samples = EdgeSamples(samples.xy[~gone], samples.owner[~gone], samples.clearance[~gone],
                          samples.edge_ids, samples.station_links)
    return samples, joins, shortfalls


def pose_limits(robot: Robot) -> float:
    """The clear radius about the rotation centre needed to turn in place, metres."""
    return robot.swing + robot.margin if robot.length is not None else \
        robot.radius + robot.margin


__all__ = ["MAX_STEP_ANGLE", "Moves", "Shortfall", "core", "fit_edges", "fit_lanes", "move_gaps", "reach", "gaps", "hulls",
           "moves", "place", "side_clearance", "angle_between", "pose_limits"]
