"""roadmap.html in a real browser (headless Chromium): it loads cleanly, draws, routes and
finds as `clearway route` does, and shows hostile labels as text.

Set CLEARWAY_WRITE_DOCS=1 to also write docs/viewer.png, the README's picture.
"""

from __future__ import annotations

import io
import json
import os
import shutil
from itertools import combinations
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
from click.testing import CliRunner
from PIL import Image

from clearway.cli import main
from clearway.exporters import read_graphml, render_html
from clearway.roadmap import shortest_route
from tests.exporters.hall_fixture import HOSTILE, make_plan, make_roadmap
from tests.exporters.rooms_fixture import plan_with_rooms_and_openings

SAMPLES = Path(__file__).resolve().parents[2] / "sample_drawings"
DOCS = Path(__file__).resolve().parents[2] / "docs"


def _build(outdir: Path, drawing: str, *extra: str) -> Path:
    result = CliRunner().invoke(main, ["build", str(SAMPLES / drawing), "-o", str(outdir),
                                       "-q", *extra])
    assert result.exit_code == 0, result.output
    return outdir


@pytest.fixture(scope="module")
def centre(tmp_path_factory) -> Path:
    """The sample distribution centre, built with the default robot (0.35 m + 0.1 m)."""
    return _build(tmp_path_factory.mktemp("centre"), "distribution_centre.dxf")


def _report(folder: Path) -> dict:
    return json.loads((folder / "report.json").read_text(encoding="utf-8"))


def _cli_route(folder: Path, source: str, target: str) -> dict:
    result = CliRunner().invoke(main, ["route", str(folder / "roadmap.graphml"), source, target,
                                       "--json"])
    assert result.exit_code == 0, result.output
    return json.loads(result.stdout)


def _differs(first: bytes, second: bytes) -> int:
    """Number of pixels that differ between two PNG pictures of the same size."""
    a = np.asarray(Image.open(io.BytesIO(first)).convert("RGB"))
    b = np.asarray(Image.open(io.BytesIO(second)).convert("RGB"))
    assert a.shape == b.shape
    return int((a != b).any(axis=2).sum())


def test_sample_loads_without_console_errors_and_shows_the_caution(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    assert viewer.messages == []
    heading = viewer.page.inner_text("#heading")
    assert "Planning aid only" in heading and "ISO 3691-4" in heading
    assert "drawing of " in heading and "required clearance 0.45 m" in heading
    # the caution stays on screen: inside the window, whatever the plan shows
    box = viewer.page.locator("#caution").bounding_box()
    assert box["y"] >= 0 and box["y"] + box["height"] <= 900
    viewer.page.keyboard.press("+")
    viewer.page.keyboard.press("+")
    assert viewer.page.locator("#caution").is_visible()
    assert viewer.messages == []


def test_toggling_a_layer_changes_what_is_drawn(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    shown = viewer.canvas_png()
    viewer.page.uncheck("input[data-layer='area-racking']")
    hidden = viewer.canvas_png()
    # the sample's racking covers a good part of the plan: thousands of pixels change
    assert _differs(shown, hidden) > 5000
    viewer.page.check("input[data-layer='area-racking']")
    assert _differs(shown, viewer.canvas_png()) == 0       # and back exactly
    viewer.page.uncheck("input[data-layer='lanes']")
    assert _differs(shown, viewer.canvas_png()) > 1000
    assert viewer.messages == []


@pytest.mark.parametrize("source, target", [("DOCK-01", "PICK-04"), ("CHG-03", "DOCK-06"),
                                            ("PICK-02", "CHG-01")])
def test_clicking_two_stations_gives_the_route_of_clearway_route(centre, open_viewer, source,
                                                                 target):
    viewer = open_viewer(centre / "roadmap.html")
    stations = {s["label"]: s for s in _report(centre)["stations"]}
    for label in (source, target):
        viewer.click_drawing_point(stations[label]["x"], stations[label]["y"])
    expected = _cli_route(centre, source, target)
    text = viewer.page.inner_text("#route-result")
    assert text.startswith(f"{source} \u2192 {target}: {expected['length']:.3f} m, "
                           f"narrowest clearance {expected['clearance_min']:.3f} m")
    # the same sum of the same lengths in the same order: equal to the last bit
    assert float(viewer.page.get_attribute("#route-result", "data-length")) == expected["length"]
    assert viewer.page.text_content("#route-nodes").split() == expected["nodes"]
    assert viewer.messages == []


@pytest.fixture(scope="module")
def centre_rectangular(tmp_path_factory) -> Path:
    """The sample for a 1.2 m x 0.7 m robot: nodes carry the turns its body allows."""
    return _build(tmp_path_factory.mktemp("centre_rect"), "distribution_centre.dxf",
                  "--robot-size", "1.2x0.7")


@pytest.mark.parametrize("folder", ["centre", "centre_rectangular"])
def test_every_station_pair_routes_as_the_library_does(folder, request, open_viewer):
    centre = request.getfixturevalue(folder)
    viewer = open_viewer(centre / "roadmap.html")
    graph = read_graphml(centre / "roadmap.graphml")
    if folder == "centre_rectangular":      # the turn rules are there to be kept
        assert any(turns is not None for _, turns in graph.nodes(data="turns"))
    labels = [s["label"] for s in _report(centre)["stations"]]
    index = {label: str(i) for i, label in enumerate(labels)}
    pairs = [[index[a], index[b]] for a, b in combinations(labels, 2)]
    # choose each pair in the two lists, in one script (one round trip for all 78 pairs)
    answers = viewer.evaluate("""pairs => pairs.map(([a, b]) => {
        for (const [id, value] of [["route-from", a], ["route-to", b]]) {
            const select = document.getElementById(id);
            select.value = value;
            select.dispatchEvent(new Event("change"));
        }
        return [Number(document.getElementById("route-result").dataset.length),
                document.getElementById("route-nodes").textContent.split(" ")];
    })""", pairs)
    compared = 0
    for (source, target), (length, nodes) in zip(combinations(labels, 2), answers):
        try:
            expected = shortest_route(graph, source, target)      # A*, as `clearway route`
        except nx.NetworkXNoPath:
            assert nodes == [""], (source, target)                # the page finds none either
            continue
        assert length == expected.length, (source, target)
        assert tuple(nodes) == expected.nodes, (source, target)
        compared += 1
    assert compared >= len(answers) // 2


def test_clicking_a_problem_centres_it(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    (pinch,) = _report(centre)["pinch_points"]           # sample README: one pinch point
    before = viewer.view()
    viewer.page.click("#problems button >> nth=0")
    viewer.settle()
    after = viewer.view()
    assert (after["x"], after["y"]) == pytest.approx((pinch["x"], pinch["y"]), abs=1e-6)
    assert after["scale"] >= before["scale"]
    # and the place is drawn in the middle of the plan's window
    px, py = viewer.evaluate("([x, y]) => window.clearwayViewer.toScreen(x, y)",
                             [pinch["x"], pinch["y"]])
    box = viewer.page.locator("#plan").bounding_box()
    assert px == pytest.approx(box["x"] + box["width"] / 2, abs=1)
    assert py == pytest.approx(box["y"] + box["height"] / 2, abs=1)


def test_pointing_at_a_lane_tells_its_clearance_and_length(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    graph = read_graphml(centre / "roadmap.graphml")
    u, v, key, attrs = max(graph.edges(keys=True, data=True), key=lambda e: e[3]["length"])
    middle = attrs["geometry"].interpolate(0.5, normalized=True)
    px, py = viewer.evaluate("([x, y]) => window.clearwayViewer.toScreen(x, y)",
                             [middle.x, middle.y])
    viewer.page.mouse.move(px, py)
    details = viewer.page.inner_text("#details")
    assert key in details
    assert f"{attrs['length']:.2f} m" in details and f"{attrs['clearance_min']:.2f} m" in details


def test_keys_and_wheel_pan_and_zoom_and_the_scale_bar_stays_true(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    fitted = viewer.view()
    viewer.page.focus("#plan")
    viewer.page.keyboard.press("+")
    assert viewer.view()["scale"] == pytest.approx(1.4 * fitted["scale"])
    viewer.page.keyboard.press("ArrowRight")
    assert viewer.view()["x"] > fitted["x"]
    # wheel zoom keeps the drawing point under the pointer in place
    box = viewer.page.locator("#plan").bounding_box()
    px, py = box["x"] + 200, box["y"] + 150
    anchor = viewer.evaluate(
        "([px, py]) => { const v = window.clearwayViewer.view(); const r ="
        " document.getElementById('plan').getBoundingClientRect();"
        " return [v.x + (px - r.left - v.width / 2) / v.scale,"
        " v.y - (py - r.top - v.height / 2) / v.scale]; }", [px, py])
    viewer.page.mouse.move(px, py)
    viewer.page.mouse.wheel(0, -300)
    viewer.settle()
    assert viewer.evaluate("([x, y]) => window.clearwayViewer.toScreen(x, y)", anchor) == \
        pytest.approx([px, py], abs=0.5)
    # the scale bar: its width in CSS px is its length in metres times the pixels per metre
    viewer.settle()
    width = viewer.page.locator("#scale-bar").bounding_box()["width"]
    metres = float(viewer.page.inner_text("#scale-text").split()[0])
    assert width == pytest.approx(metres * viewer.view()["scale"], abs=0.6)
    viewer.page.keyboard.press("0")
    assert viewer.view()["scale"] == pytest.approx(fitted["scale"])


def test_find_centres_a_station(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    station = next(s for s in _report(centre)["stations"] if s["label"] == "CHG-02")
    viewer.page.fill("#find", "chg-02")
    viewer.page.press("#find", "Enter")
    viewer.settle()
    view = viewer.view()
    assert (view["x"], view["y"]) == pytest.approx((station["x"], station["y"]), abs=1e-6)
    assert "CHG-02" in viewer.page.inner_text("#find-result")


def test_hostile_labels_show_as_text_and_nothing_runs(tmp_path, open_viewer):
    label = HOSTILE + ' </script><img src=x onerror="window.pwned=1"><script>window.pwned=2</script>'
    plan = make_plan(hostile=label)
    page = tmp_path / "roadmap.html"
    page.write_bytes(render_html(plan, make_roadmap(plan), date="<b>undated</b>"))
    viewer = open_viewer(page)
    assert viewer.evaluate("window.pwned === undefined")
    assert viewer.evaluate("document.querySelectorAll('img, b').length") == 0
    options = viewer.page.locator("#route-from option").all_text_contents()
    assert f"{label} (unreachable)" in options                    # everything shows
    assert "keep-out <KO>" in viewer.page.inner_text("#problems")
    assert "<b>undated</b>" in viewer.page.inner_text("#facts")
    assert viewer.messages == []


def test_changes_since_the_previous_revision_are_a_layer(centre, tmp_path, open_viewer):
    folder = _build(tmp_path / "rev_b", "distribution_centre_rev_b.dxf",
                    "--previous", str(centre / "roadmap.graphml"))
    viewer = open_viewer(folder / "roadmap.html")
    shown = viewer.canvas_png()
    viewer.page.uncheck("input[data-layer='changes']")
    # sample README: rev B moves half a rack row and adds a partition, so lanes change
    assert _differs(shown, viewer.canvas_png()) > 200
    assert viewer.messages == []


def test_screenshot_of_the_sample_for_the_readme(centre, open_viewer, tmp_path):
    viewer = open_viewer(centre / "roadmap.html")
    labels = [s["label"] for s in _report(centre)["stations"]]
    viewer.page.select_option("#route-from", str(labels.index("DOCK-02")))
    viewer.page.select_option("#route-to", str(labels.index("PICK-04")))
    viewer.settle()
    picture = tmp_path / "viewer.png"
    viewer.page.screenshot(path=str(picture))
    with Image.open(picture) as image:
        assert image.size == (1400, 900)
        # not blank: the plan's colours are there (racking blue, Okabe-Ito #0072B2 at 55 %)
        colours = np.unique(np.asarray(image.convert("RGB")).reshape(-1, 3), axis=0)
        assert len(colours) > 50
    if os.environ.get("CLEARWAY_WRITE_DOCS"):
        shutil.copyfile(picture, DOCS / "viewer.png")


def test_rooms_and_doors_are_layers_found_and_described(tmp_path, open_viewer):
    plan = make_plan()
    page = tmp_path / "roadmap.html"
    page.write_bytes(render_html(plan_with_rooms_and_openings(plan), make_roadmap(plan),
                                 date="undated"))
    viewer = open_viewer(page)
    shown = viewer.canvas_png()
    viewer.page.uncheck("input[data-layer='rooms']")
    assert _differs(shown, viewer.canvas_png()) > 1000         # a 6 m x 10 m room, tinted
    viewer.page.check("input[data-layer='rooms']")
    viewer.page.fill("#find", "Plant room")
    viewer.page.press("#find", "Enter")
    viewer.settle()
    view = viewer.view()
    # analytic: the plant room is the box 16..20 x 0..2; the page centres its corners' mean
    assert (view["x"], view["y"]) == pytest.approx((18.0, 1.0), abs=1e-6)
    viewer.page.click("#fit")
    viewer.settle()
    px, py = viewer.evaluate("([x, y]) => window.clearwayViewer.toScreen(x, y)", [-0.1, 5.0])
    viewer.page.mouse.move(px, py)
    details = viewer.page.inner_text("#details")
    assert "door" in details and "1.20 m" in details and "yes, if it fits" in details
    assert viewer.messages == []


def test_two_finger_pinch_zooms_about_the_fingers(centre, open_viewer):
    viewer = open_viewer(centre / "roadmap.html")
    before = viewer.view()
    box = viewer.page.locator("#plan").bounding_box()
    cx, cy = box["x"] + box["width"] / 2, box["y"] + box["height"] / 2
    # two touch pointers 100 px apart move to 200 px apart: analytic zoom factor 2
    viewer.evaluate("""([cx, cy]) => {
        const canvas = document.getElementById("plan");
        const send = (type, id, x) => canvas.dispatchEvent(new PointerEvent(type, {
            pointerId: id, pointerType: "touch", clientX: x, clientY: cy, bubbles: true}));
        send("pointerdown", 1, cx - 50); send("pointerdown", 2, cx + 50);
        send("pointermove", 1, cx - 100); send("pointermove", 2, cx + 100);
        send("pointerup", 1, cx - 100); send("pointerup", 2, cx + 100);
    }""", [cx, cy])
    after = viewer.view()
    assert after["scale"] == pytest.approx(2 * before["scale"], rel=0.02)
    assert viewer.page.inner_text("#route-result") == ""       # a pinch picks nothing
