"""Reeds-Shepp path lengths against an independent implementation and a numerical drive.

The reference is the registry's `rsplan` (MIT, pure Python; used only here): an
independent coding of the formulas of Reeds and Shepp (1990), with its own segment
bookkeeping. Its choice among near-equal paths prefers fewer segments, so the shortest of
all its candidates is compared, not the path it would pick. Every path of ours is also
driven by scipy's ODE solver (not by the code under test) and must land on the goal.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp

from clearway.roadmap import dubins
from clearway.roadmap.reeds_shepp import all_paths, shortest_path

rsplan = pytest.importorskip("rsplan.planner")

TURN = {"L": 1.0, "S": 0.0, "R": -1.0}


def integrate(start, word, lengths, radius):
    """Drive `word` with signed `lengths` (R units) by solving x' = g cos h, y' = g sin h,
    h' = g k / R over the distance driven, g = +1 forwards and -1 backwards."""
    state = np.array(start, dtype=float)
    for letter, length in zip(word, lengths):
        if length == 0:
            continue
        gear, k = math.copysign(1.0, length), TURN[letter]
        solution = solve_ivp(lambda s, z: [gear * math.cos(z[2]), gear * math.sin(z[2]),
                                           gear * k / radius],
                             (0.0, abs(length) * radius), state, rtol=1e-11, atol=1e-12)
        state = solution.y[:, -1]
    return state


def reference_length(start, goal, radius):
    """The shortest of all rsplan's candidate paths, metres."""
    return min(path.total_length for path in rsplan._solve_path(start, goal, radius, 0.05))


def random_poses(count, seed):
    rng = np.random.default_rng(seed)
    for _ in range(count):
        yield (tuple(rng.uniform([-5, -5, -math.pi], [5, 5, math.pi])),
               tuple(rng.uniform([-5, -5, -math.pi], [5, 5, math.pi])),
               float(rng.choice([0.5, 1.0, 2.5])))


@pytest.mark.parametrize("start, goal, radius", list(random_poses(150, seed=14)))
def test_shortest_length_agrees_with_rsplan_and_lands(start, goal, radius):
    path = shortest_path(start, goal, radius)
    # source: rsplan (independent implementation of Reeds and Shepp 1990)
    assert path.length == pytest.approx(reference_length(start, goal, radius), abs=1e-9)
    end = integrate(start, path.word, path.lengths, radius)
    assert np.hypot(*(end[:2] - goal[:2])) < 1e-6
    assert abs((end[2] - goal[2] + math.pi) % (2 * math.pi) - math.pi) < 1e-6
    # analytic: a forward path is one a car that may reverse can drive too
    assert path.length <= dubins.shortest_path(start, goal, radius).length + 1e-9


def test_closed_cases():
    # analytic: straight back d metres costs d; a quarter turn forward on the circle
    # costs R pi / 2 and so does the same quarter driven backwards
    assert shortest_path((0, 0, 0), (-3, 0, 0), 1.0).length == pytest.approx(3.0)
    forward = shortest_path((0, 0, 0), (2, 2, math.pi / 2), 2.0)
    assert (forward.word[0], forward.length) == ("L", pytest.approx(math.pi))
    backward = shortest_path((0, 0, 0), (-2, 2, -math.pi / 2), 2.0)
    assert backward.length == pytest.approx(math.pi) and backward.lengths[0] < 0
    # analytic: the lengths are invariant under the symmetries of RS90 sec. 8 (time flip:
    # goal (x, y, phi) -> (-x, y, -phi); reflection: (x, y, phi) -> (x, -y, -phi))
    for (x, y, phi) in [(1.0, 0.3, 2.5), (-0.2, 0.1, math.pi - 0.1), (3.0, -2.0, -1.0)]:
        base = shortest_path((0, 0, 0), (x, y, phi), 1.0).length
        assert shortest_path((0, 0, 0), (-x, y, -phi), 1.0).length == pytest.approx(base)
        assert shortest_path((0, 0, 0), (x, -y, -phi), 1.0).length == pytest.approx(base)


def test_every_candidate_lands_and_has_at_most_two_cusps():
    # source: Reeds and Shepp 1990, sec. 8: optimal words have at most five segments and
    # two cusps (changes of driving direction)
    for start, goal, radius in random_poses(40, seed=3):
        for path in all_paths(start, goal, radius):
            gears = [math.copysign(1.0, v) for v in path.lengths if v != 0]
            assert len(path.word) <= 5
            assert sum(a != b for a, b in zip(gears, gears[1:])) <= 2
            end = integrate(start, path.word, path.lengths, radius)
            assert np.hypot(*(end[:2] - goal[:2])) < 1e-6
        poses = shortest_path(start, goal, radius).poses()
        assert np.allclose(poses[-1, :2], goal[:2], atol=1e-9)


def test_remembered_candidates_give_the_same_paths():
    # analytic: the candidate words depend on the goal seen from the start alone, so a
    # shared memo must give the very path computed afresh, -0.0 apart from 0.0 (atan2
    # tells them apart); turns round on the axes repeat exactly
    known = {}
    cases = [(start, goal, radius) for start, goal, radius in random_poses(30, seed=5)]
    for heading in (0.0, math.pi / 2, math.pi, -math.pi / 2, 0.3):
        for x in (0.0, -0.0, 4.0):
            cases.append(((x, 2.0, heading + math.pi), (x, 2.0, heading), 1.5))
    for start, goal, radius in cases + cases:
        assert shortest_path(start, goal, radius, known=known) == \
            shortest_path(start, goal, radius)
    assert 0 < len(known) < len(cases)
