"""The GraphML layout clearway writes and reads back: the namespace and one key table.

Both the writer (`clearway.exporters.graphml`) and the reader
(`clearway.exporters.graphml_read`) take every key from here, so they cannot disagree.
"""

from __future__ import annotations

#: The GraphML 1.0 namespace.
GRAPHML_NS = "http://graphml.graphdrawing.org/xmlns"
#: XML Schema instance namespace, for ``xsi:schemaLocation``.
XSI_NS = "http://www.w3.org/2001/XMLSchema-instance"
SCHEMA_LOCATION = f"{GRAPHML_NS} http://graphml.graphdrawing.org/xmlns/1.0/graphml.xsd"

#: (domain, attr.name, attr.type) of every key clearway writes, in the order written: by
#: domain (graph, node, edge), then by name.
KEYS: tuple[tuple[str, str, str], ...] = (
    ("graph", "margin", "double"),
    ("graph", "required_clearance", "double"),
    ("graph", "robot_radius", "double"),
    ("graph", "sha256", "string"),
    ("graph", "source", "string"),
    ("graph", "tool_version", "string"),
    ("graph", "units", "string"),
    ("node", "clearance", "double"),
    ("node", "kind", "string"),
    ("node", "label", "string"),
    ("node", "room", "string"),
    ("node", "x", "double"),
    ("node", "y", "double"),
    ("edge", "clearance_min", "double"),
    ("edge", "geometry", "string"),
    ("edge", "length", "double"),
    ("edge", "weight", "double"),
)

#: Keys written only when the graph carries them: what a station is and which way it faces,
#: the room a room node stands for (its id, and its names one a line), a rectangular or car
#: robot's body checks.
OPTIONAL_KEYS: tuple[tuple[str, str, str], ...] = (
    ("node", "room_names", "string"),
    ("node", "room_node", "string"),
    ("node", "heading", "double"),
    ("node", "station_kind", "string"),
    ("node", "reverse_only", "boolean"),
    ("node", "turns", "string"),
    ("edge", "clearance_body", "double"),
)

#: Attributes renamed since files were first written: (domain, old name) -> new name. Older
#: files still read; the graph's `clearance` (the required clearance, radius + margin) was
#: easily taken for the nodes' measured `clearance`.
RENAMED: dict[tuple[str, str], str] = {("graph", "clearance"): "required_clearance"}

#: Attribute names read as numbers whatever attr.type a file declares.
NUMBERS: frozenset[str] = frozenset(
    {name for _, name, kind in KEYS + OPTIONAL_KEYS if kind == "double"}
    | {old for _, old in RENAMED})

_PREFIX = {"graph": "g", "node": "n", "edge": "e"}


def key_id(domain: str, name: str) -> str:
    """Return the id clearway gives the key of `name` in `domain`.

    Examples
    --------
    >>> key_id("graph", "required_clearance"), key_id("edge", "length")
    ('g_required_clearance', 'e_length')
    """
    return f"{_PREFIX[domain]}_{name}"
