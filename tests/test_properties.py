"""Property-based tests: random rack layouts in random rooms, rotated and in random units,
through the converter and the roadmap; the invariants hold for every one."""

from __future__ import annotations

import math
import os

import ezdxf
import networkx as nx
import numpy as np
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st

from clearway.converter import UNITS_TO_M, read_floorplan
from clearway.roadmap import Robot, build_roadmap

INSUNITS = {"mm": 4, "cm": 5, "m": 6, "in": 1, "ft": 2}
ROBOT = Robot.disc(0.3, margin=0.1)


@st.composite
def layouts(draw):
    """A room (width, depth), rack rows (x, y, length, depth), an angle and a unit."""
    width = draw(st.floats(8, 30))
    depth = draw(st.floats(6, 20))
    rows = []
    y = 2.0
    while y + 1.2 < depth - 2.0 and len(rows) < 4:
        length = draw(st.floats(1.0, max(1.0, width - 4.0)))
        x = draw(st.floats(1.6, max(1.6, width - 1.6 - length)))
        rack_depth = draw(st.floats(0.4, 1.2))
        rows.append((x, y, length, rack_depth))
        y += rack_depth + draw(st.floats(1.0, 3.0))
    angle = draw(st.sampled_from([0.0, 90.0]) | st.floats(0, 360))
    unit = draw(st.sampled_from(sorted(INSUNITS)))
    return width, depth, tuple(rows), angle, unit


def _write(layout, path):
    width, depth, rows, angle, unit = layout
    factor = 1.0 / UNITS_TO_M[unit]
    turn = math.radians(angle)
    rotation = np.array([[math.cos(turn), math.sin(turn)], [-math.sin(turn), math.cos(turn)]])

    def place(points):
        return (np.asarray(points, dtype=float) @ rotation * factor).tolist()

    doc = ezdxf.new("R2010", units=INSUNITS[unit])
    msp = doc.modelspace()
    for inset in (0.0, 0.2):
        msp.add_lwpolyline(place([(inset, inset), (width - inset, inset),
                                  (width - inset, depth - inset), (inset, depth - inset)]),
                           close=True, dxfattribs={"layer": "A-WALL"})
    for x, y, length, rack in rows:
        msp.add_lwpolyline(place([(x, y), (x + length, y), (x + length, y + rack), (x, y + rack)]),
                           close=True, dxfattribs={"layer": "A-RACK"})
    doc.saveas(path)


def _build(path):
    plan = read_floorplan(path)
    return plan, build_roadmap(plan.obstacles, plan.free_space, [], robot=ROBOT)


def check_invariants(plan, roadmap):
    graph = roadmap.graph
    c = ROBOT.clearance
    boundary = plan.free_space.boundary
    assert graph.number_of_nodes() > 0
    for node, data in graph.nodes(data=True):
        # every node's clearance is shapely's distance to the obstacles, within 1 cm
        distance = shapely.distance(shapely.Point(data["x"], data["y"]), boundary)
        assert abs(data["clearance"] - distance) < 0.01, (node, data, distance)
    for u, v, key, data in graph.edges(keys=True, data=True):
        lane = data["geometry"]
        # every lane stays clear of the obstacles inflated by c (1 cm tolerance)
        assert shapely.distance(lane, boundary) >= c - 0.01, (key, lane.wkt[:80])
        assert plan.free_space.buffer(1e-6).covers(lane)
    # Choset & Burdick 2000: the GVD is a deformation retract of the drivable region, so each
    # component's cycle rank E - V + 1 equals the islands (holes) of its drivable region
    drivable = list(shapely.get_parts(roadmap.drivable))
    for component in nx.connected_components(graph):
        sub = graph.subgraph(component)
        node = next(iter(component))
        point = shapely.Point(graph.nodes[node]["x"], graph.nodes[node]["y"])
        owner = min(drivable, key=lambda polygon: polygon.distance(point))
        assert sub.number_of_edges() - sub.number_of_nodes() + 1 == len(owner.interiors)


@settings(max_examples=int(os.environ.get("CLEARWAY_PROPERTY_EXAMPLES", "20")), deadline=None)
@given(layout=layouts())
def test_random_rack_layouts_keep_the_invariants(tmp_path_factory, layout):
    path = tmp_path_factory.mktemp("layout") / "layout.dxf"
    _write(layout, path)
    plan, roadmap = _build(path)
    check_invariants(plan, roadmap)
    # deterministic: the same file gives the same graph, ids and attributes
    again = _build(path)[1].graph
    assert sorted(roadmap.graph.nodes(data=True)) == sorted(again.nodes(data=True))
    assert sorted((u, v, k) for u, v, k in roadmap.graph.edges(keys=True)) == \
        sorted((u, v, k) for u, v, k in again.edges(keys=True))
