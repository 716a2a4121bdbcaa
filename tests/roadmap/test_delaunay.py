"""Strip-wise Delaunay triangulation against scipy's (Qhull's) triangulation of all points."""

from __future__ import annotations

import numpy as np
import shapely
from scipy.spatial import Delaunay

from clearway.roadmap.delaunay import circumcircles, neighbours_of, triangulate


def test_strips_give_the_triangles_of_the_whole_triangulation():
    rng = np.random.default_rng(3)
    points = rng.uniform((0, 0), (20, 200), (6000, 2))
    room = shapely.box(0, 0, 20, 200)
    shapely.prepare(room)
    simplices, neighbours = triangulate(points, room, strip_points=800)
    whole = Delaunay(points)
    centre, _ = circumcircles(points, whole.simplices)
    inside = shapely.contains_xy(room, centre[:, 0], centre[:, 1])
    # independent reference: scipy's triangulation of all points at once
    expected = {tuple(t) for t in np.sort(whole.simplices[inside], axis=1).tolist()}
    got = {tuple(t) for t in np.sort(simplices, axis=1).tolist()}
    assert expected <= got
    centre, _ = circumcircles(points, simplices)
    assert got - expected == {tuple(t) for t in np.sort(simplices[~shapely.contains_xy(
        room, centre[:, 0], centre[:, 1])], axis=1).tolist()} - expected
    # neighbours: matched edges agree with Qhull's where both triangles are kept
    mine = neighbours_of(whole.simplices)
    assert np.array_equal(mine, whole.neighbors)
    assert neighbours.shape == simplices.shape


def test_two_processes_give_the_strips_of_one(monkeypatch):
    # the split is the same whether the second half runs in a forked process or here
    rng = np.random.default_rng(5)
    points = rng.uniform((0, 0), (30, 120), (5000, 2))
    room = shapely.box(0, 0, 30, 120)
    shapely.prepare(room)

    def measure(simplices):
        return (simplices.sum(axis=1), np.array([len(simplices)]))

    results = []
    for processes in ("1", "2"):
        monkeypatch.setenv("CLEARWAY_PROCESSES", processes)
        results.append(triangulate(points, room, split_points=2000, measure=measure))
    (one, one_n, (one_sum, one_count)), (two, two_n, (two_sum, two_count)) = results
    assert np.array_equal(one, two) and np.array_equal(one_n, two_n)
    assert np.array_equal(one_sum, two_sum) and np.array_equal(one_count, two_count)
    # two strips, each measured where it was made, joined in order
    assert len(one_count) == 2 and one_count.sum() == len(one)
    assert np.array_equal(one_sum, one.sum(axis=1))
    # independent reference: scipy's triangulation of all points at once, on the triangles
    # whose circumcentre lies in the room (the strips keep all of those)
    whole = Delaunay(points)
    centre, _ = circumcircles(points, whole.simplices)
    inside = shapely.contains_xy(room, centre[:, 0], centre[:, 1])
    expected = {tuple(t) for t in np.sort(whole.simplices[inside], axis=1).tolist()}
    assert expected <= {tuple(t) for t in np.sort(one, axis=1).tolist()}
