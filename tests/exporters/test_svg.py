"""SVG preview: well-formed, rendered by resvg, y flipped, caution shown, text escaped."""

from __future__ import annotations

import io

import numpy as np
import pytest
import resvg_py
from lxml import etree
from PIL import Image

from clearway.exporters import render_svg
from clearway.exporters.svg_parts import LANE_COLOURS, lane_colour, nice_length
from hall_fixture import HOSTILE, make_plan, make_roadmap

SVG = "{http://www.w3.org/2000/svg}"


def _parse(data: bytes):
    return etree.fromstring(data)           # raises on anything that is not well-formed XML


def _view_box(root) -> tuple[float, float, float, float]:
    return tuple(float(v) for v in root.get("viewBox").split())


def test_view_box_holds_the_plan_extents(plan, roadmap):
    root = _parse(render_svg(plan, roadmap, date="2026-01-31"))
    assert root.tag == f"{SVG}svg"
    left, top, width, height = _view_box(root)
    xmin, ymin, xmax, ymax = plan.extents
    # analytic: drawn at (x, -y), so the plan spans x in [xmin, xmax], svg y in [-ymax, -ymin]
    assert left <= xmin and left + width >= xmax
    assert top <= -ymax and top + height >= -ymin
    # and not much more: a 4 % margin each side, plus the title block below
    assert width <= 1.1 * (xmax - xmin)
    assert -ymax - top <= 0.05 * (xmax - xmin)
    # the page keeps the viewBox's aspect ratio and fits A3 (420 mm = 1587.4 CSS px)
    page_width, page_height = float(root.get("width")), float(root.get("height"))
    assert page_width / page_height == pytest.approx(width / height, rel=1e-3)
    assert max(page_width, page_height) <= 1587.5


def test_resvg_renders_it_and_the_top_of_the_plan_is_at_the_top(plan, roadmap):
    data = render_svg(plan, roadmap, date="2026-01-31")
    png = bytes(resvg_py.svg_to_bytes(svg_string=data.decode("utf-8")))
    image = np.asarray(Image.open(io.BytesIO(png)).convert("RGB")).astype(int)
    root = _parse(data)
    left, top, width, height = _view_box(root)
    assert image.shape[:2] == (round(float(root.get("height"))),
                               round(float(root.get("width"))))

    def pixel(x, y):    # drawing coordinates -> rendered pixel
        column = (x - left) / width * image.shape[1]
        row = (-y - top) / height * image.shape[0]
        return image[int(row), int(column)]

    # the shared zone (hatched in yellow lines) lies along the TOP of the hall, y 8.5..10 m:
    # after the y flip it must appear in the upper part of the picture; averaged over a
    # patch, since a single pixel may fall between two hatch lines
    shared = np.mean([pixel(10.0 + dx, 9.3 + dy) for dx in np.linspace(-0.3, 0.3, 7)
                      for dy in np.linspace(-0.3, 0.3, 7)], axis=0)
    assert shared[0] > shared[2] + 25 and shared[1] > shared[2] + 25
    bottom = pixel(10.0, 0.25)          # the clearance band at the bottom wall is light blue
    assert bottom[2] > bottom[0] + 20
    # the racking (Okabe-Ito blue #0072B2 over the floor) sits in the middle
    rack = pixel(10.0, 5.0)
    assert rack[2] > 150 and rack[0] < 150


def test_title_block_has_the_caution_date_source_and_robot(plan, roadmap):
    root = _parse(render_svg(plan, roadmap, date="2026-01-31"))
    (block,) = [g for g in root.iter(f"{SVG}g") if g.get("id") == "title-block"]
    text = " ".join("".join(t.itertext()) for t in block.iter(f"{SVG}text"))
    # the safety wording every output carries (README "Safety"; exporters/text.py)
    for phrase in ("ISO 3691-4", "robot maker's safety manual", "local codes",
                   "qualified people", "Planning aid"):
        assert phrase in text
    assert "2026-01-31" in text and "hall <1>.dxf" in text
    assert "radius 0.35 m" in text and "margin 0.10 m" in text and "clearance 0.45 m" in text
    for label in ("Lane clearance", "pinch point", "narrow passage", "unreachable station",
                  "personnel clearance short", "+Y", "2 m"):
        assert label in text
    # every finding of the hand-built hall is marked once in the plan
    classes = [g.get("class") for g in root.iter(f"{SVG}g") if g.get("class")]
    assert {kind: classes.count(kind) for kind in ("pinch", "narrow", "personnel", "leak",
                                                   "station", "unreachable", "junction")} == {
        "pinch": 1, "narrow": 1, "personnel": 1, "leak": 1, "station": 1, "unreachable": 1,
        "junction": 2}


def test_hostile_label_is_escaped_and_kept(plan, roadmap):
    data = render_svg(plan, roadmap, date="2026-01-31")
    assert b"\x07" not in data
    assert b"Dock &lt;B&gt; &amp;" in data
    texts = ["".join(t.itertext()) for t in _parse(data).iter(f"{SVG}text")]
    assert HOSTILE.replace("\x07", "") + " (unreachable)" in texts
    assert "hall <1>.dxf" in " ".join(texts)


def test_lanes_are_coloured_by_clearance_and_output_is_deterministic(plan, roadmap):
    data = render_svg(plan, roadmap, date="2026-01-31")
    assert data == render_svg(plan, roadmap, date="2026-01-31")
    lanes = {p.get("id"): p.get("stroke") for p in _parse(data).iter(f"{SVG}polyline")}
    assert set(lanes) == {"lane-e1", "lane-e2", "lane-e3"}
    # analytic: e3 passes 1.5 m from the west wall, above 0.45 + 1.0 m -> widest class
    assert lanes["lane-e3"] == LANE_COLOURS[-1]
    bins = 0.45 + np.array([0.0, 0.1, 0.25, 0.5, 1.0])
    assert lane_colour(bins, 0.45) == LANE_COLOURS[0]
    assert lane_colour(bins, 0.62) == LANE_COLOURS[1]
    assert lane_colour(bins, 0.30) == LANE_COLOURS[0]     # below required: still drawn
    assert nice_length(7.3) == 5.0 and nice_length(0.034) == 0.02


def _render(plan, roadmap) -> tuple[np.ndarray, tuple]:
    data = render_svg(plan, roadmap, date="2026-01-31")
    png = bytes(resvg_py.svg_to_bytes(svg_string=data.decode("utf-8")))
    assert png[:8] == b"\x89PNG\r\n\x1a\n"          # source: PNG spec sec. 5.2 signature
    return np.asarray(Image.open(io.BytesIO(png)).convert("L")).astype(int), _parse(data)


def test_survey_coordinates_draw_the_same_picture_as_at_the_origin():
    # issue 6: a site plan at x ~ 5e5 m, y ~ 5.4e6 m. Renderers work in single precision
    # (24-bit mantissa: 0.5 m steps at 5.4e6), so drawing at raw survey coordinates would
    # smear the plan; it must look the same as the plan at the origin.
    at_origin, _ = _render(make_plan(), make_roadmap(make_plan()))
    shifted_plan = make_plan(shift=(500000.0, 5400000.0))
    shifted, root = _render(shifted_plan, make_roadmap(shifted_plan))
    left, top, width, height = _view_box(root)
    xmin, ymin, xmax, ymax = np.subtract(shifted_plan.extents, [5e5, 5.4e6, 5e5, 5.4e6])
    assert left <= xmin and left + width >= xmax and top <= -ymax
    text = " ".join("".join(t.itertext()) for t in root.iter(f"{SVG}text"))
    assert "relative to x 500000 m, y 5400000 m" in text
    assert at_origin.shape == shifted.shape
    plan_rows = int(at_origin.shape[0] * 0.75)           # above the title block
    difference = np.abs(at_origin[:plan_rows] - shifted[:plan_rows])
    assert np.mean(difference > 40) < 0.001
