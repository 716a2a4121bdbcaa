"""roadmap/lanes.py: lane refinement round convex corners, and the numbering of the graph."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from clearway.roadmap.clearance import clearance_field
from clearway.roadmap.inflate import boundary_segments
from clearway.roadmap.lanes import refine_lanes
from roadmap_builders import build, rack_grid


def test_a_chord_cutting_past_a_wall_end_is_bent_back_onto_the_axis():
    # a 3 m corridor with a 0.2 m wall stub rising 1 m from its floor at x = 5
    free = shapely.box(0, 0, 10, 3).difference(shapely.box(4.9, 0, 5.1, 1))
    field = clearance_field(boundary_segments(free)[0])
    chord = np.array([[3.5, 1.51], [6.5, 1.51]])
    # the straight chord passes 0.51 m above the stub's top
    assert field.at([[5.0, 1.51]])[0] == pytest.approx(0.51, abs=1e-9)
    (refined,) = refine_lanes([chord], field, below=2.0)
    assert np.array_equal(refined[[0, -1]], chord)              # ends unchanged
    middle = refined[np.argmin(np.abs(refined[:, 0] - 5.0))]
    # analytic: above the stub the axis is y = 2, midway between its top (y = 1) and the
    # far wall (y = 3), with clearance 1 m: the best point on the chord's bisector x = 5
    assert middle == pytest.approx([5.0, 2.0], abs=1e-3)
    assert field.at(refined).min() > 0.9


def test_lanes_with_enough_clearance_are_left_alone():
    field = clearance_field(np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float))
    lane = np.array([[1.0, 1.0], [9.0, 1.0]])
    (same,) = refine_lanes([lane], field, below=0.5)             # clearance 1 m > 0.5 m
    assert np.array_equal(same, lane)


def test_node_ids_follow_sorted_coordinates_and_edge_ids_their_ends():
    roadmap = build(*rack_grid(2, 2))
    graph = roadmap.graph
    nodes = sorted(graph.nodes, key=lambda node: int(node[1:]))
    xy = [(graph.nodes[n]["x"], graph.nodes[n]["y"]) for n in nodes]
    # lanes.py's contract: ids n<k> in sorted (x, y) order, so they stay stable for compare
    assert xy == sorted(xy)
    ends = [tuple(sorted((int(u[1:]), int(v[1:])))) for u, v, _ in
            sorted(graph.edges(keys=True), key=lambda edge: int(edge[2][1:]))]
    assert ends == sorted(ends)


@pytest.mark.parametrize("seed", [0, 1])
def test_node_numbering_does_not_hang_on_the_last_bits_of_x(seed):
    from clearway.roadmap.lanes import node_order

    rng = np.random.default_rng(seed)
    lattice = rng.permutation(np.unique(rng.integers(0, 6, size=(200, 2)) * 0.5, axis=0))
    expected = sorted(range(len(lattice)), key=lambda k: tuple(lattice[k]))
    for _ in range(3):
        noisy = lattice + rng.uniform(-1e-12, 1e-12, size=lattice.shape)
        # analytic: within 1e-12 m of 0.5 m lattice points, (x, y) to the micrometre is the
        # lattice order, whatever the noise
        assert node_order(noisy).tolist() == expected
