"""`clearway route`: routes and the station matrix from a GraphML file, end to end."""

from __future__ import annotations

import csv
import io
import json
import math
from pathlib import Path

import networkx as nx
import numpy as np
import pytest
from click.testing import CliRunner
from scipy.sparse.csgraph import dijkstra

from clearway.cli import main

import tests.lane_fixtures as fixtures


def site_graph() -> nx.MultiGraph:
    """Two aisles joined at both ends, a dock, a charger, a pick face and an island station."""
    return fixtures.lane_graph(
        {"n0": (0, 0, "station", "DOCK-1", 0.9), "n1": (4, 0, "junction", "", 1.2),
         "n2": (4, 8, "junction", "", 1.1), "n3": (12, 0, "junction", "", 1.0),
         "n4": (12, 8, "junction", "", 1.0), "n5": (16, 8, "station", "CHG <2>", 0.7),
         "n6": (8, 4, "station", "PICK,A", 0.8), "n7": (30, 30, "station", "ISLAND", 2.0)},
        [("e0", "n0", "n1"), ("e1", "n1", "n2", {"clearance_min": 0.65}), ("e2", "n1", "n3"),
         ("e3", "n2", "n4"), ("e4", "n3", "n4", {"clearance_min": 0.55}),
         ("e5", "n4", "n5"), ("e6", "n2", "n6"), ("e7", "n1", "n6", {"via": [(8, 0)]})])


@pytest.fixture()
def graph_file(tmp_path):
    path = tmp_path / "roadmap.graphml"
    path.write_bytes(fixtures.write_spec_graphml(site_graph()))
    return path


def run(*args):
    result = CliRunner().invoke(main, [str(arg) for arg in args])
    return result


def test_route_text_output(graph_file):
    result = run("route", graph_file, "DOCK-1", "CHG <2>")
    assert result.exit_code == 0, result.stderr
    lines = result.stdout.splitlines()
    # analytic: 4 + 8 + 8 + 4 = 24 m either way round the loop; the lower-numbered lanes
    # tie-break is not promised, so check the length and the ends
    assert lines[0].startswith("DOCK-1 -> CHG <2>: 24.000 m, clearance_min ")
    assert lines[1].startswith("nodes: n0 n1 ") and lines[1].endswith(" n4 n5")
    assert len(lines) == 2                   # issue 15: the WKT only with --wkt
    lines = run("route", graph_file, "DOCK-1", "CHG <2>", "--wkt").stdout.splitlines()
    assert lines[2].startswith("LINESTRING (0 0, 4 0, ") and lines[2].endswith("16 8)")


def test_route_json_matches_scipy(graph_file):
    result = run("route", graph_file, "n0", "PICK,A", "--json", "--method", "dijkstra")
    assert result.exit_code == 0, result.stderr
    answer = json.loads(result.stdout)
    site = site_graph()
    order = list(site.nodes)
    matrix = nx.to_scipy_sparse_array(nx.Graph(site), nodelist=order, weight="weight")
    # independent reference: scipy.sparse.csgraph on the same lanes
    expected = dijkstra(matrix, directed=False, indices=order.index("n0"))[order.index("n6")]
    assert answer["length"] == pytest.approx(expected) and answer["reachable"] is True
    assert answer["nodes"][0] == "n0" and answer["nodes"][-1] == "n6"
    assert answer["wkt"].startswith("LINESTRING (0 0, 4 0")


def test_route_avoid(graph_file):
    plain = json.loads(run("route", graph_file, "DOCK-1", "CHG <2>", "--json").stdout)
    around = run("route", graph_file, "DOCK-1", "CHG <2>", "--json", "--avoid", "n3")
    assert around.exit_code == 0
    answer = json.loads(around.stdout)
    assert "n3" not in answer["nodes"] and answer["length"] == plain["length"] == 24.0
    # analytic: the only other way is the aisle x = 4 with clearance_min 0.65 m
    assert answer["nodes"] == ["n0", "n1", "n2", "n4", "n5"] and answer["clearance_min"] == 0.65


def test_unreachable_route_exits_1_with_one_line(graph_file):
    result = run("route", graph_file, "DOCK-1", "ISLAND")
    assert result.exit_code == 1
    assert result.stderr.strip().endswith("no route from DOCK-1 to ISLAND")
    assert len(result.stderr.splitlines()) == 1 and result.stdout == ""


def test_matrix_csv_marks_unreachable_and_is_symmetric(graph_file, tmp_path):
    out = tmp_path / "matrix.csv"
    result = run("route", graph_file, "--matrix", "--csv", out)
    assert result.exit_code == 0, result.stderr
    rows = list(csv.reader(io.StringIO(out.read_text(encoding="utf-8"))))
    assert rows[0] == ["station", "CHG <2>", "DOCK-1", "ISLAND", "PICK,A"]
    cells = {(row[0], name): value for row in rows[1:] for name, value in zip(rows[0][1:], row[1:])}
    assert cells["DOCK-1", "ISLAND"] == cells["ISLAND", "DOCK-1"] == "unreachable"
    assert cells["DOCK-1", "CHG <2>"] == "24.000"
    numbers = {key: float(v) for key, v in cells.items() if v != "unreachable"}
    assert all(numbers[a, b] == numbers[b, a] for a, b in numbers)
    assert not list(tmp_path.glob(".clearway-*"))


def test_matrix_json(graph_file):
    answer = json.loads(run("route", graph_file, "--matrix", "--json").stdout)
    assert answer["stations"] == ["CHG <2>", "DOCK-1", "ISLAND", "PICK,A"]
    assert answer["matrix"][1][2] is None and answer["matrix"][1][0] == 24.0
    assert answer["matrix"][2][2] == 0.0


@pytest.mark.parametrize(("args", "message"), [
    (("DOCK-1",), "give FROM and TO, or --matrix"),
    (("DOCK-1", "CHG <2>", "--matrix"), "give FROM and TO, or --matrix"),
    (("DOCK-1", "CHG <2>", "--csv", "x.csv"), "--csv needs --matrix"),
    (("DOCK-1", "NOWHERE"), "no node or station called 'NOWHERE'"),
    (("DOCK-1", "CHG <2>", "--avoid", "DOCK-1"), "cannot avoid DOCK-1: it is an end"),
    (("dock-1", "CHG 2"), "did you mean 'CHG <2>'?"),
])
def test_bad_input_exit_2_one_line(graph_file, args, message):
    result = run("route", graph_file, *args)
    assert result.exit_code == 2
    assert message in result.stderr and len(result.stderr.strip().splitlines()) == 1


def test_hostile_graph_file_exit_2(tmp_path):
    path = tmp_path / "evil.graphml"
    path.write_text('<?xml version="1.0"?><!DOCTYPE g [<!ENTITY x SYSTEM "file:///etc/passwd">]>'
                    '<graphml xmlns="http://graphml.graphdrawing.org/xmlns">&x;</graphml>')
    result = run("route", path, "--matrix")
    assert result.exit_code == 2 and "root:" not in result.stderr + result.stdout
    assert result.stderr.strip() == (f"Error: {path}: DOCTYPE or ENTITY declarations are not "
                                     "allowed in a graph file; refusing to read it")


def test_missing_graph_file_exit_2(tmp_path):
    result = run("route", tmp_path / "none.graphml", "a", "b")
    assert result.exit_code == 2 and "graph file not found" in result.stderr
    assert len(result.stderr.splitlines()) == 1


def test_matrix_of_the_sample_build_equals_scipy_on_networkx_reading(tmp_path):
    # the real pipeline's file, read independently by networkx's GraphML reader and solved
    # by scipy.sparse.csgraph: every station-to-station cost must agree
    sample = Path(__file__).resolve().parents[1] / "sample_drawings" / "distribution_centre.dxf"
    built = run("build", sample, "-o", tmp_path / "out", "-q")
    assert built.exit_code == 0, built.stderr
    path = tmp_path / "out" / "roadmap.graphml"
    answer = json.loads(run("route", path, "--matrix", "--json").stdout)
    theirs = nx.read_graphml(path, force_multigraph=True)
    order = list(theirs.nodes)
    simple = nx.Graph()
    simple.add_nodes_from(order)
    for u, v, weight in theirs.edges(data="weight"):
        if u != v and (not simple.has_edge(u, v) or weight < simple[u][v]["weight"]):
            simple.add_edge(u, v, weight=weight)
    matrix = nx.to_scipy_sparse_array(simple, nodelist=order, weight="weight")
    by_label = {theirs.nodes[n]["label"]: order.index(n) for n in order
                if theirs.nodes[n].get("label")}
    labels = answer["stations"]
    assert labels == sorted(by_label) and len(labels) == 13   # source: sample_drawings/README.md
    rows = [by_label[label] for label in labels]
    expected = dijkstra(matrix, directed=False, indices=rows)[:, rows]
    got = [[math.inf if v is None else v for v in row] for row in answer["matrix"]]
    np.testing.assert_allclose(np.array(got), expected, rtol=1e-12, atol=1e-9)
    # and one route by each method equals networkx's Dijkstra on the same file
    for method in ("astar", "dijkstra"):
        route = json.loads(run("route", path, "DOCK-01", "CHG-03", "--json", "--method",
                               method).stdout)
        source, target = order[by_label["DOCK-01"]], order[by_label["CHG-03"]]
        assert route["cost"] == pytest.approx(
            nx.dijkstra_path_length(theirs, source, target, weight="weight"), rel=1e-12)


@pytest.fixture(scope="module")
def clinic_build(tmp_path_factory):
    outdir = tmp_path_factory.mktemp("clinic")
    built = run("build", Path(__file__).parent.parent / "sample_drawings" / "clinic.dxf",
                "-o", outdir, "-q")
    assert built.exit_code == 0, built.stderr
    return outdir


def test_issue_15_no_route_names_the_blocking_doorway(clinic_build):
    result = run("route", clinic_build / "roadmap.graphml", "supply", "Exam-3")
    assert result.exit_code == 1 and len(result.stderr.splitlines()) == 1
    # source: sample_drawings/README.md: EXAM-3 sits behind the 28 in doorway; exact by
    # definition 28 in = 0.7112 m; the robot needs 2 x (0.35 + 0.1) = 0.90 m
    assert result.stderr.strip().endswith(
        "no route from SUPPLY to EXAM-3: EXAM-3 is cut off by a passage 0.71 m wide at "
        "(14.58, 5.02), the robot needs 0.90 m")
    answer = json.loads(run("route", clinic_build / "roadmap.graphml", "SUPPLY", "EXAM-3",
                            "--json").stdout)
    assert answer["reachable"] is False and "0.71 m wide" in answer["reason"]


def test_issue_15_report_of_another_drawing_is_not_used(clinic_build, tmp_path):
    (tmp_path / "roadmap.graphml").write_bytes((clinic_build / "roadmap.graphml").read_bytes())
    report = json.loads((clinic_build / "report.json").read_text())
    report["sha256"] = "0" * 64
    (tmp_path / "report.json").write_text(json.dumps(report))
    result = run("route", tmp_path / "roadmap.graphml", "SUPPLY", "EXAM-3")
    assert result.exit_code == 1 and result.stderr.strip().endswith("to EXAM-3")


@pytest.mark.parametrize(("content", "message"), [
    (b"  0\nSECTION\n  2\nHEADER\n", "not a GraphML file: it is a DXF drawing"),
    (b'{"format": 1}', "not a GraphML file: it is JSON"),
    (b"<graphml><node", "not a GraphML file: not well-formed XML (line 1)"),
])
def test_issue_15_not_graphml_in_one_line(tmp_path, content, message):
    path = tmp_path / "roadmap.graphml"
    path.write_bytes(content)
    result = run("route", path, "A", "B")
    assert result.exit_code == 2 and len(result.stderr.splitlines()) == 1
    assert message in result.stderr and "Start tag" not in result.stderr
