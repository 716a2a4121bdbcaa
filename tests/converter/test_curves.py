"""Curve flattening against analytic geometry."""

import math

import numpy as np
import pytest
import shapely
from hypothesis import example, given, settings, strategies as st

from clearway.converter import read_floorplan
from clearway.converter.curves import arc_segments, bulge_polyline
from tests.conftest import new_drawing, save, walled_room


def test_bulge_of_one_closes_a_semicircle(tmp_path):
    # analytic: a bulge of 1 is tan(180 deg / 4), a half circle; area pi r^2 / 2
    radius, tolerance = 2.0, 0.001
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, -10, -10, 10, 10)
    msp.add_lwpolyline([(-radius, 0, 0, 0, 1), (radius, 0, 0, 0, 0)], format="xyseb", close=True,
                       dxfattribs={"layer": "A-AREA-KEEPOUT"})
    plan = read_floorplan(save(doc, tmp_path), chord_tolerance=tolerance)
    area = plan.regions["keepout"].area
    exact = math.pi * radius ** 2 / 2
    # analytic: each chord cuts off less than tolerance * its length, so the deficit is below
    # tolerance * arc length (pi r)
    assert exact - tolerance * math.pi * radius <= area <= exact
    assert plan.regions["keepout"].bounds == pytest.approx((-2, -2, 2, 0), abs=1e-4)


@pytest.mark.parametrize("tolerance", [0.01, 0.001, 0.0002])
def test_circle_area_is_within_the_chord_tolerance_bound(tmp_path, tolerance):
    # analytic: pi r^2 - tolerance * 2 pi r <= area of the inscribed flattening <= pi r^2
    radius = 1.5
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, -10, -10, 10, 10)
    msp.add_circle((0, 0), radius, dxfattribs={"layer": "A-AREA-KEEPOUT"})
    plan = read_floorplan(save(doc, tmp_path), chord_tolerance=tolerance)
    area = plan.regions["keepout"].area
    exact = math.pi * radius ** 2
    assert exact - tolerance * 2 * math.pi * radius - 1e-6 <= area <= exact + 1e-6


@settings(max_examples=60, deadline=None)
@given(x=st.floats(-1e5, 1e5), y=st.floats(-1e5, 1e5), radius=st.floats(-500.0, 500.0),
       tolerance=st.floats(1e-4, 0.5), extrusion=st.sampled_from([None, (0, 0, 1), (0, 0, -1),
                                                                  (0, 0, 2.5)]))
@example(x=0.0, y=0.0, radius=0.125, tolerance=0.5, extrusion=None)  # smaller than the tolerance
@example(x=0.0, y=0.0, radius=0.25, tolerance=0.375, extrusion=None)   # two chords (below)
@example(x=3.0, y=-1.0, radius=-0.3, tolerance=0.5, extrusion=(0, 0, -1))
def test_circle_vertices_are_ezdxfs_own_flattening_to_the_bit(x, y, radius, tolerance, extrusion):
    # source: ezdxf's Circle.flattening (the independent reference the fast reader replaces):
    # the same vertices, bit for bit, so the outputs of every drawing stay byte-identical
    import ezdxf

    from clearway.converter.entities import flatten_entity

    attributes = {} if extrusion is None else {"extrusion": extrusion}
    circle = ezdxf.new().modelspace().add_circle((x, y), radius, dxfattribs=attributes)
    if tolerance / 2 < abs(radius) < tolerance:
        # where ezdxf's segment count goes wrong (up to 105 million segments; see
        # entities._beyond_segment_count) the reader takes two chords instead, each within
        # the tolerance of the circle: ezdxf's own vertices at 0, 180 and 360 degrees
        expected = np.array([(v.x, v.y) for v in circle.vertices([0.0, 180.0, 360.0])])
        [(xy, _)] = flatten_entity(circle, tolerance)
        assert xy.dtype == np.float64 and np.array_equal(xy, expected)
        return
    try:
        expected = np.array([(v.x, v.y) for v in circle.flattening(tolerance)]).reshape(-1, 2)
    except (ValueError, ZeroDivisionError) as err:
        # ezdxf before 1.4 raises for a circle under half the tolerance across (later ones
        # give one segment): the fast reader raises the same, so the reader skips it as
        # damaged on either version, as it did when it called ezdxf
        with pytest.raises(type(err)):
            flatten_entity(circle, tolerance)
        return
    [(xy, _)] = flatten_entity(circle, tolerance)
    assert xy.shape == expected.shape and xy.dtype == np.float64
    assert np.array_equal(xy, expected)


@settings(max_examples=25, deadline=None)
@given(radius=st.floats(0.05, 200.0), sweep=st.floats(0.1, 2 * math.pi),
       tolerance=st.floats(1e-4, 0.01))
def test_chords_stay_within_tolerance_of_the_arc(radius, sweep, tolerance):
    # analytic: a chord of angle phi departs from its arc by r (1 - cos(phi / 2))
    steps = arc_segments(radius, sweep, tolerance)
    sagitta = radius * (1 - math.cos(sweep / steps / 2))
    assert sagitta <= tolerance * (1 + 1e-9)


@settings(max_examples=25, deadline=None)
@given(bulge=st.floats(-3.0, 3.0).filter(lambda b: abs(b) > 1e-3))
def test_bulged_segment_ends_at_its_vertices_and_lies_on_one_circle(bulge):
    # analytic: the arc of bulge b over chord c has radius c (1 + b^2) / (4 |b|)
    xy = bulge_polyline([(0, 0), (3, 0)], [bulge, 0], closed=False, tolerance=1e-3)
    assert np.allclose(xy[0], (0, 0)) and np.allclose(xy[-1], (3, 0))
    radius = 3 * (1 + bulge ** 2) / (4 * abs(bulge))
    sagitta = 3 / 2 * abs(bulge)
    centre_y = (sagitta - radius) * (-1 if bulge > 0 else 1)
    distances = np.hypot(xy[:, 0] - 1.5, xy[:, 1] - centre_y)
    assert np.allclose(distances, radius, rtol=1e-9)
    # analytic: a positive bulge turns counter-clockwise, so the arc lies below the chord
    assert np.sign(xy[1:-1, 1].mean()) == -np.sign(bulge)


def test_wide_polyline_is_a_band(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    msp.add_lwpolyline([(2, 4), (8, 4)], dxfattribs={"layer": "A-WALL", "const_width": 0.3})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: band 6 m x 0.3 m inside a 9.6 m x 7.6 m room
    assert plan.free_space.area == pytest.approx(9.6 * 7.6 - 6 * 0.3, abs=1e-6)
    assert shapely.Point(5, 4).within(plan.regions["wall"])


@pytest.mark.parametrize("ccw", [True, False])
def test_hatch_arc_edges_keep_the_chord_tolerance(tmp_path, ccw):
    # analytic: a 10 m half disc drawn as a hatch edge path (one arc edge, one line edge);
    # the flattening's vertices lie on the circle and the chords cut off less than
    # tolerance * arc length, as for polylines. A cubic Bezier per quarter circle would
    # miss the circle by 2.7e-4 r = 2.7 mm (source: the classic 4/3 tan(theta/4) handle
    # length, error 2.7e-4 of the radius for 90 degrees; from memory).
    radius, tolerance = 10.0, 0.001
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, -20, -20, 20, 20)
    hatch = msp.add_hatch(dxfattribs={"layer": "A-AREA-KEEPOUT"})
    edges = hatch.paths.add_edge_path()
    if ccw:        # upper half, traversed counter-clockwise from (10, 0)
        edges.add_arc((0, 0), radius, 0, 180, ccw=True)
        edges.add_line((-radius, 0), (radius, 0))
    else:          # lower half, traversed clockwise from (-10, 0)
        edges.add_line((-radius, 0), (radius, 0))
        edges.add_arc((0, 0), radius, 180, 360, ccw=False)
    plan = read_floorplan(save(doc, tmp_path), chord_tolerance=tolerance)
    keepout = plan.regions["keepout"]
    exact = math.pi * radius ** 2 / 2
    assert exact - tolerance * math.pi * radius <= keepout.area <= exact
    xy = shapely.get_coordinates(keepout)
    on_arc = np.abs(xy[:, 1]) > 1e-6
    assert np.abs(np.hypot(*xy[on_arc].T) - radius).max() <= 1e-4   # 0.1 mm coordinate snap
    assert (xy[:, 1] >= -1e-9).all() if ccw else (xy[:, 1] <= 1e-9).all()
