"""Drawings made the way other offices draw: door swings on the wall layer, single-line walls."""

import re

import ezdxf
import pytest
import shapely

from clearway.converter import read_floorplan
from tests.conftest import new_drawing, save, walled_room

WALL = "A-WALL"


def test_door_swing_arc_on_the_wall_layer_leaves_the_doorway_open(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 20, 12)
    # partition 0.2 m thick at x = 9.9..10.1 with a 0.9 m doorway at y = 5..5.9
    msp.add_lwpolyline([(9.9, 0.2), (9.9, 5), (10.1, 5), (10.1, 0.2)], dxfattribs={"layer": WALL})
    msp.add_lwpolyline([(9.9, 11.8), (9.9, 5.9), (10.1, 5.9), (10.1, 11.8)],
                       dxfattribs={"layer": WALL})
    msp.add_line((10.1, 5), (11.0, 5), dxfattribs={"layer": WALL})  # leaf, open 90 degrees
    msp.add_arc((10.1, 5), 0.9, 0, 90, dxfattribs={"layer": WALL})   # its swing
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the swing is a leaf's path, not a wall: both rooms form one free component
    assert len(plan.free_space.geoms) == 1
    # analytic: walls 240 - 19.6 * 11.6 = 12.64, partition 0.2 * (11.6 - 0.9) = 2.14, leaf band
    # 0.9 x 0.05 plus its round caps (< 0.002); the arc adds nothing
    assert plan.regions["wall"].area == pytest.approx(12.64 + 2.14 + 0.045, abs=0.003)


def test_large_arc_on_the_wall_layer_stays_a_wall(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    # single-line outline: three sides and a half-circle of radius 5 m closing the north side
    msp.add_lwpolyline([(10, 0), (10, -5), (0, -5), (0, 0)], dxfattribs={"layer": WALL})
    msp.add_arc((5, 0), 5, 0, 180, dxfattribs={"layer": WALL})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: a 10 x 5 rectangle plus a half disc of radius 5 (39.27 m2), enclosed, no leak,
    # less the inner half (0.025 m) of the nominal band along the 35.71 m outline (0.89 m2)
    assert plan.leaks == ()
    assert plan.free_space.area == pytest.approx(50 + 39.27 - 0.89, abs=0.05)


def test_open_gap_in_single_line_walls_is_named_and_closed(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    msp.add_lwpolyline([(8, 0), (0, 0), (0, 12), (20, 12), (20, 0), (9.5, 0)],
                       dxfattribs={"layer": WALL})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: one 1.5 m opening centred at (8.75, 0); the 0.05 m band's cap at the far end
    # narrows it to 1.475; nothing is drawn in it, so it is an open exterior gap, closed
    [gap] = plan.openings
    assert (gap.kind, gap.exterior) == ("open", True)
    assert (gap.x, gap.y) == pytest.approx((8.75, 0.0), abs=0.05)
    assert 1.4 <= gap.width <= 1.55
    assert not plan.leaks
    assert any("gap with nothing drawn in it" in warning for warning in plan.warnings)
    # analytic: the floor inside the outline, less the bands' inner halves (0.025 m)
    assert plan.free_space.area == pytest.approx(19.95 * 11.95, rel=2e-3)


def test_door_swing_in_feet(tmp_path):
    doc = new_drawing(2)
    msp = doc.modelspace()
    f = 1 / 0.3048
    walled_room(msp, 0, 0, 20 * f, 12 * f, thickness=0.2 * f)
    msp.add_lwpolyline([(9.9 * f, 0.2 * f), (9.9 * f, 5 * f), (10.1 * f, 5 * f), (10.1 * f, 0.2 * f)],
                       dxfattribs={"layer": "a-wall"})
    msp.add_lwpolyline([(9.9 * f, 11.8 * f), (9.9 * f, 5.9 * f), (10.1 * f, 5.9 * f),
                        (10.1 * f, 11.8 * f)], dxfattribs={"layer": "a-wall"})
    msp.add_arc((10.1 * f, 5 * f), 0.9 * f, 0, 90, dxfattribs={"layer": "a-wall"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: ft -> 0.3048 m exactly (1959 agreement); the swing (0.9 m) leaves one component
    assert plan.units == "ft"
    assert len(plan.free_space.geoms) == 1
    assert shapely.area(plan.free_space) == pytest.approx(19.6 * 11.6 - 2.14, abs=0.02)


@pytest.mark.parametrize("codec, wall, window", [("cp932", "壁", "窓"), ("gbk", "墙体", "窗")])
def test_r12_drawing_with_layer_names_in_a_local_code_page(tmp_path, codec, wall, window):
    """DXF R12 from a Japanese or Chinese drafting program: layer names in the machine's code
    page (Shift-JIS, GBK) and no $DWGCODEPAGE in the header, which makes ezdxf read them as
    Western European text. They are read in the code page under which they name roles, so
    the walls are found on their own layer and the plan's millimetres are not taken for
    inches."""
    doc = ezdxf.new("R12")
    msp = doc.modelspace()
    for x0, y0, x1, y1 in ((0, 0, 8000, 6000), (200, 200, 7800, 5800)):  # 0.2 m walls, mm
        corners = [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]
        for start, end in zip(corners, corners[1:] + corners[:1]):
            msp.add_line(start, end, dxfattribs={"layer": wall})
    msp.add_line((3000, 0), (4200, 0), dxfattribs={"layer": window})       # glazing line
    msp.add_line((0, 0), (8000, 6000), dxfattribs={"layer": "NOTES"})      # not a wall
    path = tmp_path / "plan.dxf"
    doc.saveas(path, encoding=codec)
    # the header names no code page
    path.write_bytes(re.sub(rb"  9\r?\n\$DWGCODEPAGE\r?\n  3\r?\n[^\r\n]*\r?\n", b"",
                            path.read_bytes()))
    assert b"$DWGCODEPAGE" not in path.read_bytes()
    plan = read_floorplan(path)
    # analytic: the room inside 0.2 m walls, in millimetres: 7.6 m x 5.6 m
    assert plan.units == "mm", plan.unit_note
    assert plan.free_space.area == pytest.approx(7.6 * 5.6, rel=1e-6)
    assert not any("no layer is named as walls" in warning for warning in plan.warnings)


def _masonry_house(tmp_path, labels):
    """Two rooms behind 0.7 m masonry walls, drawn in metres under a header that says mm
    ($INSUNITS = 4, a template's default), each room outlined on an area layer and labelled
    with `labels` (text, x, y) as CAD area tags are."""
    doc = new_drawing(4)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 12, 8, thickness=0.7)
    msp.add_lwpolyline([(4.85, 0.7), (5.15, 0.7), (5.15, 7.3), (4.85, 7.3)], close=True,
                       dxfattribs={"layer": WALL})
    for x0, x1 in ((0.7, 4.85), (5.15, 11.3)):
        msp.add_lwpolyline([(x0, 0.7), (x1, 0.7), (x1, 7.3), (x0, 7.3)], close=True,
                           dxfattribs={"layer": "A-AREA"})
    for text, x, y in labels:
        msp.add_text(text, dxfattribs={"layer": "A-AREA-IDEN", "insert": (x, y), "height": 0.2})
    return read_floorplan(save(doc, tmp_path))


# analytic: the rooms' floors are 4.15 m x 6.6 m = 27.39 m² and 6.15 m x 6.6 m = 40.59 m²
ROOM_AREAS = [("mq=27.39", 2.0, 4.0), ("40,59 m\u00b2", 8.0, 4.0)]


def test_room_area_texts_overrule_a_header_that_says_mm(tmp_path):
    plan = _masonry_house(tmp_path, ROOM_AREAS)
    # walls 0.7 m thick say feet as well as metres (0.21 m in ft is a common wall, 0.7 m a
    # rare one); the stated areas fit the outlines only in metres
    assert (plan.units, plan.unit_source) == ("m", "content")
    assert any("2 room-area texts give 1 x this unit" in warning and "header says mm" in warning
               for warning in plan.warnings)
    assert "area text: mm 0%, cm 0%, m 100%, in 0%, ft 0%" in plan.unit_evidence
    assert plan.free_space.area == pytest.approx(27.39 + 40.59, rel=1e-6)


@pytest.mark.parametrize("labels", [ROOM_AREAS[:1],                     # one may be chance
                                    [(t, x, y + 10.0) for t, x, y in ROOM_AREAS]])  # outside
def test_one_area_text_or_texts_outside_their_rooms_decide_nothing(tmp_path, labels):
    plan = _masonry_house(tmp_path, labels)
    assert not any(line.startswith("area text") for line in plan.unit_evidence)
    assert plan.units != "m"


def _flat_in_inches(tmp_path, labels):
    """Two rooms behind 12 in walls, drawn in inches with no unit in the header, labelled
    with `labels` (text, x, y) as plans exported from floor scanners and estate agents'
    plans give each room's clear width x depth."""
    doc = new_drawing(0)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 350, 172, thickness=12)
    msp.add_lwpolyline([(182, 12), (194, 12), (194, 160), (182, 160)], close=True,
                       dxfattribs={"layer": WALL})
    for text, x, y in labels:
        msp.add_text(text, dxfattribs={"layer": "A-ANNO-TEXT", "insert": (x, y), "height": 6})
    return read_floorplan(save(doc, tmp_path))


# analytic: the rooms' clear spans are 170 in x 148 in (14'2" x 12'4") and 144 in x 148 in
ROOM_SIZES = [("14'2'' x 12'4''", 90.0, 86.0), ("12'0\" x 12'4\"", 260.0, 86.0)]


def test_room_size_texts_decide_a_unit_the_walls_leave_open(tmp_path):
    # walls 12 units thick are 0.12 m in cm and 0.30 m in inches, both common: the walls
    # alone read the plan in cm; the stated sizes fit the rooms' spans only in inches
    assert _flat_in_inches(tmp_path, []).units == "cm"
    plan = _flat_in_inches(tmp_path, ROOM_SIZES)
    assert (plan.units, plan.unit_source) == ("in", "content")
    assert "size text: mm 0%, cm 0%, m 0%, in 100%, ft 0%" in plan.unit_evidence
    assert any("2 room-size texts give 1 x this unit" in warning for warning in plan.warnings)


def test_size_texts_that_fit_no_room_decide_nothing(tmp_path):
    # the same texts placed in a room twice their size: no side implies a unit
    plan = _flat_in_inches(tmp_path, [("28'4'' x 24'8''", 90.0, 86.0),
                                      ("24'0\" x 24'8\"", 260.0, 86.0)])
    assert plan.units == "cm"
    assert "size text: mm 0%, cm 0%, m 0%, in 0%, ft 0%" in plan.unit_evidence
