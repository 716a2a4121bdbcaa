"""Issue 15 end to end: `build --walls 'A-WAL*'` on the distribution centre leaves the column
layer without a role. The lanes then run through columns; the build must say so: a warning
naming A-COLS, the layers in report.json and the summary, the count in the SVG title block."""

from __future__ import annotations

import json
from pathlib import Path

import ezdxf
import pytest
import shapely
from click.testing import CliRunner
from lxml import etree

from clearway.cli import main

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"
DRAWING = SAMPLES / "distribution_centre.dxf"


def columns():
    """The round columns of the sample as ezdxf reads them: shapely discs in metres."""
    msp = ezdxf.readfile(DRAWING).modelspace()
    return [shapely.Point(c.dxf.center.x / 1000, c.dxf.center.y / 1000).buffer(
        c.dxf.radius / 1000, quad_segs=64) for c in msp.query('CIRCLE[layer=="A-COLS"]')]


def features(folder, element, role=None):
    collection = json.loads((folder / "roadmap.geojson").read_text(encoding="utf-8"))
    return [shapely.geometry.shape(f["geometry"]) for f in collection["features"]
            if f["properties"]["element"] == element
            and (role is None or f["properties"].get("role") == role)]


@pytest.fixture(scope="module")
def builds(tmp_path_factory):
    folder = tmp_path_factory.mktemp("left_out")
    results = {}
    for name, extra in (("default", ()), ("walls", ("--walls", "A-WAL*"))):
        result = CliRunner().invoke(main, ["build", str(DRAWING), "-o", str(folder / name),
                                           "--no-html", *extra])
        assert result.exit_code == 0, result.output
        results[name] = (folder / name, result.stderr)
    return results


def test_columns_are_obstacles_only_when_their_layer_has_a_role(builds):
    discs = columns()
    assert len(discs) == 3                  # sample_drawings/make_samples.py: 3 round columns
    for name, kept in (("default", True), ("walls", False)):
        walls = shapely.union_all(features(builds[name][0], "area", "wall"))
        assert all(walls.contains(disc.centroid) for disc in discs) is kept, name
    # with the columns kept, every lane keeps the required clearance 0.45 m (radius 0.35 m
    # + margin 0.10 m, the defaults) from them: shapely's exact distance to each disc
    nearest = min(lane.distance(disc) for lane in features(builds["default"][0], "edge")
                  for disc in discs)
    assert nearest >= 0.45 - 0.005          # lanes are simplified within 5 mm (README)


def test_the_replaced_role_is_warned_and_listed(builds):
    folder, stderr = builds["walls"]
    report = json.loads((folder / "report.json").read_text(encoding="utf-8"))
    # the sample's column layer: 3 circles and 1 square column (make_samples.py)
    assert report["layers_without_role"][0] == {
        "name": "A-COLS", "entities": {"CIRCLE": 3, "LWPOLYLINE": 1}, "default_role": "wall",
        "replaced_by": "--walls"}
    assert ("layer 'A-COLS' has 3 circles and 1 polyline and no role: its default role wall "
            "was replaced by --walls 'A-WAL*'") in " ".join(report["warnings"])
    assert "1 warning" in stderr
    assert ("left out, no role: A-COLS (3 circles and 1 polyline, default role wall replaced "
            "by --walls); A-FLOR-LEVL (6 polylines)") in stderr


def test_default_build_lists_the_level_outlines_without_warning(builds):
    folder, stderr = builds["default"]
    report = json.loads((folder / "report.json").read_text(encoding="utf-8"))
    assert [layer["name"] for layer in report["layers_without_role"]] == ["A-FLOR-LEVL"]
    assert report["layers_ignored"] == []
    assert not [w for w in report["warnings"] if "no role" in w]
    assert "left out, no role: A-FLOR-LEVL (6 polylines)" in stderr


@pytest.mark.parametrize(("name", "said"), [("default", "1 layer left out (no role)"),
                                            ("walls", "2 layers left out (no role)")])
def test_svg_title_block_counts_the_layers_left_out(builds, name, said):
    root = etree.parse(str(builds[name][0] / "roadmap.svg")).getroot()
    block = root.find(".//{http://www.w3.org/2000/svg}g[@id='title-block']")
    assert any(said in "".join(text.itertext()) for text in block.iter(
        "{http://www.w3.org/2000/svg}text"))
