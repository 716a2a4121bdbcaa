"""Shortest paths of bounded curvature driving forwards: the six Dubins words.

Between two poses (x, y, heading) the shortest forward path whose curvature never exceeds
1/R is one of LSL, RSR, LSR, RSL, RLR, LRL: arcs of radius R (L left, R right) and straight
segments (S) [Dub57]_. Each word's segment lengths come in closed form [SL01]_; every
candidate is driven to its end and kept only if it lands on the goal pose, so a formula that
does not apply (or a rounding slip) cannot give a wrong path.

References
----------
.. [Dub57] L. E. Dubins, "On curves of minimal length with a constraint on average
   curvature, and with prescribed initial and terminal positions and tangents", American
   Journal of Mathematics 79(3), 1957.
.. [SL01] A. M. Shkel and V. Lumelsky, "Classification of the Dubins set", Robotics and
   Autonomous Systems 34, 2001.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

#: Largest heading change between sampled poses on an arc, radians.
ARC_STEP = 0.05
#: A candidate must land within this of the goal (position in R units, heading in rad).
LANDING = 1e-6

#: Rounding allowed in a formula's square root or arc cosine argument (tangent cases).
SLACK = 1e-9

WORDS = ("LSL", "RSR", "LSR", "RSL", "RLR", "LRL")


def _mod2pi(angle: float) -> float:
    return angle % (2 * math.pi)


def _candidates(alpha: float, beta: float, d: float):
    """(word, (t, p, q)) for each word that has a solution; lengths in units of R."""
    sa, sb, ca, cb = math.sin(alpha), math.sin(beta), math.cos(alpha), math.cos(beta)
    cab = math.cos(alpha - beta)
    found = []
    p2 = 2 + d * d - 2 * cab + 2 * d * (sa - sb)
    if p2 >= -SLACK:
        angle = math.atan2(cb - ca, d + sa - sb)
        found.append(("LSL", (_mod2pi(angle - alpha), math.sqrt(max(p2, 0.0)), _mod2pi(beta - angle))))
    p2 = 2 + d * d - 2 * cab + 2 * d * (sb - sa)
    if p2 >= -SLACK:
        angle = math.atan2(ca - cb, d - sa + sb)
        found.append(("RSR", (_mod2pi(alpha - angle), math.sqrt(max(p2, 0.0)), _mod2pi(angle - beta))))
    p2 = -2 + d * d + 2 * cab + 2 * d * (sa + sb)
    if p2 >= -SLACK:
        p = math.sqrt(max(p2, 0.0))
        angle = math.atan2(-ca - cb, d + sa + sb) - math.atan2(-2.0, p)
        found.append(("LSR", (_mod2pi(angle - alpha), p, _mod2pi(angle - beta))))
    p2 = d * d - 2 + 2 * cab - 2 * d * (sa + sb)
    if p2 >= -SLACK:
        p = math.sqrt(max(p2, 0.0))
        angle = math.atan2(ca + cb, d - sa - sb) - math.atan2(2.0, p)
        found.append(("RSL", (_mod2pi(alpha - angle), p, _mod2pi(beta - angle))))
    tmp = (6 - d * d + 2 * cab + 2 * d * (sa - sb)) / 8
    if abs(tmp) <= 1 + SLACK:
        p = _mod2pi(2 * math.pi - math.acos(max(-1.0, min(1.0, tmp))))
        t = _mod2pi(alpha - math.atan2(ca - cb, d - sa + sb) + p / 2)
        found.append(("RLR", (t, p, _mod2pi(alpha - beta - t + p))))
    tmp = (6 - d * d + 2 * cab + 2 * d * (sb - sa)) / 8
    if abs(tmp) <= 1 + SLACK:
        p = _mod2pi(2 * math.pi - math.acos(max(-1.0, min(1.0, tmp))))
        t = _mod2pi(-alpha - math.atan2(ca - cb, d + sa - sb) + p / 2)
        found.append(("LRL", (t, p, _mod2pi(beta - alpha - t + p))))
    return found


def _drive(pose, word: str, lengths, radius: float):
    """End pose after driving `word` with segment `lengths` (units of R) from `pose`."""
    x, y, heading = pose
    for letter, length in zip(word, lengths):
        if letter == "S":
            x += length * radius * math.cos(heading)
            y += length * radius * math.sin(heading)
            continue
        turn = length if letter == "L" else -length
        side = 1.0 if letter == "L" else -1.0
        cx, cy = x - side * radius * math.sin(heading), y + side * radius * math.cos(heading)
        heading += turn
        x, y = cx + side * radius * math.sin(heading), cy - side * radius * math.cos(heading)
    return x, y, heading


def lands(start, goal, word: str, lengths, radius: float) -> bool:
    """Whether driving `word` with `lengths` (units of R) from `start` ends on `goal`."""
    x, y, heading = _drive(tuple(start), word, lengths, radius)
    miss = math.hypot(x - goal[0], y - goal[1]) / radius
    turn = abs((heading - goal[2] + math.pi) % (2 * math.pi) - math.pi)
    return miss <= LANDING and turn <= LANDING


def check_radius(radius: float) -> None:
    """Refuse a turning radius that is not a finite number > 0."""
    if not (math.isfinite(radius) and radius > 0):
        raise ValueError(f"turning radius must be > 0 m, got {radius}")


@dataclass(frozen=True)
class DubinsPath:
    """A path of curvature <= 1/radius: `word` with `lengths` in units of radius (negative
    lengths are driven backwards: Reeds-Shepp paths, see reeds_shepp.py)."""

    start: tuple[float, float, float]
    word: str
    lengths: tuple[float, float, float]
    radius: float

    @property
    def length(self) -> float:
        """Driven length, metres."""
        return self.radius * sum(map(abs, self.lengths))

    def poses(self, *, step: float = ARC_STEP) -> np.ndarray:
        """Poses along the path, (N, 3): x, y, heading; arcs every `step` radians at most,
        straight segments by their two ends only."""
        x, y, heading = self.start
        rows = [np.array([[x, y, heading]], dtype=float)]
        radius = self.radius
        for letter, length in zip(self.word, self.lengths):
            if length == 0:
                continue
            pieces = 1 if letter == "S" else max(1, math.ceil(abs(length) / step))
            part = length * np.arange(1, pieces + 1) / pieces
            if letter == "S":
                piece = np.column_stack([x + part * radius * math.cos(heading),
                                         y + part * radius * math.sin(heading),
                                         np.full(pieces, heading)])
            else:
                side = 1.0 if letter == "L" else -1.0
                cx = x - side * radius * math.sin(heading)
                cy = y + side * radius * math.cos(heading)
                turned = heading + side * part
                piece = np.column_stack([cx + side * radius * np.sin(turned),
                                         cy - side * radius * np.cos(turned), turned])
            rows.append(piece)
            x, y, heading = (float(v) for v in piece[-1])
        return np.concatenate(rows)


def poses_of(paths, *, step: float = ARC_STEP, every: int | None = None):
    """The poses of many paths at once: ``path.poses(step=step)`` of each, the same
    numbers, one after another in one (N, 3) array; and how many each path has, (P,).

    Each segment's start is worked out as `DubinsPath.poses` does (the same operations,
    so the same floats), for the same segment of every path together: the math module's
    sine and cosine of each heading, numpy's of each arc's end; the poses within the
    segments, most of the work, for all segments together.

    With `every` (an int > 0), only each path's poses whose index along it is a multiple
    of `every`, and its last, are made (the same floats: each pose is worked out on its
    own): returns those poses (N', 3), how many each path has in all (P,), and the index
    of each of them in the array of all poses (N',).
    """
    count = len(paths)
    if count == 0:
        return (np.empty((0, 3)), np.zeros(0, dtype=int)) + \
            ((np.zeros(0, dtype=int),) if every else ())
    width = max(len(path.word) for path in paths)
    letters = np.array([path.word.ljust(width) for path in paths], dtype=f"<U{width}")
    letters = letters.view("<U1").reshape(count, width)
    lengths = np.zeros((count, width))
    for index, path in enumerate(paths):
        lengths[index, :len(path.lengths)] = path.lengths
    driven = (letters != " ") & (lengths != 0)
    arc = driven & (letters != "S")
    pieces = np.where(arc, np.maximum(1, np.ceil(np.abs(lengths) / step)), driven)
    pieces = pieces.astype(int)
    counts = 1 + pieces.sum(axis=1)
    head = np.r_[0, np.cumsum(counts)[:-1]]
    rows = (head[:, None] + 1 + np.cumsum(pieces, axis=1) - pieces)
    out = np.empty((int(counts.sum()), 3))
    x, y, heading = (np.array(column, dtype=float) for column in
                     zip(*(path.start for path in paths)))
    radius = np.array([path.radius for path in paths], dtype=float)
    out[head] = np.column_stack([x, y, heading])
    table = []                      # per slot: rows of (x, y, heading, cx, cy, cos, sin,
    for slot in range(width):       # length, side, radius, pieces, first row)
        line = np.flatnonzero(driven[:, slot] & ~arc[:, slot])
        if len(line):
            angle = heading[line].tolist()
            cos = np.array([math.cos(value) for value in angle])
            sin = np.array([math.sin(value) for value in angle])
            length = lengths[line, slot]
            table.append((x[line], y[line], heading[line], np.zeros(len(line)),
                          np.zeros(len(line)), cos, sin, length, np.zeros(len(line)),
                          radius[line], np.ones(len(line), dtype=int), rows[line, slot]))
            end = length * 1 / 1 * radius[line]
            x[line] = x[line] + end * cos
            y[line] = y[line] + end * sin
        turn = np.flatnonzero(arc[:, slot])
        if len(turn):
            angle = heading[turn].tolist()
            side = np.where(letters[turn, slot] == "L", 1.0, -1.0)
            swing = side * radius[turn]
            cx = x[turn] - swing * np.array([math.sin(value) for value in angle])
            cy = y[turn] + swing * np.array([math.cos(value) for value in angle])
            length, count_of = lengths[turn, slot], pieces[turn, slot]
            table.append((x[turn], y[turn], heading[turn], cx, cy, np.zeros(len(turn)),
                          np.zeros(len(turn)), length, side, radius[turn], count_of,
                          rows[turn, slot]))
            turned = heading[turn] + side * (length * count_of / count_of)
            x[turn] = cx + swing * np.sin(turned)
            y[turn] = cy - swing * np.cos(turned)
            heading[turn] = turned
    if every:
        # a path's poses are rows head .. head + counts - 1
        index = np.arange(int(counts.sum())) - np.repeat(head, counts)
        wanted = (index % every == 0) | (index == np.repeat(counts - 1, counts))
    if table:
        (x, y, heading, cx, cy, cos, sin, length, side, radius,
         pieces, row) = (np.concatenate(column) for column in zip(*table))
        each = np.repeat(np.arange(len(length)), pieces)
        k = np.arange(len(each)) - np.repeat(np.cumsum(pieces) - pieces, pieces) + 1
        if every:
            keep = wanted[row[each] + k - 1]
            each, k = each[keep], k[keep]
        part = length[each] * k / pieces[each]
        at = row[each] + k - 1
        line = side[each] == 0
        arc = ~line
        s, a = each[line], each[arc]
        along = part[line] * radius[s]
        out[at[line]] = np.column_stack([x[s] + along * cos[s], y[s] + along * sin[s],
                                         heading[s]])
        turned = heading[a] + side[a] * part[arc]
        swing = side[a] * radius[a]
        out[at[arc]] = np.column_stack([cx[a] + swing * np.sin(turned),
                                        cy[a] - swing * np.cos(turned), turned])
    if every:
        rows = np.flatnonzero(wanted)
        return out[rows], counts, rows
    return out, counts


def shortest_path(start, goal, radius: float, *, known: dict | None = None) -> DubinsPath:
    """The shortest forward path of curvature <= 1/`radius` from `start` to `goal`.

    Parameters
    ----------
    start, goal : (x, y, heading), metres and radians
    radius : float, the smallest turning radius, metres, > 0

    Examples
    --------
    >>> path = shortest_path((0, 0, 0), (0, 2, math.pi), 1.0)   # a U-turn: a half circle
    >>> path.word[0], round(path.length, 12) == round(math.pi, 12)
    ('L', True)

    `known`, a dict the caller keeps, holds the sorted candidate words of each goal seen
    from the start, by its exact value (see `reeds_shepp.shortest_path`).
    """
    check_radius(radius)
    dx, dy = goal[0] - start[0], goal[1] - start[1]
    d = math.hypot(dx, dy) / radius
    phi = math.atan2(dy, dx) if d > 0 else 0.0
    alpha, beta = _mod2pi(start[2] - phi), _mod2pi(goal[2] - phi)
    if known is None:
        tried = sorted(_candidates(alpha, beta, d), key=lambda item: sum(item[1]))
    else:
        key = ("dubins", *(float(v).hex() for v in (alpha, beta, d)))  # -0.0 is not 0.0
        if key not in known:
            known[key] = sorted(_candidates(alpha, beta, d), key=lambda item: sum(item[1]))
        tried = known[key]
    best = None
    for word, lengths in tried:
        if lands(start, goal, word, lengths, radius):       # the shortest that lands
            best = (word, lengths)
            break
    if best is None:  # cannot happen for R > 0 (Dubins 1957); kept as a guard
        raise ArithmeticError(f"no Dubins path from {start} to {goal}")
    return DubinsPath(tuple(float(v) for v in start), best[0],
                      tuple(float(v) for v in best[1]), float(radius))
