"""roadmap.routing: routes and distance matrices agree with scipy.sparse.csgraph and networkx."""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.sparse import csr_array
from scipy.sparse.csgraph import dijkstra

from clearway.roadmap import distance_matrix, resolve_node, shortest_route

from tests.lane_fixtures import lane_graph, grid_graph


@st.composite
def random_lane_graphs(draw):
    """Connected or not, with parallel lanes, detours (weight >= straight line) and stations."""
    count = draw(st.integers(2, 14))
    coordinate = st.integers(0, 40).map(float)
    points = draw(st.lists(st.tuples(coordinate, coordinate), min_size=count, max_size=count,
                           unique=True))
    nodes = {f"n{i}": (x, y, "waypoint", f"S{i}" if i % 3 == 0 else "", 1.0)
             for i, (x, y) in enumerate(points)}
    pairs = draw(st.lists(st.tuples(st.integers(0, count - 1), st.integers(0, count - 1)),
                          max_size=3 * count))
    edges = []
    for index, (i, j) in enumerate(pairs):
        if i == j:
            continue
        factor = draw(st.sampled_from([1.0, 1.0, 1.25, 2.0]))
        straight = math.dist(points[i], points[j])
        edges.append((f"e{index}", f"n{i}", f"n{j}",
                      {"weight": straight * factor,
                       "clearance_min": draw(st.sampled_from([0.4, 0.8, 1.5]))}))
    return lane_graph(nodes, edges)


def scipy_costs(graph: nx.MultiGraph) -> tuple[list[str], np.ndarray]:
    """All-pairs costs by scipy.sparse.csgraph on the lightest parallel lane."""
    order = list(graph.nodes)
    index = {node: i for i, node in enumerate(order)}
    best: dict[tuple[int, int], float] = {}
    for u, v, weight in graph.edges(data="weight"):
        pair = tuple(sorted((index[u], index[v])))
        best[pair] = min(best.get(pair, math.inf), weight)
    rows = [p[0] for p in best]
    cols = [p[1] for p in best]
    matrix = csr_array((list(best.values()), (rows, cols)), shape=(len(order), len(order)))
    return order, dijkstra(matrix, directed=False)


@settings(max_examples=40, deadline=None)
@given(random_lane_graphs(), st.data())
def test_route_cost_equals_scipy_and_networkx(graph, data):
    order, costs = scipy_costs(graph)
    source = data.draw(st.sampled_from(order))
    target = data.draw(st.sampled_from(order))
    expected = costs[order.index(source), order.index(target)]
    for method in ("astar", "dijkstra"):
        if not math.isfinite(expected):
            with pytest.raises(nx.NetworkXNoPath):
                shortest_route(graph, source, target, method=method)
            continue
        route = shortest_route(graph, source, target, method=method)
        # independent references: scipy.sparse.csgraph.dijkstra and networkx on a MultiGraph
        assert route.cost == pytest.approx(expected, rel=1e-12, abs=1e-9)
        assert route.cost == pytest.approx(
            nx.dijkstra_path_length(graph, source, target, weight="weight"), rel=1e-12, abs=1e-9)
        assert_valid_route(graph, route, source, target)


def assert_valid_route(graph, route, source, target):
    """The route is a walk along real lanes, its numbers add up, its polyline is continuous."""
    assert route.nodes[0] == source and route.nodes[-1] == target
    assert len(route.edges) == len(route.nodes) - 1
    for u, v, key in zip(route.nodes, route.nodes[1:], route.edges):
        assert graph.has_edge(u, v, key)
    assert route.length == pytest.approx(
        sum(graph.edges[u, v, k]["length"] for u, v, k in
            zip(route.nodes, route.nodes[1:], route.edges)), abs=1e-9)
    # analytic: the polyline is the lanes end to end, so its length is the route length
    assert route.geometry.length == pytest.approx(route.length, abs=1e-9)
    start, end = route.geometry.coords[0], route.geometry.coords[-1]
    assert start == (graph.nodes[source]["x"], graph.nodes[source]["y"])
    assert end == (graph.nodes[target]["x"], graph.nodes[target]["y"])
    # the narrowest place driven: a lane's or a node's clearance
    assert route.clearance_min == min(
        [graph.edges[u, v, k]["clearance_min"] for u, v, k in
         zip(route.nodes, route.nodes[1:], route.edges)]
        + [graph.nodes[node]["clearance"] for node in route.nodes])


@settings(max_examples=30, deadline=None)
@given(random_lane_graphs())
def test_matrix_symmetric_triangle_and_equal_to_networkx(graph):
    labels, matrix = distance_matrix(graph)
    nodes = [resolve_node(graph, label) for label in labels]
    # analytic: undirected graph, so d(a, b) == d(b, a); shortest paths obey the triangle
    # inequality d(a, c) <= d(a, b) + d(b, c); d(a, a) == 0
    assert np.array_equal(matrix, matrix.T)
    assert np.all(np.diag(matrix) == 0)
    for b in range(len(labels)):
        bound = matrix[:, b, None] + matrix[None, b, :]
        assert np.all(matrix <= bound + 1e-9)
    for i, a in enumerate(nodes):
        lengths = nx.single_source_dijkstra_path_length(graph, a, weight="weight")
        expected = [lengths.get(other, math.inf) for other in nodes]
        assert matrix[i] == pytest.approx(expected, rel=1e-12, abs=1e-9)


def test_astar_with_lanes_lighter_than_the_straight_line():
    # a lane weighing less than its chord breaks a plain Euclidean heuristic; the scaled
    # one must still find the cheapest route (compare with Dijkstra)
    graph = lane_graph({"a": (0, 0), "b": (10, 0), "c": (5, 1), "d": (20, 0)},
                       [("e0", "a", "b", {"weight": 12.0}), ("e1", "a", "c", {"weight": 1.0}),
                        ("e2", "c", "b", {"weight": 1.0}), ("e3", "b", "d")])
    fast = shortest_route(graph, "a", "d", method="astar")
    assert fast.nodes == ("a", "c", "b", "d")
    assert fast.cost == shortest_route(graph, "a", "d", method="dijkstra").cost == 12.0


def test_lightest_parallel_lane_is_driven():
    graph = lane_graph({"a": (0, 0), "b": (4, 0)},
                       [("e0", "a", "b", {"via": [(2, 3)]}), ("e1", "a", "b"),
                        ("e2", "a", "b", {"via": [(2, -1)]})])
    route = shortest_route(graph, "b", "a")
    assert route.edges == ("e1",) and route.length == 4.0
    assert list(route.geometry.coords) == [(4.0, 0.0), (0.0, 0.0)]


def test_curved_lane_geometry_is_oriented_and_joined():
    # analytic: quarter circle of radius 5 (length 2.5 pi) then a 3 m straight
    arc = shapely.Point(0, 0).buffer(5, quad_segs=64).exterior
    quarter = [(x, y) for x, y in arc.coords if x >= -1e-9 and y >= -1e-9]
    quarter = sorted(set(quarter), key=lambda p: math.atan2(p[1], p[0]))
    graph = lane_graph({"a": (5, 0), "b": (0, 5), "c": (-3, 5)},
                       [("e0", "b", "a", {"via": quarter[-2:0:-1]}), ("e1", "b", "c")])
    route = shortest_route(graph, "a", "c")
    assert route.geometry.coords[0] == (5.0, 0.0) and route.geometry.coords[-1] == (-3.0, 5.0)
    assert route.geometry.is_simple
    assert route.length == pytest.approx(2.5 * math.pi + 3, rel=1e-3)


def test_avoid_forces_a_detour_and_can_cut_off():
    graph = grid_graph(3, 3, spacing=2.0)   # n4 in the middle
    straight = shortest_route(graph, "n1", "n7")
    assert straight.nodes == ("n1", "n4", "n7") and straight.length == 4.0
    detour = shortest_route(graph, "n1", "n7", avoid=["n4"])
    # analytic: around the side of a 2 x 2 grid cell pair: 2 + 4 + 2 m
    assert "n4" not in detour.nodes and detour.length == 8.0
    assert detour.cost == shortest_route(graph, "n1", "n7", avoid=["n4"], method="dijkstra").cost
    with pytest.raises(nx.NetworkXNoPath, match="no route from n0 to n8 avoiding n1, n3"):
        shortest_route(graph, "n0", "n8", avoid=["n1", "n3"])
    with pytest.raises(ValueError, match="cannot avoid n0: it is an end"):
        shortest_route(graph, "n0", "n8", avoid=["n0"])


def test_station_labels_resolve():
    graph = lane_graph({"n0": (0, 0, "station", "DOCK-1"), "n1": (5, 0),
                        "n2": (9, 0, "station", "CHG"), "n3": (9, 3, "station", "CHG")},
                       [("e0", "n0", "n1"), ("e1", "n1", "n2"), ("e2", "n2", "n3")])
    assert resolve_node(graph, "DOCK-1") == "n0" and resolve_node(graph, "n1") == "n1"
    assert shortest_route(graph, "DOCK-1", "n2").length == 9.0
    with pytest.raises(ValueError, match="station 'CHG' is ambiguous: nodes n2, n3"):
        resolve_node(graph, "CHG")
    # issue 15: labels match ignoring case, and a near miss gets a suggestion
    assert resolve_node(graph, "dock-1") == "n0"
    with pytest.raises(ValueError, match=r"called 'DOCK-2'; did you mean 'DOCK-1'\? "
                                         r"\(stations: CHG, DOCK-1\)"):
        resolve_node(graph, "DOCK-2")
    with pytest.raises(ValueError, match="method must be one of astar, dijkstra"):
        shortest_route(graph, "n0", "n1", method="bfs")


def test_route_to_itself_is_a_point():
    graph = lane_graph({"a": (1, 2, "station", "A")}, [])
    route = shortest_route(graph, "A", "A")
    assert route.nodes == ("a",) and route.length == 0.0 and route.edges == ()
    assert route.geometry.coords[0] == (1.0, 2.0)


def test_matrix_marks_unreachable_and_keeps_zero_length_lanes():
    graph = lane_graph({"a": (0, 0, "station", "A"), "b": (0, 0, "station", "B"),
                        "c": (7, 0, "station", "C")}, [("e0", "a", "b")])
    labels, matrix = distance_matrix(graph)
    assert labels == ("A", "B", "C")
    # analytic: a and b coincide (a 0 m lane); c has no lane at all
    assert matrix.tolist() == [[0.0, 0.0, math.inf], [0.0, 0.0, math.inf],
                               [math.inf, math.inf, 0.0]]
    assert distance_matrix(graph, ["C", "a"])[1].tolist() == [[0.0, math.inf], [math.inf, 0.0]]


def scipy_turn_costs(graph: nx.MultiGraph, rules, source: str) -> dict[str, float]:
    """Costs from `source` by scipy.sparse.csgraph on the directed graph of lane traversals
    (u -> v along edge k), one arc per allowed turn: the textbook line-graph construction."""
    moves = [(u, v, key, w) for u, v, key, w in graph.edges(keys=True, data="weight")
             if u != v]
    moves += [(v, u, key, w) for u, v, key, w in moves]
    index = {move[:3]: i + 1 for i, move in enumerate(moves)}      # 0 is the start
    rows, cols, values = [], [], []
    for (u, v, key, weight) in moves:
        if u == source:
            rows.append(0), cols.append(index[u, v, key]), values.append(weight)
        for (u2, v2, key2, weight2) in moves:
            if u2 == v and (v not in rules or (key, key2) in rules[v]):
                rows.append(index[u, v, key]), cols.append(index[u2, v2, key2])
                values.append(weight2)
    matrix = csr_array((values, (rows, cols)), shape=(len(moves) + 1, len(moves) + 1))
    reached = dijkstra(matrix, directed=True, indices=0)
    costs = {source: 0.0}
    for (u, v, key, _) in moves:
        costs[v] = min(costs.get(v, math.inf), reached[index[u, v, key]])
    return costs


@settings(max_examples=40, deadline=None)
@given(random_lane_graphs(), st.data())
def test_route_with_forbidden_turns_equals_scipy_on_the_traversal_graph(graph, data):
    order = list(graph.nodes)
    rules = {}
    for node in order:
        keys = sorted(key for *_, key in graph.edges(node, keys=True))
        pairs = [(a, b) for i, a in enumerate(keys) for b in keys[i:]]
        kept = data.draw(st.lists(st.sampled_from(pairs), unique=True) if pairs
                         else st.just([]))
        graph.nodes[node]["turns"] = " ".join(f"{a}:{b}" for a, b in kept)
        rules[node] = {(a, b) for a, b in kept} | {(b, a) for a, b in kept}
    source = data.draw(st.sampled_from(order))
    target = data.draw(st.sampled_from(order))
    expected = scipy_turn_costs(graph, rules, source).get(target, math.inf)
    for method in ("astar", "dijkstra"):
        if not math.isfinite(expected):
            with pytest.raises(nx.NetworkXNoPath, match="allowed turns"):
                shortest_route(graph, source, target, method=method)
            continue
        route = shortest_route(graph, source, target, method=method)
        assert route.cost == pytest.approx(expected, rel=1e-12, abs=1e-9)
        for node, before, after in zip(route.nodes[1:-1], route.edges, route.edges[1:]):
            assert (before, after) in rules[node]
    labels, matrix = distance_matrix(graph, [source, target])
    assert matrix[0, 1] == pytest.approx(expected, rel=1e-12, abs=1e-9) or \
        (math.isinf(matrix[0, 1]) and math.isinf(expected))


def test_a_forbidden_turn_sends_the_route_round_the_block():
    graph = nx.MultiGraph()
    for node, (x, y) in {"n0": (0, 0), "n1": (10, 0), "n2": (10, 10), "n3": (0, 10)}.items():
        graph.add_node(node, x=float(x), y=float(y), label="")
    for key, u, v in (("e0", "n0", "n1"), ("e1", "n1", "n2"), ("e2", "n2", "n3"),
                      ("e3", "n3", "n0")):
        line = shapely.LineString([(graph.nodes[u]["x"], graph.nodes[u]["y"]),
                                   (graph.nodes[v]["x"], graph.nodes[v]["y"])])
        graph.add_edge(u, v, key, geometry=line, length=10.0, weight=10.0, clearance_min=1.0)
    # analytic: on a 10 m square of lanes n1 -> n3 is 20 m either way round; allowing no
    # turn at n0 (e0 to e3) leaves only n1-n2-n3, and none at n2 either leaves no route
    graph.nodes["n0"]["turns"] = ""
    route = shortest_route(graph, "n1", "n3")
    assert route.nodes == ("n1", "n2", "n3") and route.cost == 20.0
    graph.nodes["n2"]["turns"] = ""
    with pytest.raises(nx.NetworkXNoPath, match="allowed turns"):
        shortest_route(graph, "n1", "n3")
