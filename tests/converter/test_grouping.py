"""The reader's numpy-only grouping and pairing, checked against scipy, and the reading
process that no longer imports scipy."""

from __future__ import annotations

import json
import subprocess
import sys

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.sparse import coo_array
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree

from clearway.converter.grouping import components, pairs_within
from tests.conftest import SAMPLES


def scipy_labels(count, first, second):
    graph = coo_array((np.ones(len(first)), (first, second)), shape=(count, count))
    return connected_components(graph, directed=False)[1]


@st.composite
def graphs(draw):
    count = draw(st.integers(1, 60))
    node = st.integers(0, count - 1)
    edges = draw(st.lists(st.tuples(node, node), max_size=90))
    first = np.array([a for a, _ in edges], dtype=np.int64)
    second = np.array([b for _, b in edges], dtype=np.int64)
    return count, first, second


@settings(max_examples=150, deadline=None)
@given(graphs())
def test_components_are_scipys_components(graph):
    # source: scipy.sparse.csgraph.connected_components, an independent implementation;
    # its labels follow each component's lowest node, and so must ours
    count, first, second = graph
    assert components(count, first, second).tolist() == scipy_labels(count, first, second).tolist()


@pytest.mark.parametrize("count", [1, 2, 1000, 4097])
def test_a_path_given_in_the_worst_order_is_one_component(count):
    # a path whose edges join high nodes first: hooking must still reach node 0
    # source: analytic (a path is connected)
    nodes = np.arange(count)[::-1]
    labels = components(count, nodes[:-1], nodes[1:])
    assert set(labels.tolist()) == {0}


def test_a_raster_of_rings_matches_scipy():
    # concentric square rings, each one component: the slowest shape for label propagation
    # source: scipy.sparse.csgraph.connected_components
    size = 61
    grid = np.zeros((size, size), dtype=bool)
    for ring in range(0, size // 2, 2):
        grid[ring, ring:size - ring] = grid[size - 1 - ring, ring:size - ring] = True
        grid[ring:size - ring, ring] = grid[ring:size - ring, size - 1 - ring] = True
    index = np.full(grid.shape, -1)
    index[grid] = np.arange(grid.sum())
    a, b = index[:, :-1].ravel(), index[:, 1:].ravel()
    c, d = index[:-1, :].ravel(), index[1:, :].ravel()
    first, second = np.r_[a, c], np.r_[b, d]
    keep = (first >= 0) & (second >= 0)
    labels = components(int(grid.sum()), first[keep], second[keep])
    assert labels.max() + 1 == len(range(0, size // 2, 2))
    assert labels.tolist() == scipy_labels(int(grid.sum()), first[keep], second[keep]).tolist()


coordinates = st.floats(-1e4, 1e4, allow_nan=False, allow_infinity=False)


@settings(max_examples=150, deadline=None)
@given(st.lists(st.tuples(coordinates, coordinates), max_size=80),
       st.floats(0, 5e3, allow_nan=False), st.booleans())
def test_pairs_within_are_kdtree_pairs(points, reach, snap):
    # source: scipy.spatial.cKDTree.query_pairs (pairs at distance <= r, each once)
    points = np.array(points, dtype=float).reshape(-1, 2)
    if snap:
        points = np.round(points / 500) * 500      # repeats, and pairs exactly `reach` apart
    i, j = pairs_within(points, reach)
    expected = cKDTree(points).query_pairs(reach) if len(points) else set()
    # pairs at the reach within rounding may fall either way in either implementation
    found = set(zip(i.tolist(), j.tolist()))
    apart = {pair: float(np.hypot(*(points[pair[0]] - points[pair[1]])))
             for pair in found ^ expected}
    assert all(abs(distance - reach) <= 1e-9 * max(reach, 1.0) for distance in apart.values())
    assert (i < j).all() and list(zip(i.tolist(), j.tolist())) == sorted(found)


def test_pairs_within_far_apart_coordinates():
    # coordinates 1e12 apart with a 1 m reach: the cells are coarsened so that their numbers
    # stay within int64, and every pair is still found
    # source: analytic, and scipy's cKDTree on the same points
    rng = np.random.default_rng(3)
    corners = np.array([(0.0, 0.0), (1e12, 1e12), (0.0, 1e12), (1e12, 0.0), (3e11, 7e11)])
    points = np.concatenate([corner + rng.uniform(0, 2.0, (40, 2)) for corner in corners])
    i, j = pairs_within(points, 1.0)
    expected = sorted(cKDTree(points).query_pairs(1.0))
    assert list(zip(i.tolist(), j.tolist())) == expected
    assert (i // 40 == j // 40).all()         # no pair across corners 3e11 m or more apart


READ = """
import json, sys
from pathlib import Path
from clearway.converter import read_floorplan
plan = read_floorplan(Path(sys.argv[1]))
print(json.dumps(sorted(name for name in sys.modules if name.split(".")[0] == "scipy")))
"""


@pytest.mark.parametrize("name", ["clinic.dxf", "distribution_centre.dxf",
                                  "office_ground_floor.dxf"])
def test_reading_a_drawing_does_not_import_scipy(name):
    # `clearway build` reads in a second process beside the imports; scipy would put about
    # 0.35 s of imports in front of the reading (benchmarks/bench_suite.py shows the stage)
    done = subprocess.run([sys.executable, "-c", READ, str(SAMPLES / name)],
                          capture_output=True, text=True, timeout=300, check=True)
    assert json.loads(done.stdout.strip().splitlines()[-1]) == []
