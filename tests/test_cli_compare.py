"""`clearway compare`: two GraphML revisions end to end."""

from __future__ import annotations

import json
from pathlib import Path

from click.testing import CliRunner
from lxml import etree

from clearway.cli import main

import tests.lane_fixtures as fixtures
from tests.roadmap import test_compare as cases


def files(tmp_path, omit=()):
    old, new = cases.revisions()
    paths = tmp_path / "a.graphml", tmp_path / "b.graphml"
    paths[0].write_bytes(fixtures.write_spec_graphml(old, omit=omit))
    paths[1].write_bytes(fixtures.write_spec_graphml(new))
    return paths


def test_text_summary(tmp_path):
    old, new = files(tmp_path)
    result = CliRunner().invoke(main, ["compare", str(old), str(new)])
    assert result.exit_code == 0, result.stderr
    lines = result.stdout.splitlines()
    assert lines[0] == "nodes: 1 added, 1 removed, 1 moved, 0 renamed"
    assert lines[1] == "lanes: 1 added, 1 removed; length 53.66 m -> 49.87 m"
    assert "moved n6 -> n6 (station PICK,A) by 0.300 m" in lines
    assert "route DOCK-1 - PICK,A: 12.00 m -> 17.87 m (+5.87 m)" in lines


def test_json_and_svg(tmp_path):
    old, new = files(tmp_path)
    svg = tmp_path / "changes.svg"
    result = CliRunner().invoke(main, ["compare", str(old), str(new), "--json", "--svg", str(svg)])
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    assert [n["id"] for n in data["nodes_removed"]] == ["n7"]
    # n4 narrowed to 0.65 m, above the 0.6 m comfort: no pinch point (issue 15)
    assert [p["id"] for p in data["new_pinch_points"]] == ["e3"]
    root = etree.fromstring(svg.read_bytes())
    assert root.tag == "{http://www.w3.org/2000/svg}svg"
    assert not list(tmp_path.glob(".clearway-*"))


def test_older_file_without_optional_attributes(tmp_path):
    # an older revision written without weight, clearances or geometry still compares
    old, new = files(tmp_path, omit=("weight", "clearance", "clearance_min", "geometry"))
    result = CliRunner().invoke(main, ["compare", str(old), str(new), "--json"])
    assert result.exit_code == 0, result.stderr
    data = json.loads(result.stdout)
    # without old clearances every narrow place is new: e3, e4 (lanes), n4 stays above 0.6 m
    assert [p["id"] for p in data["new_pinch_points"]] == ["e3", "e4"]
    assert data["edges_removed"][0]["wkt"] == "LINESTRING (4 0, 8 4)"


def test_bad_file_exit_2_nothing_written(tmp_path):
    old, _ = files(tmp_path)
    bad = tmp_path / "bad.graphml"
    bad.write_bytes(b"<graphml xmlns='http://graphml.graphdrawing.org/xmlns'><graph "
                    b"edgedefault='undirected'/></graphml>")
    svg = tmp_path / "out.svg"
    result = CliRunner().invoke(main, ["compare", str(old), str(bad), "--svg", str(svg)])
    assert result.exit_code == 2 and not svg.exists()
    assert result.stderr == f"Error: {bad}: no node x/y keys; this is not a clearway graph\n"


def test_bad_option_exit_2(tmp_path):
    old, new = files(tmp_path)
    result = CliRunner().invoke(main, ["compare", str(old), str(new), "--comfort-clearance",
                                       "-1"])
    assert result.exit_code == 2
    assert result.stderr.strip() == ("Error: main compare: Invalid value for "
                                     "'--comfort-clearance': -1.0 is not in the range x>=0.0.")


SAMPLES = Path(__file__).resolve().parents[1] / "sample_drawings"


def test_build_previous_then_compare_the_sample_revisions(tmp_path):
    runner = CliRunner()
    first = runner.invoke(main, ["build", str(SAMPLES / "distribution_centre.dxf"), "-o",
                                 str(tmp_path / "a"), "-q"])
    assert first.exit_code == 0, first.stderr
    old_file = tmp_path / "a" / "roadmap.graphml"
    second = runner.invoke(main, ["build", str(SAMPLES / "distribution_centre_rev_b.dxf"),
                                  "-o", str(tmp_path / "b"), "-q", "--previous", str(old_file)])
    assert second.exit_code == 0, second.stderr
    from clearway.exporters import read_graphml
    old, new = read_graphml(old_file), read_graphml(tmp_path / "b" / "roadmap.graphml")
    # every station keeps its node id (stations are not moved in revision B, per
    # sample_drawings/README.md), and the report names the same nodes as the graph
    assert {old.nodes[n]["label"]: n for n in old if old.nodes[n]["label"]} == {
        new.nodes[n]["label"]: n for n in new if new.nodes[n]["label"]}
    report = json.loads((tmp_path / "b" / "report.json").read_text(encoding="utf-8"))
    assert {s["label"]: s["node"] for s in report["stations"]} == {
        new.nodes[n]["label"]: n for n in new if new.nodes[n]["label"]}
    edges = {key for *_, key in new.edges(keys=True)}
    assert report["pinch_points"] and all(p["edge"] in edges for p in report["pinch_points"])
    # compare: with carried ids, only nodes that moved more than the one same-place
    # tolerance (0.5 m) change id
    result = runner.invoke(main, ["compare", str(old_file), str(tmp_path / "b" / "roadmap.graphml"),
                                  "--json"])
    changes = json.loads(result.stdout)
    assert all(move["distance"] > 0.5 for move in changes["nodes_moved"]
               if move["old_id"] != move["new_id"])
    assert len(changes["ids_changed"]) == sum(1 for move in changes["nodes_moved"]
                                              if move["old_id"] != move["new_id"])


def test_build_with_a_hostile_previous_writes_nothing(tmp_path):
    evil = tmp_path / "evil.graphml"
    evil.write_text('<?xml version="1.0"?><!DOCTYPE g [<!ENTITY x SYSTEM "file:///etc/passwd">]>'
                    '<graphml xmlns="http://graphml.graphdrawing.org/xmlns">&x;</graphml>')
    out = tmp_path / "out"
    result = CliRunner().invoke(main, ["build", str(SAMPLES / "distribution_centre.dxf"), "-o",
                                       str(out), "--previous", str(evil)])
    assert result.exit_code == 2 and not out.exists()
    assert result.stderr == (f"Error: {evil}: DOCTYPE or ENTITY declarations are not allowed "
                             "in a graph file; refusing to read it\n")


def test_route_tolerance_hides_smaller_route_changes(tmp_path):
    # the planted revision lengthens DOCK-1 - PICK,A by 5.87 m (see test_text_summary):
    # listed under a 5 m tolerance, hidden under a 6 m one
    old, new = files(tmp_path)
    listed = CliRunner().invoke(main, ["compare", str(old), str(new), "--route-tolerance", "5"])
    hidden = CliRunner().invoke(main, ["compare", str(old), str(new), "--route-tolerance", "6"])
    assert listed.exit_code == hidden.exit_code == 0
    change = "route DOCK-1 - PICK,A: 12.00 m -> 17.87 m (+5.87 m)"
    assert change in listed.stdout.splitlines()
    assert change not in hidden.stdout.splitlines()
