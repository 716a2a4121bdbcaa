"""build_roadmap: free space and obstacles in, the lane graph and its findings out."""

from __future__ import annotations

from dataclasses import replace
from typing import Callable, Mapping, Sequence

import numpy as np
import shapely
from scipy.sparse.csgraph import connected_components
from scipy.spatial import cKDTree
from shapely.ops import polylabel  # shapely.polylabel exists only from shapely 2.1

from clearway.collector import paused_collector
from clearway.config import DEFAULTS, default_comfort_clearance
from clearway.side_by_side import Aside, meanwhile
from clearway.roadmap import checks
from clearway.roadmap.gvd import medial_axis
from clearway.roadmap.graph import (_adjacency, chain_lanes, contract_short_edges, prune_spurs,
                           split_loops)
from clearway.roadmap.clearance import clearance_field
from clearway.roadmap.inflate import (ABOVE_CLEARANCE, boundary_segments, drivable_region,
                             local_floor, polygon_parts, polylines, reached_parts, to_drawing)
from clearway.roadmap.body import fit_edges, fit_lanes
from clearway.roadmap.model import BodyShortfall, Robot, Roadmap
from clearway.roadmap.turns import car_bends, check_turns
from clearway.roadmap.lanes import assemble_graph, refine_lanes
from clearway.roadmap.rooms import (describe_rooms, locate, narrowings, opening_cuts, room_names,
                                    room_seeds, split_floor)
from clearway.roadmap.stations import (REASON_NO_LANE, REASON_NO_LINK, Attachment, link_stations,
                              containing_region, standing_points)

#: Douglas-Peucker tolerance for lanes whose clearance exceeds c by more than twice it, m.
SIMPLIFY = 0.005
#: Medial axis vertices from which the rooms are found in a second process while the lanes
#: are pruned (clearway.side_by_side). On the mixed suite floor at 20,000 bays (202,000
#: vertices, 1,476 openings) the rooms take 0.28 s and the pruning 0.26 s; at 5,000 bays
#: (51,000 vertices) the rooms take 0.04 s, which a fork and the pickles would eat.
ROOMS_ASIDE_VERTICES = 100_000


def _fragments(vertices, clearance, edges, regions, field, c):
    """Map lane fragments to drivable regions; join split fragments; seed empty regions."""
    warnings = []
    count = len(vertices)
    _, label = connected_components(_adjacency(count, edges), directed=False) \
        if count else (0, np.zeros(0, dtype=np.int64))
    best = {}
    for vertex in np.lexsort((-clearance, label)):
        best.setdefault(int(label[vertex]), vertex)
    representative = np.array([best[k] for k in sorted(best)], dtype=np.int64)
    fragment_region = containing_region(vertices[representative], regions)
    vertex_region = fragment_region[label] if count else np.zeros(0, dtype=np.int64)
    keep = vertex_region >= 0
    extra_edges = []
    for region in np.unique(fragment_region[fragment_region >= 0]):
        members = np.flatnonzero(fragment_region == region)
        joined = {int(members[0])}
        for fragment in members[1:]:
            others = np.flatnonzero(np.isin(label, list(joined)))
            mine = np.flatnonzero(label == fragment)
            gap, where = cKDTree(vertices[others]).query(vertices[mine])
            a, b = mine[np.argmin(gap)], others[where[np.argmin(gap)]]
            _, _, along = field.along([shapely.LineString(vertices[[a, b]])], 0.01)
            if along.min() >= c - 1e-9:
                extra_edges.append((min(a, b), max(a, b)))
            else:
                warnings.append(f"drivable region {int(region)}: lane left in pieces at "
                                f"({vertices[a, 0]:.3f}, {vertices[a, 1]:.3f})")
            joined.add(int(fragment))
    if extra_edges:
        edges = np.unique(np.vstack([edges, np.asarray(extra_edges)]), axis=0)
    seeds = [i for i in range(len(regions)) if i not in set(fragment_region.tolist())]
    new_points = np.array([shapely.get_coordinates(polylabel(regions[i], 0.01))[0]
                           for i in seeds]).reshape(-1, 2)
    vertices = np.vstack([vertices, new_points])
    clearance = np.r_[clearance, field.at(new_points)]
    keep = np.r_[keep, np.ones(len(new_points), bool)]
    return vertices, clearance, edges, keep, warnings


def _lanes(vertices, clearance, edges, isolated, c, field, robot, terminal=None):
    """Lanes as (geometry, ends, isolated, vertices, shortfalls); a rectangular body keeps
    only the lanes it can drive heading along them (dead ends cut back, on a copy of
    `vertices`), a car only those whose bends it can take. `terminal` (V,) bool vertices
    end lanes (room nodes, station joins)."""
    chains = chain_lanes(len(vertices), edges, terminal)
    sequences, _ = split_loops(chains, vertices)
    lines = refine_lanes([vertices[seq] for seq in sequences], field, below=c + 0.02)
    geometry = polylines(lines)
    if len(geometry):
        wide = np.array([clearance[seq].min() >= c + 2 * SIMPLIFY for seq in sequences])
        geometry[wide] = shapely.simplify(geometry[wide], SIMPLIFY, preserve_topology=False)
    ends = [(int(seq[0]), int(seq[-1])) for seq in sequences]
    short = []
    if robot.length is not None:
        vertices = vertices.copy()
        geometry, ends, short = fit_lanes(robot, field, geometry, ends, vertices)
    if robot.kind == "car":
        geometry, ends, bends = car_bends(robot, field, geometry, ends)
        short += bends
    return geometry, ends, [int(v) for v in isolated], vertices, short


# the stage makes few reference cycles: on the mixed suite floor at 20,000 bays the
# collector's 539 passes freed 23 objects, and its four full passes cost 0.13 s (collector.py)
@paused_collector()
def build_roadmap(obstacles: Mapping[str, object], free_space, stations: Sequence[tuple],
                  *, robot: Robot, shared_zones=None, comfort_clearance: float | None = None,
                  personnel_clearance: float = DEFAULTS["checks"]["personnel_clearance"],
                  low_clearance_penalty: float = DEFAULTS["checks"]["low_clearance_penalty"],
                  sample_step: float = 0.25, openings: Sequence = (), texts: Sequence = (),
                  progress: Callable[[str], None] | None = None) -> Roadmap:
    """Build the lane graph of maximum clearance for `robot` in `free_space`.

    Parameters
    ----------
    obstacles : mapping of role -> Polygon or MultiPolygon, metres
        wall, racking, keepout, boundary; used for the inflated obstacles.
    free_space : Polygon or MultiPolygon, metres
        The navigable floor, one polygon per enclosed component.
    stations : sequence of (label, x, y) or (label, x, y, kind, heading), metres
        A station's kind (str) and heading (degrees counter-clockwise from +X, or None)
        go onto its node as ``station_kind`` and ``heading``.
    robot : Robot
        Required clearance c = robot.clearance (radius + margin).
    shared_zones : Polygon or MultiPolygon, optional
        Zones shared with people, for personnel flags.
    comfort_clearance : float, optional
        Lanes with clearance below it are pinch points (and penalised); default
        c + 0.2 m (clearway.config.default_comfort_clearance).
    personnel_clearance : float
        Side clearance required beside the robot in shared zones, metres; default 0.5 m
        (clearway.config.DEFAULTS), from memory of ISO 3691-4's clear zone beside
        driverless trucks.
    low_clearance_penalty : float
        Lanes whose clearance_min is below comfort weigh length * (1 + penalty).
    sample_step : float
        Boundary sampling interval of the Voronoi diagram, metres.
    openings : sequence of Opening (``FloorPlan.openings``), drawing frame
        Passable interior openings split the floor into rooms.
    texts : sequence of PlanText (``FloorPlan.texts``), drawing frame
        Texts inside a room name it.
    progress : callable, optional
        Called with "inflating", "voronoi", "rooms", "graph", "stations", "checks" as each
        starts.

    Returns
    -------
    Roadmap
    """
    if not isinstance(robot, Robot):
        raise TypeError(f"robot must be a Robot, got {type(robot).__name__}")
    if not (np.isfinite(sample_step) and sample_step > 0):
        raise ValueError(f"sample_step must be > 0 m, got {sample_step}")
    for name, value in (("personnel_clearance", personnel_clearance),
                        ("low_clearance_penalty", low_clearance_penalty)):
        if not (np.isfinite(value) and value >= 0):
            raise ValueError(f"{name} must be >= 0, got {value}")
    c = float(robot.clearance)
    threshold = c + ABOVE_CLEARANCE
    comfort = (default_comfort_clearance(c) if comfort_clearance is None
               else float(comfort_clearance))
    report = progress or (lambda stage: None)
    # the drivable region is made the same way by drivable_floor, before the lanes
    local, offset = local_floor(free_space)

    report("inflating")
    regions = drivable_region(local, threshold)
    obstacle_parts = polygon_parts([g for g in obstacles.values() if g is not None]) \
        if obstacles else np.empty(0, object)
    drivable = shapely.MultiPolygon(list(regions))

    report("voronoi")
    # the clearance field and its indexes are made on a second thread while GEOS finds the
    # reached parts (both release the GIL): the two took 0.60 s on the mixed suite floor at
    # 20,000 bays one after the other, 0.43 s side by side. It is first asked after the
    # medial axis.
    with meanwhile(lambda: clearance_field(boundary_segments(local)[0]).prepared()) as making:
        reached = reached_parts(local, regions, c)
    field = making.result()
    axis = medial_axis(shapely.MultiPolygon(list(reached)), step=sample_step)

    report("rooms")

    def find_rooms():
        cuts = opening_cuts(openings, offset)
        narrow = narrowings(axis.vertices, axis.clearance, axis.edges, avoid=cuts)
        rooms = split_floor(local, cuts + narrow)
        rooms = rooms[np.lexsort(shapely.bounds(rooms).T[::-1])] if len(rooms) else rooms
        return narrow, rooms, room_names(rooms, texts, offset, openings,
                                         station_labels=[str(station[0]) for station in stations])

    # the rooms and the first pruning of the lanes need only the axis: on a large one the
    # rooms are found in a second process meanwhile (clearway.side_by_side)
    with Aside(find_rooms, fork=len(axis.vertices) >= ROOMS_ASIDE_VERTICES) as finding:
        report("graph")
        lane_axis = axis.restrict(axis.clearance >= threshold)
        vertices, clearance, edges = contract_short_edges(lane_axis.vertices, lane_axis.clearance,
                                                          lane_axis.edges)
        vertices, clearance, edges, keep, warnings = _fragments(vertices, clearance, edges,
                                                                regions, field, c)
        edges = edges[keep[edges].all(axis=1)]
        alone = np.flatnonzero(keep & (np.bincount(edges.ravel(), minlength=len(vertices)) == 0))
        kept, isolated = prune_spurs(vertices, clearance, edges)
        narrow, rooms, names = finding.result()
    # each room's vertex of greatest clearance ends a lane (its room node); where pruning
    # left the room without one, the spur that leads there is kept
    seeds = room_seeds(rooms, vertices, clearance, keep, threshold,
                       degree=np.bincount(edges.ravel(), minlength=len(vertices)),
                       lane_degree=np.bincount(kept.ravel(), minlength=len(vertices)))
    room_node = np.zeros(len(vertices), bool)
    room_node[seeds[seeds >= 0]] = True
    lane_vertex = np.zeros(len(vertices), bool)
    lane_vertex[kept.ravel()] = True
    lane_vertex[isolated] = True
    if (room_node & ~lane_vertex).any():
        kept, isolated = prune_spurs(vertices, clearance, edges, protected=room_node)
    isolated = np.union1d(isolated, alone)
    lines, ends, isolated, lane_vertices, short = _lanes(vertices, clearance, kept, isolated,
                                                         c, field, robot, room_node)
    lane_region = containing_region(lane_vertices[[a for a, _ in ends]], regions)

    report("stations")
    labels = [str(s[0]) for s in stations]
    drawn_xy = np.array([(float(s[1]), float(s[2])) for s in stations]).reshape(-1, 2) \
        - np.asarray(offset)
    # a block station marks its equipment: the robot stands clear of it (stations.py)
    station_xy, standoff = standing_points(
        drawn_xy, [s[4] if len(s) > 4 else None for s in stations], field, local, c)
    joins = link_stations(station_xy, lines, lane_region, regions, field, local, c)
    # a region pruned to one vertex (a square or round room) has no lane left: retry too
    failed = [i for i, j in enumerate(joins) if j in (REASON_NO_LINK, REASON_NO_LANE)]
    if failed:
        chains = chain_lanes(len(vertices), edges)
        full, _ = split_loops(chains, vertices)
        full_lines = polylines([vertices[s] for s in full])
        retry = link_stations(station_xy[failed], full_lines,
                              containing_region(vertices[[s[0] for s in full]], regions),
                              regions, field, local, c)
        protected = room_node.copy()
        for attachment in retry:
            if isinstance(attachment, Attachment):
                seq = full[attachment.lane]
                step = np.r_[0, np.cumsum(np.hypot(*np.diff(vertices[seq], axis=0).T))]
                at = int(np.clip(np.searchsorted(step, attachment.along), 1, len(seq) - 1))
                protected[seq[at - 1:at + 1]] = True
        if (protected & ~room_node).any():
            kept, isolated = prune_spurs(vertices, clearance, edges, protected=protected)
            isolated = np.union1d(isolated, alone)
            lines, ends, isolated, lane_vertices, short = _lanes(
                vertices, clearance, kept, isolated, c, field, robot, protected)
            lane_region = containing_region(lane_vertices[[a for a, _ in ends]], regions)
            joins = link_stations(station_xy, lines, lane_region, regions, field, local, c)

    report("checks")
    graph, samples, station_nodes = assemble_graph(lines, ends, lane_vertices, isolated,
                                                   station_xy, labels, joins, field, offset,
                                                   refine_below=comfort)
    graph.graph.update(units="m", robot_radius=float(robot.radius),
                       margin=float(robot.margin), required_clearance=c)
    for index, node in station_nodes.items():
        kind, heading = (*stations[index][3:5], "", None)[:2]
        graph.nodes[node]["station_kind"] = str(kind)
        if heading is not None:
            graph.nodes[node]["heading"] = float(heading)
    body = []
    if robot.has_body:
        body = [BodyShortfall("lane", s.x + offset[0], s.y + offset[1], robot.margin, s.gap,
                              note=s.note or f"{robot.short_beside(s.gap)}; lane dropped")
                for s in short]
        samples, joins, links = fit_edges(robot, field, graph, samples, joins, station_nodes,
                                          offset)
        body += links
        body += check_turns(robot, field, graph, offset, floor=local)
    checks.weigh_edges(graph, comfort, low_clearance_penalty)
    drawn = drawn_xy + np.asarray(offset)
    findings = checks.run_checks(graph, samples, joins, labels, station_nodes, drawn, axis,
                                 c, comfort,
                                 robot=robot, shared_zones=shared_zones,
                                 personnel_clearance=personnel_clearance,
                                 low_clearance_penalty=low_clearance_penalty,
                                 regions=regions, region_of_station=containing_region(
                                     station_xy, regions), offset=offset,
                                 warnings=tuple(warnings), body=body, standoff=standoff)
    room_list, passages = describe_rooms(rooms, seeds, names, narrow, openings, graph,
                                         lane_vertices, regions, offset, c)
    findings = _stations_in_rooms(findings, room_list)
    return Roadmap(graph=graph, robot=robot, obstacles=tuple(obstacle_parts),
                   drivable=to_drawing(drivable, offset), findings=findings,
                   rooms=room_list, passages=passages)


def _stations_in_rooms(findings, rooms):
    """Findings whose station results name the room each station stands in."""
    if not rooms or not findings.stations:
        return findings
    polygons = np.array([room.polygon for room in rooms], dtype=object)
    owner = locate([(s.x, s.y) for s in findings.stations], polygons, slack=0.01)
    return replace(findings, stations=tuple(
        replace(result, room=rooms[k].id if k >= 0 else "")
        for result, k in zip(findings.stations, owner)))
