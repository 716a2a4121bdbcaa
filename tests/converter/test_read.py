"""Reading: blocks placed by INSERT and MINSERT, layer 0, layer states, bad input."""

import math

import pytest
import shapely

from clearway.errors import ConfigError, DrawingError
from clearway.converter import Roles, list_layers, read_floorplan
from tests.conftest import new_drawing, rectangle, save, walled_room

RACK = "A-EQPM-RACK"


def bay_block(doc, name="BAY", layer="0"):
    block = doc.blocks.new(name)
    block.add_lwpolyline(rectangle(0, 0, 2.7, 1.1), close=True, dxfattribs={"layer": layer})
    return block


def warehouse(tmp_path, place, name="plan.dxf"):
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, -20, -20, 40, 40)
    bay_block(doc)
    place(doc, msp)
    return read_floorplan(save(doc, tmp_path, name))


def test_layer_0_in_a_block_takes_the_insert_layer(tmp_path):
    plan = warehouse(tmp_path, lambda doc, msp: (
        msp.add_blockref("BAY", (0, 0), dxfattribs={"layer": RACK}),
        msp.add_blockref("BAY", (10, 0), dxfattribs={"layer": "A-FURN"})))
    # analytic: one 2.7 x 1.1 bay; the one on an unmapped layer is no obstacle
    assert plan.regions["racking"].area == pytest.approx(2.97)
    assert plan.regions["racking"].bounds == pytest.approx((0, 0, 2.7, 1.1))


def test_named_layer_inside_a_block_is_kept(tmp_path):
    def place(doc, msp):
        block = doc.blocks.new("POSTS")
        block.add_circle((0, 0), 0.1, dxfattribs={"layer": "A-COLS"})
        msp.add_blockref("POSTS", (5, 5), dxfattribs={"layer": "A-FURN"})
    plan = warehouse(tmp_path, place)
    assert shapely.Point(5, 5).within(plan.regions["wall"])


def test_minsert_array_places_every_cell(tmp_path):
    plan = warehouse(tmp_path, lambda doc, msp: msp.add_blockref(
        "BAY", (1, 2), dxfattribs={"layer": RACK}).grid(size=(3, 4), spacing=(1.1, 2.7)))
    # analytic: 3 rows x 4 columns of bays edge to edge: 10.8 m x 3.3 m
    assert plan.regions["racking"].area == pytest.approx(12 * 2.97)
    assert plan.regions["racking"].bounds == pytest.approx((1, 2, 11.8, 5.3))
    assert len(plan.regions["racking"].geoms) == 1


def test_rotated_minsert_rotates_its_grid(tmp_path):
    plan = warehouse(tmp_path, lambda doc, msp: msp.add_blockref(
        "BAY", (0, 0), dxfattribs={"layer": RACK, "rotation": 90}).grid(size=(1, 3), spacing=(1, 2.7)))
    # analytic: rotating by 90 deg maps (x, y) to (-y, x): a 1.1 x 8.1 column
    assert plan.regions["racking"].bounds == pytest.approx((-1.1, 0, 0, 8.1))


def test_mirrored_insert(tmp_path):
    plan = warehouse(tmp_path, lambda doc, msp: msp.add_blockref(
        "BAY", (10, 0), dxfattribs={"layer": RACK, "xscale": -1}))
    # analytic: xscale -1 mirrors about the insertion point's vertical
    assert plan.regions["racking"].bounds == pytest.approx((7.3, 0, 10, 1.1))


def test_non_uniform_scale_rotation_and_nesting(tmp_path):
    def place(doc, msp):
        pair = doc.blocks.new("PAIR")
        pair.add_blockref("BAY", (0, 0))
        pair.add_blockref("BAY", (0, 1.1))
        msp.add_blockref("PAIR", (5, 5), dxfattribs={"layer": RACK, "xscale": 2, "yscale": 0.5,
                                                      "rotation": 90})
    plan = warehouse(tmp_path, place)
    # analytic: PAIR is 2.7 x 2.2; scaled 5.4 x 1.1; rotated 90 deg about (5, 5)
    assert plan.regions["racking"].area == pytest.approx(5.4 * 1.1)
    assert plan.regions["racking"].bounds == pytest.approx((3.9, 5, 5, 10.4))


def test_extrusion_mirrors_a_circle(tmp_path):
    def place(doc, msp):
        msp.add_circle((3, 4), 0.5, dxfattribs={"layer": "A-AREA-KEEPOUT",
                                                "extrusion": (0, 0, -1)})
    plan = warehouse(tmp_path, place)
    # DXF reference, OCS arbitrary axis: extrusion (0, 0, -1) maps OCS x to WCS -x
    centre = plan.regions["keepout"].centroid
    assert (centre.x, centre.y) == pytest.approx((-3, 4), abs=1e-3)


def test_frozen_and_off_layers_are_ignored(tmp_path):
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    doc.layers.add("A-EQPM-RACK-OLD").freeze()
    doc.layers.add("A-EQPM-RACK-OFF").off()
    msp.add_lwpolyline(rectangle(1, 1, 3, 2), close=True, dxfattribs={"layer": "A-EQPM-RACK-OLD"})
    msp.add_lwpolyline(rectangle(5, 1, 7, 2), close=True, dxfattribs={"layer": "A-EQPM-RACK-OFF"})
    path = save(doc, tmp_path)
    plan = read_floorplan(path)
    assert plan.regions["racking"].is_empty
    assert sum("frozen or off" in warning for warning in plan.warnings) == 2
    rows = {row.name: row for row in list_layers(path).layers}
    assert rows["A-EQPM-RACK-OLD"].frozen and rows["A-EQPM-RACK-OFF"].off


def test_layer_table_counts_an_insert_once_on_its_own_layer(samples):
    table = list_layers(samples / "distribution_centre.dxf")
    rows = {row.name: row for row in table.layers}
    # from make_samples.py: 6 MINSERT + 10 run INSERTs + 1 mirrored INSERT on the rack layer
    assert dict(rows["A-EQPM-RACK"].entities) == {"INSERT": 17}
    assert rows["A-EQPM-RACK"].role == "racking" and rows["A-WALL-EXTR"].role == "wall"
    assert rows["A-EQPM-RACK"].extents == pytest.approx((4.0, 11.6, 59.7, 39.7))
    assert table.units == "mm" and table.m_per_unit == 0.001


def test_layer_roles_match_case_insensitively(tmp_path):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10, 8, layer="a-wall-extr")
    assert read_floorplan(save(doc, tmp_path)).regions["wall"].area > 0


# --- bad input ---------------------------------------------------------------------------


def sample_bytes(samples):
    return (samples / "clinic.dxf").read_bytes()


@pytest.mark.parametrize("content, message", [
    (b"", "file is empty"),
    (b"\x89PNG\r\n\x1a\n" + bytes(range(256)) * 4, "not a DXF file"),
    (b"AC1032\x00\x00\x00" + bytes(64), "DWG file, not DXF"),
    ("half", "truncated"),
    ("no-eof", "no end-of-file marker"),
])
def test_unreadable_files_are_refused(tmp_path, samples, capfd, content, message):
    data = sample_bytes(samples)
    if content == "half":
        content = data[: len(data) // 2]
    elif content == "no-eof":
        content = data[: data.rindex(b"EOF")]
    path = tmp_path / "bad.dxf"
    path.write_bytes(content)
    with pytest.raises(DrawingError, match=message) as caught:
        read_floorplan(path)
    assert "bad.dxf" in str(caught.value) and "\n" not in str(caught.value)
    captured = capfd.readouterr()
    assert captured.out == "" and captured.err == ""  # no library chatter


def test_missing_file(tmp_path):
    with pytest.raises(DrawingError, match=r"missing\.dxf: file not found"):
        read_floorplan(tmp_path / "missing.dxf")


def test_empty_model_space(tmp_path):
    with pytest.raises(DrawingError, match="model space is empty"):
        read_floorplan(save(new_drawing(6), tmp_path))
    assert list_layers(tmp_path / "plan.dxf").layers  # the table still answers


@pytest.mark.parametrize("through_other", [False, True])
def test_block_that_inserts_itself(tmp_path, through_other):
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    first = doc.blocks.new("LOOP_A")
    first.add_line((0, 0), (1, 0))
    if through_other:
        second = doc.blocks.new("LOOP_B")
        second.add_blockref("LOOP_A", (1, 1))
        first.add_blockref("LOOP_B", (1, 1))
    else:
        first.add_blockref("LOOP_A", (1, 1))
    msp.add_blockref("LOOP_A", (2, 2), dxfattribs={"layer": "A-WALL"})
    with pytest.raises(DrawingError, match="block 'LOOP_A' inserts itself"):
        read_floorplan(save(doc, tmp_path))


def test_mapped_layers_that_hold_nothing(room_drawing):
    doc, msp, write = room_drawing
    with pytest.raises(DrawingError, match=r"--racking 'SHELF\*' matches no visible layer"):
        read_floorplan(write(), roles=Roles.from_options(racking=["SHELF*"]))
    with pytest.raises(DrawingError, match="no wall or boundary layer holds entities"):
        read_floorplan(write(), roles=Roles.from_options(walls=["NOTHING"]) and
                       Roles({"wall": ("NOTHING",)}))


def test_coordinates_that_are_not_finite(room_drawing, tmp_path):
    doc, msp, write = room_drawing
    msp.add_line((1, 1), (2.5, 2), dxfattribs={"layer": "A-WALL"})
    path = write()
    text = path.read_text()
    assert " 11\n2.5\n" in text  # group code 11: the line's end point x
    path.write_text(text.replace(" 11\n2.5\n", " 11\ninf\n", 1))
    with pytest.raises(DrawingError, match="not finite"):
        read_floorplan(path)


def test_bad_options():
    with pytest.raises(ConfigError, match="gap_tolerance must be a length"):
        read_floorplan("x.dxf", gap_tolerance=-1)
    with pytest.raises(ConfigError, match="units must be one of"):
        read_floorplan("x.dxf", units="furlong")
    assert math.isclose(0.0254 * 36, 0.9144)


def test_binary_dxf_reads_like_ascii(tmp_path):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10, 8)
    doc.saveas(tmp_path / "binary.dxf", fmt="bin")
    doc.saveas(tmp_path / "ascii.dxf")
    binary, ascii_ = read_floorplan(tmp_path / "binary.dxf"), read_floorplan(tmp_path / "ascii.dxf")
    assert binary.free_space.equals(ascii_.free_space)
    # analytic: 9.6 m x 7.6 m inside 0.2 m walls
    assert binary.free_space.area == pytest.approx(9.6 * 7.6)
    truncated = tmp_path / "cut.dxf"
    truncated.write_bytes((tmp_path / "binary.dxf").read_bytes()[:-200])
    with pytest.raises(DrawingError, match="binary DXF is truncated"):
        read_floorplan(truncated)


def test_reading_restores_the_garbage_collector(tmp_path):
    # read_drawing pauses Python's cyclic collector; it must come back on after a good
    # read and after a refused file, and stay off if the caller had turned it off
    import gc
    walls = new_drawing(6)
    walled_room(walls.modelspace(), 0, 0, 10, 10)
    path = save(walls, tmp_path)
    assert gc.isenabled()
    read_floorplan(path)
    assert gc.isenabled()
    with pytest.raises(DrawingError, match="file not found"):
        read_floorplan(tmp_path / "missing.dxf")
    assert gc.isenabled()
    gc.disable()
    try:
        read_floorplan(path)
        assert not gc.isenabled()
    finally:
        gc.enable()


@pytest.mark.parametrize("header, expected", [
    # source: DXF reference, HEADER section: $TDCREATE / $TDUPDATE hold the Julian day
    # number plus the fraction of the day; JDN 2451545 is 2000-01-01 (Meeus, Astronomical
    # Algorithms, 1998, ch. 7), and 2460000 is 2023-02-24
    ({"$TDUPDATE": 2451545.0}, "2000-01-01"),
    ({"$TDUPDATE": 2460000.75, "$TDCREATE": 2451545.0}, "2023-02-24"),
    ({"$TDUPDATE": 0.0, "$TDCREATE": 2460000.25}, "2023-02-24"),
    ({}, ""),
    ({"$TDUPDATE": float("nan")}, ""),
    ({"$TDUPDATE": "not a date"}, ""),
])
def test_drawing_date_from_the_header(header, expected):
    from clearway.converter.document import saved_date
    assert saved_date(header) == expected


def test_floor_plan_carries_the_sample_drawing_date(samples):
    # source: sample_drawings/make_samples.py ISSUED, written as $TDUPDATE
    assert read_floorplan(samples / "distribution_centre_rev_b.dxf").drawing_date == "2026-11-16"


def test_insert_matrices_match_ezdxf_bit_for_bit(tmp_path):
    """The plan matrix read from the attributes set on an INSERT (defaults filled in, each
    block's base point looked up once) is ezdxf's own ``Insert.matrix44``, to the bit (a
    zero may differ in sign)."""
    import ezdxf
    import numpy as np

    from clearway.converter.inserts import insert_matrices

    doc = new_drawing(6)
    msp = doc.modelspace()
    bay_block(doc)
    moved = bay_block(doc, "MOVED")
    moved.block.dxf.base_point = (0.35, -1.25, 0)
    placements = [("BAY", (1, 2), {}), ("MOVED", (3.3, -4.1), {}),
                  ("MOVED", (7, 8), {"rotation": 33.3, "xscale": -1.5, "yscale": 0.7}),
                  ("BAY", (0.1, 0.2), {"rotation": 90}), ("MOVED", (5, 5), {"yscale": 2})]
    for name, point, attribs in placements:
        msp.add_blockref(name, point, dxfattribs=attribs)
    read = ezdxf.readfile(save(doc, tmp_path, "inserts.dxf"))
    cache = {}
    for insert in read.modelspace().query("INSERT"):
        # source: ezdxf's Insert.matrix44, rows (x axis, y axis, z axis, origin)
        rows = np.array(list(insert.matrix44().rows()), dtype=float)[[0, 1, 3], :2]
        assert np.array_equal(insert_matrices(insert, base_points=cache)[0], rows)
    assert set(cache) == {"BAY", "MOVED"}


def test_polyline_points_are_ezdxfs(tmp_path):
    """A bulged, widened polyline reads the same x, y, widths and bulges as ezdxf's
    get_points: the arc flattened from them is the one ezdxf's own points give."""
    import ezdxf
    import numpy as np

    from clearway.converter.entities import flatten_entity, polyline_parts

    doc = new_drawing(6)
    points = [(0, 0, 0.1, 0.2, 0.5), (4, 0, 0, 0, 0), (4, 3, 0, 0, -0.25), (0, 3)]
    doc.modelspace().add_lwpolyline(points, format="xyseb", close=True)
    polyline = ezdxf.readfile(save(doc, tmp_path, "bulge.dxf")).modelspace().query("LWPOLYLINE")[0]
    expected = polyline_parts(np.array(polyline.get_points("xyseb"), dtype=float), True,
                              polyline.dxf.const_width, polyline.ocs(), polyline.dxf.elevation,
                              1e-3)
    found = flatten_entity(polyline, 1e-3, None)
    assert [kind for _, kind in found] == [kind for _, kind in expected]
    assert all(np.array_equal(a, b) for (a, _), (b, _) in zip(found, expected))
