"""Unit factors against their published definitions, and the unit decision."""

from fractions import Fraction

import numpy as np
import pytest

from clearway.converter import UNITS_TO_M, read_floorplan
from clearway.converter.evidence import Evidence, decide_from_content
from clearway.converter.units import decide_units
from tests.conftest import new_drawing, save, walled_room


def test_inch_and_foot_match_the_1959_definitions():
    # exact by definition: 1 yd = 0.9144 m, 1 ft = 1/3 yd, 1 in = 1/12 ft
    # (international yard and pound agreement, 1959)
    yard = Fraction("0.9144")
    assert Fraction(UNITS_TO_M["yd"]).limit_denominator(10**6) == yard
    assert Fraction(UNITS_TO_M["ft"]).limit_denominator(10**6) == yard / 3
    assert Fraction(UNITS_TO_M["in"]).limit_denominator(10**6) == yard / 36
    # SI prefixes: milli = 1e-3, centi = 1e-2 (SI Brochure, 9th ed., table 7)
    assert UNITS_TO_M["mm"] == 1e-3 and UNITS_TO_M["cm"] == 1e-2 and UNITS_TO_M["m"] == 1.0


def test_header_units_and_override():
    # DXF reference, $INSUNITS: 1 = inches, 4 = millimetres
    assert decide_units(1, None, 100.0, source="a.dxf")[:2] == ("in", 0.0254)
    units, factor, note, warnings = decide_units(4, "ft", 100.0, source="a.dxf")
    assert (units, factor, warnings) == ("ft", 0.3048, ())
    assert "--units ft" in note


def test_unitless_drawing_with_millimetre_extents_is_read_in_mm_with_a_warning():
    # common practice: a 60 m building drawn in mm spans 60000 units; 60 km is no building
    units, factor, note, warnings = decide_units(0, None, 60000.0, source="a.dxf")
    assert (units, factor) == ("mm", 0.001)
    assert note.startswith("Assumed mm") and "60.0 m in mm" in note
    assert len(warnings) == 1 and "read it as mm, its likely unit" in warnings[0]
    # a plausible span in metres stays metres, with no warning
    assert decide_units(0, None, 60.0, source="a.dxf")[:2] + (decide_units(
        0, None, 60.0, source="a.dxf")[3],) == ("m", 1.0, ())
    # a span no unit makes plausible stays metres and says so (the extent limit refuses it)
    units, _, _, warnings = decide_units(0, None, 1e9, source="a.dxf")
    assert units == "m" and warnings and warnings[0].endswith("pass --units")


def test_inch_drawing_is_converted_to_metres(tmp_path):
    doc = new_drawing(1)
    walled_room(doc.modelspace(), 0, 0, 400, 300, thickness=8)
    plan = read_floorplan(save(doc, tmp_path))
    # exact by definition: 1 in = 0.0254 m
    assert plan.units == "in" and plan.m_per_unit == 0.0254
    assert plan.extents == pytest.approx((0, 0, 400 * 0.0254, 300 * 0.0254), abs=1e-4)
    assert plan.free_space.area == pytest.approx(384 * 284 * 0.0254 ** 2, rel=1e-6)


def test_units_option_overrides_the_header(tmp_path):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10000, 8000, thickness=200)
    plan = read_floorplan(save(doc, tmp_path), units="mm")
    assert plan.extents == pytest.approx((0, 0, 10, 8), abs=1e-4)
    assert "--units mm" in plan.unit_note


def test_door_swings_are_the_arcs_hinged_on_the_walls(tmp_path):
    """A plan drawn in mm under an inch header, with more small quarter arcs in its fittings
    (basins, bubbles: 45 units, a door leaf's size in inches) than door swings (900 units,
    hinged on a jamb). Only arcs centred on the walls' linework speak for doors: the plan is
    read in mm. common practice"""
    from tests.conftest import new_drawing, save, walled_room
    from clearway.converter import read_floorplan

    doc = new_drawing(1)                                  # says inches; drawn in mm
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 12000, 8000, thickness=200)
    for k in range(4):                                    # leaves hinged on the inner face
        msp.add_arc((2000 + 2500 * k, 200), 900, 0, 90, dxfattribs={"layer": "A-DOOR"})
    for k in range(30):                                   # fittings' arcs, 1.5 m from walls
        x, y = 1700 + 300 * (k % 30), 3000 + 200 * (k % 5)
        msp.add_arc((x, y), 45, 0, 90, dxfattribs={"layer": "FITTINGS"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: 0.9 m leaves and 0.2 m walls in mm; 22.9 m leaves and 5 m walls in inches
    assert plan.units == "mm", plan.unit_note


def test_an_unsettled_content_leans_away_from_metres_that_make_the_plan_too_large():
    # analytic: 40-unit faces are 0.40 m walls in cm, 1.02 m in inches (too thick); 100-unit
    # faces 1.0 m in cm (too thick), 0.10 m in mm; a 2,500-unit plan is 2.5 km in metres,
    # 25 m in cm, 2.5 m in mm (too small for a plan, PLAN_SPAN_M)
    walls = Evidence("wall thickness", np.array([40, 40, 40, 100, 100], dtype=float), 1.0)
    unit, source, note, _, warnings = decide_from_content(
        None, None, [walls, Evidence("extent", np.array([2500.0]), 1.0)], source="plan.dxf")
    assert (unit, source) == ("cm", "content")
    assert "not in metres (the plan 2500 m across)" in warnings[0]
    # the same content on a plan 1,500 units across: 1.5 km in metres is not ruled out, and
    # nothing settles the unit: assumed, as before
    assert decide_from_content(None, None, [walls, Evidence("extent", np.array([1500.0]), 1.0)],
                               source="plan.dxf")[:2] == (None, "assumed")
    # the plan's size alone never decides
    assert decide_from_content(None, None, [Evidence("extent", np.array([2500.0]), 1.0)],
                               source="plan.dxf")[:2] == (None, "assumed")
