"""Issue 15: a station's kind and heading reach report.json, GeoJSON, GraphML and nodes.csv,
read back by readers of their own (json, GDAL through pyogrio, igraph, networkx, csv)."""

from __future__ import annotations

import csv
import json
import math

import igraph
import networkx as nx
import pyogrio
import pytest
import shapely
from click.testing import CliRunner
from lxml import etree

from clearway.cli import main
from tests.conftest import new_drawing, save, walled_room

STATIONS = "A-EQPM-STATION"

# as drawn below: the charger block's name says CHARGER, turned 90 degrees; the bay block's
# TYPE attribute says "tote drop", turned -45 degrees, which is 315 (DXF group 50: degrees
# counter-clockwise); the pick station is a POINT with a TEXT: no block, so no heading
EXPECTED = {"C1": ("charger", 90.0), "B1": ("tote drop", 315.0), "PICK-7": ("pick", None)}
STATION_XY = {"C1": (4.0, 5.0), "B1": (10.0, 5.0), "PICK-7": (16.0, 5.0)}    # as drawn


def build(folder, *extra):
    result = CliRunner().invoke(main, ["build", str(folder / "plan.dxf"), "-o",
                                       str(folder / "out"), "-q", "--no-html", "--csv", "--dxf", *extra])
    assert result.exit_code == 0, result.output
    return folder / "out"


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("stations")
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 20, 10)
    for name in ("CHARGER_PAD", "BAY"):
        block = doc.blocks.new(name)
        block.add_circle((0, 0), 0.3)
        block.add_line((0, 0), (0.3, 0))          # the way the station faces: +X of the block
        block.add_attdef("LABEL", (0.4, 0.4), dxfattribs={"height": 0.2})
        block.add_attdef("TYPE", (0.4, 0.0), dxfattribs={"height": 0.2})
    msp.add_blockref("CHARGER_PAD", (4, 5), dxfattribs={
        "layer": STATIONS, "rotation": 90}).add_auto_attribs({"LABEL": "C1"})
    msp.add_blockref("BAY", (10, 5), dxfattribs={
        "layer": STATIONS, "rotation": -45}).add_auto_attribs({"LABEL": "B1", "TYPE": "tote drop"})
    msp.add_point((16, 5), dxfattribs={"layer": STATIONS})
    msp.add_text("PICK-7", height=0.2, dxfattribs={"layer": STATIONS, "insert": (16.2, 5.2)})
    save(doc, folder)
    return build(folder)


def test_report_carries_kind_and_heading(built):
    report = json.loads((built / "report.json").read_text(encoding="utf-8"))
    assert {s["label"]: (s["kind"], s["heading"]) for s in report["stations"]} == EXPECTED


def test_gdal_reads_kind_and_heading_from_the_geojson(built):
    meta, _, _, fields = pyogrio.raw.read(built / "roadmap.geojson")
    columns = dict(zip(meta["fields"].tolist(), fields))
    found = {label: (kind, None if heading is None or heading != heading else float(heading))
             for element, label, kind, heading in zip(columns["element"], columns["label"],
                                                      columns["kind"], columns["heading"])
             if element == "station"}
    assert found == EXPECTED


def test_graphml_carries_kind_and_heading_for_two_readers(built):
    path = built / "roadmap.graphml"
    graph = nx.read_graphml(path, force_multigraph=True)
    found = {attrs["label"]: (attrs.get("station_kind"), attrs.get("heading"))
             for _, attrs in graph.nodes(data=True) if attrs.get("kind") == "station"}
    assert found == EXPECTED
    other = igraph.Graph.Read_GraphML(str(path))
    assert {"station_kind", "heading"} <= set(other.vs.attributes())
    # igraph gives a node without a value NaN for a double and "" for a string
    found = {v["label"]: (v["station_kind"], None if v["heading"] != v["heading"] else v["heading"])
             for v in other.vs if v["kind"] == "station"}
    assert found == EXPECTED
    assert all(v["station_kind"] == "" for v in other.vs if v["kind"] != "station")


def test_nodes_csv_carries_kind_and_heading(built):
    with open(built / "nodes.csv", newline="", encoding="utf-8") as file:
        rows = list(csv.DictReader(file))
    found = {row["label"]: (row["station_kind"], float(row["heading"]) if row["heading"] else None)
             for row in rows if row["kind"] == "station"}
    assert found == EXPECTED


def test_ids_carried_over_keep_kind_and_heading(built, tmp_path):
    folder = built.parent
    again = CliRunner().invoke(main, ["build", str(folder / "plan.dxf"), "-o", str(tmp_path),
                                      "-q", "--no-html", "--previous",
                                      str(built / "roadmap.graphml")])
    assert again.exit_code == 0, again.output
    graph = nx.read_graphml(tmp_path / "roadmap.graphml", force_multigraph=True)
    found = {attrs["label"]: (attrs.get("station_kind"), attrs.get("heading"))
             for _, attrs in graph.nodes(data=True) if attrs.get("kind") == "station"}
    assert found == EXPECTED


def test_a_plan_without_block_stations_declares_no_heading(tmp_path):
    doc = new_drawing(6)
    walled_room(doc.modelspace(), 0, 0, 12, 8)
    save(doc, tmp_path)
    out = build(tmp_path)
    text = (out / "roadmap.graphml").read_text(encoding="utf-8")
    assert 'attr.name="heading"' not in text and 'attr.name="station_kind"' not in text
    svg = (out / "roadmap.svg").read_text(encoding="utf-8")
    assert 'class="heading"' not in svg and "way it faces" not in svg


def test_svg_draws_each_block_station_facing_its_heading(built):
    root = etree.parse(str(built / "roadmap.svg")).getroot()
    svg = "{http://www.w3.org/2000/svg}"
    (marks,) = [g for g in root.iter(f"{svg}g") if g.get("id") == "marks"]
    found = {}
    for line in marks.iter(f"{svg}line"):
        if line.get("class") != "heading":
            continue
        x1, y1, x2, y2 = (float(line.get(name)) for name in ("x1", "y1", "x2", "y2"))
        # the plan lies near the origin, drawn unshifted with y flipped (svg.drawing_origin)
        label = next(label for label, (x, y) in STATION_XY.items()
                     if math.hypot(x - x1, y + y1) < 1e-3)       # SVG keeps 1 mm
        found[label] = math.degrees(math.atan2(-(y2 - y1), x2 - x1)) % 360.0
    assert set(found) == {label for label, (_, heading) in EXPECTED.items() if heading is not None}
    for label, angle in found.items():
        # the line's ends are rounded to 1 mm over its 1.5 font sizes (> 0.3 m): 0.5 degrees
        assert abs((angle - EXPECTED[label][1] + 180) % 360 - 180) < 0.5, label
    legend = " ".join("".join(t.itertext()) for t in root.iter(f"{svg}text"))
    assert "station; line: way it faces" in legend


def test_dxf_draws_each_block_station_facing_its_heading(built):
    meta, _, geometry, fields = pyogrio.raw.read(built / "roadmap.dxf")   # GDAL reads it
    columns = dict(zip(meta["fields"].tolist(), fields))
    shapes = shapely.from_wkb(geometry)
    lines = [shape for layer, kind, shape in zip(columns["Layer"], columns["SubClasses"], shapes)
             if layer.startswith("CLEARWAY-STATION") and kind.endswith("AcDbLine")]
    report = json.loads((built / "report.json").read_text(encoding="utf-8"))
    stations = {s["label"]: s for s in report["stations"]}
    found = {}
    for line in lines:
        (x0, y0), (x1, y1) = shapely.get_coordinates(line).tolist()
        label = next(label for label, s in stations.items()
                     if math.hypot(s["x"] - x0, s["y"] - y0) < 1e-6)   # from its centre
        found[label] = math.degrees(math.atan2(y1 - y0, x1 - x0)) % 360.0
    # one line per block station, none for the point; its direction is the heading
    assert set(found) == {label for label, (_, heading) in EXPECTED.items() if heading is not None}
    for label, angle in found.items():
        assert angle == pytest.approx(EXPECTED[label][1], abs=1e-6), label


def test_wall_mounted_charger_block_stands_clear_and_says_so(tmp_path):
    # common practice: a charger is drawn as a block on the wall it hangs on, facing the
    # room; the robot docks with its contacts on the unit, so its centre is nearer the wall
    # than any lane may come. The graph ends where the robot keeps its clearance.
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 20, 10)                 # inner wall face at x = 0.2
    block = doc.blocks.new("WALL_CHARGER")
    block.add_lwpolyline([(0, -0.3), (0.25, -0.3), (0.25, 0.3), (0, 0.3)], close=True)
    block.add_attdef("LABEL", (0.4, 0.4), dxfattribs={"height": 0.2})
    msp.add_blockref("WALL_CHARGER", (0.2, 5), dxfattribs={"layer": STATIONS}) \
        .add_auto_attribs({"LABEL": "C9"})
    save(doc, tmp_path)
    result = CliRunner().invoke(main, ["build", str(tmp_path / "plan.dxf"), "-o",
                                       str(tmp_path / "out"), "--no-html"])
    assert result.exit_code == 0, result.output
    report = json.loads((tmp_path / "out" / "report.json").read_text(encoding="utf-8"))
    station, = report["stations"]
    required = report["robot"]["clearance"]
    assert station["reachable"] and (station["x"], station["y"]) == (0.2, 5.0)
    # analytic: along the block's +X the clearance is x - 0.2, so the robot stands at
    # x = 0.2 + c, c away from the drawn point
    assert station["standoff"] == pytest.approx(required, abs=2e-4)
    graph = nx.read_graphml(tmp_path / "out" / "roadmap.graphml")
    node = graph.nodes[station["node"]]
    assert (float(node["x"]), float(node["y"])) == pytest.approx((0.2 + required, 5.0), abs=2e-4)
    assert "stations standing clear of their blocks: 1 (up to" in result.output
    assert "the robot's own docking, not checked" in result.output
    # source: RFC 7946 §3.2 (a Feature's properties is a JSON object): GDAL reads the same
    meta, _, _, fields = pyogrio.raw.read(tmp_path / "out" / "roadmap.geojson")
    columns = dict(zip(meta["fields"].tolist(), fields))
    standoff, = [value for element, value in zip(columns["element"], columns["standoff"])
                 if element == "station"]
    assert float(standoff) == pytest.approx(required, abs=2e-4)
