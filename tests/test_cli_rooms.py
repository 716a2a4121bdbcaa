"""Issue 10: rooms in the GraphML (read by igraph), routes to rooms by name or id, the room
matrix, and room ids kept across revisions with --previous.

The drawing: a 12.2 m x 5.2 m outline of 0.2 m double-line walls, split by a 0.2 m partition
at x 6.0 .. 6.2 with a 1.0 m gap at y 2.0 .. 3.0. The converter cuts the floor along the gap's
centre line x = 6.1, so each room is 5.8 m x 4.8 m plus half the gap.
"""

from __future__ import annotations

import json

import igraph
import networkx as nx
import pytest
import shapely
from click.testing import CliRunner

from clearway.cli import main
from tests.conftest import new_drawing, rectangle, save, walled_room

# analytic: (6.0 - 0.2) x (5.0 - 0.2) = 27.84 m^2, plus half the 0.2 m x 1.0 m gap = 0.1 m^2
ROOM_AREA = 5.8 * 4.8 + 0.1
LEFT = shapely.box(0.2, 0.2, 6.0, 5.0) | shapely.box(6.0, 2.0, 6.1, 3.0)
RIGHT = shapely.box(6.2, 0.2, 12.0, 5.0) | shapely.box(6.1, 2.0, 6.2, 3.0)
DOOR = shapely.LineString([(6.1, 2.0), (6.1, 3.0)])


def two_rooms(folder, names=("2.14", "KITCHEN"), *, partitions=(6.0,), name="plan.dxf"):
    """Draw the rooms (a partition 0.2 m thick from each x in `partitions`, a 1 m gap at
    y 2.0 .. 3.0 in each) with one text in each of the first two; return the path."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 12.2, 5.2)
    for x in partitions:
        for y0, y1 in ((0.2, 2.0), (3.0, 5.0)):
            msp.add_lwpolyline(rectangle(x, y0, x + 0.2, y1), close=True,
                               dxfattribs={"layer": "A-WALL"})
    for text, x in zip(names, (2.5, 8.5)):
        msp.add_text(text, dxfattribs={"layer": "A-ANNO-TEXT", "height": 0.25,
                                       "insert": (x, 4.0)})
    return save(doc, folder, name)


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args])


def build(drawing, outdir, *extra):
    result = run("build", drawing, "-o", outdir, "-q", "--no-html", *extra)
    assert result.exit_code == 0, result.output
    return outdir


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("rooms")
    return build(two_rooms(folder), folder / "out")


def test_room_areas_are_the_rectangles(built):
    rooms = json.loads((built / "report.json").read_text(encoding="utf-8"))["rooms"]
    assert sorted(tuple(room["names"]) for room in rooms) == [("2.14",), ("KITCHEN",)]
    for room in rooms:
        assert room["area"] == pytest.approx(ROOM_AREA, abs=1e-6)    # analytic, above
        assert room["reachable"] and room["node"]


def test_igraph_reads_each_nodes_room(built):
    rooms = {tuple(room["names"]): room
             for room in json.loads((built / "report.json").read_text())["rooms"]}
    expected = {rooms[("2.14",)]["id"]: LEFT, rooms[("KITCHEN",)]["id"]: RIGHT}
    graph = igraph.Graph.Read_GraphML(str(built / "roadmap.graphml"))   # independent reader
    assert {"room", "room_node", "room_names"} <= set(graph.vs.attributes())
    for vertex in graph.vs:
        point = shapely.Point(vertex["x"], vertex["y"])
        if point.distance(DOOR) < 1e-3:
            continue                 # on the cut line, either room is right
        # analytic: the room polygons above; every node of this floor stands in a room
        (inside,) = [room for room, polygon in expected.items() if polygon.covers(point)]
        assert vertex["room"] == inside
    # igraph gives a string attribute a node lacks as "": the two room nodes carry theirs
    marked = {v["room_node"]: (v["room"], v["room_names"], v["id"])
              for v in graph.vs if v["room_node"]}
    assert marked == {room["id"]: (room["id"], room["names"][0], room["node"])
                      for room in rooms.values()}


def test_route_to_rooms_by_name_and_id(built):
    report = json.loads((built / "report.json").read_text())
    nodes = {room["names"][0]: room["node"] for room in report["rooms"]}
    ids = {room["names"][0]: room["id"] for room in report["rooms"]}
    graph_file = built / "roadmap.graphml"
    by_name = run("route", graph_file, "2.14", "kitchen", "--json")   # a name ignoring case
    by_id = run("route", graph_file, ids["2.14"], ids["KITCHEN"], "--json")
    assert by_name.exit_code == 0 and by_id.exit_code == 0, by_name.output + by_id.output
    found = json.loads(by_name.output)
    assert found["nodes"] == json.loads(by_id.output)["nodes"]
    assert (found["nodes"][0], found["nodes"][-1]) == (nodes["2.14"], nodes["KITCHEN"])
    route = shapely.from_wkt(found["wkt"])
    # analytic: the partition is solid but for the gap, so the route crosses it there
    assert route.intersects(DOOR)
    # independent: networkx's Dijkstra on the file networkx reads agrees on the length
    other = nx.read_graphml(graph_file, force_multigraph=True)
    assert found["cost"] == pytest.approx(
        nx.dijkstra_path_length(other, nodes["2.14"], nodes["KITCHEN"], weight="weight"),
        rel=1e-12)
    text = run("route", graph_file, "2.14", "KITCHEN")
    assert text.output.startswith(f"2.14 -> KITCHEN: {found['length']:.3f} m")


def test_room_matrix(built):
    graph_file = built / "roadmap.graphml"
    report = json.loads((built / "report.json").read_text())
    result = run("route", graph_file, "--matrix", "--rooms", "--json")
    assert result.exit_code == 0, result.output
    matrix = json.loads(result.output)
    ids = sorted(room["id"] for room in report["rooms"])
    assert matrix["rooms"] == ids and matrix["unit"] == "m"
    a, b = ids
    single = json.loads(run("route", graph_file, a, b, "--json").output)
    # exact by definition: the matrix holds the route costs, 0 from a room to itself
    assert matrix["matrix"] == [[0.0, single["cost"]], [single["cost"], 0.0]]
    csv_text = run("route", graph_file, "--matrix", "--rooms").output
    assert csv_text.splitlines()[0] == f"room,{a},{b}"


def test_rooms_without_matrix_is_refused(built):
    result = run("route", built / "roadmap.graphml", "--rooms", "2.14", "KITCHEN")
    assert result.exit_code == 2
    assert result.stderr.splitlines() == ["Error: --rooms needs --matrix"]


def test_issue_10_an_ambiguous_room_name_lists_the_rooms(tmp_path):
    out = build(two_rooms(tmp_path, names=("OFFICE", "office")), tmp_path / "out")
    rooms = json.loads((out / "report.json").read_text())["rooms"]
    graph_file = out / "roadmap.graphml"
    exact = run("route", graph_file, "OFFICE", "office")    # exact spellings: one room each
    assert exact.exit_code == 0, exact.output
    result = run("route", graph_file, "Office", "office")
    assert result.exit_code == 2
    [line] = result.stderr.splitlines()
    first, second = sorted(rooms, key=lambda room: int(room["id"][1:]))
    assert line == (f"Error: {graph_file}: room 'Office' is ambiguous: rooms "
                    f"{first['id']} ({first['names'][0]}), {second['id']} "
                    f"({second['names'][0]}); give a room id instead")


def test_issue_10_room_ids_carried_over_with_previous(built, tmp_path):
    old = {room["names"][0]: room["id"]
           for room in json.loads((built / "report.json").read_text())["rooms"]}
    # revision: a partition at x 2.0 .. 2.2 cuts a small room off the left one
    revised = two_rooms(tmp_path, names=("2.14", "KITCHEN"), partitions=(6.0, 2.0))
    out = build(revised, tmp_path / "out", "--previous", built / "roadmap.graphml")
    rooms = json.loads((out / "report.json").read_text())["rooms"]
    areas = {room["id"]: room["area"] for room in rooms}
    by_area = sorted(rooms, key=lambda room: room["area"])
    small, middle, right = by_area[0], by_area[1], by_area[2]
    # analytic: small 1.8 x 4.8 + 0.1 = 8.74 m^2 (under half of the old 27.94: a new room);
    # the middle 3.8 x 4.8 + 2 x 0.1 = 18.44 m^2, all of it inside the old left room, more
    # than half of that room's 27.94 m^2: it keeps the old id; the right room is unchanged
    assert (small["area"], middle["area"], right["area"]) == pytest.approx(
        (8.74, 18.44, ROOM_AREA), abs=1e-6)
    assert middle["id"] == old["2.14"] and right["id"] == old["KITCHEN"]
    assert middle["names"] == ["2.14"] and right["names"] == ["KITCHEN"]
    # a new room's id is above every old one (the previous build had r0 and r1)
    assert small["id"] == "r2" and sorted(old.values()) == ["r0", "r1"]
    assert len(areas) == 3
    # the nodes follow: the room node of each room carries its carried-over id
    graph = igraph.Graph.Read_GraphML(str(out / "roadmap.graphml"))
    assert {v["id"]: v["room_node"] for v in graph.vs if v["room_node"]} == {
        room["node"]: room["id"] for room in rooms}
    for vertex in graph.vs:
        point = shapely.Point(vertex["x"], vertex["y"])
        if vertex["room"] and min(point.distance(DOOR), point.x - 2.0) > 0.2:
            assert vertex["room"] == (old["KITCHEN"] if point.x > 6.1 else old["2.14"])


def test_room_ids_start_afresh_without_the_previous_geojson(built, tmp_path):
    lone = tmp_path / "old" / "roadmap.graphml"
    lone.parent.mkdir()
    lone.write_bytes((built / "roadmap.graphml").read_bytes())
    revised = two_rooms(tmp_path, partitions=(6.0, 2.0))
    result = run("build", revised, "-o", tmp_path / "out", "-q", "--no-html",
                 "--previous", lone)
    assert result.exit_code == 0, result.output
    assert "room ids start afresh" in result.stderr
    rooms = json.loads((tmp_path / "out" / "report.json").read_text())["rooms"]
    # from left to right, as a first build numbers them
    assert [room["id"] for room in sorted(rooms, key=lambda room: room["x"])] == [
        "r0", "r1", "r2"]


def test_no_route_into_a_room_says_which_opening_stops_the_robot(tmp_path):
    # the partition at x 7.0 leaves the right room (KITCHEN) the smaller drivable region
    out = build(two_rooms(tmp_path, partitions=(7.0,)), tmp_path / "out",
                "--robot-radius", "0.5")
    result = run("route", out / "roadmap.graphml", "2.14", "KITCHEN")
    assert result.exit_code == 1
    # analytic: the robot needs 2 x (0.5 + 0.1) = 1.2 m; the gap is 1.0 m wide
    assert result.stderr.splitlines() == [
        f"{out / 'roadmap.graphml'}: no route from 2.14 to KITCHEN: KITCHEN: its opening is "
        "1.00 m wide, the robot needs 1.20 m"]
