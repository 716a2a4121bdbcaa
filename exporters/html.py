"""Write roadmap.html: one self-contained page to inspect the roadmap in a web browser.

The page holds its own small script and style sheet (``viewer.js``, ``viewer.css``, package
data beside this module) and the roadmap as JSON inside ``<script type="application/json">``:
no network, no fonts or libraries fetched, so it works from ``file://`` and as an e-mail
attachment. It pans and zooms, switches layers, tells what a lane or node is, finds a station
or room by label, draws the shortest route between two stations (the same A* on the same
weights as ``clearway route``, see ``roadmap/routing.py``) and walks the list of problems.

The same roadmap, date and changes give the same bytes. Every string from the drawing reaches
the page as JSON data only, and the script shows it as text (never as markup).
"""

from __future__ import annotations

import html
import math
import re
from importlib import resources

import numpy as np
import shapely

from clearway.collector import paused_collector
from clearway.exporters.graphml import oriented_edges
from clearway.exporters.svg import drawing_origin
from clearway.exporters.svg_parts import LANE_COLOURS, clearance_band, lane_bins
from clearway.exporters.text import (SAFETY_CAUTION, TOOL_VERSION, compact_json,
                                     finite_or_none, json_text, natural_key)

#: Decimal places of drawn geometry, metres relative to the page origin (1 mm).
DRAWN_DECIMALS = 3
_PLACEHOLDER = re.compile(r"\{\{(TITLE|CAUTION|STYLE|DATA|SCRIPT)\}\}")
#: Characters that must not appear raw inside a <script> element, nor in a JavaScript
#: string literal (U+2028 and U+2029 end a line in ECMAScript before ES2019), and their
#: escapes. Replaced one character at a time: str.translate looks every character of the
#: page's megabytes of JSON up in a dict, about 15 times slower.
_SCRIPT_ESCAPES = (("<", "\\u003c"), (">", "\\u003e"), ("&", "\\u0026"),
                   ("\u2028", "\\u2028"), ("\u2029", "\\u2029"))


def script_json(value) -> str:
    """Return `value` as JSON that is safe inside an HTML ``<script>`` element.

    ``<``, ``>`` and ``&`` become ``\\u`` escapes, so no ``</script>`` or ``<!--`` can end
    or bend the element (HTML Living Standard sec. 4.12.1.3); so do U+2028 and U+2029.

    Examples
    --------
    >>> script_json({"label": "</script><b>&"})
    '{"label":"\\\\u003c/script\\\\u003e\\\\u003cb\\\\u003e\\\\u0026"}'
    """
    text = compact_json(value)
    for character, escape in _SCRIPT_ESCAPES:
        text = text.replace(character, escape)
    return text


def _flat(coords: np.ndarray, origin: np.ndarray) -> list[float]:
    """Coordinates (N, 2), metres, as a flat [x0, y0, x1, y1, ...] list relative to origin."""
    local = np.round(np.asarray(coords, dtype=float).reshape(-1, 2) - origin, DRAWN_DECIMALS)
    return (local + 0.0).ravel().tolist()       # + 0.0 turns -0.0 into 0.0


def _polygons(geometry, origin) -> list[list[list[float]]]:
    """Each polygon of `geometry` as a list of flat rings (closing point dropped).

    Rings of fewer than three points are left out (a polygon may so keep no ring).

    Examples
    --------
    >>> _polygons(shapely.box(0, 0, 2, 1).difference(shapely.box(0.5, 0.25, 1, 0.75)),
    ...           np.zeros(2))
    [[[0.0, 0.0, 0.0, 1.0, 2.0, 1.0, 2.0, 0.0], [1.0, 0.75, 0.5, 0.75, 0.5, 0.25, 1.0, 0.25]]]
    """
    return _polygons_each([geometry], origin)[0]


def _polygons_each(geometries, origin) -> list[list[list[list[float]]]]:
    """``_polygons`` of each of `geometries` (None or empty: []), from whole arrays: the
    coordinates of all of them are rounded together, as ``_flat`` rounds each ring."""
    present = [index for index, geometry in enumerate(geometries)
               if geometry is not None and not geometry.is_empty]
    result = [[] for _ in geometries]
    if not present:
        return result
    parts, owner = shapely.get_parts(np.array([geometries[i] for i in present], dtype=object),
                                     return_index=True)
    kept = (shapely.get_type_id(parts) == 3) & ~shapely.is_empty(parts)
    parts, owner = parts[kept], owner[kept]
    rings, polygon_of_ring = shapely.get_rings(parts, return_index=True)
    counts = shapely.get_num_coordinates(rings)
    values = _flat(shapely.get_coordinates(rings), origin)
    polygons = [[] for _ in range(len(parts))]
    start = 0
    for polygon, count in zip(polygon_of_ring.tolist(), counts.tolist()):
        if count - 1 >= 3:
            polygons[polygon].append(values[2 * start:2 * (start + count - 1)])
        start += count
    for geometry, polygon in zip(owner.tolist(), polygons):
        result[present[geometry]].append(polygon)
    return result


def _bounds(plan, roadmap) -> tuple[float, float, float, float]:
    boxes = [g.bounds for g in (*plan.regions.values(), plan.free_space, roadmap.drivable)
             if g is not None and not g.is_empty]
    boxes += [(s.x, s.y, s.x, s.y) for s in plan.stations]
    boxes += [(d["x"], d["y"], d["x"], d["y"]) for _, d in roadmap.graph.nodes(data=True)]
    array = np.asarray(boxes, dtype=float).reshape(-1, 4)
    if len(array) == 0 or not np.isfinite(array).all():
        return 0.0, 0.0, 1.0, 1.0
    return (float(array[:, 0].min()), float(array[:, 1].min()),
            float(array[:, 2].max()), float(array[:, 3].max()))


def _robot_text(robot) -> str:
    shape = (f"disc, radius {robot.radius:.2f} m" if robot.length is None else
             f"{robot.length:.2f} m x {robot.width:.2f} m (circumscribed radius "
             f"{robot.radius:.2f} m)")
    return f"{shape}, margin {robot.margin:.2f} m, required clearance {robot.clearance:.2f} m"


def _areas(plan, roadmap, origin, band=None) -> dict:
    free = plan.free_space
    band = clearance_band(plan, roadmap) if band is None else band
    sources = {"free": free, "drivable": roadmap.drivable, "band": band, **dict(plan.regions)}
    polygons = {role: _polygons(area, origin) for role, area in sources.items()}
    return {role: parts for role, parts in polygons.items() if parts}


def _graph(roadmap, origin, oriented=None) -> tuple[list, list]:
    graph = roadmap.graph
    nodes = []
    for node_id in sorted(graph.nodes, key=natural_key):
        attrs = graph.nodes[node_id]
        turns = attrs.get("turns")      # allowed turns (rectangular robots); None: any turn
        nodes.append([json_text(node_id), float(attrs["x"]), float(attrs["y"]),
                      json_text(attrs.get("kind", "")), json_text(attrs.get("label", "")),
                      finite_or_none(attrs.get("clearance")),
                      None if turns is None else json_text(turns)])
    edges = []
    oriented = oriented_edges(graph) if oriented is None else oriented
    # every edge's coordinates rounded in one call (as `_flat` rounds each), then cut apart
    lines = [np.asarray(edge[4], dtype=float).reshape(-1, 2) for edge in oriented]
    values = _flat(np.concatenate(lines), origin) if lines else []
    ends = np.cumsum([2 * len(line) for line in lines]).tolist()
    for (edge_id, source, target, attrs, _), begin, end in zip(oriented, [0, *ends[:-1]], ends):
        edges.append([json_text(edge_id), json_text(source), json_text(target),
                      float(attrs["length"]), float(attrs["weight"]),
                      finite_or_none(attrs.get("clearance_min")), values[begin:end]])
    return nodes, edges


def _place(x: float, y: float) -> str:
    return f"at x {x:.2f} m, y {y:.2f} m"


def _problems(plan, roadmap) -> list[dict]:
    """The problems list: kind, title, detail and place (metres; None when it has none)."""
    findings = roadmap.findings
    items = []

    def add(kind, title, detail, x=None, y=None):
        items.append({"kind": kind, "title": json_text(title), "detail": json_text(detail),
                      "x": finite_or_none(x), "y": finite_or_none(y)})

    blocking = {}
    for passage in findings.narrow_passages:
        for label in passage.blocks:
            blocking.setdefault(label, passage)
    for station in findings.stations:
        if station.reachable:
            continue
        detail = station.reason or "no lane reaches it"
        passage = blocking.get(station.label)
        if passage is not None:
            detail += (f"; cut off by a passage {passage.width:.2f} m wide "
                       f"{_place(passage.x, passage.y)}, the robot needs "
                       f"{2 * roadmap.robot.clearance:.2f} m")
        add("unreachable", f"Unreachable station {station.label}", detail, station.x, station.y)
    for leak in plan.leaks:
        add("leak", f"Leak to outside, {leak.width:.2f} m gap", _place(leak.x, leak.y),
            leak.x, leak.y)
    for passage in findings.narrow_passages:
        cut = ", ".join(passage.blocks)
        add("narrow", f"Narrow passage, {passage.width:.2f} m clear width",
            (f"cuts off {cut}; " if cut else "") + _place(passage.x, passage.y),
            passage.x, passage.y)
    for pinch in sorted(findings.pinch_points, key=lambda p: (p.clearance, p.x, p.y)):
        add("pinch", f"Pinch point, {pinch.clearance:.2f} m clearance",
            (f"lane {pinch.edge}, " if pinch.edge else "") + _place(pinch.x, pinch.y),
            pinch.x, pinch.y)
    for flag in findings.personnel:
        add("personnel", f"Personnel clearance short, {flag.side_clearance:.2f} m beside robot",
            f"lane {flag.edge} in a zone shared with people needs {flag.required:.2f} m; "
            + _place(flag.x, flag.y), flag.x, flag.y)
    for warning in (*plan.warnings, *findings.warnings):
        add("warning", "Warning", warning)
    return items


def _stations(plan, roadmap) -> list[list]:
    results = {result.label: result for result in roadmap.findings.stations}
    rows = []
    for station in plan.stations:
        result = results.get(station.label)
        rows.append([json_text(station.label), float(station.x), float(station.y),
                     json_text(result.node) if result and result.node is not None else None,
                     bool(result and result.reachable),
                     json_text(result.reason) if result else "not linked to the roadmap"])
    return rows


def _changes(changes, origin) -> dict | None:
    """The revision's changes (roadmap.compare.GraphChanges) as drawable lists, or None."""
    if changes is None:
        return None

    def lines(items):
        return [[json_text(item.id), _flat(shapely.get_coordinates(shapely.from_wkt(item.wkt)),
                                           origin)] for item in items if item.wkt]
    return {
        "lanes_added": lines(changes.edges_added),
        "lanes_removed": lines(changes.edges_removed),
        "nodes_added": [[json_text(n.id), *_flat([(n.x, n.y)], origin)]
                        for n in changes.nodes_added],
        "nodes_removed": [[json_text(n.id), *_flat([(n.x, n.y)], origin)]
                          for n in changes.nodes_removed],
        "nodes_moved": [[json_text(m.new_id), *_flat([(m.x_old, m.y_old), (m.x, m.y)], origin)]
                        for m in changes.nodes_moved],
    }


def _rooms(plan, roadmap, origin) -> tuple[list, list]:
    """Rooms and openings, when the roadmap or the plan carries them (else two empty lists).

    A room has an ``id``, ``names`` (list of str), a polygon ``geometry``, ``area`` (m^2) and
    ``reachable``; an opening a point ``x``, ``y``, ``kind``, ``width`` (m), ``exterior``,
    ``passable`` and, when known, the line ``start``, ``end`` across the gap (as
    ``converter.floorplan.Opening``).
    """
    rooms, openings, shapes = [], [], []
    for source in (roadmap, plan):                  # rooms and openings each from the first
        for room in (getattr(source, "rooms", None) or ()) if not rooms else ():
            geometry = getattr(room, "geometry", None) or getattr(room, "polygon", None)
            shapes.append(geometry)
            names = getattr(room, "names", None)
            if names is None:
                names = [getattr(room, "name", "") or getattr(room, "label", "")]
            area = finite_or_none(getattr(room, "area", None))
            rooms.append({"id": json_text(getattr(room, "id", "")),
                          "names": [json_text(name) for name in names if name],
                          "area": area if area is not None or geometry is None
                          else float(geometry.area),
                          "reachable": getattr(room, "reachable", None)})
        for opening in (getattr(source, "openings", None) or ()) if not openings else ():
            ends = [getattr(opening, "start", None), getattr(opening, "end", None)]
            openings.append({"kind": json_text(getattr(opening, "kind", "")),
                             "width": finite_or_none(getattr(opening, "width", None)),
                             "exterior": bool(getattr(opening, "exterior", False)),
                             "passable": bool(getattr(opening, "passable", True)),
                             "xy": _flat([(opening.x, opening.y)], origin),
                             "line": _flat(ends, origin) if None not in ends else None})
        if rooms and openings:
            break
    for room, polygons in zip(rooms, _polygons_each(shapes, origin)):
        room["polygons"] = polygons     # after the other keys, as the page's JSON lists them
    return rooms, openings


def page_data(plan, roadmap, *, date: str, changes=None, band=None, edges=None) -> dict:
    """Return everything the page shows, as plain JSON-ready values.

    Drawn geometry is in metres relative to ``origin`` (see ``svg.drawing_origin``), rounded
    to 1 mm; node coordinates, lane lengths and weights are exact, as in the GraphML, so the
    page's route search adds up the same numbers as ``clearway route``. Nodes are listed in
    the GraphML's order and lanes in its order with its source and target, so that the page
    builds its graph in the order ``read_graphml`` does and breaks ties alike. `band` is
    ``svg_parts.clearance_band(plan, roadmap)`` and `edges` is
    ``graphml.oriented_edges(roadmap.graph)``, when the caller has them already.
    """
    bounds = _bounds(plan, roadmap)
    origin = drawing_origin(bounds)
    nodes, edges = _graph(roadmap, origin, edges)
    rooms, openings = _rooms(plan, roadmap, origin)
    clearance = roadmap.robot.clearance
    return {
        "title": json_text(f"clearway roadmap \u2014 {plan.source}"),
        "source": json_text(plan.source),
        "date": json_text(date),
        "tool": TOOL_VERSION,
        "caution": SAFETY_CAUTION,
        "robot": _robot_text(roadmap.robot),
        "clearance": clearance,
        "origin": [float(origin[0]), float(origin[1])],
        "bounds": _flat([bounds[:2], bounds[2:]], origin),
        "lane_classes": {"bins": [float(b) for b in lane_bins(clearance)],
                         "colours": list(LANE_COLOURS)},
        "areas": _areas(plan, roadmap, origin, band),
        "nodes": nodes,
        "edges": edges,
        "stations": _stations(plan, roadmap),
        "problems": _problems(plan, roadmap),
        "rooms": rooms,
        "openings": openings,
        "changes": _changes(changes, origin),
    }


def _asset(name: str) -> str:
    return resources.files("clearway.exporters").joinpath(name).read_text(encoding="utf-8")


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_html(plan, roadmap, *, date: str, changes=None, band=None, edges=None) -> bytes:
    """Return roadmap.html as UTF-8 bytes (deterministic for the same input).

    Parameters
    ----------
    plan : converter.floorplan.FloorPlan
    roadmap : roadmap.model.Roadmap
    date : str
        Shown in the page's heading (the CLI passes the drawing's own date).
    changes : roadmap.compare.GraphChanges, optional
        What changed since the previous revision; drawn as a layer when given.
    band : shapely geometry, optional
        ``svg_parts.clearance_band(plan, roadmap)`` when the caller has it already.
    edges : list, optional
        ``graphml.oriented_edges(roadmap.graph)`` when the caller has it already.

    Returns
    -------
    bytes
        A complete HTML document with its script, style and data inline.
    """
    data = page_data(plan, roadmap, date=date, changes=changes, band=band, edges=edges)
    for number in (data["clearance"], *data["bounds"]):
        if not math.isfinite(number):
            raise ValueError(f"{plan.source}: roadmap has a non-finite extent or clearance")
    replacements = {
        "TITLE": html.escape(data["title"]),
        "CAUTION": html.escape(SAFETY_CAUTION),
        "STYLE": _asset("viewer.css"),
        "DATA": script_json(data),
        "SCRIPT": _asset("viewer.js"),
    }
    # one pass, so that nothing inserted is read as a placeholder
    page = _PLACEHOLDER.sub(lambda match: replacements[match.group(1)], _asset("viewer.html"))
    return page.encode("utf-8")
