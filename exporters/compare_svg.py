"""Draw two revisions of a lane graph over each other with their differences marked.

Colours come from the Okabe-Ito palette, which stays distinguishable with the common forms of
colour blindness, and every change also differs in line style or marker shape, so the drawing
reads in grey-scale print too: removed lanes are dashed vermilion, added lanes solid blue,
moved nodes black arrows, new pinch points yellow diamonds, unchanged lanes thin grey.

References
----------
.. [OI08] M. Okabe, K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", J*FLY, 2008.
"""

from __future__ import annotations

import math
from xml.sax.saxutils import escape

import networkx as nx
import numpy as np
import shapely

from clearway.collector import paused_collector
from clearway.exporters.svg_parts import nice_length
from clearway.exporters.text import SAFETY_CAUTION, xml_text
from clearway.roadmap.compare import GraphChanges

#: Okabe-Ito colours by role.
COLOURS = {"unchanged": "#999999", "removed": "#D55E00", "added": "#0072B2",
           "moved": "#000000", "pinch": "#F0E442", "station": "#009E73",
           "obstacle": "#CC79A7"}
#: Floor areas drawn under the lanes: role -> fill.
FLOOR_FILLS = {"boundary": "#EFEFEF", "shared": "#FBF6CC", "keepout": "#F6DCCB",
               "racking": "#C9DCEB", "wall": "#9A9A9A"}
#: Obstacle roles whose changes are outlined.
OBSTACLE_ROLES = ("wall", "racking", "keepout")
#: A move shorter than this on the page gets no arrow, pixels.
MIN_ARROW_PX = 3



def _text(value: str) -> str:
    """Escape text for SVG; characters XML 1.0 cannot hold are dropped (as in every export)."""
    return escape(xml_text(value))



@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_compare_svg(old: nx.MultiGraph, new: nx.MultiGraph, changes: GraphChanges, *,
                       width: float = 1200.0, title: str = "", floor: dict | None = None,
                       floor_old: dict | None = None) -> bytes:
    """Render both graphs and `changes` as one SVG document.

    Parameters
    ----------
    old, new : networkx.MultiGraph
        The two revisions, metres.
    changes : GraphChanges
        From ``roadmap.compare_graphs(old, new)``.
    width : float
        Width of the drawing area, pixels (> 0).
    title : str
        Shown above the legend (escaped).
    floor, floor_old : dict of str to shapely geometry, optional
        Floor areas by role (wall, racking, keepout, shared, boundary; metres) of the new
        and the old revision. The new floor is drawn under the lanes; obstacles that only
        one revision has are outlined, so the change that caused the others shows.

    Returns
    -------
    bytes
        UTF-8 SVG 1.1. Elements carry classes ``lane-unchanged``, ``lane-removed``,
        ``lane-added``, ``node-added``, ``node-removed``, ``node-moved``, ``pinch``,
        ``station`` so scripts can count them.
    """
    if not (math.isfinite(width) and width > 0):
        raise ValueError(f"width must be > 0 px, got {width}")
    xy = [(a["x"], a["y"]) for g in (old, new) for _, a in g.nodes(data=True)]
    for graph in (old, new):
        for *_, line in graph.edges(data="geometry"):
            xy.extend(shapely.get_coordinates(line).tolist())
    for area in (floor or {}).values():
        if area is not None and not area.is_empty:
            xmin, ymin, xmax, ymax = area.bounds
            xy.extend([(xmin, ymin), (xmax, ymax)])
    points = np.asarray(xy, dtype=float).reshape(-1, 2)
    low = points.min(axis=0) if len(points) else np.zeros(2)
    high = points.max(axis=0) if len(points) else np.ones(2)
    span = max(float((high - low).max()), 1e-9)
    pad, label_room = 30.0, 150.0   # label_room: station labels right of the drawing
    scale = (width - 2 * pad - label_room) / span
    height = float((high[1] - low[1]) * scale + 2 * pad)
    legend_height = 206.0

    def to_px(coords) -> str:
        coords = np.asarray(coords, dtype=float).reshape(-1, 2)
        px = pad + (coords[:, 0] - low[0]) * scale
        py = legend_height + pad + (high[1] - coords[:, 1]) * scale
        return " ".join(f"{a:.2f},{b:.2f}" for a, b in zip(px, py))

    def node_px(graph, node) -> tuple[float, float]:
        x, y = to_px((graph.nodes[node]["x"], graph.nodes[node]["y"])).split(" ")[0].split(",")
        return float(x), float(y)

    removed = {change.id for change in changes.edges_removed}
    added = {change.id for change in changes.edges_added}
    body = _floor(floor, floor_old, to_px)

    def lane(line, role: str, style: str, note: str = "") -> str:
        title = f"<title>{_text(note)}</title>" if note else ""
        return (f'<polyline class="lane-{role}" points="{to_px(shapely.get_coordinates(line))}"'
                f' stroke="{COLOURS[role]}" {style} fill="none">{title}</polyline>')

    new_lanes = sorted(new.edges(keys=True, data="geometry"), key=lambda e: e[2])
    body += [lane(line, "unchanged", 'stroke-width="1.5"')
             for *_, key, line in new_lanes if key not in added]
    body += [lane(line, "removed", 'stroke-width="3" stroke-dasharray="8 5"', f"removed lane {key}")
             for *_, key, line in sorted(old.edges(keys=True, data="geometry"),
                                         key=lambda e: e[2]) if key in removed]
    body += [lane(line, "added", 'stroke-width="3"', f"added lane {key}")
             for *_, key, line in new_lanes if key in added]
    for label, node in sorted((a["label"], n) for n, a in new.nodes(data=True) if a.get("label")):
        x, y = node_px(new, node)
        body.append(f'<g class="station"><rect x="{x - 4:.2f}" y="{y - 4:.2f}" width="8"'
                    f' height="8" fill="{COLOURS["station"]}"/><text x="{x + 7:.2f}"'
                    f' y="{y - 6:.2f}" font-size="12">{_text(label)}</text></g>')
    for change in changes.nodes_removed:
        x, y = node_px(old, change.id)
        body.append(f'<path class="node-removed" d="M{x - 5:.2f},{y - 5:.2f} l10,10 m0,-10 l-10,10"'
                    f' stroke="{COLOURS["removed"]}" stroke-width="2.5">'
                    f'<title>{_text("removed node " + change.id)}</title></path>')
        if change.label:
            body.append(f'<text class="station-removed" x="{x + 7:.2f}" y="{y - 6:.2f}"'
                        f' font-size="12" fill="{COLOURS["removed"]}">'
                        f'{_text(change.label + " (removed)")}</text>')
    for change in changes.nodes_added:
        x, y = node_px(new, change.id)
        body.append(f'<circle class="node-added" cx="{x:.2f}" cy="{y:.2f}" r="4.5"'
                    f' fill="{COLOURS["added"]}"><title>{_text("added node " + change.id)}'
                    f'</title></circle>')
    for move in changes.nodes_moved:
        (x0, y0), (x1, y1) = node_px(old, move.old_id), node_px(new, move.new_id)
        note = f"{move.new_id} moved {move.distance:.3f} m"
        # to scale: a move too short to see is a ring alone, never a long arrow
        arrow = (f'<line x1="{x0:.2f}" y1="{y0:.2f}" x2="{x1:.2f}" y2="{y1:.2f}"'
                 f' stroke="{COLOURS["moved"]}" stroke-width="2" marker-end="url(#arrow)"/>'
                 if math.hypot(x1 - x0, y1 - y0) >= MIN_ARROW_PX else "")
        body.append(f'<g class="node-moved"><circle cx="{x0:.2f}" cy="{y0:.2f}" r="4" fill="none"'
                    f' stroke="{COLOURS["moved"]}" stroke-width="1.5"/>{arrow}'
                    f'<title>{_text(note)}</title></g>')
    for pinch in changes.new_pinch_points:
        x, y = to_px((pinch.x, pinch.y)).split(",")
        x, y = float(x), float(y)
        note = f"new pinch point ({pinch.reason}): clearance {pinch.clearance:.2f} m"
        body.append(f'<g class="pinch"><path d="M{x:.2f},{y - 8:.2f} l8,8 l-8,8 l-8,-8 z"'
                    f' fill="{COLOURS["pinch"]}" stroke="#000000" stroke-width="1"/>'
                    f'<text x="{x + 10:.2f}" y="{y + 14:.2f}" font-size="11">'
                    f'{pinch.clearance:.2f} m</text><title>{_text(note)}</title></g>')
    head = _legend(changes, title, width) + _scale_bar(scale, width)
    total_height = height + legend_height
    return ("<?xml version=\"1.0\" encoding=\"UTF-8\"?>\n"
            f'<svg xmlns="http://www.w3.org/2000/svg" version="1.1" width="{width:.0f}"'
            f' height="{total_height:.0f}" viewBox="0 0 {width:.0f} {total_height:.0f}"'
            ' font-family="sans-serif">\n<defs><marker id="arrow" viewBox="0 0 10 10" refX="9"'
            ' refY="5" markerWidth="7" markerHeight="7" orient="auto"><path d="M0,0 L10,5 L0,10 z"'
            f' fill="{COLOURS["moved"]}"/></marker></defs>\n'
            f'<rect width="100%" height="100%" fill="#ffffff"/>\n{head}\n'
            + "\n".join(body) + "\n</svg>\n").encode("utf-8")


def _legend(changes: GraphChanges, title: str, width: float) -> str:
    rows = [
        ('<line x1="0" y1="0" x2="30" y2="0" stroke="{unchanged}" stroke-width="1.5"/>',
         "lane in both revisions"),
        ('<line x1="0" y1="0" x2="30" y2="0" stroke="{removed}" stroke-width="3"'
         ' stroke-dasharray="8 5"/>', f"lane removed ({len(changes.edges_removed)}); "
         f"x = node removed ({len(changes.nodes_removed)})"),
        ('<line x1="0" y1="0" x2="30" y2="0" stroke="{added}" stroke-width="3"/>',
         f"lane added ({len(changes.edges_added)}); dot = node added "
         f"({len(changes.nodes_added)})"),
        ('<line x1="0" y1="0" x2="28" y2="0" stroke="{moved}" stroke-width="2"'
         ' marker-end="url(#arrow)"/>', f"node moved, ring = old place, arrow to scale "
         f"(none when under {MIN_ARROW_PX} px) ({len(changes.nodes_moved)})"),
        ('<rect x="3" y="-5" width="24" height="10" fill="none" stroke="{obstacle}"'
         ' stroke-width="3"/>', "obstacle only in the new revision (dotted: only in the "
         "old); walls and racking of the new revision in grey"),
        ('<path d="M15,-8 l8,8 l-8,8 l-8,-8 z" fill="{pinch}" stroke="#000000"/>',
         f"new pinch point, clearance now ({len(changes.new_pinch_points)})"),
        ('<rect x="11" y="-4" width="8" height="8" fill="{station}"/>',
         "station (new revision)"),
    ]
    parts = [f'<g class="legend"><text x="20" y="24" font-size="16" font-weight="bold">'
             f'{_text(title or "Lane graph revision comparison")}</text>',
             f'<text x="20" y="44" font-size="12">{_text(_lengths(changes))}</text>']
    for index, (symbol, text) in enumerate(rows):
        y = 66 + index * 18
        parts.append(f'<g transform="translate(20,{y})">{symbol.format(**COLOURS)}</g>'
                     f'<text x="60" y="{y + 4}" font-size="12">{_text(text)}</text>')
    parts.append(f'<text x="20" y="{66 + len(rows) * 18 + 6}" font-size="11"'
                 f' fill="#444444">{_text(SAFETY_CAUTION)}</text></g>')
    return "".join(parts)


def _lengths(changes: GraphChanges) -> str:
    changed = len(changes.routes_changed)
    return (f"lane length {changes.lane_length_before:.1f} m -> {changes.lane_length_after:.1f} m;"
            f" {changed} station route{'s' if changed != 1 else ''} changed")


def _path(geometry, to_px) -> str:
    parts = []
    for polygon in shapely.get_parts(geometry):
        if polygon.geom_type != "Polygon" or polygon.is_empty:
            continue
        for ring in (polygon.exterior, *polygon.interiors):
            parts.append("M" + to_px(shapely.get_coordinates(ring)[:-1]).replace(" ", " L")
                         + "Z")
    return " ".join(parts)


def _floor(floor, floor_old, to_px) -> list[str]:
    """The new revision's floor, and the obstacles only one revision has, as SVG lines."""
    if not floor:
        return []
    body = []
    for role, fill in FLOOR_FILLS.items():
        area = floor.get(role)
        if area is not None and not area.is_empty:
            body.append(f'<path class="floor-{role}" d="{_path(area, to_px)}" fill="{fill}"'
                        ' fill-rule="evenodd" stroke="none"/>')
    if floor_old:
        def obstacles(areas):
            found = [areas[r] for r in OBSTACLE_ROLES if areas.get(r) is not None]
            return shapely.union_all(found) if found else shapely.Polygon()
        now, before = obstacles(floor), obstacles(floor_old)
        # a 2 cm opening removes slivers where the same wall was merely redrawn
        for role, area, dash in (("obstacle-added", now.difference(before), ""),
                                 ("obstacle-removed", before.difference(now),
                                  ' stroke-dasharray="3 3"')):
            area = area.buffer(-0.01).buffer(0.01)
            if not area.is_empty:
                body.append(f'<path class="{role}" d="{_path(area, to_px)}" fill="none"'
                            f' stroke="{COLOURS["obstacle"]}" stroke-width="3"{dash}/>')
    return body


def _scale_bar(scale: float, width: float) -> str:
    """A scale bar and the +Y arrow in the legend's top right corner (scale: px per m)."""
    length = nice_length(150.0 / scale)
    pixels = length * scale
    x, y = width - 30 - pixels, 40.0
    return (f'<g class="scale"><rect x="{x:.2f}" y="{y:.2f}" width="{pixels:.2f}" height="6"'
            ' fill="#000000"/>'
            f'<text x="{x:.2f}" y="{y + 20:.2f}" font-size="12">0</text>'
            f'<text x="{x + pixels:.2f}" y="{y + 20:.2f}" font-size="12"'
            f' text-anchor="end">{length:g} m</text>'
            f'<path d="M{x + pixels / 2:.2f},{y + 34:.2f} l8,22 l-8,-6 l-8,6 z" fill="#000000"/>'
            f'<text x="{x + pixels / 2:.2f}" y="{y + 72:.2f}" font-size="11"'
            ' text-anchor="middle">+Y (drawing north)</text></g>')
