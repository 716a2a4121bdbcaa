"""Write the roadmap and the floor as an RFC 7946 GeoJSON FeatureCollection.

Features, in drawing order (areas under lanes under points):

- ``element: "area"`` MultiPolygons, ``role`` one of boundary (the floor outline the
  boundary lines enclose), wall, racking, keepout,
  shared (zones shared with people), free (floor not covered by obstacles), drivable
  (where the robot's centre may be: free minus the inflated obstacles);
- ``element: "edge"`` LineStrings from ``source`` to ``target`` with ``id``, ``length``,
  ``weight``, ``clearance_min`` (metres), as in the GraphML;
- ``element: "node"`` Points with ``id``, ``kind``, ``label``, ``x``, ``y``, ``clearance``;
- ``element: "station"`` Points at each station's drawn position with ``label``, ``kind``,
  ``heading`` (degrees counter-clockwise from +X, or null), ``node``, ``reachable``,
  ``reason``, ``room`` and ``standoff`` (metres from the drawn point to its node);
- ``element: "room"`` Polygons with ``id``, ``names`` (texts inside, largest first),
  ``area`` (m^2), ``reachable``, ``node`` (the room node), ``openings`` (ids of the
  openings on its outline) and, for a room the robot cannot enter, ``reason``,
  ``blocked_by`` and ``blocked_width``;
- ``element: "opening"`` Points with ``id``, ``kind`` (door, window, closed, open, or
  narrowing between rooms), ``width`` (clear, m), ``exterior``, ``fits`` (the robot
  passes through the width), ``passable`` (a passable kind and it fits) and ``rooms``.

Coordinates are the drawing's local metres unless an anchor is given (RFC 7946 sec. 4 allows
another coordinate reference system "by prior arrangement"); the top-level member
``coordinate_system`` says which. Polygon rings follow the right-hand rule (sec. 3.1.6).
Precision is limited to 0.1 mm: 4 decimals for metres, 9 for degrees (sec. 11.2).
"""

from __future__ import annotations

import json

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon, mapping

from clearway.collector import paused_collector
from clearway.exporters.anchor import check_anchor, drawing_to_wgs84
from clearway.exporters.graphml import oriented_edges
from clearway.exporters.text import (SAFETY_CAUTION, TOOL_VERSION, compact_json, finite_or_none,
                                     json_text, natural_key)

#: Decimal places kept: 4 for metres (0.1 mm), 9 for degrees (about 0.1 mm of latitude).
METRE_DECIMALS = 4
DEGREE_DECIMALS = 9
#: Area roles in drawing order.
AREA_ROLES = ("boundary", "free", "drivable", "shared", "wall", "racking", "keepout")


def _as_multipolygon(geometry) -> MultiPolygon:
    if geometry is None or geometry.is_empty:
        return MultiPolygon()
    return MultiPolygon([part for part in shapely.get_parts(geometry)
                         if isinstance(part, Polygon) and not part.is_empty])


def _project(anchor):
    if anchor is None:
        return lambda xy: np.round(xy, METRE_DECIMALS)
    return lambda xy: np.round(drawing_to_wgs84(xy, anchor), DEGREE_DECIMALS)


def _geometry(geometry, project) -> dict:
    return _geometries([geometry], project)[0]


def _geometries(geometries, project) -> list[dict]:
    """The GeoJSON geometry of each of `geometries`: projected, (Multi)Polygons oriented
    by the right-hand rule and listed from whole coordinate arrays (shapely's ``mapping``
    walks every vertex as a Python tuple). All of them at once: `project` and the
    orientation work point by point and geometry by geometry, so the values are those of
    one geometry at a time."""
    moved = shapely.transform(np.asarray(geometries, dtype=object), project)
    polygonal = np.isin(shapely.get_type_id(moved), (3, 6))
    moved[polygonal] = shapely.orient_polygons(moved[polygonal], exterior_cw=False)
    result = [None] * len(moved)
    listed = np.flatnonzero(polygonal & ~shapely.is_empty(moved))
    for index, value in zip(listed.tolist(), _polygon_mappings(moved[listed])):
        result[index] = value
    for index in np.flatnonzero(~polygonal | shapely.is_empty(moved)).tolist():
        result[index] = mapping(moved[index])
    return result


def _polygon_mappings(geometries) -> list[dict]:
    """shapely's ``mapping`` of each non-empty (Multi)Polygon of `geometries`."""
    polygons, owner = shapely.get_parts(geometries, return_index=True)
    rings, polygon_of_ring = shapely.get_rings(polygons, return_index=True)
    coords, ring_of_coord = shapely.get_coordinates(rings, return_index=True)
    ends = np.cumsum(np.bincount(ring_of_coord, minlength=len(rings))).tolist()
    points = coords.tolist()
    parts = [[] for _ in polygons]
    for polygon, begin, end in zip(polygon_of_ring.tolist(), [0, *ends[:-1]], ends):
        parts[polygon].append(points[begin:end])
    members = [[] for _ in geometries]
    for geometry, part in zip(owner.tolist(), parts):
        members[geometry].append(part)
    return [{"type": "Polygon", "coordinates": found[0]} if isinstance(geometry, Polygon)
            else {"type": "MultiPolygon", "coordinates": found}
            for geometry, found in zip(geometries, members)]


def _point(x: float, y: float, project) -> dict:
    """``_geometry`` of a point, without making one."""
    return {"type": "Point",
            "coordinates": project(np.array([[x, y]], dtype=float))[0].tolist()}


def _lines(lines, project) -> list[dict]:
    """``_geometry`` of a LineString through each of `lines` ((N_i, 2) arrays), without
    making one, projected all in one call: `project` works point by point, so the values
    are those of one line at a time."""
    if not lines:
        return []
    points = project(np.concatenate([np.asarray(line, dtype=float).reshape(-1, 2)
                                     for line in lines])).tolist()
    ends = np.cumsum([len(line) for line in lines]).tolist()
    return [{"type": "LineString", "coordinates": points[begin:end]}
            for begin, end in zip([0, *ends[:-1]], ends)]


def _points(xy, project) -> list[dict]:
    """``_point`` of each of the points `xy` (N, 2), projected all in one call."""
    return [{"type": "Point", "coordinates": point}
            for point in project(np.asarray(xy, dtype=float).reshape(-1, 2)).tolist()]


def _feature(geometry: dict, properties: dict) -> dict:
    return {"type": "Feature", "geometry": geometry, "properties": properties}


def floor_outline(band) -> MultiPolygon:
    """Return the area a boundary band (the boundary lines grown into a thin ribbon) encloses.

    The ribbon runs centred on the drawn lines; filling its holes and shrinking the result by
    half the ribbon's width (2 x area / perimeter of a thin ribbon) gives the outline as
    drawn, mitred at the corners.

    Examples
    --------
    >>> ribbon = shapely.box(-0.025, -0.025, 10.025, 8.025).difference(
    ...     shapely.box(0.025, 0.025, 9.975, 7.975))
    >>> round(floor_outline(ribbon).area, 6)
    80.0
    """
    polygons = [Polygon(part.exterior) for part in shapely.get_parts(band)
                if isinstance(part, Polygon) and not part.is_empty]
    if not polygons:
        return MultiPolygon()
    half = float(band.area / band.length) if band.length > 0 else 0.0
    return _as_multipolygon(shapely.union_all(polygons).buffer(-half, join_style="mitre"))


def area_lines(plan, drivable, anchor=None) -> list[str]:
    """The lines of the GeoJSON that hold the plan's areas and the drivable region: one
    feature each, by AREA_ROLES, projected with `anchor` (checked, as ``check_anchor``
    returns it; None: drawing metres)."""
    return [compact_json(feature) for feature in _area_features(plan, drivable, _project(anchor))]


def _area_features(plan, drivable, project) -> list[dict]:
    sources = dict(plan.regions) | {"free": plan.free_space, "drivable": drivable}
    sources["boundary"] = floor_outline(_as_multipolygon(plan.regions.get("boundary")))
    features = []
    for role in AREA_ROLES:
        area = _as_multipolygon(sources.get(role))
        if area.is_empty:
            continue
        features.append(_feature(_geometry(area, project), {
            "element": "area", "role": role, "area": float(area.area)}))
    return features


def _graph_features(roadmap, project, edges=None) -> list[dict]:
    graph = roadmap.graph
    features = []
    edges = oriented_edges(graph) if edges is None else edges
    for (edge_id, source, target, attrs, _), line in zip(
            edges, _lines([edge[4] for edge in edges], project)):
        features.append(_feature(line, {
            "element": "edge", "id": json_text(edge_id), "source": json_text(source),
            "target": json_text(target), "length": finite_or_none(attrs["length"]),
            "weight": finite_or_none(attrs["weight"]),
            "clearance_min": finite_or_none(attrs["clearance_min"])}))
    nodes = sorted(graph.nodes, key=natural_key)
    points = _points([(graph.nodes[n]["x"], graph.nodes[n]["y"]) for n in nodes], project)
    for node_id, point in zip(nodes, points):
        attrs = graph.nodes[node_id]
        features.append(_feature(point, {
            "element": "node", "id": json_text(node_id), "kind": json_text(attrs["kind"]),
            "label": json_text(attrs.get("label", "")), "x": float(attrs["x"]),
            "y": float(attrs["y"]), "clearance": finite_or_none(attrs["clearance"])}))
    return features


def _station_features(plan, roadmap, project) -> list[dict]:
    results = {result.label: result for result in roadmap.findings.stations}
    features = []
    for station in plan.stations:
        result = results.get(station.label)
        features.append(_feature(_point(station.x, station.y, project), {
            "element": "station", "label": json_text(station.label),
            "x": float(station.x), "y": float(station.y),
            "kind": json_text(station.kind), "heading": station.heading,
            "node": json_text(result.node) if result and result.node is not None else None,
            "reachable": bool(result.reachable) if result else False,
            "reason": json_text(result.reason) if result else "not linked to the roadmap",
            "room": json_text(result.room) if result else "",
            "standoff": float(result.standoff) if result else 0.0}))
    return features


def room_properties(room, passages) -> dict:
    """A room as plain values (GeoJSON properties and report.json entries)."""
    blocked = passages[room.blocked_by].id if room.blocked_by >= 0 else None
    return {"id": json_text(room.id), "names": [json_text(name) for name in room.names],
            "area": finite_or_none(room.area), "reachable": bool(room.reachable),
            "node": json_text(room.node) or None, "x": float(room.x), "y": float(room.y),
            "openings": [json_text(passages[i].id) for i in room.passages],
            "reason": json_text(room.reason), "blocked_by": blocked,
            "blocked_width": finite_or_none(room.blocked_width)}


def opening_properties(passage) -> dict:
    """An opening or narrowing between rooms as plain values."""
    return {"id": json_text(passage.id), "kind": json_text(passage.kind),
            "width": finite_or_none(passage.width), "exterior": bool(passage.exterior),
            "fits": bool(passage.fits), "passable": bool(passage.passable),
            "rooms": [json_text(room) for room in passage.rooms]}


def _room_features(roadmap, project) -> tuple[list[dict], list[dict]]:
    """Room polygons (drawn over the areas) and opening points (drawn last)."""
    shapes = _geometries([room.polygon for room in roadmap.rooms], project)
    rooms = [_feature(shape, {"element": "room", **room_properties(room, roadmap.passages)})
             for room, shape in zip(roadmap.rooms, shapes)]
    openings = [_feature(_point(p.x, p.y, project),
                         {"element": "opening", **opening_properties(p)})
                for p in roadmap.passages]
    return rooms, openings


def coordinate_system(anchor=None) -> dict:
    """Describe the coordinates written (the top-level ``coordinate_system`` member)."""
    if anchor is None:
        return {"type": "local", "units": "m", "axes": "x, y as drawn (y up)",
                "note": "Drawing coordinates in metres, not WGS84 (RFC 7946 sec. 4: by prior "
                        "arrangement). Pass --anchor LAT,LON,BEARING for longitude/latitude."}
    latitude, longitude, bearing = check_anchor(anchor)
    return {"type": "WGS84", "units": "degrees", "axes": "longitude, latitude",
            "anchor": {"latitude": latitude, "longitude": longitude, "bearing": bearing},
            "note": "Drawing origin at the anchor, drawing +Y at the bearing (degrees clockwise "
                    "from true north); local tangent plane on the WGS84 ellipsoid."}


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_geojson(plan, roadmap, *, anchor=None, edges=None, floor=None) -> bytes:
    """Return the floor and the roadmap as RFC 7946 GeoJSON bytes (UTF-8, deterministic).

    Parameters
    ----------
    plan : converter.floorplan.FloorPlan
    roadmap : roadmap.model.Roadmap
    anchor : (latitude, longitude, bearing) in degrees, optional
        WGS84 position of the drawing origin and bearing of its +Y axis. Without it the
        coordinates are the drawing's local metres.
    edges : list, optional
        ``graphml.oriented_edges(roadmap.graph)`` when the caller has it already.
    floor : exporters.floor.FloorDrawn, optional
        The areas drawn already, used where they fit.

    Returns
    -------
    bytes
        One feature per line, so that revisions diff cleanly.

    Raises
    ------
    ValueError
        The anchor is out of range.
    """
    if anchor is not None:
        anchor = check_anchor(anchor)
    project = _project(anchor)
    robot = roadmap.robot
    header = {
        "type": "FeatureCollection",
        "name": "clearway roadmap",
        "coordinate_system": coordinate_system(anchor),
        "source": json_text(plan.source), "sha256": plan.sha256, "tool_version": TOOL_VERSION,
        "robot": {"radius": robot.radius, "margin": robot.margin, "clearance": robot.clearance},
        "caution": SAFETY_CAUTION,
    }
    rooms, openings = _room_features(roadmap, project)
    features = (rooms + _graph_features(roadmap, project, edges)
                + _station_features(plan, roadmap, project) + openings)
    areas = floor.geojson_lines if floor is not None and floor.anchor == anchor \
        and floor.fits(roadmap) else area_lines(plan, roadmap.drivable, anchor)
    head = json.dumps(header, ensure_ascii=False, allow_nan=False)[:-1]
    lines = areas + [compact_json(f) for f in features]
    body = ",\n".join(lines)
    return (head + ', "features": [\n' + body + "\n]}\n").encode("utf-8")
