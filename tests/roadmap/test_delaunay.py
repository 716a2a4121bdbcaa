"""The Delaunay triangulation (startinpy, in one piece or in strips) against scipy's (Qhull's)
triangulation of the same points and against the empty-circle property itself."""

from __future__ import annotations

import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.spatial import Delaunay, cKDTree

import clearway.roadmap.delaunay as module
from clearway.roadmap.delaunay import (circumcircles, delaunay, joined_neighbours, morton_order,
                                       neighbours_of, triangulate)
from clearway.roadmap.gvd import free_circles


def _as_set(simplices):
    return {tuple(t) for t in np.sort(simplices, axis=1).tolist()}


def _twice_areas(points, simplices):
    """Twice the signed area of each triangle (positive: counter-clockwise)."""
    a, b, c = (points[simplices[:, k]] for k in range(3))
    return (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])


def test_random_points_give_qhulls_triangles():
    # points in general position have one Delaunay triangulation: Qhull's is it
    rng = np.random.default_rng(11)
    points = rng.uniform((-50, 0), (50, 30), (20_000, 2))
    simplices = delaunay(points)
    # source: scipy.spatial.Delaunay (Qhull), an independent triangulator
    assert _as_set(simplices) == _as_set(Delaunay(points).simplices)
    # counter-clockwise, as documented
    assert (_twice_areas(points, simplices) > 0).all()


def test_jittered_grid_triangles_have_empty_circumcircles():
    # samples a step apart on parallel faces, jittered by a micrometre as the medial axis
    # does: four points lie on one circle to within rounding all over
    rng = np.random.default_rng(2)
    x, y = np.meshgrid(np.arange(0.0, 60.0, 0.25), np.array([0.0, 1.3, 2.6, 9.0]))
    points = np.column_stack([x.ravel(), y.ravel()]) + rng.uniform(-1e-6, 1e-6, (x.size, 2))
    simplices = delaunay(points)
    # source: Delaunay's empty-circle property (Delaunay 1934): no point strictly inside
    # any triangle's circumcircle; up to the rounding of the circle itself
    centre, radius = circumcircles(points, simplices)
    nearest, _ = cKDTree(points).query(centre, k=1)
    assert (nearest >= radius * (1 - 1e-9) - 1e-12).all()
    # every point is a vertex, and the triangles tile the convex hull
    # source: Euler's formula: a triangulation of n points, h of them on the convex hull,
    # has 2n - 2 - h triangles
    hull = shapely.MultiPoint(points).convex_hull
    assert len(np.unique(simplices)) == len(points)
    assert len(simplices) == 2 * len(points) - 2 - (len(hull.exterior.coords) - 1)
    assert (_twice_areas(points, simplices) > 0).all()
    assert 0.5 * _twice_areas(points, simplices).sum() == pytest.approx(hull.area, rel=1e-9)


def test_points_given_twice_are_in_no_triangle_under_their_second_index():
    rng = np.random.default_rng(4)
    points = rng.uniform(0, 10, (300, 2))
    doubled = np.concatenate([points, points[::3]])
    simplices = delaunay(doubled)
    assert _as_set(simplices) == _as_set(delaunay(points))
    assert simplices.max() < len(points)


def test_no_triangles_without_three_points_off_one_line():
    assert delaunay(np.array([[0.0, 0.0], [1.0, 1.0], [2.0, 2.0]])).shape == (0, 3)
    assert delaunay(np.zeros((0, 2))).shape == (0, 3)
    assert delaunay(np.array([[0.0, 0.0], [1.0, 0.0]])).shape == (0, 3)


def test_morton_order_visits_quadrants_in_z_order():
    # source: Morton (1966), bits of x and y interleaved with x in the low bit
    points = np.array([[3.0, 3.0], [0.0, 0.0], [3.0, 0.0], [0.0, 3.0], [1.0, 1.0]])
    assert morton_order(points, bits=2).tolist() == [1, 4, 2, 3, 0]
    assert morton_order(np.zeros((0, 2))).tolist() == []


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
    # each half's neighbours, made where it was, joined: those of all triangles at once
    # (neighbours_of itself is held to Qhull's in the test above)
    assert np.array_equal(one_n, neighbours_of(one))
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


def test_strips_placed_by_a_coarser_triangulations_circles_are_done_once(monkeypatch):
    # a 40 m hall between two 80 m wings of 1 m wide aisles: cut at the middle with 8 m
    # margins, the hall's 20 m circles leave the strips, which are then done again
    rng = np.random.default_rng(8)
    hall = shapely.box(80, 0, 120, 40)
    wings = [shapely.box(x, 0, x + 1, 40) for x in np.arange(0.0, 80.0, 2.0)] + \
        [shapely.box(x, 0, x + 1, 40) for x in np.arange(121.0, 200.0, 2.0)]
    floor = shapely.union_all([hall, *wings])
    shapely.prepare(floor)

    def samples(step):
        ring = shapely.segmentize(floor.boundary, step)
        points = np.unique(shapely.get_coordinates(ring), axis=0)
        return points + rng.uniform(-1e-6, 1e-6, points.shape)

    points = samples(0.5)
    coarse = samples(2.0)
    circles = free_circles(coarse, delaunay(coarse), floor)
    calls = []
    monkeypatch.setattr(module, "delaunay", lambda some: calls.append(len(some)) or
                        delaunay(some))
    monkeypatch.setenv("CLEARWAY_PROCESSES", "1")
    expected = None
    for guide in (None, circles):
        calls.clear()
        simplices, _ = triangulate(points, floor, split_points=1000, circles=guide)
        # independent reference: scipy's triangulation of all points, on the triangles
        # centred in the floor (the strips keep all of those)
        if expected is None:
            whole = Delaunay(points)
            centre, _ = circumcircles(points, whole.simplices)
            inside = shapely.contains_xy(floor, centre[:, 0], centre[:, 1])
            expected = _as_set(whole.simplices[inside])
        centre, _ = circumcircles(points, simplices)
        kept = shapely.contains_xy(floor, centre[:, 0], centre[:, 1])
        assert _as_set(simplices[kept]) == expected
        if guide is None:
            assert len(calls) > 2                 # a strip was done again
        else:
            assert len(calls) == 2                # each strip once


@settings(max_examples=40, deadline=None)
@given(st.integers(0, 2**32 - 1), st.integers(3, 400), st.floats(0.0, 1.0))
def test_neighbours_joined_from_two_parts_are_those_of_the_whole(seed, count, share):
    points = np.random.default_rng(seed).uniform(0, 10, (count, 2))
    simplices = Delaunay(points).simplices
    cut = int(share * len(simplices))
    joined = joined_neighbours(simplices, neighbours_of(simplices[:cut]),
                               neighbours_of(simplices[cut:]))
    # source: scipy's Qhull neighbours of the same triangles
    assert np.array_equal(joined, Delaunay(points).neighbors)
