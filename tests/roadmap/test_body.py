"""A rectangular body on the lanes: side clearance, swept hulls, trimmed dead ends."""

from __future__ import annotations

import math
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
import shapely

from clearway.roadmap import Robot, build_roadmap
from clearway.roadmap.body import MAX_STEP_ANGLE, core, gaps, hulls, moves, place

MOVER = Robot.rectangle(1.4, 0.8, margin=0.1)   # the pallet mover of issue 14


def aisle_between_rooms(width=1.3, length=20.0):
    """Two 6 m x 6 m rooms joined by a straight aisle `width` m wide along y = 3."""
    floor = shapely.union_all([shapely.box(0, 0, 6, 6),
                               shapely.box(6, 3 - width / 2, 6 + length, 3 + width / 2),
                               shapely.box(6 + length, 0, 12 + length, 6)])
    return floor, [("A", 3.0, 3.0), ("B", 9.0 + length, 3.0)]


def test_narrow_aisle_passable_heading_along_it_but_not_as_a_disc():
    # analytic: a 1.3 m aisle leaves (1.3 - 0.8) / 2 = 0.25 m beside a 0.8 m wide body,
    # 0.15 m more than the 0.10 m margin; its circumscribed disc needs
    # 2 * (hypot(1.4, 0.8) / 2 + 0.1) = 1.81 m of width.
    floor, stations = aisle_between_rooms()
    rect = build_roadmap({}, floor, stations, robot=MOVER)
    assert [s.reachable for s in rect.findings.stations] == [True, True]
    assert not rect.findings.body
    body = [d["clearance_body"] for *_, d in rect.graph.edges(data=True)]
    assert min(body) == pytest.approx(0.25, abs=1e-9)
    disc = build_roadmap({}, floor, stations, robot=Robot.disc(MOVER.radius, margin=0.1))
    assert [s.reachable for s in disc.findings.stations] == [True, False]
    assert [round(p.width, 3) for p in disc.findings.narrow_passages] == [1.3]


def test_aisle_narrower_than_body_plus_margins_is_closed():
    # analytic: a 0.99 m aisle has 0.095 m beside a 0.8 m body, under the 0.1 m margin
    floor, stations = aisle_between_rooms(width=0.99)
    rect = build_roadmap({}, floor, stations, robot=MOVER)
    assert [s.reachable for s in rect.findings.stations] == [True, False]


def test_straight_move_hull_is_the_minkowski_sum():
    # analytic: a w x l rectangle moved d along its length sweeps l * w + w * d; moved d
    # sideways it sweeps l * w + l * d (a convex body translated: hull of both ends)
    robot = Robot.rectangle(1.4, 0.8, margin=0.0)
    ahead = hulls(robot, [0, 0], [0.0], [3, 0], [0.0])[0]
    sideways = hulls(robot, [0, 0], [0.0], [0, 3], [0.0])[0]
    assert ahead.area == pytest.approx(1.4 * 0.8 + 0.8 * 3, rel=1e-12)
    assert sideways.area == pytest.approx(1.4 * 0.8 + 1.4 * 3, rel=1e-12)


def test_turn_steps_cover_the_corners_arcs_within_the_stated_sagitta():
    # analytic: a point at radius r turned by at most MAX_STEP_ANGLE between hull ends
    # leaves its chord by at most the sagitta r * (1 - cos(step / 2))
    robot = Robot.rectangle(1.4, 0.8, margin=0.0, centre=(-0.5, 0.1))
    path = moves([np.array([[0.0, 0.0], [1.0, 0.0], [1.0, 1.0]])])
    swept = shapely.union_all(hulls(robot, path.a_xy, path.a_heading, path.b_xy,
                                    path.b_heading))
    angles = np.linspace(0, math.pi / 2, 2001)
    corners = place(core(robot)[0], np.repeat([[1.0, 0.0]], len(angles), 0), angles)
    sagitta = robot.swing * (1 - math.cos(MAX_STEP_ANGLE / 2))
    assert shapely.distance(swept, shapely.points(corners.reshape(-1, 2))).max() <= \
        sagitta + 1e-12
    assert sagitta < 0.35e-3 * robot.swing                     # as the module states


def test_dead_end_aisle_cut_back_where_the_front_meets_the_margin():
    # analytic: heading into a 1.3 m dead end that stops at x = 16, the body's front
    # (0.7 m ahead of its centre) must keep 0.1 m from the end wall: centre at x <= 15.2
    floor = shapely.union_all([shapely.box(0, 0, 6, 6), shapely.box(6, 2.35, 16, 3.65)])
    roadmap = build_roadmap({}, floor, [("A", 3.0, 3.0)], robot=MOVER)
    ends = [n for n, d in roadmap.graph.nodes(data=True) if d["kind"] == "end"]
    far = max(roadmap.graph.nodes[n]["x"] for n in ends)
    assert far == pytest.approx(16 - 0.7 - 0.1, abs=1e-4)
    assert not [s for s in roadmap.findings.body if s.what == "lane"]   # cut, not dropped
    # analytic: turning round needs hypot(0.7, 0.4) + 0.1 = 0.906 m clear radius, the
    # aisle gives 0.65 m: the robot backs out of it
    dead_end = max(ends, key=lambda n: roadmap.graph.nodes[n]["x"])
    assert roadmap.graph.nodes[dead_end]["reverse_only"] is True
    assert roadmap.graph.nodes[dead_end]["turns"] == "-"
    (turn,) = [s for s in roadmap.findings.body if s.node == dead_end]
    assert turn.what == "turn round" and turn.needs == pytest.approx(0.906, abs=5e-4)
    assert turn.has == pytest.approx(0.65, abs=1e-6)


def test_station_too_close_to_a_wall_for_the_body_is_unreachable_with_the_shortfall():
    # analytic: a station 0.6 m from the end wall of a 3 m wide room, on its centre line:
    # the body heading at the wall reaches 0.7 m ahead, 0.1 m into the wall
    floor = shapely.box(0, 0, 10, 3)
    roadmap = build_roadmap({}, floor, [("A", 2.0, 1.5), ("B", 9.4, 1.5)], robot=MOVER)
    result = {s.label: s for s in roadmap.findings.stations}
    assert result["A"].reachable and not result["B"].reachable
    assert "needs 0.10 m beside it, has 0.00 m" in result["B"].reason
    assert not nx.has_path(roadmap.graph, result["A"].node, result["B"].node)


def test_disc_robot_graph_carries_no_body_attributes():
    floor, stations = aisle_between_rooms(width=2.0)
    roadmap = build_roadmap({}, floor, stations, robot=Robot.disc(0.4, margin=0.1))
    assert all("clearance_body" not in d for *_, d in roadmap.graph.edges(data=True))
    assert roadmap.findings.body == ()


@pytest.mark.parametrize("kwargs, message", [
    ({"kind": "car"}, "turn radius"),
    ({"kind": "omni", "turn_radius": 2.0}, "for a car"),
    ({"kind": "tank"}, "kind must be one of"),
    ({"centre": (0.8, 0.0)}, "outside the"),
])
def test_robot_refuses_inconsistent_settings(kwargs, message):
    with pytest.raises(ValueError, match=message):
        Robot.rectangle(1.4, 0.8, margin=0.1, **kwargs)


def test_lane_clearance_of_a_rectangle_is_half_width_plus_offset_plus_margin():
    # analytic: heading along the lane only the width counts, plus a sideways offset of
    # the rotation centre; the swing radius about it reaches the farthest corner
    robot = Robot.rectangle(1.4, 0.8, margin=0.1, centre=(-0.5, 0.05))
    assert robot.clearance == pytest.approx(0.4 + 0.05 + 0.1, rel=1e-15)
    assert robot.swing == pytest.approx(math.hypot(0.7 + 0.5, 0.4 + 0.05), rel=1e-15)


def every_move_measured(robot, field, a_xy, a_heading, b_xy, b_heading, *, band=None,
                        alone=None, owner=None):
    """body.move_gaps without its shortcuts: every turn step's hull and every end
    footprint measured by shapely (a straight move is still its end footprints and the
    band between them, as body.py defines it)."""
    a_xy, b_xy = (np.asarray(v, float).reshape(-1, 2) for v in (a_xy, b_xy))
    a_heading, b_heading = (np.asarray(v, float).ravel() for v in (a_heading, b_heading))
    points, grow = core(robot)
    half = np.abs(points[:, 1]).max()
    gap = gaps(field, hulls(robot, a_xy, a_heading, b_xy, b_heading))
    line = np.flatnonzero((a_heading == b_heading) & np.any(a_xy != b_xy, axis=1))
    ends = np.stack([gaps(field, hulls(robot, xy[line], heading[line], xy[line],
                                       heading[line]))
                     for xy, heading in ((a_xy, a_heading), (b_xy, b_heading))], axis=1)
    if alone is not None:
        ends = np.where(np.asarray(alone, bool)[line], ends, np.inf)
    side = gaps(field, shapely.linestrings(np.stack([a_xy[line], b_xy[line]], axis=1))) \
        if band is None else np.broadcast_to(np.asarray(band, float), a_xy.shape[:1])[line]
    gap[line] = np.minimum(ends.min(axis=1), side - half)
    return gap - (grow - robot.margin)


@pytest.mark.parametrize("robot", [MOVER, Robot.rectangle(1.6, 1.2, margin=0.1,
                                                          centre=(-0.5, 0.0)),
                                   Robot.rectangle(1.4, 0.8, margin=0.1, kind="car",
                                                   centre=(-0.5, 0.0), turn_radius=1.5)])
@pytest.mark.parametrize("drawing", ["distribution_centre.dxf", "dock_columns"])
def test_lanes_bounded_from_the_footprint_centre_agree_with_measuring_every_move(
        drawing, robot, tmp_path, monkeypatch):
    # analytic: a footprint lies within its half diagonal of its centre, and the hull of
    # two footprints within half the largest corner displacement of one of them, so the
    # moves body.move_gaps leaves unmeasured cannot be a lane's smallest gap nor fall
    # short of the margin: the graph, every clearance_body and every shortfall stay those
    # of measuring every move
    from benchmarks.synthetic import write_style
    from clearway.converter import read_floorplan
    from clearway.roadmap import body

    samples = Path(__file__).resolve().parents[2] / "sample_drawings"
    plan = read_floorplan(str(samples / drawing)) if drawing.endswith(".dxf") else \
        read_floorplan(write_style(tmp_path / f"{drawing}.dxf", drawing, 160))

    def answers():
        roadmap = build_roadmap(plan.obstacles, plan.free_space,
                                [(s.label, s.x, s.y) for s in plan.stations], robot=robot,
                                shared_zones=plan.regions["shared"])
        edges = sorted((key, data["clearance_body"]) for *_, key, data in
                       roadmap.graph.edges(keys=True, data=True))
        return edges, sorted(roadmap.findings.body, key=repr)

    fast = answers()
    monkeypatch.setattr(body, "move_gaps", every_move_measured)
    assert fast == answers()
    assert fast[0]                       # lanes the body drives
