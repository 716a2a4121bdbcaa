"""`clearway compare`: two GraphML revisions end to end."""

from __future__ import annotations

import importlib.util
import json
import sys
from pathlib import Path

from click.testing import CliRunner
from lxml import etree

from clearway.cli import main

_spec = importlib.util.spec_from_file_location(
    "lane_fixtures", Path(__file__).resolve().parent / "lane_fixtures.py")
fixtures = sys.modules.setdefault("lane_fixtures", importlib.util.module_from_spec(_spec))
if not hasattr(fixtures, "lane_graph"):
    _spec.loader.exec_module(fixtures)
_cases_spec = importlib.util.spec_from_file_location(
    "compare_cases_cli", Path(__file__).resolve().parent / "roadmap" / "test_compare.py")
cases = importlib.util.module_from_spec(_cases_spec)
_cases_spec.loader.exec_module(cases)


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
    assert [p["id"] for p in data["new_pinch_points"]] == ["e3", "n4"]
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
    assert result.stderr.strip() == ("Error: comfort_clearance must be a number >= 0 m, "
                                     "got -1.0")
