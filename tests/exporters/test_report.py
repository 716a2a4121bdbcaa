"""report.json: every documented key, analytic counts and lengths, deterministic, escaped."""

from __future__ import annotations

import json
import math
import re

import pytest

from clearway.exporters import render_report
from hall_fixture import HOSTILE, make_plan, make_roadmap
from clearway.roadmap.model import Robot

REQUIRED = {"counts", "lane_length", "components", "stations", "pinch_points", "narrow_passages",
            "leaks", "personnel_clearance", "warnings", "units", "robot", "source", "sha256",
            "caution", "drawing_date"}


def _report(plan, roadmap) -> dict:
    def refuse(constant):
        raise ValueError(f"non-standard JSON constant {constant}")
    return json.loads(render_report(plan, roadmap).decode("utf-8"), parse_constant=refuse)


def test_report_has_every_documented_key_with_analytic_values(plan, roadmap):
    report = _report(plan, roadmap)
    assert REQUIRED <= set(report)
    # hand count of the hall: 3 nodes (2 junctions, 1 station link), 3 lanes, 2 stations
    assert report["counts"] == {"nodes": 3, "edges": 3, "junctions": 2, "ends": 0,
                                "stations": 2, "stations_reachable": 1}
    # analytic: e1 and e2 each run 1 x 3 m diagonal, 12 m straight, 0.5 x 3 m diagonal;
    # e3 is 1.5 m
    lane = math.hypot(1, 3) + 12 + math.hypot(0.5, 3)
    assert report["lane_length"] == pytest.approx(2 * lane + 1.5, rel=1e-12)
    assert report["components"] == 1 and report["component_nodes"] == [3]
    assert report["units"] == "m" and report["source"] == "hall <1>.dxf"
    assert report["sha256"] == "ab" * 32
    assert report["robot"]["shape"] == "disc"
    assert report["robot"]["radius"] == 0.35 and report["robot"]["margin"] == 0.1
    assert report["pinch_points"] == [{"x": 3.0, "y": 5.0, "clearance": 1.8, "edge": "e3"}]
    assert report["narrow_passages"][0]["width"] == 0.62
    assert report["leaks"] == [{"x": 20.0, "y": 5.0, "width": 0.4}]
    assert report["personnel_clearance"]["required"] == 0.5
    assert report["personnel_clearance"]["flags"][0]["edge"] == "e1"
    assert "1 SPLINE skipped on layer <x>" in report["warnings"]
    assert "lane e2 runs close to <racking> & walls" in report["warnings"]
    assert "ISO 3691-4" in report["caution"] and "qualified people" in report["caution"]


def test_stations_say_where_they_joined_or_why_not(plan, roadmap):
    stations = {s["label"]: s for s in _report(plan, roadmap)["stations"]}
    assert stations["S1"] == {"label": "S1", "x": 1.0, "y": 5.0, "node": "n3", "component": 0,
                              "reachable": True, "reason": "", "room": "",
                              "kind": "", "heading": None,   # a point: no block, no kind
                              "standoff": 0.0}
    hostile = stations[HOSTILE]                      # label intact, control char and all
    assert hostile["reachable"] is False and hostile["node"] is None
    assert hostile["reason"] == "inside the clearance band of keep-out <KO>"


def test_rectangular_robot_states_its_circumscribed_radius():
    plan = make_plan()
    roadmap = make_roadmap(plan, Robot.rectangle(1.0, 0.6, margin=0.1))
    robot = _report(plan, roadmap)["robot"]
    # analytic: circumscribed radius of a 1.0 m x 0.6 m rectangle = hypot(1.0, 0.6) / 2
    assert robot["radius"] == pytest.approx(0.5830951894845301, rel=1e-15)
    assert robot["shape"] == "rectangle" and robot["length"] == 1.0 and robot["width"] == 0.6
    assert "circumscribed" in robot["note"]


def test_report_is_deterministic_and_undated(plan, roadmap):
    data = render_report(plan, roadmap)
    assert data == render_report(plan, roadmap) == render_report(make_plan(),
                                                                 make_roadmap(make_plan()))
    assert not re.search(rb"\d{4}-\d{2}-\d{2}|\d{2}:\d{2}:\d{2}", data)
    assert data.endswith(b"\n")


def test_issue_16_required_personnel_clearance_is_reported_when_no_lane_is_flagged():
    import shapely
    from clearway.roadmap import build_roadmap
    hall = shapely.box(0, 0, 10, 2)                  # a 2 m corridor, no zone shared with people
    outline = hall.buffer(0.2, join_style="mitre").difference(hall)
    roadmap = build_roadmap({"boundary": outline}, hall, [], robot=Robot.disc(0.35, margin=0.1),
                            personnel_clearance=0.8)
    section = _report(make_plan(), roadmap)["personnel_clearance"]
    # the configured value, as passed in (it used to be null whenever no lane was flagged)
    assert section == {"required": 0.8, "flags": []}
