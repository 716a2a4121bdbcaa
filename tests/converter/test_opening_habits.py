"""More habits of real plans around openings: piers and sidelights, foundations drawn under
doors, gaps that only touch a window, structure kept on a layer named for something else.

Each drawing is built here with ezdxf; expected widths and areas follow from its coordinates.
"""

from __future__ import annotations

import numpy as np
import pytest
import shapely

from clearway.converter import read_floorplan
from clearway.errors import DrawingError
from clearway.converter.openings import Gap, classify_gaps
from clearway.converter.roles import Roles, opening_kind
from tests.conftest import new_drawing, rectangle, save, walled_room


def _door_and_window_blocks(doc):
    """A 1-unit door (leaf and 90 degree swing about the hinge at the origin) and a
    1-unit window (two glazing lines), to be scaled to size where inserted."""
    door = doc.blocks.new("DOOR")
    door.add_line((0, 0), (0, 1))
    door.add_arc((0, 0), 1.0, 0, 90)
    window = doc.blocks.new("WIN6")
    for y in (-0.05, 0.05):
        window.add_line((0, y), (1, y))


def _entrance_building(tmp_path, *, foundation=False):
    """A 12 m x 8 m building, 0.2 m walls; its south wall holds an entrance: sidelight
    (x 3.0-4.0), pier (4.0-4.2), double door (4.2-6.0), pier (6.0-6.2), sidelight (6.2-7.2)."""
    doc = new_drawing(6)
    _door_and_window_blocks(doc)
    msp = doc.modelspace()
    wall = shapely.box(0, 0, 12, 8).difference(shapely.box(0.2, 0.2, 11.8, 7.8))
    wall = wall.difference(shapely.box(3.0, -1, 7.2, 1)).union(shapely.box(4.0, 0, 4.2, 0.2)) \
        .union(shapely.box(6.0, 0, 6.2, 0.2))
    for ring in shapely.get_rings(shapely.get_parts(wall)):
        msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": "A-WALL"})
    # the two leaves hinge on the piers' faces and swing inwards
    msp.add_blockref("DOOR", (4.2, 0.1), dxfattribs={"xscale": 0.9, "yscale": 0.9,
                                                     "layer": "FURNITURE"})
    msp.add_blockref("DOOR", (6.0, 0.1), dxfattribs={"xscale": -0.9, "yscale": 0.9,
                                                     "layer": "FURNITURE"})
    for x in (3.0, 6.2):
        msp.add_blockref("WIN6", (x, 0.1), dxfattribs={"layer": "FURNITURE"})
    if foundation:  # the stem wall runs on under the doors and windows
        for y in (-0.05, 0.25):
            msp.add_line((-0.05, y), (12.05, y), dxfattribs={"layer": "SITE$0$S-STEM-WALL"})
    return save(doc, tmp_path)


def test_double_door_between_piers_beside_sidelights(tmp_path):
    plan = read_floorplan(_entrance_building(tmp_path))
    found = sorted((round(o.x, 3), o.kind, round(o.width, 3)) for o in plan.openings)
    # analytic: sidelights 1.0 m at x 3.5 and 6.7; the double door 4.2-6.0 m, 1.8 m wide
    assert found == [(3.5, "window", 1.0), (5.1, "door", 1.8), (6.7, "window", 1.0)]
    door = next(o for o in plan.openings if o.kind == "door")
    assert door.exterior
    # analytic: the floor inside the 0.2 m walls, 11.6 m x 7.6 m, nothing leaks
    assert plan.free_space.area == pytest.approx(11.6 * 7.6, rel=2e-3)
    assert not plan.leaks


def test_foundation_under_the_doors_is_not_wall(tmp_path):
    # common practice: NCS S-FNDN / S-FOOT / stem-wall layers show what is below the floor
    roles = Roles()
    for name in ("S-STEM-WALL", "X$0$S-FOOTER", "S-FNDN-WALL", "Fundamentwand"):
        assert roles.role_of(name) is None, name
    assert roles.role_of("A-WALL") == "wall" and roles.role_of("S-COLS") == "wall"
    plan = read_floorplan(_entrance_building(tmp_path, foundation=True))
    assert sorted(o.kind for o in plan.openings) == ["door", "window", "window"]


def test_window_blocks_numbered_by_size():
    # common practice: window blocks named WIN plus a size or type number
    assert [opening_kind(name) for name in ("WIN6", "WIN-2", "WIN", "WINCH", "WINDOW_900")] == \
        ["window", "window", "window", None, "window"]


def test_a_wide_gap_that_only_touches_a_window_is_open():
    gap = Gap(np.array([0.0, 0.0]), np.array([5.0, 0.0]), 0.2,
              shapely.box(0, -0.1, 5, 0.1))
    beside = [shapely.LineString([(-0.9, y), (0.05, y)]) for y in (-0.05, 0.05)]
    along = [shapely.LineString([(0, y), (5, y)]) for y in (-0.05, 0.05)]
    kinds = [classify_gaps([gap], door_lines=[], window_lines=lines, other_lines=[],
                           swing_arcs=[])[0] for lines in (beside, along)]
    # analytic: the window beside the wall end covers 1 % of the 5 m gap, the glazing all of it
    assert kinds == ["open", "window"]


def test_structure_on_a_layer_named_for_something_else_is_taken_for_walls(tmp_path):
    # a plan converted from PDF: nine rooms' walls on "Existing Structure 4", a partition stub
    # on A-WALL
    doc = new_drawing(6)
    msp = doc.modelspace()
    for row in range(3):
        for column in range(3):
            x0, y0 = column * 4.5, row * 4.5
            walled_room(msp, x0, y0, x0 + 4, y0 + 4, layer="Existing Structure 4")
    msp.add_lwpolyline([(1, 1), (2, 1), (2, 1.2), (1, 1.2)], close=True,
                       dxfattribs={"layer": "A-WALL"})
    plan = read_floorplan(save(doc, tmp_path))
    assert any("'Existing Structure 4' looks more like walls" in w for w in plan.warnings)
    # analytic: nine rooms of 3.6 m x 3.6 m, less the 1.0 m x 0.2 m stub
    assert plan.free_space.area == pytest.approx(9 * 3.6 * 3.6 - 0.2, rel=2e-3)


def _partitions_in_a_shell(shell_layer, *, frame_layer=None, frame_gap=3.0):
    """A 12 m x 8 m space whose outer walls are single lines on `shell_layer` (as in a fit-out
    sketch over the existing building); the only layer named for walls holds new 0.1 m
    partitions: a U of double lines from the north wall enclosing a 3 m x 3 m store, open to
    the south, so the partitions alone close nothing. With `frame_layer`, a sheet frame
    `frame_gap` metres outside the plan."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    corners = rectangle(0, 0, 12, 8)
    for start, end in zip(corners, corners[1:] + corners[:1]):
        msp.add_line(start, end, dxfattribs={"layer": shell_layer})
    for x in (6.0, 9.1):       # the U's legs, 0.1 m thick, from the north wall down to y = 5
        msp.add_lwpolyline([(x, 8), (x, 5), (x + 0.1, 5), (x + 0.1, 8)],
                           dxfattribs={"layer": "Wand (neu)"})
    if frame_layer:
        msp.add_lwpolyline(rectangle(-frame_gap, -frame_gap, 12 + frame_gap, 8 + frame_gap),
                           close=True, dxfattribs={"layer": frame_layer})
    return doc


def test_a_shell_on_a_layer_named_for_nothing_closes_the_partitions(tmp_path):
    plan = read_floorplan(save(_partitions_in_a_shell("Base"), tmp_path))
    assert any("layer 'Base' surrounds them" in warning for warning in plan.warnings)
    # analytic: the space inside the single lines (each given 0.05 m, half inside) less the two
    # 0.1 m x 3 m legs; 0.025 m of each leg's top lies in the north line's band
    inside = (12 - 0.05) * (8 - 0.05) - 2 * 0.1 * (3 - 0.025)
    assert plan.free_space.area == pytest.approx(inside, rel=1e-3)


@pytest.mark.parametrize("frame_layer, frame_gap", [("Rahmen", 0.3), ("Layer 7", 3.0)])
def test_a_sheet_frame_is_not_taken_for_the_shell(tmp_path, frame_layer, frame_gap):
    # the frame surrounds the partitions: "Rahmen" (frame) is refused by its name, "Layer 7" 3 m
    # away by its distance; with no shell the partitions enclose no floor
    doc = _partitions_in_a_shell("Layer 8", frame_layer=frame_layer, frame_gap=frame_gap)
    for entity in doc.modelspace().query('LINE[layer=="Layer 8"]'):
        entity.destroy()
    with pytest.raises(DrawingError, match="no enclosed floor"):
        read_floorplan(save(doc, tmp_path))


@pytest.mark.parametrize("apart", [2.5, 3.6])
def test_two_plans_of_the_floor_stacked_on_the_sheet_are_two_drawings(tmp_path, apart):
    # common practice: the floor plan above its electrical plan, the same walls twice, `apart`
    # metres between them: more than the 2 m that joins linework, less than the two 2 m cells
    # of the grouping raster; door swings in the lower plan only (a wardrobe's, free of the
    # walls), so it is the one built
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    walled_room(msp, 0, 8 + apart, 10, 16 + apart)
    msp.add_arc((4, 3), 0.6, 0, 90, dxfattribs={"layer": "A-DOOR"})
    msp.add_arc((6, 3), 0.6, 90, 180, dxfattribs={"layer": "A-DOOR"})
    plan = read_floorplan(save(doc, tmp_path))
    assert any("2 separate drawings" in warning for warning in plan.warnings)
    # analytic: one room inside 0.2 m walls, 9.6 m x 7.6 m
    assert plan.free_space.area == pytest.approx(9.6 * 7.6, rel=1e-6)
    assert plan.free_space.bounds[3] < 8


def test_a_frame_round_walls_that_enclose_some_floor_is_not_taken(tmp_path):
    # a 4 m room inside a yard walled on three sides (a 0.2 m U band, 20 m x 10 m, open to
    # the north): the walls enclose the room, so a layer with no role drawn 0.3 m round
    # everything is not searched for a shell: it is the sheet's frame, and taking it would
    # put lanes round the outside (the real-drawing probes hold a house on a slope that did)
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 10, 2, 14, 6)
    yard = [(6, 10), (6, 0), (26, 0), (26, 10), (25.8, 10), (25.8, 0.2), (6.2, 0.2), (6.2, 10)]
    msp.add_lwpolyline(yard, close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_lwpolyline(rectangle(5.7, -0.3, 26.3, 10.3), close=True,
                       dxfattribs={"layer": "Layer 7"})
    plan = read_floorplan(save(doc, tmp_path))
    assert not any("surrounds them" in warning for warning in plan.warnings)
    # analytic: the room inside its 0.2 m walls alone
    assert plan.free_space.area == pytest.approx(3.6 * 3.6, rel=1e-6)


def test_a_column_far_from_the_walls_belongs_to_the_plan(tmp_path):
    # a 20 m hall drawn as single LINEs, a 1 m column in its middle, 9.5 m from every wall;
    # an elevation of the same wall 30 m to the east on the same layer
    doc = new_drawing(6)
    msp = doc.modelspace()
    corners = [(0, 0), (20, 0), (20, 20), (0, 20)]
    for start, end in zip(corners, corners[1:] + corners[:1]):
        msp.add_line(start, end, dxfattribs={"layer": "A-WALL"})
    msp.add_lwpolyline([(9.5, 9.5), (10.5, 9.5), (10.5, 10.5), (9.5, 10.5)], close=True,
                       dxfattribs={"layer": "A-COLS"})
    msp.add_lwpolyline([(50, 0), (70, 0), (70, 3), (50, 3)], close=True,
                       dxfattribs={"layer": "A-WALL"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the hall inside the lines (a single-line wall is given its nominal thickness)
    # holds the column as an obstacle; the elevation is left out
    assert not plan.free_space.contains(shapely.Point(10, 10))
    assert plan.free_space.contains(shapely.Point(5, 5))
    assert plan.free_space.bounds[2] < 21
    assert any("2 separate drawings" in warning for warning in plan.warnings)


def test_planting_is_never_guessed_to_be_walls(tmp_path):
    # common practice: planting and landscape layers (L-PLNT, "plants") hold sketchy symbols
    # whose strokes run in parallel pairs; they are not walls however many there are
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    for index in range(60):
        x = 12 + index * 0.3
        for dx in (0.0, 0.1):
            msp.add_line((x + dx, 0), (x + dx, 2), dxfattribs={"layer": "plants"})
    plan = read_floorplan(save(doc, tmp_path))
    assert not any("plants" in warning and "walls" in warning for warning in plan.warnings)
    # analytic: the room inside its 0.2 m walls
    assert plan.free_space.area == pytest.approx(9.6 * 7.6, rel=2e-3)


def _single_line_rooms(msp, *, leaf_angle):
    """Two 5 m x 4 m rooms side by side, single-line walls on layer '0', the partition at
    x = 5 drawn straight through a 0.9 m doorway (y 1.0-1.9) marked by jamb ticks, with the
    leaf hinged at (5, 1.0) open `leaf_angle` degrees into the west room and its swing."""
    for start, end in [((0, 0), (10, 0)), ((10, 0), (10, 4)), ((10, 4), (0, 4)),
                       ((0, 4), (0, 0)), ((5, 0), (5, 4))]:
        msp.add_line(start, end)
    for y in (1.0, 1.9):
        msp.add_line((4.9, y), (5.1, y))
    angle = np.radians(90 + leaf_angle)
    tip = (5 + 0.9 * np.cos(angle), 1.0 + 0.9 * np.sin(angle))
    msp.add_line((5, 1.0), tip)
    msp.add_arc((5, 1.0), 0.9, 90, 90 + leaf_angle)


@pytest.mark.parametrize("leaf_angle", [30, 90])
def test_single_line_wall_drawn_through_a_doorway(tmp_path, leaf_angle):
    # common practice in schematic plans: the wall line runs on across the doorway
    doc = new_drawing(6)
    _single_line_rooms(doc.modelspace(), leaf_angle=leaf_angle)
    plan = read_floorplan(save(doc, tmp_path), nominal_wall_thickness=0.05)
    [door] = [o for o in plan.openings if o.kind == "door"]
    # analytic: hinge (5, 1.0) to the closed leaf's tip (5, 1.9), less the round cap of the
    # far wall end's band (half the 0.05 m nominal thickness)
    assert door.x == pytest.approx(5.0, abs=0.01)
    assert door.width == pytest.approx(0.9 - 0.025, abs=0.01)
    # the leaf and the ticks are gone: the middle of the doorway and the swept sector are floor
    assert plan.free_space.contains(shapely.Point(5.0, 1.45))
    assert plan.free_space.contains(shapely.Point(4.7, 1.3))
    assert len(shapely.get_parts(plan.free_space)) == 1



@pytest.mark.parametrize("name, role", [
    ("Regale", "racking"), ("RAYONNAGES", "racking"), ("Estanterías", "racking"),
    ("scaffalature", "racking"), ("Stellingen", "racking"), ("X$0$A-EQPM-RACK", "racking"),
    ("Sperrfläche", "keepout"), ("ZONE INTERDITE", "keepout"), ("exclusion zone", "keepout"),
])
def test_racking_and_keep_out_in_the_languages_of_the_walls(name, role):
    # common practice: the plain words warehouse planners use for racking and no-go areas
    assert Roles().role_of(name) == role


def test_door_laid_over_a_double_line_wall_drawn_through(tmp_path):
    # common practice: the partition's two faces run on unbroken and the door block (its mask
    # hides them on paper) sits on top: hinge on the east face at y = 2.0, 0.9 m leaf open
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    for x in (4.95, 5.05):
        msp.add_line((x, 0.2), (x, 7.8), dxfattribs={"layer": "A-WALL"})
    door = doc.blocks.new("DOOR-900")
    door.add_line((0, 0), (0.9, 0))
    door.add_arc((0, 0), 0.9, 0, 90)
    msp.add_blockref("DOOR-900", (5.05, 2.0), dxfattribs={"layer": "A-DOOR"})
    plan = read_floorplan(save(doc, tmp_path))
    [door] = [o for o in plan.openings if o.kind == "door"]
    # analytic: the doorway runs from the hinge (y 2.0) to the closed leaf's tip (y 2.9)
    assert (door.x, door.y, door.width) == pytest.approx((5.0, 2.45, 0.9), abs=0.01)
    # analytic: one floor, 9.6 m x 7.6 m less the partition (0.1 m x 6.7 m left of it)
    assert len(shapely.get_parts(plan.free_space)) == 1
    assert plan.free_space.area == pytest.approx(9.6 * 7.6 - 0.1 * 6.7, rel=2e-3)


def test_walls_drawn_as_multilines(tmp_path):
    # common practice in older drafting: a wall is one MLINE (two parallel lines, capped);
    # ezdxf's default multiline style draws its two lines 1 unit apart, scaled by scale_factor
    doc = new_drawing(6)
    msp = doc.modelspace()
    outline = msp.add_mline([(0, 0), (10, 0), (10, 8), (0, 8)], close=True,
                            dxfattribs={"layer": "A-WALL"})
    outline.dxf.scale_factor = 0.2
    outline.dxf.justification = 1         # DXF reference, MLINE group 70: 1 = zero (centred)
    outline.update_geometry()
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the multiline's lines run 0.1 m either side of the 10 m x 8 m centre line, so
    # the floor inside is 9.8 m x 7.8 m
    assert plan.free_space.area == pytest.approx(9.8 * 7.8, rel=2e-3)
    assert plan.regions["wall"].area == pytest.approx(10.2 * 8.2 - 9.8 * 7.8, rel=2e-3)
    # independent: ezdxf's own explosion of the entity holds the inner face's corners
    inner = {(round(e.dxf.start.x, 6), round(e.dxf.start.y, 6))
             for e in outline.virtual_entities() if e.dxftype() == "LINE"}
    assert (0.1, 0.1) in inner or (9.9, 7.9) in inner


@pytest.mark.parametrize("name, role", [
    ("墙体", "wall"), ("柱子", "wall"), ("门窗", "opening"), ("楼梯", "stair"), ("幕墙", "opening"),
    ("壁", "wall"), ("建具", "opening"), ("階段", "stair"), ("벽체", "wall"), ("계단", "stair"),
    ("문자", None),                                  # Korean "text": not a door
])
def test_wall_door_window_and_stair_words_of_east_asian_drawings(name, role):
    # common practice: plain-word layer names in Chinese, Japanese and Korean offices
    assert Roles().role_of(name) == role


def test_east_asian_door_and_window_block_codes():
    # common practice in Chinese drawings: M = door, FM = fire door, C = window, then width
    # and height in decimetres (M0921 = 900 x 2100)
    assert [opening_kind(name) for name in ("M0921", "FM1021", "C1518", "门", "MTEXT1", "C12")] \
        == ["door", "door", "window", "door", None, None]


def test_a_swing_near_a_gap_that_closes_another_way_is_not_its_door():
    # gap along x from (0, 0) to (1.8, 0), 0.1 m deep; a 0.7 m swing hinged 0.35 m off it,
    # sweeping from -130 to -60 degrees, has both ends within reach of the gap line, but
    # neither lies from its hinge along the gap (the door of another wall); a swing of the
    # same size hinged on the gap and closing along it is this gap's door
    gap = Gap(np.array([0.0, 0.0]), np.array([1.8, 0.0]), 0.1, shapely.box(0, -0.05, 1.8, 0.05))

    def swing(hinge, start, stop):
        t = np.radians(np.linspace(start, stop, 33))
        return shapely.LineString(np.c_[hinge[0] + 0.7 * np.cos(t), hinge[1] + 0.7 * np.sin(t)])

    kinds = [classify_gaps([gap], door_lines=[], window_lines=[], other_lines=[],
                           swing_arcs=[arc])[0]
             for arc in (swing((0.5, 0.35), -130, -60), swing((0.0, 0.0), 0, 90))]
    # analytic: from (0.5, 0.35) the ends lie at -130 and -60 degrees, |cos| 0.64 and 0.5,
    # both under cos 30 degrees; from (0, 0) the end at 0 degrees lies along the gap
    assert kinds == ["open", "door"]


def test_thousands_of_rack_rows_between_wide_aisles_are_one_drawing():
    # a hall drawn as four single LINEs, 6,000 racks (2.5 m x 1.0 m) on a 6.5 m x 1.9 m
    # pitch: 4 m aisles, wider than the 2 m gap that separates drawings, so the racks first
    # fall into 60 groups; all lie inside the hall's extents, so they are one drawing
    from clearway.converter.views import group_boxes, merge_nested

    boxes = [(0, 0, 400, 0.1), (0, 200, 400, 200.1), (0, 0, 0.1, 200), (400, 0, 400.1, 200)]
    boxes += [(5 + i * 6.5, 5 + j * 1.9, 7.5 + i * 6.5, 6 + j * 1.9)
              for i in range(60) for j in range(100)]
    # an elevation 50 m east of the hall stays apart
    boxes.append((450, 0, 500, 10))
    labels = merge_nested(np.array(boxes), group_boxes(boxes, 2.0))
    assert len(set(labels[:-1].tolist())) == 1 and labels[-1] != labels[0]


def test_view_groups_label_cells_as_scipy_ndimage_does(monkeypatch):
    # source: scipy.ndimage.label with a 3 x 3 structure (8-connectivity), an independent
    # implementation; the graph labelling that spares the build its import must agree on
    # random rasters of every density, numbering included, and on both sides of the switch
    from scipy import ndimage

    from clearway.converter import views

    rng = np.random.default_rng(7)
    for _ in range(200):
        rows, cols = rng.integers(1, 30, 2)
        covered = rng.random((rows, cols)) < rng.random()
        expected, _ = ndimage.label(covered, structure=np.ones((3, 3), dtype=int))
        assert (views._label_cells(covered) == expected - 1).all()
    boxes = rng.random((400, 2)) * 300
    boxes = np.hstack([boxes, boxes + rng.random((400, 2)) * 6])
    by_graph = views.group_boxes(boxes, 1.0)
    monkeypatch.setattr(views, "LABEL_BY_GRAPH", 0)
    assert (views.group_boxes(boxes, 1.0) == by_graph).all()


def _glazed_on_layer_zero(tmp_path):
    """A 14 m x 8 m building, 0.2 m walls, split by a wall at x 6.9-7.1 with a 3.2 m opening
    (y 2.0-5.2). Two lines on layer 0 span each of two wide gaps within the wall's depth:
    a 3.0 m gap in the south wall (x 1.5-4.5, glass and sill) and the interior opening (a
    counter's front and back, as an open kitchen is drawn)."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    wall = shapely.box(0, 0, 14, 8).difference(shapely.box(0.2, 0.2, 13.8, 7.8)) \
        .union(shapely.box(6.9, 0.2, 7.1, 7.8))
    wall = wall.difference(shapely.box(1.5, -1, 4.5, 1)).difference(shapely.box(6, 2.0, 8, 5.2))
    for ring in shapely.get_rings(shapely.get_parts(wall)):
        msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": "A-WALL"})
    for y in (0.07, 0.13):
        msp.add_line((1.5, y), (4.5, y), dxfattribs={"layer": "0"})
    for x in (6.95, 7.05):
        msp.add_line((x, 2.0), (x, 5.2), dxfattribs={"layer": "0"})
    return save(doc, tmp_path)


def test_glazing_on_a_layer_with_no_role_closes_a_wide_exterior_gap_only(tmp_path):
    plan = read_floorplan(_glazed_on_layer_zero(tmp_path))
    # analytic: the south gap is 3.0 m wide, centred at (3.0, 0.1), and leads outside
    found = [(round(o.x, 3), round(o.y, 3), o.kind, round(o.width, 3), o.exterior)
             for o in plan.openings]
    assert found == [(3.0, 0.1, "window", 3.0, True)]
    assert not plan.leaks
    # analytic: the floor inside the 0.2 m walls (13.6 m x 7.6 m) less the dividing wall
    # beside its opening (0.2 m x (7.6 - 3.2) m), in one piece through the opening
    assert plan.free_space.area == pytest.approx(13.6 * 7.6 - 0.2 * 4.4, rel=2e-3)
    assert len(shapely.get_parts(plan.free_space)) == 1
    assert plan.free_space.contains(shapely.Point(7.0, 3.6))


def test_one_line_across_a_wide_exterior_gap_is_no_glazing(tmp_path):
    # a threshold or a change of floor finish: one line says nothing, the gap still leaks
    doc = new_drawing(6)
    msp = doc.modelspace()
    wall = shapely.box(0, 0, 10, 8).difference(shapely.box(0.2, 0.2, 9.8, 7.8)) \
        .difference(shapely.box(1.5, -1, 4.5, 1))
    for ring in shapely.get_rings(shapely.get_parts(wall)):
        msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_line((1.5, 0.1), (4.5, 0.1), dxfattribs={"layer": "0"})
    try:
        plan = read_floorplan(save(doc, tmp_path))
    except DrawingError as error:
        assert "no enclosed floor" in str(error)
    else:
        assert not any(o.kind == "window" for o in plan.openings)
        assert plan.leaks or plan.free_space.area < 0.5 * 9.6 * 7.6


def _thick_walled_house(msp, thickness):
    """A 12 m x 8 m house with masonry walls `thickness` thick (old buildings: 0.6 to 1 m,
    common practice), a 1.0 m door in the south wall and a 1.5 m window in the north, drawn
    as double lines closed by jamb lines, as a survey of an old building is drawn."""
    t, width, depth = thickness, 12.0, 8.0
    for points in ([(5, 0), (0, 0), (0, depth), (4, depth)],
                   [(5.5, depth), (width, depth), (width, 0), (6, 0)],
                   [(5, t), (t, t), (t, depth - t), (4, depth - t)],
                   [(5.5, depth - t), (width - t, depth - t), (width - t, t), (6, t)]):
        msp.add_lwpolyline(points, dxfattribs={"layer": "A-WALL"})
    for x in (5, 6):
        msp.add_line((x, 0), (x, t), dxfattribs={"layer": "A-WALL"})
    for x in (4, 5.5):
        msp.add_line((x, depth), (x, depth - t), dxfattribs={"layer": "A-WALL"})
    msp.add_line((4, depth - t / 2), (5.5, depth - t / 2), dxfattribs={"layer": "A-GLAZ"})
    msp.add_line((5, t), (5, t + 1.0), dxfattribs={"layer": "A-DOOR"})     # leaf open 90
    msp.add_arc((5, t), 1.0, 0, 90, dxfattribs={"layer": "A-DOOR"})


@pytest.mark.parametrize("thickness", [0.45, 0.8, 1.0])
def test_openings_through_thick_masonry_walls_close_the_house(tmp_path, thickness):
    doc = new_drawing(6)
    _thick_walled_house(doc.modelspace(), thickness)
    plan = read_floorplan(save(doc, tmp_path))
    found = sorted((o.kind, round(o.width, 3), o.exterior) for o in plan.openings)
    # analytic: the jambs stand 1.0 m and 1.5 m apart, both in the outer walls
    assert found == [("door", 1.0, True), ("window", 1.5, True)]
    assert not plan.leaks
    # analytic: the floor inside the walls' inner faces; the openings' closures reach 3 mm
    # (the seam) into it
    inside = (12.0 - 2 * thickness) * (8.0 - 2 * thickness)
    assert plan.free_space.area == pytest.approx(inside, abs=0.01)


def test_a_thick_pier_across_a_passage_makes_no_opening(tmp_path):
    # a 0.9 m square pier 2 m from the south wall: its sides are as long as a thick wall's
    # end, but the pier does not run back along them, so no gap is bridged to the wall
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 12, 8)
    msp.add_lwpolyline(rectangle(5.0, 2.2, 5.9, 3.1), close=True, dxfattribs={"layer": "A-WALL"})
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.openings == ()
    # analytic: 11.6 m x 7.6 m inside the walls, less the 0.9 m x 0.9 m pier, one piece
    assert len(plan.free_space.geoms) == 1
    assert plan.free_space.area == pytest.approx(11.6 * 7.6 - 0.81, abs=1e-6)
