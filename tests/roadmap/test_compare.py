"""roadmap.compare: two hand-made revisions with planted changes; exactly those are reported."""

from __future__ import annotations

import json
import math

import networkx as nx
import pytest

from clearway.roadmap import compare_graphs, summarize_changes

from tests.lane_fixtures import grid_graph, lane_graph

OLD_NODES = {"n0": (0, 0, "station", "DOCK-1", 0.9), "n1": (4, 0, "junction", "", 1.2),
             "n2": (4, 8, "junction", "", 1.1), "n3": (12, 0, "junction", "", 1.0),
             "n4": (12, 8, "junction", "", 1.0), "n5": (16, 8, "station", "CHG <2>", 0.7),
             "n6": (8, 4, "station", "PICK,A", 0.8), "n7": (30, 30, "station", "ISLAND", 2.0)}
OLD_EDGES = [("e0", "n0", "n1"), ("e1", "n1", "n2"), ("e2", "n1", "n3"), ("e3", "n2", "n4"),
             ("e4", "n3", "n4", {"clearance_min": 0.55}), ("e5", "n4", "n5"),
             ("e6", "n2", "n6"), ("e7", "n1", "n6", {"via": [(8, 0)]})]


def revisions():
    """Revision B: lane e7 removed, PICK,A moved 0.3 m east, ISLAND gone, a new charger
    CHG-3 with its lane, lane e3 narrowed to 0.5 m, node n4 narrowed to 0.65 m."""
    old = lane_graph(OLD_NODES, OLD_EDGES)
    nodes = dict(OLD_NODES)
    del nodes["n7"]
    nodes["n6"] = (8.3, 4, "station", "PICK,A", 0.8)
    nodes["n4"] = (12, 8, "junction", "", 0.65)
    nodes["n8"] = (20, 8, "station", "CHG-3", 1.0)
    edges = [edge for edge in OLD_EDGES if edge[0] not in ("e7", "e3")]
    edges += [("e3", "n2", "n4", {"clearance_min": 0.5}), ("e8", "n5", "n8")]
    return old, lane_graph(nodes, edges)


def check_planted(changes, new_id=lambda n: n):
    assert [c.id for c in changes.nodes_removed] == ["n7"]
    assert [c.id for c in changes.nodes_added] == [new_id("n8")]
    assert [(m.old_id, m.new_id) for m in changes.nodes_moved] == [("n6", new_id("n6"))]
    # analytic: moved from (8, 4) to (8.3, 4)
    assert changes.nodes_moved[0].distance == pytest.approx(0.3, abs=1e-12)
    assert [c.id for c in changes.edges_removed] == ["e7"]
    assert len(changes.edges_added) == 1 and changes.edges_added[0].length == 4.0
    assert changes.stations_added == ("CHG-3",) and changes.stations_removed == ("ISLAND",)
    # analytic: 4+8+8+8+8+4 m of straight lanes, e6 = |(4,8)-(8,4)|, e7 = 4+4 m;
    # after: e7 gone, e6 = |(4,8)-(8.3,4)|, e8 = 4 m
    assert changes.lane_length_before == pytest.approx(40 + math.hypot(4, 4) + 8, abs=1e-9)
    assert changes.lane_length_after == pytest.approx(40 + math.hypot(4.3, 4) + 4, abs=1e-9)
    routes = {(r.source, r.target): r for r in changes.routes_changed}
    assert sorted(routes) == [("CHG <2>", "PICK,A"), ("DOCK-1", "PICK,A")]
    # analytic: DOCK-1 reached PICK,A by e0 + e7 = 12 m; now e0 + e1 + e6 = 12 + |(4.3, 4)|
    assert routes["DOCK-1", "PICK,A"].before == pytest.approx(12.0)
    assert routes["DOCK-1", "PICK,A"].delta == pytest.approx(math.hypot(4.3, 4), abs=1e-9)
    # analytic: CHG <2> -> PICK,A along e5 + e3 + e6 both times; only e6 grew
    assert routes["CHG <2>", "PICK,A"].delta == pytest.approx(
        math.hypot(4.3, 4) - math.hypot(4, 4), abs=1e-9)
    pinches = [(p.element, p.id, p.reason) for p in changes.new_pinch_points]
    # n4 narrowed from 1.0 m to 0.65 m, still above the 0.6 m comfort: no pinch point
    assert pinches == [("edge", "e3", "below comfort")]
    assert changes.new_pinch_points[0].before == 1.0 and changes.new_pinch_points[0].clearance == 0.5


def test_planted_changes_are_reported_exactly():
    old, new = revisions()
    changes = compare_graphs(old, new, route_tolerance=0.05)
    check_planted(changes)
    assert changes.ids_changed == () and not changes.unchanged


def test_independent_ids_compare_by_position():
    old, new = revisions()
    renamed = nx.relabel_nodes(new, {n: f"x{n[1:]}" for n in new})
    changes = compare_graphs(old, renamed, route_tolerance=0.05)
    check_planted(changes, new_id=lambda n: f"x{n[1:]}")
    assert len(changes.ids_changed) == 7


def test_reachability_change_has_no_delta():
    old, new = revisions()
    new.remove_edge("n0", "n1", "e0")        # the dock is cut off
    changes = compare_graphs(old, new)
    lost = [r for r in changes.routes_changed if "DOCK-1" in (r.source, r.target)]
    assert {r.reachability for r in lost} == {"lost"} and len(lost) == 2
    assert all(math.isnan(r.delta) and math.isinf(r.after) for r in lost)
    data = json.loads(changes.to_json())
    record = next(r for r in data["routes_changed"] if r["source"] == "DOCK-1")
    assert record["after"] is None and record["delta"] is None and record["reachability"] == "lost"


def test_identical_graphs_are_unchanged():
    old, _ = revisions()
    changes = compare_graphs(old, old.copy())
    assert changes.unchanged and summarize_changes(changes).endswith("no changes\n")
    assert changes.lane_length_before == changes.lane_length_after


def test_json_is_plain_and_complete():
    old, new = revisions()
    data = json.loads(compare_graphs(old, new).to_json())
    assert data["nodes_moved"][0]["distance"] == pytest.approx(0.3)
    assert data["edges_removed"][0]["wkt"] == "LINESTRING (4 0, 8 0, 8 4)"
    # the graph states no required clearance: the default robot's comfort clearance,
    # radius 0.35 m + margin 0.10 m + 0.2 m (clearway.config)
    assert data["settings"]["comfort_clearance"] == pytest.approx(0.65, abs=1e-12)
    assert set(data) >= {"nodes_added", "nodes_removed", "edges_added", "edges_removed",
                         "lane_length_before", "lane_length_after", "routes_changed",
                         "new_pinch_points", "stations_added", "stations_removed"}


def test_small_moves_are_not_reported_and_bad_options_refused():
    old, _ = revisions()
    new = old.copy()
    new.nodes["n1"]["x"] += 0.005
    assert compare_graphs(old, new).nodes_moved == ()
    assert len(compare_graphs(old, new, move_tolerance=0.001).nodes_moved) == 1
    with pytest.raises(ValueError, match="comfort_clearance must be a number >= 0 m, got -1"):
        compare_graphs(old, new, comfort_clearance=-1)


def test_comfort_defaults_to_required_clearance_plus_allowance():
    old, new = revisions()
    new.graph["required_clearance"] = 0.45          # robot radius 0.35 m + margin 0.1 m
    changes = compare_graphs(old, new)
    # comfort 0.45 + 0.2 = 0.65 m: node n4 (0.65 m) is not below it, n6 (0.8 m) neither,
    # lanes e3 (0.5 m) is; e4 (0.55 m) was already below
    assert changes.settings["comfort_clearance"] == pytest.approx(0.65)
    new.nodes["n6"]["clearance"] = 0.62
    pinches = [(p.id, p.reason) for p in compare_graphs(old, new).new_pinch_points]
    assert ("n6", "below comfort") in pinches
    assert ("n6", "below comfort") not in [
        (p.id, p.reason) for p in compare_graphs(old, new, comfort_clearance=0.6).new_pinch_points]


def test_issue_15_no_pinch_point_above_comfort_and_narrowing_below_it():
    old, new = revisions()
    new.graph["required_clearance"] = 0.45        # comfort 0.45 + 0.2 = 0.65 m
    old.nodes["n2"]["clearance"], new.nodes["n2"]["clearance"] = 2.5, 2.08
    found = {p.id: p.reason for p in compare_graphs(old, new).new_pinch_points}
    assert "n2" not in found                      # 2.08 m against 0.65 m is no pinch point
    # already below comfort at 0.62 m but not the narrowest of its stretch (n4 had 0.58 m);
    # now 0.5 m, narrower than its neighbours n1, n4, n6 (1.2, 0.65, 0.8 m): a new narrowing
    old.nodes["n2"]["clearance"], new.nodes["n2"]["clearance"] = 0.62, 0.5
    old.nodes["n4"]["clearance"] = 0.58
    found = {p.id: p.reason for p in compare_graphs(old, new).new_pinch_points}
    assert found["n2"] == "new narrowing"


def test_issue_15_default_route_tolerance_scales_with_the_route():
    old, new = revisions()
    routes = {(r.source, r.target): r for r in compare_graphs(old, new).routes_changed}
    # analytic: CHG <2> - PICK,A changed by hypot(4.3, 4) - hypot(4, 4) = 0.216 m on a
    # 17.7 m route: under max(0.25 m, 1 %) = 0.25 m, so not listed; DOCK-1 - PICK,A changed
    # by 5.87 m and is
    assert list(routes) == [("DOCK-1", "PICK,A")]
    assert compare_graphs(old, new).settings["route_tolerance"] is None


def test_issue_15_summary_lists_the_largest_first_and_summarises_the_rest():
    old = grid_graph(8, 8, spacing=3.0)
    new = grid_graph(8, 8, spacing=3.0, jitter=lambda k: (0.02 * (k % 7), 0.0))
    for graph in (old, new):
        for index, node in enumerate(sorted(graph, key=lambda n: int(n[1:]))[:16]):
            graph.nodes[node]["label"] = f"S{index}"
    text = summarize_changes(compare_graphs(old, new, route_tolerance=0.01), limit=3)
    moved = [line for line in text.splitlines() if line.startswith("moved ")]
    distances = [float(line.split(" by ")[1].split()[0]) for line in moved]
    assert len(moved) == 3 and distances == sorted(distances, reverse=True)
    # analytic: jitter 0.02 x (k mod 7) m moves nodes by at most 0.12 m
    assert distances[0] == pytest.approx(0.12)
    assert any(line.startswith("... and ") and "more nodes moved by 0.020-0.120 m" in line
               for line in text.splitlines())


def test_issue_15_another_site_is_warned():
    old, _ = revisions()
    far = old.copy()
    for node in far:
        far.nodes[node]["x"] += 500.0
    changes = compare_graphs(old, far)
    # analytic: the extents do not overlap at all
    assert changes.warnings and "overlaps the other by 0%" in changes.warnings[0]
    assert summarize_changes(changes).startswith("warning: the two graphs look like different")
    # a small site drawn inside a big one's extent: told by the areas and the labels
    small = old.subgraph(["n1", "n2", "n3", "n4"]).copy()
    for node, label in (("n1", "X-1"), ("n2", "X-2")):
        small.nodes[node]["label"] = label
    for node in small:
        small.nodes[node]["x"] = 4 + (small.nodes[node]["x"] - 4) / 4
    (warning,) = compare_graphs(old, small).warnings
    # analytic: old nodes span 30 x 30 m (+ 1 m pad each side: 32 x 32 m), the small one
    # 2 x 8 m (4 x 10 m): 1024 / 40 = 25.6, and no label is shared
    assert "one extent is 26 times the other" in warning and "no station label" in warning
    assert compare_graphs(old, old.copy()).warnings == ()
