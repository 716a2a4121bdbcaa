"""Dubins path lengths against closed cases and an independent numerical solution.

The registry's `dubins` package (MIT) no longer builds on Python 3.11 and `easydubins` is
GPL-3.0, so the independent reference here is numerical: for each of the six words, scipy's
least squares finds segment lengths that land on the goal (from many starting guesses),
and scipy's ODE solver drives the path found; neither uses the closed forms under test.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import solve_ivp
from scipy.optimize import least_squares

from clearway.roadmap import reeds_shepp
from clearway.roadmap.dubins import WORDS, poses_of, shortest_path

TURN = {"L": 1.0, "S": 0.0, "R": -1.0}


def integrate(start, word, lengths, radius):
    """Drive `word` with segment `lengths` (radians or R units) by solving the ODE
    x' = cos h, y' = sin h, h' = k / R over arc length."""
    state = np.array(start, dtype=float)
    for letter, length in zip(word, lengths):
        if length <= 0:
            continue
        k = TURN[letter]
        solution = solve_ivp(lambda s, z: [math.cos(z[2]), math.sin(z[2]), k / radius],
                             (0.0, length * radius), state, rtol=1e-11, atol=1e-12)
        state = solution.y[:, -1]
    return state


def reference_length(start, goal, radius):
    """Shortest landing word by least squares on the closed-loop pose error."""
    best = math.inf
    guesses = [(t, p, q) for t in (0.5, 2.5, 4.5) for p in (0.5, 4.0) for q in (0.5, 2.5, 4.5)]

    def end_pose(word, lengths):
        x, y, h = start
        for letter, length in zip(word, lengths):
            k = TURN[letter]
            if k == 0:
                x, y = x + length * radius * math.cos(h), y + length * radius * math.sin(h)
            else:
                cx, cy = x - k * radius * math.sin(h), y + k * radius * math.cos(h)
                h += k * length
                x, y = cx + k * radius * math.sin(h), cy - k * radius * math.cos(h)
        return x, y, h

    for word in WORDS:
        upper = [2 * math.pi, 50.0 if word[1] == "S" else 2 * math.pi, 2 * math.pi]
        for guess in guesses:
            guess = np.minimum(guess, np.array(upper) - 1e-6)

            def residual(lengths):
                x, y, h = end_pose(word, lengths)
                return [x - goal[0], y - goal[1], math.sin((h - goal[2]) / 2) * 2 * radius]
            fit = least_squares(residual, guess, bounds=([0, 0, 0], upper), xtol=1e-14,
                                ftol=1e-14, gtol=1e-14)
            if np.abs(fit.fun).max() < 1e-8:
                best = min(best, radius * float(np.sum(fit.x)))
    return best


@pytest.mark.parametrize("goal, expected", [
    ((5.0, 0.0, 0.0), 5.0),                         # analytic: straight ahead
    ((2.0, 2.0, math.pi / 2), math.pi),             # analytic: a quarter circle of R = 2
    ((0.0, 4.0, math.pi), 2 * math.pi),             # analytic: a half circle of R = 2
    ((0.0, -6.0, math.pi), 2 * math.pi + 2.0),
])
def test_closed_cases(goal, expected):
    # analytic (last case): a quarter right turn about (0, -2) to (2, -2) heading south,
    # 2 m straight, a quarter right turn about (0, -4) to (0, -6) heading west: pi R + 2
    path = shortest_path((0.0, 0.0, 0.0), goal, 2.0)
    assert path.length == pytest.approx(expected, rel=1e-9)
    end = integrate(path.start, path.word, path.lengths, path.radius)
    assert end[:2] == pytest.approx(goal[:2], abs=1e-6)
    assert math.cos(end[2] - goal[2]) == pytest.approx(1.0, abs=1e-9)


def test_lengths_match_the_numerical_reference_at_random_poses():
    rng = np.random.default_rng(14)
    for _ in range(8):
        start = (0.0, 0.0, float(rng.uniform(-math.pi, math.pi)))
        goal = (float(rng.uniform(-6, 6)), float(rng.uniform(-6, 6)),
                float(rng.uniform(-math.pi, math.pi)))
        radius = float(rng.uniform(0.5, 2.5))
        path = shortest_path(start, goal, radius)
        assert path.length == pytest.approx(reference_length(start, goal, radius), rel=1e-7)
        end = integrate(start, path.word, path.lengths, radius)
        assert end[:2] == pytest.approx(goal[:2], abs=1e-6)
        assert math.cos(end[2] - goal[2]) == pytest.approx(1.0, abs=1e-9)


def random_paths(rng, count):
    """The shortest forward and the shortest Reeds-Shepp path between `count` random pose
    pairs, some goals near the start."""
    paths = []
    for _ in range(count):
        start = (*rng.uniform(-20, 20, 2), rng.uniform(-4, 4))
        goal = (*rng.uniform(-20, 20, 2) * rng.choice([0.02, 1.0]), rng.uniform(-4, 4))
        radius = rng.uniform(0.5, 3.0)
        paths += [shortest_path(start, goal, radius),
                  reeds_shepp.shortest_path(start, goal, radius)]
    return paths


def test_poses_of_many_paths_are_those_of_each():
    # analytic: the same operations on the same numbers give the same floats, so the
    # poses of many paths at once equal each path's own, bit for bit, reversing ones too
    paths = random_paths(np.random.default_rng(7), 200)
    every, counts = poses_of(paths, step=0.05)
    assert np.array_equal(every, np.concatenate([path.poses(step=0.05) for path in paths]))
    assert counts.tolist() == [len(path.poses(step=0.05)) for path in paths]
    assert poses_of([])[0].shape == (0, 3)


@pytest.mark.parametrize("every", [1, 3, 8])
def test_poses_of_every_kth_pose_are_those_of_all(every):
    # analytic: each pose is worked out on its own, so the poses made alone are the rows
    # of all poses, bit for bit: each path's multiples of `every` along it and its last
    paths = random_paths(np.random.default_rng(11), 100)
    full, counts = poses_of(paths, step=0.05)
    some, some_counts, rows = poses_of(paths, step=0.05, every=every)
    head = np.cumsum(counts) - counts
    wanted = [h + j for h, n in zip(head.tolist(), counts.tolist())
              for j in range(n) if j % every == 0 or j == n - 1]
    assert rows.tolist() == wanted
    assert np.array_equal(some, full[rows])
    assert np.array_equal(some_counts, counts)
    assert poses_of([], every=every)[2].shape == (0,)


def test_remembered_candidates_give_the_same_path():
    # analytic: the candidate words depend on the goal seen from the start alone, so a
    # shared memo gives the very path computed afresh (turns round repeat exactly)
    known = {}
    rng = np.random.default_rng(11)
    cases = [((*rng.uniform(-9, 9, 2), rng.uniform(-4, 4)),
              (*rng.uniform(-9, 9, 2), rng.uniform(-4, 4)), rng.uniform(0.5, 3))
             for _ in range(30)]
    cases += [((x, 1.0, heading + math.pi), (x, 1.0, heading), 1.5)
              for heading in (0.0, math.pi / 2, -math.pi / 2) for x in (0.0, -0.0, 3.0)]
    for start, goal, radius in cases + cases:
        assert shortest_path(start, goal, radius, known=known) == \
            shortest_path(start, goal, radius)
    assert 0 < len(known) < len(cases)
