"""Hand-built lane graphs and an independent GraphML writer that follows the file spec.

The writer is deliberately separate from exporters/graphml.py: reading files written to the
published layout (GraphML 1.0, typed <key>s found by attr.name) checks the reader against the
spec rather than against our own exporter.
"""

from __future__ import annotations

import math

import networkx as nx
from lxml import etree
from shapely.geometry import LineString

GRAPHML_NS = "http://graphml.graphdrawing.org/xmlns"  # source: GraphML 1.0 primer, sec. 2


def lane_graph(nodes, edges, **graph_attrs) -> nx.MultiGraph:
    """nodes: {id: (x, y) or (x, y, kind, label, clearance)}; edges: [(id, u, v, extra)]."""
    graph = nx.MultiGraph(units="m", **graph_attrs)
    for node, spec in nodes.items():
        x, y, *rest = spec
        kind, label, clearance = (list(rest) + ["waypoint", "", 1.0][len(rest):])[:3]
        graph.add_node(node, x=float(x), y=float(y), kind=kind, label=label,
                       clearance=float(clearance))
    for edge in edges:
        key, u, v, *extra = edge
        options = dict(extra[0]) if extra else {}
        start = (graph.nodes[u]["x"], graph.nodes[u]["y"])
        end = (graph.nodes[v]["x"], graph.nodes[v]["y"])
        line = LineString([start, *options.pop("via", []), end])
        length = float(line.length)
        graph.add_edge(u, v, key=key, geometry=line, length=length,
                       weight=float(options.pop("weight", length)),
                       clearance_min=float(options.pop("clearance_min", 1.0)))
    return graph


def grid_graph(columns: int, rows: int, spacing: float = 2.0, *, prefix_offset: int = 0,
               jitter=None) -> nx.MultiGraph:
    """A rectangular grid of lanes; node n<k> at column i, row j (k = j * columns + i)."""
    nodes, edges = {}, []
    for j in range(rows):
        for i in range(columns):
            k = j * columns + i
            dx, dy = jitter(k) if jitter else (0.0, 0.0)
            degree = (i > 0) + (i < columns - 1) + (j > 0) + (j < rows - 1)
            kind = "end" if degree == 1 else "junction" if degree >= 3 else "waypoint"
            nodes[f"n{k + prefix_offset}"] = (i * spacing + dx, j * spacing + dy, kind, "", 1.0)
    count = 0
    for j in range(rows):
        for i in range(columns):
            k = j * columns + i + prefix_offset
            if i < columns - 1:
                edges.append((f"e{count}", f"n{k}", f"n{k + 1}"))
                count += 1
            if j < rows - 1:
                edges.append((f"e{count}", f"n{k}", f"n{k + columns}"))
                count += 1
    return lane_graph(nodes, edges)


def write_spec_graphml(graph: nx.MultiGraph, *, omit=()) -> bytes:
    """Write `graph` as the GraphML layout clearway publishes; `omit` drops attributes."""
    keys = [("graph", "units", "string"), ("graph", "source", "string"),
            ("graph", "tool_version", "string"), ("graph", "robot_radius", "double"),
            ("node", "x", "double"), ("node", "y", "double"), ("node", "clearance", "double"),
            ("node", "kind", "string"), ("node", "label", "string"),
            ("edge", "length", "double"), ("edge", "weight", "double"),
            ("edge", "clearance_min", "double"), ("edge", "geometry", "string")]
    keys = [key for key in keys if key[1] not in omit]
    root = etree.Element(f"{{{GRAPHML_NS}}}graphml", nsmap={None: GRAPHML_NS})
    ids = {}
    for index, (scope, name, kind) in enumerate(keys):
        ids[scope, name] = f"k{index}"  # ids deliberately unlike the attribute names
        etree.SubElement(root, f"{{{GRAPHML_NS}}}key", id=f"k{index}", attrib={
            "for": scope, "attr.name": name, "attr.type": kind})
    body = etree.SubElement(root, f"{{{GRAPHML_NS}}}graph", edgedefault="undirected")

    def data(parent, scope, name, value):
        if (scope, name) not in ids or value is None:
            return
        if isinstance(value, float):
            text = repr(value) if math.isfinite(value) else "NaN"
        elif isinstance(value, LineString):
            text = value.wkt
        else:
            text = str(value)
        etree.SubElement(parent, f"{{{GRAPHML_NS}}}data", key=ids[scope, name]).text = text

    for name in ("units", "source", "tool_version", "robot_radius"):
        data(body, "graph", name, graph.graph.get(name))
    for node, attrs in graph.nodes(data=True):
        element = etree.SubElement(body, f"{{{GRAPHML_NS}}}node", id=node)
        for name in ("x", "y", "clearance", "kind", "label"):
            data(element, "node", name, attrs.get(name))
    for u, v, key, attrs in graph.edges(keys=True, data=True):
        line = attrs["geometry"]
        if tuple(line.coords[0]) != (graph.nodes[u]["x"], graph.nodes[u]["y"]):
            line = LineString(line.coords[::-1])
        element = etree.SubElement(body, f"{{{GRAPHML_NS}}}edge", id=key, source=u, target=v)
        for name in ("length", "weight", "clearance_min"):
            data(element, "edge", name, attrs.get(name))
        data(element, "edge", "geometry", line)
    return etree.tostring(root, xml_declaration=True, encoding="UTF-8", pretty_print=True)
