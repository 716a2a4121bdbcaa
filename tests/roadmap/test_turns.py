"""Turns at the nodes against closed forms for moving a rectangle round a corner."""

from __future__ import annotations

import math

import networkx as nx
import pytest
import shapely

from clearway.roadmap import Robot
from clearway.roadmap.clearance import clearance_field
from clearway.roadmap.inflate import boundary_segments
from clearway.roadmap.turns import check_turns, pair_text, parse_turns


def corner(a: float, b: float, reach: float = 12.0):
    """An L of two corridors: widths a (along x, 0 <= y <= a) and b (along y, 0 <= x <= b);
    the outer corner at the origin, the inner (reflex) corner at (b, a)."""
    return shapely.union_all([shapely.box(0, 0, reach, a), shapely.box(0, 0, b, reach)])


def star(centre, *ends):
    """A graph with node n0 at `centre` and one straight edge e<k> to each end point."""
    graph = nx.MultiGraph()
    graph.add_node("n0", x=centre[0], y=centre[1], kind="junction", label="")
    for k, end in enumerate(ends, start=1):
        graph.add_node(f"n{k}", x=end[0], y=end[1], kind="end", label="")
        graph.add_edge("n0", f"n{k}", key=f"e{k}", geometry=shapely.LineString([centre, end]))
    return graph


def turns_at(robot, floor, graph, node="n0"):
    check_turns(robot, clearance_field(boundary_segments(floor)[0]), graph, (0.0, 0.0))
    return parse_turns(graph.nodes[node]["turns"])


@pytest.mark.parametrize("a, b", [(2.0, 2.0), (2.0, 2.6)])
@pytest.mark.parametrize("step, allowed", [(-0.01, True), (0.01, False)])
def test_differential_robot_turns_round_in_a_corner_iff_its_swing_circle_fits(a, b, step,
                                                                              allowed):
    # analytic (derived here): the largest disc in the corner touches both outer walls and
    # the reflex corner: centre (r, r) with (b - r)^2 + (a - r)^2 = r^2, so
    # r = a + b - sqrt(2 a b) (the smaller root). Turning round (180 degrees) about the
    # rectangle's centre sweeps the whole circle of radius hypot(L/2, W/2), so a W = 0.6 m
    # robot turns round there iff hypot(L/2, 0.3) + margin <= r: L* = 2 sqrt((r - m)^2 - 0.09)
    r = a + b - math.sqrt(2 * a * b)
    length = 2 * math.sqrt((r - 0.1) ** 2 - 0.3 ** 2) + step
    robot = Robot.rectangle(length, 0.6, margin=0.1)
    graph = star((r, r), (r, 11.0), (11.0, r))
    found = turns_at(robot, corner(a, b), graph)
    assert (("e1", "e1") in found) is allowed and (("e2", "e2") in found) is allowed


@pytest.mark.parametrize("step, allowed", [(-0.01, True), (0.01, False)])
def test_car_takes_a_corner_iff_the_arc_clears_the_inner_corner(step, allowed):
    # analytic (derived here, swept-path reasoning from memory): a car whose rotation centre
    # is its rear axle at the rear edge drives straight along the centre line y = a/2, one
    # arc of radius R tangent to both centre lines (centre C = (a/2 + R, a/2 + R)), and on
    # along x = a/2. The body's inner side passes C at R - W/2, so the reflex corner
    # I = (a, a), sqrt(2) (R - a/2) from C, must lie inside that by the margin:
    #     W <= 2 (R - m - sqrt(2) (R - a/2));
    # the front outer corner reaches R_out = hypot(R + W/2, L) from C, up to the wall
    # x = 0 at a/2 + R:  W <= 2 (sqrt((a/2 + R - m)^2 - L^2) - R);  and W <= a - 2 m.
    # With a = 2, R = 2.5, L = 1, m = 0.1 the inner corner binds: W* = 0.5574 m; paths
    # cutting the corner (Dubins) pass it closer still.
    a, radius, length, margin = 2.0, 2.5, 1.0, 0.1
    bounds = (2 * (radius - margin - math.sqrt(2) * (radius - a / 2)),
              2 * (math.sqrt((a / 2 + radius - margin) ** 2 - length ** 2) - radius),
              a - 2 * margin)
    width = min(bounds) + step
    assert min(bounds) == bounds[0]
    robot = Robot.rectangle(length, width, margin=margin, kind="car",
                            centre=(-length / 2, 0.0), turn_radius=radius, reverse=False)
    graph = star((a / 2, a / 2), (11.5, a / 2), (a / 2, 11.5))
    assert (("e1", "e2") in turns_at(robot, corner(a, a), graph)) is allowed


def test_straight_through_and_wide_junction_allow_every_turn():
    # analytic: at the centre of a 6 m square hall the clearance 3 m exceeds the swing
    # radius hypot(0.7, 0.4) + 0.1 = 0.906 m: every pair is allowed, turning round too
    floor = shapely.box(-3, -3, 3, 3)
    graph = star((0.0, 0.0), (2.5, 0.0), (0.0, 2.5), (-2.5, 0.0))
    found = turns_at(Robot.rectangle(1.4, 0.8, margin=0.1), floor, graph)
    assert {(a, b) for a in ("e1", "e2", "e3") for b in ("e1", "e2", "e3")} == found
    assert graph.nodes["n0"]["turns"] == "e1:e1 e1:e2 e1:e3 e2:e2 e2:e3 e3:e3"


def test_turns_text_round_trips_and_refuses_garbage():
    pairs = {("e10", "e2"), ("e2", "e2")}
    text = pair_text(pairs)
    assert text == "e2:e2 e2:e10"                             # natural order, each pair once
    assert parse_turns(text) == pairs | {("e2", "e10")}
    assert pair_text(set()) == "-" and parse_turns("-") == set()   # never an empty value
    with pytest.raises(ValueError, match="EDGE:EDGE"):
        parse_turns("e1-e2")

