"""Lane graph invariants: topology, exact clearances, pruning, determinism, survey frames."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import shapely
from hypothesis import given, settings, strategies as st

from clearway.roadmap import NODE_KINDS, Robot
from clearway.roadmap.graph import chain_lanes

from roadmap_builders import (assert_exact_clearances, assert_lanes_clear, assert_topology,
                              build, plan, rack_grid)


def test_graph_contract():
    obstacles, free = rack_grid(2, 2)
    roadmap = build(obstacles, free, [("dock 1", 1.0, 1.0)])
    graph = roadmap.graph
    assert isinstance(graph, nx.MultiGraph) and not graph.is_directed()
    assert nx.number_of_selfloops(graph) == 0
    assert graph.graph["units"] == "m" and graph.graph["required_clearance"] == pytest.approx(0.45)
    xy = [(d["x"], d["y"]) for _, d in sorted(graph.nodes(data=True),
                                               key=lambda item: int(item[0][1:]))]
    assert xy == sorted(xy)                       # ids follow sorted (x, y)
    for node, data in graph.nodes(data=True):
        assert data["kind"] in NODE_KINDS
        assert all(type(data[k]) is float for k in ("x", "y", "clearance"))
        if data["kind"] == "junction":
            assert graph.degree(node) >= 3
        if data["kind"] == "end":
            assert graph.degree(node) <= 1
    for u, v, key, data in graph.edges(keys=True, data=True):
        assert key.startswith("e") and all(type(data[k]) is float
                                           for k in ("length", "weight", "clearance_min"))
        ends = shapely.get_coordinates(data["geometry"])[[0, -1]]
        nodes = np.array([[graph.nodes[n]["x"], graph.nodes[n]["y"]] for n in (u, v)])
        assert np.allclose(ends, nodes) or np.allclose(ends, nodes[::-1])
        assert data["length"] == pytest.approx(data["geometry"].length)
    assert_topology(roadmap)
    assert_exact_clearances(roadmap, free)
    assert_lanes_clear(roadmap)


def test_dead_end_aisle_between_racks_backing_onto_a_wall_keeps_its_lane():
    # Two rack rows standing against the top wall make a U-shaped obstacle with the wall;
    # the 3 m aisle between them is a dead end, and its lane must stay (not a spur).
    obstacles, free = plan((0.0, 0.0, 12.0, 10.0), shapely.box(3, 4, 4.5, 10),
                           shapely.box(7.5, 4, 9, 10))
    roadmap = build(obstacles, free)
    graph = roadmap.graph
    lane_points = np.concatenate([shapely.get_coordinates(d["geometry"])
                                  for _, _, d in graph.edges(data=True)])
    in_aisle = lane_points[(lane_points[:, 0] > 4.5) & (lane_points[:, 0] < 7.5)
                           & (lane_points[:, 1] > 4.0)]
    # analytic: the aisle's lane is its centre line x = 6 and reaches to within half the
    # aisle width (1.5 m) of its closed end at y = 10
    assert len(in_aisle) > 0
    assert np.abs(in_aisle[:, 0] - 6.0).max() < 0.01
    assert in_aisle[:, 1].max() == pytest.approx(8.5, abs=0.05)
    assert_topology(roadmap)


def test_room_corner_spurs_are_pruned():
    obstacles, free = plan((0.0, 0.0, 8.0, 4.0))
    graph = build(obstacles, free).graph
    # analytic: what remains of an 8 x 4 room's medial axis is its central segment y = 2
    assert graph.number_of_edges() == 1
    (u, v, data), = graph.edges(data=True)
    xy = shapely.get_coordinates(data["geometry"])
    assert np.abs(xy[:, 1] - 2.0).max() < 1e-6
    assert sorted(xy[[0, -1], 0]) == pytest.approx([2.0, 6.0], abs=1e-3)


def test_square_room_keeps_its_centre_and_one_half_diagonal():
    obstacles, free = plan((0.0, 0.0, 4.0, 4.0))
    graph = build(obstacles, free).graph
    # analytic: a square's medial axis is its diagonals, all spurs; the centre and the
    # longest of them stay (issue 10: no node without an edge)
    assert (graph.number_of_nodes(), graph.number_of_edges()) == (2, 1)
    xy = sorted((data["x"], data["y"]) for _, data in graph.nodes(data=True))
    centre = min(xy, key=lambda p: abs(p[0] - 2.0) + abs(p[1] - 2.0))
    assert centre == pytest.approx((2.0, 2.0), abs=0.01)
    (end,) = [p for p in xy if p != centre]
    assert abs(end[0] - 2.0) == pytest.approx(abs(end[1] - 2.0), abs=0.02)   # on a diagonal


def test_ring_around_one_island_has_no_self_loop():
    obstacles, free = plan((0.0, 0.0, 10.0, 10.0), shapely.box(3, 3, 7, 7))
    roadmap = build(obstacles, free)
    assert nx.number_of_selfloops(roadmap.graph) == 0
    assert_topology(roadmap)


def test_deterministic():
    obstacles, free = rack_grid(2, 3)
    first = build(obstacles, free, [("a", 1, 1)]).graph
    second = build(obstacles, free, [("a", 1, 1)]).graph
    assert list(first.nodes(data=True)) == list(second.nodes(data=True))
    assert [(u, v, k, d["geometry"].wkt) for u, v, k, d in first.edges(keys=True, data=True)] \
        == [(u, v, k, d["geometry"].wkt) for u, v, k, d in second.edges(keys=True, data=True)]


def test_survey_coordinates_give_the_same_graph_up_to_the_shift():
    shift = (5e5, 5.4e6)      # a site plan at survey coordinates (UTM-like), metres
    obstacles, free = rack_grid(2, 2)
    moved_obstacles = {k: shapely.affinity.translate(g, *shift) for k, g in obstacles.items()}
    moved_free = shapely.affinity.translate(free, *shift)
    here = build(obstacles, free, [("a", 1.0, 1.0)]).graph
    there = build(moved_obstacles, moved_free, [("a", 1.0 + shift[0], 1.0 + shift[1])]).graph
    assert list(here.nodes) == list(there.nodes)
    for node, data in here.nodes(data=True):
        other = there.nodes[node]
        assert other["x"] - shift[0] == pytest.approx(data["x"], abs=1e-6)
        assert other["y"] - shift[1] == pytest.approx(data["y"], abs=1e-6)
        assert other["clearance"] == pytest.approx(data["clearance"], abs=1e-6)
    assert sorted(here.edges(keys=True)) == sorted(there.edges(keys=True))
    assert_exact_clearances(build(moved_obstacles, moved_free), moved_free)


def test_chain_lanes_splits_at_junctions_and_closes_cycles():
    # a triangle (closed cycle) and a star with three arms of two edges each
    edges = np.array([[0, 1], [1, 2], [0, 2], [3, 4], [4, 5], [3, 6], [6, 7], [3, 8], [8, 9]])
    chains = chain_lanes(10, edges)
    lanes = sorted(tuple(chains.lane(i)) for i in range(len(chains)))
    assert len(lanes) == 4
    cycle = [lane for lane in lanes if lane[0] == lane[-1]]
    assert len(cycle) == 1 and sorted(set(cycle[0])) == [0, 1, 2]
    arms = sorted(tuple(sorted(lane)) for lane in lanes if lane[0] != lane[-1])
    assert arms == [(3, 4, 5), (3, 6, 7), (3, 8, 9)]


@settings(max_examples=25, deadline=None)
@given(rows=st.integers(1, 3), columns=st.integers(1, 3),
       aisle=st.floats(0.7, 3.5), depth=st.floats(0.8, 2.6), wall_gap=st.floats(0.6, 2.5),
       radius=st.floats(0.25, 0.5))
def test_cycle_rank_equals_islands_on_rack_grids(rows, columns, aisle, depth, wall_gap, radius):
    obstacles, free = rack_grid(rows, columns, aisle=aisle, depth=depth, bays=4,
                                wall_gap=wall_gap)
    roadmap = build(obstacles, free, robot=Robot.disc(radius, margin=0.05))
    assert_topology(roadmap)
    assert_lanes_clear(roadmap)
    assert_exact_clearances(roadmap, free)


def test_spurs_pruned_on_large_axes_with_int32_edges():
    # regression: edge keys u * V + v overflowed int32 beyond V = 46,341 vertices, so no
    # spur of a large warehouse was ever dropped
    from clearway.roadmap.graph import prune_spurs
    base = 50_000
    main = np.stack([np.arange(11.0), np.zeros(11)], axis=1)     # y = 0, clearance 1 m
    spur = np.stack([np.full(5, 5.0), np.linspace(0.25, 1.0, 5)], axis=1)
    vertices = np.vstack([np.zeros((base, 2)), main, spur])
    # analytic: into a 90-degree corner the clearance falls by sin 45 = 0.71 m per metre
    clearance = np.r_[np.zeros(base), np.ones(11), 1.0 - 0.71 * spur[:, 1]]
    edges = np.array([(base + i, base + i + 1) for i in range(10)] +
                     [(base + 5, base + 11)] +
                     [(base + 11 + i, base + 12 + i) for i in range(4)], dtype=np.int32)
    kept, isolated = prune_spurs(vertices, clearance, edges)
    assert sorted(map(tuple, kept.tolist())) == [(base + i, base + i + 1) for i in range(10)]
    assert len(isolated) == 0


def _prune_by_definition(vertices, clearance, edges, protected):
    """prune_spurs as defined: every round chains the whole graph and tests every leaf lane
    with _is_spur alone (the slow form the vectorised, incremental rounds must equal)."""
    from clearway.roadmap.graph import SPUR_PROBE, SPUR_SLOPE, _is_spur, _length
    from scipy.sparse.csgraph import connected_components
    from clearway.roadmap.graph import _adjacency
    count = len(vertices)
    alive, isolated = np.asarray(edges, dtype=np.int64), []
    for _ in range(50):
        chains = chain_lanes(count, alive, protected)
        degree = np.bincount(alive.ravel(), minlength=count)
        doomed = []
        for index in range(len(chains)):
            lane = chains.lane(index)
            if lane[0] != lane[-1] and any(
                    degree[seq[0]] == 1 and not protected[seq[0]] and
                    _is_spur(vertices[seq], clearance[seq], SPUR_SLOPE, SPUR_PROBE)
                    for seq in (lane, lane[::-1])):
                doomed.append(lane)
        if not doomed:
            break
        key = alive[:, 0] * count + alive[:, 1]
        pairs = np.concatenate([np.sort(np.stack([s[:-1], s[1:]], 1), axis=1) for s in doomed])
        dropped = np.isin(key, pairs[:, 0] * count + pairs[:, 1])
        _, label = connected_components(_adjacency(count, alive), directed=False)
        remaining = np.bincount(label[alive[~dropped, 0]], minlength=label.max() + 1)
        for component in np.unique(label[alive[dropped, 0]]):
            if remaining[component]:
                continue
            members = np.flatnonzero(label == component)
            best = int(members[np.argmax(clearance[members])])
            through = [s for s in doomed if best in (s[0], s[-1])]
            if not through:
                isolated.append(best)
                continue
            lane = max(through, key=lambda s: (_length(vertices[s]), -int(s[-1])))
            spared = np.sort(np.stack([lane[:-1], lane[1:]], 1), axis=1)
            dropped &= ~np.isin(key, spared[:, 0] * count + spared[:, 1])
            protected = protected.copy()
            protected[[lane[0], lane[-1]]] = True
        alive = alive[~dropped]
    return alive, sorted(set(isolated))


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), size=st.integers(3, 120), extra=st.integers(0, 30),
       steep=st.floats(0.0, 1.0))
def test_pruning_rounds_equal_the_definition_on_random_trees(seed, size, extra, steep):
    # The vectorised spur test and the rounds that re-chain only the lanes at changed
    # vertices must drop exactly what the definition drops. Clearances fall at exactly
    # SPUR_SLOPE on a share of the edges (grid-aligned unit steps), to hit the threshold.
    # source: the definition above (_is_spur per leaf lane, full re-chaining every round)
    from clearway.roadmap.graph import SPUR_SLOPE, prune_spurs
    rng = np.random.default_rng(seed)
    vertices = rng.integers(0, 12, (size, 2)).astype(float) * 0.25
    vertices[:, 0] += np.arange(size) * 1e-3           # distinct points, near-grid steps
    parent = np.r_[0, [rng.integers(0, i) for i in range(1, size)]]
    edges = np.stack([parent[1:], np.arange(1, size)], 1)
    if extra:
        more = rng.integers(0, size, (extra, 2))
        edges = np.vstack([edges, more[more[:, 0] != more[:, 1]]])
    edges = np.unique(np.sort(edges, axis=1), axis=0)
    depth = np.zeros(size)
    for child in range(1, size):
        depth[child] = depth[parent[child]] + np.hypot(*(vertices[child] - vertices[parent[child]]))
    clearance = np.where(rng.random(size) < steep, 2.0 - SPUR_SLOPE * depth,
                         rng.uniform(0.3, 2.0, size))
    protected = rng.random(size) < 0.05
    kept, isolated = prune_spurs(vertices, clearance, edges, protected=protected)
    expected_kept, expected_isolated = _prune_by_definition(vertices, clearance, edges,
                                                            protected)
    assert kept.tolist() == expected_kept.tolist()
    assert isolated.tolist() == expected_isolated
