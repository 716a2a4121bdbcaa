"""Issue 15 end to end: robot sizes typed in the wrong unit, a robot that fits nowhere, the
clearance as typed, the GeoJSON floor outline, the id sheet, route --svg and compare --svg."""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import pytest
import shapely
from click.testing import CliRunner
from lxml import etree

from clearway.cli import main
from clearway.roadmap import Robot

from tests.conftest import new_drawing, save, walled_room

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"
SVG = "{http://www.w3.org/2000/svg}"


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args])


@pytest.mark.parametrize(("option", "message"), [
    (("--robot-radius", "350"), "--robot-radius 350: a robot 700 m across is not plausible "
                                "(over 5 m); lengths are in metres: for millimetres give "
                                "--robot-radius 0.35"),
    (("--robot-size", "1200x800"), "--robot-size 1200x800: a robot 1200 m across is not "
                                   "plausible (over 5 m); lengths are in metres: for "
                                   "millimetres give --robot-size 1.2x0.8"),
    (("--robot-radius", "45"), "for centimetres give --robot-radius 0.45"),
])
def test_robot_sizes_typed_in_millimetres_are_refused(tmp_path, option, message):
    outdir = tmp_path / "out"
    result = run("build", SAMPLES / "clinic.dxf", "-o", outdir, *option)
    assert result.exit_code == 2 and len(result.stderr.splitlines()) == 1
    assert message in result.stderr
    assert not outdir.exists() or not any(outdir.iterdir())


def test_a_robot_that_fits_nowhere_names_the_widest_place(tmp_path):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 10, 4)
    path = save(doc, tmp_path)
    result = run("build", path, "-o", tmp_path / "out", "--robot-radius", "2.0", "-q")
    assert result.exit_code == 2 and len(result.stderr.splitlines()) == 1
    # analytic: 0.2 m walls leave a 9.6 m x 3.6 m room; the robot needs 2 x (2.0 + 0.1) m
    assert ("the widest free floor is 3.60 m across and the robot needs 4.20 m"
            in result.stderr)


def test_clearance_is_the_sum_as_typed():
    # exact by definition: 0.35 + 0.1 = 0.45; binary addition would give 0.44999999999999996
    assert Robot.disc(0.35, margin=0.1).clearance == 0.45
    assert repr(Robot.disc(0.35, margin=0.1).clearance) == "0.45"


@pytest.fixture(scope="module")
def revisions(tmp_path_factory):
    folder = tmp_path_factory.mktemp("revisions")
    for name, extra in (("distribution_centre", ("--id-sheet",)),
                        ("distribution_centre_rev_b", ())):
        result = run("build", SAMPLES / f"{name}.dxf", "-o", folder / name, "-q", "--no-html",
                     *extra)
        assert result.exit_code == 0, result.stderr
    return folder


def test_geojson_boundary_is_the_floor_outline(revisions):
    collection = json.loads((revisions / "distribution_centre" / "roadmap.geojson").read_text())
    (boundary,) = [f for f in collection["features"]
                   if f["properties"].get("role") == "boundary"]
    outline = shapely.geometry.shape(boundary["geometry"])
    # source: sample_drawings/README.md and make_samples.py: the outline is the rectangle
    # 0..60 m x 0..40 m (A-FLOR-OTLN)
    assert outline.area == pytest.approx(2400.0, rel=1e-6)
    assert outline.bounds == pytest.approx((0.0, 0.0, 60.0, 40.0), abs=1e-4)
    report = json.loads((revisions / "distribution_centre" / "report.json").read_text())
    assert report["robot"]["clearance"] == 0.45      # 0.35 + 0.1 as typed (defaults)


def test_id_sheet_names_every_node_and_lane(revisions):
    root = etree.fromstring((revisions / "distribution_centre" / "roadmap_ids.svg").read_bytes())
    texts = ["".join(t.itertext()) for t in root.iter(f"{SVG}text")]
    from clearway.exporters import read_graphml
    graph = read_graphml(revisions / "distribution_centre" / "roadmap.graphml")
    words = {word for text in texts for word in text.split()}
    assert set(graph.nodes) <= words
    assert {key for *_, key in graph.edges(keys=True)} <= words
    # the grid is labelled in metres of the drawing: x 0 .. x 60 for a 60 m building
    assert "x 0" in texts and "x 60" in texts and "y 40" in texts
    assert any("ISO 3691-4" in text for text in texts)


def test_route_svg_draws_the_route_on_the_plan(revisions, tmp_path):
    graph_file = revisions / "distribution_centre" / "roadmap.graphml"
    picture = tmp_path / "route.svg"
    result = run("route", graph_file, "dock-01", "pick-04", "--svg", picture, "--json")
    assert result.exit_code == 0, result.stderr
    answer = json.loads(result.stdout)
    root = etree.fromstring(picture.read_bytes())
    (line,) = root.find(f".//{SVG}g[@id='route']").iter(f"{SVG}polyline")
    xy = np.array([[float(v) for v in pair.split(",")] for pair in line.get("points").split()])
    route = shapely.get_coordinates(shapely.from_wkt(answer["wkt"]))
    # drawn at (x, -y), millimetre precision (the plan lies near the origin)
    np.testing.assert_allclose(xy * [1, -1], route, atol=6e-4)
    texts = ["".join(t.itertext()) for t in root.iter(f"{SVG}text")]
    assert "FROM DOCK-01" in texts and "TO PICK-04" in texts
    # the floor comes from roadmap.geojson beside the graph: walls and racking underneath
    assert root.find(f".//{SVG}path[@id='area-wall']") is not None
    assert root.find(f".//{SVG}path[@id='area-racking']") is not None


def test_compare_svg_shows_the_new_plan_and_the_obstacle_that_changed(revisions, tmp_path):
    picture = tmp_path / "changes.svg"
    result = run("compare", revisions / "distribution_centre" / "roadmap.graphml",
                 revisions / "distribution_centre_rev_b" / "roadmap.graphml", "--svg", picture)
    assert result.exit_code == 0, result.stderr
    root = etree.fromstring(picture.read_bytes())
    classes = [element.get("class") for element in root.iter() if element.get("class")]
    assert "floor-wall" in classes and "floor-racking" in classes and "scale" in classes
    added = [e for e in root.iter(f"{SVG}path") if e.get("class") == "obstacle-added"]
    assert len(added) == 1
    # every move drawn to scale: no arrow longer than the move itself at the sheet's scale
    scale_bar = root.find(f".//{SVG}g[@class='scale']")
    metres = float(re.match(r"([\d.]+) m", "".join(scale_bar[2].itertext())).group(1))
    px_per_m = float(scale_bar[0].get("width")) / metres
    changes = json.loads(run("compare", revisions / "distribution_centre" / "roadmap.graphml",
                             revisions / "distribution_centre_rev_b" / "roadmap.graphml",
                             "--json").stdout)
    longest = max(move["distance"] for move in changes["nodes_moved"])
    for group in (g for g in root.iter(f"{SVG}g") if g.get("class") == "node-moved"):
        for arrow in group.iter(f"{SVG}line"):
            length = np.hypot(float(arrow.get("x2")) - float(arrow.get("x1")),
                              float(arrow.get("y2")) - float(arrow.get("y1")))
            assert length <= longest * px_per_m + 0.02
