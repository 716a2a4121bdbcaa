"""The files build wrote beside a graph: report.json (findings), roadmap.geojson (floor, rooms).

`route` and `compare` read a GraphML file, which holds the lanes only. The findings that
explain a missing route, and the floor areas to draw a route or a change on, are in the
files written with it; they are used only when they describe the same drawing (the same
SHA-256 as the graph) and, for the floor, are in the drawing's local metres.
"""

from __future__ import annotations

import json
import os

import shapely

#: Largest side file read, bytes.
MAX_SIDE_FILE = 256 * 2**20


def _load_beside(graph_file: str, graph, name: str) -> dict | None:
    path = os.path.join(os.path.dirname(os.path.abspath(graph_file)), name)
    try:
        with open(path, "rb") as file:
            document = json.loads(file.read(MAX_SIDE_FILE))
    except (OSError, ValueError):
        return None
    sha256 = graph.graph.get("sha256")
    if not isinstance(document, dict) or not sha256 or document.get("sha256") != sha256:
        return None
    return document


def report_beside(graph_file: str, graph) -> dict | None:
    """Return report.json beside `graph_file` when it describes the same drawing, else None."""
    return _load_beside(graph_file, graph, "report.json")


def _local_features(graph_file: str, graph, element: str) -> dict | None:
    """{id or role: geometry} of roadmap.geojson's `element` features, metres, or None."""
    document = _load_beside(graph_file, graph, "roadmap.geojson")
    if document is None or (document.get("coordinate_system") or {}).get("type") != "local":
        return None
    found = {}
    for feature in document.get("features") or ():
        properties = feature.get("properties") or {}
        if properties.get("element") != element:
            continue
        try:
            geometry = shapely.geometry.shape(feature["geometry"])
        except (KeyError, TypeError, ValueError, shapely.errors.GEOSException):
            return None
        found[str(properties.get("role" if element == "area" else "id"))] = geometry
    return found


def areas_beside(graph_file: str, graph) -> dict | None:
    """Return {role: geometry} of roadmap.geojson beside `graph_file`, metres, or None.

    None when the file is missing, describes another drawing, or is in WGS84 (--anchor).
    """
    return _local_features(graph_file, graph, "area")


def rooms_beside(graph_file: str, graph) -> dict | None:
    """Return {room id: polygon} of roadmap.geojson beside `graph_file`, metres, or None.

    None as for `areas_beside`; an empty dict when the drawing had no rooms.
    """
    return _local_features(graph_file, graph, "room")
