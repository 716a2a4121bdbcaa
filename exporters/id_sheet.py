"""A labelled sheet of the lane graph: every node and lane id on the plan, a coordinate grid,
and optionally one route drawn over it, so that ids in a report, ``--avoid n35`` or a route
can be found on the floor.

Drawn like the preview (one SVG unit is one metre, y flipped, relative to the same round
origin), with the areas of the plan underneath when they are given.
"""

from __future__ import annotations

import math

import numpy as np
import shapely
from lxml import etree

from clearway.collector import paused_collector
from clearway.exporters.graphml import oriented_edges
from clearway.exporters.svg import SVG_NS, drawing_origin
from clearway.exporters.svg_parts import (AREA_STYLE, BLUE, add_scale_and_arrow, add_text,
                                          nice_length, number, path_data,
                                          point_list)
from clearway.exporters.text import SAFETY_CAUTION, natural_key, xml_text

#: Colours: lanes and their ids, node ids, the grid, the route.
LANE_GREY, LANE_ID, NODE_ID, GRID, ROUTE = "#7A7A7A", "#5A4A8A", "#000000", "#D6D6D6", BLUE


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_id_sheet(graph, *, areas=None, route=None, title: str = "") -> bytes:
    """Return the labelled sheet as SVG bytes (deterministic).

    Parameters
    ----------
    graph : networkx.MultiGraph
        The lane graph (node x, y; edge geometry), metres.
    areas : dict of str to shapely geometry, optional
        Floor areas by role (keys of ``svg_parts.AREA_STYLE``), metres, drawn underneath.
    route : roadmap.routing.Route, optional
        Drawn as a thick line with its two ends named.
    title : str
        First line of the title block.
    """
    points = [(a["x"], a["y"]) for _, a in graph.nodes(data=True)]
    boxes = [shapely.MultiPoint(points).bounds] if points else []
    boxes += [g.bounds for g in (areas or {}).values() if g is not None and not g.is_empty]
    boxes = np.array(boxes if boxes else [(0.0, 0.0, 1.0, 1.0)], dtype=float)
    bounds = (boxes[:, 0].min(), boxes[:, 1].min(), boxes[:, 2].max(), boxes[:, 3].max())
    origin = drawing_origin(bounds)
    xmin, ymin, xmax, ymax = np.subtract(bounds, [*origin, *origin]).tolist()
    size = max(xmax - xmin, ymax - ymin, 1.0)
    pad = 0.06 * size
    font = size / 110
    strip = 9 * font
    left, top = xmin - pad, -ymax - pad
    width, height = xmax - xmin + 2 * pad, ymax - ymin + 2 * pad + strip
    root = etree.Element(f"{{{SVG_NS}}}svg", nsmap={None: SVG_NS}, attrib={
        "version": "1.1", "viewBox": " ".join(number(v) for v in (left, top, width, height)),
        "width": f"{1600:.0f}", "height": f"{1600 * height / width:.0f}",
        "font-family": "DejaVu Sans, Verdana, Arial, sans-serif"})
    etree.SubElement(root, "title").text = xml_text(title or "clearway ids")
    etree.SubElement(root, "desc").text = SAFETY_CAUTION
    etree.SubElement(root, "rect", x=number(left), y=number(top), width=number(width),
                     height=number(height), fill="#ffffff")

    def local(geometry):
        return shapely.transform(geometry, lambda xy: xy - origin)

    floor = etree.SubElement(root, "g", id="floor")
    for role, style in AREA_STYLE.items():
        geometry = (areas or {}).get(role)
        # the boundary is the floor's outline (GeoJSON) or its ribbon: neither helps here
        if geometry is not None and not geometry.is_empty and role not in (
                "band", "free", "boundary"):
            etree.SubElement(floor, "path", d=path_data(local(geometry)), id=f"area-{role}",
                             **{"fill-rule": "evenodd", "opacity": "0.5"}, **style(font))
    _add_grid(root, origin, (xmin, ymin, xmax, ymax), font)
    lanes = etree.SubElement(root, "g", id="lanes", fill="none", stroke=LANE_GREY,
                             **{"stroke-width": number(0.15 * font)})
    ids = etree.SubElement(root, "g", id="ids")
    for edge_id, _, _, _, coords in oriented_edges(graph):
        xy = coords - origin
        etree.SubElement(lanes, "polyline", id=xml_text(f"lane-{edge_id}"),
                         points=point_list(xy))
        middle = shapely.LineString(xy).interpolate(0.5, normalized=True)
        add_text(ids, middle.x, -middle.y - 0.2 * font, xml_text(edge_id), 0.7 * font,
                 colour=LANE_ID, anchor="middle", halo=True)
    if route is not None:
        _add_route(root, graph, route, origin, font)
    nodes = etree.SubElement(root, "g", id="nodes")
    for node in sorted(graph.nodes, key=natural_key):
        attrs = graph.nodes[node]
        x, y = attrs["x"] - origin[0], attrs["y"] - origin[1]
        etree.SubElement(nodes, "circle", cx=number(x), cy=number(-y), r=number(0.22 * font),
                         fill=NODE_ID)
        text = node + (f" {attrs['label']}" if attrs.get("label") else "")
        add_text(ids, x + 0.3 * font, -y - 0.3 * font, xml_text(text), 0.8 * font,
                 colour=NODE_ID, halo=True)
    block = etree.SubElement(root, "g", id="title-block")
    base = -ymin + pad + 1.4 * font
    add_text(block, left + font, base, xml_text(title or "clearway ids"), 1.2 * font,
             weight="bold")
    note = ("node ids (n...) in black beside each node, with the station label; lane ids "
            "(e...) in purple at each lane's middle; grid in metres of the drawing"
            + (f", drawn relative to x {origin[0]:.0f} m, y {origin[1]:.0f} m"
               if origin.any() else ""))
    add_text(block, left + font, base + 1.5 * font, xml_text(note), 0.75 * font)
    add_text(block, left + font, base + 2.7 * font, "CAUTION: " + SAFETY_CAUTION, 0.75 * font,
             weight="bold", colour="#A03000")
    add_scale_and_arrow(block, left + width - 14 * font, base - 1.0 * font, 0.8 * font)
    return etree.tostring(root, xml_declaration=True, encoding="UTF-8", pretty_print=True)


def _add_grid(root, origin, bounds, font) -> None:
    xmin, ymin, xmax, ymax = bounds
    step = nice_length(max(xmax - xmin, ymax - ymin) / 8)
    grid = etree.SubElement(root, "g", id="grid", stroke=GRID,
                            **{"stroke-width": number(0.06 * font)})
    labels = etree.SubElement(root, "g", id="grid-labels")
    for index in range(math.floor((xmin + origin[0]) / step), math.ceil((xmax + origin[0]) / step) + 1):
        x = index * step - origin[0]
        etree.SubElement(grid, "line", x1=number(x), y1=number(-ymax), x2=number(x),
                         y2=number(-ymin))
        add_text(labels, x, -ymax - 0.5 * font, f"x {index * step:g}", 0.7 * font,
                 colour="#666666", anchor="middle")
    for index in range(math.floor((ymin + origin[1]) / step), math.ceil((ymax + origin[1]) / step) + 1):
        y = index * step - origin[1]
        etree.SubElement(grid, "line", x1=number(xmin), y1=number(-y), x2=number(xmax),
                         y2=number(-y))
        add_text(labels, xmin - 0.4 * font, -y + 0.25 * font, f"y {index * step:g}", 0.7 * font,
                 colour="#666666", anchor="end")


def _add_route(root, graph, route, origin, font) -> None:
    group = etree.SubElement(root, "g", id="route")
    xy = shapely.get_coordinates(route.geometry) - origin
    etree.SubElement(group, "polyline", fill="none", stroke=ROUTE, opacity="0.6",
                     points=point_list(xy),
                     **{"stroke-width": number(0.9 * font), "stroke-linecap": "round",
                        "stroke-linejoin": "round"})
    for end, word in ((route.nodes[0], "FROM"), (route.nodes[-1], "TO")):
        attrs = graph.nodes[end]
        name = attrs.get("label") or end
        add_text(group, attrs["x"] - origin[0], -(attrs["y"] - origin[1]) + 1.6 * font,
                 xml_text(f"{word} {name}"), 1.0 * font, weight="bold", colour=ROUTE,
                 anchor="middle", halo=True)
