"""Building blocks of the SVG preview: styles, numbers, paths, markers, legend, scale bar.

All sizes are in SVG user units, which are metres of the drawing; ``font`` is the height of
one line of text and sets the size of every symbol. Points are given in drawing coordinates
(y up) and drawn at (x, -y).
"""

from __future__ import annotations

import math
import re

import numpy as np
import shapely
from lxml import etree

from clearway.exporters.text import xml_text

# Okabe-Ito colours [OI08] for areas and symbols.
BLACK, ORANGE, SKY, GREEN, YELLOW, BLUE, VERMILLION, PURPLE = (
    "#000000", "#E69F00", "#56B4E9", "#009E73", "#F0E442", "#0072B2", "#D55E00", "#CC79A7")
#: Lane colours from narrow to wide clearance: a ramp of falling lightness (CIELAB L* 45,
#: 37, 29, 21, 13, so it reads in grey-scale and with colour-vision deficiencies) whose hue
#: turns from olive through brown, red and plum to navy. Chosen so that every two classes,
#: and every class and a symbol colour (keep-out, narrow passage, pinch point, station,
#: shared zone), differ by CIEDE2000 >= 19.5 (tests/exporters/test_svg_palette.py).
LANE_COLOURS = ("#597324", "#784F07", "#7E2424", "#640645", "#151959")
#: Lane clearance classes: metres above the required clearance where each class starts.
LANE_STEPS = (0.0, 0.1, 0.25, 0.5, 1.0)


def _style(**attrs):
    """Attributes with lengths given in lines of text (floats, or tuples for dash arrays)."""
    def scaled(value, font):
        if isinstance(value, tuple):
            return " ".join(number(v * font) for v in value)
        return number(value * font) if isinstance(value, float) else value
    return lambda font: {key.replace("_", "-"): scaled(value, font)
                         for key, value in attrs.items()}


#: Area role -> SVG attributes (drawn in this order, later on top).
AREA_STYLE = {
    "free": _style(fill="#FBFBF7"),
    "band": _style(fill=SKY, fill_opacity="0.28"),
    # rooms the robot cannot enter: a grey cross-hatch with a dotted outline
    "closed": _style(fill="url(#closed-room)", stroke="#5A5A5A", stroke_width=0.08,
                     stroke_dasharray=(0.15, 0.25)),
    # a line pattern, not a tint: a tint over the clearance band mixes a colour (olive)
    # that no legend entry shows
    "shared": _style(fill="url(#shared)", stroke="#8A7F00", stroke_width=0.1,
                     stroke_dasharray=(0.6, 0.3)),
    "boundary": _style(fill="#8C8C8C", stroke="#4D4D4D", stroke_width=0.04),
    "wall": _style(fill="#333333", stroke="#000000", stroke_width=0.04),
    "racking": _style(fill=BLUE, fill_opacity="0.55", stroke=BLUE, stroke_width=0.08),
    "keepout": _style(fill="url(#hatch)", stroke=VERMILLION, stroke_width=0.12),
}
AREA_NAMES = {"free": "free floor", "band": "clearance band",
              "closed": "room the robot cannot enter",
              "shared": "shared with people", "wall": "wall", "racking": "racking",
              "keepout": "keep-out", "boundary": "boundary"}
MARKER_NAMES = {"junction": "junction", "end": "lane end", "station": "station",
                "facing": "station; line: way it faces",
                "unreachable": "unreachable station", "pinch": "pinch point",
                "narrow": "narrow passage", "personnel": "personnel clearance short",
                "leak": "leak to outside"}
#: The few letters before each measured value on the plan, and what they measure. They are
#: the only labels with numbers; the legend explains those that occur.
MEASURE_TERMS = {"pinch": ("clr", "lane centre to nearest obstacle"),
                 "narrow": ("gap", "clear width of the opening"),
                 "personnel": ("side", "room beside the robot for people"),
                 "leak": ("leak", "width of the gap to outside")}


def measure_label(kind: str, metres: float) -> str:
    """Label of a measured value on the plan: ``clr 0.46 m`` for a pinch point's clearance."""
    return f"{MEASURE_TERMS[kind][0]} {metres:.2f} m"


def symbol_reach(kind: str, font: float) -> float:
    """Half-size of symbol `kind` drawn for text of height `font`, metres."""
    return {"junction": 0.42, "end": 0.34, "station": 0.64, "facing": 0.64, "unreachable": 0.64,
            "pinch": 0.75, "narrow": 0.75, "personnel": 0.6, "leak": 0.72}[kind] * font


def number(value: float) -> str:
    """Format a coordinate for SVG: millimetre precision, no trailing zeros, no ``-0``."""
    text = f"{float(value):.3f}".rstrip("0").rstrip(".")
    return "0" if text in ("-0", "") else text


#: Zeros that end a number of ``%.3f`` text followed by a separator.
_TRAILING_ZEROS = re.compile(r"0+(?=[ ,])")


def point_list(xy) -> str:
    """``x,-y x,-y ...`` of the points (N, 2), each number written as ``number`` writes it.

    One format call and a few substitutions over the whole text, not calls per number:
    ``%.3f`` rounds as ``number`` does; then the zeros ending a number go, the point left
    bare, and the sign of a negative zero (each x follows a space and precedes a comma,
    each y the other way round).

    Examples
    --------
    >>> point_list(np.array([[1.25, 2.0], [-0.0001, 0.0], [10.5, -100.0]]))
    '1.25,-2 0,0 10.5,100'
    """
    return point_lists([xy])[0]


def _tidy(text: str) -> str:
    """Numbers of ``%.3f`` text, each between spaces or commas, as ``number`` writes them."""
    text = _TRAILING_ZEROS.sub("", text).replace(". ", " ").replace(".,", ",")
    return text.replace(" -0,", " 0,").replace(",-0 ", ",0 ")


def point_lists(lines) -> list[str]:
    """``point_list`` of each of `lines` ((N_i, 2) arrays), all formatted in one text.

    Each line's numbers sit between a space before and a space after, as in its own
    ``point_list`` text, and the lines are kept apart by newlines, which none of the
    substitutions reaches across: each text is the one ``point_list`` writes.

    Examples
    --------
    >>> point_lists([np.array([[1.25, 2.0], [-0.0001, 0.0]]), np.zeros((0, 2)),
    ...              np.array([[10.5, -100.0]])])
    ['1.25,-2 0,0', '', '10.5,100']
    """
    lines = [np.asarray(line, dtype=float).reshape(-1, 2) for line in lines]
    if not lines:
        return []
    template = "".join(" " + "%.3f,%.3f " * len(line) + "\n" for line in lines)
    text = _tidy(template % tuple((np.concatenate(lines) * (1.0, -1.0)).ravel().tolist()))
    return [part[1:-1] for part in text.split("\n")[:-1]]


def path_data(geometry) -> str:
    """SVG path data of every polygon ring in `geometry`, y flipped (use fill-rule evenodd).

    Every ring of at least three points (closing point dropped) becomes ``M x,-y ... Z``,
    the rings joined by spaces. All rings are formatted together, as one ``point_list``
    text: each number keeps its neighbours (a space or comma before it, a space or comma
    after), so the text is the one ``point_list`` writes ring by ring.

    Examples
    --------
    >>> path_data(shapely.box(0, 0, 2, 1.5).difference(shapely.box(0.5, 0.5, 1, 1)))
    'M0,0 0,-1.5 2,-1.5 2,0Z M1,-1 0.5,-1 0.5,-0.5 1,-0.5Z'
    """
    parts = shapely.get_parts(geometry)
    polygons = parts[shapely.get_type_id(parts) == 3]
    rings = shapely.get_rings(polygons)     # each polygon's exterior, then its holes
    counts = shapely.get_num_coordinates(rings) - 1
    chosen = counts >= 3
    rings, counts = rings[chosen], counts[chosen]
    if not len(rings):
        return ""
    xy = shapely.get_coordinates(rings)
    closing = np.cumsum(counts + 1) - 1
    xy = np.delete(xy, closing, axis=0)
    template = " ".join(["M " + "%.3f,%.3f " * count + "Z" for count in counts.tolist()])
    text = _tidy(template % tuple((xy * (1.0, -1.0)).ravel().tolist()))
    return text.replace("M ", "M").replace(" Z", "Z")


def clearance_band(plan, roadmap):
    """The free floor the robot's centre may not enter: free space minus the drivable region.

    None when the plan has no free space. The preview and the viewer page both draw it; a
    build computes it once and hands it to both (``band=``).
    """
    return floor_band(plan.free_space, roadmap.drivable)


def floor_band(free_space, drivable):
    """``clearance_band`` of a free space and a drivable region (None without free space)."""
    if free_space is None or free_space.is_empty:
        return None
    return free_space.difference(drivable)


def lane_bins(clearance: float) -> np.ndarray:
    """Lower bounds of the lane colour classes, metres, shape (5,)."""
    return clearance + np.asarray(LANE_STEPS)


def lane_colour(bins: np.ndarray, clearance_min: float) -> str:
    """Colour of a lane whose smallest clearance is `clearance_min` metres."""
    index = int(np.searchsorted(bins, clearance_min, side="right")) - 1
    return LANE_COLOURS[min(max(index, 0), len(LANE_COLOURS) - 1)]


def add_text(parent, x, y, text, size, *, weight=None, colour=BLACK, anchor=None, halo=False):
    """Add one line of text at SVG position (x, y) (already flipped), `size` metres high."""
    attrs = {"x": number(x), "y": number(y), "font-size": number(size), "fill": colour}
    if weight:
        attrs["font-weight"] = weight
    if anchor:
        attrs["text-anchor"] = anchor
    if halo:
        attrs.update({"stroke": "#ffffff", "stroke-width": number(0.3 * size),
                      "paint-order": "stroke", "stroke-linejoin": "round"})
    element = etree.SubElement(parent, "text", attrs)
    element.text = text
    return element


def heading_end(x: float, y: float, heading: float, font: float,
                length: float = 1.5) -> tuple[float, float]:
    """End of a station's heading line, `length` font sizes from drawing point (x, y)."""
    angle = math.radians(heading)
    return x + length * font * math.cos(angle), y + length * font * math.sin(angle)


def add_heading(parent, x: float, y: float, heading: float, font: float,
                length: float = 1.5) -> None:
    """Draw the way a station faces: a line from SVG position (x, y) (already flipped),
    `heading` degrees counter-clockwise from the drawing's +X (so up on the page)."""
    end_x, end_y = heading_end(x, -y, heading, font, length)
    etree.SubElement(parent, "line", {"class": "heading"}, x1=number(x), y1=number(y),
                     x2=number(end_x), y2=number(-end_y), stroke=BLACK,
                     **{"stroke-width": number(0.2 * font), "stroke-linecap": "round"})


def _symbol(parent, kind: str, x: float, y: float, font: float) -> None:
    """Draw symbol `kind` centred on SVG position (x, y)."""
    s = font
    sub = etree.SubElement
    if kind in ("junction", "end"):
        fill, stroke = (BLACK, "#ffffff") if kind == "junction" else ("#ffffff", BLACK)
        sub(parent, "circle", cx=number(x), cy=number(y), r=number(0.36 * s if kind ==
            "junction" else 0.28 * s), fill=fill, stroke=stroke,
            **{"stroke-width": number(0.12 * s)})
    elif kind == "facing":           # the legend's station with its heading line
        add_heading(parent, x, y, 0.0, s, length=1.0)
        _symbol(parent, "station", x, y, s)
    elif kind in ("station", "unreachable"):
        half = 0.55 * s
        fill, stroke = (GREEN, "#ffffff") if kind == "station" else ("#ffffff", VERMILLION)
        sub(parent, "rect", x=number(x - half), y=number(y - half), width=number(2 * half),
            height=number(2 * half), fill=fill, stroke=stroke,
            **{"stroke-width": number(0.18 * s)})
        if kind == "unreachable":
            d = (f"M{number(x - half)},{number(y - half)}L{number(x + half)},{number(y + half)}"
                 f"M{number(x - half)},{number(y + half)}L{number(x + half)},{number(y - half)}")
            sub(parent, "path", d=d, stroke=VERMILLION, **{"stroke-width": number(0.18 * s)})
    elif kind == "pinch":
        h = 0.7 * s
        points = f"{number(x)},{number(y - h)} {number(x + h)},{number(y + 0.6 * h)} " \
                 f"{number(x - h)},{number(y + 0.6 * h)}"
        sub(parent, "polygon", points=points, fill=PURPLE, stroke=BLACK,
            **{"stroke-width": number(0.1 * s)})
    elif kind == "narrow":
        h = 0.7 * s
        points = " ".join(f"{number(px)},{number(py)}" for px, py in
                          ((x, y - h), (x + h, y), (x, y + h), (x - h, y)))
        sub(parent, "polygon", points=points, fill=ORANGE, stroke=BLACK,
            **{"stroke-width": number(0.1 * s)})
    elif kind == "personnel":        # a standing figure: head and body
        sub(parent, "circle", cx=number(x), cy=number(y - 0.48 * s), r=number(0.2 * s),
            fill=BLACK)
        points = " ".join(f"{number(px)},{number(py)}" for px, py in
                          ((x, y - 0.22 * s), (x + 0.38 * s, y + 0.55 * s),
                           (x - 0.38 * s, y + 0.55 * s)))
        sub(parent, "polygon", points=points, fill=BLACK, stroke="#ffffff",
            **{"stroke-width": number(0.06 * s)})
    elif kind == "leak":
        sub(parent, "circle", cx=number(x), cy=number(y), r=number(0.6 * s), fill="none",
            stroke=VERMILLION, **{"stroke-width": number(0.25 * s), "stroke-dasharray":
                                  f"{number(0.3 * s)} {number(0.15 * s)}"})
    else:
        raise ValueError(f"unknown marker kind {kind!r}")


def add_marker(parent, kind, x, y, font, label=None, *, label_at=None) -> None:
    """Draw symbol `kind` at drawing point (x, y), with an optional label.

    `label_at` is (x, y, anchor) of the label's baseline in the drawing frame (see
    ``svg_labels.LabelPlacer``); without it the label goes to the right of the symbol.
    """
    group = etree.SubElement(parent, "g", {"class": kind})
    # the figure for personnel clearance stands above its place, which is often a pinch point
    lift = 1.3 * font if kind == "personnel" else 0.0
    y = float(y) + lift
    if lift:
        etree.SubElement(group, "line", x1=number(x), y1=number(-y + 0.5 * font), x2=number(x),
                         y2=number(-y + lift), stroke=BLACK,
                         **{"stroke-width": number(0.08 * font)})
    _symbol(group, kind, float(x), -y, font)
    if label is not None:
        colour = "#A03000" if kind in ("unreachable", "leak") else BLACK
        tx, ty, anchor = label_at or (float(x) + 0.9 * font, y - 0.3 * font, "start")
        add_text(group, tx, -ty, xml_text(label), 0.8 * font, colour=colour, halo=True,
                 anchor=None if anchor == "start" else anchor)


def add_legend(parent, x: float, y: float, bins: np.ndarray, font: float, *,
               areas=None, markers=None, unlabelled=None) -> None:
    """Draw the legend from SVG position (x, y): the areas and symbols that occur on the
    plan (`areas`, `markers`: sets of keys of AREA_STYLE and MARKER_NAMES; None = all), the
    lane clearance classes, and what the letters before each measured value mean.
    `unlabelled` (kind -> count) says how many symbols of a kind carry no label."""
    unlabelled = unlabelled or {}
    areas = [role for role in AREA_STYLE if areas is None or role in areas]
    markers = [kind for kind in MARKER_NAMES if markers is None or kind in markers]
    row = 1.3 * font
    column = 15 * font
    size = 0.75 * font
    add_text(parent, x, y, "Areas", 0.85 * font, weight="bold")
    for index, role in enumerate(areas):
        top = y + 0.5 * font + index * row
        style = {"stroke": "#999999", "stroke-width": number(0.05 * font)}
        style.update(AREA_STYLE[role](font))
        etree.SubElement(parent, "rect", x=number(x), y=number(top), width=number(1.6 * font),
                         height=number(0.9 * font), **style)
        add_text(parent, x + 2.1 * font, top + 0.75 * font, AREA_NAMES[role], size)
    x += column
    add_text(parent, x, y, "Lane clearance", 0.85 * font, weight="bold")
    for index, colour in enumerate(LANE_COLOURS):
        top = y + 0.5 * font + index * row
        etree.SubElement(parent, "line", x1=number(x), y1=number(top + 0.45 * font),
                         x2=number(x + 1.6 * font), y2=number(top + 0.45 * font), stroke=colour,
                         **{"stroke-width": number(0.4 * font), "stroke-linecap": "round"})
        label = (f"{bins[index]:.2f}\u2013{bins[index + 1]:.2f} m" if index + 1 < len(bins)
                 else f"\u2265 {bins[index]:.2f} m")
        add_text(parent, x + 2.1 * font, top + 0.75 * font, label, size)
    top = y + 0.5 * font + 5 * row + 0.75 * font
    add_text(parent, x, top, "centre to nearest obstacle", 0.65 * font)
    terms = [MEASURE_TERMS[kind] for kind in MEASURE_TERMS if kind in markers]
    for index, (letters, meaning) in enumerate(terms):
        add_text(parent, x, top + (1.1 + 0.9 * index) * font, f"{letters}: {meaning}",
                 0.65 * font)
    x += column
    add_text(parent, x, y, "Symbols", 0.85 * font, weight="bold")
    for index, kind in enumerate(markers):
        top = y + 0.5 * font + index * row
        _symbol(parent, kind, x + 0.8 * font, top + 0.45 * font, 0.8 * font)
        name = MARKER_NAMES[kind]
        if unlabelled.get(kind):
            name += f" ({unlabelled[kind]} unlabelled: crowded)"
        add_text(parent, x + 2.1 * font, top + 0.75 * font, name, size)


def nice_length(limit: float) -> float:
    """Largest 1, 2 or 5 x 10**k metres not above `limit` metres (> 0).

    Examples
    --------
    >>> nice_length(7.3), nice_length(0.34), nice_length(120.0)
    (5.0, 0.2, 100.0)
    """
    exponent = math.floor(math.log10(limit))
    for step in (5.0, 2.0, 1.0):
        if step * 10.0 ** exponent <= limit:
            return float(f"{step * 10.0 ** exponent:.12g}")
    return float(f"{10.0 ** exponent:.12g}")


def add_scale_and_arrow(parent, x: float, y: float, font: float) -> None:
    """Draw a four-part scale bar and the +Y arrow from SVG position (x, y)."""
    length = nice_length(12 * font)
    height = 0.45 * font
    for index in range(4):
        etree.SubElement(parent, "rect", x=number(x + index * length / 4), y=number(y),
                         width=number(length / 4), height=number(height),
                         fill=BLACK if index % 2 == 0 else "#ffffff", stroke=BLACK,
                         **{"stroke-width": number(0.06 * font)})
    add_text(parent, x, y + height + 0.9 * font, "0", 0.75 * font, anchor="middle")
    add_text(parent, x + length, y + height + 0.9 * font, f"{length:g} m", 0.75 * font,
             anchor="middle")
    tip_x, tip_y = x + length / 2, y + 3.2 * font
    d = (f"M{number(tip_x)},{number(tip_y)}L{number(tip_x + 0.8 * font)},"
         f"{number(tip_y + 2.6 * font)}L{number(tip_x)},{number(tip_y + 2.0 * font)}"
         f"L{number(tip_x - 0.8 * font)},{number(tip_y + 2.6 * font)}Z")
    etree.SubElement(parent, "path", d=d, fill=BLACK)
    add_text(parent, tip_x, tip_y + 4.0 * font, "+Y (drawing north)", 0.75 * font,
             anchor="middle")
    add_text(parent, tip_x, tip_y + 5.1 * font, "y up as drawn", 0.6 * font, anchor="middle")
