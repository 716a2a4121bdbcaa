"""Label placement: the estimated lane area under a box against shapely's overlay, and the
position chosen against judging every position by overlay areas one at a time."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from clearway.exporters.svg_labels import (_CLASH, LabelPlacer, boxed_areas, outline_edges,
                                           text_box)


def _random_lanes(rng, count):
    """Buffered polylines, some closed into loops (outlines with holes), some reversed."""
    lanes = []
    for index in range(count):
        points = np.cumsum(rng.uniform(-4, 4, size=(rng.integers(2, 7), 2)), axis=0)
        points += rng.uniform(0, 30, size=2)
        if index % 5 == 0:
            points = np.array([[0, 0], [6, 0], [6, 5], [0, 5], [0, 0]]) + rng.uniform(0, 30, 2)
        polygon = shapely.LineString(points).buffer(rng.uniform(0.05, 0.6), quad_segs=2)
        lanes.append(polygon.reverse() if index % 3 == 0 else polygon)
    return lanes


def test_boxed_areas_match_overlay_areas():
    rng = np.random.default_rng(7)
    lanes = _random_lanes(rng, 60)
    assert any(len(lane.interiors) for lane in lanes)     # the loops leave holes
    edges, sign, owner = outline_edges(lanes)
    for _ in range(200):
        x, y = rng.uniform(-2, 34, size=2)
        bounds = np.array([x, y, x + rng.uniform(0, 9), y + rng.uniform(0, 3)])
        shares = boxed_areas(edges, sign, np.tile(bounds, (len(edges), 1)))
        estimate = np.bincount(owner, weights=shares, minlength=len(lanes))
        # independent: shapely's overlay of each outline with the box
        overlay = shapely.area(shapely.intersection(np.array(lanes), shapely.box(*bounds)))
        np.testing.assert_allclose(estimate, overlay, rtol=0, atol=1e-9)


def test_boxed_areas_of_level_and_upright_edges():
    # analytic: a 10 m x 1 m lane crossing a 4 m x 3 m box covers 4 m x 1 m of it; the level
    # edge above the box (clamped to its top) and the upright ends (no extent in x) included
    edges, sign, _ = outline_edges([shapely.box(-3, 1, 7, 2)])
    area = boxed_areas(edges, sign, np.tile([0.0, 0.5, 4.0, 3.5], (len(edges), 1))).sum()
    assert area == pytest.approx(4.0, abs=1e-12)
    above = boxed_areas(edges, sign, np.tile([0.0, -2.0, 4.0, 0.5], (len(edges), 1))).sum()
    assert above == pytest.approx(0.0, abs=1e-12)            # analytic: box below the lane
    # analytic: the box holds the lane's lower half metre; its upper edge lies above the box
    half = boxed_areas(edges, sign, np.tile([0.0, 0.5, 4.0, 1.5], (len(edges), 1))).sum()
    assert half == pytest.approx(2.0, abs=1e-12)


def _tried_boxes(placer) -> list:
    """Record the boxes of the positions each `place` call tries (a list per call)."""
    tried = []
    original = placer._cheapest

    def spy(boxes, bounds, clash):
        tried.append(list(boxes))
        return original(boxes, bounds, clash)
    placer._cheapest = spy
    return tried


def _first_cheapest(placer_lanes, symbols, taken, candidates, within=None):
    """The definition, one position at a time: the first position of least cost, where a
    cost is 1e6 per symbol or label touched (and for leaving `within`) plus the lane area
    covered, each lane's by shapely's overlay."""
    costs = []
    for box in candidates:
        clash = (sum(symbol.intersects(box) for symbol in symbols)
                 + sum(label.intersects(box) for label in taken)
                 + (within is not None and not within.covers(box)))
        costs.append(_CLASH * clash + sum(lane.intersection(box).area for lane in placer_lanes
                                          if lane.intersects(box)))
    return costs.index(min(costs))


@pytest.mark.parametrize("case", range(12))
def test_place_takes_the_first_position_of_least_cost(case):
    rng = np.random.default_rng(100 + case)
    lines = [shapely.LineString(np.cumsum(rng.uniform(-3, 3, size=(4, 2)), axis=0)
                                + rng.uniform(0, 12, size=2)) for _ in range(25)]
    placer = LabelPlacer(lines, 0.3)
    symbols = [shapely.Point(rng.uniform(0, 12, size=2)).buffer(0.4, quad_segs=2)
               for _ in range(8)]
    for symbol in symbols:
        placer.block(symbol)
    within = shapely.box(1, 1, 11, 11) if case % 2 else None
    taken = []
    tried = _tried_boxes(placer)
    for _ in range(6):
        x, y = rng.uniform(0, 12, size=2)
        text = "a" * int(rng.integers(3, 12))
        at = placer.place(x, y, text, 0.8, 0.4, within=within, prefer_left=bool(case % 3))
        boxes = tried[-1]
        expected = _first_cheapest(placer._lanes, symbols, taken, boxes, within)
        assert text_box(*at[:2], text, 0.8, at[2]).equals(boxes[expected])
        taken.append(boxes[expected])


def test_place_breaks_ties_as_the_overlay_does():
    # analytic: inside a lane 60 m wide every position covers its whole box, 6.2 m x 1.2 m:
    # the costs tie up to rounding, and the overlay's last bits decide, as one at a time,
    # however the estimates round (here: shaken by up to half their error bound)
    rng = np.random.default_rng(3)
    for _ in range(5):
        placer = LabelPlacer([shapely.LineString([(-50, 0), (50, 0)])], 60.0)
        estimates = placer._estimates

        def shaken(chosen, boxes, bounds):
            estimate, error = estimates(chosen, boxes, bounds)
            return estimate + rng.uniform(-0.5, 0.5, len(error)) * error, error
        placer._estimates = shaken
        tried = _tried_boxes(placer)
        at = placer.place(*rng.uniform(-5, 5, size=2), "gap 0.80 m", 1.0, 0.5)
        costs = [placer._lanes[0].intersection(box).area for box in tried[0]]
        np.testing.assert_allclose(costs, 0.62 * 10 * 1.2, rtol=1e-12)
        expected = _first_cheapest(placer._lanes, [], [], tried[0])
        assert text_box(*at[:2], "gap 0.80 m", 1.0, at[2]).equals(tried[0][expected])


@pytest.mark.parametrize("seed", range(4))
def test_symbol_hits_are_the_pairs_geos_finds_intersecting(seed):
    rng = np.random.default_rng(40 + seed)
    placer = LabelPlacer([shapely.LineString([(0, 0), (1, 0)])], 0.1)
    symbols = [shapely.Point(rng.uniform(0, 20, size=2)).buffer(rng.uniform(0.2, 1.5),
                                                                  quad_segs=2)
               for _ in range(80)]
    symbols += [shapely.LineString(rng.uniform(0, 20, size=(3, 2))).buffer(0.1, quad_segs=2)
                for _ in range(20)]                                   # bent, not convex
    symbols += [shapely.box(5, 5, 6, 6), shapely.Polygon([(8, 8), (12, 8), (8, 12)])]
    for symbol in symbols:
        placer.block(symbol)
    for _ in range(30):
        x, y = rng.uniform(-2, 20, size=(2, 24))
        bounds = np.c_[x, y, x + rng.uniform(0.1, 8, 24), y + rng.uniform(0.1, 2, 24)]
        # touch a corner, an edge, the hypotenuse; miss a vertex by half a millimetre
        bounds[:4] = [[6, 6, 7, 7], [3, 5, 5, 5.5], [10, 10, 11, 11], [8.0005, 11.9998, 9, 13]]
        boxes = shapely.box(*bounds.T)
        # source: GEOS through shapely's R-tree query with the 'intersects' predicate
        expected = shapely.STRtree(symbols).query(boxes, predicate="intersects")[0]
        assert np.array_equal(np.sort(placer._symbol_hits(boxes, bounds)), np.sort(expected))


@pytest.mark.parametrize("seed", range(3))
def test_place_all_places_as_one_label_at_a_time(seed):
    # the definition: `place` called label by label, in order, on a placer in the same state
    rng = np.random.default_rng(70 + seed)
    lines = [shapely.LineString(np.cumsum(rng.uniform(-3, 3, size=(4, 2)), axis=0)
                                + rng.uniform(0, 15, size=2)) for _ in range(30)]
    symbols = [shapely.Point(rng.uniform(0, 15, size=2)).buffer(0.4, quad_segs=2)
               for _ in range(12)]
    rooms = [shapely.box(0, 0, 8, 8), shapely.box(6, 5, 15, 15), None]
    labels = [(*rng.uniform(0, 15, size=2), "a" * int(rng.integers(2, 9)), 0.8,
               float(rng.uniform(0, 0.5)), bool(rng.integers(2)), rooms[i % 3])
              for i in range(25)]
    one, many = LabelPlacer(lines, 0.3), LabelPlacer(lines, 0.3)
    for symbol in symbols:
        one.block(symbol)
        many.block(symbol)
    expected = [one.place(x, y, text, size, reach, prefer_left=left, within=within)
                for x, y, text, size, reach, left, within in labels]
    assert many.place_all(labels) == expected
    assert len({at for at in expected}) > 10              # the labels moved apart


def test_an_optional_label_with_no_clear_position_is_left_out():
    # a 9 x 9 grid of symbols 0.6 m apart, each with a label 0.8 m high: labels drawn touch
    # no symbol and no other label; an optional one with no clear place is left out
    # (None, taking no room); required ones are placed all the same
    points = [(10.0 + 0.6 * i, 10.0 + 0.6 * j) for i in range(9) for j in range(9)]
    symbols = [shapely.Point(p).buffer(0.25, quad_segs=2) for p in points]
    labels = [(x, y, "clr 0.60 m", 0.8, 0.25, False, None) for x, y in points]
    placer = LabelPlacer([], 0.3)
    for symbol in symbols:
        placer.block(symbol)
    placed = placer.place_all(labels, optional=[True] * len(labels))
    assert 0 < placed.count(None) < len(labels)
    boxes = [text_box(x, y, "clr 0.60 m", 0.8, anchor) for x, y, anchor in
             (at for at in placed if at is not None)]
    assert not any(shapely.intersects(box, symbol) for box in boxes for symbol in symbols)
    assert not any(shapely.intersects(a, b) for i, a in enumerate(boxes) for b in boxes[i + 1:])
    required = LabelPlacer([], 0.3)
    for symbol in symbols:
        required.block(symbol)
    assert None not in required.place_all(labels)
