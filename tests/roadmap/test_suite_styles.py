"""Small versions of the benchmark suite's warehouse styles, as regression drawings.

Each style of benchmarks/synthetic.py (flue slots sealed by columns, open flues, deep docks
with and without columns, rows at an angle, rooms and curved walls) is written at about 160
bays and built end to end; the roadmap is checked against shapely, independently of the
roadmap's own geometry:

- Choset & Burdick 2000 / LaValle 2006 sec. 6.2.3: per drivable component (shapely's erosion
  of the free space by c), lanes form one connected piece whose cycle rank E - V + 1 equals
  the component's islands;
- every node's clearance is shapely's distance to the raw obstacles (within 1 cm, issue 3);
- every lane keeps clearance c from the raw obstacles (1 mm slack for rounding);
- every station is reached (each is placed in an aisle, the dock or a room behind a 1.2 m
  door, wider than 2c = 1.0 m, by the generator's construction).
"""

from __future__ import annotations

import functools

import numpy as np
import pytest
import shapely

from benchmarks.synthetic import STYLES, write_style
from clearway.converter import read_floorplan
from clearway.roadmap import Robot, build_roadmap
from roadmap_builders import assert_cycle_rank_per_component

ROBOT = Robot.disc(0.4, margin=0.1)
C = 0.5  # analytic: radius 0.4 m + margin 0.1 m
BAYS = 160


@functools.lru_cache(maxsize=None)
def built(style, folder):
    plan = read_floorplan(write_style(folder / f"{style}.dxf", style, BAYS))
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y) for s in plan.stations], robot=ROBOT,
                            shared_zones=plan.regions["shared"])
    return plan, roadmap


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("suite")


def lanes_only(graph):
    """The lane graph without stations joined by their own link (degree-1 stations)."""
    return graph.subgraph(n for n, d in graph.nodes(data=True)
                          if not (d["kind"] == "station" and graph.degree(n) == 1))


@pytest.mark.parametrize("style", list(STYLES))
def test_suite_style_topology_and_clearance(style, folder):
    plan, roadmap = built(style, folder)
    graph = roadmap.graph
    assert_cycle_rank_per_component(plan.free_space, lanes_only(graph), C)
    obstacles = shapely.union_all(shapely.get_parts(
        np.array([g for g in plan.obstacles.values()], dtype=object)))
    outside = shapely.difference(shapely.box(*shapely.buffer(obstacles, 1.0).bounds),
                                 plan.free_space)
    xy = np.array([[d["x"], d["y"], d["clearance"]] for _, d in graph.nodes(data=True)])
    exact = shapely.distance(shapely.points(xy[:, :2]), outside)
    assert np.abs(exact - xy[:, 2]).max() <= 0.01
    lines = np.array([d["geometry"] for _, _, d in graph.edges(data=True)], dtype=object)
    assert shapely.distance(lines, outside).min() >= C - 1e-3
    assert all(result.reachable for result in roadmap.findings.stations)
    assert len(roadmap.findings.stations) == len(plan.stations) > 0
