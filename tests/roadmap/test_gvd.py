"""The sampled GVD against analytic medial axes and scikit-image's raster skeleton."""

from __future__ import annotations

import math

import numpy as np
import pytest
import shapely
from scipy.spatial import cKDTree

from clearway.roadmap import build as build_module
from clearway.roadmap import generalized_voronoi, medial_axis
from clearway.roadmap.inflate import drivable_region, polygon_parts, reached_parts

from roadmap_builders import assert_exact_clearances, assert_lanes_clear, assert_topology, build, \
    corridor, plan


def test_straight_corridor_lane_on_centre_line():
    obstacles, free = corridor(2.0)
    roadmap = build(obstacles, free)
    graph = roadmap.graph
    # analytic: between parallel walls 2 m apart the lane is the centre line y = 1
    for _, _, data in graph.edges(data=True):
        xy = shapely.get_coordinates(data["geometry"])
        assert np.abs(xy[:, 1] - 1.0).max() < 0.01
        # analytic: clearance on the centre line = half the width = 1 m
        assert data["clearance_min"] == pytest.approx(1.0, abs=0.01)
    assert graph.number_of_edges() == 1
    assert_exact_clearances(roadmap, free)


def test_curved_corridor_lane_on_mid_radius():
    outer = shapely.Point(0, 0).buffer(6.0, quad_segs=128)
    inner = shapely.Point(0, 0).buffer(4.0, quad_segs=128)
    arc = shapely.box(0, 0, 7, 7)                      # a quarter ring, 2 m wide
    free = outer.difference(inner).intersection(arc)
    roadmap = build({"wall": shapely.box(-7, -7, 7, 7).difference(free)}, free)
    # analytic: between concentric arcs of radii 4 and 6 the lane lies on radius 5
    for _, _, data in roadmap.graph.edges(data=True):
        xy = shapely.get_coordinates(shapely.segmentize(data["geometry"], 0.05))
        radius = np.hypot(*xy.T)
        away_from_ends = (xy > 1.2).all(axis=1)
        assert np.abs(radius[away_from_ends] - 5.0).max() < 0.01
    assert_exact_clearances(roadmap, free)


def test_two_columns_lane_on_perpendicular_bisector():
    columns = [shapely.Point(-1.5, 0).buffer(0.01), shapely.Point(1.5, 0).buffer(0.01)]
    obstacles, free = plan((-6.0, -6.0, 6.0, 6.0), *columns)
    axis = generalized_voronoi(free, 0.45)
    # analytic: points equidistant from two point columns lie on their bisector x = 0
    near = (np.abs(axis.vertices[:, 1]) < 1.2)
    between = axis.vertices[near & (np.abs(axis.vertices[:, 0]) < 1.4)]
    assert len(between) > 3
    assert np.abs(between[:, 0]).max() < 0.005


def test_rectangular_room_bisectors_meet_central_segment():
    room = shapely.box(0, 0, 8, 4)
    axis = generalized_voronoi(room, 0.3)
    xy = axis.vertices
    # analytic: medial axis of an 8 x 4 rectangle = segment y = 2 for 2 <= x <= 6, plus
    # 45-degree bisectors from its ends to the corners (|y - 2| = |x - 2| near x < 2)
    on_centre = np.abs(xy[:, 1] - 2.0) < 1e-6
    assert xy[on_centre, 0].min() == pytest.approx(2.0, abs=1e-3)
    assert xy[on_centre, 0].max() == pytest.approx(6.0, abs=1e-3)
    left = xy[xy[:, 0] < 1.99]
    assert np.abs(np.abs(left[:, 1] - 2.0) - (2.0 - left[:, 0])).max() < 0.005
    # analytic: the bisectors stop where the clearance (= x near the left wall) reaches c
    assert left[:, 0].min() == pytest.approx(0.3, abs=0.15)


@pytest.mark.parametrize("gap, connected", [(0.9 + 0.004, True), (0.9 - 0.004, False)])
def test_neck_a_few_millimetres_wide(gap, connected):
    obstacles, free = plan((0.0, 0.0, 12.0, 6.0), shapely.box(4, gap, 8, 3))
    roadmap = build(obstacles, free)
    assert_topology(roadmap)
    assert_lanes_clear(roadmap)
    # analytic: the island stands gap m above the wall; the neck is drivable iff gap >= 2c
    holes = sum(len(p.interiors) for p in shapely.get_parts(roadmap.drivable))
    assert holes == (1 if connected else 0)


def _skeleton_points(free, pixel):
    from skimage.draw import polygon as fill
    from skimage.morphology import medial_axis as raster_axis
    xmin, ymin, xmax, ymax = free.bounds
    shape = (int(math.ceil((ymax - ymin) / pixel)) + 2, int(math.ceil((xmax - xmin) / pixel)) + 2)
    image = np.zeros(shape, dtype=bool)
    for part in shapely.get_parts(free):
        xy = np.asarray(part.exterior.coords)
        image[fill((xy[:, 1] - ymin) / pixel + 0.5, (xy[:, 0] - xmin) / pixel + 0.5, shape)] = 1
        for hole in part.interiors:
            xy = np.asarray(hole.coords)
            image[fill((xy[:, 1] - ymin) / pixel + 0.5, (xy[:, 0] - xmin) / pixel + 0.5,
                       shape)] = 0
    skeleton, distance = raster_axis(image, return_distance=True, rng=0)
    rows, cols = np.nonzero(skeleton)
    return np.stack([cols * pixel + xmin, rows * pixel + ymin], 1), distance[rows, cols] * pixel


@pytest.mark.parametrize("layout", ["aisles", "columns"])
def test_lanes_match_scikit_image_skeleton(layout):
    pixel = 0.02
    if layout == "aisles":
        obstacles, free = plan((0.0, 0.0, 14.0, 9.0), shapely.box(2, 2, 12, 3.5),
                               shapely.box(2, 5.5, 12, 7))
    else:
        obstacles, free = plan((0.0, 0.0, 10.0, 8.0), shapely.box(3, 3, 3.5, 3.5),
                               shapely.box(6, 4, 6.6, 4.6))
    c = 0.45
    roadmap = build(obstacles, free)
    skeleton, radius = _skeleton_points(free, pixel)
    skeleton = skeleton[radius >= c + 0.1]
    lanes = np.concatenate([shapely.get_coordinates(shapely.segmentize(d["geometry"], 0.02))
                            for _, _, d in roadmap.graph.edges(data=True)])
    clear = shapely.distance(shapely.points(lanes), free.boundary) >= c + 0.1
    # source: scikit-image medial_axis (independent raster reference) - lanes within two
    # pixels of its skeleton, away from spur ends (clearance within 0.1 m of c)
    gap, _ = cKDTree(skeleton).query(lanes[clear])
    assert gap.max() <= 2 * pixel * math.sqrt(2)


def test_medial_axis_rejects_bad_step():
    with pytest.raises(ValueError, match="step must be > 0"):
        medial_axis(shapely.box(0, 0, 1, 1), step=0)


def test_lane_round_a_rack_end_follows_the_parabola():
    # A 10 m rack block hangs from the north wall of a 30 m x 6 m hall; the aisle under it
    # is 3 m wide. analytic: west of the block the lane is equidistant from the block's
    # corner (10, 3) and the floor y = 0: the parabola y = ((x - 10)^2 + 9) / 6, from
    # x = 7 (where it meets the hall's centre line y = 3) to x = 10. Here the boundary is
    # sampled coarsely along the straight faces, so this checks the dense samples at bends.
    obstacles, free = plan((0.0, 0.0, 30.0, 6.0), shapely.box(10.0, 3.0, 20.0, 6.0))
    graph = build(obstacles, free).graph
    lanes = [d["geometry"] for _, _, d in graph.edges(data=True)]
    xy = shapely.get_coordinates(shapely.segmentize(np.array(lanes, dtype=object), 0.02))
    on_bend = xy[(xy[:, 0] > 7.2) & (xy[:, 0] < 9.9) & (xy[:, 1] < 2.95)]
    assert len(on_bend) > 50
    x = np.linspace(6.0, 11.0, 200_001)
    curve = np.stack([x, ((x - 10.0) ** 2 + 9.0) / 6.0], axis=1)
    gap = cKDTree(curve).query(on_bend)[0]
    assert gap.max() < 0.01                           # issue 3: lanes within 1 cm
    # and the aisle lane under the block is its centre line y = 1.5
    aisle = xy[(xy[:, 0] > 10.5) & (xy[:, 0] < 19.5) & (xy[:, 1] < 2.5)]
    assert np.abs(aisle[:, 1] - 1.5).max() < 0.01


def test_sealed_slots_leave_the_lanes_unchanged():
    # two back-to-back rack rows with a 0.1 m flue between, sealed at both ends: the flue is
    # a component of the free space no disc of radius c = 0.45 m fits in
    hall = (0.0, 0.0, 30.0, 12.0)
    rows = [shapely.box(5, 4, 25, 5.1), shapely.box(5, 5.2, 25, 6.3)]
    sealed = [shapely.box(5, 4, 25, 6.3).difference(shapely.box(5.2, 5.1, 24.8, 5.2))]
    obstacles, free = plan(hall, *sealed)
    solid_obstacles, solid_free = plan(hall, shapely.union_all(rows + [shapely.box(5, 5, 25, 5.3)]))
    assert len(shapely.get_parts(free)) == 2
    with_slot, without = build(obstacles, free), build(solid_obstacles, solid_free)

    def nodes(roadmap):
        return np.array(sorted((d["x"], d["y"], d["clearance"])
                               for _, d in roadmap.graph.nodes(data=True)))
    # analytic: every point of clearance >= c has the same nearest obstacle points with or
    # without the slot, so the lanes are the same (to rounding)
    assert np.abs(nodes(with_slot) - nodes(without)).max() < 1e-9
    assert with_slot.graph.number_of_edges() == without.graph.number_of_edges()
    assert_topology(with_slot)


def test_open_flue_slot_cut_off_leaves_the_lanes_in_place(monkeypatch):
    # the same rows with the flue open to the west aisle: the slot is part of the floor's one
    # component; beyond the drivable region grown by c it is cut off before sampling
    hall = (0.0, 0.0, 30.0, 12.0)
    slotted = shapely.box(5, 4, 25, 6.3).difference(shapely.box(5, 5.1, 24.8, 5.2))
    obstacles, free = plan(hall, slotted)
    assert len(shapely.get_parts(free)) == 1
    cut = build(obstacles, free)
    monkeypatch.setattr(build_module, "reached_parts",
                        lambda free_space, regions, clearance: polygon_parts(free_space))
    whole = build(obstacles, free)
    a = np.array([(d["x"], d["y"]) for _, d in cut.graph.nodes(data=True)])
    b = np.array([(d["x"], d["y"]) for _, d in whole.graph.nodes(data=True)])
    # analytic: points of clearance >= c keep their nearest obstacle points, so every node
    # has a twin within 1 mm (the cut changes only the sampling near the slot's mouth)
    assert len(a) == len(b)
    assert cKDTree(b).query(a)[0].max() < 1e-3 and cKDTree(a).query(b)[0].max() < 1e-3
    lanes = [shapely.union_all([d["geometry"] for *_, d in r.graph.edges(data=True)])
             for r in (cut, whole)]
    # lanes are simplified with a 5 mm Douglas-Peucker tolerance (roadmap/build.py SIMPLIFY)
    assert shapely.hausdorff_distance(*lanes, densify=0.05) <= 0.005 + 1e-9
    assert_lanes_clear(cut)
    assert_topology(cut)


def test_issue_11_hairline_slit_between_back_to_back_rows_is_cut_off(monkeypatch):
    # two rack rows 1.1 m deep back to back whose faces miss each other by 0.2 mm (as rotated
    # rows rounded to 0.1 mm do): a slit open at both ends, area 4 mm^2 per metre
    hall = (0.0, 0.0, 30.0, 12.0)
    rows = [shapely.box(5, 4, 25, 5.1), shapely.box(5, 5.1002, 25, 6.2)]
    obstacles, free = plan(hall, *rows)
    assert len(shapely.get_parts(free)) == 1
    regions = drivable_region(free, 0.45)
    reached = shapely.union_all(reached_parts(free, regions, 0.45))
    # analytic: no disc of radius c = 0.45 m enters a 0.2 mm slit; its middle is 10 m from
    # either mouth, far beyond the drivable region grown by c + 5 cm
    assert shapely.intersects(free, shapely.Point(15, 5.1001))
    assert not shapely.intersects(reached, shapely.Point(15, 5.1001))
    assert shapely.area(free) - shapely.area(reached) == pytest.approx(0.0002 * 20, rel=0.01)
    cut = build(obstacles, free)
    monkeypatch.setattr(build_module, "reached_parts",
                        lambda free_space, regions, clearance: polygon_parts(free_space))
    whole = build(obstacles, free)
    a = np.array([(d["x"], d["y"], d["clearance"]) for _, d in cut.graph.nodes(data=True)])
    b = np.array([(d["x"], d["y"], d["clearance"]) for _, d in whole.graph.nodes(data=True)])
    # analytic: points of clearance >= c keep their nearest obstacle points (inflate.py
    # reached_parts), so every node has a twin at the same place and clearance
    assert len(a) == len(b)
    assert cKDTree(b[:, :2]).query(a[:, :2])[0].max() < 1e-3
    assert np.abs(np.sort(a[:, 2]) - np.sort(b[:, 2])).max() < 1e-3
    lanes = [shapely.union_all([d["geometry"] for *_, d in r.graph.edges(data=True)])
             for r in (cut, whole)]
    # lanes are simplified with a 5 mm Douglas-Peucker tolerance (roadmap/build.py SIMPLIFY)
    assert shapely.hausdorff_distance(*lanes, densify=0.05) <= 0.005 + 1e-9
    assert_lanes_clear(cut)
    assert_topology(cut)
