"""Rooms: the floor split at openings and narrowings, names from texts, a lane into each."""

from __future__ import annotations

import networkx as nx
import numpy as np
import pytest
import shapely
from scipy.sparse.csgraph import connected_components

from clearway.converter.floorplan import Opening, PlanText
from clearway.roadmap.rooms import narrowings, room_names, split_floor
from clearway.roadmap.gvd import medial_axis

from roadmap_builders import assert_lanes_clear, assert_topology, build, plan, robot  # noqa: F401

ROOM_WIDTH, WALL = 3.1, 0.2


def door(x0, width, y, *, depth=WALL, kind="door", exterior=False):
    """An opening across a wall along y, jamb to jamb from x0 to x0 + width."""
    return Opening(x=x0 + width / 2, y=y, width=width, kind=kind, exterior=exterior,
                   start=(x0, y), end=(x0 + width, y), depth=depth)


def corridor_with_rooms(widths, *, corridor_height=1.8):
    """A corridor (y 0.2 .. 0.2 + corridor_height) and one room above it per door width.

    Room k spans x 0.2 + 3.3 k .. + 3.1 and y from the corridor wall (0.2 m thick) up 3.8 m;
    its door starts 1 m from the room's left wall.
    """
    top = 0.2 + corridor_height
    parts = [shapely.box(0.2, 0.2, 0.2 + 3.3 * len(widths) - 0.2, top)]
    openings = []
    for k, width in enumerate(widths):
        x0 = 0.2 + 3.3 * k
        parts.append(shapely.box(x0, top + WALL, x0 + ROOM_WIDTH, top + WALL + 3.8))
        parts.append(shapely.box(x0 + 1.0, top, x0 + 1.0 + width, top + WALL))
        openings.append(door(x0 + 1.0, width, top + WALL / 2))
    free = shapely.union_all(parts)
    outline = shapely.box(*free.bounds).buffer(0.2, join_style="mitre")
    return {"wall": outline.difference(free)}, free, openings


def assert_partition(roadmap, free):
    """Every point of the free floor lies in exactly one room."""
    polygons = [room.polygon for room in roadmap.rooms]
    # analytic: faces of a subdivision cover the floor and meet only along cut lines; the
    # roadmap works on the floor snapped to a 0.1 mm grid (roadmap/inflate.py SNAP_GRID),
    # which moves the outline by under 0.1 mm: under 0.1 mm times its length in area
    slack = 1e-4 * free.length
    assert sum(p.area for p in polygons) == pytest.approx(free.area, abs=slack)
    assert shapely.union_all(polygons).symmetric_difference(free).area < slack
    for i, a in enumerate(polygons):
        for b in polygons[i + 1:]:
            assert a.intersection(b).area < 1e-9


def assert_no_lone_node(roadmap):
    assert all(degree > 0 for _, degree in roadmap.graph.degree)


def path_geometry(roadmap, source, target):
    graph = roadmap.graph
    nodes = nx.shortest_path(graph, source, target, weight="length")
    return shapely.union_all([min(graph[u][v].values(), key=lambda d: d["length"])["geometry"]
                              for u, v in zip(nodes[:-1], nodes[1:])])


def room_holding(roadmap, x, y):
    point = shapely.Point(x, y)
    (room,) = [r for r in roadmap.rooms if r.polygon.covers(point)]
    return room


def test_corridor_with_six_rooms_reaches_those_behind_wide_enough_doors(robot):
    # the robot needs 2 (0.35 + 0.10) = 0.9 m; by the project's rule a gap of exactly 2c is a
    # wall (no tolerance left), so only the 1.0 m doors let it in
    widths = [0.8, 0.9, 1.0, 0.8, 0.9, 1.0]
    obstacles, free, openings = corridor_with_rooms(widths)
    texts = [PlanText(f"ROOM {k}", 0.2 + 3.3 * k + 1.55, 4.0, 0.25, "A-ANNO-TEXT")
             for k in range(6)]
    roadmap = build(obstacles, free, robot=robot, openings=openings, texts=texts)
    assert len(roadmap.rooms) == 7                     # analytic: the corridor and six rooms
    assert_partition(roadmap, free)
    corridor = room_holding(roadmap, 10.0, 1.0)
    assert corridor.names == () and corridor.reachable
    graph = roadmap.graph
    for k, width in enumerate(widths):
        room = room_holding(roadmap, 0.2 + 3.3 * k + 1.55, 4.0)
        assert room.names == (f"ROOM {k}",)
        passage = roadmap.passages[k]
        assert passage.opening == k and passage.width == pytest.approx(width)
        assert set(passage.rooms) == {room.id, corridor.id}
        assert room.passages == (k,)
        if width > 0.9 + 1e-9:
            assert room.reachable and passage.fits and room.reason == ""
            # the lane from the corridor's node into the room passes through its own door
            route = path_geometry(roadmap, corridor.node, room.node)
            assert route.intersects(shapely.LineString([openings[k].start, openings[k].end]))
            for other, opening in enumerate(openings):
                if other != k:
                    assert not route.intersects(shapely.LineString([opening.start,
                                                                    opening.end]))
        else:
            assert not room.reachable and not passage.fits
            assert room.blocked_by == k and room.blocked_width == pytest.approx(width)
            assert f"{width:.2f} m" in room.reason
            if room.node:
                assert not nx.has_path(graph, corridor.node, room.node)
    assert_no_lone_node(roadmap)
    assert_topology(roadmap)
    assert_lanes_clear(roadmap)


def shaped_rooms():
    """A corridor with a square, a round and an L-shaped room above it, 1.2 m doors."""
    corridor = shapely.box(0, 0, 24, 2)
    rooms = {
        "square": shapely.box(1, 2.2, 5, 6.2),
        "round": shapely.Point(12, 4.6).buffer(2.2, quad_segs=32),   # lowest point y = 2.4
        "L": shapely.Polygon([(17, 2.2), (23, 2.2), (23, 4.2), (19, 4.2), (19, 9), (17, 9)]),
    }
    doors = [(3.0, 2.2), (12.0, 2.6), (18.0, 2.2)]
    gaps = [shapely.box(x - 0.6, 2.0, x + 0.6, top) for x, top in doors]
    openings = [door(x - 0.6, 1.2, 2.1) for x, _ in doors]
    free = shapely.union_all([corridor, *rooms.values(), *gaps])
    return rooms, free, openings


def test_square_round_and_l_shaped_rooms_each_get_a_lane(robot):
    rooms, free, openings = shaped_rooms()
    roadmap = build({}, free, robot=robot, openings=openings)
    assert len(roadmap.rooms) == 4
    assert_partition(roadmap, free)
    corridor = room_holding(roadmap, 12.0, 1.0)
    for (name, shape), opening in zip(rooms.items(), openings):
        room = room_holding(roadmap, *shape.representative_point().coords[0])
        assert room.reachable, name
        node = roadmap.graph.nodes[room.node]
        assert roadmap.graph.degree(room.node) >= 1 and node["room"] == room.id
        # the room node is the lane vertex of greatest clearance: deep inside the room
        # (analytic: square and round rooms have 2.0 and 2.2 m at their centres; the
        # L's arms are 2 m wide, 1 m of clearance, more where they meet)
        assert node["clearance"] >= 0.95, name
        route = path_geometry(roadmap, corridor.node, room.node)
        assert route.intersects(shapely.LineString([opening.start, opening.end])), name
    square = roadmap.graph.nodes[room_holding(roadmap, 3.0, 4.2).node]
    # analytic: the greatest clearance in the 4 m square is 2 m, on its axis x = 3 (the
    # door's jambs, 1.2 m apart in the bottom wall, leave a short plateau below the centre)
    assert square["x"] == pytest.approx(3.0, abs=0.01)
    assert square["clearance"] == pytest.approx(2.0, abs=0.01)
    assert_no_lone_node(roadmap)
    assert_topology(roadmap)
    assert_lanes_clear(roadmap)


@pytest.mark.parametrize("floor", [shapely.box(0, 0, 4, 4),
                                   shapely.Point(0, 0).buffer(2.0, quad_segs=32),
                                   shapely.Point(0, 0).buffer(0.6, quad_segs=32)],
                         ids=["square", "round", "small round"])
def test_issue_10_a_room_on_its_own_keeps_an_edge(robot, floor):
    # a square room's medial axis is four spurs from its centre; pruned, a lone node was left
    roadmap = build({}, floor, robot=robot)
    assert roadmap.graph.number_of_edges() >= 1
    assert_no_lone_node(roadmap)
    assert_topology(roadmap)
    (room,) = roadmap.rooms
    assert room.reachable and roadmap.graph.degree(room.node) >= 1


def column_hall():
    """A 20 x 10 m hall with a row of four 0.5 m columns across it at x = 10."""
    columns = [shapely.box(9.75, y - 0.25, 10.25, y + 0.25) for y in (2.0, 4.0, 6.0, 8.0)]
    return plan((0.0, 0.0, 20.0, 10.0), *columns)


def test_open_hall_with_a_row_of_columns_is_split_at_their_narrowing(robot):
    obstacles, free = column_hall()
    roadmap = build(obstacles, free, robot=robot)
    assert len(roadmap.rooms) == 2
    assert_partition(roadmap, free)
    west, east = sorted(roadmap.rooms, key=lambda r: r.polygon.centroid.x)
    # analytic: the cut runs through the gaps of the column row, 9.75 <= x <= 10.25
    assert 9.75 - 0.01 <= west.polygon.bounds[2] <= 10.25 + 0.01
    assert 9.75 - 0.01 <= east.polygon.bounds[0] <= 10.25 + 0.01
    assert west.reachable and east.reachable
    narrow = [p for p in roadmap.passages if p.opening < 0]
    # analytic: five gaps, 1.5 m between columns and 1.75 m from the end columns to the walls
    assert sorted(round(p.width, 2) for p in narrow) == [1.5, 1.5, 1.5, 1.75, 1.75]
    assert all(set(p.rooms) == {west.id, east.id} and p.fits for p in narrow)
    assert_topology(roadmap)


def test_a_corridor_of_constant_width_has_no_narrowing():
    free = shapely.box(0, 0, 12, 2)
    axis = medial_axis(free, step=0.25)
    # analytic: the clearance along y = 1 is constant (1 m) between the corner spurs
    assert narrowings(axis.vertices, axis.clearance, axis.edges) == []


def test_a_neck_between_two_halls_is_one_narrowing_of_its_width():
    free = shapely.union_all([shapely.box(0, 0, 6, 6), shapely.box(6, 2.4, 7, 3.6),
                              shapely.box(7, 0, 13, 6)])
    axis = medial_axis(free, step=0.25)
    (cut,) = narrowings(axis.vertices, axis.clearance, axis.edges)
    assert cut.width == pytest.approx(1.2, abs=0.01)      # analytic: the neck is 1.2 m wide
    middle = (np.asarray(cut.start) + np.asarray(cut.end)) / 2
    assert 6.0 <= middle[0] <= 7.0 and middle[1] == pytest.approx(3.0, abs=0.01)
    rooms = split_floor(free, [cut])
    assert len(rooms) == 2
    assert sum(r.area for r in rooms) == pytest.approx(free.area)


def test_room_names_annotation_layers_first_then_largest_height():
    rooms = np.array([shapely.box(0, 0, 5, 5), shapely.box(5, 0, 10, 5)], dtype=object)
    hostile = '<b>"2.14"</b> & \u202eKITCHEN\u202c\x07'
    texts = [PlanText("small note", 1, 1, 0.1, "A-ANNO-NOTE"),
             PlanText("EXAM 3", 2, 2, 0.35, "A-ANNO-TEXT"),
             PlanText("3.40", 2, 3, 0.5, "A-DIMS"),       # a larger text on another layer
             PlanText("  ", 3, 3, 0.5, "A-ANNO-TEXT"),     # blank: left out
             PlanText(hostile, 7, 2, 0.3, "ROOMNAME"),
             PlanText("outside", 20, 20, 1.0, "A-ANNO-TEXT")]
    names = room_names(rooms, texts, (0.0, 0.0))
    assert names[0] == ("EXAM 3", "small note", "3.40")
    assert names[1] == (" ".join(hostile.split()),)     # whitespace folded, the rest intact
    assert "\u202e" in names[1][0] and "<b>" in names[1][0]


def test_door_tags_beside_doors_are_not_room_names():
    # common practice (US plans): a door is tagged with its size in feet and inches, 3068 =
    # 3'0" x 6'8"; beside the door it names the door, away from doors it may be a room number
    rooms = np.array([shapely.box(0, 0, 5, 5)], dtype=object)
    door = Opening(x=5.0, y=2.0, width=0.914, kind="door", exterior=False, start=(5.0, 1.543),
                   end=(5.0, 2.457))
    texts = [PlanText("3068", 4.5, 2.2, 0.2, "A-TEXT"), PlanText("BEDROOM", 2, 3, 0.2, "A-TEXT"),
             PlanText("2668", 1.0, 4.0, 0.2, "A-TEXT")]
    # equal heights: top to bottom
    assert room_names(rooms, texts, (0.0, 0.0), [door]) == [("2668", "BEDROOM")]
    assert room_names(rooms, texts, (0.0, 0.0)) == [("2668", "BEDROOM", "3068")]


def test_area_labels_are_not_room_names():
    # common practice (DRAFTING.md): an area label (71.25 m², 859 SQ. FT.) sits beside the
    # room's name, as its own text or as the second line of the name's MTEXT
    rooms = np.array([shapely.box(0, 0, 5, 5), shapely.box(5, 0, 10, 5)], dtype=object)
    texts = [PlanText("BED 01\n18.0 m²", 2, 3, 0.25, "A-ANNO-TEXT"),
             PlanText("71.25 m2", 2, 2, 0.2, "A-ANNO-TEXT"),
             PlanText("LAB 101", 7, 3, 0.25, "A-ANNO-TEXT"),
             PlanText("859 SQ. FT.", 7, 2, 0.15, "A-ANNO-TEXT"),
             PlanText("ROOM 12", 7, 1, 0.15, "A-ANNO-TEXT")]
    assert room_names(rooms, texts, (0.0, 0.0)) == [("BED 01",), ("LAB 101", "ROOM 12")]


def test_a_station_report_names_its_room(robot):
    obstacles, free, openings = corridor_with_rooms([1.0, 1.0])
    roadmap = build(obstacles, free, [("dock", 1.7, 4.5), ("hall", 3.0, 1.1)], robot=robot,
                    openings=openings)
    by_label = {s.label: s for s in roadmap.findings.stations}
    assert by_label["dock"].room == room_holding(roadmap, 1.7, 4.5).id
    assert by_label["hall"].room == room_holding(roadmap, 3.0, 1.1).id
    assert by_label["dock"].room != by_label["hall"].room
    # the station's own node is in its room as well
    assert roadmap.graph.nodes[by_label["dock"].node]["room"] == by_label["dock"].room


def test_every_node_names_the_room_it_stands_in(robot):
    obstacles, free, openings = corridor_with_rooms([1.0, 0.8, 1.2])
    roadmap = build(obstacles, free, robot=robot, openings=openings)
    polygons = {room.id: room.polygon for room in roadmap.rooms}
    for _, data in roadmap.graph.nodes(data=True):
        assert polygons[data["room"]].distance(shapely.Point(data["x"], data["y"])) <= 0.01
    # independent: scipy's connected components of the graph agree with reachability
    nodes = list(roadmap.graph.nodes)
    index = {n: i for i, n in enumerate(nodes)}
    matrix = nx.to_scipy_sparse_array(nx.Graph(roadmap.graph), nodelist=nodes)
    _, label = connected_components(matrix, directed=False)
    corridor = room_holding(roadmap, 5.0, 1.0)
    for room in roadmap.rooms:
        joined = label[index[room.node]] == label[index[corridor.node]]
        assert joined == room.reachable, room.id


def test_station_labels_name_a_room_only_as_its_one_text():
    # three 10 m x 10 m rooms side by side
    rooms = np.array([shapely.box(0, 0, 10, 10), shapely.box(10, 0, 20, 10),
                      shapely.box(20, 0, 30, 10)])
    texts = [PlanText("C1", 2, 2, 0.2, "CHARGERS"), PlanText("D1", 8, 2, 0.2, "DOCKING"),
             PlanText("CHARGER", 15, 5, 0.2, "A-EQPM-STATION"),
             PlanText("D2", 25, 2, 0.2, "DOCKING"), PlanText("PACKING", 25, 5, 0.5, "A-ANNO-TEXT")]
    names = room_names(rooms, texts, (0.0, 0.0), station_labels=["C1", "D1", "CHARGER", "D2"])
    # common practice: a hall of chargers and docks is not named after them; a closet
    # holding one charger may be; a room's own name beats the label of a dock in it
    assert names == [(), ("CHARGER",), ("PACKING",)]
    # without stations every text names its room, as before
    assert room_names(rooms, texts, (0.0, 0.0)) == [("C1", "D1"), ("CHARGER",), ("PACKING", "D2")]


def test_a_hall_holding_one_station_is_not_named_after_it():
    # common practice: a 40 m x 25 m hall with one charger in it is not "CH1"; a 6 m x 5 m
    # closet holding one charger may be called by its label (rooms.STATION_ROOM_AREA)
    rooms = np.array([shapely.box(0, 0, 40, 25), shapely.box(40, 0, 46, 5)])
    texts = [PlanText("CH1", 20, 12, 0.3, "CHARGERS"), PlanText("CH2", 43, 2, 0.3, "CHARGERS")]
    assert room_names(rooms, texts, (0.0, 0.0), station_labels=["CH1", "CH2"]) == [
        (), ("CH2",)]
