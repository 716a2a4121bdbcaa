"""Point-in-area in stripes against GEOS's prepared test of the whole area."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from clearway.roadmap.inside import contains_points


def _floor(rng, parts: int):
    """Parts of a floor, each a hall less rotated racks (holes), some touching each other."""
    polygons = []
    for index in range(parts):
        x0 = 130.0 * index
        hall = shapely.box(x0, 0, x0 + 120, 60)
        racks = [shapely.affinity.rotate(shapely.box(x, y, x + rng.uniform(4, 12),
                                                     y + rng.uniform(0.8, 3)),
                                         rng.uniform(0, 180), origin="centroid")
                 for x, y in rng.uniform((x0 + 10, 10), (x0 + 100, 50), (40, 2))]
        racks.append(shapely.box(x0 + 20, 0, x0 + 30, 5))               # on the outer wall
        racks.append(shapely.Point(x0 + 60, 30).buffer(4))               # round column
        polygons += list(shapely.get_parts(hall.difference(shapely.union_all(racks))))
    return shapely.MultiPolygon(polygons)


@pytest.mark.parametrize("seed", range(4))
def test_stripes_answer_as_the_prepared_test_of_the_whole_area(seed):
    rng = np.random.default_rng(seed)
    floor = _floor(rng, parts=1 + seed % 3)
    assert floor.is_valid and sum(len(p.interiors) for p in floor.geoms) > 10
    left, bottom, right, top = floor.bounds
    points = rng.uniform((left - 5, bottom - 5), (right + 5, top + 5), (20_000, 2))
    # every vertex (on the boundary: outside) and points a hair to either side of one
    vertices = shapely.get_coordinates(floor)
    points = np.vstack([points, vertices, vertices + 1e-12, vertices - 1e-12,
                        [[np.nan, 1.0], [1e17, 3.0], [-1e16, -1e16]]])
    whole = shapely.from_wkb(shapely.to_wkb(floor))
    shapely.prepare(whole)
    # source: GEOS through shapely, the prepared point-in-area test of the whole area
    expected = shapely.contains_xy(whole, points[:, 0], points[:, 1])
    for stripes in (2, 7, 32):
        got = contains_points(floor, points[:, 0], points[:, 1], stripes=stripes, min_points=0)
        assert np.array_equal(got, expected)
    assert not got[20_000:20_000 + len(vertices)].any()          # analytic: on the boundary


def test_racks_and_aisles():
    # analytic: in a 100 m x 40 m hall with racks 2 m deep every 5 m, a rack's middle is not
    # floor, an aisle's middle is, and a point on a rack's face is not in the interior
    racks = [shapely.box(5 + 5 * i, 5, 7 + 5 * i, 35) for i in range(18)]
    hall = shapely.box(0, 0, 100, 40).difference(shapely.union_all(racks))
    x = np.array([6.0 + 5 * i for i in range(18)] + [9.5 + 5 * i for i in range(17)] + [7.0])
    y = np.full(len(x), 20.0)
    got = contains_points(hall, x, y, stripes=5, min_points=0)
    assert got.tolist() == [False] * 18 + [True] * 17 + [False]


def test_an_invalid_area_takes_the_whole_test():
    # a bow tie: GEOS's answer for the whole geometry, whatever it is
    bow = shapely.Polygon([(0, 0), (10, 10), (10, 0), (0, 10)])
    x, y = np.array([2.0, 5.0, 8.0]), np.array([5.0, 2.0, 5.0])
    assert np.array_equal(contains_points(bow, x, y, min_points=0),
                          shapely.contains_xy(bow, x, y))
