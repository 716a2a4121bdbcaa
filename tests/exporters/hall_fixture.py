"""A small hall built by hand: a FloorPlan and a Roadmap that obey the shared contracts.

    y=10 +--------------------------------------------+   walls: 0.2 m band outside the hall
         |  shared zone (y 8.5..10)                   |
         |      e1 (top lane, y = 8)                  |
     S1 []--n3--n1     [ racking 6..14 x 4..6 ]     n2|   stations: "S1" linked at n3,
         |      e2 (bottom lane, y = 2)          [KO] |   a hostile label unreachable in the
    y=0  +--------------------------------------------+   keep-out corner (18..20 x 0..1.5)
"""

from __future__ import annotations

import networkx as nx
import shapely
from shapely.geometry import MultiPolygon

from clearway.converter.floorplan import FloorPlan, Leak, Station
from clearway.roadmap.model import (Findings, NarrowPassage, PersonnelFlag, PinchPoint, Robot, Roadmap,
                           StationResult)

#: A label with every character class that must survive: markup, quotes, ampersand, a C0
#: control (XML-illegal), a right-to-left mark, non-Latin letters.
HOSTILE = "Dock <B> & \"Q\" 'r' \x07\u200f\u05d0\u05d1 Süd"


def _multi(geometry) -> MultiPolygon:
    return MultiPolygon([g for g in shapely.get_parts(geometry)])


def make_plan(hostile: str = HOSTILE, shift: tuple[float, float] = (0.0, 0.0)) -> FloorPlan:
    dx, dy = shift
    hall = shapely.box(0 + dx, 0 + dy, 20 + dx, 10 + dy)
    regions = {
        "wall": _multi(hall.buffer(0.2, join_style="mitre").difference(hall)),
        "racking": _multi(shapely.box(6 + dx, 4 + dy, 14 + dx, 6 + dy)),
        "keepout": _multi(shapely.box(18 + dx, 0 + dy, 20 + dx, 1.5 + dy)),
        "boundary": MultiPolygon(),
        "shared": _multi(shapely.box(0 + dx, 8.5 + dy, 20 + dx, 10 + dy)),
    }
    obstacles = shapely.union_all([regions[r] for r in ("wall", "racking", "keepout")])
    free = _multi(hall.difference(obstacles))
    stations = tuple(sorted([Station("S1", 1.0 + dx, 5.0 + dy),
                             Station(hostile, 19.0 + dx, 0.7 + dy)], key=lambda s: s.label))
    return FloorPlan(source="hall <1>.dxf", sha256="ab" * 32, units="mm", m_per_unit=0.001,
                     unit_note="units from $INSUNITS = 4 (mm)", regions=regions,
                     free_space=free, stations=stations,
                     leaks=(Leak(20.0 + dx, 5.0 + dy, 0.4),),
                     warnings=("1 SPLINE skipped on layer <x>",),
                     extents=(-0.2 + dx, -0.2 + dy, 20.2 + dx, 10.2 + dy))


def make_roadmap(plan: FloorPlan, robot: Robot | None = None) -> Roadmap:
    robot = robot or Robot.disc(0.35, margin=0.1)
    dx, dy = plan.extents[0] + 0.2, plan.extents[1] + 0.2
    obstacles = shapely.union_all(list(plan.obstacles.values()))
    graph = nx.MultiGraph(units="m", robot_radius=robot.radius, margin=robot.margin,
                          clearance=robot.clearance)
    nodes = {"n1": (3.0, 5.0, "junction", ""), "n2": (16.5, 5.0, "junction", ""),
             "n3": (1.5, 5.0, "station", "S1")}
    for node_id, (x, y, kind, label) in nodes.items():
        point = shapely.Point(x + dx, y + dy)
        graph.add_node(node_id, x=x + dx, y=y + dy, kind=kind, label=label,
                       clearance=float(shapely.distance(point, obstacles)))
    lanes = {  # edge id: (u, v, coordinates as given: e2 and e3 deliberately reversed)
        "e1": ("n1", "n2", [(3, 5), (4, 8), (16, 8), (16.5, 5)]),
        "e2": ("n2", "n1", [(16.5, 5), (16, 2), (4, 2), (3, 5)]),
        "e3": ("n3", "n1", [(3, 5), (1.5, 5)]),
    }
    for edge_id, (u, v, coords) in lanes.items():
        line = shapely.LineString([(x + dx, y + dy) for x, y in coords])
        graph.add_edge(u, v, key=edge_id, length=float(line.length), weight=float(line.length),
                       clearance_min=float(shapely.distance(line, obstacles)), geometry=line)
    inflated = obstacles.buffer(robot.clearance)
    drivable = plan.free_space.difference(inflated)
    labels = [s.label for s in plan.stations]
    hostile = next(label for label in labels if label != "S1")
    findings = Findings(
        stations=tuple(sorted([
            StationResult("S1", 1.0 + dx, 5.0 + dy, "n3", 0, True, ""),
            StationResult(hostile, 19.0 + dx, 0.7 + dy, None, None, False,
                          "inside the clearance band of keep-out <KO>")],
            key=lambda s: s.label)),
        components=(("S1",),),
        pinch_points=(PinchPoint(3.0 + dx, 5.0 + dy, 1.8, "e3"),),
        narrow_passages=(NarrowPassage(19.0 + dx, 2.0 + dy, 0.62, (hostile,)),),
        personnel=(PersonnelFlag("e1", 10.0 + dx, 8.0 + dy, 0.5, 0.15, 0.5),),
        warnings=("lane e2 runs close to <racking> & walls",),
        personnel_clearance=0.5,
    )
    return Roadmap(graph=graph, robot=robot, obstacles=(obstacles,), drivable=drivable,
                   findings=findings)
