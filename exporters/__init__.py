"""Exporters: turn a FloorPlan and a Roadmap into GraphML, GeoJSON, SVG, HTML, report.json,
DXF and CSV bytes.

They take plain values (the networkx graph with its documented attributes, the floor plan's
geometries, the findings) and never reach back into the roadmap's internals. ``write_outputs``
writes a set of files atomically; ``finish_interrupted_set`` completes one a killed build left.
"""

from clearway.exporters.anchor import check_anchor
from clearway.exporters.compare_svg import render_compare_svg
from clearway.exporters.dxf import render_dxf
from clearway.exporters.files import finish_interrupted_set, write_outputs
from clearway.exporters.geojson import render_geojson
from clearway.exporters.graphml import render_graphml
from clearway.exporters.graphml_read import read_graphml
from clearway.exporters.html import render_html
from clearway.exporters.report import render_report, summarize
from clearway.exporters.svg import render_svg
from clearway.exporters.tables import render_tables
from clearway.exporters.text import SAFETY_CAUTION

__all__ = [
    "SAFETY_CAUTION",
    "check_anchor",
    "finish_interrupted_set",
    "read_graphml",
    "render_compare_svg",
    "render_dxf",
    "render_geojson",
    "render_graphml",
    "render_html",
    "render_report",
    "render_svg",
    "render_tables",
    "summarize",
    "write_outputs",
]
