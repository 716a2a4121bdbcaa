"""Turns at the nodes: between which incident edges the body can change heading.

At every node the robot arrives along one edge (heading along its tangent, towards the
node) and leaves along another (or the same one: turning round). Whether it can:

- differential: it turns in place about its rotation centre on the node; the footprint
  swept from the arriving heading to the leaving one (either way round) must keep the
  margin from the obstacles. Where the node's clearance holds the whole swept circle,
  swing radius + margin, every turn there is allowed without further work.
- omni: the same, turning about the footprint's centre.
- car: a path of curvature <= 1/R from a pose on the arriving edge to a pose on the
  leaving one, 1, 2 or 3 R from the node (as far as the edges reach), whose swept
  footprint keeps the margin: straight on and one arc of radius R tangent to both edges'
  lines, or the shortest Dubins path between the two poses; for a car that may reverse
  (``robot.reverse``) also the shortest Reeds-Shepp path (reeds_shepp.py), which may back
  up (a three-point turn, say). Only these paths are tried, not every path of bounded
  curvature: a turn that some other path could make may be reported as forbidden. The
  paths and how they are judged, all at once and mostly by bounds: manoeuvres.py.

Swept footprints are convex hulls of consecutive poses (see body.py): a turn in place
misses at most ``swing * (1 - cos(step / 2))``, an arc of radius R at most
``(R + swing) * (1 - cos(step / 2))`` with step = 0.05 rad (0.3 mm per metre).
The results go on the graph: node attribute ``turns``, the allowed pairs as
``"e1:e2 e1:e3"`` (edge ids, each pair once, in natural order; ``e4:e4`` is turning round
on e4; ``"-"`` when no turn is allowed), and ``reverse_only`` on dead ends where the robot cannot turn round.
"""

from __future__ import annotations

import math

import numpy as np
import shapely

from clearway.roadmap.body import MAX_STEP_ANGLE, Shortfall, angle_between, move_gaps
from clearway.roadmap.inflate import polylines
from clearway.roadmap.manoeuvres import car_gaps
from clearway.roadmap.model import BodyShortfall, Robot


def natural(key: str):
    """Sort key: 'e2' before 'e10'."""
    head = key.rstrip("0123456789")
    tail = key[len(head):]
    return (head, int(tail) if tail else -1, key)


def pair_text(pairs) -> str:
    """The compact ``turns`` attribute for a set of (edge, edge) pairs; "-" for none (an
    empty value could be dropped by a GraphML writer or reader, which would read as no
    restriction at all)."""
    rank = {name: natural(name) for pair in pairs for name in pair}   # each name once
    ordered = sorted({tuple(sorted(pair, key=rank.__getitem__)) for pair in pairs},
                     key=lambda pair: (rank[pair[0]], rank[pair[1]]))
    return " ".join(f"{a}:{b}" for a, b in ordered) or "-"


def parse_turns(text: str) -> set[tuple[str, str]]:
    """Read a ``turns`` attribute back: the allowed pairs, both orders."""
    pairs = set()
    for item in str(text).split():
        if item == "-":
            continue
        a, sep, b = item.partition(":")
        if not sep or not a or not b:
            raise ValueError(f"turns entry {item!r} is not EDGE:EDGE")
        pairs.update({(a, b), (b, a)})
    return pairs


def _leaving(coords: np.ndarray, at: np.ndarray) -> tuple[np.ndarray, float]:
    """Orient an edge's coordinates away from `at`; return them and the leaving heading."""
    if np.hypot(*(coords[-1] - at)) < np.hypot(*(coords[0] - at)):
        coords = coords[::-1]
    step = coords[1:2] - coords[:1]           # mostly the first step moves: tested alone
    if not (len(step) and np.hypot(*step[0]) > 1e-9):
        step = np.diff(coords, axis=0)
        moving = np.flatnonzero(np.hypot(*step.T) > 1e-9)
        if len(moving) == 0:
            return coords, math.nan
        step = step[moving[:1]]
    dx, dy = step[0].tolist()
    return coords, math.atan2(dy, dx)


def _leavings(coords_of: list, at_of: list) -> list[tuple[np.ndarray, float]]:
    """`_leaving` of many edges (n_i, 2) and points (2,): the same coordinates and
    headings (numpy's hypot and differences element by element, the math module's
    atan2); only an edge whose first step does not move takes `_leaving` itself."""
    if not coords_of:
        return []
    at = np.array(at_of, dtype=float).reshape(-1, 2)
    ends = np.array([(c[0], c[1], c[-2], c[-1]) if len(c) >= 2 else (c[0], c[0], c[0], c[0])
                     for c in coords_of], dtype=float)
    turned = np.hypot(*(ends[:, 3] - at).T) < np.hypot(*(ends[:, 0] - at).T)
    step = np.where(turned[:, None], ends[:, 2] - ends[:, 3], ends[:, 1] - ends[:, 0])
    moving = (np.hypot(*step.T) > 1e-9).tolist()
    found = []
    for coords, where, flip, go, (dx, dy) in zip(coords_of, at_of, turned.tolist(), moving,
                                                  step.tolist()):
        if go and len(coords) >= 2:
            found.append((coords[::-1] if flip else coords, math.atan2(dy, dx)))
        else:
            found.append(_leaving(coords, where))
    return found


def _clear(robot: Robot, field, a_xy, a_heading, b_xy, b_heading) -> float:
    """Smallest gap beside the body over moves a -> b (arrays), metres."""
    return float(move_gaps(robot, field, a_xy, a_heading, b_xy, b_heading).min()) \
        if len(a_xy) else math.inf


def _rotation_gap(robot: Robot, field, xy, start: float, turn: float) -> float:
    """Gap beside the body turning in place at `xy` from `start` by `turn` radians."""
    pieces = max(1, math.ceil(abs(turn) / MAX_STEP_ANGLE))
    angles = start + turn * np.arange(pieces + 1) / pieces
    where = np.repeat(np.asarray(xy, float)[None], pieces, axis=0)
    return _clear(robot, field, where, angles[:-1], where, angles[1:])


def check_turns(robot: Robot, field, graph, offset, floor=None) -> list[BodyShortfall]:
    """Set ``turns`` and ``reverse_only`` on every node; return the forbidden turns.

    Parameters
    ----------
    robot : Robot with a body (``robot.has_body``)
    field : ClearanceField of the local frame; offset : (x0, y0) of the local frame, m
    graph : networkx.MultiGraph in the drawing frame (edited in place)
    floor : the free floor in the local frame, optional (see manoeuvres.car_gaps)
    """
    shift = np.asarray(offset, dtype=float)
    need = robot.swing + robot.margin if robot.length is not None else \
        robot.radius + robot.margin
    forbidden, cars, allowed_at = [], [], {}
    nodes = sorted(graph.nodes, key=natural)
    xy = np.array([[graph.nodes[n]["x"], graph.nodes[n]["y"]] for n in nodes]).reshape(-1, 2)
    room = field.at(xy - shift) if len(nodes) else np.zeros(0)
    # each edge's natural sort key and local coordinates, once (an edge meets two nodes)
    keys_of = [key for _, _, key in graph.edges(keys=True)]
    geometry = [data for _, _, data in graph.edges(data="geometry")]     # the same order
    rank = {key: natural(key) for key in keys_of}
    local_of = dict(zip(keys_of, np.split(
        shapely.get_coordinates(geometry).reshape(-1, 2) - shift,
        np.cumsum(shapely.get_num_coordinates(geometry)).astype(int)[:-1])))
    here_of = [xy[index] - shift for index in range(len(nodes))]
    incident_of = [sorted(((key, data) for _, _, key, data in
                           graph.edges(node, keys=True, data=True)),
                          key=lambda item: rank[item[0]]) for node in nodes]
    leaving = iter(_leavings([local_of[key] for incident in incident_of
                              for key, _ in incident],
                             [here for here, incident in zip(here_of, incident_of)
                              for _ in incident]))
    for index, node in enumerate(nodes):
        here, incident = here_of[index], incident_of[index]
        legs = {}
        for key, data in incident:
            coords, heading = next(leaving)
            if not math.isnan(heading):
                legs[key] = (coords, heading)
        allowed = set()
        keys = [key for key, _ in incident]
        for i, a in enumerate(keys):
            for b in keys[i:]:
                if a not in legs or b not in legs:
                    allowed.add((a, b))       # a station on its node: no heading to keep
                    continue
                arrive = legs[a][1] + math.pi
                # angle_between on floats: Python's % is numpy's (as in fillet)
                turn = -((math.pi - (legs[b][1] - arrive)) % (2 * math.pi) - math.pi) \
                    if a != b else math.pi
                if robot.kind == "car":
                    if abs(turn) < 1e-9:
                        allowed.add((a, b))  # straight through: the lanes' own check
                    else:                    # judged below, all manoeuvres at once
                        cars.append((index, a, b, (here, legs[a][0], legs[b][0])))
                    continue
                if room[index] >= need - 1e-9:
                    allowed.add((a, b))          # the whole swept circle is clear
                    continue
                else:
                    gap = _rotation_gap(robot, field, here, arrive, turn)
                    if a == b or abs(abs(turn) - math.pi) < 1e-9:
                        gap = max(gap, _rotation_gap(robot, field, here, arrive,
                                                     -math.copysign(2 * math.pi, turn) + turn))
                    has, needs = float(room[index]), need
                    note = (f"turning in place needs {need:.2f} m clear radius, has "
                            f"{room[index]:.2f} m; the turn's swept footprint "
                            + (f"keeps {max(gap, 0):.2f} m of the {robot.margin:.2f} m margin"
                               if robot.margin > 0 else "crosses an obstacle"))
                if gap >= robot.least_gap:
                    allowed.add((a, b))
                    continue
                x, y = xy[index]
                forbidden.append(BodyShortfall("turn round" if a == b else "turn",
                                               float(x), float(y), float(needs), float(has),
                                               (a, b), node, note))
        allowed_at[node] = (allowed, keys)
    gaps = car_gaps(robot, field, [c[3] for c in cars], floor)
    for (index, a, b, _), gap in zip(cars, gaps):
        if gap >= robot.least_gap:
            allowed_at[nodes[index]][0].add((a, b))
            continue
        x, y = xy[index]
        forbidden.append(BodyShortfall(
            "turn round" if a == b else "turn", float(x), float(y), robot.margin, float(gap),
            (a, b), nodes[index],
            f"no {'' if robot.reverse else 'forward '}path of radius {robot.turn_radius:.2f} "
            f"m tried keeps {robot.kept_beside(gap)}"))
    for node, (allowed, keys) in allowed_at.items():
        graph.nodes[node]["turns"] = pair_text(allowed)
        graph.nodes[node]["reverse_only"] = bool(len(keys) == 1 and
                                                 (keys[0], keys[0]) not in allowed)
    return forbidden


#: A lane vertex is a bend a car cannot follow where its heading turns faster than
#: (1 + BEND_SLACK) / R over the two half segments beside it, by more than BEND_ANGLE.
BEND_SLACK = 0.1
BEND_ANGLE = 0.02


def car_bends(robot: Robot, field, lines, ends, floor=None):
    """Keep the lanes a car can drive: where a lane bends faster than 1/R, a manoeuvre
    (as for a turn at a node) must lead from before the bend to after it.

    Returns the kept lines, their ends, and a Shortfall per dropped lane (local frame).
    """
    # every lane's vertices at once (the same differences, headings and turns as lane by
    # lane: numpy's arithmetic element by element); only the few lanes with a vertex
    # sharp enough take their own running sums and bend middles
    lines = np.asarray(lines, dtype=object).reshape(-1)
    xy, owner = shapely.get_coordinates(lines, return_index=True)
    moved = np.hypot(*np.diff(xy, axis=0).T) > 1e-9
    keep = np.r_[True, moved | (owner[1:] != owner[:-1])][:len(xy)]
    xy, owner = xy[keep], owner[keep]
    all_coords = np.split(xy, np.cumsum(np.bincount(owner, minlength=len(lines)))[:-1])
    step = np.diff(xy, axis=0)
    length = np.hypot(*step.T)
    heading = np.arctan2(step[:, 1], step[:, 0])
    turn = np.abs(angle_between(heading[:-1], heading[1:]))
    span = (length[:-1] + length[1:]) / 2
    # the turn at vertex k + 1 joins steps k and k + 1, both within one lane
    inside = (owner[1:-1] == owner[:-2]) & (owner[2:] == owner[1:-1])
    sharp = np.flatnonzero(inside & (turn > BEND_ANGLE) &
                           (turn > (1 + BEND_SLACK) * span / robot.turn_radius)) + 1
    first = np.searchsorted(owner, np.arange(len(lines)))
    bends, jobs = [[] for _ in range(len(lines))], []     # per lane its bend vertices
    for lane in np.unique(owner[sharp]).tolist():
        coords = all_coords[lane]
        mine = sharp[owner[sharp] == lane] - first[lane]
        along = np.concatenate([[0.0], np.cumsum(np.hypot(*np.diff(coords, axis=0).T))])
        for vertex in _bend_middles(mine, along, robot.turn_radius):
            bends[lane].append((vertex, len(jobs)))
            jobs.append((coords[vertex], coords[:vertex + 1][::-1], coords[vertex:]))
    gaps = car_gaps(robot, field, jobs, floor)
    kept_lines, kept_ends, short = [], [], []
    for coords, (u, v), mine in zip(all_coords, ends, bends):
        worst = next(((coords[vertex], gaps[job]) for vertex, job in mine
                      if gaps[job] < robot.least_gap), None)
        if worst is None:
            kept_lines.append(coords)
            kept_ends.append((u, v))
        else:
            short.append(Shortfall(float(worst[0][0]), float(worst[0][1]), float(worst[1]),
                                   f"bends faster than the {robot.turn_radius:.2f} m turning "
                                   f"radius and no {'' if robot.reverse else 'forward '}"
                                   "path tried keeps "
                                   f"{robot.kept_beside(worst[1])}; lane dropped"))
    return polylines(kept_lines), kept_ends, short


def _bend_middles(sharp, along, radius):
    """The middle vertex of each run of sharp vertices less than `radius` apart."""
    middles, run = [], []
    for vertex in sharp:
        if run and along[vertex] - along[run[-1]] > radius:
            middles.append(run[len(run) // 2])
            run = []
        run.append(int(vertex))
    if run:
        middles.append(run[len(run) // 2])
    return middles
