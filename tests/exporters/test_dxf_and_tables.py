"""Issue 15: roadmap.dxf lands on the architect's drawing (read back by ezdxf and by GDAL),
and nodes.csv / lanes.csv hold the GraphML's values (read back by networkx)."""

from __future__ import annotations

import csv
import io
from pathlib import Path

import ezdxf
import networkx as nx
import numpy as np
import pyogrio
import pytest
import shapely
from click.testing import CliRunner

from clearway.cli import main
from clearway.exporters.tables import render_tables
from clearway.roadmap.model import Robot, Roadmap

import tests.lane_fixtures as fixtures

SAMPLES = Path(__file__).parent.parent.parent / "sample_drawings"


@pytest.fixture(scope="module")
def centre(tmp_path_factory):
    outdir = tmp_path_factory.mktemp("centre")
    result = CliRunner().invoke(main, ["build", str(SAMPLES / "distribution_centre.dxf"), "-o",
                                       str(outdir), "-q", "--no-html", "--dxf", "--csv"])
    assert result.exit_code == 0, result.stderr
    return outdir


def _source_stations() -> dict[str, tuple[float, float]]:
    """Station positions read straight from the source drawing, in its own unit (mm)."""
    msp = ezdxf.readfile(SAMPLES / "distribution_centre.dxf").modelspace()
    stations = {}
    points = [p.dxf.location for p in msp.query("POINT")]
    for text in msp.query("TEXT"):       # a POINT with its TEXT label up and to the right
        near = [p for p in points if 0 < text.dxf.insert.x - p.x < 500
                and 0 < text.dxf.insert.y - p.y < 500]
        if len(near) == 1:
            stations[text.dxf.text] = (near[0].x, near[0].y)
    for insert in msp.query("INSERT"):
        labels = [a.dxf.text for a in insert.attribs if a.dxf.tag == "LABEL"]
        if labels:
            stations[labels[0]] = (insert.dxf.insert.x, insert.dxf.insert.y)
    return stations


def test_dxf_is_in_the_drawings_unit_and_lands_on_its_stations(centre):
    doc = ezdxf.readfile(centre / "roadmap.dxf")
    # source: sample_drawings/README.md: the distribution centre is in millimetres
    # ($INSUNITS 4, DXF reference: 4 = millimetres)
    assert doc.header["$INSUNITS"] == 4
    msp = doc.modelspace()
    exported = {}
    for text in msp.query('TEXT[layer=="CLEARWAY-STATION"]'):
        circles = [c for c in msp.query('CIRCLE[layer=="CLEARWAY-STATION"]')
                   if abs(c.dxf.center.x - text.dxf.insert.x) < 1000
                   and abs(c.dxf.center.y - text.dxf.insert.y) < 1000]
        exported[text.dxf.text] = min(((c.dxf.center.x, c.dxf.center.y) for c in circles),
                                      key=lambda c: np.hypot(c[0] - text.dxf.insert.x,
                                                             c[1] - text.dxf.insert.y))
    source = _source_stations()
    # source: sample_drawings/README.md: 13 stations, DOCK-01..06, CHG-01..03, PICK-01..04
    assert len(source) == 13 and set(exported) == set(source)
    for label, (x, y) in source.items():
        # exact up to rounding: metres back to millimetres
        assert exported[label] == pytest.approx((x, y), abs=1e-6), label


def test_dxf_lanes_are_the_graphml_lanes_in_millimetres(centre):
    graph = nx.read_graphml(centre / "roadmap.graphml")
    msp = ezdxf.readfile(centre / "roadmap.dxf").modelspace()
    lanes = msp.query('LWPOLYLINE[layer=="CLEARWAY-LANE"]')
    ids = sorted(t.dxf.text for t in msp.query('TEXT[layer=="CLEARWAY-LANE-ID"]'))
    edges = sorted(data["id"] for *_, data in graph.edges(data=True))
    assert len(lanes) == len(edges) and ids == edges
    drawn = {tuple(np.round(np.asarray(lane.get_points("xy")) / 1000.0, 6).ravel())
             for lane in lanes}
    for *_, wkt in graph.edges(data="geometry"):
        coords = shapely.get_coordinates(shapely.from_wkt(wkt))
        assert tuple(np.round(coords, 6).ravel()) in drawn
    node_ids = {t.dxf.text for t in msp.query('TEXT[layer=="CLEARWAY-NODE-ID"]')}
    assert node_ids == set(graph.nodes) and {n for n in node_ids} >= {"n0"}


def test_gdal_reads_the_dxf_with_every_layer(centre):
    path = centre / "roadmap.dxf"
    meta, _, geometry, fields = pyogrio.raw.read(path)
    layers = fields[meta["fields"].tolist().index("Layer")]
    texts = fields[meta["fields"].tolist().index("Text")]
    graph = nx.read_graphml(centre / "roadmap.graphml")
    shapes = shapely.from_wkb(geometry)
    lanes = shapes[layers == "CLEARWAY-LANE"]
    assert len(lanes) == graph.number_of_edges()
    assert all(shape.geom_type == "LineString" for shape in lanes)
    assert int((layers == "CLEARWAY-NODE").sum()) == graph.number_of_nodes()
    # GDAL and ezdxf agree on where the node ids are written
    assert set(texts[layers == "CLEARWAY-NODE-ID"]) == set(graph.nodes)
    # the lanes lie within the building: 60 m x 40 m (sample_drawings/README.md), in mm
    xmin, ymin, xmax, ymax = shapely.total_bounds(lanes)
    assert 0 <= xmin and xmax <= 60_000 and 0 <= ymin and ymax <= 40_000


def test_csv_tables_hold_the_graphml_values(centre):
    graph = nx.read_graphml(centre / "roadmap.graphml")
    with open(centre / "nodes.csv", newline="", encoding="utf-8") as file:
        nodes = list(csv.DictReader(file))
    with open(centre / "lanes.csv", newline="", encoding="utf-8") as file:
        lanes = list(csv.DictReader(file))
    assert [row["id"] for row in nodes][:2] == ["n0", "n1"]
    assert {row["id"] for row in nodes} == set(graph.nodes)
    for row in nodes:
        attrs = graph.nodes[row["id"]]
        assert float(row["x"]) == attrs["x"] and float(row["y"]) == attrs["y"]   # exact
        assert row["kind"] == attrs["kind"] and row["label"] == attrs["label"]
    by_key = {attrs["id"]: (u, v, attrs) for u, v, attrs in graph.edges(data=True)}
    assert {row["id"] for row in lanes} == set(by_key)
    for row in lanes:
        u, v, attrs = by_key[row["id"]]
        assert {row["source"], row["target"]} == {u, v}
        assert float(row["length"]) == attrs["length"]
        assert float(row["clearance_min"]) == attrs["clearance_min"]


def test_outputs_are_the_same_bytes_on_a_rebuild(centre, tmp_path):
    result = CliRunner().invoke(main, ["build", str(SAMPLES / "distribution_centre.dxf"), "-o",
                                       str(tmp_path), "-q", "--no-html", "--dxf", "--csv"])
    assert result.exit_code == 0
    for name in ("roadmap.dxf", "nodes.csv", "lanes.csv"):
        assert (tmp_path / name).read_bytes() == (centre / name).read_bytes(), name


def test_csv_cells_that_would_run_as_formulas_are_defused():
    graph = fixtures.lane_graph({"n0": (0, 0, "station", "=HYPERLINK(\"x\")"),
                                 "n1": (-4, 0, "station", "A,B \"quoted\"")},
                                [("e0", "n0", "n1")])
    empty = shapely.MultiPolygon()
    tables = render_tables(Roadmap(graph, Robot.disc(0.35, margin=0.1), empty))
    rows = list(csv.reader(io.StringIO(tables["nodes.csv"].decode("utf-8"), newline="")))
    # source: OWASP, "CSV Injection": prefix cells starting with = + - @ tab CR with '
    assert rows[1][2] == "'=HYPERLINK(\"x\")"
    assert rows[2][2] == "A,B \"quoted\"" and rows[2][3] == "-4.0"   # numbers untouched
    assert tables["nodes.csv"].endswith(b"\r\n")                   # source: RFC 4180 sec. 2


def test_dxf_bytes_do_not_depend_on_the_string_hash_seed(centre, tmp_path):
    # ezdxf lists a CLASS per entity type in use in the order of a set; Python randomises
    # string hashes per process (PYTHONHASHSEED), so two builds of one drawing differed
    import os
    import subprocess
    import sys
    built = []
    for seed in ("1", "4"):
        out = tmp_path / seed
        done = subprocess.run([sys.executable, "-m", "clearway", "build",
                               str(SAMPLES / "distribution_centre.dxf"), "-o", str(out), "-q",
                               "--no-html", "--dxf"], capture_output=True, text=True,
                              env={**os.environ, "PYTHONHASHSEED": seed}, timeout=300)
        assert done.returncode == 0, done.stderr
        built.append((out / "roadmap.dxf").read_bytes())
    assert built[0] == built[1] == (centre / "roadmap.dxf").read_bytes()
