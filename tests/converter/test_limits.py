"""Resource limits: absurd drawings are refused quickly with a message naming the limit."""

from __future__ import annotations

import time

import ezdxf
import numpy as np
import pytest

from clearway.config import load_config
from clearway.errors import ConfigError, DrawingError, LimitError
from clearway.limits import DEPTH_CEILING, Limits
from clearway.converter import list_layers, read_floorplan


def _room(msp, scale=1.0, layer="A-WALL"):
    """A 10 m x 8 m room with 0.2 m walls, coordinates multiplied by `scale`."""
    for inset in (0.0, 0.2):
        corners = np.array([(inset, inset), (10 - inset, inset), (10 - inset, 8 - inset),
                            (inset, 8 - inset)]) * scale
        msp.add_lwpolyline(corners.tolist(), close=True, dxfattribs={"layer": layer})


def _refused(path, key, **options):
    """Read `path`; assert a one-line LimitError naming `key` and how to raise it; return it."""
    start = time.perf_counter()
    with pytest.raises(LimitError) as caught:
        read_floorplan(path, **options)
    message = str(caught.value)
    assert "\n" not in message
    assert message.startswith(path.name + ": ")
    assert f"over the limit {key} = " in message
    assert f"[limits] {key} = " in message                     # how to raise it
    assert time.perf_counter() - start < 60                    # refused, not worked through (a hang guard, not a speed test)
    return message


def test_millimetre_drawing_read_as_metres_is_refused_by_extent(tmp_path):
    # a 1,000 km x 800 km "room": 1,000,000 units of a drawing in mm with no $INSUNITS,
    # read as metres; the roadmap would need ~1e7 boundary samples at 0.2 m
    doc = ezdxf.new("R2010", units=0)
    _room(doc.modelspace(), scale=1e5)
    path = tmp_path / "unitless.dxf"
    doc.saveas(path)
    message = _refused(path, "max_extent")
    assert "--units" in message
    assert "1000000" in message                      # analytic: 10 m * 1e5 = 1e6 m side
    plan = read_floorplan(path, units="mm")          # the right unit reads it
    # analytic: 1e6 mm = 1000 m, plus half the 0.05 m nominal band on each side
    assert plan.extents[2] - plan.extents[0] == pytest.approx(1000.05)


def test_survey_coordinates_are_within_the_limits(tmp_path):
    # UTM-like coordinates (x ~ 5e5 m, y ~ 5.4e6 m) are ordinary; common practice
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    for inset in (0.0, 0.2):
        msp.add_lwpolyline([(5e5 + inset, 5.4e6 + inset), (5e5 + 10 - inset, 5.4e6 + inset),
                            (5e5 + 10 - inset, 5.4e6 + 8 - inset), (5e5 + inset, 5.4e6 + 8 - inset)],
                           close=True, dxfattribs={"layer": "A-WALL"})
    path = tmp_path / "survey.dxf"
    doc.saveas(path)
    assert read_floorplan(path).free_space.area == pytest.approx(9.6 * 7.6, rel=1e-9)
    message = _refused(path, "max_coordinate", limits=Limits(max_coordinate=1e6))
    assert "5400008" in message


def test_huge_circle_is_refused_by_curve_vertices(tmp_path):
    # analytic: chords within 1 mm of a circle of radius 1e9 m need
    # 2 pi / (2 acos(1 - 1e-12)) ~ 2.2 million vertices
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    _room(msp)
    msp.add_circle((0, 0), 1e9, dxfattribs={"layer": "A-WALL"})
    path = tmp_path / "circle.dxf"
    doc.saveas(path)
    message = _refused(path, "max_curve_vertices")
    assert "CIRCLE on layer 'A-WALL'" in message


def test_spline_with_many_control_points_is_refused_before_evaluation(tmp_path):
    # the same check refuses a million-vertex spline; 60,000 keep the test fast
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    _room(msp)
    x = np.linspace(0, 10, 60_000)
    msp.add_open_spline(np.column_stack([x, 4 + np.sin(x), np.zeros_like(x)]), degree=3,
                        dxfattribs={"layer": "A-WALL"})
    path = tmp_path / "spline.dxf"
    doc.saveas(path)
    message = _refused(path, "max_curve_vertices", limits=Limits(max_curve_vertices=50_000))
    assert "SPLINE" in message


def test_enormous_minsert_is_refused(tmp_path):
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    _room(msp)
    doc.blocks.new("BAY").add_lwpolyline([(0, 0), (1, 0), (1, 1), (0, 1)], close=True)
    msp.add_blockref("BAY", (1, 1), dxfattribs={"layer": "A-RACK"}).grid(
        size=(2 ** 31 - 1, 2 ** 31 - 1), spacing=(2, 2))
    path = tmp_path / "minsert.dxf"
    doc.saveas(path)
    assert "cells of a MINSERT of block 'BAY'" in _refused(path, "max_entities")
    with pytest.raises(LimitError, match="max_entities"):
        list_layers(path)


def test_nested_minserts_are_refused_by_expanded_count(tmp_path):
    # analytic: 1,000 x 1,000 cells of 1,000 x 1,000 cells = 1e12 parts
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    _room(msp)
    doc.blocks.new("BAY").add_line((0, 0), (0.5, 0))
    doc.blocks.new("ROW").add_blockref("BAY", (0, 0)).grid(size=(1000, 1000), spacing=(1, 1))
    msp.add_blockref("ROW", (1, 1), dxfattribs={"layer": "A-RACK"}).grid(
        size=(1000, 1000), spacing=(2000, 2000))
    path = tmp_path / "nested.dxf"
    doc.saveas(path)
    message = _refused(path, "max_entities")
    assert "block expansion" in message


def _nested_blocks(tmp_path, depth, *, cycle=False):
    """Blocks B0 <- B1 <- ... each inserting the previous; model space inserts the last."""
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    _room(msp)
    doc.blocks.new("B0").add_lwpolyline([(0, 0), (0.5, 0), (0.5, 0.5), (0, 0.5)], close=True)
    for level in range(1, depth):
        doc.blocks.new(f"B{level}").add_blockref(f"B{level - 1}", (0, 0))
    if cycle:   # B0 inserts the last: B0 -> B(depth-1) -> ... -> B1 -> B0
        doc.blocks.get("B0").add_blockref(f"B{depth - 1}", (0, 0))
    msp.add_blockref(f"B{depth - 1}", (4, 4), dxfattribs={"layer": "A-RACK"})
    path = tmp_path / f"nested_{depth}{'_cycle' if cycle else ''}.dxf"
    doc.saveas(path)
    return path


def test_deep_block_nesting(tmp_path):
    # analytic: the innermost 0.5 m square arrives unchanged through 30 identity INSERTs
    plan = read_floorplan(_nested_blocks(tmp_path, 30))
    assert plan.regions["racking"].area == pytest.approx(0.25)
    message = _refused(_nested_blocks(tmp_path, 100), "max_block_depth")
    assert "nesting depth" in message
    # raised close to its ceiling, the reader still needs no more than Python's stack
    deep = read_floorplan(_nested_blocks(tmp_path, DEPTH_CEILING - 5),
                          limits=Limits(max_block_depth=DEPTH_CEILING))
    assert deep.regions["racking"].area == pytest.approx(0.25)


@pytest.mark.parametrize("depth", [1, 2, 5, 40])
def test_block_inserting_itself_through_a_chain(tmp_path, depth):
    path = _nested_blocks(tmp_path, depth, cycle=True)
    with pytest.raises(DrawingError, match=r"inserts itself \(B\d+ -> .*B\d+\)") as caught:
        read_floorplan(path)
    assert "\n" not in str(caught.value)


def test_free_space_boundary_length_limit(tmp_path):
    doc = ezdxf.new("R2010", units=6)
    _room(doc.modelspace())
    path = tmp_path / "room.dxf"
    doc.saveas(path)
    # analytic: the free floor is the 9.6 m x 7.6 m inner face, boundary 34.4 m
    assert read_floorplan(path).free_space.boundary.length == pytest.approx(34.4)
    assert "34.4" in _refused(path, "max_boundary_length", limits=Limits(max_boundary_length=30))


def test_file_size_limit(tmp_path, samples):
    path = samples / "clinic.dxf"
    with pytest.raises(LimitError, match=r"clinic.dxf: file size in MB is 0.02\d+, over the "
                                         r"limit max_file_size = 0.01"):
        read_floorplan(path, limits=Limits(max_file_size=0.01))


def test_limits_from_config_file(tmp_path):
    config = tmp_path / "site.toml"
    config.write_text("[limits]\nmax_extent = 50000.0\nmax_block_depth = 100\n")
    section = load_config(config)["limits"]
    limits = Limits.from_config(section)
    assert (limits.max_extent, limits.max_block_depth) == (50000.0, 100)
    assert limits.max_entities == Limits().max_entities
    config.write_text("[limits]\nmax_block_depth = 1.5\n")
    with pytest.raises(ConfigError, match="wrong type"):
        load_config(config)
    with pytest.raises(ConfigError, match="max_block_depth must be at most 400"):
        Limits(max_block_depth=10_000)
    with pytest.raises(ConfigError, match=r"max_extent must be a number > 0, got -1"):
        Limits(max_extent=-1)
    with pytest.raises(ConfigError, match="unknown key 'max_things'"):
        Limits.from_config({"max_things": 3})
