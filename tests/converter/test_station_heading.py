"""Issue 15: a station block's kind (TYPE/KIND attribute, block name, label) and heading
(the way the block's +X axis points in the plan, whatever rotation, mirroring or extrusion
put it there)."""

from __future__ import annotations

import math

import ezdxf
import pyogrio
import pytest

from clearway.converter import read_floorplan

STATIONS = "A-EQPM-STATION"


def facing_block(doc, name):
    """A station block that faces its own +X: a pad and an arrow from (0, 0) to (1, 0)."""
    block = doc.blocks.new(name)
    block.add_circle((0, 0), 0.3)
    block.add_line((0, 0), (1, 0))
    block.add_attdef("LABEL", (0.4, 0.4), dxfattribs={"height": 0.2})
    return block


def arrow_heading(insert):
    """The arrow's direction as ezdxf itself places the block (virtual_entities), degrees.

    ezdxf's own transformation of the block, independent of clearway's matrices.
    """
    line = next(e for e in insert.virtual_entities() if e.dxftype() == "LINE")
    start, end = line.dxf.start, line.dxf.end
    return math.degrees(math.atan2(end.y - start.y, end.x - start.x)) % 360.0


def angle_gap(a, b):
    return abs((a - b + 180.0) % 360.0 - 180.0)


# (label, dxf attributes of the INSERT, heading by analytic geometry)
PLACEMENTS = [
    # DXF group 50 is the rotation in degrees counter-clockwise (DXF reference, INSERT)
    ("R0", {"rotation": 0}, 0.0),
    ("R90", {"rotation": 90}, 90.0),
    ("RM45", {"rotation": -45}, 315.0),            # -45 deg is 315 deg in [0, 360)
    ("R200", {"rotation": 200}, 200.0),
    ("R720", {"rotation": 720}, 0.0),              # two whole turns
    # analytic: xscale -1 mirrors the block's +X onto -X before the 30 deg rotation
    ("MIRROR", {"rotation": 30, "xscale": -1}, 210.0),
    # analytic: a scale changes no direction
    ("SCALED", {"rotation": 60, "xscale": 2.5, "yscale": 0.5}, 60.0),
    # DXF reference, arbitrary axis algorithm: extrusion (0, 0, -1) gives the OCS x axis
    # Wy x N = (-1, 0, 0) and y axis (0, 1, 0), so 30 deg in the OCS points at 180 - 30
    ("UNDER", {"rotation": 30, "extrusion": (0, 0, -1)}, 150.0),
]


@pytest.fixture
def placed(room_drawing):
    doc, msp, write = room_drawing
    facing_block(doc, "PAD")
    inserts = {}
    for index, (label, attribs, _) in enumerate(PLACEMENTS):
        x, y = 1.0 + index, 2.0 + (index % 2) * 3.0
        position = (-x, y) if "extrusion" in attribs else (x, y)   # the OCS mirrors x
        insert = msp.add_blockref("PAD", position, dxfattribs={"layer": STATIONS, **attribs})
        insert.add_auto_attribs({"LABEL": label})
        inserts[label] = insert
    return inserts, read_floorplan(write())


def test_heading_is_the_way_the_block_faces(placed):
    inserts, plan = placed
    found = {s.label: s for s in plan.stations}
    for label, _, expected in PLACEMENTS:
        assert found[label].heading == pytest.approx(expected, abs=1e-9), label
        # the same direction as ezdxf draws the block's arrow
        assert angle_gap(found[label].heading, arrow_heading(inserts[label])) < 1e-9, label
        assert 0.0 <= found[label].heading < 360.0


def test_station_under_extrusion_sits_where_ezdxf_places_it(placed):
    inserts, plan = placed
    station = next(s for s in plan.stations if s.label == "UNDER")
    circle = next(e for e in inserts["UNDER"].virtual_entities() if e.dxftype() == "CIRCLE")
    centre = circle.ocs().to_wcs(circle.dxf.center)
    # ezdxf's placement of the pad's centre, to the 0.1 mm clearway rounds stations to
    assert (station.x, station.y) == pytest.approx((centre.x, centre.y), abs=1e-4)


def test_every_cell_of_a_minsert_has_the_heading(room_drawing):
    doc, msp, write = room_drawing
    facing_block(doc, "DOCK_PAD")
    insert = msp.add_blockref("DOCK_PAD", (2, 2), dxfattribs={"layer": STATIONS,
                                                              "rotation": 90})
    insert.dxf.row_count, insert.dxf.column_count = 1, 3
    insert.dxf.column_spacing = 2.0
    plan = read_floorplan(write())
    # analytic: columns run along the block's +X, turned 90 deg: x = 2, y = 2, 4, 6
    assert sorted((s.x, s.y) for s in plan.stations) == [(2, 2), (2, 4), (2, 6)]
    assert [(s.kind, s.heading) for s in plan.stations] == [("dock", 90.0)] * 3


def test_kind_from_attribute_then_name_then_label(room_drawing):
    doc, msp, write = room_drawing
    for name in ("CHARGER_PAD", "BAY"):
        facing_block(doc, name).add_attdef("TYPE", (0.4, 0.0), dxfattribs={"height": 0.2})
    facing_block(doc, "MARK")
    # the TYPE attribute as written wins over any word in the name
    msp.add_blockref("CHARGER_PAD", (2, 2), dxfattribs={"layer": STATIONS}).add_auto_attribs(
        {"LABEL": "A1", "TYPE": "tote drop"})
    # no TYPE: the block name says charger
    msp.add_blockref("CHARGER_PAD", (4, 2), dxfattribs={"layer": STATIONS}).add_auto_attribs(
        {"LABEL": "A2"})
    # the name says nothing: the label does ("DOCK")
    msp.add_blockref("MARK", (6, 2), dxfattribs={"layer": STATIONS}).add_auto_attribs(
        {"LABEL": "DOCK-7"})
    # nothing says a kind: the block name is the kind ("any text")
    msp.add_blockref("MARK", (8, 2), dxfattribs={"layer": STATIONS}).add_auto_attribs(
        {"LABEL": "Q9"})
    # a point: no block, no heading; its text label says pick
    msp.add_point((2, 6), dxfattribs={"layer": STATIONS})
    msp.add_text("PICK-3", dxfattribs={"layer": STATIONS, "insert": (2.2, 6.2), "height": 0.2})
    plan = read_floorplan(write())
    assert {s.label: (s.kind, s.heading) for s in plan.stations} == {
        "A1": ("tote drop", 0.0), "A2": ("charger", 0.0), "DOCK-7": ("dock", 0.0),
        "Q9": ("MARK", 0.0), "PICK-3": ("pick", None)}


def test_a_type_attribute_is_never_the_label(room_drawing):
    doc, msp, write = room_drawing
    block = doc.blocks.new("BAY")
    block.add_circle((0, 0), 0.3)
    block.add_attdef("TYPE", (0.4, 0.0), dxfattribs={"height": 0.2})
    for x in (3, 7):        # two bays of one type: their TYPE is no label, so no clash
        msp.add_blockref("BAY", (x, 4), dxfattribs={"layer": STATIONS}).add_auto_attribs(
            {"TYPE": "dock"})
    plan = read_floorplan(write())
    assert [(s.label, s.kind) for s in plan.stations] == [("STATION-001", "dock"),
                                                         ("STATION-002", "dock")]


def test_gdal_reads_the_same_rotation(tmp_path):
    """GDAL's DXF driver, blocks not inlined, reports each INSERT's BlockAngle."""
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    for x0, y0, x1, y1 in ((0, 0, 10, 0.2), (0, 7.8, 10, 8), (0, 0, 0.2, 8), (9.8, 0, 10, 8)):
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True,
                           dxfattribs={"layer": "A-WALL"})
    facing_block(doc, "PAD")
    for index, angle in enumerate((0, 37.5, 90, 300)):
        msp.add_blockref("PAD", (2 + 2 * index, 4), dxfattribs={
            "layer": STATIONS, "rotation": angle}).add_auto_attribs({"LABEL": f"S{index}"})
    path = tmp_path / "plan.dxf"
    doc.saveas(path)
    pyogrio.set_gdal_config_options({"DXF_INLINE_BLOCKS": False})
    try:
        meta, _, _, fields = pyogrio.raw.read(path, layer="entities")
    finally:
        pyogrio.set_gdal_config_options({"DXF_INLINE_BLOCKS": None})
    names = list(meta["fields"])
    rows = zip(*[fields[names.index(name)] for name in ("BlockName", "BlockAngle")])
    gdal = sorted(float(angle) % 360.0 for block, angle in rows if block == "PAD")
    ours = sorted(s.heading for s in read_floorplan(path).stations)
    assert ours == pytest.approx(gdal, abs=1e-9) and len(ours) == 4
