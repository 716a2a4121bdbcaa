"""Issue 15: every visible layer with linework and no role is named, with what it holds;
a layer whose default role the user's patterns replaced gets a warning; overhead and
annotation layers the defaults leave out on purpose are listed apart, without a warning."""

from __future__ import annotations

from collections import Counter

import pyogrio
import pytest

from clearway.converter import Roles, read_floorplan
from clearway.converter.floorplan import LeftOutLayer


def draw(room_drawing):
    doc, msp, write = room_drawing
    for x in (3.0, 7.0):                                    # two round columns
        msp.add_circle((x, 4.0), 0.25, dxfattribs={"layer": "A-COLS"})
    msp.add_lwpolyline([(1, 6), (2, 6), (2, 7), (1, 7)], close=True,
                       dxfattribs={"layer": "A-FURN"})      # furniture: no default role
    msp.add_line((1, 1), (9, 1), dxfattribs={"layer": "A-WALL-OVHD"})   # overhead
    msp.add_line((1, 2), (2, 2), dxfattribs={"layer": "A-ANNO-TEXT"})   # annotation
    msp.add_text("NOTE", dxfattribs={"layer": "A-ANNO-TEXT", "insert": (1, 2.5)})
    msp.add_text("LOBBY", dxfattribs={"layer": "A-AREA-IDEN", "insert": (5, 5)})  # text only
    msp.add_point((8, 7), dxfattribs={"layer": "SURVEY"})   # points only
    doc.layers.add("A-OLD").freeze()
    msp.add_line((1, 3), (9, 3), dxfattribs={"layer": "A-OLD"})        # frozen: not shown
    return write()


def test_defaults_list_what_no_role_takes(room_drawing):
    plan = read_floorplan(draw(room_drawing))
    assert plan.left_out == (
        # A-ANNO-TEXT and A-WALL-OVHD: annotation and overhead, left out on purpose
        LeftOutLayer("A-ANNO-TEXT", (("LINE", 1), ("TEXT", 1)), "", True, ""),
        LeftOutLayer("A-FURN", (("LWPOLYLINE", 1),), "", False, ""),
        LeftOutLayer("A-WALL-OVHD", (("LINE", 1),), "wall", True, ""),
        LeftOutLayer("SURVEY", (("POINT", 1),), "", False, ""))
    # nothing the user did replaced a default role: no warning about layers
    assert not [w for w in plan.warnings if "no role" in w]


def test_replaced_default_role_is_warned_with_the_layer_and_what_it_holds(room_drawing):
    plan = read_floorplan(draw(room_drawing), roles=Roles.from_options(walls=["A-WAL*"]))
    columns = next(layer for layer in plan.left_out if layer.name == "A-COLS")
    assert (columns.default_role, columns.replaced_by, columns.ignored) == ("wall", "--walls",
                                                                          False)
    warnings = [w for w in plan.warnings if "no role" in w]
    assert warnings == ["plan.dxf: layer 'A-COLS' has 2 circles and no role: its default role "
                        "wall was replaced by --walls 'A-WAL*'; add --walls 'A-COLS' to keep it"]
    # A-WALL-OVHD now matches the user's own pattern A-WAL*, which wins over the defaults
    assert "A-WALL-OVHD" not in {layer.name for layer in plan.left_out}


def test_counts_agree_with_gdal(room_drawing):
    path = draw(room_drawing)
    plan = read_floorplan(path)
    meta, _, _, fields = pyogrio.raw.read(path)
    layers = fields[meta["fields"].tolist().index("Layer")]
    # GDAL's DXF driver reads every model-space entity of a visible layer as one feature
    gdal = Counter(str(layer) for layer in layers)
    for layer in plan.left_out:
        assert sum(count for _, count in layer.entities) == gdal[layer.name], layer.name


@pytest.mark.parametrize(("entities", "words"), [
    ((("CIRCLE", 2),), "2 circles"),
    ((("LWPOLYLINE", 1), ("POLYLINE", 2), ("LINE", 1)), "3 polylines and 1 line"),
    ((("HATCH", 2), ("INSERT", 1), ("ARC", 1)), "2 hatches, 1 arc and 1 block"),
    ((), "linework inside blocks"),
])
def test_what_a_layer_holds_in_words(entities, words):
    # common practice: English plurals, largest count first, ties in alphabetical order
    assert LeftOutLayer("X", entities).holds == words
