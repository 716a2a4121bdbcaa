"""Which region holds a point, which parts a cut meets, the nearest lane of a region: the
indexed look-ups against a brute-force pass with shapely (GEOS) over every pair."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from clearway.roadmap.rooms import split_floor
from clearway.roadmap.stations import ON_LANE, _nearest_distance, containing_region


def _random_regions(rng, count):
    """Star-shaped polygons, some overlapping, some sharing an edge, one with a hole."""
    regions = []
    for _ in range(count):
        centre = rng.uniform(0, 40, size=2)
        angles = np.sort(rng.uniform(0, 2 * np.pi, size=int(rng.integers(3, 12))))
        radii = rng.uniform(1, 6, size=len(angles))
        ring = centre + np.c_[radii * np.cos(angles), radii * np.sin(angles)]
        regions.append(shapely.Polygon(ring).buffer(0))
    regions += [shapely.box(10, 10, 15, 15), shapely.box(15, 10, 20, 15),    # shared edge
                shapely.box(0, 30, 10, 40).difference(shapely.box(3, 33, 7, 37)),
                shapely.Polygon()]                                             # empty
    return np.array(regions, dtype=object)


def _brute_force_region(points, regions):
    """Lowest index of a region containing each point, else of one within 1 mm, else -1:
    shapely's contains and dwithin on every (point, region) pair, one at a time."""
    result = []
    for x, y in points:
        point = shapely.Point(x, y)
        inside = [i for i, r in enumerate(regions) if r.contains(point)]
        near = [i for i, r in enumerate(regions) if shapely.dwithin(r, point, ON_LANE)]
        result.append(inside[0] if inside else near[0] if near else -1)
    return np.array(result)


@pytest.mark.parametrize("seed", range(4))
def test_containing_region_matches_brute_force(seed):
    rng = np.random.default_rng(seed)
    regions = _random_regions(rng, 25)
    # random points, polygon vertices (on a border), and points a hair off a border
    vertices = shapely.get_coordinates(regions)
    points = np.vstack([rng.uniform(-5, 45, size=(400, 2)),
                        vertices[rng.choice(len(vertices), 60)],
                        vertices[rng.choice(len(vertices), 60)] + rng.choice(
                            [-1, 1], size=(60, 2)) * rng.uniform(0, 2 * ON_LANE, size=(60, 2)),
                        [[15.0, 12.0], [15.0005, 12.0], [20.0008, 12.0], [5.0, 35.0]]])
    # source: shapely (GEOS) predicates on each pair, independent of the R-tree query
    expected = _brute_force_region(points, regions)
    assert np.array_equal(containing_region(points, regions), expected)
    assert (expected >= 0).any() and (expected < 0).any()


def test_containing_region_takes_the_lowest_index_where_regions_overlap():
    regions = np.array([shapely.box(0, 0, 10, 10), shapely.box(5, 0, 15, 10),
                        shapely.box(0, 0, 10, 10)], dtype=object)
    points = np.array([[2, 5], [7, 5], [12, 5], [10, 5], [15.0009, 5], [15.002, 5]], float)
    # analytic: (7, 5) lies in all three boxes; (10, 5) on the edge of the first and inside
    # the second; 0.9 mm right of the second box is within 1 mm of it, 2 mm is not
    assert containing_region(points, regions).tolist() == [0, 0, 1, 1, 1, -1]


@pytest.mark.parametrize("seed", range(3))
def test_split_floor_cuts_each_part_by_the_cuts_it_meets(seed):
    from clearway.roadmap.rooms import Cut
    rng = np.random.default_rng(10 + seed)
    parts = [shapely.box(x, 0, x + 8, 6) for x in range(0, 60, 10)]
    free = shapely.MultiPolygon(parts)
    cuts = []
    for _ in range(12):
        x = float(rng.uniform(-1, 60))
        cuts.append(Cut((x, -0.05), (x, 6.05), 6.0, -1))
    rooms = split_floor(free, cuts)
    # source: shapely's intersects per (part, cut) pair: a box crossed by k vertical cuts
    # at distinct x inside it falls into k + 1 rooms (analytic)
    expected = 0
    for part in parts:
        crossing = {c.start[0] for c in cuts
                    if shapely.LineString([c.start, c.end]).intersects(part)
                    and part.bounds[0] < c.start[0] < part.bounds[2]}
        expected += len(crossing) + 1
    assert len(rooms) == expected
    assert shapely.union_all(rooms).area == pytest.approx(free.area)


@pytest.mark.parametrize("seed", range(3))
def test_nearest_distance_is_the_least_distance_to_the_regions_lanes(seed):
    rng = np.random.default_rng(20 + seed)
    lanes = np.array([shapely.LineString(np.cumsum(rng.uniform(-4, 4, size=(4, 2)), axis=0)
                                         + rng.uniform(0, 50, size=2)) for _ in range(60)],
                     dtype=object)
    tree = shapely.STRtree(lanes)
    for _ in range(40):
        point = shapely.Point(rng.uniform(0, 50, size=2))
        mine = rng.uniform(size=len(lanes)) < rng.choice([0.05, 0.5, 1.0])
        if not mine.any():
            continue
        # source: shapely.distance to every lane of the region, the least of them, to the bit
        expected = float(shapely.distance(point, lanes[mine]).min())
        assert _nearest_distance(point, lanes, mine, tree) == expected


@pytest.mark.parametrize("seed", range(3))
def test_near_any_matches_shapely_distances(seed):
    from clearway.roadmap.rooms import Cut, _near_any
    rng = np.random.default_rng(30 + seed)
    starts = rng.uniform(0, 50, size=(80, 2))
    cuts = [Cut(tuple(a), tuple(a + rng.uniform(-3, 3, 2)), 1.0, 0) for a in starts]
    points = rng.uniform(-2, 52, size=(600, 2))
    reach = rng.uniform(0.05, 2.0, size=600)
    # source: shapely (GEOS) distance from each point to each cut segment
    distance = shapely.distance(shapely.points(points)[:, None],
                                shapely.linestrings([[c.start, c.end] for c in cuts])[None, :])
    least = distance.min(axis=1)
    clear = np.abs(least - reach) > 1e-9            # no point on a reach's rim
    expected = least <= reach
    assert np.array_equal(_near_any(points, reach, cuts)[clear], expected[clear])
    assert expected.any() and (~expected).any()
    assert not _near_any(points, reach, []).any()
