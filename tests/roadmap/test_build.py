"""roadmap/build.py: the defaults and options of build_roadmap, on corridors."""

from __future__ import annotations

import math

import pytest

from clearway.config import DEFAULTS
from roadmap_builders import build, corridor, rack_grid


@pytest.mark.parametrize("width, pinched", [(1.2, True), (1.4, False)])
def test_the_default_comfort_clearance_is_c_plus_0_2(width, pinched):
    # analytic: a corridor w m wide has clearance w / 2 on its lane; c = 0.35 + 0.1 = 0.45 m,
    # so the default comfort clearance 0.65 m pinches a 1.2 m corridor (0.6 m), not 1.4 m
    roadmap = build(*corridor(width))
    assert bool(roadmap.findings.pinch_points) is pinched
    if pinched:
        assert all(p.clearance == pytest.approx(width / 2, abs=0.005)
                   for p in roadmap.findings.pinch_points)


def test_low_clearance_penalty_weighs_pinched_lanes_only():
    narrow = build(*corridor(1.2), low_clearance_penalty=0.5)
    wide = build(*corridor(1.4), low_clearance_penalty=0.5)
    for roadmap, factor in ((narrow, 1.5), (wide, 1.0)):
        for _, _, data in roadmap.graph.edges(data=True):
            assert data["weight"] == pytest.approx(data["length"] * factor, rel=1e-12)


def test_defaults_come_from_the_config_schema():
    roadmap = build(*corridor(2.0))
    assert roadmap.findings.personnel_clearance == DEFAULTS["checks"]["personnel_clearance"]
    # the graph states the clearance it was built for: radius + margin
    assert roadmap.graph.graph["required_clearance"] == pytest.approx(0.45, abs=1e-12)


def test_a_free_space_with_nothing_drivable_is_refused():
    with pytest.raises(ValueError, match="free space is empty"):
        build({}, corridor(2.0)[1].buffer(-5))


def test_the_inflated_obstacles_are_the_obstacles_grown_by_c():
    # analytic: a square rack of side s grown by c (round corners) covers s^2 + 4 s c + pi c^2
    obstacles, free = rack_grid(1, 1)
    rack = obstacles["racking"]
    roadmap = build(obstacles, free)
    c = roadmap.robot.clearance
    side_x, side_y = 6 * 1.1, 2.2
    inflated_rack = roadmap.inflated.intersection(rack.buffer(c + 0.01))
    expected = side_x * side_y + 2 * (side_x + side_y) * c + math.pi * c ** 2
    assert inflated_rack.area == pytest.approx(expected, rel=2e-3)   # 16-gon quarter circles
    # and it is made when first asked for, then kept
    assert roadmap.inflated is roadmap.inflated
