"""Drawings as architects send them: openings as blocks, lying unit headers, xref-bound layer
names, a section beside the plan, thick masonry, grids on the outline layer.

The bundled office_ground_floor.dxf carries all of these habits at once; its true geometry
is known from sample_drawings/make_samples.py, which drew it in millimetres.
"""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import networkx as nx
import pytest
import shapely
from click.testing import CliRunner

from clearway.cli import main
from clearway.converter import Roles, read_floorplan
from clearway.converter.evidence import text_length_m
from clearway.converter.roles import opening_kind
from clearway.errors import DrawingError

from tests.conftest import new_drawing, rectangle, save, walled_room, wall_with_gap

OFFICE = Path(__file__).resolve().parents[2] / "sample_drawings" / "office_ground_floor.dxf"


@pytest.fixture(scope="module")
def office():
    return read_floorplan(OFFICE)


def test_the_content_overrules_a_lying_unit_header(office):
    # make_samples.py: every length in mm, $INSUNITS = 1 (inches)
    assert (office.units, office.unit_source) == ("mm", "content")
    assert any("header says in" in warning and "doors 0.75 m-1.00 m wide" in warning
               for warning in office.warnings)
    assert "--units" in office.unit_note


def test_openings_found_with_their_widths_and_kinds(office):
    kinds = sorted((o.kind, o.exterior, round(o.width, 3)) for o in office.openings)
    # analytic (make_samples.py): eight doors off the corridor, seven 1000 mm and one 800 mm
    # between jambs; a 1400 mm double entrance door in the west wall; eight 1500 mm windows
    assert kinds.count(("door", False, 1.0)) == 7
    assert kinds.count(("door", False, 0.8)) == 1
    assert kinds.count(("door", True, 1.4)) == 1
    assert kinds.count(("window", True, 1.5)) == 8
    assert len(kinds) == 17
    archive = next(o for o in office.openings if o.width == pytest.approx(0.8))
    # analytic: the archive door spans x 14.0-14.8 m in the corridor's south wall, y 5.95-6.05
    assert (archive.x, archive.y, archive.depth) == pytest.approx((14.4, 6.0, 0.1), abs=0.01)


def test_exterior_openings_are_closed_and_the_section_is_left_out(office):
    # the interior only: nothing outside the 24 m x 14 m building, not the section at x >= 30 m
    xmin, ymin, xmax, ymax = office.free_space.bounds
    assert xmin >= 0.3 - 1e-6 and xmax <= 23.7 + 1e-6 and ymax <= 13.7 + 1e-6
    assert any("2 separate drawings" in warning for warning in office.warnings)
    # analytic: the entrance doorway (x 0-0.3 m, y 6.3-7.7 m) is closed, not floor
    assert not office.free_space.contains(shapely.Point(0.15, 7.0))


def test_thick_masonry_wall_and_stair_are_obstacles(office):
    obstacles = shapely.union_all(list(office.obstacles.values()))
    # analytic: the 750 mm masonry wall x 11.625-12.375 m; the stair x 21-23.5, y 10.5-13.5
    for x, y in ((12.0, 3.0), (12.0, 11.0), (22.0, 12.0)):
        assert obstacles.contains(shapely.Point(x, y)), (x, y)
        assert not office.free_space.contains(shapely.Point(x, y))


def test_built_graph_reaches_rooms_behind_wide_doors_only(tmp_path):
    result = CliRunner().invoke(main, ["build", str(OFFICE), "-o", str(tmp_path), "--quiet"])
    assert result.exit_code == 0, result.output
    report = json.loads((tmp_path / "report.json").read_text(encoding="utf-8"))
    reach = {station["label"]: station["reachable"] for station in report["stations"]}
    # 0.35 m + 0.10 m robot needs 0.90 m: the 1.0 m doors pass, the archive's 0.8 m does not
    assert reach == {"CHARGER": True, "DOCK-A": True, "DOCK-B": False, "LAB": True}
    graph = nx.read_graphml(tmp_path / "roadmap.graphml", force_multigraph=True)
    main_part = max(nx.connected_components(graph), key=len)
    lanes = shapely.union_all([shapely.from_wkt(data["geometry"]) for u, v, data
                               in graph.edges(data=True) if u in main_part])
    # points in the middle of rooms the robot enters (room centres from make_samples.py)
    for x, y in ((3.0, 3.0), (9.0, 3.0), (21.0, 3.0), (3.0, 11.0), (9.0, 11.0), (15.0, 11.0),
                 (10.0, 7.0)):
        assert lanes.distance(shapely.Point(x, y)) <= 1.5, (x, y)
    # inside walls, the stair, outside the building: no lane near
    for x, y in ((12.0, 3.0), (22.3, 12.0), (-3.0, 7.0), (40.0, 3.0), (0.15, 3.0)):
        assert lanes.distance(shapely.Point(x, y)) > 0.3, (x, y)


def test_xref_prefixes_and_plain_language_layer_names():
    roles = Roles()
    # common practice: bound xrefs rename layers XREF$0$NAME, attached ones show XREF|NAME
    assert roles.role_of("SITEPLAN$0$A-WALL") == "wall"
    assert roles.role_of("SITEPLAN|A-WALL") == "wall"
    assert roles.role_of("house$0$Doors") == "opening"
    for name in ("Wall", "Walls", "MURS", "Mauer", "Wände", "A-WALL-FULL", "S-COLS",
                 "A-320G - Permanent Solid Partitions 12"):
        assert roles.role_of(name) == "wall", name
    for name in ("A-DOOR", "Tür", "Fenster", "A-GLAZ-CURT", "PORTES", "A-325G - Internal Doors 6"):
        assert roles.role_of(name) == "opening", name
    for name in ("A-FLOR-STRS", "Treppe", "ESCALIER", "Stairs"):
        assert roles.role_of(name) == "stair", name
    # overhead and annotation layers stay out, unless the user names them
    assert roles.role_of("A-WALL-OVHD") is None and roles.role_of("A-DOOR-IDEN") is None
    assert Roles.from_options(walls=["A-WALL-OVHD"]).role_of("A-WALL-OVHD") == "wall"
    assert opening_kind("3068") == "door"      # common practice: 3'0" x 6'8" door block


@pytest.mark.parametrize("name, role, kind", [
    # from memory: the words Italian, Spanish, Portuguese and French offices name layers with
    ("muratura", "wall", None), ("Tramezzi", "wall", None), ("Tamponamenti", "wall", None),
    ("Alvenaria", "wall", None), ("Tabiques", "wall", None), ("MAMPOSTERIA", "wall", None),
    ("Maçonnerie", "wall", None),
    ("aperture", "opening", None), ("A-INFISSI", "opening", None), ("ABERTURAS", "opening", None),
    ("Esquadrias", "opening", None), ("MENUISERIES", "opening", None),
    ("PORTAS", "opening", "door"), ("PORTA", "opening", "door"), ("JANELAS", "opening", "window"),
    ("PORTAL", None, None), ("PORTABLE", None, None)])
def test_southern_european_layer_words(name, role, kind):
    assert Roles().role_of(name) == role
    assert opening_kind(name) == kind


def test_lift_layers_are_impassable_like_stairs(tmp_path):
    roles = Roles()
    # source: US National CAD Standard layer list, A-FLOR-EVTR (elevator); common practice for
    # the plain words (British lift, German Aufzug, French ascenseur, Spanish ascensor)
    for name in ("A-FLOR-EVTR", "PLAN$0$A-FLOR-EVTR", "LIFT", "Lift-Core", "Aufzug", "ASCENSEUR",
                 "Ascensor"):
        assert roles.role_of(name) == "stair", name
    # a word that only contains LIFT is no lift
    assert roles.role_of("FORKLIFT-ROUTE") is None
    # common practice (DRAFTING.md): a lift is drawn as a box with a cross; it is no floor
    doc = new_drawing(6)
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10, 0), (10, 8), (0, 8)], close=True, dxfattribs={"layer": "A-WALL"})
    msp.add_lwpolyline([(0.2, 0.2), (9.8, 0.2), (9.8, 7.8), (0.2, 7.8)], close=True,
                       dxfattribs={"layer": "A-WALL"})
    msp.add_lwpolyline([(6, 1), (8.5, 1), (8.5, 3.5), (6, 3.5)], close=True,
                       dxfattribs={"layer": "A-FLOR-EVTR"})
    msp.add_line((6, 1), (8.5, 3.5), dxfattribs={"layer": "A-FLOR-EVTR"})
    msp.add_line((6, 3.5), (8.5, 1), dxfattribs={"layer": "A-FLOR-EVTR"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the 2.5 m x 2.5 m lift box is taken out of the 9.6 m x 7.6 m room
    assert plan.free_space.area == pytest.approx(9.6 * 7.6 - 2.5 * 2.5, rel=1e-3)
    assert not plan.free_space.contains(shapely.Point(7.0, 2.0))


@pytest.mark.parametrize("size, name", [((2.4, 2.6), "LIFT"), ((2.4, 2.6), None),
                                        ((6.0, 4.5), "VOID"), ((1.2, 0.9), None)])
def test_box_with_a_cross_on_the_wall_layer_is_no_floor(tmp_path, size, name):
    # common practice (DRAFTING.md): lifts, risers and voids are drawn as a box with a cross,
    # often on the wall layer with the walls; its four triangles are as wide as small rooms,
    # and a name inside one kept that one as floor
    doc = new_drawing(6)
    msp = doc.modelspace()
    wall_with_gap(msp, 0, 0, 12, 8, thickness=0.3, gap=(2.0, 3.2))
    x1, y1 = 11.7, 7.7                         # the box against the inner wall faces
    x0, y0 = x1 - size[0], y1 - size[1]
    wall = {"layer": "A-WALL"}
    msp.add_lwpolyline(rectangle(x0, y0, x1, y1), close=True, dxfattribs=wall)
    msp.add_line((x0, y0), (x1, y1), dxfattribs=wall)
    msp.add_line((x0, y1), (x1, y0), dxfattribs=wall)
    if name:
        msp.add_text(name, dxfattribs={"layer": "A-ANNO", "height": 0.25,
                                       "insert": ((x0 + x1) / 2 - 0.3, y0 + 0.2)})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the room inside 0.3 m walls less the box
    assert plan.free_space.area == pytest.approx(11.4 * 7.4 - size[0] * size[1], rel=1e-3)
    assert not plan.free_space.intersects(shapely.box(x0 + 0.05, y0 + 0.05, x1 - 0.05, y1 - 0.05))


def test_box_with_one_diagonal_or_an_open_cross_stays_floor(tmp_path):
    # a single diagonal (a ramp or a slope mark) and a cross with no box around it (a
    # centre mark) close nothing: the floor stays whole
    doc = new_drawing(6)
    msp = doc.modelspace()
    wall_with_gap(msp, 0, 0, 12, 8, thickness=0.3, gap=(2.0, 3.2))
    wall = {"layer": "A-WALL"}
    msp.add_lwpolyline(rectangle(6.0, 2.0, 9.0, 5.0), close=True, dxfattribs=wall)
    msp.add_line((6.0, 2.0), (9.0, 5.0), dxfattribs=wall)
    msp.add_line((1.0, 4.0), (4.0, 6.0), dxfattribs=wall)
    msp.add_line((1.0, 6.0), (4.0, 4.0), dxfattribs=wall)
    plan = read_floorplan(save(doc, tmp_path))
    # the box's two halves are 3 m wide: rooms, not walls (bands of 0.05 m along the lines
    # take a little)
    assert plan.free_space.covers(shapely.Point(8.0, 2.8))
    assert plan.free_space.covers(shapely.Point(7.0, 4.2))


def test_dimension_texts_in_feet_and_inches():
    # exact by definition: 1 in = 0.0254 m, 1 ft = 12 in
    assert text_length_m("13'-8\"") == pytest.approx((13 * 12 + 8) * 0.0254)
    assert text_length_m("2' 10 1/2\"") == pytest.approx(34.5 * 0.0254)
    assert text_length_m("36\"") == pytest.approx(0.9144)
    assert text_length_m("4150") is None and text_length_m("3,60 m") == pytest.approx(3.6)


def test_inch_plan_with_a_millimetre_header_is_read_in_inches(tmp_path):
    # a 40 ft x 30 ft room in inches, 6 in walls, three 36 in doors with swings, header mm
    doc = new_drawing(4)
    msp = doc.modelspace()
    outline = shapely.box(0, 0, 480, 360).difference(shapely.box(6, 6, 474, 354))
    cuts = [shapely.box(x, 354 - 1, x + 36, 361) for x in (60, 200, 340)]
    walls = outline.difference(shapely.union_all(cuts))
    for ring in shapely.get_rings(shapely.get_parts(walls)):
        msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": "A-WALL"})
    for x in (60, 200, 340):
        msp.add_arc((x, 354), 36, 270, 360, dxfattribs={"layer": "A-DOOR"})
    dim = msp.add_linear_dim(base=(0, -24), p1=(0, 0), p2=(480, 0), text="40'-0\"",
                             dxfattribs={"layer": "A-DIMS"})
    dim.render()
    plan = read_floorplan(save(doc, tmp_path))
    assert (plan.units, plan.unit_source) == ("in", "content")
    # exact by definition: 480 in = 12.192 m
    assert plan.extents[2] - plan.extents[0] == pytest.approx(12.192, abs=0.06)
    widths = sorted(o.width for o in plan.openings)
    assert widths == pytest.approx([0.9144] * 3, abs=0.005)   # 36 in
    assert {o.kind for o in plan.openings} == {"door"}


def test_boundary_grid_lines_are_not_obstacles(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (20, 0), (20, 10), (0, 10)], close=True,
                       dxfattribs={"layer": "A-FLOR-OTLN"})
    for x in range(2, 20, 2):  # a floor tile grid on the outline layer
        msp.add_line((x, 0), (x, 10), dxfattribs={"layer": "A-FLOR-OTLN"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the floor is the 20 m x 10 m outline less a 0.025 m band inside its edge
    assert plan.free_space.area == pytest.approx(19.95 * 9.95, rel=1e-3)
    assert plan.free_space.contains(shapely.Point(4.0, 5.0))


def test_no_lane_anywhere_is_exit_2_with_a_diagnosis(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (3, 0), (3, 0.8), (0, 0.8)], close=True,
                       dxfattribs={"layer": "A-FLOR-OTLN"})
    result = CliRunner().invoke(main, ["build", str(save(doc, tmp_path)), "-o",
                                       str(tmp_path / "out"), "--quiet"])
    assert result.exit_code == 2
    line = result.stderr.strip()
    assert "\n" not in line and "no lane" in line and "needs 0.90 m" in line
    assert "--units" in line
    assert not (tmp_path / "out").exists() or not any((tmp_path / "out").iterdir())


def test_no_lane_for_a_rectangular_body_says_the_lanes_were_dropped_for_it(tmp_path):
    """An L-shaped corridor 1.05 m wide (1.1 m outline less its 0.025 m band): wide enough
    for a 0.8 m wide robot with a 0.1 m margin (analytic: 2 x (0.4 + 0.1) = 1.0 m), and a
    disc robot of that radius gets its lanes; a 1.4 m long body heading along them does not
    fit their ends. The diagnosis says so instead of only that the floor is wide enough."""
    doc = new_drawing(6)
    doc.modelspace().add_lwpolyline([(0, 0), (6, 0), (6, 1.1), (1.1, 1.1), (1.1, 6), (0, 6)],
                                     close=True, dxfattribs={"layer": "A-FLOR-OTLN"})
    path = save(doc, tmp_path)
    disc = CliRunner().invoke(main, ["build", str(path), "-o", str(tmp_path / "disc"),
                                     "--quiet", "--robot-radius", "0.4"])
    assert disc.exit_code == 0, disc.output
    result = CliRunner().invoke(main, ["build", str(path), "-o", str(tmp_path / "out"),
                                       "--quiet", "--robot-size", "1.4x0.8"])
    assert result.exit_code == 2
    line = result.stderr.strip()
    assert "\n" not in line and "no lane" in line
    assert "2 lane(s) wide enough for the robot's width were dropped" in line
    assert "1.40 m x 0.80 m body does not fit along them" in line
    assert "needs 1.00 m (half its width + margin on both sides)" in line


def test_no_wall_layer_named_takes_the_layer_that_looks_like_walls(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    outline = shapely.box(0, 0, 12, 8).difference(shapely.box(0.2, 0.2, 11.8, 7.8))
    for ring in shapely.get_rings(shapely.get_parts(outline)):
        xy = list(ring.coords)
        for start, end in zip(xy[:-1], xy[1:]):
            msp.add_line(start, end, dxfattribs={"layer": "0"})
    msp.add_line((1, 1), (2, 1), dxfattribs={"layer": "FURNITURE"})
    plan = read_floorplan(save(doc, tmp_path))
    assert any("took layer '0' for walls" in warning for warning in plan.warnings)
    # analytic: 11.6 m x 7.6 m inside the 0.2 m walls
    assert plan.free_space.area == pytest.approx(11.6 * 7.6, rel=1e-3)


def test_walls_that_do_not_close_are_doubted_not_built_silently(tmp_path):
    """A hall 30 m x 20 m whose east wall was never drawn (it sat on a layer the architect
    kept to themselves): the only floor the walls enclose is a 4 m x 4 m office in its
    corner. The build must say that the floor is small for the walls drawn."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    hall = shapely.box(0, 0, 30, 20).difference(shapely.box(0.3, 0.3, 29.7, 19.7))
    hall = hall.difference(shapely.box(29, 0.3, 31, 19.7))      # the east wall is missing
    for part in shapely.get_parts(hall):
        msp.add_lwpolyline(list(part.exterior.coords), close=True, dxfattribs={"layer": "A-WALL"})
    walled_room(msp, 0.3, 0.3, 4.5, 4.5, thickness=0.1)          # the office, closed
    path = save(doc, tmp_path)
    plan = read_floorplan(path)
    # analytic: the office's floor is 4.0 m x 4.0 m = 16 m²; the walls' hull 30 m x 20 m
    assert plan.free_space.area == pytest.approx(16.0, rel=1e-3)
    assert "covers 3% of the area the walls span (600 m\u00b2)" in plan.floor_doubt
    assert plan.floor_doubt in plan.warnings
    result = CliRunner().invoke(main, ["build", str(path), "-o", str(tmp_path / "out"),
                                       "--no-html"])
    assert result.exit_code == 0, result.output
    assert "floor: the floor found (16 m\u00b2) covers 3%" in result.output
    # a closed plan raises no doubt
    assert read_floorplan(OFFICE).floor_doubt == ""


def test_layers_json_carries_warnings_views_and_evidence(tmp_path):
    result = CliRunner().invoke(main, ["layers", str(OFFICE), "--json"])
    assert result.exit_code == 0, result.output
    data = json.loads(result.stdout)
    assert data["unit_source"] == "content" and data["units"] == "mm"
    assert any("header says in" in warning for warning in data["warnings"])
    assert [view["chosen"] for view in data["views"]] == [True, False]
    roles = {layer["name"]: layer["role"] for layer in data["layers"]}
    assert roles["ARCH$0$A-WALL"] == "wall" and roles["ARCH|A-GLAZ"] == "opening"
    assert roles["ARCH$0$A-FLOR-STRS"] == "stair"


def test_region_picks_the_other_drawing(tmp_path):
    # the section stands at x 30-54 m (drawing units mm): --region builds it instead
    plan = read_floorplan(OFFICE, region=(29000, -1000, 55000, 10000))
    assert plan.free_space.bounds[0] >= 30.0
    with pytest.raises(Exception):
        read_floorplan(OFFICE, region=(5, 5, 1, 1))


def test_plan_without_door_swings_is_chosen_over_a_larger_site_plan(tmp_path):
    # doors drawn as bare gaps (no swings, as PDF imports and single-line offices leave
    # them): the site plan beside the house covers six times its area, so size picked it
    doc = new_drawing(units=6)
    msp = doc.modelspace()
    wall_with_gap(msp, 0, 0, 12, 8, thickness=0.3, gap=(2.0, 3.0))
    for x0, x1 in ((0.3, 5.0), (6.0, 11.7)):          # a partition at y 4 with a 1 m doorway
        msp.add_lwpolyline(rectangle(x0, 3.94, x1, 4.06), close=True,
                           dxfattribs={"layer": "A-WALL"})
    # the site plan 20 m east: plot line, the house outline once more, parking bays 2.5 m
    # apart and a road 6 m wide, on a site layer of the wall family (A-WALL-SITE)
    site = {"layer": "A-WALL-SITE"}
    msp.add_lwpolyline(rectangle(32, -10, 72, 25), close=True, dxfattribs=site)
    walled_room(msp, 40, 0, 52, 8, thickness=0.3, layer="A-WALL-SITE")
    for i in range(8):
        msp.add_line((55 + 2.5 * i, -8), (55 + 2.5 * i, -3), dxfattribs=site)
    for y in (20, 26):
        msp.add_line((28, y), (76, y), dxfattribs=site)
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: the house's floor, 11.4 m x 7.4 m inside 0.3 m walls, less the partition
    # (10.4 m x 0.12 m), and nothing of the site plan
    assert plan.free_space.area == pytest.approx(11.4 * 7.4 - 10.4 * 0.12, rel=1e-3)
    assert plan.free_space.bounds[2] < 12.0
    chose = next(w for w in plan.warnings if "separate drawings" in w)
    assert "0 door swings" in chose and "wall faces" in chose, chose


def test_ezdxf_reads_the_sample_back():
    # the sample is a valid DXF: ezdxf's own auditor finds nothing to fix
    doc = ezdxf.readfile(OFFICE)
    assert not doc.audit().has_errors


def _partitioned_room(msp, gap):
    """A 10 m x 8 m room, 0.2 m walls, split by a 0.1 m partition at y = 4 with a gap (x)."""
    walls = shapely.box(0, 0, 10, 8).difference(shapely.box(0.2, 0.2, 9.8, 7.8))
    walls = walls.union(shapely.box(0.2, 3.95, 9.8, 4.05)).difference(
        shapely.box(gap[0], 3.9, gap[1], 4.1))
    for ring in shapely.get_rings(shapely.get_parts(walls)):
        msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": "A-WALL"})


@pytest.mark.parametrize("drawn, kind", [
    ("sliding", "door"),        # common practice: two offset panels drawn in the opening
    ("shut", "closed"),         # an overhead or locked door: one line straight across
    ("glazing", "window"),      # two glazing lines on a layer that does not say which
    ("nothing", "open"),
])
def test_what_is_drawn_in_a_gap_decides_its_kind(tmp_path, drawn, kind):
    doc = new_drawing(6)
    msp = doc.modelspace()
    _partitioned_room(msp, (4.0, 5.6))
    if drawn == "sliding":
        msp.add_lwpolyline(rect := [(4, 3.96), (4.85, 3.96), (4.85, 3.99), (4, 3.99)],
                           close=True, dxfattribs={"layer": "A-DOOR"})
        msp.add_lwpolyline([(x + 0.75, y + 0.05) for x, y in rect], close=True,
                           dxfattribs={"layer": "A-DOOR"})
    elif drawn == "shut":
        msp.add_line((4, 4), (5.6, 4), dxfattribs={"layer": "A-DOOR"})
    elif drawn == "glazing":
        for y in (3.98, 4.02):
            msp.add_line((4, y), (5.6, y), dxfattribs={"layer": "A-OPNG"})
    plan = read_floorplan(save(doc, tmp_path))
    [opening] = plan.openings
    # analytic: the gap spans x 4.0-5.6 m in the partition at y = 4
    assert (opening.kind, opening.width) == (kind, pytest.approx(1.6))
    assert plan.free_space.contains(shapely.Point(4.8, 4.0)) == (kind in ("door", "open"))


def test_walls_on_an_unnamed_layer_are_taken_when_the_wall_layers_enclose_nothing(tmp_path):
    """The structural columns sit on S-COLS (a wall layer by name); the architect's walls on
    a layer whose name says nothing ("Layer 7", as a PDF import or a garbled code page leaves
    them). The columns enclose nothing: rather than stop, the build takes the layer its own
    message would name, and says so."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    for box in (rectangle(0, 0, 20, 12), rectangle(0.2, 0.2, 19.8, 11.8)):   # exploded
        for start, end in zip(box, box[1:] + box[:1]):
            msp.add_line(start, end, dxfattribs={"layer": "Layer 7"})
    for x in (5, 10, 15):
        for y in (3, 6, 9):
            msp.add_lwpolyline(rectangle(x - 0.2, y - 0.2, x + 0.2, y + 0.2), close=True,
                               dxfattribs={"layer": "S-COLS"})
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: 19.6 m x 11.6 m inside the walls, less nine 0.4 m x 0.4 m columns
    assert plan.free_space.area == pytest.approx(19.6 * 11.6 - 9 * 0.16, rel=1e-6)
    assert any("layer 'Layer 7' looks like walls" in warning and "taken for walls too" in warning
               for warning in plan.warnings)
    # named as walls by the user, the columns alone still enclose nothing: no guessing then
    with pytest.raises(DrawingError, match="no enclosed floor"):
        read_floorplan(save(doc, tmp_path), roles=Roles.from_options(walls=["S-COLS"]))
