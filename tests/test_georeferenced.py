"""Georeferenced drawings: the same layout at the origin and at survey coordinates (metres and
millimetres) gives the same floor plan and the same lane graph, up to the shift."""

from __future__ import annotations

import ezdxf
import numpy as np
import pytest
import shapely

from clearway.converter import read_floorplan
from clearway.roadmap import Robot, build_roadmap

#: A UTM-like position (easting ~ 500 km, northing ~ 5,400 km); common practice.
SHIFT = (5e5, 5.4e6)


def _site(tmp_path, shift, *, mm=False):
    """A 20 m x 12 m hall with two rack rows and a dock, shifted by `shift` metres."""
    factor = 1000.0 if mm else 1.0
    doc = ezdxf.new("R2010", units=4 if mm else 6)
    msp = doc.modelspace()

    def place(points):
        return [((x + shift[0]) * factor, (y + shift[1]) * factor) for x, y in points]

    for inset in (0.0, 0.25):
        msp.add_lwpolyline(place([(inset, inset), (20 - inset, inset), (20 - inset, 12 - inset),
                                  (inset, 12 - inset)]), close=True, dxfattribs={"layer": "A-WALL"})
    for y in (3.0, 7.5):
        msp.add_lwpolyline(place([(3, y), (16, y), (16, y + 1.2), (3, y + 1.2)]), close=True,
                           dxfattribs={"layer": "A-RACK"})
    msp.add_point(place([(18.5, 6.0)])[0], dxfattribs={"layer": "A-STATION"})
    name = f"site_{'mm' if mm else 'm'}_{int(shift[0])}.dxf"
    doc.saveas(tmp_path / name)
    return read_floorplan(tmp_path / name)


@pytest.fixture(scope="module")
def plans(tmp_path_factory):
    folder = tmp_path_factory.mktemp("georef")
    return {"origin": _site(folder, (0.0, 0.0)), "survey m": _site(folder, SHIFT),
            "survey mm": _site(folder, SHIFT, mm=True)}


@pytest.mark.parametrize("which", ["survey m", "survey mm"])
def test_floor_plan_is_the_same_up_to_the_shift(plans, which):
    origin, shifted = plans["origin"], plans[which]
    back = shapely.transform(shifted.free_space, lambda xy: xy - np.array(SHIFT))
    # analytic: 19.5 x 11.5 m floor minus two 13 x 1.2 m racks
    assert origin.free_space.area == pytest.approx(19.5 * 11.5 - 2 * 13 * 1.2, abs=1e-6)
    assert back.area == pytest.approx(origin.free_space.area, abs=1e-4)
    assert shapely.symmetric_difference(back, origin.free_space).area < 1e-4
    assert shapely.hausdorff_distance(back, origin.free_space) < 1e-3
    assert [(s.label, s.x - SHIFT[0], s.y - SHIFT[1]) for s in shifted.stations] == \
        [(s.label, pytest.approx(s.x, abs=1e-4), pytest.approx(s.y, abs=1e-4))
         for s in origin.stations]


def _graph_of(plan):
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y) for s in plan.stations],
                            robot=Robot.disc(0.35, margin=0.1))
    return roadmap.graph


@pytest.mark.parametrize("which", ["survey m", "survey mm"])
def test_lane_graph_is_the_same_up_to_the_shift(plans, which):
    graph, shifted = _graph_of(plans["origin"]), _graph_of(plans[which])
    assert graph.number_of_nodes() >= 4          # lanes around and between the two rows
    assert graph.number_of_nodes() == shifted.number_of_nodes()
    assert graph.number_of_edges() == shifted.number_of_edges()

    def table(g, shift):
        rows = [(g.nodes[n]["x"] - shift[0], g.nodes[n]["y"] - shift[1], g.nodes[n]["clearance"],
                 g.nodes[n]["kind"]) for n in g.nodes]
        return sorted(rows, key=lambda row: (round(row[0], 1), round(row[1], 1)))

    for (x0, y0, c0, k0), (x1, y1, c1, k1) in zip(table(graph, (0, 0)), table(shifted, SHIFT)):
        assert k0 == k1
        assert np.hypot(x1 - x0, y1 - y0) < 0.01          # the 1 cm bound of issue 6
        assert abs(c1 - c0) < 0.01
    lengths = sorted(d["length"] for *_, d in graph.edges(data=True))
    assert sorted(d["length"] for *_, d in shifted.edges(data=True)) == \
        pytest.approx(lengths, abs=0.01)
    for _, _, data in shifted.edges(data=True):              # lanes written in the drawing frame
        x, y = data["geometry"].coords[0]
        assert SHIFT[0] <= x <= SHIFT[0] + 20 and SHIFT[1] <= y <= SHIFT[1] + 12
