"""`clearway layers` end to end, and bad input through the command line."""

import json
import re

import click
import pytest
from click.testing import CliRunner

from clearway.cli import InputError, converter_options, drawing_options, main
from clearway.errors import ClearwayError
from clearway.converter import Roles, read_floorplan

from tests.conftest import new_drawing, save, walled_room


def run(*args):
    return CliRunner().invoke(main, list(map(str, args)))


def test_layer_table_of_a_sample(samples):
    result = run("layers", samples / "distribution_centre.dxf")
    assert result.exit_code == 0, result.output
    assert "units mm (0.001 m per unit)" in result.stdout
    rows = {line.split()[0]: line.split() for line in result.stdout.splitlines()[2:]}
    assert rows["A-EQPM-RACK"][1] == "racking" and rows["A-WALL-EXTR"][1] == "wall"
    assert rows["A-FLOR-OTLN"][1] == "boundary" and rows["A-EQPM-STATION"][1] == "station"
    assert rows["A-AREA-SHARED"][1] == "shared" and rows["A-DOOR"][1] == "opening"
    assert rows["A-FLOR-LEVL"][1] == "-"


def test_json_has_exactly_the_documented_shape(samples):
    result = run("layers", samples / "clinic.dxf", "--json")
    assert result.exit_code == 0
    data = json.loads(result.stdout)
    assert list(data) == ["units", "m_per_unit", "unit_source", "unit_note", "unit_evidence",
                          "warnings", "views", "layers"]
    assert (data["units"], data["m_per_unit"], data["unit_source"]) == ("in", 0.0254, "header")
    assert data["warnings"] == []
    for layer in data["layers"]:
        assert list(layer) == ["name", "entities", "extents", "frozen", "off", "role"]
    walls = next(layer for layer in data["layers"] if layer["name"] == "A-WALL-EXTR")
    # from make_samples.py: 60 ft x 40 ft = 18.288 m x 12.192 m, two closed polylines
    assert walls["entities"] == {"LWPOLYLINE": 2}
    assert walls["extents"] == pytest.approx([0, 0, 18.288, 12.192])
    assert walls["role"] == "wall" and walls["frozen"] is False


def test_options_and_config_choose_roles(samples, tmp_path):
    config = tmp_path / "site.toml"
    config.write_text('[layers]\nracking = ["A-DOOR"]\n[drawing]\nunits = "in"\n')
    result = run("layers", samples / "distribution_centre.dxf", "--json", "--config", config)
    data = json.loads(result.stdout)
    roles = {layer["name"]: layer["role"] for layer in data["layers"]}
    # A-EQPM-RACK leaves racking; its equipment word still makes it a keep-out zone
    assert roles["A-DOOR"] == "racking" and roles["A-EQPM-RACK"] == "keepout"
    assert data["units"] == "in"
    # options override the file
    result = run("layers", samples / "distribution_centre.dxf", "--json", "--config", config,
                 "--racking", "*RACK*", "--units", "mm")
    data = json.loads(result.stdout)
    roles = {layer["name"]: layer["role"] for layer in data["layers"]}
    assert roles["A-DOOR"] == "opening" and roles["A-EQPM-RACK"] == "racking"
    assert data["units"] == "mm"


def test_converter_options_merges_file_and_options(tmp_path):
    config = tmp_path / "site.toml"
    config.write_text('[layers]\nwalls = ["W*"]\n[drawing]\ngap_tolerance = 0.02\n')
    kwargs = converter_options({"config": str(config), "walls": (), "stations": ("S*",),
                                "units": None})
    assert kwargs["roles"] == Roles.from_options(walls=["W*"], stations=["S*"])
    assert kwargs["gap_tolerance"] == 0.02 and kwargs["units"] is None


def truncated(folder, samples):
    data = (samples / "clinic.dxf").read_bytes()
    path = folder / "cut.dxf"
    path.write_bytes(data[: len(data) // 3])
    return path


def garbage(folder, samples):
    path = folder / "noise.dxf"
    path.write_bytes(bytes(range(256)) * 8)
    return path


def empty_model_space(folder, samples):
    return save(new_drawing(6), folder, "empty.dxf")


def self_inserting(folder, samples):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10, 8)
    doc.blocks.new("SELF").add_blockref("SELF", (0, 0))
    doc.modelspace().add_blockref("SELF", (1, 1))
    return save(doc, folder, "self.dxf")


def non_finite(folder, samples):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10, 8)
    doc.modelspace().add_line((1, 1), (2.5, 2), dxfattribs={"layer": "A-WALL"})
    path = save(doc, folder, "nan.dxf")
    path.write_text(path.read_text().replace(" 11\n2.5\n", " 11\nnan\n", 1))
    return path


@pytest.mark.parametrize("make, extra, message", [
    (lambda folder, samples: folder / "missing.dxf", (), r"^Error: .*missing\.dxf: file not found$"),
    (truncated, (), r"^Error: cut\.dxf: file is truncated"),
    (garbage, (), r"^Error: noise\.dxf: not a DXF file"),
    (empty_model_space, (), r"^Error: empty\.dxf: model space is empty$"),
    (self_inserting, (), r"^Error: self\.dxf: block 'SELF' inserts itself"),
    (non_finite, (), r"^Error: nan\.dxf: layer 'A-WALL' has coordinates that are not finite$"),
    (lambda folder, samples: samples / "clinic.dxf", ("--racking", "NOPE*"),
     r"^Error: clinic\.dxf: --racking 'NOPE\*' matches no visible layer"),
])
def test_bad_drawing_is_one_line_exit_2_and_nothing_written(tmp_path, samples, make, extra,
                                                            message):
    """Each bad input through the converter, as `clearway build` would meet it."""
    inputs = tmp_path / "in"
    inputs.mkdir()
    path = make(inputs, samples)
    before = sorted(p.name for p in inputs.iterdir())

    @click.command()
    @click.argument("drawing")
    @drawing_options
    def probe(drawing, **options):
        try:
            read_floorplan(drawing, **converter_options(options))
        except ClearwayError as err:
            raise InputError(str(err)) from None

    result = CliRunner().invoke(probe, [str(path), *extra])
    assert result.exit_code == 2
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and re.search(message, lines[0]), result.stderr
    assert "Traceback" not in result.output
    assert result.stdout == ""
    assert sorted(p.name for p in inputs.iterdir()) == before


@pytest.mark.parametrize("make, message", [
    (lambda folder, samples: folder / "missing.dxf", r"missing\.dxf: file not found"),
    (truncated, r"cut\.dxf: file is truncated"),
    (garbage, r"noise\.dxf: not a DXF file"),
])
def test_layers_refuses_unreadable_files(tmp_path, samples, make, message):
    path = make(tmp_path, samples)
    result = run("layers", path)
    assert result.exit_code == 2
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and re.search(message, lines[0])
    assert result.stdout == ""


def test_layers_lists_a_drawing_with_empty_model_space(tmp_path):
    result = run("layers", save(new_drawing(6), tmp_path, "empty.dxf"))
    assert result.exit_code == 0 and "LAYER" in result.stdout


def test_bad_config_is_one_line(tmp_path, samples):
    config = tmp_path / "bad.toml"
    config.write_text("[layers]\nwalls = 3\n")
    result = run("layers", samples / "clinic.dxf", "--config", config)
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [f"Error: {config}: [layers] walls has the wrong type: 3"]
