"""Stations joining the lanes, and the findings: passages, pinch points, personnel flags."""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from roadmap_builders import assert_lanes_clear, build, corridor, plan


def test_station_links_straight_to_nearest_lane_point():
    obstacles, free = corridor(3.0)
    roadmap = build(obstacles, free, [("dock", 4.0, 0.6)])
    result, = roadmap.findings.stations
    assert result.reachable and result.reason == ""
    graph = roadmap.graph
    station = graph.nodes[result.node]
    assert (station["kind"], station["label"]) == ("station", "dock")
    (link,) = graph[result.node]
    # analytic: the nearest lane point is the foot of the perpendicular on y = 1.5
    assert (graph.nodes[link]["x"], graph.nodes[link]["y"]) == pytest.approx((4.0, 1.5))
    assert graph.nodes[link]["kind"] == "link" and graph.degree(link) == 3
    assert_lanes_clear(roadmap)


def test_station_on_a_lane_splits_it():
    obstacles, free = corridor(3.0)
    roadmap = build(obstacles, free, [("mid", 5.0, 1.5 + 0.0004)])
    result, = roadmap.findings.stations
    assert roadmap.graph.degree(result.node) == 2
    assert roadmap.graph.nodes[result.node]["kind"] == "station"


def test_station_beside_a_lane_end_joins_the_existing_node():
    # analytic: the 8 x 4 room's lane is y = 2 for 2 <= x <= 6; from (1, 2) the nearest
    # lane point is its end node (2, 2), which the station joins without a new link node
    obstacles, free = plan((0.0, 0.0, 8.0, 4.0))
    roadmap = build(obstacles, free, [("west", 1.0, 2.0)])
    result, = roadmap.findings.stations
    (target,) = roadmap.graph[result.node]
    node = roadmap.graph.nodes[target]
    assert (node["x"], node["y"]) == pytest.approx((2.0, 2.0), abs=1e-3)
    assert node["kind"] == "waypoint" and roadmap.graph.number_of_nodes() == 3


def test_station_reasons():
    hall = (0.0, 0.0, 20.0, 6.0)
    # a closed pocket (walled off) too small for any lane, and a station by a wall
    pocket = shapely.box(14, 0, 14.2, 6)
    obstacles, free = plan(hall, pocket, shapely.box(14.2, 0.1, 20, 6))
    roadmap = build(obstacles, free, [("by wall", 5.0, 0.2), ("ok", 5.0, 3.0),
                                      ("in the pocket wall", 14.1, 3.0), ("outside", 30.0, 3.0)])
    by_label = {r.label: r for r in roadmap.findings.stations}
    assert by_label["by wall"].reason == "inside an obstacle's clearance band"
    # analytic: (14.1, 3) lies inside the 0.2 m wall x 14..14.2, and (30, 3) beyond the hall
    for label in ("in the pocket wall", "outside"):
        assert by_label[label].reason.startswith("not on the free floor")
    assert by_label["by wall"].node is None and not by_label["by wall"].reachable
    assert by_label["ok"].reachable
    assert ("by wall", "ok") in roadmap.findings.unreachable_pairs


def test_block_station_in_the_band_stands_clear_ahead_of_it():
    # a 20 m x 6 m hall; c = 0.35 + 0.1 = 0.45 m. Chargers drawn as blocks against the
    # south wall (y = 0): the robot stands where it keeps c, the docking move is its own
    hall = (0.0, 0.0, 20.0, 6.0)
    obstacles, free = plan(hall)
    stations = [("facing in", 4.0, 0.1, "charger", 90.0),      # heading +Y, into the hall
                ("at 45 deg", 8.0, 0.0, "charger", 45.0),
                ("facing the wall", 12.0, 0.2, "charger", 270.0),
                ("in the wall", 16.0, -0.1, "charger", 90.0),  # inserted inside the wall
                ("point", 18.0, 0.2)]                          # a point is the pose itself
    roadmap = build(obstacles, free, stations)
    by_label = {r.label: r for r in roadmap.findings.stations}
    graph = roadmap.graph

    def node_xy(label):
        node = graph.nodes[by_label[label].node]
        return node["x"], node["y"]

    # analytic: along +Y the clearance is y, so the robot stands at y = c
    assert node_xy("facing in") == pytest.approx((4.0, 0.45), abs=2e-4)
    assert by_label["facing in"].standoff == pytest.approx(0.35, abs=2e-4)
    # analytic: along 45 deg from (8, 0) the clearance is t / sqrt(2): t = c sqrt(2)
    assert by_label["at 45 deg"].standoff == pytest.approx(0.45 * 2 ** 0.5, abs=2e-4)
    assert node_xy("at 45 deg") == pytest.approx((8.45, 0.45), abs=2e-4)
    # analytic: facing the wall leads nowhere clear; the nearest clear point is straight
    # out from the wall, 0.45 - 0.2 = 0.25 m away
    assert node_xy("facing the wall") == pytest.approx((12.0, 0.45), abs=2e-4)
    assert by_label["facing the wall"].standoff == pytest.approx(0.25, abs=2e-4)
    # analytic: from 0.1 m inside the wall face to y = c: 0.55 m
    assert node_xy("in the wall") == pytest.approx((16.0, 0.45), abs=2e-4)
    for label in ("facing in", "at 45 deg", "facing the wall", "in the wall"):
        assert by_label[label].reachable, label
        assert (by_label[label].x, by_label[label].y) == (stations[
            [s[0] for s in stations].index(label)][1:3])   # the drawn point is kept
    assert by_label["point"].reason == "inside an obstacle's clearance band"
    assert by_label["point"].standoff == 0.0
    assert_lanes_clear(roadmap)


def test_block_station_deep_in_an_obstacle_or_boxed_in_stays_unreachable():
    # a rack 2 m deep; a block drawn in its middle is 1 m inside: more than the mounting
    # depth, so no standing point is invented for it
    rack = shapely.box(5.0, 2.0, 15.0, 4.0)
    obstacles, free = plan((0.0, 0.0, 20.0, 6.0), rack)
    roadmap = build(obstacles, free, [("in the rack", 10.0, 3.0, "pick", 90.0),
                                      ("at the rack face", 10.0, 4.0, "pick", 90.0)])
    by_label = {r.label: r for r in roadmap.findings.stations}
    assert by_label["in the rack"].reason.startswith("not on the free floor")
    # analytic: the face is y = 4 and the hall's wall y = 6: the standing point is y = 4.45
    node = roadmap.graph.nodes[by_label["at the rack face"].node]
    assert (node["x"], node["y"]) == pytest.approx((10.0, 4.45), abs=2e-4)


def test_narrow_doorway_is_reported_with_its_width():
    # two rooms joined by a doorway 0.6 m wide in a 0.2 m wall; the robot needs 2c = 0.9 m
    wall = shapely.box(9.9, 0, 10.1, 6).difference(shapely.box(9.9, 2.7, 10.1, 3.3))
    obstacles, free = plan((0.0, 0.0, 20.0, 6.0), wall)
    roadmap = build(obstacles, free, [("left", 3.0, 3.0), ("right", 17.0, 3.0)])
    passage, = roadmap.findings.narrow_passages
    # analytic: the doorway's clear width is 0.6 m, centred at (10, 3)
    assert passage.width == pytest.approx(0.6, abs=0.01)
    assert (passage.x, passage.y) == pytest.approx((10.0, 3.0), abs=0.11)
    findings = roadmap.findings
    assert len(findings.components) == 2
    unreachable = [r for r in findings.stations if not r.reachable]
    assert len(unreachable) == 1 and "0.60 m wide" in unreachable[0].reason
    assert passage.blocks == (unreachable[0].label,)


def test_pinch_point_at_a_column_and_penalty():
    # a 3 m aisle with a 0.4 m column standing 0.5 m off one wall's face
    column = shapely.box(5.0, 2.1, 5.4, 2.5)
    obstacles, free = plan((0.0, 0.0, 10.0, 3.0), column)
    roadmap = build(obstacles, free, comfort_clearance=1.2, low_clearance_penalty=0.5)
    pinch, = roadmap.findings.pinch_points
    # analytic: beside the column the lane runs midway between y = 0 and y = 2.1, clearance
    # 1.05 m (below comfort 1.2 m); elsewhere it is 1.5 m
    assert pinch.clearance == pytest.approx(1.05, abs=0.01)
    assert 4.9 <= pinch.x <= 5.5
    for pinch in [pinch]:
        point = shapely.Point(pinch.x, pinch.y)
        assert shapely.distance(point, free.boundary) == pytest.approx(pinch.clearance,
                                                                       abs=0.01)
    for _, _, data in roadmap.graph.edges(data=True):
        factor = 1.5 if data["clearance_min"] < 1.2 else 1.0
        assert data["weight"] == pytest.approx(data["length"] * factor)


def test_personnel_flags_in_shared_zone():
    obstacles, free = corridor(2.0)           # lane clearance 1.0 m
    zone = shapely.box(2, 0, 4, 2)
    # analytic: side clearance = lane clearance 1.0 - half width 0.35 = 0.65 m
    # from memory: ISO 3691-4 asks for a 0.5 m clear zone beside the truck -> no flag
    assert build(obstacles, free, shared_zones=zone).findings.personnel == ()
    roadmap = build(obstacles, free, shared_zones=zone, personnel_clearance=0.7)
    flag, = roadmap.findings.personnel
    assert flag.side_clearance == pytest.approx(0.65, abs=0.01)
    assert flag.required == 0.7
    assert 2 - 1e-6 <= flag.x <= 4 + 1e-6


def test_progress_stages_and_bad_options():
    obstacles, free = corridor(2.0)
    stages = []
    build(obstacles, free, progress=stages.append)
    assert stages == ["inflating", "voronoi", "rooms", "graph", "stations", "checks"]
    with pytest.raises(ValueError, match="sample_step"):
        build(obstacles, free, sample_step=0)
    # issue 16: the value is quoted as given (it was reported plus one) and 0 is allowed
    with pytest.raises(ValueError, match=r"^personnel_clearance must be >= 0, got -2$"):
        build(obstacles, free, personnel_clearance=-2)
    with pytest.raises(ValueError, match=r"^low_clearance_penalty must be >= 0, got -0.5$"):
        build(obstacles, free, low_clearance_penalty=-0.5)
    assert build(obstacles, free, personnel_clearance=0).findings.personnel_clearance == 0
    with pytest.raises(TypeError, match="robot"):
        from clearway.roadmap import build_roadmap
        build_roadmap(obstacles, free, [], robot=0.4)


def test_station_equidistant_from_two_lanes_joins_the_lower_point():
    # analytic: in a plus of two 2 m corridors crossing at (5, 5) the lanes are x = 5 and
    # y = 5; the station (5.3, 5.3) is 0.3 m from both, at (5.0, 5.3) and (5.3, 5.0).
    # The tie goes to the lower (x, y), which also gets the lower node id.
    hall = shapely.box(0, 4, 10, 6) | shapely.box(4, 0, 6, 10)
    outline = hall.buffer(0.2, join_style="mitre").difference(hall)
    obstacles = {"boundary": outline}
    for _ in range(2):   # deterministic: the same answer every time
        roadmap = build(obstacles, hall, [("tie", 5.3, 5.3)])
        result, = roadmap.findings.stations
        graph = roadmap.graph
        (link,) = graph[result.node]
        assert (graph.nodes[link]["x"], graph.nodes[link]["y"]) == pytest.approx((5.0, 5.3),
                                                                                abs=1e-3)
        (key,) = graph[result.node][link]
        assert graph.edges[result.node, link, key]["length"] == pytest.approx(0.3, abs=1e-3)
        assert_lanes_clear(roadmap)


def test_station_equidistant_from_a_node_and_a_lane_joins_the_node():
    from clearway.roadmap.clearance import clearance_field
    from clearway.roadmap.inflate import boundary_segments
    from clearway.roadmap.stations import Attachment, link_stations
    # analytic: lane A starts at (6, 0); lane B is x = 4; the station (5, 0) is 1 m from
    # both the end node (6, 0) and the point (4, 0) of lane B. The existing node wins
    # although (4, 0) is the lower point; then the lower (x, y) among equals.
    free = shapely.box(-10, -10, 20, 10)
    lanes = np.array([shapely.LineString([(4, -3), (4, 3)]),
                      shapely.LineString([(6, 0), (10, 0)])], dtype=object)
    field = clearance_field(boundary_segments(free)[0])
    regions = np.array([free.buffer(-0.45)], dtype=object)
    join, = link_stations(np.array([[5.0, 0.0]]), lanes, np.array([0, 0]), regions, field,
                          free, 0.45)
    assert isinstance(join, Attachment)
    assert (join.lane, join.x, join.y) == (1, pytest.approx(6.0), pytest.approx(0.0))
    assert join.along == pytest.approx(0.0) and not join.on_lane
    # two interior points 1 m away, (5, 1) on y = 1 and (5, -1) on y = -1: the lower wins
    lanes = np.array([shapely.LineString([(0, 1), (10, 1)]),
                      shapely.LineString([(0, -1), (10, -1)])], dtype=object)
    join, = link_stations(np.array([[5.0, 0.0]]), lanes, np.array([0, 0]), regions, field,
                          free, 0.45)
    assert (join.lane, join.x, join.y) == (1, pytest.approx(5.0), pytest.approx(-1.0))


def test_link_that_would_land_next_to_a_node_joins_the_node():
    from clearway.roadmap.clearance import clearance_field
    from clearway.roadmap.inflate import boundary_segments
    from clearway.roadmap.stations import link_stations
    # analytic: the nearest point of lane B = (6, 0)-(10, 0) to the station (6.05, 2) is
    # (6.05, 0), 5 cm from B's end node (6, 0); the link to the node is sqrt(0.05^2 + 2^2)
    # = 2.0006 m long and clear, so it meets the node and leaves no 5 cm lane stub
    free = shapely.box(-10, -10, 20, 10)
    lanes = np.array([shapely.LineString([(6, 0), (6, -5)]),
                      shapely.LineString([(6, 0), (10, 0)])], dtype=object)
    field = clearance_field(boundary_segments(free)[0])
    regions = np.array([free.buffer(-0.45)], dtype=object)
    join, = link_stations(np.array([[6.05, 2.0]]), lanes, np.array([0, 0]), regions, field,
                          free, 0.45)
    assert (join.x, join.y) == (pytest.approx(6.0), pytest.approx(0.0))
    # 0.3 m from the node is beyond the snap distance: the nearest lane point stands
    join, = link_stations(np.array([[6.3, 2.0]]), lanes, np.array([0, 0]), regions, field,
                          free, 0.45)
    assert (join.lane, join.x, join.y) == (1, pytest.approx(6.3), pytest.approx(0.0))
    # a station standing on the lane splits it where it stands, however near the node
    join, = link_stations(np.array([[6.05, 0.0]]), lanes, np.array([0, 0]), regions, field,
                          free, 0.45)
    assert join.on_lane and (join.x, join.y) == (pytest.approx(6.05), pytest.approx(0.0))


def test_links_found_do_not_depend_on_how_the_candidates_are_batched(monkeypatch):
    from clearway.roadmap import stations
    from clearway.roadmap.clearance import clearance_field
    from clearway.roadmap.inflate import boundary_segments
    # a column stands between the first station and the lane point straight ahead of it
    # (10, 5), so the first candidates are blocked and later batches find its link; the
    # second station is 1.5 m from two lanes (a tie across the first batch's end)
    free = shapely.box(0, 0, 20, 10).difference(shapely.box(9.5, 2.5, 10.5, 3.5))
    lanes = np.array([shapely.LineString([(1, 5), (19, 5)]),
                      shapely.LineString([(1, 8), (19, 8)])], dtype=object)
    field = clearance_field(boundary_segments(free)[0])
    regions = np.array([free.buffer(-0.45)], dtype=object)
    where = np.array([[10.0, 1.5], [4.0, 6.5]])

    def joins():
        return stations.link_stations(where, lanes, np.array([0, 0]), regions, field, free, 0.45)

    batched = joins()
    # the schedule before batches grew: 32 candidates at a time from the first
    monkeypatch.setattr(stations, "_batches",
                        lambda count: ((start, min(start + 32, count))
                                       for start in range(0, count, 32)))
    assert joins() == batched
    blocked, tied = batched
    # analytic: the straight link from (10, 1.5) to (10, 5) crosses the column
    assert isinstance(blocked, stations.Attachment) and blocked.x != pytest.approx(10.0)
    # analytic: (4, 5) and (4, 8) are both 1.5 m away; the lower point wins
    assert (tied.lane, tied.x, tied.y) == (0, pytest.approx(4.0), pytest.approx(5.0))
