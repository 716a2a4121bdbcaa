"""Issue 15: the preview's labels say what they measure, sit clear of the lanes, its legend
lists what occurs, and its colours are told apart (CIEDE2000, computed by scikit-image)."""

from __future__ import annotations

import io
import json
from pathlib import Path

import numpy as np
import pytest
import resvg_py
import shapely
from click.testing import CliRunner
from lxml import etree
from PIL import Image
from skimage.color import deltaE_ciede2000, rgb2lab

from clearway.cli import main
from clearway.exporters.svg_parts import (GREEN, LANE_COLOURS, ORANGE, PURPLE, VERMILLION,
                                          YELLOW)

SVG = "{http://www.w3.org/2000/svg}"
SAMPLES = Path(__file__).parent.parent.parent / "sample_drawings"


def _lab(colour: str) -> np.ndarray:
    rgb = np.array([int(colour[i:i + 2], 16) / 255 for i in (1, 3, 5)])
    return rgb2lab(rgb[None, None])[0, 0]


# source: G. Sharma, W. Wu, E. N. Dalal, "The CIEDE2000 color-difference formula:
# implementation notes, supplementary test data, and mathematical observations", Color
# Research and Application 30(1), 2005, Table 1, pairs 1, 2, 3, 17 and 18
@pytest.mark.parametrize(("lab1", "lab2", "expected"), [
    ((50.0, 2.6772, -79.7751), (50.0, 0.0, -82.7485), 2.0425),
    ((50.0, 3.1571, -77.2803), (50.0, 0.0, -82.7485), 2.8615),
    ((50.0, 2.8361, -74.0200), (50.0, 0.0, -82.7485), 3.4412),
    ((50.0, 2.5, 0.0), (73.0, 25.0, -18.0), 27.1492),
    ((50.0, 2.5, 0.0), (61.0, -5.0, 29.0), 22.8977),
])
def test_the_colour_difference_used_matches_the_published_test_data(lab1, lab2, expected):
    assert deltaE_ciede2000(np.array(lab1), np.array(lab2)) == pytest.approx(expected, abs=1e-4)


def test_lane_classes_differ_from_each_other_and_from_the_symbols():
    # issue 15: the two narrowest classes were hard to tell apart and shared their hue with
    # keep-out and the unreachable mark. common practice: a CIEDE2000 difference near 1 is
    # just noticeable; classes read at a glance on thin lines need far more; we hold 19.5
    lanes = [_lab(colour) for colour in LANE_COLOURS]
    symbols = {"keep-out, unreachable, leak": VERMILLION, "narrow passage": ORANGE,
               "pinch point": PURPLE, "station": GREEN, "shared zone": YELLOW,
               "shared hatch": "#C9B800"}
    for i, first in enumerate(lanes):
        for second in lanes[i + 1:]:
            assert deltaE_ciede2000(first, second) >= 19.5
        for name, colour in symbols.items():
            assert deltaE_ciede2000(first, _lab(colour)) >= 19.5, (LANE_COLOURS[i], name)
    # lightness falls class by class, so the ramp also reads in grey-scale
    assert np.all(np.diff([lab[0] for lab in lanes]) < -5)


@pytest.fixture(scope="module")
def previews(tmp_path_factory):
    found = {}
    for name in ("clinic", "distribution_centre"):
        outdir = tmp_path_factory.mktemp(name)
        result = CliRunner().invoke(main, ["build", str(SAMPLES / f"{name}.dxf"), "-o",
                                           str(outdir), "-q", "--no-html"])
        assert result.exit_code == 0, result.stderr
        found[name] = (outdir / "roadmap.svg").read_bytes()
    return found


def _texts(root, group_id):
    (group,) = [g for g in root.iter(f"{SVG}g") if g.get("id") == group_id]
    return ["".join(t.itertext()) for t in group.iter(f"{SVG}text")]


def test_measured_values_say_what_they_measure(previews):
    root = etree.fromstring(previews["clinic"])
    labels = _texts(root, "marks")
    # source: sample_drawings/README.md: doorways of 36 in and 28 in; exact by definition
    # 1 in = 0.0254 m; analytic: a lane through a 36 in door has 0.4572 m clearance, the
    # 28 in door is a 0.7112 m opening
    assert "clr 0.46 m" in labels and "gap 0.71 m" in labels
    assert not [label for label in labels if label[:1].isdigit()]     # no bare "0.46 m"
    legend = " ".join(_texts(root, "title-block"))
    for term in ("clr: lane centre to nearest obstacle", "gap: clear width of the opening",
                 "side: room beside the robot for people"):
        assert term in legend
    assert "leak:" not in legend      # the clinic has no leak


def test_the_legend_lists_only_what_occurs(previews):
    clinic, centre = (" ".join(_texts(etree.fromstring(previews[name]), "title-block"))
                      .split(" Areas ", 1)[1] for name in ("clinic", "distribution_centre"))
    # source: sample_drawings/README.md: the clinic has no racking, keep-out or leak and
    # one narrow passage; the distribution centre has racking and a keep-out, no narrow
    # passage and no unreachable station
    for absent in ("racking", "keep-out", "leak to outside"):
        assert absent not in clinic
    assert "narrow passage" in clinic and "unreachable station" in clinic
    assert "racking" in centre and "keep-out" in centre
    assert "narrow passage" not in centre and "unreachable station" not in centre


def _render(root) -> np.ndarray:
    png = resvg_py.svg_to_bytes(svg_string=etree.tostring(root).decode("utf-8"))
    return np.asarray(Image.open(io.BytesIO(bytes(png))).convert("RGB")).astype(int)


@pytest.mark.parametrize("name", ["clinic", "distribution_centre"])
def test_labels_leave_the_lanes_visible(previews, name):
    # independent of our own text-size estimate: resvg renders the real glyphs, and the
    # lane pixels (where removing the lanes changes the picture) must not change when the
    # labels are drawn
    root = etree.fromstring(previews[name])
    for group in ("marks", "room-names"):
        for text in list(root.find(f".//{SVG}g[@id='{group}']").iter(f"{SVG}text")):
            text.getparent().remove(text)
    without_labels = _render(root)
    lanes = root.find(f".//{SVG}g[@id='lanes']")
    lanes.getparent().remove(lanes)
    lane_pixels = np.any(np.abs(_render(root) - without_labels) > 40, axis=2)
    with_labels = _render(etree.fromstring(previews[name]))
    covered = np.any(np.abs(with_labels - without_labels) > 40, axis=2) & lane_pixels
    # from memory: anti-aliased glyph and halo edges touch a lane's outermost pixels; a
    # label drawn across a lane changes hundreds of them
    assert covered.sum() <= 0.002 * lane_pixels.sum(), (covered.sum(), lane_pixels.sum())


def test_room_names_stay_in_their_rooms(tmp_path):
    result = CliRunner().invoke(main, ["build", str(SAMPLES / "clinic.dxf"), "-o",
                                       str(tmp_path), "-q", "--no-html"])
    assert result.exit_code == 0, result.stderr
    collection = json.loads((tmp_path / "roadmap.geojson").read_text(encoding="utf-8"))
    rooms = {f["properties"]["names"][0]: shapely.geometry.shape(f["geometry"])
             for f in collection["features"]
             if f["properties"]["element"] == "room" and f["properties"]["names"]}
    root = etree.parse(str(tmp_path / "roadmap.svg")).getroot()
    (group,) = [g for g in root.iter(f"{SVG}g") if g.get("id") == "room-names"]
    placed = {"".join(t.itertext()): (float(t.get("x")), -float(t.get("y")))
              for t in group.iter(f"{SVG}text")}
    # every named room of the GeoJSON (another exporter) has its name in the SVG, inside
    # the room; the clinic lies near the origin, so the SVG draws it unshifted
    # (svg.drawing_origin) and only flips y
    assert set(placed) == set(rooms) and rooms
    for name, (x, y) in placed.items():
        assert rooms[name].contains(shapely.Point(x, y)), name


def test_crowded_pinch_labels_give_way_and_the_legend_counts_them(tmp_path):
    # the mixed floor of the benchmark suite: a door every 5 m along 3 m corridors, each a
    # pinch point; where a value's label would cover another mark it is left out, and the
    # legend says how many (report.json keeps every value)
    from benchmarks.synthetic import write_style
    drawing = write_style(tmp_path / "mixed.dxf", "mixed", 300)
    result = CliRunner().invoke(main, ["build", str(drawing), "-o", str(tmp_path / "out"),
                                       "-q", "--no-html"])
    assert result.exit_code == 0, result.output
    root = etree.fromstring((tmp_path / "out" / "roadmap.svg").read_bytes())
    pinches = root.findall(f".//{SVG}g[@id='marks']/{SVG}g[@class='pinch']")
    labelled = [group for group in pinches if group.find(f"{SVG}text") is not None]
    legend = " ".join(_texts(root, "title-block"))
    report = json.loads((tmp_path / "out" / "report.json").read_text())
    assert len(pinches) == len(report["pinch_points"])
    left_out = len(pinches) - len(labelled)
    assert left_out > 0 and f"pinch point ({left_out} unlabelled: crowded)" in legend
