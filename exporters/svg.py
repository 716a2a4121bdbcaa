"""Draw an SVG preview of the roadmap for people: floor, lanes, stations, problems, title block.

One SVG user unit is one metre of the drawing, and a drawing point (x, y) is drawn at
(x, -y): the drawing's y axis points up, the SVG's down. Plans at survey coordinates are
drawn relative to a round origin (see ``drawing_origin``), stated in the title block. The page size fits the plan on A3
(420 mm x 297 mm, landscape or portrait), so text sized in proportion to the plan stays
readable in print. Colours come from the Okabe-Ito palette (areas, symbols) and a
lightness ramp checked for CIEDE2000 distinctness (lane clearance); every symbol also differs in shape.

References
----------
.. [OI08] M. Okabe and K. Ito, "Color Universal Design (CUD): how to make figures and
   presentations that are friendly to colorblind people", 2008.
"""

from __future__ import annotations

import numpy as np
import shapely
import shapely.affinity
from lxml import etree
from shapely.ops import polylabel  # shapely.polylabel exists only from shapely 2.1

from clearway.collector import paused_collector
from clearway.exporters.graphml import oriented_edges
from clearway.exporters.svg_labels import LabelPlacer
from clearway.exporters.svg_parts import (AREA_STYLE, add_heading, add_legend, add_marker,
                                          add_scale_and_arrow, add_text, clearance_band,
                                          heading_end, lane_bins,
                                          lane_colour, measure_label, number, path_data,
                                          point_lists, symbol_reach)
from clearway.exporters.text import SAFETY_CAUTION, TOOL_VERSION, xml_text
from clearway.roadmap.inflate import local_offset

SVG_NS = "http://www.w3.org/2000/svg"
_A3 = (420.0, 297.0)   # mm, ISO 216
_PX_PER_MM = 96 / 25.4  # CSS Values and Units: 1 in = 96 px = 25.4 mm


def plan_bounds(plan, drivable, graph=None) -> tuple[float, float, float, float]:
    """The extents the preview is drawn to: the plan's areas, `drivable`, the stations and
    the nodes of `graph` (none when None)."""
    geometries = [*plan.regions.values(), plan.free_space, drivable]
    boxes = [g.bounds for g in geometries if g is not None and not g.is_empty]
    # the stations and nodes as one array, not as shapely points (tens of thousands of them)
    points = [(s.x, s.y) for s in plan.stations] + \
        ([(d["x"], d["y"]) for _, d in graph.nodes(data=True)] if graph is not None else [])
    if points:
        xy = np.array(points, dtype=float)
        boxes.append((*xy.min(axis=0), *xy.max(axis=0)))
    boxes = np.array(boxes)
    if len(boxes) == 0 or not np.isfinite(boxes).all():
        return 0.0, 0.0, 1.0, 1.0
    xmin, ymin = boxes[:, 0].min(), boxes[:, 1].min()
    xmax, ymax = boxes[:, 2].max(), boxes[:, 3].max()
    return float(xmin), float(ymin), float(max(xmax, xmin + 1e-3)), float(max(ymax, ymin + 1e-3))


def drawing_origin(bounds) -> np.ndarray:
    """Return the point, metres, that the SVG is drawn relative to, shape (2,).

    Renderers compute in single precision (24-bit mantissa: 0.5 m steps at 5.4e6 m), so a
    plan placed at survey coordinates is drawn relative to the origin of the local frame the
    lanes were computed in (``roadmap.inflate.local_offset``: the whole kilometre nearest its
    extents' lower left corner); a plan within 10 km of its origin is drawn as is.

    Examples
    --------
    >>> drawing_origin((500120.5, 5400310.0, 500200.0, 5400400.0)).tolist()
    [500000.0, 5400000.0]
    >>> drawing_origin((-5.0, 0.0, 120.0, 80.0)).tolist()
    [0.0, 0.0]
    """
    if max(abs(v) for v in bounds) < 10_000.0:
        return np.zeros(2)
    return np.asarray(local_offset(bounds), dtype=float)


def _summary_lines(plan, roadmap, date: str) -> list[str]:
    robot, graph, findings = roadmap.robot, roadmap.graph, roadmap.findings
    if robot.length is None:
        body = f"disc, radius {robot.radius:.2f} m"
    else:
        body = (f"{robot.length:.2f} m x {robot.width:.2f} m {robot.kind}"
                + (f", turn radius {robot.turn_radius:.2f} m" if robot.kind == "car" else "")
                + f" (swing radius {robot.swing:.2f} m)")
    lane_length = sum(float(d["length"]) for _, _, d in graph.edges(data=True))
    junctions = sum(1 for _, d in graph.nodes(data=True) if d.get("kind") == "junction")
    reached = sum(1 for s in findings.stations if s.reachable)
    narrowest = min((p.clearance for p in findings.pinch_points), default=None)
    pinch = f"narrowest pinch {narrowest:.2f} m" if narrowest is not None else "no pinch points"
    return [
        f"{plan.source}  \u00b7  {date}  \u00b7  {TOOL_VERSION}",
        f"Robot: {body}, margin {robot.margin:.2f} m, required clearance {robot.clearance:.2f} m",
        f"{graph.number_of_edges()} lanes, {lane_length:.1f} m in total  \u00b7  "
        f"{junctions} junctions  \u00b7  stations reached {reached}/{len(plan.stations)}  "
        f"\u00b7  {pinch}",
        f"{_count(len(findings.narrow_passages), 'narrow passage')}  \u00b7  "
        f"{_count(len(plan.leaks), 'leak')}  \u00b7  "
        f"{_count(len(findings.personnel), 'lane')} short of personnel clearance  \u00b7  "
        f"{_layers_left_out(plan.left_out)}",
    ]


def _count(number: int, singular: str) -> str:
    """'1 leak', '2 leaks'."""
    return f"{number} {singular}{'' if number == 1 else 's'}"


def _layers_left_out(left_out) -> str:
    """'3 layers left out (1 without a role)': the layers with linework no role takes."""
    without = sum(1 for layer in left_out if not layer.ignored)
    if not left_out:
        return "no layer left out"
    return (f"{_count(len(left_out), 'layer')} left out"
            + (f" ({without} without a role)" if without and without < len(left_out) else
               " (no role)" if without else " (on purpose)"))


def _wrap(text: str, width: int) -> list[str]:
    lines, line = [], ""
    for word in text.split():
        if line and len(line) + 1 + len(word) > width:
            lines.append(line)
            line = word
        else:
            line = f"{line} {word}".strip()
    return lines + [line] if line else lines


def area_paths(plan, band, origin) -> dict[str, str]:
    """Path data of the plan's areas and the clearance `band` relative to `origin`, by role:
    every role of AREA_STYLE but "closed" (the unreachable rooms, which the lanes decide)
    whose area is not empty."""
    areas = {"free": plan.free_space, "band": band, **dict(plan.regions)}
    return {role: path_data(_moved(areas[role], origin)) for role in AREA_STYLE
            if areas.get(role) is not None and not areas[role].is_empty}


def _moved(geometry, origin):
    return shapely.transform(geometry, lambda xy: xy - origin)


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_svg(plan, roadmap, *, date: str, band=None, edges=None, floor=None) -> bytes:
    """Return the SVG preview as UTF-8 bytes (deterministic for the same input and date).

    Parameters
    ----------
    plan : converter.floorplan.FloorPlan
    roadmap : roadmap.model.Roadmap
    date : str
        Printed in the title block (the CLI passes the drawing's own date, so a rebuild
        of the same drawing gives the same bytes).
    band : shapely geometry, optional
        ``svg_parts.clearance_band(plan, roadmap)`` when the caller has it already.
    edges : list, optional
        ``graphml.oriented_edges(roadmap.graph)`` when the caller has it already.
    floor : exporters.floor.FloorDrawn, optional
        The areas drawn already, used where they fit (then `band` is not needed).

    Returns
    -------
    bytes
        A standalone SVG 1.1 document whose viewBox holds the plan's extents, drawn at
        (x - x0, -(y - y0)) with (x0, y0) = ``drawing_origin`` (zero unless the plan lies at
        survey coordinates), plus a margin and the title block below the plan.
    """
    bounds = plan_bounds(plan, roadmap.drivable, roadmap.graph)
    origin = drawing_origin(bounds)
    ox, oy = origin
    xmin, ymin, xmax, ymax = np.subtract(bounds, [ox, oy, ox, oy]).tolist()

    width, height = xmax - xmin, ymax - ymin
    size = max(width, height)
    pad = 0.04 * size
    canvas_width = size + 2 * pad
    font = canvas_width / 110                     # one text line, in metres of the drawing
    strip = 14 * font                             # title block height
    left = xmin - pad - (canvas_width - width - 2 * pad) / 2
    top = -ymax - pad
    canvas_height = height + 2 * pad + strip
    landscape = canvas_width >= canvas_height
    page = _A3 if landscape else _A3[::-1]
    scale = min(page[0] / canvas_width, page[1] / canvas_height)    # mm per metre

    root = etree.Element(f"{{{SVG_NS}}}svg", nsmap={None: SVG_NS}, attrib={
        "version": "1.1",
        "viewBox": " ".join(number(v) for v in (left, top, canvas_width, canvas_height)),
        # CSS px (1/96 in): the page in millimetres, as plain numbers every renderer reads
        "width": f"{canvas_width * scale * _PX_PER_MM:.1f}",
        "height": f"{canvas_height * scale * _PX_PER_MM:.1f}",
        "font-family": "DejaVu Sans, Verdana, Arial, sans-serif"})
    etree.SubElement(root, "title").text = xml_text(f"clearway roadmap of {plan.source}")
    etree.SubElement(root, "desc").text = SAFETY_CAUTION
    _add_pattern(root, font)
    etree.SubElement(root, "rect", x=number(left), y=number(top), width=number(canvas_width),
                     height=number(canvas_height), fill="#ffffff")

    if floor is not None and floor.svg_origin == (ox, oy) and floor.fits(roadmap):
        paths = dict(floor.svg_paths)
    else:
        paths = area_paths(plan, clearance_band(plan, roadmap) if band is None else band, origin)
    closed = [room.polygon for room in roadmap.rooms if not room.reachable]
    closed = shapely.union_all(closed) if closed else None
    if closed is not None and not closed.is_empty:
        paths["closed"] = path_data(_moved(closed, origin))
    layer = etree.SubElement(root, "g", id="floor")
    for role, style in AREA_STYLE.items():
        if role in paths:
            etree.SubElement(layer, "path", d=paths[role], id=f"area-{role}",
                             **{"fill-rule": "evenodd"}, **style(font))

    bins = lane_bins(roadmap.robot.clearance)
    lanes = etree.SubElement(root, "g", id="lanes", fill="none",
                             **{"stroke-width": number(0.32 * font), "stroke-linecap": "round",
                                "stroke-linejoin": "round"})
    edges = sorted(oriented_edges(roadmap.graph) if edges is None else edges,
                   key=lambda e: -float(e[3]["clearance_min"]))
    moved = [coords - origin for *_, coords in edges]
    for (edge_id, _, _, attrs, _), points in zip(edges, point_lists(moved)):
        colour = lane_colour(bins, float(attrs["clearance_min"]))
        etree.SubElement(lanes, "polyline", stroke=colour, id=xml_text(f"lane-{edge_id}"),
                         points=points)

    marks = etree.SubElement(root, "g", id="marks")
    # every lane's LineString in one call (the same coordinates as one at a time)
    drawn = [line for line in moved if len(line) >= 2]
    placer = LabelPlacer(shapely.linestrings(np.concatenate(drawn), indices=np.repeat(
        np.arange(len(drawn)), [len(line) for line in drawn])) if drawn else [], 0.32 * font)
    symbols = [(attrs["kind"], attrs["x"] - ox, attrs["y"] - oy, None)
               for _, attrs in sorted(roadmap.graph.nodes(data=True),
                                      key=lambda n: (n[1]["x"], n[1]["y"]))
               if attrs.get("kind") in ("junction", "end")]
    symbols += [("pinch", p.x - ox, p.y - oy, measure_label("pinch", p.clearance))
                for p in roadmap.findings.pinch_points]
    symbols += [("narrow", p.x - ox, p.y - oy, measure_label("narrow", p.width))
                for p in roadmap.findings.narrow_passages]
    symbols += [("personnel", f.x - ox, f.y - oy, measure_label("personnel", f.side_clearance))
                for f in roadmap.findings.personnel]
    symbols += [("leak", leak.x - ox, leak.y - oy, measure_label("leak", leak.width))
                for leak in plan.leaks]
    results = {s.label: s for s in roadmap.findings.stations}
    for station in plan.stations:
        result = results.get(station.label)
        reachable = bool(result and result.reachable)
        symbols.append(("station" if reachable else "unreachable", station.x - ox,
                        station.y - oy,
                        station.label if reachable else f"{station.label} (unreachable)"))
    known = [(p.x, p.y) for p in roadmap.findings.narrow_passages]
    symbols += [("narrow", p.x - ox, p.y - oy, measure_label("narrow", p.width))
                for p in roadmap.passages
                if p.opening >= 0 and p.kind in ("door", "open") and not p.exterior
                and not p.fits and all(np.hypot(p.x - x, p.y - y) > max(p.width, 0.5)
                                       for x, y in known)]
    # every symbol first, so that no label covers one; outlined in one call
    centres = np.array([(x, y + (1.3 * font if kind == "personnel" else 0.0))
                        for kind, x, y, _ in symbols], dtype=float).reshape(-1, 2)
    reaches = np.array([symbol_reach(kind, font) for kind, *_ in symbols], dtype=float)
    for outline in shapely.buffer(shapely.points(centres), reaches, quad_segs=2).tolist():
        placer.block(outline)
    facing = [(s.x - ox, s.y - oy, s.heading) for s in plan.stations if s.heading is not None]
    for x, y, heading in facing:       # under the station's square
        placer.block(shapely.LineString([(x, y), heading_end(x, y, heading, font)]).buffer(
            0.1 * font, quad_segs=2))
        add_heading(marks, x, -y, heading, font)
    right = xmin + 0.75 * width       # labels of marks beyond this prefer the left
    labels = [(x, y + (1.3 * font if kind == "personnel" else 0.0), label, 0.8 * font,
               symbol_reach(kind, font), x > right, None)
              for kind, x, y, label in symbols if label is not None]
    named = [room for room in roadmap.rooms if room.names]
    for room in named:               # last: a name moves off lanes, symbols and labels
        inside = shapely.affinity.translate(room.polygon, -ox, -oy)
        largest = max(getattr(inside, "geoms", [inside]), key=lambda part: part.area)
        centre = shapely.get_coordinates(polylabel(largest, 0.25 * font))[0]
        labels.append((*centre, room.names[0], 0.9 * font, 0.0, False, inside))
    # a pinch point's clearance is in report.json and the viewer: its label gives way
    optional = [kind == "pinch" for kind, *_, label in symbols if label is not None]
    placed = iter(placer.place_all(labels, optional + [False] * len(named)))
    unlabelled = 0
    for kind, x, y, label in symbols:
        at = next(placed) if label is not None else None
        if label is not None and at is None:
            unlabelled += 1
            label = None
        add_marker(marks, kind, x, y, font, label, label_at=at)
    names = etree.SubElement(root, "g", id="room-names")
    for room in named:
        x, y, anchor = next(placed)
        add_text(names, x, -y, xml_text(room.names[0]), 0.9 * font, anchor=anchor,
                 halo=True, colour="#3A3A3A")
    present = {kind for kind, *_ in symbols}
    if facing:                          # the legend's station shows its heading line
        present = (present - {"station"}) | {"facing"}
    drawn = set(paths)

    _add_title_block(root, plan, roadmap, date, bins, left, -ymin + pad, canvas_width, font,
                     origin, (drawn, present), unlabelled={"pinch": unlabelled})
    return etree.tostring(root, xml_declaration=True, encoding="UTF-8", pretty_print=True)


def _add_pattern(root, font: float) -> None:
    defs = etree.SubElement(root, "defs")
    pattern = etree.SubElement(defs, "pattern", id="hatch", patternUnits="userSpaceOnUse",
                               width=number(0.8 * font), height=number(0.8 * font),
                               patternTransform="rotate(45)")
    etree.SubElement(pattern, "rect", width=number(0.8 * font), height=number(0.8 * font),
                     fill="#D55E00", **{"fill-opacity": "0.18"})
    etree.SubElement(pattern, "line", x1="0", y1="0", x2="0", y2=number(0.8 * font),
                     stroke="#D55E00", **{"stroke-width": number(0.22 * font)})
    closed = etree.SubElement(defs, "pattern", id="closed-room", patternUnits="userSpaceOnUse",
                              width=number(0.7 * font), height=number(0.7 * font))
    for x1, y1, x2, y2 in ((0, 0, 0.7, 0.7), (0, 0.7, 0.7, 0)):
        etree.SubElement(closed, "line", x1=number(x1 * font), y1=number(y1 * font),
                         x2=number(x2 * font), y2=number(y2 * font), stroke="#6E6E6E",
                         **{"stroke-width": number(0.08 * font)})
    shared = etree.SubElement(defs, "pattern", id="shared", patternUnits="userSpaceOnUse",
                              width=number(0.6 * font), height=number(0.6 * font),
                              patternTransform="rotate(-45)")
    etree.SubElement(shared, "line", x1="0", y1="0", x2="0", y2=number(0.6 * font),
                     stroke="#C9B800", **{"stroke-width": number(0.2 * font)})


def _add_title_block(root, plan, roadmap, date, bins, left, top, width, font, origin,
                     occurring, unlabelled=None) -> None:
    block = etree.SubElement(root, "g", id="title-block")
    etree.SubElement(block, "rect", x=number(left + font), y=number(top),
                     width=number(width - 2 * font), height=number(13 * font), fill="#ffffff",
                     stroke="#333333", **{"stroke-width": number(0.08 * font)})
    x, y = left + 2 * font, top + 2 * font
    add_text(block, x, y, xml_text(f"clearway roadmap \u2014 {plan.source}"), 1.4 * font,
             weight="bold")
    lines = _summary_lines(plan, roadmap, date)
    if origin.any():
        lines[0] += f"  \u00b7  drawn relative to x {origin[0]:.0f} m, y {origin[1]:.0f} m"
    for index, line in enumerate(lines):
        add_text(block, x, y + (1.6 + 1.3 * index) * font, xml_text(line), 0.85 * font)
    caution_top = y + 7.2 * font
    for index, line in enumerate(_wrap("CAUTION: " + SAFETY_CAUTION, 78)):
        add_text(block, x, caution_top + 1.2 * index * font, line, 0.9 * font,
                 weight="bold", colour="#A03000")
    add_legend(block, left + 52 * font, top + 1.6 * font, bins, font, areas=occurring[0],
               markers=occurring[1], unlabelled=unlabelled)
    add_scale_and_arrow(block, left + width - 14 * font, top + 2.2 * font, font)
