"""roadmap.ids: ids survive a rebuild wherever the place is the same; new things get new ids."""

from __future__ import annotations

import itertools
import math
import random
import re
from pathlib import Path

import networkx as nx
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from clearway.roadmap import assign_stable_ids
from clearway.roadmap.ids import SAME_PLACE_TOLERANCE, match_nodes, match_rooms

from tests.lane_fixtures import lane_graph, grid_graph


def renamed(graph: nx.MultiGraph, seed: int) -> nx.MultiGraph:
    """The same graph under shuffled node and edge ids, as an independent rebuild gives."""
    rng = random.Random(seed)
    nodes = list(graph.nodes)
    names = [f"v{i}" for i in range(len(nodes))]
    rng.shuffle(names)
    mapping = dict(zip(nodes, names))
    keys = [f"k{i}" for i in range(graph.number_of_edges())]
    rng.shuffle(keys)
    result = nx.MultiGraph(**graph.graph)
    result.add_nodes_from((mapping[n], dict(a)) for n, a in graph.nodes(data=True))
    result.add_edges_from((mapping[u], mapping[v], key, dict(a)) for (u, v, _, a), key in
                          zip(graph.edges(keys=True, data=True), keys))
    return result


def position_index(graph):
    return {(round(a["x"], 6), round(a["y"], 6)): n for n, a in graph.nodes(data=True)}


def test_identical_rebuild_gets_every_old_id_back():
    old = grid_graph(6, 4, jitter=lambda k: (0.01 * (k % 3), 0.02 * (k % 5)))
    new = assign_stable_ids(renamed(old, seed=3), old)
    assert position_index(new) == position_index(old)
    assert sorted(new.edges(keys=True)) == sorted(old.edges(keys=True))


def test_planted_revision_keeps_ids_away_from_the_change():
    old = grid_graph(12, 8, spacing=2.5)
    # revision: the block x in [10, 15], y in [5, 10] is rebuilt (a rack moved), every
    # node shifts by up to 8 cm (resampling noise), two nodes beside the block move 0.4 m
    changed = (10.0, 5.0, 15.0, 10.0)
    rng = random.Random(11)
    new = nx.MultiGraph(units="m")

    def inside(x, y, grow=0.0):
        return (changed[0] - grow <= x <= changed[2] + grow
                and changed[1] - grow <= y <= changed[3] + grow)

    moved_far = {"n27", "n51"}   # (7.5, 5.0) and (7.5, 10.0): left of the block
    for node, attrs in old.nodes(data=True):
        if inside(attrs["x"], attrs["y"]):
            continue
        dx, dy = rng.uniform(-0.056, 0.056), rng.uniform(-0.056, 0.056)
        if node in moved_far:
            dx, dy = -0.4, 0.0
        new.add_node(f"t{node}", **{**attrs, "x": attrs["x"] + dx, "y": attrs["y"] + dy})
    for u, v, attrs in old.edges(data=True):
        if f"t{u}" in new and f"t{v}" in new:
            new.add_edge(f"t{u}", f"t{v}", key=f"t{u}-{v}", **attrs)
    for index, (x, y) in enumerate([(11.0, 6.0), (14.0, 6.0), (11.0, 9.0), (14.0, 9.0)]):
        new.add_node(f"new{index}", x=x, y=y, kind="junction", label="", clearance=0.8)
    new.add_edge("new0", "new1", key="x0", **old.edges["n0", "n1", "e0"])
    new.add_edge("new0", "tn26", key="x1", **old.edges["n0", "n1", "e0"])

    result = assign_stable_ids(new, old, tolerance=0.25)
    index = {f"t{n}": n for n in old}
    far, kept = 0, 0
    for node, attrs in new.nodes(data=True):
        if node.startswith("new"):
            continue
        distance = math.hypot(max(changed[0] - attrs["x"], 0, attrs["x"] - changed[2]),
                              max(changed[1] - attrs["y"], 0, attrs["y"] - changed[3]))
        if distance > 5.0:
            far += 1
            kept += index[node] in result and result.nodes[index[node]]["x"] == attrs["x"]
    assert far > 40 and kept == far        # every node > 5 m from the change keeps its id
    # the two nodes moved 0.4 m (> 0.25 m tolerance) and the four new ones get fresh ids
    old_top = max(int(n[1:]) for n in old)
    fresh = sorted((n for n in result if n not in old), key=lambda n: int(n[1:]))
    assert len(fresh) == 6 and all(int(n[1:]) > old_top for n in fresh)
    assert not (moved_far & set(result))
    # edges: kept between carried nodes, fresh ids for the two new lanes
    old_keys = {k for *_, k in old.edges(keys=True)}
    new_keys = {k for *_, k in result.edges(keys=True)}
    assert len(new_keys - old_keys) == 2 + sum(
        1 for u, v in new.edges() if {u, v} & {f"t{n}" for n in moved_far})
    for u, v, key in result.edges(keys=True):
        if key in old_keys:
            assert old.has_edge(u, v, key)
    assert all(re.fullmatch(r"e\d+", k) for k in new_keys - old_keys)


def test_kind_and_station_label_must_match():
    old = lane_graph({"n0": (0, 0, "station", "DOCK-1"), "n1": (5, 0, "junction"),
                      "n2": (9, 0, "end")}, [("e0", "n0", "n1"), ("e1", "n1", "n2")])
    new = lane_graph({"a": (0.1, 0, "station", "DOCK-2"), "b": (5, 0.1, "junction"),
                      "c": (9, 0, "waypoint")}, [("x", "a", "b"), ("y", "b", "c")])
    result = assign_stable_ids(new, old)
    assert sorted(result.nodes) == ["n1", "n3", "n4"]
    assert result.nodes["n3"]["label"] == "DOCK-2"       # sorted (x, y): a before c
    assert sorted(k for *_, k in result.edges(keys=True)) == ["e2", "e3"]


def test_nearest_candidate_wins_and_matching_is_one_to_one():
    old = lane_graph({"n0": (0, 0)}, [])
    new = lane_graph({"a": (0.2, 0), "b": (0.05, 0), "c": (0, 0.1)}, [])
    result = assign_stable_ids(new, old)
    assert result.nodes["n0"]["x"] == 0.05 and sorted(result) == ["n0", "n1", "n2"]


def test_parallel_lanes_keep_ids_by_shape():
    old = lane_graph({"n0": (0, 0), "n1": (10, 0)},
                     [("e0", "n0", "n1", {"via": [(5, 3)]}), ("e1", "n0", "n1", {"via": [(5, -3)]}),
                      ("e2", "n0", "n1")])
    new = lane_graph({"p": (0, 0), "q": (10, 0)},
                     [("z0", "q", "p", {"via": [(5, -2.8)]}), ("z1", "p", "q"),
                      ("z2", "p", "q", {"via": [(5, 3.1)]})])
    result = assign_stable_ids(new, old)
    shapes = {key: attrs["geometry"].coords[1][1] for *_, key, attrs in
              result.edges(keys=True, data=True)}
    # the lane through (5, 3.1) is the old one through (5, 3), and so on
    assert shapes["e0"] == 3.1 and shapes["e1"] == -2.8 and shapes["e2"] in (0.0, 10.0)


def test_deterministic():
    old = grid_graph(5, 5)
    new = renamed(grid_graph(6, 5, jitter=lambda k: (0.03, 0.0)), seed=5)
    first, second = assign_stable_ids(new, old), assign_stable_ids(new, old)
    assert list(first.nodes(data=True)) == list(second.nodes(data=True))
    assert list(first.edges(keys=True)) == list(second.edges(keys=True))


@settings(max_examples=25, deadline=None)
@given(st.lists(st.tuples(st.integers(0, 6), st.integers(0, 6)), min_size=1, max_size=5),
       st.lists(st.tuples(st.integers(0, 6), st.integers(0, 6)), min_size=1, max_size=5))
def test_matching_is_the_optimum(old_points, new_points):
    # points on a 5 cm grid are sqrt(k) * 5 cm apart; 0.26 m = sqrt(27.04) * 5 cm lies
    # between two such distances, so no pair sits on the boundary up to rounding
    tolerance = 0.26
    old = lane_graph({f"o{i}": (x / 20, y / 20) for i, (x, y) in enumerate(old_points)}, [])
    new = lane_graph({f"w{i}": (x / 20, y / 20) for i, (x, y) in enumerate(new_points)}, [])
    pairs = match_nodes(old, new, tolerance=tolerance)
    assert len(set(pairs.values())) == len(pairs)                      # one-to-one

    def dist(a, b):
        return math.dist((new.nodes[a]["x"], new.nodes[a]["y"]),
                         (old.nodes[b]["x"], old.nodes[b]["y"]))

    assert all(dist(a, b) <= tolerance for a, b in pairs.items())
    # independent reference: Hopcroft-Karp maximum matching (networkx) for the count,
    # and brute force over every one-to-one assignment for the smallest total distance
    candidates = nx.Graph([(a, b) for a in new for b in old if dist(a, b) <= tolerance])
    top = [a for a in new if a in candidates]
    best_count = len(nx.bipartite.maximum_matching(candidates, top_nodes=top)) // 2 if top else 0
    assert len(pairs) == best_count
    best_total = math.inf
    options = [[None] + [b for b in old if dist(a, b) <= tolerance] for a in new]
    for choice in itertools.product(*options):
        chosen = [c for c in choice if c is not None]
        if len(chosen) == best_count and len(set(chosen)) == len(chosen):
            best_total = min(best_total, sum(dist(a, b) for a, b in zip(new, choice)
                                             if b is not None))
    total = sum(dist(a, b) for a, b in pairs.items())
    assert total == pytest.approx(best_total if best_count else 0.0, abs=1e-9)


def test_carry_ids_over_updates_the_findings_too():
    from clearway.roadmap import carry_ids_over
    from clearway.roadmap.model import Findings, PinchPoint, Robot, Roadmap, StationResult
    old = lane_graph({"n4": (0, 0, "station", "DOCK-1"), "n9": (6, 0, "end")},
                     [("e5", "n4", "n9", {"clearance_min": 0.4})])
    new = lane_graph({"a": (0.02, 0, "station", "DOCK-1"), "b": (6, 0.01, "end"),
                      "c": (6, 5, "end")}, [("x", "a", "b", {"clearance_min": 0.4}),
                                            ("y", "b", "c")])
    findings = Findings(stations=(StationResult("DOCK-1", 0.0, 0.0, "a", 0, True),),
                        pinch_points=(PinchPoint(3.0, 0.0, 0.4, edge="x"),))
    built = Roadmap(new, Robot.disc(0.35, margin=0.1), shapely.Point(0, 0), findings)
    carried = carry_ids_over(built, old)
    assert sorted(carried.graph.nodes) == ["n10", "n4", "n9"]
    assert carried.findings.stations[0].node == "n4"
    assert carried.findings.pinch_points[0].edge == "e5"
    assert built.graph is new and sorted(new.nodes) == ["a", "b", "c"]   # input untouched


SAMPLES = Path(__file__).resolve().parents[2] / "sample_drawings"


def build_sample(name: str):
    from clearway.converter import read_floorplan
    from clearway.roadmap import Robot, build_roadmap
    plan = read_floorplan(SAMPLES / name)
    return build_roadmap(plan.obstacles, plan.free_space,
                         [(s.label, s.x, s.y) for s in plan.stations],
                         robot=Robot.disc(0.35, margin=0.1), shared_zones=plan.regions["shared"])


def test_sample_revision_b_keeps_every_id_away_from_the_change():
    old = build_sample("distribution_centre.dxf").graph
    new = build_sample("distribution_centre_rev_b.dxf").graph
    # source: sample_drawings/README.md and make_samples.py: revision B moves the west half
    # of the third double row (x 4..31 m, y 22.4..24.6 m) 0.6 m north and adds a partition
    # at x = 44 m (y 0.3..10 m); everything else is identical
    changed = shapely.union_all([shapely.box(4.0, 22.4, 31.0, 25.2),
                                 shapely.box(43.95, 0.3, 44.05, 10.0)])
    result = assign_stable_ids(new, old)
    by_place = {(a["x"], a["y"]): n for n, a in result.nodes(data=True)}
    far = [(a["x"], a["y"]) for _, a in new.nodes(data=True)
           if shapely.distance(shapely.Point(a["x"], a["y"]), changed) > 5.0]
    kept = [place for place in far if by_place[place] in old and math.dist(
        place, (old.nodes[by_place[place]]["x"], old.nodes[by_place[place]]["y"]))
        <= SAME_PLACE_TOLERANCE]
    assert len(far) >= 30
    assert len(kept) == len(far)             # measured share: 43 of 43 nodes (100 %)
    carried_labels = {result.nodes[n]["label"] for n in result if n in old}
    assert {a["label"] for _, a in old.nodes(data=True) if a["label"]} <= carried_labels


@pytest.mark.parametrize("new, expected", [
    # analytic: the same room moved 1 m keeps 3/4 of its 16 m^2
    ([shapely.box(1, 0, 5, 4)], {0: "r4"}),
    # analytic: split 3:1, the larger part holds 12 of 16 m^2, the smaller 4
    ([shapely.box(0, 0, 1, 4), shapely.box(1, 0, 4, 4)], {1: "r4"}),
    # analytic: split in halves, neither holds more than half
    ([shapely.box(0, 0, 2, 4), shapely.box(2, 0, 4, 4)], {}),
    # analytic: r4 and r9 (16 m^2 each) merged: equal overlaps, the smaller id wins
    ([shapely.box(0, 0, 4, 8)], {0: "r4"}),
    # analytic: merged with 3/4 of r9 only: r4 overlaps 16, r9 12 m^2
    ([shapely.box(0, 0, 4, 7), shapely.box(0, 7, 4, 8)], {0: "r4"}),
])
def test_a_room_keeps_its_id_when_it_keeps_most_of_its_area(new, expected):
    old = {"r9": shapely.box(0, 4, 4, 8), "r4": shapely.box(0, 0, 4, 4)}
    assert match_rooms(old, new) == expected
