"""Write report.json: counts, stations, problems found, robot and source, as plain JSON.

The keys are documented in the README ("report.json"). Lengths are metres in the drawing
frame; the file holds no timestamps, so the same drawing and options give the same bytes.
"""

from __future__ import annotations

import json

import networkx as nx

from clearway.collector import paused_collector
from clearway.exporters.geojson import opening_properties, room_properties
from clearway.exporters.text import SAFETY_CAUTION, TOOL_VERSION, finite_or_none, json_text, natural_key

#: Version of the report layout; raised when a key changes meaning or disappears.
REPORT_FORMAT = 1


def _robot(robot) -> dict:
    if robot.length is None:
        shape, note = "disc", "radius as given"
    else:
        shape = "rectangle"
        note = (f"{robot.length:g} m x {robot.width:g} m footprint heading along the lanes: "
                "lanes need half its width (plus the rotation centre's sideways offset) plus "
                "the margin; the swept footprint is checked on bends and at lane ends; radius "
                "is the circumscribed radius, hypot(length, width) / 2")
    entry = {"shape": shape, "radius": robot.radius, "margin": robot.margin,
             "clearance": robot.clearance, "length": robot.length, "width": robot.width,
             "note": note}
    if robot.has_body:
        entry.update(kind=robot.kind, centre_offset=list(robot.centre),
                     swing_radius=robot.swing, turn_radius=robot.turn_radius or None,
                     reverse=robot.reverse)
    return entry


def _shortfall(item) -> dict:
    """One lane, link or turn the body cannot manage, with what is short."""
    return {"what": item.what, "x": float(item.x), "y": float(item.y),
            "node": json_text(item.node) or None,
            "edges": [json_text(edge) for edge in item.edges],
            "needs": float(item.needs), "has": finite_or_none(item.has),
            "note": json_text(item.note)}


def _components(graph) -> list[list[str]]:
    parts = [sorted(map(str, part), key=natural_key) for part in nx.connected_components(graph)]
    return sorted(parts, key=lambda part: (-len(part), natural_key(part[0])))


def report_data(plan, roadmap) -> dict:
    """Return the report as a dict of plain values (what ``render_report`` writes).

    Parameters
    ----------
    plan : converter.floorplan.FloorPlan
    roadmap : roadmap.model.Roadmap

    Returns
    -------
    dict
        JSON-ready; see the README section "report.json" for every key.
    """
    graph, findings = roadmap.graph, roadmap.findings
    drawn = {station.label: station for station in plan.stations}
    kinds = [data.get("kind") for _, data in graph.nodes(data=True)]
    lane_length = sum(float(data["length"]) for _, _, data in graph.edges(data=True))
    stations = [{
        "label": json_text(s.label), "x": float(s.x), "y": float(s.y),
        "kind": json_text(drawn[s.label].kind) if s.label in drawn else "",
        "heading": drawn[s.label].heading if s.label in drawn else None,
        "node": None if s.node is None else json_text(s.node),
        "component": None if s.component is None else int(s.component), "reachable": bool(s.reachable), "reason": json_text(s.reason),
        "room": json_text(s.room), "standoff": float(s.standoff),
    } for s in findings.stations]
    return {
        "format": REPORT_FORMAT,
        "tool_version": TOOL_VERSION,
        "source": json_text(plan.source),
        "sha256": plan.sha256,
        "drawing_date": plan.drawing_date or None,
        "units": "m",
        "drawing_units": {"units": plan.units, "m_per_unit": plan.m_per_unit,
                          "source": plan.unit_source, "note": json_text(plan.unit_note),
                          "evidence": [json_text(line) for line in plan.unit_evidence]},
        "robot": _robot(roadmap.robot),
        "counts": {"nodes": graph.number_of_nodes(), "edges": graph.number_of_edges(),
                   "junctions": kinds.count("junction"), "ends": kinds.count("end"),
                   "stations": len(plan.stations),
                   "stations_reachable": sum(1 for s in findings.stations if s.reachable)},
        "lane_length": lane_length,
        "components": nx.number_connected_components(graph),
        "component_nodes": [len(part) for part in _components(graph)],
        "stations": stations,
        "rooms": [room_properties(room, roadmap.passages) for room in roadmap.rooms],
        "openings": [{"x": float(p.x), "y": float(p.y), **opening_properties(p)}
                     for p in roadmap.passages],
        "unreachable_pairs": [[json_text(a), json_text(b)] for a, b in findings.unreachable_pairs],
        "pinch_points": [{"x": float(p.x), "y": float(p.y),
                          "clearance": finite_or_none(p.clearance),
                          "edge": json_text(p.edge)} for p in findings.pinch_points],
        "narrow_passages": [{"x": float(p.x), "y": float(p.y), "width": float(p.width),
                             "blocks": [json_text(label) for label in p.blocks]}
                            for p in findings.narrow_passages],
        "leaks": [{"x": float(leak.x), "y": float(leak.y), "width": float(leak.width)}
                  for leak in plan.leaks],
        "personnel_clearance": {
            "required": finite_or_none(findings.personnel_clearance),
            "flags": [{"edge": json_text(f.edge), "x": float(f.x), "y": float(f.y),
                       "clearance": float(f.clearance),
                       "side_clearance": float(f.side_clearance),
                       "required": float(f.required)} for f in findings.personnel]},
        "layers_without_role": [_left_out(layer) for layer in plan.left_out if not layer.ignored],
        "layers_ignored": [_left_out(layer) for layer in plan.left_out if layer.ignored],
        "warnings": [json_text(w) for w in (*plan.warnings, *findings.warnings)],
        "repairs": [json_text(notice) for notice in plan.repairs],
        "caution": SAFETY_CAUTION,
    } | ({"body": {
        "lanes": [_shortfall(s) for s in findings.body if s.what in ("lane", "link")],
        "turns": [_shortfall(s) for s in findings.body if s.what in ("turn", "turn round")],
        "reverse_only": sorted((json_text(node) for node, flag in
                                graph.nodes(data="reverse_only") if flag), key=natural_key),
    }} if roadmap.robot.has_body else {})


def _left_out(layer) -> dict:
    """A layer no role takes: its name, entities by DXF type, and the role it missed."""
    return {"name": json_text(layer.name), "entities": dict(layer.entities),
            "default_role": layer.default_role or None,
            "replaced_by": layer.replaced_by or None}


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_report(plan, roadmap, *, data=None) -> bytes:
    """Return report.json bytes (UTF-8, indented, deterministic, no timestamps).

    Parameters
    ----------
    plan : converter.floorplan.FloorPlan
    roadmap : roadmap.model.Roadmap
    data : dict, optional
        ``report_data(plan, roadmap)`` when the caller has it already.

    Returns
    -------
    bytes
    """
    data = report_data(plan, roadmap) if data is None else data
    text = json.dumps(data, ensure_ascii=False, indent=2, allow_nan=False)
    return (text + "\n").encode("utf-8")
