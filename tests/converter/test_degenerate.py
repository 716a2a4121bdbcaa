"""Degenerate linework still gives the right floor plan (areas checked analytically)."""

from __future__ import annotations

import math

import ezdxf
import numpy as np
import pytest
import shapely

from clearway.converter import read_floorplan

#: analytic: a 10 m x 8 m room with 0.2 m walls has a 9.6 m x 7.6 m free floor
FLOOR = 9.6 * 7.6


def _room(*, lines=False):
    """A 10 x 8 m room in metres; with `lines`, its faces drawn as overlapping LINEs."""
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    for inset in (0.0, 0.2):
        corners = [(inset, inset), (10 - inset, inset), (10 - inset, 8 - inset),
                   (inset, 8 - inset)]
        if not lines:
            msp.add_lwpolyline(corners, close=True, dxfattribs={"layer": "A-WALL"})
            continue
        for (x0, y0), (x1, y1) in zip(corners, corners[1:] + corners[:1]):
            # each side as two collinear pieces overlapping by 40 %, one of them reversed
            mx0, my0 = x0 + 0.6 * (x1 - x0), y0 + 0.6 * (y1 - y0)
            mx1, my1 = x0 + 0.4 * (x1 - x0), y0 + 0.4 * (y1 - y0)
            msp.add_line((x0, y0), (mx0, my0), dxfattribs={"layer": "A-WALL"})
            msp.add_line((x1, y1), (mx1, my1), dxfattribs={"layer": "A-WALL"})
            msp.add_line((x0, y0), (mx0, my0), dxfattribs={"layer": "A-WALL"})  # duplicate
    return doc, msp


def _read(doc, tmp_path, name="plan.dxf"):
    path = tmp_path / name
    doc.saveas(path)
    return read_floorplan(path)


def test_collinear_overlapping_walls(tmp_path):
    plan = _read(_room(lines=True)[0], tmp_path)
    assert plan.free_space.area == pytest.approx(FLOOR, abs=1e-6)
    assert plan.regions["wall"].area == pytest.approx(80 - FLOOR, abs=1e-6)


@pytest.mark.parametrize("end_y", [7.799, 7.8, 7.801], ids=["1 mm short", "exact", "overshoot"])
def test_partition_t_junction(tmp_path, end_y):
    doc, msp = _room()
    for x in (5.0, 5.2):       # a 0.2 m partition from the south wall to the north one
        msp.add_line((x, 0.2), (x, end_y), dxfattribs={"layer": "A-WALL"})
    plan = _read(doc, tmp_path)
    areas = sorted(polygon.area for polygon in plan.free_space.geoms)
    # analytic: the rooms either side are 4.8 x 7.6 and 4.6 x 7.6 m (gap of 1 mm closed)
    assert areas == pytest.approx([4.6 * 7.6, 4.8 * 7.6], abs=2e-3)


def test_racks_touching_edge_to_edge_and_corner_to_corner(tmp_path):
    doc, msp = _room()
    bays = [(2, 2), (3, 2), (4, 3)]   # two share an edge, the third touches at a corner
    for x, y in bays:
        msp.add_lwpolyline([(x, y), (x + 1, y), (x + 1, y + 1), (x, y + 1)], close=True,
                           dxfattribs={"layer": "A-RACK"})
    plan = _read(doc, tmp_path)
    assert plan.regions["racking"].area == pytest.approx(3.0)        # analytic: 3 unit squares
    assert plan.free_space.area == pytest.approx(FLOOR - 3.0, abs=1e-6)


def test_column_touching_a_wall(tmp_path):
    doc, msp = _room()
    msp.add_circle((0.5, 4.0), 0.3, dxfattribs={"layer": "A-COLS"})   # touches x = 0.2
    plan = _read(doc, tmp_path)
    # analytic: pi r^2 less than 1 mm of chord sagitta around the circle
    column = math.pi * 0.3 ** 2
    assert plan.free_space.area == pytest.approx(FLOOR - column, abs=2 * math.pi * 0.3 * 1e-3)
    assert len(plan.free_space.geoms) == 1


def test_zero_area_and_bow_tie_polygons(tmp_path):
    doc, msp = _room()
    msp.add_lwpolyline([(1, 1), (2, 1), (3, 1)], close=True, dxfattribs={"layer": "A-RACK"})
    msp.add_lwpolyline([(4, 4), (4, 4), (4, 4)], close=True, dxfattribs={"layer": "A-RACK"})
    # a bow-tie: two triangles of base 2 and height 1 meeting at (4, 3)
    msp.add_lwpolyline([(3, 2), (5, 4), (5, 2), (3, 4)], close=True,
                       dxfattribs={"layer": "A-RACK"})
    plan = _read(doc, tmp_path)
    assert plan.regions["racking"].area == pytest.approx(2.0, abs=1e-6)  # analytic: 2 x 1
    assert plan.free_space.area == pytest.approx(FLOOR - 2.0, abs=2e-3)


def test_polyline_closing_on_itself_without_the_flag(tmp_path):
    doc, msp = _room()
    msp.add_lwpolyline([(2, 2), (4, 2), (4, 3), (2, 3), (2, 2)], close=False,
                       dxfattribs={"layer": "A-RACK"})
    plan = _read(doc, tmp_path)
    assert plan.regions["racking"].area == pytest.approx(2.0, abs=1e-6)  # analytic: 2 x 1


def test_zero_radius_arc_and_spline_with_repeated_points(tmp_path):
    doc, msp = _room()
    msp.add_arc((5, 5), 0.0, 0, 90, dxfattribs={"layer": "A-WALL"})
    msp.add_circle((6, 6), 0.0, dxfattribs={"layer": "A-RACK"})
    points = [(2, 2, 0), (2, 2, 0), (3, 2, 0), (3, 2, 0), (3, 2, 0), (3, 3, 0), (2, 3, 0),
              (2, 2, 0), (2, 2, 0)]
    msp.add_open_spline(points, degree=1, dxfattribs={"layer": "A-RACK"})
    plan = _read(doc, tmp_path)
    # analytic: a degree-1 spline is its control polygon, the 1 m square at (2, 2)
    assert plan.regions["racking"].area == pytest.approx(1.0, abs=1e-6)
    assert plan.free_space.area == pytest.approx(FLOOR - 1.0, abs=1e-3)
    assert all(np.isfinite(shapely.bounds(plan.free_space)))


@pytest.mark.parametrize("radius", [0.5000000000000001, 0.5000000000000003, 0.75, 0.999])
def test_sub_millimetre_circles_and_arcs_in_a_drawing_in_millimetres(tmp_path, radius):
    # A drawing in mm reads curves to a 1 mm chord tolerance: 1 drawing unit. For a radius
    # between half that and all of it, ezdxf's segment count takes the chord of the smaller
    # arc and asks for up to 105 million segments; the vertex limit then refused the whole
    # drawing over one tiny circle (a real plan with 0.5 mm circles on a wall layer).
    from clearway.converter.entities import READERS
    doc = ezdxf.new("R2010", units=4)
    msp = doc.modelspace()
    for inset in (0.0, 200.0):
        corners = [(inset, inset), (10000 - inset, inset), (10000 - inset, 8000 - inset),
                   (inset, 8000 - inset)]
        msp.add_lwpolyline(corners, close=True, dxfattribs={"layer": "A-WALL"})
    circle = msp.add_circle((100.0, 100.0), radius, dxfattribs={"layer": "A-WALL"})
    arc = msp.add_arc((100.0, 4000.0), radius, 10.0, 350.0, dxfattribs={"layer": "A-WALL"})
    for entity in (circle, arc):
        (xy, _), = READERS[entity.dxftype()](entity, 1.0, 100_000)
        # source: analytic: every vertex lies on the circle, and a chord spanning at most
        # half a turn departs from its arc by at most the radius, within the 1.0 tolerance
        centre = np.array([entity.dxf.center.x, entity.dxf.center.y])
        assert len(xy) == 3
        assert np.allclose(np.hypot(*(xy - centre).T), radius, rtol=0, atol=1e-9)
    plan = _read(doc, tmp_path)
    # analytic: a 10 x 8 m room with 0.2 m walls has a 9.6 x 7.6 m floor
    assert plan.free_space.area == pytest.approx(FLOOR, abs=1e-6)
