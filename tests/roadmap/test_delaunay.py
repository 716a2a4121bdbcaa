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
