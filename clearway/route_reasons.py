"""Why two stations or rooms have no route, told from the report.json written beside the graph.

The GraphML file holds the lanes only; the findings that explain a missing route (a station
cut off by a door narrower than the robot needs, a station in an obstacle's clearance band)
are in report.json (see `clearway.beside`).
"""

from __future__ import annotations

import networkx as nx

from clearway.beside import report_beside
from clearway.roadmap import display_name, resolve_node, shortest_route


def no_route_reason(graph_file: str, graph: nx.MultiGraph, ends, avoid=()) -> str:
    """Return why `ends` (as typed) are not connected, in the user's labels; "" if unknown.

    Parameters
    ----------
    graph_file : str
        The GraphML file read; report.json in the same folder supplies the findings.
    graph : networkx.MultiGraph
        The graph read from it.
    ends : (str, str)
        The two ends as the user typed them (labels or node ids).
    avoid : iterable of str
        The nodes the route was told to avoid.
    """
    try:
        nodes = [resolve_node(graph, name) for name in ends]
    except ValueError:
        return ""
    if avoid:
        try:
            shortest_route(graph, *nodes)
            return "every route passes a node you asked to avoid"
        except (nx.NetworkXNoPath, ValueError):
            pass
    labels = [graph.nodes[node].get("label") or "" for node in nodes]
    report = report_beside(graph_file, graph)
    if report is None:
        return ""
    required = graph.graph.get("required_clearance")
    for passage in report.get("narrow_passages") or ():
        blocked = [label for label in labels if label and label in (passage.get("blocks") or ())]
        if len(blocked) == 1:
            need = (f", the robot needs {2 * required:.2f} m" if isinstance(required, float)
                    else "")
            return (f"{blocked[0]} is cut off by a passage {passage['width']:.2f} m wide at "
                    f"({passage['x']:.2f}, {passage['y']:.2f}){need}")
    for station in report.get("stations") or ():
        if station.get("label") in labels and not station.get("reachable") and \
                station.get("reason"):
            return f"{station['label']}: {station['reason']}"
    rooms = {graph.nodes[node].get("room_node"): node for node in nodes}
    for room in report.get("rooms") or ():
        if room.get("id") in rooms and not room.get("reachable") and room.get("reason"):
            return f"{display_name(graph, rooms[room['id']])}: {room['reason']}"
    return ""
