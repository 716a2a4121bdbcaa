"""Read a clearway GraphML file from any source, safely, into the in-memory graph.

The file may come from another site, another tool version or an attacker. The parser never
resolves entities, never loads a DTD, never touches the network and refuses huge trees; any
DOCTYPE or ENTITY declaration is refused outright, so neither an external entity (a local file
read) nor entity expansion ("billion laughs") gets anywhere.
"""

from __future__ import annotations

import io
import math
import os
from typing import BinaryIO

import networkx as nx
import shapely
from lxml import etree
from shapely.geometry import LineString

from clearway.errors import GraphFileError, LimitError
from clearway.exporters.graphml_keys import GRAPHML_NS, NUMBERS, RENAMED

#: Largest file read by default, bytes (a 20,000-bay warehouse graph is a few MiB).
MAX_GRAPHML_BYTES = 256 * 2**20

#: An edge's geometry must start and end within this distance of its nodes, metres.
ENDPOINT_TOLERANCE = 0.01

_NUMBER_TYPES = {"int", "long", "float", "double"}
_UNSAFE = "DOCTYPE or ENTITY declarations are not allowed in a graph file; refusing to read it"
_DECLARATIONS = (b"<!DOCTYPE", b"<!ENTITY", b"<!doctype", b"<!entity")


def read_graphml(source: str | os.PathLike | bytes | BinaryIO, *,
                 max_bytes: int = MAX_GRAPHML_BYTES) -> nx.MultiGraph:
    """Read a clearway GraphML file into an undirected MultiGraph.

    Parameters
    ----------
    source : path, bytes or binary file
        The GraphML document.
    max_bytes : int
        Refuse larger documents, bytes.

    Returns
    -------
    networkx.MultiGraph
        String node ids with attributes x, y, clearance (float, m; NaN when the file has
        none), kind and label (str); edge key = edge id; edge attributes length, weight,
        clearance_min (float, m) and geometry (LineString from source to target node).
        Graph attributes as written (units, source, sha256, tool_version, robot_radius,
        margin, required_clearance; an older file's ``clearance`` is read as
        required_clearance).
        Optional attributes missing from older files are filled in: weight = length,
        length = geometry length, geometry = straight segment, label = "", kind from degree.

    Raises
    ------
    GraphFileError
        The document is unsafe (DOCTYPE / ENTITY), not XML, not GraphML, or not a clearway
        graph (no x/y keys, an edge to a missing node, a non-numeric coordinate, bad WKT).
    LimitError
        The document is larger than `max_bytes`.

    Examples
    --------
    >>> graph = read_graphml(b'''<graphml xmlns="http://graphml.graphdrawing.org/xmlns">
    ... <key id="d0" for="node" attr.name="x" attr.type="double"/>
    ... <key id="d1" for="node" attr.name="y" attr.type="double"/>
    ... <graph edgedefault="undirected"><node id="n0"><data key="d0">0</data>
    ... <data key="d1">0</data></node><node id="n1"><data key="d0">3</data>
    ... <data key="d1">4</data></node><edge id="e0" source="n0" target="n1"/></graph></graphml>''')
    >>> graph.edges["n0", "n1", "e0"]["length"]
    5.0
    """
    name, data = _load(source, max_bytes)
    if any(marker in data for marker in _DECLARATIONS):
        raise GraphFileError(f"{name}: {_UNSAFE}")
    parser = etree.XMLParser(resolve_entities=False, no_network=True, load_dtd=False,
                             huge_tree=False, remove_comments=True, remove_pis=True)
    try:
        root = etree.fromstring(data, parser)
    except etree.XMLSyntaxError as err:
        message = str(err).splitlines()[0] if str(err) else "syntax error"
        if "entity" in message.lower():
            raise GraphFileError(f"{name}: {_UNSAFE}") from None
        raise GraphFileError(f"{name}: {_not_xml(data, err)}") from None
    docinfo = root.getroottree().docinfo
    if docinfo.internalDTD is not None or docinfo.doctype:
        # reached only by encodings the byte scan cannot see (e.g. UTF-16)
        raise GraphFileError(f"{name}: {_UNSAFE}")
    return _build_graph(name, root)


def _not_xml(data: bytes, err: etree.XMLSyntaxError) -> str:
    """Say in one line what the file is instead, without the XML parser's wording."""
    head = data.lstrip()[:200]
    if not head.startswith(b"<"):
        kind = ("a DXF drawing (run clearway build on it first)"
                if head.startswith(b"0") and b"SECTION" in head
                else "JSON" if head[:1] in (b"{", b"[") else "not XML")
        return f"not a GraphML file: it is {kind}; give the roadmap.graphml that build wrote"
    line = getattr(err, "lineno", None)
    return ("not a GraphML file: not well-formed XML" + (f" (line {line})" if line else "")
            + "; the file may be cut short or damaged")


def _load(source, max_bytes: int) -> tuple[str, bytes]:
    if isinstance(source, (bytes, bytearray, memoryview)):
        name, data = "<graph bytes>", bytes(source)
    elif isinstance(source, (str, os.PathLike)):
        name = str(source)
        try:
            with open(source, "rb") as file:
                data = file.read(max_bytes + 1)
        except FileNotFoundError:
            raise GraphFileError(f"{name}: graph file not found") from None
        except OSError as err:
            raise GraphFileError(f"{name}: cannot read graph file ({err.strerror})") from None
    elif isinstance(source, io.IOBase) or hasattr(source, "read"):
        name = str(getattr(source, "name", "<graph stream>"))
        data = source.read(max_bytes + 1)
        if not isinstance(data, bytes):
            raise TypeError(f"{name}: open the graph file in binary mode")
    else:
        raise TypeError(f"source must be a path, bytes or a binary file, "
                        f"got {type(source).__name__}")
    if len(data) > max_bytes:
        raise LimitError(f"{name}: graph file is larger than {max_bytes} bytes; "
                         "pass a larger max_bytes if it is genuine")
    if not data.strip():
        raise GraphFileError(f"{name}: graph file is empty")
    return name, data


def _local(tag) -> str:
    return etree.QName(tag).localname if isinstance(tag, str) else ""


def _children(element, localname: str) -> list:
    return [child for child in element if _local(child.tag) == localname]


def _build_graph(name: str, root) -> nx.MultiGraph:
    if _local(root.tag) != "graphml" or etree.QName(root).namespace not in (GRAPHML_NS, None):
        raise GraphFileError(f"{name}: root element is <{_local(root.tag) or root.tag}>, "
                             "not <graphml>; this is not a GraphML file")
    keys = _read_keys(name, root)
    graphs = _children(root, "graph")
    if len(graphs) != 1:
        raise GraphFileError(f"{name}: expected exactly one <graph>, found {len(graphs)}")
    element = graphs[0]
    if element.get("edgedefault", "directed") != "undirected":
        raise GraphFileError(f"{name}: graph is directed; clearway lane graphs are undirected")
    node_names = {keys[key][1] for key in keys if keys[key][0] in ("node", "all")}
    if not {"x", "y"} <= node_names:
        raise GraphFileError(f"{name}: no node x/y keys; this is not a clearway graph")
    graph = nx.MultiGraph()
    graph.graph.update(_read_data(name, "graph", element, keys))
    for (domain, old), new in RENAMED.items():     # files written before the rename
        if domain == "graph" and old in graph.graph:
            graph.graph.setdefault(new, graph.graph.pop(old))
    units = graph.graph.get("units", "m")
    if units != "m":
        raise GraphFileError(f"{name}: graph units are {units!r}; clearway graphs are in 'm'")
    for node in _children(element, "node"):
        _add_node(name, graph, node, keys)
    seen: set[str] = set()
    for index, edge in enumerate(_children(element, "edge")):
        _add_edge(name, graph, edge, keys, index, seen)
    for node, attrs in graph.nodes(data=True):
        if "kind" not in attrs:
            degree = graph.degree(node)
            attrs["kind"] = ("station" if attrs["label"] else "end" if degree == 1
                             else "junction" if degree >= 3 else "waypoint")
    return graph


def _read_keys(name: str, root) -> dict[str, tuple[str, str, str, str | None]]:
    keys = {}
    for key in _children(root, "key"):
        key_id, attr_name = key.get("id"), key.get("attr.name")
        if key_id is None or attr_name is None:
            raise GraphFileError(f"{name}: <key> without id or attr.name")
        defaults = _children(key, "default")
        keys[key_id] = (key.get("for", "all"), attr_name, key.get("attr.type", "string"),
                        defaults[0].text if defaults else None)
    return keys


def _convert(name: str, where: str, attr: str, kind: str, text: str | None):
    text = "" if text is None else text
    if attr in NUMBERS or kind in _NUMBER_TYPES:
        try:
            return float(text)
        except ValueError:
            raise GraphFileError(f"{name}: {where} has non-numeric {attr} {text[:40]!r}") from None
    if kind == "boolean":
        return text.strip().lower() in ("true", "1")
    return text


def _read_data(name: str, scope: str, element, keys) -> dict:
    values = {key[1]: _convert(name, scope, key[1], key[2], key[3])
              for key in keys.values() if key[0] in (scope, "all") and key[3] is not None}
    for data in _children(element, "data"):
        key = keys.get(data.get("key"))
        if key is None:
            raise GraphFileError(f"{name}: {scope} data refers to undeclared key "
                                 f"{data.get('key')!r}")
        values[key[1]] = _convert(name, scope, key[1], key[2], data.text)
    return values


def _add_node(name: str, graph: nx.MultiGraph, element, keys) -> None:
    node = element.get("id")
    if node is None:
        raise GraphFileError(f"{name}: a <node> has no id")
    if node in graph:
        raise GraphFileError(f"{name}: node {node!r} is declared twice")
    values = _read_data(name, f"node {node!r}", element, keys)
    for axis in ("x", "y"):
        if not math.isfinite(values.get(axis, math.nan)):
            raise GraphFileError(f"{name}: node {node!r} has no finite {axis} coordinate")
    values.setdefault("clearance", math.nan)
    values.setdefault("label", "")
    values["label"] = str(values["label"])
    graph.add_node(node, **values)


def _add_edge(name: str, graph: nx.MultiGraph, element, keys, index: int,
              seen: set[str]) -> None:
    source, target = element.get("source"), element.get("target")
    edge = element.get("id") or f"e-unnamed-{index}"
    where = f"edge {edge!r}"
    for end in (source, target):
        if end is None or end not in graph:
            raise GraphFileError(f"{name}: {where} refers to missing node {end!r}")
    values = _read_data(name, where, element, keys)
    start = (graph.nodes[source]["x"], graph.nodes[source]["y"])
    end = (graph.nodes[target]["x"], graph.nodes[target]["y"])
    wkt = values.get("geometry", "")
    if wkt:
        try:
            geometry = shapely.from_wkt(wkt)
        except shapely.errors.GEOSException:
            raise GraphFileError(f"{name}: {where} has unreadable WKT geometry "
                                 f"{wkt[:40]!r}") from None
        if not isinstance(geometry, LineString) or geometry.is_empty:
            raise GraphFileError(f"{name}: {where} geometry is {geometry.geom_type}, "
                                 "not a LINESTRING")
        geometry = _orient(name, where, geometry, start, end)
    else:
        geometry = LineString([start, end])
    values["geometry"] = geometry
    if not math.isfinite(values.get("length", math.nan)):
        values["length"] = float(geometry.length)
    if not math.isfinite(values.get("weight", math.nan)):
        values["weight"] = values["length"]
    if values["weight"] < 0 or values["length"] < 0:
        raise GraphFileError(f"{name}: {where} has a negative length or weight")
    values.setdefault("clearance_min", math.nan)
    if edge in seen:
        raise GraphFileError(f"{name}: edge id {edge!r} is used twice")
    seen.add(edge)
    graph.add_edge(source, target, key=edge, **values)


def _orient(name: str, where: str, geometry: LineString, start, end) -> LineString:
    coords = shapely.get_coordinates(geometry)
    first, last = coords[0], coords[-1]
    forward = max(math.dist(first, start), math.dist(last, end))
    backward = max(math.dist(first, end), math.dist(last, start))
    if min(forward, backward) > ENDPOINT_TOLERANCE:
        raise GraphFileError(f"{name}: {where} geometry does not join its two nodes "
                             f"(off by {min(forward, backward):.3f} m)")
    return geometry if forward <= backward else LineString(coords[::-1])
