"""A car's manoeuvres from one lane to another: the paths tried and whether the body clears.

For each manoeuvre (a node or a lane bend, the lane arrived along, the lane left along) the
paths tried are, from poses on the two lanes 1, 2 and 3 R from the node (as far as they
reach; the nearer poses first): straight on and one arc of radius R tangent to both lanes'
lines (`fillet`), the shortest Dubins path, and for a car that may reverse the shortest
Reeds-Shepp path. A manoeuvre is possible when one path keeps the margin beside the body.
At each distance the paths are tried one at a time, the likeliest to clear first (the arc
where it fits, else the path backing up: most turns round are three-point turns), each
only where the ones before failed; the order changes neither answer nor figure, since a
refused manoeuvre has tried them all and each path is judged on its own.

Each path is driven as poses at most MAX_STEP_ANGLE apart and checked as the convex hulls
of consecutive footprints (body.py), exactly through shapely. That is costly, so all paths
of all manoeuvres are first judged together, a stage at a time, each asking the clearance
field about many points at once, and only the few left undecided are measured:

1. off the floor: a body point (centre or corner) outside the free floor at a pose means
   the path crosses the floor's edge (it starts on a lane, where the body fits): refused.
   This test comes first, on the poses stage 1 measures only (`_off_floor`); the other
   poses are made for the paths it leaves (most of a turn round's forward loops leave
   the floor, 150 poses each). The first paths tried, which mostly stay on it, have all
   their poses made at once and the footprint centre's clearance at those poses (stage
   1 needs it) measured first: where it exceeds the half diagonal, the centre alone is
   tested (`_off_floor_measured`);
2. two points of the body at every GROUP-th pose, then the second at each pose of the
   moves not yet clear (every other such pose first: a measured neighbour's clearance
   less the distance between bounds the pose between, and clears most of its moves):
   every body point lies within the swing radius of the rotation centre and within the
   half diagonal of the footprint's centre, so their clearance less that radius (and
   less half the way to the next measured pose, plus one step) bounds each move's gap
   from below; a disc about the rotation centre lies inside the footprint, so its
   clearance bounds the gap from above. The rotation centre is measured only where the
   footprint centre's clearance, plus the distance between the two, leaves its bounds
   in doubt;
3. the corners at the tightest FEW moves of each path (a corner's clearance bounds the gap
   from above), then points OUTLINE_STEP apart on the footprint's outline at each pose of
   the moves still tight, against the floor (one off it refuses the path, as in stage 1),
   then at every move still tight the discs covering the footprint along its long axis
   (radius at most COVER_SLACK more than its half-width; at every other pose first, as
   in stage 2, each disc's clearance at the pose between bounded by the same disc's, and
   at a pose the end discs first, the others only where they could be the smallest):
   the hull of two footprints lies within half the largest corner displacement of one
   of them (a point of the hull is lambda p + (1 - lambda) q with q within that
   displacement of the first footprint, p of the second), so the smaller disc clearance
   less that half bounds the hull's gap from below; and the corners where the discs
   leave less than the margin.

Only two things about a lower bound of a move matter to the stages after the one that
made it: whether it is below the margin, and if so its exact value (it ranks the moves
measured next); and of a path's upper bound only a value below the margin. So a stage
need not measure a point whose bound, passed on from one measured nearby (the distance
to a set is 1-Lipschitz) or from the discs, already clears the margin.

A path that a bound accepts would be accepted by the exact check, one it refuses refused
(`tests/roadmap/test_manoeuvres.py` checks this against measuring every move), so the
answer is that of the exact check; only the figure reported for a refused manoeuvre ("the
best leaves at most ...") may be an upper bound rather than the exact smallest gap.
"""

from __future__ import annotations

import bisect
import itertools
import math

import numpy as np
import shapely

from clearway.collector import paused_collector
from clearway.roadmap import reeds_shepp
from clearway.roadmap.body import CROSSING, MAX_STEP_ANGLE, core, move_gaps, place, reach
from clearway.roadmap.dubins import DubinsPath, poses_of, shortest_path
from clearway.roadmap.model import Robot

#: Moves of a path measured exactly at a time, tightest first.
PATH_CHUNK = 8
#: Distances from the node, in turning radii, where a car's manoeuvre starts and ends.
CAR_REACH = (1.0, 2.0, 3.0)
#: The discs covering the footprint reach at most this far beyond its sides, metres.
COVER_SLACK = 0.02
#: At most this many discs cover a footprint.
COVER_MOST = 24
#: Moves per group measured at its two ends only, in the first stage.
GROUP = 8
#: The tightest moves of each path whose corners are measured first.
FEW = 4


def _measured(coords: np.ndarray, known: dict | None = None):
    """A polyline's steps (n - 1, 2), their lengths and the distance along to each vertex,
    as lists (point_along works on a few numbers at a time, where numpy's calls cost more
    than the arithmetic); kept in `known` by the array's id (the caller keeps the arrays
    alive meanwhile)."""
    if known is not None and id(coords) in known:
        return known[id(coords)]
    step = np.diff(coords, axis=0)
    length = np.hypot(*step.T)
    found = step.tolist(), length.tolist(), [0.0, *np.cumsum(length).tolist()], \
        coords.tolist()
    if known is not None:
        known[id(coords)] = found
    return found


def _measure_all(polylines, known: dict) -> None:
    """`_measured` of many polylines (n_i, 2) at once into `known`: the same numbers (numpy's
    differences and hypot element by element, the running sums in the same order)."""
    fresh = {id(coords): coords for coords in polylines if id(coords) not in known}
    if not fresh:
        return
    arrays = [np.asarray(coords, dtype=float).reshape(-1, 2) for coords in fresh.values()]
    sizes = [len(coords) for coords in arrays]
    every = np.concatenate(arrays)
    step = every[1:] - every[:-1]
    steps, lengths, points = step.tolist(), np.hypot(*step.T).tolist(), every.tolist()
    head = 0
    for key, size in zip(fresh, sizes):
        inner = slice(head, head + max(size - 1, 0))
        known[key] = (steps[inner], lengths[inner],
                      [0.0, *itertools.accumulate(lengths[inner])], points[head:head + size])
        head += size


def point_along(coords: np.ndarray, distance: float,
                known: dict | None = None) -> tuple[tuple[float, float], float]:
    """Point and heading at `distance` metres along a polyline (clipped to its ends)."""
    step, length, along, points = _measured(coords, known)
    distance = min(max(distance, 0.0), along[-1])
    k = min(max(bisect.bisect_right(along, distance) - 1, 0), len(step) - 1)
    while k > 0 and length[k] <= 1e-12:
        k -= 1
    fraction = (distance - along[k]) / length[k] if length[k] > 0 else 0.0
    (x, y), (dx, dy) = points[k], step[k]
    return (x + fraction * dx, y + fraction * dy), math.atan2(dy, dx)


def fillet(start, end, radius: float) -> DubinsPath | None:
    """Straight on from `start`, one arc of `radius` tangent to both headings' lines,
    straight on to `end`; None where the lines do not meet ahead of both poses far enough
    for the arc (or are parallel)."""
    # angle_between on floats: Python's % is numpy's (a remainder taking the divisor's sign)
    turn = -((math.pi - (float(end[2]) - float(start[2]))) % (2 * math.pi) - math.pi)
    if abs(turn) < 1e-9 or abs(abs(turn) - math.pi) < 1e-9:
        return None
    # meeting point a + s u = b - t v
    matrix = np.array([[math.cos(start[2]), math.cos(end[2])],
                       [math.sin(start[2]), math.sin(end[2])]])
    s, t = np.linalg.solve(matrix, np.array([float(end[0]) - float(start[0]),
                                             float(end[1]) - float(start[1])]))
    cut = radius * math.tan(abs(turn) / 2)
    if s < cut - 1e-9 or t < cut - 1e-9:
        return None
    return DubinsPath(tuple(float(x) for x in start), "SLS" if turn > 0 else "SRS",
                      (max(s - cut, 0.0) / radius, abs(turn), max(t - cut, 0.0) / radius),
                      float(radius))


def fillets(starts, ends, radius: float) -> list[DubinsPath | None]:
    """`fillet` of many pose pairs at once, the same paths: the same arithmetic on arrays
    (numpy's % is Python's), the math module's sine, cosine and tangent, and one solve of
    the stack of 2 x 2 systems, which numpy hands to LAPACK one by one as for a single one."""
    found = [None] * len(starts)
    if not len(starts):
        return found
    start, end = np.array(starts, dtype=float), np.array(ends, dtype=float)
    turn = -((math.pi - (end[:, 2] - start[:, 2])) % (2 * math.pi) - math.pi)
    size = np.abs(turn)
    rows = np.flatnonzero(~((size < 1e-9) | (np.abs(size - math.pi) < 1e-9)))
    if not len(rows):
        return found
    matrices = np.empty((len(rows), 2, 2))
    for column, heading in enumerate((start[rows, 2].tolist(), end[rows, 2].tolist())):
        matrices[:, 0, column] = [math.cos(value) for value in heading]
        matrices[:, 1, column] = [math.sin(value) for value in heading]
    sides = np.stack([end[rows, 0] - start[rows, 0], end[rows, 1] - start[rows, 1]], axis=1)
    s, t = np.linalg.solve(matrices, sides[:, :, None])[:, :, 0].T
    cut = radius * np.array([math.tan(value / 2) for value in size[rows].tolist()])
    fits = ~((s < cut - 1e-9) | (t < cut - 1e-9))
    lengths = np.column_stack([np.maximum(s - cut, 0.0) / radius, size[rows],
                               np.maximum(t - cut, 0.0) / radius])
    for row, left, three in zip(rows[fits].tolist(), (turn[rows[fits]] > 0).tolist(),
                                lengths[fits].tolist()):
        found[row] = DubinsPath(tuple(float(x) for x in starts[row]),
                                "SLS" if left else "SRS", tuple(three), float(radius))
    return found


def _same(a, b) -> bool:
    """numpy.allclose for two points, without its overhead."""
    return abs(a[0] - b[0]) <= 1e-8 + 1e-5 * abs(b[0]) and \
        abs(a[1] - b[1]) <= 1e-8 + 1e-5 * abs(b[1])


def _point_along(coords: np.ndarray, distance: float, known: dict | None = None):
    """`point_along`, kept in `known` (a lane leaving a node is in several manoeuvres)."""
    if known is None:
        return point_along(coords, distance)
    key = ("along", id(coords), distance)
    if key not in known:
        known[key] = point_along(coords, distance, known)
    return known[key]


def _end_poses(robot: Robot, here, arrive, leave, step: int, known: dict | None = None):
    """The poses CAR_REACH[step] turning radii from the node (`here`) on the arriving and
    the leaving lane, as ((x, y, heading), (x, y, heading)); () where one of them is the
    node itself (nothing to try there); None where the lanes both end before the previous
    distance (nothing farther to try)."""
    radius = robot.turn_radius
    if step > 0:
        before = CAR_REACH[step - 1] * radius
        if before >= _measured(arrive, known)[2][-1] and \
                before >= _measured(leave, known)[2][-1]:
            return None
    start_xy, back = _point_along(arrive, CAR_REACH[step] * radius, known)
    end_xy, ahead = _point_along(leave, CAR_REACH[step] * radius, known)
    if _same(start_xy, here) or _same(end_xy, here):
        return ()
    # the stretches of the lanes between those poses and the node are not driven
    return (*start_xy, back + math.pi), (*end_xy, ahead)


def _tries(robot: Robot, start, end, known: dict | None = None, arc=False):
    """Yield the paths tried from `start` to `end`, the likeliest to clear first, each made
    only when asked for: the arc between the lanes where it fits, then the shortest
    forward path and the shortest one backing up; where no arc fits (turning round, mostly)
    the one backing up first. The same paths whatever the order (see `paths_tried`).
    `arc`, where given, is ``fillet(start, end, robot.turn_radius)``."""
    radius = robot.turn_radius
    made = {}

    def forward():
        if "forward" not in made:
            made["forward"] = shortest_path(start, end, radius, known=known)
        return made["forward"]

    def backing():
        path = reeds_shepp.shortest_path(start, end, radius, known=known)
        if len(path.word) != 3 or min(path.lengths) < 0:
            return path                   # it backs up: not the forward path (no -0.0)
        same = (path.word, path.lengths) == (forward().word, forward().lengths)
        return None if same else path

    if arc is False:
        arc = fillet(start, end, radius)
    order = [lambda: arc, forward, backing] if arc is not None else [backing, forward]
    for make in order:
        if make is backing and not robot.reverse:
            continue
        path = make()
        if path is not None and path.length > 0:
            yield path


def paths_tried(robot: Robot, here, arrive, leave, step: int, backing: bool = False,
                known: dict | None = None) -> list[DubinsPath] | None:
    """The paths tried from the arriving lane to the leaving one from poses CAR_REACH[step]
    turning radii from the node (`here`): the forward ones (the arc and the shortest
    Dubins path), or with `backing` the shortest Reeds-Shepp path where it is not one of
    those. None where the lanes both end before the previous distance (nothing farther to
    try)."""
    poses = _end_poses(robot, here, arrive, leave, step, known)
    if not poses:
        return poses if poses is None else []
    start, end = poses
    forward = shortest_path(start, end, robot.turn_radius)
    if not backing:
        return [path for path in (fillet(start, end, robot.turn_radius), forward)
                if path and path.length > 0]
    path = reeds_shepp.shortest_path(start, end, robot.turn_radius)
    if path.length > 0 and (path.word, path.lengths) != (forward.word, forward.lengths):
        return [path]
    return []


def cover(robot: Robot) -> tuple[np.ndarray, float]:
    """Discs covering the footprint: centres (D, 2) in the body frame, and their radius, m."""
    if robot.length is None:
        return np.zeros((1, 2)), robot.radius
    long, short = max(robot.length, robot.width), min(robot.length, robot.width)
    half = short / 2
    count = min(COVER_MOST, max(1, math.ceil(long / (2 * math.sqrt(
        (half + COVER_SLACK) ** 2 - half ** 2)))))
    along = -long / 2 + long / count * (np.arange(count) + 0.5)
    centres = np.zeros((count, 2))
    centres[:, 0 if robot.length >= robot.width else 1] = along
    return centres - np.asarray(robot.centre, float), math.hypot(long / (2 * count), half)


#: Points on the outline of a rectangular footprint at most this far apart, metres.
OUTLINE_STEP = 0.25


def _outline(robot: Robot) -> np.ndarray:
    """Points on the footprint's outline, corners included, at most OUTLINE_STEP apart:
    (K, 2) in the body frame (a rectangle's)."""
    corners = core(robot)[0]
    points = []
    for a, b in zip(corners, np.roll(corners, -1, axis=0)):
        count = max(1, math.ceil(math.hypot(*(b - a)) / OUTLINE_STEP))
        points.append(a + (b - a) * (np.arange(count) / count)[:, None])
    return np.concatenate(points)


def _per_path(values: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Smallest of `values` in each run beginning at `starts` (runs non-empty)."""
    return np.minimum.reduceat(values, starts) if len(values) else np.zeros(0)


#: Taken off a clearance passed on from a measured point to a nearby one, metres (far
#: above the rounding of either; see `_nearby`).
NEARBY_SLACK = 1e-9


def _nearby(known: np.ndarray, at: np.ndarray, xy: np.ndarray, room: np.ndarray) -> np.ndarray:
    """Lower bounds of the clearance at points `xy` (N, 2) of poses `at` (N,), sorted, from
    the nearest pose measured (`known`, clearance `room`) before and after each within its
    run of consecutive poses: |c(p) - c(q)| <= |p - q| (the distance to a set is
    1-Lipschitz), less NEARBY_SLACK for rounding. -inf where no pose of the run is known."""
    index = np.arange(len(at))
    run = np.cumsum(np.r_[True, np.diff(at) != 1])
    result = np.full(len(at), -np.inf)
    for order in (index, index[::-1]):
        mark = np.where(known[order], np.arange(len(order)), -1)
        last = np.maximum.accumulate(mark)
        source = order[np.maximum(last, 0)]
        ok = (last >= 0) & (run[source] == run[order])
        target, source = order[ok], source[ok]
        result[target] = np.maximum(result[target], room[source] - np.hypot(
            *(xy[target] - xy[source]).T) - NEARBY_SLACK)
    return result


def _beside(known: np.ndarray, at: np.ndarray, starts: np.ndarray, xy: np.ndarray,
            room: np.ndarray) -> np.ndarray:
    """Lower bounds of the clearance at points `xy` (N, 2) of poses `at` (N,), sorted, from
    the poses just before and after each (within its path: `starts`, each path's first
    pose, sorted) where those are measured (`known`, clearance `room`), as `_nearby`;
    -inf where neither is."""
    result = np.full(len(at), -np.inf)
    if len(at) < 2:
        return result
    found = np.minimum(np.searchsorted(starts, at), len(starts) - 1)
    opens = starts[found] == at
    # pairs (i, i + 1) of consecutive poses of one path
    pair = np.flatnonzero((np.diff(at) == 1) & ~opens[1:])
    for target, source in ((pair, pair + 1), (pair + 1, pair)):
        ok = known[source]
        target, source = target[ok], source[ok]
        result[target] = np.maximum(result[target], room[source] - np.hypot(
            *(xy[target] - xy[source]).T) - NEARBY_SLACK)
    return result


def _run_positions(at: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Each pose's place (0, 1, ...) in its run of consecutive poses `at` (N,), sorted,
    within one path (`starts`, (P,), each path's first pose, sorted): numbered within the
    path's own poses, so a path's answer does not depend on the paths judged beside it."""
    if not len(at):
        return np.zeros(0, dtype=int)
    opens = np.r_[True, np.diff(at) != 1]
    found = np.minimum(np.searchsorted(starts, at), len(starts) - 1)
    opens |= starts[found] == at
    return np.arange(len(at)) - np.flatnonzero(opens)[np.cumsum(opens) - 1]


def _every_other(at: np.ndarray, starts: np.ndarray) -> np.ndarray:
    """Which of poses `at` (N,), sorted, are the first, third, ... of their runs (see
    `_run_positions`)."""
    return _run_positions(at, starts) % 2 == 0


def _smallest_disc(field, discs: np.ndarray, centre: np.ndarray, centre_room: np.ndarray):
    """Each disc's clearance or a lower bound of it (n, D), and the smallest, exact (n,),
    of disc centres `discs` (n, D, 2) at n poses. The two end discs are measured first; a
    disc between is at least as clear as the footprint's centre (`centre` (n, 2), whose
    clearance is `centre_room` (n,), -inf where unknown) or an end disc less the distance
    between them (1-Lipschitz), and is measured only where that leaves it below the end
    discs' smaller clearance: the others cannot be the smallest."""
    count, width = discs.shape[:2]
    clear = np.full((count, width), -np.inf)
    if count == 0 or width <= 2:
        if count:
            clear[:] = field.at(discs.reshape(-1, 2)).reshape(count, width)
        return clear, clear.min(axis=1) if width else np.full(count, np.inf)
    ends, inner = [0, width - 1], np.arange(1, width - 1)
    clear[:, ends] = field.at(discs[:, ends].reshape(-1, 2)).reshape(count, 2)
    low = centre_room[:, None] - np.hypot(*(discs[:, inner] - centre[:, None])
                                          .transpose(2, 0, 1))
    for end in ends:
        low = np.maximum(low, clear[:, [end]] - np.hypot(
            *(discs[:, inner] - discs[:, [end]]).transpose(2, 0, 1)))
    clear[:, inner] = low - NEARBY_SLACK
    smallest = clear[:, ends].min(axis=1)
    rows, columns = np.nonzero(clear[:, inner] < smallest[:, None])
    if len(rows):
        clear[rows, inner[columns]] = field.at(discs[rows, inner[columns]])
        np.minimum.at(smallest, rows, clear[rows, inner[columns]])
    return clear, smallest


def _disc_rooms(field, at: np.ndarray, starts: np.ndarray, discs: np.ndarray, radius: float,
                a_end, b_end, shift: np.ndarray, margin: float, centre: np.ndarray,
                centre_room: np.ndarray) -> np.ndarray:
    """Stage 3's smallest clearance of the covering discs at poses `at` (E,), sorted, whose
    disc centres are `discs` (E, D, 2), less their `radius`: exact at every pose it could
    matter at, a lower bound elsewhere (only where it keeps `margin` + NEARBY_SLACK, and
    the moves a_end -> b_end (M,) it ends, with their `shift`, keep the margin).

    Every other pose of each run of consecutive poses of a path (`starts`, each path's
    first pose, sorted) is measured first (the first, the third, ...); each disc's
    clearance at a pose between is at least that of the same disc at a neighbour less the
    distance it moved (1-Lipschitz, as in `_nearby`). The poses where that leaves a move
    below the margin, or the pose itself below margin + NEARBY_SLACK (where stage 3
    measures the corners), are measured too. So every value the stage uses below the
    margin is the exact one, and every other keeps it, as when every pose is measured.
    At a measured pose only the discs that could be the smallest are measured
    (`_smallest_disc`, with the footprint's `centre` (E, 2) and its clearance
    `centre_room` (E,)).
    """
    count = len(at)
    clear = np.full(discs.shape[:2], -np.inf)
    position = _run_positions(at, starts)
    first = np.flatnonzero(position % 2 == 0)
    room = np.full(count, -np.inf)
    clear[first], smallest = _smallest_disc(field, discs[first], centre[first],
                                            centre_room[first])
    room[first] = smallest - radius
    skipped = np.flatnonzero(position % 2 == 1)   # the pose before is measured
    if len(skipped):
        after = np.minimum(skipped + 1, count - 1)
        after = np.where(position[after] == position[skipped] + 1, after, skipped - 1)
        low = np.maximum(*(clear[side] - np.hypot(*(discs[skipped] - discs[side])
                                                  .transpose(2, 0, 1)) - NEARBY_SLACK
                           for side in (skipped - 1, after)))
        room[skipped] = low.min(axis=1) - radius
        unsure = np.zeros(count, bool)
        short = np.minimum(room[a_end], room[b_end]) - shift / 2 < margin
        unsure[a_end[short]] = unsure[b_end[short]] = True
        unsure[room < margin + NEARBY_SLACK] = True
        again = skipped[unsure[skipped]]
        if len(again):
            room[again] = _smallest_disc(field, discs[again], centre[again],
                                         centre_room[again])[1] - radius
    return room


# tens of thousands of short-lived paths, poses and lists: the cyclic collector's passes
# would rescan the build's long-lived objects again and again (nothing here makes a cycle)
@paused_collector()
def car_gaps(robot: Robot, field, manoeuvres, floor=None) -> np.ndarray:
    """For each manoeuvre (here, arriving polyline, leaving polyline; local frame, the
    polylines leaving `here`), the best gap beside the body over the paths tried, metres:
    at least the margin where one path clears; otherwise the largest of the paths' gaps or
    of upper bounds of them (see the module's docstring). -inf where no path is tried.
    `floor`, the free floor (local frame; shapely geometry) whose boundary `field`
    measures, lets paths that leave it be refused at once."""
    if floor is not None:
        shapely.prepare(floor)
    best = np.full(len(manoeuvres), -np.inf)
    going = list(range(len(manoeuvres)))
    known = {}                        # the polylines' lengths, measured once
    _measure_all([coords for _, arrive, leave in manoeuvres for coords in (arrive, leave)],
                 known)
    # the nearer poses first, for all manoeuvres at once; farther ones where they fail; at
    # each distance a round per path, the likeliest first, each where the earlier failed.
    # A manoeuvre is possible when any path clears, and a refused one has tried them all,
    # so the order changes neither the answer nor the figure reported (each path's value
    # is its own, whichever others are judged beside it)
    for step in range(len(CAR_REACH)):
        still, pairs = [], []
        for index in going:
            if best[index] >= robot.least_gap:
                continue
            here, arrive, leave = manoeuvres[index]
            poses = _end_poses(robot, np.asarray(here, float).tolist(), arrive, leave, step,
                               known)
            if poses is None:
                continue
            still.append(index)
            if poses:
                pairs.append((index, poses))
        going = still
        arcs = fillets([poses[0] for _, poses in pairs], [poses[1] for _, poses in pairs],
                       robot.turn_radius)
        tries = {index: _tries(robot, *poses, known, arc)
                 for (index, poses), arc in zip(pairs, arcs)}
        likely = step == 0          # the first paths tried mostly stay on the floor
        while tries:
            paths, owner = [], []
            for index in list(tries):
                path = next(tries[index], None) if best[index] < robot.least_gap \
                    else None
                if path is None:
                    del tries[index]
                    continue
                paths.append(path)
                owner.append(index)
            if paths:
                _judge(robot, field, paths, np.asarray(owner), best, floor, likely)
            likely = False
    return best


def _off_floor(robot: Robot, paths, floor) -> np.ndarray:
    """Which paths (P,) put a body point (the footprint's centre or a corner) off the
    floor at one of the poses stage 1 measures: each path's every GROUP-th pose and its
    last (the ends of its groups of moves). Only those poses are made (`poses_of` with
    `every`: the same floats as among all of a path's poses)."""
    some, counts, rows = poses_of(paths, step=MAX_STEP_ANGLE, every=GROUP)
    path_of_end = np.searchsorted(np.cumsum(counts), rows, side="right")
    corners = core(robot)[0]
    body = np.concatenate([place(-np.asarray(robot.centre, float)[None], some[:, :2],
                                 some[:, 2]), place(corners, some[:, :2], some[:, 2])],
                          axis=1)
    # the corners ahead first (most often those swinging off), the rest of the body only
    # on the paths those leave on the floor: one point off refuses a path
    ahead = np.argsort(-corners[:, 0], kind="stable")[:2] + 1
    off = np.zeros(len(paths), bool)
    for part in (ahead, np.setdiff1d(np.arange(body.shape[1]), ahead)):
        rest = np.flatnonzero(~off[path_of_end])
        inside = shapely.contains_xy(floor, body[rest][:, part].reshape(-1, 2)).reshape(
            len(rest), len(part)).all(axis=1)
        off[path_of_end[rest[~inside]]] = True
    return off


def _judge(robot: Robot, field, paths, owner, best, floor=None, likely=False) -> None:
    """Raise best[owner[k]] to the gap beside the body along paths[k] (or a bound of it,
    see the module's docstring), skipping exact checks of manoeuvres already possible.
    `likely`: most paths are expected to pass the floor test (the first tried), so all
    their poses are made at once and stage 1's clearances help the floor test."""
    margin = robot.least_gap
    extra = core(robot)[1] - robot.margin
    made = None
    if floor is not None:
        # stage 1's floor test first, on its own poses only: a path it refuses has the
        # gap 0.0 - extra (never -0.0, printed "-0.00"), or CROSSING where that would keep
        # the margin (a rectangle and no margin), whatever the others do, and the rest need
        # not make its poses (most of a turn round's forward loops, 150 poses each, swing
        # off the floor)
        if likely:
            every, counts = poses_of(paths, step=MAX_STEP_ANGLE)
            off, centre_at = _off_floor_measured(robot, field, every, counts, floor)
        else:
            off = _off_floor(robot, paths, floor)
        np.maximum.at(best, owner[off], 0.0 - extra if 0.0 - extra < margin else CROSSING)
        kept = np.flatnonzero(~off)
        if not len(kept):
            return
        paths, owner = [paths[k] for k in kept], owner[kept]
        if likely:
            head = np.r_[0, np.cumsum(counts)[:-1]]
            rows = np.repeat(head[kept] - np.r_[0, np.cumsum(counts[kept])[:-1]],
                             counts[kept]) + np.arange(int(counts[kept].sum()))
            made = every[rows], counts[kept], centre_at[rows]
    _measure(robot, field, paths, owner, best, floor, made)


def _off_floor_measured(robot: Robot, field, every, counts, floor):
    """`_off_floor` of paths whose poses `every` (N, 3) (`counts` (P,) a path) are made,
    the same answers; and the footprint centre's clearance at the poses stage 1 measures
    (N,), NaN elsewhere. Where that clearance exceeds the farthest body point's distance
    from the centre, the whole body lies on the centre's side of the floor's edge (the
    field measures the floor's boundary), so only the centre is tested there."""
    head = np.r_[0, np.cumsum(counts)[:-1]]
    index = np.arange(len(every)) - np.repeat(head, counts)
    rows = np.flatnonzero((index % GROUP == 0) | (index == np.repeat(counts - 1, counts)))
    path_of_row = np.repeat(np.arange(len(counts)), counts)[rows]
    centre = place(-np.asarray(robot.centre, float)[None], every[rows, :2],
                   every[rows, 2])[:, 0]
    centre_at = np.full(len(every), np.nan)
    centre_at[rows] = room = field.at(centre)
    corners = core(robot)[0]
    spread = float(np.hypot(*(corners + np.asarray(robot.centre, float)).T).max()) \
        if len(corners) else 0.0
    alone = room > spread + NEARBY_SLACK
    off = np.zeros(len(counts), bool)
    off[path_of_row[alone][~shapely.contains_xy(floor, centre[alone])]] = True
    some = np.flatnonzero(~alone)
    if len(some):
        body = np.concatenate([centre[some, None], place(corners, every[rows[some], :2],
                                                         every[rows[some], 2])], axis=1)
        inside = shapely.contains_xy(floor, body.reshape(-1, 2)).reshape(body.shape[:2])
        off[path_of_row[some[~inside.all(axis=1)]]] = True
    return off, centre_at


def _measure(robot: Robot, field, paths, owner, best, floor=None, made=None) -> None:
    """`_judge` from stage 1's clearance queries on, for paths that passed its floor
    test; `made`, where given, their poses, counts and footprint centres' clearances
    (NaN where not measured), as `_off_floor_measured` gives them."""
    margin = robot.least_gap
    every, counts, centre_at = made if made is not None else \
        (*poses_of(paths, step=MAX_STEP_ANGLE), None)
    first = np.r_[0, np.cumsum(counts)[:-1]]
    # moves join consecutive poses of one path: move k from pose move[k] to move[k] + 1
    joined = np.ones(len(every) - 1, bool)
    joined[first[1:] - 1] = False
    move = np.flatnonzero(joined)
    move_first = np.r_[0, np.cumsum(counts - 1)[:-1]]     # each path's first move
    path_of_move = np.repeat(np.arange(len(paths)), counts - 1)
    inner, outer = reach(robot)
    extra = core(robot)[1] - robot.margin
    circum = outer if robot.length is None else math.hypot(robot.length / 2, robot.width / 2)
    if robot.length is None:
        inner = outer = circum = 0.0
    # two points of the body: every footprint lies within `outer` of its rotation centre
    # and within `circum` of its own centre; the two together bound each move from below
    points = (every[:, :2], place(-np.asarray(robot.centre, float)[None], every[:, :2],
                                  every[:, 2])[:, 0])
    chords = [np.hypot(*np.diff(xy, axis=0)[move].T) for xy in points]
    value = np.full(len(paths), np.nan)
    high = np.full(len(paths), np.inf)
    centre_room = np.full(len(every), -np.inf)     # the footprint centre's, where measured

    def settle(bound: np.ndarray) -> np.ndarray:
        """Decide the paths left by `bound` (per move) and `high`; return those left."""
        left = np.flatnonzero(np.isnan(value) & (best[owner] < margin))
        low = _per_path(bound, move_first)[left]
        value[left] = np.where(low >= margin, low,
                               np.where(high[left] < margin, high[left], np.nan))
        np.maximum.at(best, owner[left], np.where(np.isnan(value[left]), -np.inf,
                                                  value[left]))
        return np.isnan(value) & (best[owner] < margin)

    # stage 1: both points at every GROUP-th pose; a move between two measured poses lies
    # within half the chords between them (plus one chord) of one of them
    group = np.arange(len(move)) - move_first[path_of_move]
    starts = np.flatnonzero(group % GROUP == 0)
    stops = np.r_[starts[1:] - 1, len(move) - 1]
    stops = np.where(path_of_move[stops] != path_of_move[starts],
                     move_first[path_of_move[starts]] + counts[path_of_move[starts]] - 2,
                     stops)
    ends = np.unique(np.r_[move[starts], move[stops] + 1])
    # the footprint's centre first; the rotation centre, `apart` from it, only where its
    # clearance could matter: where it could bring a path's upper bound below the margin,
    # or give a group of moves a larger bound than the centre's, and one below the margin
    # (elsewhere the bounds are those of measuring both, or clear the margin either way)
    group_ends = [np.minimum(np.searchsorted(ends, at), len(ends) - 1)
                  for at in (move[starts], move[stops] + 1)]
    spreads = [np.add.reduceat(chord, starts) / 2 + np.maximum.reduceat(chord, starts)
               for chord in chords]
    rooms = [np.full(len(ends), -np.inf), np.full(len(ends), np.nan)]
    if centre_at is not None:
        rooms[1] = centre_at[ends]
    unknown = np.flatnonzero(np.isnan(rooms[1]))
    if len(unknown):
        rooms[1][unknown] = field.at(points[1][ends[unknown]])
    lowest = np.minimum(*(rooms[1][at] for at in group_ends))
    by_centre = lowest - spreads[1] - circum
    apart = math.hypot(*robot.centre) + NEARBY_SLACK
    over = (lowest + apart - spreads[0] - outer > by_centre) & (by_centre - extra < margin)
    want = rooms[1] - apart - inner - extra < margin + NEARBY_SLACK
    want[group_ends[0][over]] = want[group_ends[1][over]] = True
    want = np.flatnonzero(want)
    rooms[0][want] = field.at(points[0][ends[want]])
    np.minimum.at(high, np.searchsorted(first, ends[want], side="right") - 1,
                  rooms[0][want] - inner - extra)
    by_rotation = np.where(over, np.minimum(*(rooms[0][at] for at in group_ends)),
                           -np.inf) - spreads[0] - outer
    bound = np.repeat(np.maximum(by_rotation, by_centre), stops - starts + 1)
    bound -= extra
    left = settle(bound)
    tight = np.flatnonzero(left[path_of_move] & (bound < margin))
    # stage 1b: the footprint's centre at each pose of the moves stage 1 did not clear
    # (the rotation centre, farther from most of the body, hardly ever clears more)
    if not len(tight):
        return
    ends_before = ends
    ends, where = np.unique(np.r_[move[tight], move[tight] + 1], return_inverse=True)
    a_end, b_end = np.split(where.ravel(), 2)
    # the poses stage 1 measured keep their values (a point's clearance is its own)
    room = np.empty(len(ends))
    found = np.minimum(np.searchsorted(ends_before, ends), len(ends_before) - 1)
    known = ends_before[found] == ends
    room[known] = rooms[1][found[known]]
    # first from those: a point's clearance is at least a measured one's less the
    # distance between them; where that clears a move, its bound is left at that (only
    # whether it is below the margin, and the exact values of those that are, matter to
    # the stages after), and the others' poses are measured: every other one of them
    # first, then, where those do not clear their moves either, the rest
    xy = points[1][ends]
    guess = np.where(known, room, _nearby(known, ends, xy, room))
    for sweep in range(2):
        fair = np.minimum(guess[a_end], guess[b_end]) - chords[1][tight] * (1 + 1e-3) / 2 \
            - circum - extra
        sure = fair >= margin
        bound[tight[sure]] = np.maximum(bound[tight[sure]], fair[sure])
        tight, a_end, b_end = tight[~sure], a_end[~sure], b_end[~sure]
        want = np.zeros(len(ends), bool)
        want[a_end] = want[b_end] = True
        want &= ~known
        if sweep == 0:
            wanted = np.flatnonzero(want)
            want[wanted[~_every_other(ends[wanted], first)]] = False
        room[want] = field.at(xy[want])
        known |= want
        if sweep == 0:
            guess = np.where(known, room, np.maximum(guess, _beside(known, ends, first, xy,
                                                                    room)))
    centre_room[ends[known]] = room[known]
    bound[tight] = np.maximum(bound[tight], np.minimum(room[a_end], room[b_end]) -
                              chords[1][tight] * (1 + 1e-3) / 2 - circum - extra)
    left = settle(bound)
    # stage 2: the footprint's corners at the tightest few moves of each path left: a path
    # that fails mostly fails there
    corners = core(robot)[0]
    tight = np.flatnonzero(left[path_of_move] & (bound < margin))
    tight = tight[np.lexsort((bound[tight], path_of_move[tight]))]
    rank = np.arange(len(tight)) - np.searchsorted(path_of_move[tight],
                                                   path_of_move[tight])
    few = np.unique(np.r_[move[tight[rank < FEW]], move[tight[rank < FEW]] + 1])
    if not len(few):
        return
    # a corner is within the half diagonal of the footprint's centre: where that leaves
    # the margin, it cannot bring the path's upper bound below it, and is not measured
    few = few[centre_room[few] - circum - extra < margin + NEARBY_SLACK]
    np.minimum.at(high, np.searchsorted(first, few, side="right") - 1,
                  field.at(place(corners, every[few, :2], every[few, 2]).reshape(-1, 2))
                  .reshape(len(few), len(corners)).min(axis=1) - extra)
    left = settle(bound)
    tight = np.flatnonzero(left[path_of_move] & (bound < margin))
    if floor is not None and robot.length is not None and len(tight):
        # stage 3a: points on the footprint's outline at each pose of the moves not yet
        # clear, against the floor (far cheaper than the clearance field): a point off it
        # refuses the path, as in stage 1 (a forward U-turn swinging into the racking)
        outline = _outline(robot)
        at = np.unique(np.r_[move[tight], move[tight] + 1])
        path_of_at = np.searchsorted(first, at, side="right") - 1
        keep = high[path_of_at] >= margin
        at, path_of_at = at[keep], path_of_at[keep]
        # where the footprint's centre is farther than its half diagonal from the floor's
        # edge (the field's segments), the whole outline is on the centre's side of it
        alone = centre_room[at] > circum + NEARBY_SLACK
        off = np.zeros(len(paths), bool)
        off[path_of_at[alone][~shapely.contains_xy(floor, points[1][at[alone]])]] = True
        # the corners first, the rest of the outline only on the paths they leave on the
        # floor: one point off refuses a path, whichever point it is
        corner = (outline[:, None] == core(robot)[0][None]).all(axis=2).any(axis=1)
        for part in (np.flatnonzero(corner), np.flatnonzero(~corner)):
            some = np.flatnonzero(~alone & ~off[path_of_at])
            out = ~shapely.contains_xy(floor, place(outline[part], every[at[some], :2],
                                                    every[at[some], 2]).reshape(-1, 2)) \
                .reshape(len(some), len(part)).all(axis=1)
            off[path_of_at[some[out]]] = True
        np.minimum.at(high, np.flatnonzero(off), 0.0 - extra)
        left = settle(bound)
        tight = np.flatnonzero(left[path_of_move] & (bound < margin))
    # stage 3: discs covering the footprint and its corners, at the poses of the moves
    # stage 1 did not clear, on the paths left
    if not len(tight):
        return
    centres, radius = cover(robot)
    ends, where = np.unique(np.r_[move[tight], move[tight] + 1], return_inverse=True)
    near = place(np.vstack([centres, corners]), every[ends, :2], every[ends, 2])
    a_end, b_end = np.split(where.ravel(), 2)
    shift = np.hypot(*(near[b_end, len(centres):] - near[a_end, len(centres):])
                     .transpose(2, 0, 1)).max(axis=1)
    disc_room = _disc_rooms(field, ends, first, near[:, :len(centres)], radius, a_end,
                            b_end, shift, margin, points[1][ends], centre_room[ends])
    # the end discs reach the corners, so a corner's clearance less `extra` is at least
    # disc_room: where that keeps the margin the corner cannot bring a path's upper bound
    # below it (only such bounds are used), and it is not measured
    corner_room = np.full(len(ends), np.inf)
    some = np.flatnonzero((disc_room < margin + NEARBY_SLACK) &
                          (centre_room[ends] - circum - extra < margin + NEARBY_SLACK))
    if len(some):
        corner_room[some] = field.at(near[some, len(centres):].reshape(-1, 2)).reshape(
            len(some), -1).min(axis=1) - extra
    bound[tight] = np.maximum(bound[tight], np.minimum(disc_room[a_end], disc_room[b_end]) -
                              shift / 2)
    np.minimum.at(high, path_of_move[tight], np.minimum(corner_room[a_end],
                                                        corner_room[b_end]))
    undecided = np.flatnonzero(settle(bound))
    # stage 4: the exact hulls of each path's moves, tightest first, PATH_CHUNK at a time
    # until one falls short of the margin; the paths' chunks are measured together (one
    # path per manoeuvre here, so none clears for another; each path's moves and values
    # are its own)
    orders, found = [], []
    for path in undecided:
        mine = np.arange(move_first[path], move_first[path] + counts[path] - 1)
        mine = mine[bound[mine] < margin]          # the others are clear already
        orders.append(move[mine[np.argsort(bound[mine], kind="stable")]])
        found.append(math.inf)
    going = [k for k in range(len(undecided)) if len(orders[k])]
    chunk = 0
    while going:
        some = [orders[k][chunk:chunk + PATH_CHUNK] for k in going]
        flat = np.concatenate(some)
        measured = move_gaps(robot, field, every[flat, :2], every[flat, 2],
                             every[flat + 1, :2], every[flat + 1, 2])
        lowest = np.minimum.reduceat(measured, np.cumsum([0] + [len(x) for x in some[:-1]]))
        for k, low in zip(going, lowest.tolist()):
            found[k] = min(found[k], low)
        chunk += PATH_CHUNK
        going = [k for k in going if found[k] >= margin and chunk < len(orders[k])]
    for path, gap in zip(undecided.tolist(), found):
        value[path] = gap
        best[owner[path]] = max(best[owner[path]], gap)
