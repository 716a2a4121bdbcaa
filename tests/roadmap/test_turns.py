"""Turns at the nodes against closed forms for moving a rectangle round a corner."""

from __future__ import annotations

import math

import networkx as nx
import numpy as np
import pytest
import shapely

from clearway.roadmap import Robot, build_roadmap
from clearway.roadmap.clearance import clearance_field
from clearway.roadmap.inflate import boundary_segments
from clearway.roadmap.routing import shortest_route
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



# --- round a right-angle corner on a built roadmap ---------------------------------------
# The tool checks the manoeuvres it tries, so its largest robot is compared with two
# closed forms: the one of the manoeuvre it searches (it must agree within a stated
# tolerance) and the bound no motion at all can beat (it must stay below it).

def fits_round_corner(robot: Robot, a: float, b: float) -> bool:
    """Whether a route from the far end of one corridor to the other exists, respecting
    the allowed turns, on the roadmap built for `robot`."""
    roadmap = build_roadmap({}, corner(a, b), [("E", 10.0, a / 2), ("N", b / 2, 10.0)],
                            robot=robot)
    ends = [s.node for s in roadmap.findings.stations]
    if None in ends:
        return False
    try:
        shortest_route(roadmap.graph, *ends)
    except nx.NetworkXNoPath:
        return False
    return True


def largest(fits, low: float, high: float, steps: int = 10) -> float:
    """Bisection for the largest size that `fits` (fits(low) must hold, fits(high) not)."""
    assert fits(low) and not fits(high)
    for _ in range(steps):
        middle = (low + high) / 2
        low, high = (middle, high) if fits(middle) else (low, middle)
    return low


def free_motion_length(width: float, a: float, b: float) -> float:
    """The longest rectangle of `width` that any rigid motion carries round the corner.

    from memory (the classic calculus exercise of carrying a table round a corner, the
    ladder problem when width = 0): with its outer long side at angle t to the corridor of
    width a, pressed against the inner corner (b, a), the outer side's line
    x sin t + y cos t = b sin t + a cos t - width meets the outer walls x = 0 and y = 0
    a length (b sin t + a cos t - width) / (sin t cos t) apart; the rectangle passes iff
    it is no longer than the smallest of these over 0 < t < pi/2.
    """
    t = np.linspace(1e-4, math.pi / 2 - 1e-4, 200001)
    return float(((b * np.sin(t) + a * np.cos(t) - width) / (np.sin(t) * np.cos(t))).min())


@pytest.mark.parametrize("a, b", [(2.0, 2.0), (2.0, 2.6)])
def test_differential_robot_round_a_corner_between_swing_circle_and_free_motion(a, b):
    # analytic (derived here): the lanes of the two corridors meet at the centre of the
    # largest disc in the corner, touching both outer walls and the inner corner (b, a):
    # centre (r, r) with (b - r)^2 + (a - r)^2 = r^2, so r = a + b - sqrt(2 a b). A robot
    # turning in place there about its centre sweeps at most the circle of its half
    # diagonal, so it surely turns where hypot(L/2, W/2) + m <= r:
    #     L_circle = 2 sqrt((r - m)^2 - (W/2)^2)     (sufficient for the tool's manoeuvre)
    # and no motion carries the body grown by m (it holds the rectangle (L + 2 m) x W)
    # round where L + 2 m exceeds free_motion_length(W): L_free (necessary for any robot).
    # The tool checks the swept footprint exactly (to 0.3 mm per metre of swing), turning
    # at the lane's vertices where the lane bends into the corner: it may allow a little
    # more than L_circle (the 90 degree sweep need not cover the whole circle), never less
    # than L_circle - 2 mm (bisection 1 mm + sweep sagitta), never more than L_free. It is
    # conservative against L_free by about half, which is the price of turning in place
    # only: a differential robot that drives into the corner while turning, or shuffles
    # back and forth, could take a longer body round; the tool does not search for that.
    width, margin = 0.6, 0.1
    r = a + b - math.sqrt(2 * a * b)
    circle = 2 * math.sqrt((r - margin) ** 2 - (width / 2) ** 2)
    free = free_motion_length(width, a, b) - 2 * margin
    found = largest(lambda length: fits_round_corner(
        Robot.rectangle(length, width, margin=margin), a, b), circle - 0.2, circle + 0.8)
    assert circle - 0.002 <= found <= circle + 0.01 < free
    assert found < 0.6 * free            # half of what free motion allows, as said above


@pytest.mark.parametrize("a, b", [(2.0, 2.0), (2.0, 2.6), (2.6, 2.0)])
def test_car_round_a_corner_agrees_with_the_arc_between_the_centre_lines(a, b):
    # analytic (derived here, swept-path reasoning from memory): a car without reversing
    # whose rotation centre is its rear axle at the rear edge drives down the centre line
    # x = b/2, along one arc of radius R tangent to both centre lines (centre
    # C = (b/2 + R, a/2 + R)) and on along y = a/2. Its inner side passes C at R - W/2, so
    # the inner corner I = (b, a), hypot(R - b/2, R - a/2) from C, must lie inside that by
    # the margin:   W <= 2 (R - m - hypot(R - a/2, R - b/2));
    # its front outer corner swings hypot(R + W/2, L) from C towards the far wall y = 0,
    # a/2 + R from C:   W <= 2 (sqrt((a/2 + R - m)^2 - L^2) - R);   and the corridors
    # themselves: W <= a - 2 m, W <= b - 2 m. With R = 2.5 m, L = 1 m, m = 0.1 m the inner
    # corner binds. The tool searches this arc (and the shortest Dubins path) between
    # poses on the lanes 1, 2 and 3 R from the corner; the lanes are polylines simplified
    # to SIMPLIFY (5 mm), which moves the arc's centre by up to 5 sqrt(2) mm and so the
    # largest W by up to 2 x 7 mm: the tool agrees with W* within 0.015 m. It does not
    # search every forward path: a car swinging wide (in along the outer wall, out along
    # the other) may take a wider body round than W*; the tool then says no.
    radius, length, margin = 2.5, 1.0, 0.1
    bounds = (2 * (radius - margin - math.hypot(radius - a / 2, radius - b / 2)),
              2 * (math.sqrt((a / 2 + radius - margin) ** 2 - length ** 2) - radius),
              a - 2 * margin, b - 2 * margin)
    widest = min(bounds)
    assert widest == bounds[0]

    def fits(width):
        return fits_round_corner(Robot.rectangle(length, width, margin=margin, kind="car",
                                                 centre=(-length / 2, 0.0),
                                                 turn_radius=radius, reverse=False), a, b)

    found = largest(fits, widest - 0.1, widest + 0.1)
    assert abs(found - widest) <= 0.015


@pytest.mark.parametrize("reverse", [True, False])
def test_car_that_may_reverse_turns_round_where_a_forward_u_turn_does_not_fit(reverse):
    # analytic (derived here): turning round on the spot, from (0, 0, 0) to (0, 0, pi),
    # the shortest forward path (Dubins) is RLR, of length 7 pi R / 3, whose rotation
    # centre swings R to either side; the shortest path backing up (Reeds-Shepp) is
    # L+ R- L+ with three arcs of pi / 3 (source: Reeds and Shepp 1990, sec. 8; also
    # rsplan, see test_reeds_shepp.py), which swings R / 2 to either side. A 0.6 x 0.4 m
    # body turning about its centre reaches hypot(0.3, 0.2) = 0.36 m beyond its rotation
    # centre and at least 0.2 m (half its width) beside it. In a corridor 2.4 m wide, with
    # R = 1 m and a 0.05 m margin: the three-point turn needs at most
    # 0.5 + 0.36 + 0.05 = 0.91 m <= 1.2 m each side, the forward one at least
    # 1 + 0.2 + 0.05 = 1.25 m > 1.2 m.
    robot = Robot.rectangle(0.6, 0.4, margin=0.05, kind="car", turn_radius=1.0,
                            reverse=reverse)
    floor = shapely.box(0, -1.2, 12, 1.2)
    graph = star((6.0, 0.0), (1.0, 0.0), (11.0, 0.0))
    found = turns_at(robot, floor, graph)
    assert (("e1", "e1") in found) is reverse and (("e2", "e2") in found) is reverse
    assert ("e1", "e2") in found                       # straight through, either way


@pytest.mark.parametrize("kind", ["differential", "car"])
def test_a_node_without_lanes_has_no_turn(kind):
    # analytic: a node no lane meets (a room's only vertex) has no pair of edges to turn
    # between, so nothing to allow or forbid, and no lane to drive back along
    walls = np.array([[[0, 0], [10, 0]], [[0, 2], [10, 2]]], dtype=float)
    graph = nx.MultiGraph()
    graph.add_node("n0", x=5.0, y=1.0)
    robot = Robot.rectangle(1.4, 0.8, margin=0.1, kind=kind,
                            **({"turn_radius": 1.5} if kind == "car" else {}))
    assert check_turns(robot, clearance_field(walls), graph, (0.0, 0.0)) == []
    assert graph.nodes["n0"]["turns"] == "-"
    assert graph.nodes["n0"]["reverse_only"] is False


@pytest.mark.parametrize("length, allowed", [(1.0, True), (1.4, False)])
def test_with_no_margin_a_turn_in_place_must_still_keep_the_body_off_the_walls(length,
                                                                               allowed):
    # analytic: at the crossing of two 1 m corridors the four wall corners stand at
    # (+-0.5, +-0.5), sqrt(0.5) = 0.707 m from the centre. Turning in place about its centre
    # a W = 0.8 m robot sweeps the circle of radius hypot(L/2, 0.4): 0.640 m for L = 1.0 (it
    # turns clear of them) and 0.806 m for L = 1.4 (its corners swing through them). With no
    # margin GEOS gives a distance of 0 to a body that crosses a wall as to one that touches
    # it, and 0 must not pass as "keeps the margin"
    floor = shapely.union_all([shapely.box(-10, -0.5, 10, 0.5), shapely.box(-0.5, -10, 0.5, 10)])
    graph = star((0.0, 0.0), (9.0, 0.0), (0.0, 9.0), (-9.0, 0.0), (0.0, -9.0))
    robot = Robot.rectangle(length, 0.8, margin=0.0)
    assert (math.hypot(length / 2, 0.4) < math.sqrt(0.5)) is allowed
    found = turns_at(robot, floor, graph)
    straight_on = {("e1", "e3"), ("e3", "e1"), ("e2", "e4"), ("e4", "e2")}
    assert straight_on <= found
    assert (("e1", "e2") in found) is allowed and (("e1", "e1") in found) is allowed
    if not allowed:
        forbidden = check_turns(robot, clearance_field(boundary_segments(floor)[0]), graph,
                                (0.0, 0.0))
        assert forbidden and all("crosses an obstacle" in f.note
                                 for f in forbidden)


def test_with_no_margin_a_car_may_not_swing_its_body_through_a_wall():
    # analytic: a car (R = 2 m, rear-axle centre) cannot turn from one 1 m corridor into the
    # other at their crossing: its inner side passes the arc's centre at R - W/2 = 1.6 m,
    # and the wall corner (0.5, 0.5) lies 2.12 m from that centre (2.5, 2.5) (the closed
    # form of test_car_takes_a_corner_iff_the_arc_clears_the_inner_corner with a = 1 gives
    # W* = 2 (2 - sqrt(2) * 1.5) < 0): no path of curvature 1/2 m fits a 1 m crossing
    floor = shapely.union_all([shapely.box(-10, -0.5, 10, 0.5), shapely.box(-0.5, -10, 0.5, 10)])
    graph = star((0.0, 0.0), (9.0, 0.0), (0.0, 9.0), (-9.0, 0.0), (0.0, -9.0))
    robot = Robot.rectangle(1.0, 0.4, margin=0.0, kind="car", centre=(-0.5, 0.0),
                            turn_radius=2.0, reverse=False)
    assert 2 * (2.0 - math.sqrt(2) * (2.0 - 0.5)) < 0
    found = turns_at(robot, floor, graph)
    assert ("e1", "e3") in found and ("e1", "e2") not in found and ("e1", "e4") not in found


def test_car_bends_finds_the_bends_sharper_than_the_turning_radius(monkeypatch):
    # analytic: a lane along a circle of radius r, vertices s apart, turns by s / r at
    # each inner vertex over a span of s, so it bends faster than (1 + BEND_SLACK) / R
    # exactly where r < R / 1.1; a run of such vertices is one bend, judged at its middle
    import clearway.roadmap.turns as turns
    judged = []

    def record(robot, field, jobs, floor=None):
        judged.extend(jobs)
        return np.where(np.arange(len(jobs)) == 0, -1.0, 1.0)     # the first one fails

    monkeypatch.setattr(turns, "car_gaps", record)
    robot = Robot.rectangle(1.4, 0.8, margin=0.1, kind="car", turn_radius=1.5)

    def arc(cx, r, count):
        angle = np.linspace(0, math.pi / 2, count)
        return np.column_stack([cx + r * np.cos(angle), r * np.sin(angle)])

    tight = arc(0, 1.0, 12)                              # r = 1.0 m < 1.5 / 1.1
    wide = arc(10, 3.0, 12)                              # r = 3.0 m: followed
    doubled = np.repeat(arc(20, 1.2, 9), 2, axis=0)      # repeated vertices, r = 1.2 m
    lines = np.array([shapely.LineString(c) for c in (tight, wide, doubled)], dtype=object)
    kept, ends, short = turns.car_bends(robot, None, lines, [(0, 1), (2, 3), (4, 5)])
    assert [len(job[1]) - 1 for job in judged] == [6, 4]  # middles of vertices 1..10, 1..7
    assert np.allclose(judged[0][0], tight[6]) and np.allclose(judged[1][0], arc(20, 1.2, 9)[4])
    assert ends == [(2, 3), (4, 5)] and len(short) == 1   # the failing bend drops its lane
    assert np.allclose(shapely.get_coordinates(kept[1]), arc(20, 1.2, 9))
