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


CAR = ["--robot-size", "1.2x0.6", "--robot-kind", "car"]


@pytest.mark.parametrize("args, message", [
    (CAR, r"^Error: a car robot needs its smallest turning radius: pass --turn-radius"),
    (["--robot-size", "1.2x0.6", "--rotation-centre", "abc"], r"--rotation-centre must be"),
    (["--robot-size", "1.2x0.6", "--rotation-centre", "0.9,0"],
     r"--rotation-centre 0\.9,0 lies outside the 1\.2 m x 0\.6 m footprint \(forward within "
     r"\+-0\.6 m, left within \+-0\.3 m\)"),
    (["--robot-radius", "0.3", "--rotation-centre", "0.1,0"], r"needs a rectangular robot"),
    (["--robot-size", "1.2x0.6", "--turn-radius", "2"],
     r"--turn-radius is for a car robot \(--robot-kind car\), not a differential one"),
    (["--robot-size", "1.2x0.6", "--robot-kind", "omni", "--turn-radius", "2"],
     r"not an omni one"),
    (["--robot-size", "1.2x0.6", "--robot-kind", "omni", "--rotation-centre", "0.2,0"],
     r"an omni robot turns about its centre"),
    (["--robot-size", "1.2x0.6", "--no-reverse"], r"--reverse/--no-reverse is for a car"),
    (["--robot-size", "0x0.6"], r"--robot-size length: 0\.0 is not in the range x>0"),
    (["--robot-size", "1.2x-0.6"], r"--robot-size width: -0\.6 is not in the range x>0"),
    (["--robot-size", "ax0.6"], r"--robot-size length: 'a' is not a number of metres$"),
    # analytic: 1500 mm typed as metres; 1.5 m is the turning radius meant
    (CAR + ["--turn-radius", "1500"], r"--turn-radius 1500: a turning radius over 50 m is "
     r"not plausible; lengths are in metres: for millimetres give --turn-radius 1\.5$"),
    # analytic: with its rotation centre 0.1 m left of the middle, the 0.6 m wide body
    # reaches 0.3 + 0.1 = 0.4 m to its right: a 0.35 m turning centre lies under it
    (CAR + ["--turn-radius", "0.35", "--rotation-centre", "-0.4,0.1"],
     r"--turn-radius 0\.35: a car's turning centre would lie under its body \(it reaches "
     r"0\.4 m to the side"),
])
def test_bad_robot_options_exit_2_with_one_line(tmp_path, args, message):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "out", *args)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and re.search(message, lines[0]), lines
    assert not (tmp_path / "out").exists()


@pytest.mark.parametrize("body, message", [
    ('length = 1.2\nwidth = 0.6\ncentre_offset = [0.1]', r"centre_offset must be two numbers"),
    ('length = 1.2\nwidth = 0.6\nreverse = "no"', r"reverse has the wrong type"),
    ('length = 1.2\nwidth = 0.6\nkind = "tank"',
     r"\[robot\] kind must be one of differential, car, omni, got 'tank'$"),
    ('length = 1.2', r"\[robot\] length needs width too"),
    ('radius = 0.4\nlength = 1.2\nwidth = 0.6', r"\[robot\] radius and length, width exclude"),
    ('length = 1.2\nwidth = 0.6\ncentre_offset = [0.9, 0]',
     r"\[robot\] centre_offset 0\.9,0 lies outside the 1\.2 m x 0\.6 m footprint"),
    ('length = 0\nwidth = 0.6', r"\[robot\] length: 0\.0 is not in the range x>0"),
    ('length = 1.2\nwidth = 0.6\nkind = "car"', r"a car robot needs its smallest turning"),
    ('length = 1.2\nwidth = 0.6\nkind = "car"\nturn_radius = 150',
     r"\[robot\] turn_radius 150: .* for millimetres give turn_radius = 0\.15$"),
    ('length = 1.2\nwidth = 0.6\nreverse = false', r"\[robot\] reverse is for a car robot"),
])
def test_bad_robot_config_exits_2_naming_the_file(tmp_path, body, message):
    config = tmp_path / "site.toml"
    config.write_text(f"[robot]\n{body}\n")
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "out", "--config", config)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and re.search(message, lines[0]), lines
    assert "site.toml" in lines[0] or "--turn-radius" in lines[0]
    assert not (tmp_path / "out").exists()


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


def test_build_summary_counts_what_the_body_cannot_do(tmp_path):
    # the summary's body line counts the report's lists (a car without reversing in the
    # clinic's corridors meets some of each); a disc robot's summary has no body line
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--robot-size", "1.2x0.7",
                 "--robot-kind", "car", "--rotation-centre=-0.4,0", "--turn-radius", "1.2",
                 "--no-reverse", "--no-html")
    assert result.exit_code == 0, result.output
    body = json.loads((tmp_path / "report.json").read_text(encoding="utf-8"))["body"]
    rounds = sum(1 for turn in body["turns"] if turn["what"] == "turn round")
    assert 0 < rounds < len(body["turns"]) and body["lanes"] and body["reverse_only"]
    line = next(line for line in result.stderr.splitlines() if line.startswith("body: "))
    assert re.match(rf"body: {len(body['lanes'])} lanes? or links? it cannot drive \(dropped\), "
                    rf"{len(body['turns']) - rounds} turns? forbidden, {rounds} turns? round "
                    rf"forbidden, {len(body['reverse_only'])} dead ends? to back out of", line)
    disc = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "disc", "--no-html")
    assert disc.exit_code == 0 and "body: " not in disc.stderr


def test_route_for_a_car_detours_round_forbidden_turns_or_says_there_is_none(tmp_path):
    # the shortest route that ignores the turns (networkx on the lane graph, not the code
    # under test) takes a turn the car may not; clearway route must keep to the allowed
    # turns, so it is longer, or exit 1 with one line saying no route keeps to them
    import networkx as nx
    assert run("build", SAMPLES / "distribution_centre.dxf", "-o", tmp_path, "--robot-size",
               "1.2x0.7", "--robot-kind", "car", "--rotation-centre=-0.4,0", "--turn-radius",
               "1.2", "--no-reverse", "-q", "--no-html").exit_code == 0
    graph = nx.read_graphml(tmp_path / "roadmap.graphml", force_multigraph=True)
    allowed = {node: {tuple(item.split(":")) for item in data["turns"].split() if item != "-"}
               for node, data in graph.nodes(data=True)}
    allowed = {node: pairs | {(b, a) for a, b in pairs} for node, pairs in allowed.items()}
    plain = nx.Graph()
    for u, v, key, data in graph.edges(keys=True, data=True):     # GraphML edge ids: keys
        if not plain.has_edge(u, v) or plain[u][v]["weight"] > data["weight"]:
            plain.add_edge(u, v, weight=data["weight"], id=key)
    tried = detoured = 0
    for source in sorted(plain)[:40]:
        lengths, paths = nx.single_source_dijkstra(plain, source)
        for target, path in sorted(paths.items()):
            edges = [plain[a][b]["id"] for a, b in zip(path, path[1:])]
            if all(pair in allowed[node] for node, pair in
                   zip(path[1:-1], zip(edges, edges[1:]))):
                continue
            result = run("route", tmp_path / "roadmap.graphml", source, target, "--json")
            tried += 1
            if result.exit_code == 1:
                lines = result.stderr.splitlines()
                assert len(lines) == 1 and "with the allowed turns" in lines[0], lines
                continue
            assert result.exit_code == 0, result.output
            route = json.loads(result.stdout)
            for node, pair in zip(route["nodes"][1:-1], zip(route["edges"], route["edges"][1:])):
                assert pair in allowed[node]
            assert route["length"] > lengths[target]
            detoured += 1
            if detoured >= 3:
                break
        if detoured >= 3 or tried >= 12:
            break
    assert detoured >= 1            # counted on this drawing: such detours exist
