"""Floor plans built in code for the roadmap tests (metres), and invariant checks."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import shapely

from clearway.roadmap import Robot, build_roadmap


def plan(hall, *obstacles):
    """Return (obstacles by role, free space) for a rectangular hall and obstacle polygons."""
    hall = shapely.box(*hall) if isinstance(hall, tuple) else hall
    outline = hall.buffer(0.2, join_style="mitre").difference(hall)
    racks = shapely.union_all(list(obstacles)) if obstacles else shapely.Polygon()
    free = hall.difference(racks)
    return {"boundary": outline, "racking": racks}, free


def corridor(width, length=10.0):
    """A straight corridor `width` m wide along y = width / 2."""
    return plan((0.0, 0.0, length, width))


def rack_grid(rows, columns, *, aisle=3.2, depth=2.2, bay=1.1, bays=6, wall_gap=2.0):
    """Rows of racks (double rows depth m deep) with aisles between and a hall around."""
    racks = []
    for row in range(rows):
        for column in range(columns):
            x0 = wall_gap + column * (bays * bay + aisle)
            y0 = wall_gap + row * (depth + aisle)
            racks.append(shapely.box(x0, y0, x0 + bays * bay, y0 + depth))
    width = 2 * wall_gap + columns * bays * bay + (columns - 1) * aisle
    height = 2 * wall_gap + rows * depth + (rows - 1) * aisle
    return plan((0.0, 0.0, width, height), *racks)


def islands_per_region(roadmap):
    """Holes of each drivable region, as the lane graph must reproduce them."""
    regions = shapely.get_parts(roadmap.drivable)
    return regions, [len(p.interiors) for p in regions]


def assert_topology(roadmap):
    """Choset & Burdick 2000: the GVD is a deformation retract of the drivable region, so per
    component, edges - nodes + 1 == holes, and each region holds one piece of lane graph."""
    graph = roadmap.graph
    regions, holes = islands_per_region(roadmap)
    lanes = graph.subgraph(n for n, d in graph.nodes(data=True) if d["kind"] != "station")
    pieces = list(nx.connected_components(lanes))
    assert len(pieces) == len(regions)
    for nodes in pieces:
        xy = np.array([[graph.nodes[n]["x"], graph.nodes[n]["y"]] for n in nodes])
        inside = [i for i, region in enumerate(regions)
                  if shapely.dwithin(region, shapely.Point(xy[0]), 1e-3)]
        assert len(inside) == 1
        sub = lanes.subgraph(nodes)
        assert sub.number_of_edges() - sub.number_of_nodes() + 1 == holes[inside[0]]


def assert_cycle_rank_per_component(free_space, lanes, c):
    """Choset & Burdick 2000: one connected piece of `lanes` (a networkx graph without station
    links) per component of `free_space` eroded by `c` (shapely; area >= 0.05 m^2), and
    LaValle 2006, sec. 6.2.3: the roadmap is a deformation retract, E - V + 1 = islands
    (holes >= 0.01 m^2) of that component."""
    eroded = shapely.get_parts(shapely.buffer(free_space, -(c + 1e-6), quad_segs=16))
    regions = [p for p in eroded if p.area >= 0.05]
    holes = [sum(shapely.Polygon(ring).area >= 0.01 for ring in p.interiors) for p in regions]
    pieces = list(nx.connected_components(lanes))
    assert len(pieces) == len(regions)
    for nodes in pieces:
        node = lanes.nodes[next(iter(nodes))]
        inside = [i for i, region in enumerate(regions)
                  if shapely.dwithin(region, shapely.Point(node["x"], node["y"]), 1e-3)]
        assert len(inside) == 1
        sub = lanes.subgraph(nodes)
        assert sub.number_of_edges() - sub.number_of_nodes() + 1 == holes[inside[0]]


def assert_exact_clearances(roadmap, free, tolerance=0.01):
    """Every node's clearance and samples along every edge agree with shapely.distance."""
    graph, boundary = roadmap.graph, free.boundary
    for _, data in graph.nodes(data=True):
        exact = shapely.distance(shapely.Point(data["x"], data["y"]), boundary)
        assert abs(exact - data["clearance"]) <= tolerance
    for _, _, data in graph.edges(data=True):
        line = data["geometry"]
        samples = shapely.line_interpolate_point(line, np.linspace(0, line.length, 50))
        exact = shapely.distance(samples, boundary)
        assert data["clearance_min"] <= exact.min() + tolerance
        dense = shapely.get_coordinates(shapely.segmentize(line, 0.01))
        assert abs(shapely.distance(shapely.points(dense), boundary).min()
                   - data["clearance_min"]) <= tolerance


def assert_lanes_clear(roadmap, tolerance=1e-3):
    """Every lane keeps the required clearance c (is clear of the inflated obstacles)."""
    c = roadmap.graph.graph["required_clearance"]
    for _, _, data in roadmap.graph.edges(data=True):
        assert data["clearance_min"] >= c - tolerance


@pytest.fixture
def robot():
    return Robot.disc(0.35, margin=0.1)     # c = 0.45 m


def build(obstacles, free, stations=(), robot=None, **options):
    return build_roadmap(obstacles, free, list(stations),
                         robot=robot or Robot.disc(0.35, margin=0.1), **options)
