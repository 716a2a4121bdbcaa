"""Rooms and openings in the outputs: GeoJSON features, report.json, SVG, GraphML."""

from __future__ import annotations

import io
import json

import geojson
import igraph
import networkx as nx
import pytest
import shapely
from lxml import etree
from shapely.geometry import MultiPolygon, shape

from clearway.converter.floorplan import FloorPlan, Opening, PlanText, Station
from clearway.exporters import render_geojson, render_graphml, render_report, render_svg
from clearway.roadmap import Robot, build_roadmap, resolve_node

#: a room name with markup, quotes, an ampersand, right-to-left marks and a control character
HOSTILE = '<b>"2.14"</b> & \u202eKITCHEN\u202c \u200f'


def _plan():
    """A corridor with three rooms above it through doors of 0.8, 1.0 and 1.2 m."""
    parts = [shapely.box(0.2, 0.2, 10.0, 2.0)]
    openings, texts = [], []
    for k, width in enumerate((0.8, 1.0, 1.2)):
        x0 = 0.2 + 3.3 * k
        parts += [shapely.box(x0, 2.2, x0 + 3.1, 6.0), shapely.box(x0 + 1, 2.0, x0 + 1 + width, 2.2)]
        openings.append(Opening(x=x0 + 1 + width / 2, y=2.1, width=width, kind="door",
                                exterior=False, start=(x0 + 1, 2.1), end=(x0 + 1 + width, 2.1),
                                depth=0.2))
        texts.append(PlanText(HOSTILE if k == 2 else f"ROOM {k}", x0 + 1.55, 4.0, 0.25, "A-ANNO"))
    free = shapely.union_all(parts)
    walls = shapely.box(0, 0, 10.2, 6.2).difference(free)
    empty = MultiPolygon()
    plan = FloorPlan(source="rooms.dxf", sha256="0" * 64, units="m", m_per_unit=1.0,
                     unit_note="test", regions={"wall": MultiPolygon([walls]) if walls.geom_type == "Polygon" else walls,
                                                "racking": empty, "keepout": empty,
                                                "boundary": empty, "shared": empty},
                     free_space=MultiPolygon([free]), stations=(Station("dock", 8.3, 4.5),),
                     openings=tuple(openings), texts=tuple(texts),
                     extents=(0.0, 0.0, 10.2, 6.2))
    roadmap = build_roadmap(plan.obstacles, plan.free_space, [("dock", 8.3, 4.5)],
                            robot=Robot.disc(0.35, margin=0.1), openings=plan.openings,
                            texts=plan.texts)
    return plan, roadmap


@pytest.fixture(scope="module")
def built():
    return _plan()


def test_geojson_room_and_opening_features(built):
    plan, roadmap = built
    data = render_geojson(plan, roadmap)
    collection = geojson.loads(data.decode("utf-8"))          # independent: the geojson package
    assert collection.is_valid
    features = json.loads(data)["features"]
    rooms = [f for f in features if f["properties"]["element"] == "room"]
    openings = {f["properties"]["id"]: f for f in features
                if f["properties"]["element"] == "opening"}
    assert len(rooms) == 4                                    # analytic: corridor + 3 rooms
    # analytic: the rooms' areas add up to the free floor's (a partition)
    assert sum(f["properties"]["area"] for f in rooms) == pytest.approx(plan.free_space.area,
                                                                        abs=1e-3)
    for feature in rooms:
        assert feature["geometry"]["type"] == "Polygon" and shape(feature["geometry"]).is_valid
        properties = feature["properties"]
        assert set(properties) >= {"id", "names", "area", "reachable", "openings"}
        for opening in properties["openings"]:
            assert properties["id"] in openings[opening]["properties"]["rooms"]
    by_name = {tuple(f["properties"]["names"]): f["properties"] for f in rooms}
    assert by_name[("ROOM 0",)]["reachable"] is False          # 0.8 m door, robot needs 0.9 m
    assert by_name[("ROOM 0",)]["blocked_width"] == pytest.approx(0.8)
    assert by_name[("ROOM 1",)]["reachable"] is True
    assert by_name[(HOSTILE,)]["reachable"] is True           # the name intact, byte for byte
    doors = sorted((f["properties"] for f in openings.values()), key=lambda p: p["width"])
    assert [d["kind"] for d in doors] == ["door"] * 3
    # passable = a passable kind that the robot fits through (2 x 0.45 m = 0.9 m)
    assert [d["passable"] for d in doors] == [False, True, True]
    assert all(len(d["rooms"]) == 2 and d["exterior"] is False for d in doors)


def test_report_lists_rooms_openings_and_station_rooms(built):
    plan, roadmap = built
    report = json.loads(render_report(plan, roadmap))
    assert len(report["rooms"]) == 4 and len(report["openings"]) == 3
    (dock,) = report["stations"]
    (room,) = [r for r in report["rooms"] if r["id"] == dock["room"]]
    assert room["names"] == [HOSTILE] and room["reachable"]
    closed = [r for r in report["rooms"] if not r["reachable"]]
    assert [r["names"] for r in closed] == [["ROOM 0"]]
    (door,) = [o for o in report["openings"] if o["id"] == closed[0]["blocked_by"]]
    assert door["width"] == pytest.approx(0.8) and door["fits"] is False
    assert (door["x"], door["y"]) == pytest.approx((1.6, 2.1))


def test_svg_names_rooms_and_marks_the_closed_room(built):
    plan, roadmap = built
    root = etree.fromstring(render_svg(plan, roadmap, date="drawing undated"))
    ns = {"s": "http://www.w3.org/2000/svg"}
    names = [t.text for t in root.findall(".//s:g[@id='room-names']/s:text", ns)]
    # lxml escapes markup; the right-to-left marks are kept, as the names are printed
    assert sorted(names) == sorted(["ROOM 0", "ROOM 1", HOSTILE])
    (closed,) = root.findall(".//s:path[@id='area-closed']", ns)
    assert closed.get("fill") == "url(#closed-room)"
    legend = " ".join(t.text or "" for t in root.iter("{http://www.w3.org/2000/svg}text"))
    assert "room the robot cannot enter" in legend
    assert "gap 0.8" in legend                          # the 0.8 m door the robot cannot pass


def test_graphml_room_names_come_back_intact_for_two_readers(built, tmp_path):
    plan, roadmap = built
    data = render_graphml(plan, roadmap)
    room = next(r for r in roadmap.rooms if r.names == (HOSTILE,))
    # source: XML 1.0 sec. 2.2, Char: the right-to-left marks are legal characters and kept;
    # "<", "&" and quotes are escaped by the writer and come back as typed
    other = nx.read_graphml(io.BytesIO(data), force_multigraph=True)
    assert other.nodes[room.node]["room_names"] == HOSTILE
    assert other.nodes[room.node]["room_node"] == room.id
    (tmp_path / "roadmap.graphml").write_bytes(data)
    vertices = igraph.Graph.Read_GraphML(str(tmp_path / "roadmap.graphml"))
    (vertex,) = [v for v in vertices.vs if v["room_node"] == room.id]
    assert vertex["room_names"] == HOSTILE and vertex["id"] == room.node
    # the name as typed, markup and marks included, finds the room's node
    assert resolve_node(other, HOSTILE) == room.node
