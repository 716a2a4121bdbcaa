"""The command line with a rectangular or car robot: options, config, outputs, routes."""

from __future__ import annotations

import json
import re

import igraph
import pytest
from click.testing import CliRunner

from clearway.cli import main
from tests.conftest import SAMPLES


def run(*args):
    return CliRunner().invoke(main, [str(a) for a in args])


def test_rectangle_reaches_the_room_behind_the_narrow_door_its_disc_cannot(tmp_path):
    # analytic: EXAM-3's 28 in door is 0.7112 m wide; a 0.6 m wide body with 0.05 m margin
    # each side needs 0.70 m heading through it; its circumscribed disc needs
    # 2 * (hypot(1.2, 0.6) / 2 + 0.05) = 1.44 m
    rect, disc = tmp_path / "rect", tmp_path / "disc"
    assert run("build", SAMPLES / "clinic.dxf", "-o", rect, "--robot-size", "1.2x0.6",
               "--margin", "0.05", "-q").exit_code == 0
    assert run("build", SAMPLES / "clinic.dxf", "-o", disc, "--robot-radius",
               "0.6708203932499369", "--margin", "0.05", "-q").exit_code == 0
    reach = {}
    for name, folder in (("rect", rect), ("disc", disc)):
        report = json.loads((folder / "report.json").read_text(encoding="utf-8"))
        reach[name] = {s["label"]: s["reachable"] for s in report["stations"]}
    assert reach["rect"]["EXAM-3"] and not reach["disc"]["EXAM-3"]
    report = json.loads((rect / "report.json").read_text(encoding="utf-8"))
    assert report["robot"]["clearance"] == pytest.approx(0.35, rel=1e-12)   # 0.3 + 0.05
    assert report["robot"]["kind"] == "differential"
    assert set(report["body"]) == {"lanes", "turns", "reverse_only"}
    # independent reader: igraph sees the body attributes with their GraphML types
    graph = igraph.Graph.Read_GraphML(str(rect / "roadmap.graphml"))
    assert {"turns", "reverse_only"} <= set(graph.vs.attributes())
    assert "clearance_body" in graph.es.attributes()
    assert min(graph.es["clearance_body"]) >= 0.05
    assert sorted(v["id"] for v in graph.vs if v["reverse_only"]) == \
        sorted(report["body"]["reverse_only"])
    disc_graphml = (disc / "roadmap.graphml").read_text(encoding="utf-8")
    assert "clearance_body" not in disc_graphml and "turns" not in disc_graphml


def test_route_on_a_rectangle_graph_keeps_to_the_allowed_turns(tmp_path):
    assert run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--robot-size", "1.2x0.6",
               "--margin", "0.05", "-q").exit_code == 0
    result = run("route", tmp_path / "roadmap.graphml", "SUPPLY", "EXAM-3", "--json")
    assert result.exit_code == 0, result.output
    route = json.loads(result.stdout)
    graph = igraph.Graph.Read_GraphML(str(tmp_path / "roadmap.graphml"))
    turns = {v["id"]: set(v["turns"].split()) for v in graph.vs}
    for node, before, after in zip(route["nodes"][1:-1], route["edges"], route["edges"][1:]):
        assert f"{before}:{after}" in turns[node] or f"{after}:{before}" in turns[node]


@pytest.mark.parametrize("args, message", [
    (["--robot-size", "1.2x0.6", "--robot-kind", "car"], r"turn radius must be > 0 m"),
    (["--robot-size", "1.2x0.6", "--rotation-centre", "abc"], r"--rotation-centre must be"),
    (["--robot-size", "1.2x0.6", "--rotation-centre", "0.9,0"], r"outside the 1\.2 m x 0\.6 m"),
    (["--robot-radius", "0.3", "--rotation-centre", "0.1,0"], r"needs a rectangular robot"),
    (["--robot-size", "1.2x0.6", "--turn-radius", "2"], r"for a car robot"),
])
def test_bad_robot_options_exit_2_with_one_line(tmp_path, args, message):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "out", *args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and re.search(message, lines[0]), lines
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("body, message", [
    ('centre_offset = [0.1]', r"centre_offset must be two numbers"),
    ('reverse = "no"', r"reverse has the wrong type"),
    ('kind = "tank"', r"kind must be one of differential, car, omni"),
])
def test_bad_robot_config_exits_2(tmp_path, body, message):
    config = tmp_path / "site.toml"
    config.write_text(f"[robot]\nlength = 1.2\nwidth = 0.6\n{body}\n")
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "out", "--config", config)
    assert result.exit_code == 2, result.output
    assert re.search(message, result.stderr.splitlines()[0])


def test_car_from_the_config_file(tmp_path):
    config = tmp_path / "site.toml"
    config.write_text('[robot]\nlength = 1.2\nwidth = 0.6\nmargin = 0.05\nkind = "car"\n'
                      'centre_offset = [-0.4, 0.0]\nturn_radius = 1.0\nreverse = false\n')
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--config", config, "-q")
    assert result.exit_code == 0, result.output
    robot = json.loads((tmp_path / "report.json").read_text(encoding="utf-8"))["robot"]
    assert (robot["kind"], robot["centre_offset"], robot["turn_radius"], robot["reverse"]) \
        == ("car", [-0.4, 0.0], 1.0, False)
    # analytic: the swing radius about the rear axle reaches the front corners
    assert robot["swing_radius"] == pytest.approx((1.0 ** 2 + 0.3 ** 2) ** 0.5, rel=1e-12)
