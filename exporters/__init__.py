"""Exporters: turn a FloorPlan and a Roadmap into GraphML, GeoJSON, SVG, HTML, report.json,
DXF and CSV bytes.

They take plain values (the networkx graph with its documented attributes, the floor plan's
geometries, the findings) and never reach back into the roadmap's internals. ``write_outputs``
writes a set of files atomically; ``finish_interrupted_set`` completes one a killed build left.
"""

from clearway.lazy import lazy_exports

#: Public name -> the module defining it; imported on first use (see clearway/lazy.py).
__getattr__, __dir__, __all__ = lazy_exports(__name__, {
    "FloorDrawn": "floor",
    "SAFETY_CAUTION": "text",
    "check_anchor": "anchor",
    "draw_floor": "floor",
    "clearance_band": "svg_parts",
    "finish_interrupted_set": "files",
    "oriented_edges": "graphml",
    "read_graphml": "graphml_read",
    "render_id_sheet": "id_sheet",
    "render_compare_svg": "compare_svg",
    "render_dxf": "dxf",
    "render_geojson": "geojson",
    "render_graph": "graphml",
    "render_graphml": "graphml",
    "render_html": "html",
    "render_report": "report",
    "render_svg": "svg",
    "render_tables": "tables",
    "report_data": "report",
    "write_outputs": "files",
})
