"""Warehouse drawings drawn the way other offices draw them (new-user audit)."""

import json

import numpy as np
import shapely
import pytest
from click.testing import CliRunner

from clearway.cli import main
from clearway.converter import read_floorplan
from clearway.converter.evidence import (Evidence, decide_from_content, header_evidence,
                                         plausibility)
from tests.conftest import new_drawing, rectangle, save, walled_room


def test_station_labels_do_not_name_the_hall(tmp_path):
    """A charger's text label and a dock's label attribute name their stations, not the
    room they stand in; the hall keeps the name written on the annotation layer."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # one hall, 0.2 m walls
    charger = doc.blocks.new("CHG")
    charger.add_circle((0, 0), 0.3)
    dock = doc.blocks.new("DOCK_STN")
    dock.add_lwpolyline([(-0.4, -0.4), (0.4, -0.4), (0.4, 0.4), (-0.4, 0.4)], close=True)
    dock.add_attdef("ID", (0, 0.6), height=0.2)
    # common practice: the charger's number written beside it on the chargers' layer
    msp.add_blockref("CHG", (25, 17), dxfattribs={"layer": "CHARGERS"})
    msp.add_text("C1", dxfattribs={"layer": "CHARGERS", "height": 0.3, "insert": (25, 17.5)})
    msp.add_blockref("DOCK_STN", (5, 2), dxfattribs={"layer": "DOCKING"}).add_auto_attribs(
        {"ID": "D1"})
    msp.add_text("PICKING HALL", dxfattribs={"layer": "A-ANNO-TEXT", "height": 0.5,
                                             "insert": (12, 10)})
    result = CliRunner().invoke(main, ["build", str(save(doc, tmp_path)), "-o",
                                       str(tmp_path / "out"), "--quiet"])
    assert result.exit_code == 0, result.output
    report = json.loads((tmp_path / "out" / "report.json").read_text())
    assert sorted(station["label"] for station in report["stations"]) == ["C1", "D1"]
    # analytic: one closed hall, one room, named by the one text that is no station's label
    assert [room["names"] for room in report["rooms"]] == [["PICKING HALL"]]


def _us_warehouse(header):
    """A 200 ft x 120 ft warehouse drawn in inches with no $INSUNITS: 8 in block walls, the
    south wall broken by eight 9 ft dock doors 12 ft on centre (3 ft piers between them)."""
    doc = new_drawing(0)
    for key, value in header.items():
        doc.header[key] = value
    msp = doc.modelspace()
    width, depth, wall = 2400.0, 1440.0, 8.0
    edges = [0.0]
    for k in range(8):
        edges += [300.0 + 144 * k, 408.0 + 144 * k]
    edges.append(width)
    for x0, x1 in zip(edges[0::2], edges[1::2]):
        msp.add_lwpolyline(rectangle(x0, 0, x1, wall), close=True, dxfattribs={"layer": "WALLS"})
    msp.add_lwpolyline(rectangle(0, depth - wall, width, depth), close=True,
                       dxfattribs={"layer": "WALLS"})
    for x0 in (0.0, width - wall):
        msp.add_lwpolyline(rectangle(x0, wall, x0 + wall, depth - wall), close=True,
                           dxfattribs={"layer": "WALLS"})
    return doc


@pytest.mark.parametrize("header", [
    {"$MEASUREMENT": 0},                 # common practice: a drawing begun on an imperial template
    {"$LUNITS": 4, "$MEASUREMENT": 1},   # common practice: architectural units, feet and inches
])
def test_imperial_header_settings_decide_inches_when_insunits_is_unset(tmp_path, header):
    plan = read_floorplan(save(_us_warehouse(header), tmp_path))
    assert plan.units == "in" and plan.unit_source == "content"
    # exact by definition: 1 in = 0.0254 m, so 2400 in = 60.96 m and 1440 in = 36.576 m
    x0, y0, x1, y1 = plan.extents
    assert (x1 - x0, y1 - y0) == pytest.approx((60.96, 36.576))


def test_8_unit_walls_read_as_inches_not_centimetres():
    # 8 units are 0.2032 m in inches (exact by definition), a block wall, and 0.08 m in cm,
    # thinner than most built walls (common practice: a stud partition with a board each
    # side is about 0.1 m); both lie in the wide range, so cm counts half
    thickness = Evidence("wall thickness", np.full(12, 8.0), 1.0)
    assert plausibility(thickness, "in") == 1.0 and plausibility(thickness, "cm") == 0.5
    extent = Evidence("extent", np.array([2400.0]), 1.0)
    assert decide_from_content(None, None, [thickness, extent], source="a.dxf")[0] == "in"
    # the imperial system alone (no measurement of the content) decides nothing
    imperial = header_evidence({"$MEASUREMENT": 0, "$LUNITS": 2})
    assert decide_from_content(None, None, [extent, *imperial], source="a.dxf")[0] is None


def test_units_the_content_fits_alike_are_named_in_the_warning():
    # 12-unit walls: 0.12 m in cm and 0.3048 m in inches, both typical; the drawing is
    # read in the first candidate and the warning says what inches would make of it
    thickness = Evidence("wall thickness", np.full(12, 12.0), 1.0)
    extent = Evidence("extent", np.array([2400.0]), 1.0)
    unit, _, note, _, (warning,) = decide_from_content(None, None, [thickness, extent],
                                                       source="a.dxf")
    assert unit == "cm"
    assert "in in it reads just as well" in warning and "0.30 m" in warning
    assert "in in it reads just as well" in note

    # the same content under a millimetre header: 12 mm walls and a 2.4 m plan are no
    # building, and inches are named beside the centimetres it is read in
    unit, source, note, _, (warning,) = decide_from_content("mm", None, [thickness, extent],
                                                            source="a.dxf")
    assert (unit, source) == ("cm", "content")
    assert "in in it reads just as well" in warning and "0.30 m" in note


@pytest.mark.parametrize("header", [6, None])
def test_a_plan_drawn_in_mm_under_a_metre_header_is_read_in_mm(tmp_path, header):
    """A template header in metres on a plan drawn in mm: four rooms side by side, two with
    250 mm walls and two with 60 mm partitions. In metres the plan is 32 km across and its
    walls 60 and 250 m thick; in mm, 32 m and 0.06 and 0.25 m (the 60 mm partitions, thinner
    than most walls, count half: common practice, evidence.TYPICAL_WALL_M)."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    for k, thickness in enumerate((250.0, 60.0, 60.0, 250.0)):
        walled_room(msp, k * 8000.0, 0.0, k * 8000.0 + 8000.0, 6000.0, thickness=thickness)
    if header is None:              # the same plan with the metre header overruled by hand
        plan = read_floorplan(save(doc, tmp_path), units="mm")
    else:
        plan = read_floorplan(save(doc, tmp_path))
        assert plan.unit_source == "content" and plan.units == "mm", plan.unit_note
        assert plan.unit_note.startswith("Read in mm from the drawing's content (the header "
                                         "says m, but in m walls 60.00 m-250 m thick")
    # analytic: the four rooms' floors inside their walls, in square metres
    inside = 2 * (8 - 0.5) * (6 - 0.5) + 2 * (8 - 0.12) * (6 - 0.12)
    assert plan.free_space.area == pytest.approx(inside, rel=1e-6)


def test_us_dock_wall_without_door_swings_is_read_in_inches_and_closed(tmp_path):
    """The dock wall of _us_warehouse with each overhead door drawn as one line across on a
    door layer, $MEASUREMENT 1 (a metric template) and no door swing anywhere."""
    doc = _us_warehouse({"$MEASUREMENT": 1})
    msp = doc.modelspace()
    for k in range(8):
        # common practice: an overhead door drawn shut, one line across the opening
        msp.add_line((300.0 + 144 * k, 0.0), (408.0 + 144 * k, 0.0),
                     dxfattribs={"layer": "A-DOOR"})
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.units == "in"
    docks = [o for o in plan.openings if o.exterior]
    # 9 ft doors between 3 ft piers (0.91 m x 0.20 m, smaller than a wall piece): every
    # door is an opening closed to the outside, none a leak
    assert len(docks) == 8 and not plan.leaks
    assert all(o.kind == "closed" for o in docks)
    # exact by definition: 108 in = 2.7432 m
    assert [o.width for o in docks] == pytest.approx([2.7432] * 8, abs=2e-3)


def test_column_grid_lines_do_not_cut_the_hall_into_cells(tmp_path):
    """Grid lines on a layer named for the column grid cross the whole hall and run past its
    walls; as walls they cut a 30 m x 20 m hall into 12 unreachable cells."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls
    for x in range(0, 31, 10):  # common practice: grid lines run past the building
        msp.add_line((x, -3), (x, 23), dxfattribs={"layer": "COLUMN-GRID"})
        msp.add_circle((x, 24), 0.8, dxfattribs={"layer": "COLUMN-GRID"})  # grid bubble
    for y in range(0, 21, 5):
        msp.add_line((-3, y), (33, y), dxfattribs={"layer": "COLUMN-GRID"})
    for x, y in ((10, 10), (20, 10)):  # 0.4 m square columns on the column layer
        msp.add_lwpolyline(rectangle(x - 0.2, y - 0.2, x + 0.2, y + 0.2), close=True,
                           dxfattribs={"layer": "COLUMNS"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: one hall, 29.6 m x 19.6 m inside the walls, less two 0.4 m x 0.4 m columns
    assert len(shapely.get_parts(plan.free_space)) == 1
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 2 * 0.16, rel=1e-3)
    assert plan.regions["wall"].contains(shapely.Point(10, 10))
    assert [layer.name for layer in plan.left_out if layer.ignored] == ["COLUMN-GRID"]


def test_floor_striping_is_not_guessed_for_walls(tmp_path):
    """No layer is named for walls; the shell's two faces are on BLDG-SHELL, and painted aisle
    lines (pairs of lines 0.1 m apart) on STRIPING outnumber them: the shell is the wall."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    for ring in (rectangle(0, 0, 50, 30), rectangle(0.25, 0.25, 49.75, 29.75)):
        for start, end in zip(ring, ring[1:] + ring[:1]):
            msp.add_line(start, end, dxfattribs={"layer": "BLDG-SHELL"})
    for y in (4.0, 9.4, 14.8, 20.2):
        msp.add_lwpolyline(rectangle(6, y, 40, y + 2.4), close=True, dxfattribs={"layer": "RACKS"})
        for stripe in (y - 0.5, y + 2.9):  # common practice: 100 mm aisle tape, both edges drawn
            msp.add_line((5, stripe), (41, stripe), dxfattribs={"layer": "STRIPING"})
            msp.add_line((5, stripe + 0.1), (41, stripe + 0.1), dxfattribs={"layer": "STRIPING"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside the shell, 49.5 m x 29.5 m, less four 34 m x 2.4 m racks
    assert plan.free_space.area == pytest.approx(49.5 * 29.5 - 4 * 34 * 2.4, rel=1e-3)
    assert "STRIPING" in [layer.name for layer in plan.left_out]


@pytest.mark.parametrize("layer", ["RACK-CLEAR-AISLE", "SPRINKLER-RACK", "E-LITE-RACK",
                                   "RACK LIGHTING"])
def test_aisle_outlines_and_overhead_services_named_for_racks_are_not_racking(tmp_path, layer):
    """A closed outline of the aisle between two rack rows, or sprinkler and light runs above
    it, on layers whose names hold the word RACK: none is an obstacle on the floor (an aisle
    is floor; sprinklers and lights hang overhead). common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls
    for y in (4.0, 9.0):  # two rack rows 2.4 m deep, a 2.6 m aisle between them
        msp.add_lwpolyline(rectangle(5, y, 25, y + 2.4), close=True, dxfattribs={"layer": "RACKS"})
    msp.add_lwpolyline(rectangle(5, 6.4, 25, 9.0), close=True, dxfattribs={"layer": layer})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside its walls (29.6 m x 19.6 m) less the two rows (20 m x 2.4 m)
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 2 * 20 * 2.4, rel=1e-6)
    assert plan.free_space.contains(shapely.Point(15, 7.7))  # the middle of the aisle
    assert [left.name for left in plan.left_out if left.ignored] == [layer]


def test_a_keep_out_zone_named_after_an_aisle_stays_a_keep_out_zone(tmp_path):
    """The aisle words leave only racking out: a keep-out zone drawn on a layer that names
    both the racking's aisle and the keep-out keeps its role (a robot must never be routed
    through it)."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls
    msp.add_lwpolyline(rectangle(10, 5, 20, 10), close=True,
                       dxfattribs={"layer": "RACK-AISLE-KEEPOUT"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the 10 m x 5 m zone is left out of the free floor
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 50.0, rel=1e-6)
    assert not plan.free_space.contains(shapely.Point(15, 7.5))


def _rooms_in_mm(tmp_path, insunits):
    """Three 8 m x 6 m rooms side by side, drawn in mm with 250 mm walls."""
    doc = new_drawing(insunits)
    msp = doc.modelspace()
    for k in range(3):
        walled_room(msp, k * 8000.0, 0.0, k * 8000.0 + 8000.0, 6000.0, thickness=250.0)
    return save(doc, tmp_path)


def test_a_header_the_walls_contradict_is_kept_but_said(tmp_path):
    # drawn in mm, the header says cm: 250 units are 2.5 m in cm, thicker than any wall
    # (common practice: 0.08-0.5 m, masonry up to 0.8 m) and 0.25 m in mm; the walls alone
    # do not overrule a header, but the build says so
    path = _rooms_in_mm(tmp_path, 5)
    plan = read_floorplan(path)
    assert plan.units == "cm" and plan.unit_source == "header"
    assert plan.unit_doubt.startswith("the header says cm: walls 2.50 m")
    assert plan.unit_doubt.endswith("pass --units mm if the header is wrong")
    result = CliRunner().invoke(main, ["build", str(path), "-o", str(tmp_path / "out")])
    assert result.exit_code == 0, result.output
    assert "units: the header says cm" in result.output


def test_a_header_the_walls_agree_with_is_not_doubted(tmp_path):
    plan = read_floorplan(_rooms_in_mm(tmp_path, 4))
    assert plan.units == "mm" and plan.unit_doubt == ""


@pytest.mark.parametrize("layer", ["A-EQPM", "MACHINES", "CONVEYOR", "PLAN$0$Q-EQPM-FIXD"])
def test_machines_on_an_equipment_layer_are_kept_out(tmp_path, layer):
    # common practice: floor-standing machines drawn as blocks on an equipment layer (US
    # National CAD Standard A-EQPM) with nothing else marking them; lanes used to run
    # through them
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 24, 12)
    machine = doc.blocks.new("CNC-3000x2000")
    machine.add_lwpolyline(rectangle(0, 0, 3, 2), close=True)
    machine.add_circle((1.5, 1.0), 0.5)
    msp.add_blockref("CNC-3000x2000", (10.5, 5.0), dxfattribs={"layer": layer})
    path = save(doc, tmp_path)
    plan = read_floorplan(path)
    # analytic: one 3 m x 2 m machine
    assert plan.obstacles["keepout"].area == pytest.approx(6.0, abs=1e-6)
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["build", str(path), "-o", str(out), "-q"])
    assert result.exit_code == 0, result.output
    lanes = [shapely.geometry.shape(feature["geometry"]) for feature in
             json.loads((out / "roadmap.geojson").read_text())["features"]
             if feature["geometry"]["type"] == "LineString"]
    assert lanes and not any(lane.intersects(shapely.box(10.5, 5.0, 13.5, 7.0)) for lane in lanes)


@pytest.mark.parametrize("name, role", [
    ("A-EQPM-STATION", "station"),      # docking points on an equipment layer stay stations
    ("A-EQPM-STN", "station"),
    ("A-EQPM-RACK", "racking"),
    ("EQUIPMENT-KEEPOUT", "keepout"),
    ("CONVEYOR-OVHD", None),             # overhead, like every OVHD layer
    ("STN", "station"),                  # a station layer named by the abbreviation alone
    ("AMR_STN", "station"),
    ("DESTN", None),
    ("E-EQPM-CHRG", "station"),          # chargers abbreviated CHRG as well as CHGR
    ("KEEP OUT", "keepout"),             # the words with a space, as typed in plain names
    ("NO GO ZONE", "keepout"),
    ("SHELF", "racking"),                # the singular, and its abbreviation: A-FURN-SHLF
    ("A-FURN-SHLF", "racking"),
])
def test_equipment_and_station_words(name, role):
    # source: US National CAD Standard layer names (A-EQPM, -STN) and common practice
    from clearway.converter.roles import Roles
    assert Roles().role_of(name) == role


def test_rack_bays_decide_inches_against_a_millimetre_header(tmp_path):
    """A US warehouse drawn in inches whose template header says mm: a block wall drawn as a
    polyline 8 units wide (no wall faces to measure), columns 12 units square, and rows of
    pallet-rack bays 108 x 42 units. In mm the hall would be 2.9 m long."""
    doc = new_drawing(units=4)
    msp = doc.modelspace()
    hall = rectangle(0, 0, 3600, 2160)                   # 300 ft x 180 ft
    msp.add_lwpolyline(hall, close=True, dxfattribs={"layer": "A-WALL", "const_width": 8})
    for i in range(1, 6):
        x = 600 * i
        msp.add_lwpolyline(rectangle(x - 6, 1074, x + 6, 1086), close=True,
                           dxfattribs={"layer": "S-COLS"})
    for row in range(4):
        y = 300 + 400 * row
        for bay in range(24):
            for side in (0, 48):                          # back to back with a 6 in flue
                msp.add_lwpolyline(rectangle(400 + 108 * bay, y + side, 508 + 108 * bay,
                                             y + side + 42), close=True,
                                   dxfattribs={"layer": "RACKING"})
    plan = read_floorplan(save(doc, tmp_path))
    # common practice (from memory): US pallet-rack frames are 36 to 48 in deep, one pallet
    # of 40 x 48 in; 42 in = 1.07 m. In mm they would be 42 mm, in cm 0.42 m
    assert plan.units == "in", plan.unit_note
    assert "rack bays 1.07 m-1.07 m deep" in plan.unit_note
    # exact by definition (1 in = 0.0254 m): the hall inside the wall's inner edge
    assert plan.free_space.bounds[2] - plan.free_space.bounds[0] == \
        pytest.approx((3600 - 8) * 0.0254, abs=0.01)


def _rows_drawn_whole(msp, scale, depth):
    """Six rack rows, each one outline 24 bays long (2.7 m a bay at `scale` units a metre)
    and `depth` units deep, with a line between bays, on layer RACKING."""
    bay = 2.7 * scale
    for row in range(6):
        x0, y = 10 * scale, 8 * scale + 6 * scale * row
        msp.add_lwpolyline(rectangle(x0, y, x0 + 24 * bay, y + depth), close=True,
                           dxfattribs={"layer": "RACKING"})
        for k in range(1, 24):
            msp.add_line((x0 + k * bay, y), (x0 + k * bay, y + depth),
                         dxfattribs={"layer": "RACKING"})


def test_rack_rows_drawn_whole_decide_inches_against_a_millimetre_header(tmp_path):
    """A US warehouse drawn in inches whose template header says mm, its walls two faces
    10 units apart and each rack row one outline 42 units deep: 10-unit walls are 0.25 m in
    inches and 0.10 m in cm, both plausible, and so is the plan either way (91 m or 36 m);
    only the rows tell the two apart."""
    doc = new_drawing(units=4)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 3600, 2160, thickness=10)
    _rows_drawn_whole(msp, 1 / 0.0254, 42)
    plan = read_floorplan(save(doc, tmp_path))
    # common practice (from memory): US pallet-rack frames are 36 to 48 in deep; 42 in =
    # 1.07 m. In cm the rows would be 0.42 m deep, in mm 42 mm
    assert plan.units == "in", plan.unit_note
    assert "rack rows 1.07 m-1.07 m deep" in plan.unit_note
    # exact by definition (1 in = 0.0254 m): the hall inside the walls' inner faces
    assert plan.free_space.bounds[2] - plan.free_space.bounds[0] == \
        pytest.approx((3600 - 20) * 0.0254, abs=0.01)


def test_rack_rows_drawn_whole_keep_a_metre_header(tmp_path):
    """The same rows in a metre plan, back to back as one outline 2.3 m deep: 0.70 m in feet
    is a plausible row too, so the rows must not outvote the header."""
    doc = new_drawing(units=6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 90, 50, thickness=0.3)
    _rows_drawn_whole(msp, 1.0, 2.3)
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.units == "m" and plan.unit_source == "header", plan.unit_note


def test_back_to_back_bays_as_one_rectangle_keep_a_metre_header(tmp_path):
    """Pairs of bays drawn as one 2.7 m x 2.3 m rectangle in a metre plan: 2.3 units is 0.70 m
    in feet, a plausible single bay, so the bays must not outvote the header."""
    doc = new_drawing(units=6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 60, 40, thickness=0.3)
    for row in range(5):
        for bay in range(15):
            msp.add_lwpolyline(rectangle(5 + 2.7 * bay, 5 + 6 * row, 7.7 + 2.7 * bay,
                                         7.3 + 6 * row), close=True,
                               dxfattribs={"layer": "RACKING"})
    plan = read_floorplan(save(doc, tmp_path))
    # common practice: two 1.1 m bays and a 0.1 m flue, 2.3 m deep as drawn
    assert plan.units == "m", plan.unit_note


@pytest.mark.parametrize("frames", ["polylines", "blocks"])
@pytest.mark.parametrize("beams", ["row", "bay"])
def test_beam_lines_between_upright_frames_fill_the_bays(tmp_path, frames, beams):
    """Racking drawn as a rack maker draws it: each upright frame a narrow rectangle across the
    row (0.1 m x 1.1 m, here also as a block), the beams as open lines along both faces, one
    line per row or one per bay. Every bay is closed by two beams and two frames: it is
    racking, not a 2.6 m x 1.1 m room of floor inside each row. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls
    frame = doc.blocks.new("UPRIGHT-FRAME")
    frame.add_lwpolyline(rectangle(0, 0, 0.1, 1.1), close=True)
    rows, bays, pitch = (4.0, 9.0, 14.0), 9, 2.7  # 9 bays: 10 frames 2.7 m apart
    for y in rows:
        xs = [3.0 + pitch * k for k in range(bays + 1)]
        for x in xs:
            if frames == "blocks":
                msp.add_blockref("UPRIGHT-FRAME", (x, y), dxfattribs={"layer": "RACKING"})
            else:
                msp.add_lwpolyline(rectangle(x, y, x + 0.1, y + 1.1), close=True,
                                   dxfattribs={"layer": "RACKING"})
        spans = [(xs[0], xs[-1] + 0.1)] if beams == "row" else [
            (x0 + 0.1, x1) for x0, x1 in zip(xs[:-1], xs[1:])]
        for x0, x1 in spans:
            for face in (y, y + 1.1):
                msp.add_line((x0, face), (x1, face), dxfattribs={"layer": "RACKING"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside its walls (29.6 m x 19.6 m) less three rows of
    # (9 x 2.7 + 0.1) m x 1.1 m
    row = (bays * pitch + 0.1) * 1.1
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - len(rows) * row, rel=1e-6)
    assert not plan.free_space.intersects(shapely.Point(3.0 + 1.4, 4.55))  # mid first bay
    assert len(shapely.get_parts(plan.free_space)) == 1


@pytest.mark.parametrize("posts, beams", [("squares", "row"), ("squares", "bay"),
                                          ("blocks", "bay"), ("circles", "row")])
def test_beam_lines_with_upright_posts_between_them_fill_the_row(tmp_path, posts, beams):
    """Racking drawn as beam lines along both faces with each upright a small post (a 0.1 m
    square, a block or a round tube) standing inside them, and nothing drawn across the row
    or at its ends: the strip between the beams is racking, not a 1.1 m corridor open at
    both ends. A 1.3 m aisle between two such rows stays floor (its posts stand outside it),
    and so does the 0.1 m flue of a back-to-back pair drawn as four beam lines. common
    practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls
    post = doc.blocks.new("POST")
    post.add_lwpolyline(rectangle(0, 0, 0.1, 0.1), close=True)
    # two single rows 1.3 m apart, then a back-to-back pair with a 0.1 m flue
    faces = [(4.0, 5.1), (6.4, 7.5), (11.0, 12.1), (12.2, 13.3)]
    xs = [3.0 + 2.7 * k for k in range(10)]  # 10 frames, 9 bays 2.7 m apart
    for front, back in faces:
        for x in xs:
            for y in (front, back - 0.1):
                if posts == "blocks":
                    msp.add_blockref("POST", (x, y), dxfattribs={"layer": "RACKING"})
                elif posts == "circles":
                    msp.add_circle((x + 0.05, y + 0.05), 0.05, dxfattribs={"layer": "RACKING"})
                else:
                    msp.add_lwpolyline(rectangle(x, y, x + 0.1, y + 0.1), close=True,
                                       dxfattribs={"layer": "RACKING"})
        spans = [(xs[0], xs[-1] + 0.1)] if beams == "row" else [
            (x0 + 0.1, x1) for x0, x1 in zip(xs[:-1], xs[1:])]
        for x0, x1 in spans:
            for y in (front, back):
                msp.add_line((x0, y), (x1, y), dxfattribs={"layer": "RACKING"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside its walls (29.6 m x 19.6 m) less four rows of
    # (9 x 2.7 + 0.1) m x 1.1 m; the aisle and the flue stay floor
    row = (9 * 2.7 + 0.1) * 1.1
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 4 * row, rel=1e-6)
    assert not plan.free_space.intersects(shapely.Point(3.0 + 1.4, 4.55))  # mid first bay
    assert plan.free_space.contains(shapely.Point(15.0, 5.75))               # mid aisle
    assert plan.free_space.contains(shapely.Point(15.0, 12.15))              # mid flue
    assert len(shapely.get_parts(plan.free_space)) == 1


def _bay_block(doc, name="PR-2700"):
    """A 2.7 m x 1.1 m pallet-rack bay as a block: four 0.08 m upright posts at its corners
    and a beam along each face through the posts' middles; no frame is drawn across it."""
    bay = doc.blocks.new(name)
    for x, y in ((0, 0), (2.62, 0), (0, 1.02), (2.62, 1.02)):
        bay.add_lwpolyline(rectangle(x, y, x + 0.08, y + 0.08), close=True)
    for y in (0.04, 1.06):
        bay.add_line((0.08, y), (2.62, y))
    return bay


@pytest.mark.parametrize("rotation", [0, 90, 33])
def test_rack_bay_blocks_of_posts_and_beams_are_racking_not_corridors(tmp_path, rotation):
    """Rack bays inserted as blocks of corner posts and beam lines, bay after bay: the space
    under the pallets is open at both ends of a row (nothing is drawn across it), and read
    from the linework alone it is a 0.94 m corridor a robot would be sent along. The block
    says it is one bay: its footprint is racking. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, -40, -40, 40, 40)  # 0.2 m walls
    _bay_block(doc)
    rotate = shapely.affinity.rotate
    rows = []
    for y in (0.0, 1.2, 4.2):          # a back-to-back pair (0.1 m flue), a 1.9 m aisle, a row
        for k in range(8):
            point = rotate(shapely.Point(-10.8 + 2.7 * k, y), rotation, origin=(0, 0))
            msp.add_blockref("PR-2700", (point.x, point.y),
                             dxfattribs={"layer": "A-RACK", "rotation": rotation})
        rows.append(rotate(shapely.box(-10.8, y, 10.8, y + 1.1), rotation, origin=(0, 0)))
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside its walls (79.6 m)^2 less three rows of 8 x 2.7 m x 1.1 m
    assert plan.free_space.area == pytest.approx(79.6 ** 2 - 3 * 21.6 * 1.1, rel=1e-6)
    for row in rows:
        assert not plan.free_space.intersects(row.centroid)            # under the pallets
    aisle = rotate(shapely.Point(0.0, 3.2), rotation, origin=(0, 0))   # mid aisle
    flue = rotate(shapely.Point(0.0, 1.15), rotation, origin=(0, 0))   # mid flue
    assert plan.free_space.contains(aisle) and plan.free_space.contains(flue)


def test_a_block_of_several_rows_keeps_its_aisles(tmp_path):
    """A block holding two rows and the 2.9 m aisle between them is wider than a rack each
    way: its hull would swallow the aisle, so only its own linework counts (the rows then
    read as beam pairs with posts on their faces, and the aisle stays floor)."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 40, 30)
    _bay_block(doc)
    pair = doc.blocks.new("TWO-ROWS")
    for y in (0.0, 4.0):
        for k in range(6):
            pair.add_blockref("PR-2700", (2.7 * k, y))
    msp.add_blockref("TWO-ROWS", (5.0, 10.0), dxfattribs={"layer": "A-RACK"})
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.free_space.contains(shapely.Point(13.0, 12.55))        # mid aisle


@pytest.mark.parametrize("layer", ["A-DOOR-OVHD", "OVERHEAD DOORS"])
def test_overhead_dock_doors_close_their_openings(tmp_path, layer):
    """Dock doors drawn shut as one line across each gap, on a layer named for overhead
    doors: they are doors in the cut plane, not linework above it. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    wall = shapely.box(0, 0, 30, 20).difference(shapely.box(0.2, 0.2, 29.8, 19.8))
    gaps = [(4.0 + 5.0 * k, 6.74 + 5.0 * k) for k in range(3)]   # three 2.74 m (9 ft) doors
    for x0, x1 in gaps:
        wall = wall.difference(shapely.box(x0, 19, x1, 21))
    for ring in shapely.get_rings(shapely.get_parts(wall)):
        msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": "A-WALL"})
    for x0, x1 in gaps:
        msp.add_line((x0, 19.9), (x1, 19.9), dxfattribs={"layer": layer})
    plan = read_floorplan(save(doc, tmp_path))
    found = sorted((round(o.x, 3), o.kind, round(o.width, 3), o.exterior) for o in plan.openings)
    # analytic: each gap 2.74 m wide, centred 1.37 m past its left jamb, in the outer wall
    assert found == [(round(x0 + 1.37, 3), "closed", 2.74, True) for x0, _ in gaps]
    assert not plan.leaks
    # analytic: the hall inside its walls less the 3 mm seam by which each door's closure
    # overlaps the floor (interior.SEAM)
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 3 * 2.74 * 0.003, rel=1e-6)


def test_square_upright_posts_are_no_rack_bays_for_the_unit(tmp_path):
    """A metric warehouse with no unit in its header, its rack rows drawn as 100 mm square
    posts between beam lines and no door swings: read as bays, the posts would be 1 m deep
    in centimetres and make the 60 m hall 600 m long. Squares are posts, not bays."""
    doc = new_drawing(0)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 60000, 40000, thickness=200)
    for r in range(8):
        y = 4000 + r * 4000
        for k in range(16):
            for yy in (y, y + 1000):
                msp.add_lwpolyline(rectangle(5000 + k * 2700, yy, 5100 + k * 2700, yy + 100),
                                   close=True, dxfattribs={"layer": "RACKING"})
        for yy in (y, y + 1100):
            msp.add_line((5000, yy), (45600, yy), dxfattribs={"layer": "RACKING"})
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.units == "mm"
    # analytic: the hall inside its walls less 8 rows of (15 x 2.7 + 0.1) m x 1.1 m
    assert plan.free_space.area == pytest.approx(59.6 * 39.6 - 8 * 40.6 * 1.1, rel=1e-6)


def test_a_racking_block_smaller_than_the_snap_grid_is_no_crash(tmp_path):
    # a block of three lines 20 um across on a racking layer: its footprint collapses onto the
    # 0.1 mm grid and holds nothing; the hall stays whole (analytic: 19.6 m x 9.6 m)
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 20, 10)
    speck = doc.blocks.new("SPECK")
    for start, end in (((0, 0), (2e-5, 0)), ((0, 1e-5), (2e-5, 1e-5)), ((0, 0), (1e-5, 2e-5))):
        speck.add_line(start, end)
    msp.add_blockref("SPECK", (5, 5), dxfattribs={"layer": "A-RACK"})
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.free_space.area == pytest.approx(19.6 * 9.6, rel=1e-6)


@pytest.mark.parametrize("layer", ["RACKING", "KEEPOUT"])
@pytest.mark.parametrize("short", [0.02, 0.05, 0.07])  # gaps 0.03-0.099 m across
def test_outlines_drawn_without_snapping_are_closed(tmp_path, layer, short):
    """Rack rows and a keep-out zone drawn as four lines each whose corners stop a few
    centimetres short of each other (drawn without snapping to the corners): the outline is
    closed across each corner and its inside is left out of the floor, not a 1.1 m corridor
    inside each rack with a lane through it. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls
    rows = [(3.0, 27.0, y, y + 1.1) for y in (4.0, 8.0, 12.0)]
    for x0, x1, y0, y1 in rows:
        for a, b in (((x0 + short, y0), (x1 - short, y0)), ((x1, y0 + short), (x1, y1 - short)),
                     ((x1 - short, y1), (x0 + short, y1)), ((x0, y1 - short), (x0, y0 + short))):
            msp.add_line(a, b, dxfattribs={"layer": layer})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside its walls (29.6 m x 19.6 m) less three 24 m x 1.1 m rows,
    # each closed across its corners: four corner triangles of legs `short` stay floor
    row = 24.0 * 1.1 - 4 * short ** 2 / 2
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 3 * row, rel=1e-9)
    for _, _, y0, y1 in rows:
        assert not plan.free_space.intersects(shapely.Point(15.0, (y0 + y1) / 2))
    assert len(shapely.get_parts(plan.free_space)) == 1


def _rows_of_lines(msp, faces, x0=3.0, x1=27.0, layer="RACKING"):
    """Rack rows drawn as their long faces only: one line per face, nothing across."""
    for y in faces:
        msp.add_line((x0, y), (x1, y), dxfattribs={"layer": layer})


def test_rack_rows_drawn_as_face_lines_only_are_racking(tmp_path):
    """A block of rows drawn as their long faces only, no posts and nothing across the rows
    or at their ends: a single row with its back 0.1 m off the south wall, a double row
    drawn as one (2.4 m) between a 3 m aisle and a 1.8 m narrow aisle, a back-to-back pair
    with its 0.2 m flue drawn, a 3 m aisle and a single row facing open floor. The narrow
    aisle is narrower than the double row beside it, so no width threshold tells them
    apart; the row beside the open floor and the wide aisles do. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # 0.2 m walls: the floor inside is 0.2 .. 19.8
    _rows_of_lines(msp, [0.3, 1.4, 4.4, 6.8, 8.6, 9.7, 9.9, 11.0, 14.0, 15.1])
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside its walls less five rows 24 m long, 1.1 + 2.4 + 1.1 + 1.1
    # + 1.1 m deep; the flue, the aisles and the floor round the block stay free
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 24.0 * 6.8, rel=1e-9)
    for y in (0.85, 5.6, 9.15, 10.45, 14.55):                    # inside each row
        assert not plan.free_space.intersects(shapely.Point(15.0, y))
    for y in (2.9, 7.7, 9.8, 12.5, 17.0):                        # aisles, flue, open floor
        assert plan.free_space.contains(shapely.Point(15.0, y))
    assert len(shapely.get_parts(plan.free_space)) == 1


def test_a_long_row_facing_two_shorter_rows_across_an_aisle(tmp_path):
    """A single row's face lines run the whole length (x 3 to 27 m); across a 1.8 m aisle
    two double rows drawn as one (2.4 m) stand end to end with a 2 m cross aisle between
    them (x 3 to 14 m and 16 to 27 m): the long face has two neighbours on its aisle side,
    both aisle. Every row is racking and both aisles stay floor. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # the floor inside is 0.2 .. 19.8
    _rows_of_lines(msp, [4.0, 5.1])
    for x0, x1 in ((3.0, 14.0), (16.0, 27.0)):
        _rows_of_lines(msp, [6.9, 9.3], x0=x0, x1=x1)
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall less a 24 m x 1.1 m row and two 11 m x 2.4 m rows
    assert plan.free_space.area == pytest.approx(29.6 * 19.6 - 24 * 1.1 - 2 * 11 * 2.4,
                                                 rel=1e-9)
    assert plan.free_space.contains(shapely.Point(8.0, 6.0))      # the 1.8 m aisle
    assert plan.free_space.contains(shapely.Point(15.0, 8.0))     # the cross aisle
    assert not [w for w in plan.warnings if "racking line(s)" in w]


def test_shelves_against_both_walls_drawn_as_one_line_leave_the_aisles_open(tmp_path):
    """Shelving 0.5 m deep along both long walls drawn as its front line only (the wall is
    its back) and a free-standing row between them drawn as two faces: nothing says which
    gaps are shelving (an open side would, a wall behind a line does not), so no gap is
    filled and the 2 m and 2.2 m aisles stay floor. common practice"""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 6.6)  # the floor inside is 0.2 .. 6.4
    _rows_of_lines(msp, [0.7, 2.7, 3.7, 5.9], x0=1.0, x1=29.0)
    plan = read_floorplan(save(doc, tmp_path))
    for y in (1.7, 4.8):                                          # the aisles
        assert plan.free_space.contains(shapely.Point(15.0, y))


def test_racking_lines_that_close_nothing_are_named_in_a_warning(tmp_path):
    """Three face lines of two rows, the second row's back face missing: the lines
    contradict each other (the row at 8.1 m faces open floor, so the 3 m gap below it would
    be its rack, wider than any rack), nothing is filled, and a warning says that 72 m of
    racking lines close no shape, so the user can check the rows the preview shows as
    floor. Rows whose faces all close get no such warning."""
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 30, 20)
    _rows_of_lines(doc.modelspace(), [4.0, 5.1, 8.1])
    plan = read_floorplan(save(doc, tmp_path, "open.dxf"))
    loose = [w for w in plan.warnings if "racking line(s)" in w]
    assert len(loose) == 1 and "3 racking line(s), 72.0 m in all, close no shape" in loose[0]
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 30, 20)
    _rows_of_lines(doc.modelspace(), [4.0, 5.1, 8.1, 9.2])
    plan = read_floorplan(save(doc, tmp_path, "closed.dxf"))
    assert not [w for w in plan.warnings if "racking line(s)" in w]
