"""A car's turns on whole drawings: the bulk judgement against measuring every path.

manoeuvres.car_gaps settles most paths by bounds and tries the candidate paths in the
order they most often succeed, stopping at the first that clears. The answer must be that
of the slow exact check: every path of every manoeuvre driven and each move's swept hull
measured by shapely (`exact_gaps`). Checked on drawings this code was not written for:
small versions of the benchmark suite's warehouse styles (benchmarks/synthetic.py) and the
bundled sample drawings, for cars with and without reversing.
"""

from __future__ import annotations

import functools
import math
from pathlib import Path

import numpy as np
import pytest

from benchmarks.synthetic import write_style
from clearway.converter import read_floorplan
from clearway.roadmap import Robot, build_roadmap
from clearway.roadmap import turns
from clearway.roadmap.body import MAX_STEP_ANGLE, move_gaps
from clearway.roadmap.manoeuvres import CAR_REACH, paths_tried

SAMPLES = Path(__file__).resolve().parents[2] / "sample_drawings"
CARS = {
    "reversing": Robot.rectangle(1.4, 0.8, margin=0.1, kind="car", centre=(-0.5, 0.0),
                                 turn_radius=1.5),
    "forward": Robot.rectangle(1.2, 0.7, margin=0.1, kind="car", centre=(-0.4, 0.0),
                               turn_radius=1.2, reverse=False),
}


def exact_gaps(robot, field, manoeuvres, floor=None):
    """Each manoeuvre's best gap over every path tried, every move measured exactly."""
    best = np.full(len(manoeuvres), -math.inf)
    for index, (here, arrive, leave) in enumerate(manoeuvres):
        for step in range(len(CAR_REACH)):
            for backing in (False, True)[:1 + robot.reverse]:
                for path in paths_tried(robot, np.asarray(here, float), arrive, leave, step,
                                        backing) or []:
                    poses = path.poses(step=MAX_STEP_ANGLE)
                    best[index] = max(best[index], float(move_gaps(
                        robot, field, poses[:-1, :2], poses[:-1, 2], poses[1:, :2],
                        poses[1:, 2]).min()))
    return best


@functools.lru_cache(maxsize=None)
def plan_of(name, folder):
    if name.endswith(".dxf"):
        return read_floorplan(str(SAMPLES / name))
    return read_floorplan(write_style(folder / f"{name}.dxf", name, 160))


def answers(plan, robot):
    """What a planner sees of the body: turns and reverse_only per node, the lanes and
    turns reported short, the lane graph."""
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y) for s in plan.stations], robot=robot,
                            shared_zones=plan.regions["shared"])
    graph = roadmap.graph
    nodes = {node: (data["turns"], data["reverse_only"]) for node, data in
             graph.nodes(data=True)}
    short = sorted((item.what, round(item.x, 6), round(item.y, 6), item.edges or (),
                    item.node or "") for item in roadmap.findings.body)
    return nodes, short, sorted(graph.edges(keys=True))


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("drawings")


@pytest.mark.parametrize("car", list(CARS))
@pytest.mark.parametrize("drawing", ["current", "flue_open", "dock_columns", "angled",
                                     "distribution_centre.dxf", "clinic.dxf",
                                     "office_ground_floor.dxf"])
def test_car_turns_agree_with_measuring_every_path(drawing, car, folder, monkeypatch):
    # analytic: the bounds only settle a path as the exact check would, and the order in
    # which paths are tried cannot change whether one clears (manoeuvres.py)
    plan = plan_of(drawing, folder)
    fast = answers(plan, CARS[car])
    monkeypatch.setattr(turns, "car_gaps", exact_gaps)
    slow = answers(plan, CARS[car])
    assert fast == slow
    nodes = fast[0]
    # the drawings exercise both answers: some turn allowed
    assert any(text != "-" for text, _ in nodes.values())
    # and, but for the angled rows (whose aisles open wide at both ends), refuse some turn
    # (counted on these drawings: 5 to 58 forbidden turns each)
    assert any(what.startswith("turn") for what, *_ in fast[1]) is (drawing != "angled")
