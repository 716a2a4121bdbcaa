"""Real floor plans drawn by others, built with default options (tests/data/real/SOURCES.md).

The drawings themselves are not in this repository (fetched files may not be committed; see
SOURCES.md): the tests run on those found in the folder named by CLEARWAY_REAL_DRAWINGS, else in
``../shared/real_drawings`` beside the repository; with none at hand this module is not
collected (tests/conftest.py), so nothing is skipped.
Every probe point in probes.json was chosen by hand on the drawing, with the reason beside it
(room-name text, jamb ticks, dimension strings); coordinates are in drawing units.
"""

from __future__ import annotations

import networkx as nx
import pytest
import shapely

from clearway.converter import read_floorplan
from clearway.roadmap import Robot, build_roadmap
from tests.conftest import REAL_AT_HAND, REAL_DRAWINGS, REAL_PROBES

#: The robot of the probes: 0.35 m radius and 0.10 m margin need 0.90 m clear openings.
ROBOT = Robot(radius=0.35, margin=0.10)


@pytest.fixture(scope="module", params=REAL_AT_HAND)
def built(request):
    name = request.param
    plan = read_floorplan(REAL_DRAWINGS / name)
    # as `clearway build` does: the openings split the floor into rooms, texts name them
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y) for s in plan.stations], robot=ROBOT,
                            openings=plan.openings, texts=plan.texts)
    return name, REAL_PROBES[name], plan, roadmap


def _main_lanes(roadmap):
    graph = roadmap.graph
    if graph.number_of_edges() == 0:
        return shapely.GeometryCollection()
    part = max(nx.connected_components(graph), key=len)
    return shapely.union_all([data["geometry"] for u, v, data in graph.edges(data=True)
                              if u in part])


def test_unit_is_read_right(built):
    name, probe, plan, _ = built
    # source: SOURCES.md, the true unit from dimension text against geometry
    assert plan.units == probe["unit"], plan.unit_note


def test_openings_found_with_the_drawn_widths(built):
    name, probe, plan, _ = built
    factor = plan.m_per_unit
    for x, y, width, why in probe.get("openings", []):
        near = [o for o in plan.openings
                if shapely.Point(o.x, o.y).distance(shapely.Point(x * factor, y * factor)) < 0.5]
        # source: the drawing's own dimension text or jamb ticks (probes.json says which)
        assert any(abs(o.width - width) <= 0.05 + 0.05 * width for o in near), (x, y, width, why)


def test_rooms_the_robot_enters_have_a_lane(built):
    name, probe, plan, roadmap = built
    lanes = _main_lanes(roadmap)
    factor = plan.m_per_unit
    for x, y, why in probe.get("inside_rooms", []):
        assert lanes.distance(shapely.Point(x * factor, y * factor)) <= 1.5, (x, y, why)


def test_no_lane_in_walls_stairs_or_outside(built):
    name, probe, plan, roadmap = built
    graph = roadmap.graph
    lanes = shapely.union_all([data["geometry"] for *_, data in graph.edges(data=True)]) \
        if graph.number_of_edges() else shapely.GeometryCollection()
    factor = plan.m_per_unit
    for key in ("in_walls", "in_stairs", "outside"):
        for x, y, why in probe.get(key, []):
            assert lanes.distance(shapely.Point(x * factor, y * factor)) > 0.3, (key, x, y, why)


def test_rooms_carry_the_names_printed_in_them(built):
    name, probe, plan, roadmap = built
    factor = plan.m_per_unit
    for x, y, printed in probe.get("rooms", []):
        point = shapely.Point(x * factor, y * factor)
        holding = [room for room in roadmap.rooms if room.polygon.covers(point)]
        if not holding:
            continue                       # a room the plan does not hold as floor (a wall bay)
        # source: the room-name text printed at that point (probes.json)
        assert any(printed.casefold() in " ".join(room.names).casefold() for room in holding), \
            (x, y, printed, [room.names for room in holding])


@pytest.mark.parametrize("name", REAL_AT_HAND)
def test_a_sound_real_drawing_reads_as_ezdxfs_recovery_reads_it(name, monkeypatch):
    from clearway.converter.sound import sound_text
    from tests.converter.test_document import contents, recovered_contents
    path = REAL_DRAWINGS / name
    if sound_text(path.read_bytes()) is None:
        return          # recovery reads it either way: nothing to compare
    # source: ezdxf's recovery reader on the same file
    assert contents(path) == recovered_contents(path, monkeypatch)
