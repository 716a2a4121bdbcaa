"""`clearway build` end to end on every sample drawing, plus bad input and interrupted builds."""

from __future__ import annotations

import json
import re
import signal

import geojson
import igraph
import networkx as nx
import numpy as np
import pytest
import resvg_py
import shapely
from click.testing import CliRunner
from lxml import etree
from shapely.geometry import shape

import clearway.exporters
import clearway.exporters.files
from clearway.cli import main
from tests.conftest import SAMPLES, new_drawing, save, wall_with_gap

FILES = {"roadmap.graphml", "roadmap.geojson", "roadmap.svg", "report.json", "roadmap.html"}
#: No environment pinning: the SVG carries the drawing's own date, not the build date.
ENV: dict[str, str] = {}
# source: sample_drawings/README.md -- stations per drawing, and which cannot be reached
EXPECTED_STATIONS = {"distribution_centre.dxf": (13, set()),
                     "distribution_centre_rev_b.dxf": (13, set()),
                     "clinic.dxf": (4, {"EXAM-3"})}


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args], env=ENV)


def _snapshot(folder) -> dict[str, bytes]:
    return {path.name: path.read_bytes() for path in sorted(folder.iterdir())}


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """Build every sample once: {drawing name: (result, outdir)}."""
    outputs = {}
    for name in EXPECTED_STATIONS:
        outdir = tmp_path_factory.mktemp(name.split(".")[0]) / "out"
        outputs[name] = (run("build", SAMPLES / name, "-o", outdir), outdir)
    return outputs


@pytest.mark.parametrize("name", sorted(EXPECTED_STATIONS))
def test_sample_builds_and_every_output_checks_out(built, name):
    result, outdir = built[name]
    assert result.exit_code == 0, result.output
    assert set(_snapshot(outdir)) == FILES                  # and no temporary files
    report = json.loads((outdir / "report.json").read_text(encoding="utf-8"))
    stations, unreachable = EXPECTED_STATIONS[name]
    assert report["counts"]["stations"] == stations
    assert {s["label"] for s in report["stations"] if not s["reachable"]} == unreachable

    graph = nx.read_graphml(outdir / "roadmap.graphml", force_multigraph=True)
    other = igraph.Graph.Read_GraphML(str(outdir / "roadmap.graphml"))
    assert (graph.number_of_nodes(), graph.number_of_edges()) == (other.vcount(), other.ecount())
    assert (report["counts"]["nodes"], report["counts"]["edges"]) == (other.vcount(),
                                                                     other.ecount())
    assert graph.number_of_edges() > 0
    for vertex in other.vs:
        assert (vertex["x"], vertex["y"]) == (graph.nodes[vertex["id"]]["x"],
                                               graph.nodes[vertex["id"]]["y"])
    for u, v, data in graph.edges(data=True):
        line = shapely.from_wkt(data["geometry"])
        ends = {line.coords[0], line.coords[-1]}
        assert ends == {(graph.nodes[u]["x"], graph.nodes[u]["y"]),
                        (graph.nodes[v]["x"], graph.nodes[v]["y"])}
        assert line.length == pytest.approx(data["length"], rel=1e-9)
    assert report["lane_length"] == pytest.approx(
        sum(d["length"] for _, _, d in graph.edges(data=True)), rel=1e-12)

    collection = geojson.loads((outdir / "roadmap.geojson").read_text(encoding="utf-8"))
    assert collection.is_valid, collection.errors()
    areas = {f["properties"]["role"]: shape(f["geometry"]) for f in collection["features"]
             if f["properties"]["element"] == "area"}
    for area in areas.values():
        for polygon in area.geoms:                      # source: RFC 7946 sec. 3.1.6
            assert shapely.is_ccw(polygon.exterior)
            assert not any(shapely.is_ccw(ring) for ring in polygon.interiors)
    # every lane of the GraphML lies in the GeoJSON's drivable area (0.1 mm rounding)
    drivable = areas["drivable"].buffer(1e-3)
    for _, _, data in graph.edges(data=True):
        assert drivable.contains(shapely.from_wkt(data["geometry"]))

    svg = (outdir / "roadmap.svg").read_bytes()
    root = etree.fromstring(svg)
    left, top, width, height = map(float, root.get("viewBox").split())
    xs = [d["x"] for _, d in graph.nodes(data=True)]
    ys = [d["y"] for _, d in graph.nodes(data=True)]
    assert left <= min(xs) and left + width >= max(xs) and top <= -max(ys)
    png = bytes(resvg_py.svg_to_bytes(svg_string=svg.decode("utf-8")))
    assert png[:8] == b"\x89PNG\r\n\x1a\n"              # source: PNG spec sec. 5.2 signature
    # source: sample_drawings/make_samples.py ISSUED -- the drawing's date, not the build's
    issued = {"clinic.dxf": b"2026-09-21", "distribution_centre.dxf": b"2026-10-05",
              "distribution_centre_rev_b.dxf": b"2026-11-16"}[name]
    assert b"ISO 3691-4" in svg and b"drawing of " + issued in svg


def test_progress_and_summary_on_stderr(built):
    result, outdir = built["clinic.dxf"]
    lines = result.stderr.splitlines()
    assert lines[0].startswith("read ") and "clinic.dxf: units in" in lines[0]
    assert result.stdout == ""
    assert any(line.startswith("clinic.dxf: ") and "lanes" in line and
               "stations reached 3/4" in line for line in lines)
    assert any("unreachable: EXAM-3" in line for line in lines)
    assert any(line.startswith(f"files in {outdir}") for line in lines)


@pytest.mark.parametrize("divided", [False, True])
def test_summary_says_when_the_lanes_fall_into_separate_networks(tmp_path, divided):
    # analytic: a 16 m x 8 m hall is one network; a wall right across it, with no door,
    # leaves two halves that no lane joins, which a user must hear about in the summary
    from tests.conftest import walled_room

    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 16, 8)
    if divided:
        msp.add_lwpolyline([(7.9, 0.1), (8.1, 0.1), (8.1, 7.9), (7.9, 7.9)], close=True,
                           dxfattribs={"layer": "A-WALL"})
    result = run("build", save(doc, tmp_path), "-o", tmp_path / "out")
    assert result.exit_code == 0, result.output
    networks = [line for line in result.stderr.splitlines()
                if line.startswith("separate lane networks:")]
    report = json.loads((tmp_path / "out" / "report.json").read_text())
    assert report["components"] == (2 if divided else 1)
    if divided:
        assert len(networks) == 1 and networks[0].startswith("separate lane networks: 2 (")
    else:
        assert networks == []


def test_builds_in_processes_with_different_hash_seeds_give_identical_files(tmp_path):
    # sets and dicts of strings iterate in an order that depends on PYTHONHASHSEED, which
    # differs between processes: two processes, two seeds, one set of bytes
    import os
    import subprocess
    import sys
    folders = []
    for seed in ("0", "4021"):
        folder = tmp_path / f"seed-{seed}"
        subprocess.run([sys.executable, "-c", "from clearway.cli import main; main()", "build",
                        str(SAMPLES / "clinic.dxf"), "-o", str(folder), "--quiet"],
                       env={**os.environ, "PYTHONHASHSEED": seed}, check=True, timeout=300)
        folders.append(folder)
    assert set(_snapshot(folders[0])) == FILES
    assert _snapshot(folders[0]) == _snapshot(folders[1])


def test_two_builds_give_byte_identical_files(built, tmp_path):
    _, first = built["clinic.dxf"]
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--quiet")
    assert result.exit_code == 0 and result.stderr == ""
    assert _snapshot(tmp_path) == _snapshot(first)


def test_strict_writes_and_exits_1_when_a_station_is_unreachable(tmp_path):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--strict", "--quiet")
    assert result.exit_code == 1
    assert set(_snapshot(tmp_path)) == FILES
    assert len(result.stderr.splitlines()) == 1 and "strict" in result.stderr


def test_strict_exits_1_when_free_space_leaks(tmp_path):
    doc = new_drawing(6)
    # 3 m with nothing drawn in it: wider than any unexplained doorway, so a leak
    wall_with_gap(doc.modelspace(), 0, 0, 20, 12, thickness=0.2, gap=(8.0, 11.0))
    drawing = save(doc, tmp_path)
    result = run("build", drawing, "-o", tmp_path / "lenient", "--quiet")
    assert result.exit_code == 0 and result.stderr == ""
    result = run("build", drawing, "-o", tmp_path / "out", "--strict")
    assert result.exit_code == 1
    assert "problems: 0 unreachable stations, 1 leak, " in result.stderr
    assert result.stderr.splitlines()[-1].startswith("strict: 0 unreachable stations, 1 leak;")
    report = json.loads((tmp_path / "out" / "report.json").read_text(encoding="utf-8"))
    # analytic: the opening spans x 8.0-11.0 m in the 0.2 m thick south wall
    assert len(report["leaks"]) == 1
    assert report["leaks"][0]["width"] == pytest.approx(3.0, abs=0.02)
    assert report["leaks"][0]["x"] == pytest.approx(9.5, abs=0.02)
    assert b'class="leak"' in (tmp_path / "out" / "roadmap.svg").read_bytes()


def test_robot_and_anchor_options_reach_the_outputs(tmp_path):
    config = tmp_path / "site.toml"
    config.write_text("[robot]\nlength = 0.9\nwidth = 0.6\nmargin = 0.05\n")
    outdir = tmp_path / "out"
    result = run("build", SAMPLES / "clinic.dxf", "-o", outdir, "--config", config,
                 "--anchor", "47.3769,8.5417,15", "--quiet")
    assert result.exit_code == 0, result.output
    report = json.loads((outdir / "report.json").read_text(encoding="utf-8"))
    # analytic: circumscribed radius of 0.9 m x 0.6 m = hypot(0.9, 0.6) / 2
    assert report["robot"]["radius"] == pytest.approx(0.5408326913195984)
    assert report["robot"]["margin"] == 0.05 and report["robot"]["shape"] == "rectangle"
    top = json.loads((outdir / "roadmap.geojson").read_text(encoding="utf-8"))
    assert top["coordinate_system"]["type"] == "WGS84"
    points = np.array([f["geometry"]["coordinates"] for f in top["features"]
                       if f["geometry"]["type"] == "Point"])
    # the clinic is 18 m x 12 m: every point within ~0.0003 deg of the anchor
    assert np.abs(points - [8.5417, 47.3769]).max() < 0.0005
    # options override the config file
    result = run("build", SAMPLES / "clinic.dxf", "-o", outdir, "--config", config,
                 "--robot-radius", "0.3", "--margin", "0.1", "--quiet")
    report = json.loads((outdir / "report.json").read_text(encoding="utf-8"))
    assert (report["robot"]["shape"], report["robot"]["radius"]) == ("disc", 0.3)


def test_a_failing_last_exporter_leaves_the_previous_outputs(built, tmp_path, monkeypatch):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--quiet")
    assert result.exit_code == 0
    before = _snapshot(tmp_path)

    def broken(plan, roadmap, **options):
        raise RuntimeError("simulated crash in the report exporter")
    monkeypatch.setattr(clearway.exporters, "render_report", broken)
    result = run("--debug", "build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--robot-radius",
                 "0.3")
    assert result.exit_code == 3 and "simulated crash" in result.stderr    # an internal error
    assert _snapshot(tmp_path) == before              # byte-identical, no temporary files


def test_sigterm_while_rendering_leaves_the_previous_outputs(tmp_path, monkeypatch):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--quiet")
    before = _snapshot(tmp_path)
    real_render = clearway.exporters.render_svg

    def terminated(plan, roadmap, **options):
        signal.raise_signal(signal.SIGTERM)          # as `kill PID` would deliver it
        return real_render(plan, roadmap, **options)
    monkeypatch.setattr(clearway.exporters, "render_svg", terminated)
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--robot-radius", "0.3",
                 "--quiet")
    assert result.exit_code == 128 + signal.SIGTERM   # common practice: 128 + signal number
    assert _snapshot(tmp_path) == before


def test_a_failing_disk_leaves_the_previous_outputs(tmp_path, monkeypatch):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--quiet")
    before = _snapshot(tmp_path)
    real_fsync, calls = clearway.exporters.files.os.fsync, []

    def fsync(descriptor):
        calls.append(descriptor)
        if len(calls) == 4:
            raise OSError(28, "No space left on device")
        return real_fsync(descriptor)
    monkeypatch.setattr(clearway.exporters.files.os, "fsync", fsync)
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--robot-radius", "0.3",
                 "--quiet")
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        f"Error: {tmp_path}: cannot write outputs (No space left on device)"]
    assert _snapshot(tmp_path) == before


@pytest.mark.parametrize("make_args, message", [
    (lambda d: [d / "missing.dxf"], r"missing\.dxf"),
    (lambda d: [_write(d / "empty.dxf", b"")], r"empty\.dxf"),
    (lambda d: [_write(d / "junk.dxf", b"0\nSECTION\n2\nENTI")], r"junk\.dxf"),
    (lambda d: [SAMPLES / "clinic.dxf", "--robot-radius", "-0.2"],
     r"'--robot-radius': -0\.2 is not in the range x>0"),
    (lambda d: [SAMPLES / "clinic.dxf", "--margin", "nan"],
     r"'--margin': 'nan' is not a finite number of metres"),
    (lambda d: [SAMPLES / "clinic.dxf", "--comfort-clearance", "inf"],
     r"'--comfort-clearance': 'inf' is not a finite number"),
    (lambda d: [SAMPLES / "clinic.dxf", "--robot-size", "1.0x-1"],
     r"--robot-size width: -1\.0 is not in the range x>0"),
    (lambda d: [SAMPLES / "clinic.dxf", "--robot-radius", "0.3", "--robot-size", "1x0.6"],
     r"exclude each other"),
    (lambda d: [SAMPLES / "clinic.dxf", "--robot-size", "1.0by0.6"], r"--robot-size must be"),
    (lambda d: [SAMPLES / "clinic.dxf", "--anchor", "95,8,0"], r"--anchor 95,8,0: .*latitude"),
    (lambda d: [SAMPLES / "clinic.dxf", "--anchor", "north"], r"--anchor north"),
    (lambda d: [SAMPLES / "clinic.dxf", "--config", d / "nope.toml"], r"nope\.toml"),
    (lambda d: [SAMPLES / "clinic.dxf", "--robot-radius", "abc"], r"abc"),
])
def test_bad_input_exits_2_with_one_line_and_writes_nothing(tmp_path, make_args, message):
    outdir = tmp_path / "out"
    result = run("build", *make_args(tmp_path), "-o", outdir)
    assert result.exit_code == 2, result.output
    lines = result.stderr.splitlines()
    assert len(lines) == 1, lines
    assert lines[0].startswith("Error: ") and "Traceback" not in result.stderr
    assert re.search(message, lines[0]), lines[0]
    assert not outdir.exists()


def _write(path, data: bytes):
    path.write_bytes(data)
    return path


@pytest.mark.parametrize("args, message", [
    (["build", SAMPLES / "clinic.dxf"], r"^Error: \S+ build: Missing option '-o'"),
    (["build", SAMPLES / "clinic.dxf", "-o", "x", "--bogus"], r"No such option '--bogus'"),
    (["bogus"], r"^Error: \S+: No such command 'bogus'"),
    (["route", "--matrix"], r"^Error: \S+ route: Missing argument"),
])
def test_usage_errors_exit_2_with_one_line(tmp_path, monkeypatch, args, message):
    monkeypatch.chdir(tmp_path)
    result = run(*args)
    assert result.exit_code == 2, result.output
    assert len(result.stderr.splitlines()) == 1, result.stderr
    assert re.search(message, result.stderr), result.stderr
    assert list(tmp_path.iterdir()) == []


def test_bare_command_prints_help_and_exits_0():
    result = run()
    assert result.exit_code == 0
    assert result.stdout.startswith("Usage: ") and result.stderr == ""
