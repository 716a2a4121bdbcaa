"""The [limits] section of --config on the command line: honoured by layers and build."""

from __future__ import annotations

import dataclasses
import json
import re
import typing

import pytest
from click.testing import CliRunner

from clearway.cli import converter_options, main
from clearway.config import SCHEMA, load_config
from clearway.limits import Limits
from tests.conftest import new_drawing, save, walled_room

FILES = {"roadmap.graphml", "roadmap.geojson", "roadmap.svg", "report.json", "roadmap.html"}


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args])


def nested_blocks(folder, depth):
    """A 10 m x 8 m room holding one 0.5 m rack square reached through `depth` blocks."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    doc.blocks.new("B0").add_lwpolyline([(0, 0), (0.5, 0), (0.5, 0.5), (0, 0.5)], close=True)
    for level in range(1, depth):
        doc.blocks.new(f"B{level}").add_blockref(f"B{level - 1}", (0, 0))
    msp.add_blockref(f"B{depth - 1}", (4, 4), dxfattribs={"layer": "A-RACK"})
    return save(doc, folder, f"nested_{depth}.dxf")


def config_file(folder, text):
    path = folder / "site.toml"
    path.write_text(text, encoding="utf-8")
    return path


def one_error_line(result) -> str:
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), lines
    assert "Traceback" not in result.stderr
    return lines[0]


def test_schema_limits_are_the_limits_dataclass():
    # one definition: the config file accepts exactly the fields of Limits, typed alike
    fields = dataclasses.fields(Limits)
    assert set(SCHEMA["limits"]) == {item.name for item in fields}
    hints = typing.get_type_hints(Limits)
    for item in fields:
        expected = SCHEMA["limits"][item.name]
        accepted = expected if isinstance(expected, tuple) else (expected,)
        assert isinstance(item.default, accepted)              # the default passes the file check
        assert (expected is int) == (hints[item.name] is int)  # counts must be whole numbers


def test_converter_options_carry_the_limits(tmp_path):
    config = config_file(tmp_path, "[limits]\nmax_block_depth = 128\nmax_extent = 500.0\n")
    limits = converter_options({"config": str(config)})["limits"]
    assert limits == Limits(max_block_depth=128, max_extent=500.0)
    assert converter_options({})["limits"] == Limits()


def test_deep_nesting_refused_by_default_and_let_through_by_the_config(tmp_path):
    # 100 nested blocks exceed the default max_block_depth = 64 (clearway/limits.py)
    drawing = nested_blocks(tmp_path, 100)
    for command in (["layers", drawing], ["build", drawing, "-o", tmp_path / "out"]):
        line = one_error_line(run(*command))
        assert "over the limit max_block_depth = 64" in line
        assert "[limits] max_block_depth = " in line            # says how to raise it
    assert not (tmp_path / "out").exists()

    config = config_file(tmp_path, "[limits]\nmax_block_depth = 128\n")
    listed = run("layers", drawing, "--json", "--config", config)
    assert listed.exit_code == 0, listed.output
    rows = {row["name"]: row for row in json.loads(listed.stdout)["layers"]}
    assert rows["A-RACK"]["role"] == "racking"
    built = run("build", drawing, "-o", tmp_path / "out", "--config", config, "--quiet")
    assert built.exit_code == 0, built.output
    assert {path.name for path in (tmp_path / "out").iterdir()} == FILES
    report = json.loads((tmp_path / "out" / "report.json").read_text(encoding="utf-8"))
    assert report["counts"]["edges"] > 0


def test_lowered_limit_in_the_config_refuses_and_names_the_key(tmp_path):
    drawing = save_room(tmp_path)
    # analytic: the free floor is the 9.6 m x 7.6 m inner face, boundary 2 * (9.6 + 7.6) = 34.4 m
    config = config_file(tmp_path, "[limits]\nmax_boundary_length = 30\n")
    line = one_error_line(run("build", drawing, "-o", tmp_path / "out", "--config", config))
    assert "room.dxf: " in line and "34.4" in line
    assert "over the limit max_boundary_length = 30" in line
    assert not (tmp_path / "out").exists()
    # list_layers never forms the free space, so that limit does not apply to it
    assert run("layers", drawing, "--config", config).exit_code == 0
    config = config_file(tmp_path, "[limits]\nmax_file_size = 0.001\n")
    for command in (["layers", drawing], ["build", drawing, "-o", tmp_path / "out"]):
        line = one_error_line(run(*command, "--config", config))
        assert "over the limit max_file_size = 0.001" in line


def save_room(folder):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10, 8)
    return save(doc, folder, "room.dxf")


@pytest.mark.parametrize("text, message", [
    ("[limits]\nmax_extent = -1\n", r"site\.toml: \[limits\] max_extent must be a number > 0, "
                                    r"got -1$"),
    ("[limits]\nmax_block_depth = 1000\n", r"site\.toml: \[limits\] max_block_depth must be at "
                                           r"most 400, got 1000$"),
    ("[limits]\nmax_vertices = 2.5\n", r"site\.toml: \[limits\] max_vertices has the wrong type"),
    ("[limits]\nmax_things = 3\n", r"site\.toml: unknown key 'max_things' in \[limits\]$"),
])
def test_bad_limits_are_one_line(tmp_path, text, message):
    drawing = save_room(tmp_path)
    config = config_file(tmp_path, text)
    for command in (["layers", drawing], ["build", drawing, "-o", tmp_path / "out"]):
        line = one_error_line(run(*command, "--config", config))
        assert re.search(message, line), line
    assert not (tmp_path / "out").exists()


def test_config_limits_section_loads_into_limits(tmp_path):
    config = config_file(tmp_path, "[limits]\nmax_entities = 10\nmax_file_size = 1\n")
    limits = Limits.from_config(load_config(config)["limits"])
    assert (limits.max_entities, limits.max_file_size) == (10, 1.0)
