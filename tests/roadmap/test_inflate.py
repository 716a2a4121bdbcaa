"""roadmap/inflate.py: the local frame, the drivable region and the grown obstacles."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely

from clearway.roadmap.inflate import (boundary_segments, drivable_region, inflate_obstacles,
                                      local_offset, to_drawing, to_local)


@pytest.mark.parametrize("bounds, origin", [
    ((500123.4, 5400987.0, 500200.0, 5401000.0), (500000.0, 5401000.0)),
    ((-0.3, -0.3, 60.0, 40.0), (0.0, 0.0)),             # a wall face just below zero
    ((-700.0, 1499.0, 0.0, 2000.0), (-1000.0, 1000.0)),
    ((math.nan, 0.0, 1.0, 1.0), (0.0, 0.0)),
])
def test_local_offset_is_the_nearest_whole_kilometre(bounds, origin):
    assert local_offset(bounds) == origin


def test_to_local_and_back_keeps_survey_coordinates_to_the_snap_grid():
    room = shapely.box(500123.25, 5400987.5, 500150.75, 5401001.125)
    offset = local_offset(shapely.total_bounds(room))
    local = to_local(room, offset)
    assert shapely.total_bounds(local).tolist() == pytest.approx([123.25, -12.5, 150.75, 1.125],
                                                                 abs=1e-9)
    assert shapely.equals_exact(to_drawing(local, offset), room, tolerance=1e-9)


def test_drivable_region_of_a_corridor_is_the_centre_strip():
    corridor = shapely.box(0, 0, 10, 2)
    (region,) = drivable_region(corridor, 0.45)
    # analytic: eroding a 10 x 2 m box by 0.45 m leaves the 9.1 x 1.1 m box
    assert region.area == pytest.approx(9.1 * 1.1, rel=1e-9)
    assert shapely.total_bounds(region).tolist() == pytest.approx([0.45, 0.45, 9.55, 1.55])


def test_a_door_narrower_than_2c_splits_the_region_and_wider_does_not():
    rooms = shapely.box(0, 0, 4, 4) | shapely.box(4.2, 0, 8.2, 4)
    for door, pieces in ((0.8, 2), (1.0, 1)):        # analytic: 2c = 0.9 m
        plan = rooms | shapely.box(3.9, 2 - door / 2, 4.3, 2 + door / 2)
        assert len(drivable_region(plan, 0.45)) == pieces


def test_inflated_square_has_the_area_of_a_rounded_square():
    (grown,) = [inflate_obstacles([shapely.box(0, 0, 2, 1)], 0.5)]
    # analytic: a w x h rectangle grown by r covers w h + 2 r (w + h) + pi r^2
    assert grown.area == pytest.approx(2 + 2 * 0.5 * 3 + math.pi * 0.25, rel=1e-3)
    assert inflate_obstacles([], 0.5).is_empty


def test_boundary_segments_merge_collinear_runs():
    # a row of five 1 m bays leaves a vertex at every joint; one segment per straight run
    bays = shapely.union_all([shapely.box(x, 0, x + 1, 1) for x in range(5)])
    hall = shapely.box(-2, -2, 7, 3).difference(bays)
    segments, previous, following = boundary_segments(hall)
    # analytic: the hall's outline and the row's outline, 4 straight runs each
    assert len(segments) == 8
    assert np.array_equal(following[previous], np.arange(8))
    lengths = np.sort(np.hypot(*(segments[:, 1] - segments[:, 0]).T))
    assert lengths.tolist() == pytest.approx([1, 1, 5, 5, 5, 5, 9, 9])
