"""roadmap/clearance.py: the exact clearance field, checked against shapely (GEOS)."""

from __future__ import annotations

import threading

import numpy as np
import pytest
import shapely

import clearway.roadmap.clearance as clearance
from clearway.roadmap.clearance import clearance_field
from clearway.roadmap.inflate import boundary_segments


def _room_with_rack():
    hall = shapely.box(0, 0, 20, 12)
    return hall.difference(shapely.box(5, 4, 15, 6.2)).difference(
        shapely.Point(3, 9).buffer(0.4, quad_segs=16))


def test_clearance_at_random_points_equals_shapely_distance_to_the_boundary():
    free = _room_with_rack()
    field = clearance_field(boundary_segments(free)[0])
    rng = np.random.default_rng(16)
    xy = rng.uniform((-2, -2), (22, 14), size=(5000, 2))
    # independent reference: GEOS's exact point-to-linework distance
    expected = shapely.distance(shapely.points(xy), free.boundary)
    assert np.allclose(field.at(xy), expected, rtol=0, atol=1e-9)


def _random_queries(spacing, seed):
    """(field, rng, points, GEOS's exact distances) for 4,000 points round the room."""
    free = _room_with_rack()
    rng = np.random.default_rng(seed)
    xy = rng.uniform((-2, -2), (22, 14), size=(4000, 2))
    return (clearance_field(boundary_segments(free)[0], spacing=spacing), rng, xy,
            shapely.distance(shapely.points(xy), free.boundary))


@pytest.mark.parametrize("spacing", [0.05, 0.25, 3.0])
def test_at_least_answers_as_the_exact_distance_does(spacing):
    # independent reference: GEOS's exact point-to-linework distance; the thresholds are
    # drawn round each point's own distance (within 1 cm, and exactly at it), where a bound
    # that claimed too much would show
    field, rng, xy, exact = _random_queries(spacing, seed=3)
    for need in (exact + rng.uniform(-0.01, 0.01, len(xy)), exact - 1e-7, exact + 1e-7,
                 rng.uniform(0, 6, len(xy))):
        clear = field.at_least(xy, need)
        decided = np.abs(exact - need) > 1e-9
        assert (clear[decided] == (exact >= need)[decided]).all()
        assert (clear == (field.at(xy) >= need)).all()


@pytest.mark.parametrize("spacing", [0.05, 0.25, 3.0])
def test_under_gives_the_exact_distance_wherever_it_is_under_the_limit(spacing):
    # independent reference: GEOS's exact point-to-linework distance; the points within
    # 1 cm of the limit, either side, are where a bound that claimed too much would show
    field, _, xy, exact = _random_queries(spacing, seed=11)
    for limit in (0.5, 1.0, float(np.median(exact))):
        got = field.under(xy, limit)
        assert np.allclose(got[exact < limit], exact[exact < limit], rtol=0, atol=1e-9)
        assert (got[np.isinf(got)] >= limit).all() and (exact[np.isinf(got)] >= limit).all()
        assert np.array_equal(got[np.isfinite(got)], field.at(xy[np.isfinite(got)]))
        near = np.abs(exact - limit) < 0.01
        assert near.sum() > 10 and np.isfinite(got[near & (exact < limit)]).all()
        # a point farther than limit + spacing / 2 has its nearest sample beyond the search's
        # bound: it is left out, without the exact query (else nothing would be saved)
        far = exact > limit + spacing / 2 + 1e-6
        assert np.isinf(got[far]).all() and (far.sum() > 100 or limit > 0.5)


@pytest.mark.parametrize("spacing", [0.25, 3.0])
def test_a_large_query_on_two_threads_gives_the_same_floats(spacing, monkeypatch):
    # a query of THREADED_POINTS or more runs in blocks on two threads; each point's answer
    # is its own, so the floats equal those of one pass, and GEOS's distance (reference)
    free = _room_with_rack()
    segments = boundary_segments(free)[0]
    xy = np.random.default_rng(5).uniform((-2, -2), (22, 14), size=(6000, 2))
    one = clearance_field(segments, spacing=spacing).at(xy)
    monkeypatch.setattr(clearance, "THREADED_POINTS", 1000)
    monkeypatch.setattr(clearance, "THREAD_BLOCK", 700)
    monkeypatch.setattr(clearance, "cores", lambda: 2)
    field = clearance_field(segments, spacing=spacing)   # its indexes built by the query
    threads = field.at(xy)
    assert np.array_equal(threads, one)
    assert np.allclose(threads, shapely.distance(shapely.points(xy), free.boundary),
                       rtol=0, atol=1e-9)
    # the threads are joined: none is left to keep the build from forking
    assert not any(t.name.startswith("ThreadPoolExecutor") for t in threading.enumerate())


def test_spacing_does_not_change_the_answer():
    # the k-d tree of boundary samples only picks candidates; a sparse sampling must fall
    # back to the exact query where the candidates are in doubt
    free = _room_with_rack()
    segments = boundary_segments(free)[0]
    xy = np.random.default_rng(7).uniform((0, 0), (20, 12), size=(2000, 2))
    fine, sparse = clearance_field(segments, spacing=0.05), clearance_field(segments, spacing=3.0)
    assert np.allclose(fine.at(xy), sparse.at(xy), rtol=0, atol=1e-9)


def test_along_samples_every_step_and_measures_each_sample():
    walls = np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float)
    field = clearance_field(walls)
    line = shapely.LineString([(0, 0.5), (10, 1.5)])
    xy, owner, clearance = field.along([line], 0.25)
    # analytic: 10.05 m of line in steps of at most 0.25 m -> at least 41 samples, both ends
    assert len(xy) >= 41 and (owner == 0).all()
    assert tuple(xy[0]) == (0, 0.5) and tuple(xy[-1]) == (10, 1.5)
    assert np.max(np.hypot(*np.diff(xy, axis=0).T)) <= 0.25 + 1e-9
    # analytic: between walls y = 0 and y = 2 the clearance is min(y, 2 - y)
    assert np.allclose(clearance, np.minimum(xy[:, 1], 2 - xy[:, 1]), atol=1e-12)


def test_no_boundary_means_infinite_clearance():
    assert clearance_field(np.empty((0, 2, 2))).at([[1.0, 2.0]]).tolist() == [np.inf]


@pytest.mark.parametrize("fine", [0.01, 0.03])
def test_adaptive_sampling_finds_the_minimum_a_coarse_step_misses(fine):
    # a lane passing a column: coarse samples 1.5 m apart straddle the closest point
    free = shapely.box(0, 0, 10, 4).difference(shapely.Point(5.0, 1.0).buffer(0.5, 64))
    field = clearance_field(boundary_segments(free)[0])
    line = shapely.LineString([(2.0, 2.0), (9.0, 2.0)])   # coarse samples at x = 4.8, 6.2
    _, _, coarse = field.along([line], 1.5)
    _, _, adaptive = field.along_adaptive([line], 1.5, fine=fine, tolerance=0.002)
    dense = shapely.points(shapely.get_coordinates(shapely.segmentize(line, 0.001)))
    exact = shapely.distance(dense, free.boundary).min()
    # analytic: the column of radius 0.5 at (5, 1) is 1.0 - 0.5 = 0.5 m from y = 2
    assert exact == pytest.approx(0.5, abs=2e-3)
    assert coarse.min() > exact + 0.01                  # the coarse step misses it
    assert adaptive.min() == pytest.approx(exact, abs=0.002 + fine ** 2)


@pytest.mark.parametrize("spacing", [0.25, 3.0])
def test_points_in_doubt_get_geos_distance_to_the_nearest_segment_exactly(spacing):
    # independent reference: GEOS's point-to-segment distance (shapely), the smallest over
    # every segment; bit for bit, since the points the k-d tree leaves in doubt are answered
    # with GEOS's arithmetic (a column of many short sides puts points in doubt; points far
    # outside take the STRtree)
    free = _room_with_rack().difference(shapely.Point(12, 9).buffer(0.3, quad_segs=64))
    field = clearance_field(boundary_segments(free)[0], spacing=spacing)
    rng = np.random.default_rng(11)
    xy = np.concatenate([rng.uniform((-2, -2), (22, 14), size=(1500, 2)),
                         rng.uniform((11, 8), (13, 10), size=(1500, 2)),
                         rng.uniform((-400, -400), (400, 400), size=(100, 2))])
    lines = shapely.linestrings(field.segments)
    expected = shapely.distance(shapely.points(xy)[:, None], lines[None]).min(axis=1)
    assert np.array_equal(field._nearest(xy), expected)


@pytest.mark.parametrize("spacing", [0.25, 3.0])
def test_distance_to_geometries_is_the_nearest_segments_geos_distance(spacing):
    # independent reference: GEOS's distance (shapely) from each geometry to every boundary
    # segment, the smallest; bit for bit the STRtree's nearest query's answer, the one
    # body.gaps gave before (on a near tie the tree may settle on a segment a few units in
    # the last place farther, so against the smallest within rounding only)
    free = _room_with_rack().difference(shapely.Point(12, 9).buffer(0.3, quad_segs=64))
    field = clearance_field(boundary_segments(free)[0], spacing=spacing)
    rng = np.random.default_rng(5)
    count = 600
    centre = np.concatenate([rng.uniform((-2, -2), (22, 14), size=(count - 100, 2)),
                             rng.uniform((11, 8), (13, 10), size=(100, 2))])
    corners = centre[:, None] + rng.normal(0, 1, (count, 1, 1)) * \
        rng.normal(0, 1, (count, 8, 2))
    hulls = shapely.convex_hull(shapely.multipoints(corners.reshape(-1, 2),
                                                    indices=np.repeat(np.arange(count), 8)))
    for geometry in (hulls, shapely.points(centre), shapely.linestrings(corners[:, :2]),
                     shapely.box(11.5, 7.5, 12.5, 9.0 + np.linspace(0, 1.5, 50))):
        lines = shapely.linestrings(field.segments)
        smallest = shapely.distance(geometry[:, None], lines[None]).min(axis=1)
        found, tree = field.tree.query_nearest(geometry, return_distance=True,
                                               all_matches=False)
        assert np.array_equal(found[0], np.arange(len(geometry)))
        got = field.distance_to(geometry)
        assert np.array_equal(got, tree)
        assert np.allclose(got, smallest, rtol=0, atol=1e-12)
    assert (field.distance_to(hulls) == 0).any() and (field.distance_to(hulls) > 1).any()
    assert np.isinf(clearance_field(np.zeros((0, 2, 2))).distance_to(hulls[:3])).all()
