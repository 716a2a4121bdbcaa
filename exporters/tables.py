"""Write the lane graph as two CSV tables for spreadsheets: nodes.csv and lanes.csv.

RFC 4180 CSV (comma separated, CRLF line ends, fields with commas, quotes or line breaks
quoted), UTF-8 with no byte-order mark, one header row. Numbers are metres in the drawing
frame, written exactly (Python's shortest round-trip form); an unknown clearance, and the
heading of a node that is no block station, is empty.
A text cell that a spreadsheet would run as a formula (it starts with ``=``, ``+``, ``-``,
``@``, a tab or a carriage return) gets a leading apostrophe, as OWASP advises against
CSV injection; labels come from drawings other people made.
"""

from __future__ import annotations

import csv
import io
import math

from clearway.collector import paused_collector
from clearway.exporters.graphml import oriented_edges
from clearway.exporters.text import exact_float, natural_key

NODE_COLUMNS = ("id", "kind", "label", "x", "y", "clearance", "station_kind", "heading")
LANE_COLUMNS = ("id", "source", "target", "length", "weight", "clearance_min")
_FORMULA_START = ("=", "+", "-", "@", "\t", "\r")


def _text(value: object) -> str:
    text = str(value)
    return "'" + text if text.startswith(_FORMULA_START) else text


def _number(value) -> str:
    value = float(value)
    return exact_float(value) if math.isfinite(value) else ""


def _table(columns, rows) -> bytes:
    stream = io.StringIO(newline="")
    writer = csv.writer(stream, lineterminator="\r\n")
    writer.writerow(columns)
    writer.writerows(rows)
    return stream.getvalue().encode("utf-8")


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_tables(roadmap) -> dict[str, bytes]:
    """Return {"nodes.csv": bytes, "lanes.csv": bytes} for the roadmap's graph.

    Rows come in natural id order (n2 before n10); lanes run from source to target as in
    the GraphML.
    """
    graph = roadmap.graph
    nodes = [(_text(node), _text(attrs.get("kind", "")), _text(attrs.get("label", "")),
              _number(attrs["x"]), _number(attrs["y"]),
              _number(attrs.get("clearance", math.nan)), _text(attrs.get("station_kind", "")),
              _number(attrs.get("heading", math.nan)))
             for node, attrs in ((n, graph.nodes[n]) for n in sorted(graph, key=natural_key))]
    lanes = [(_text(edge_id), _text(source), _text(target), _number(attrs["length"]),
              _number(attrs["weight"]), _number(attrs.get("clearance_min", math.nan)))
             for edge_id, source, target, attrs, _ in oriented_edges(graph)]
    return {"nodes.csv": _table(NODE_COLUMNS, nodes), "lanes.csv": _table(LANE_COLUMNS, lanes)}
