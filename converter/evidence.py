"""What a drawing's content says about its unit, when the header's $INSUNITS may lie.

Headers are often wrong: templates carry the wrong default and drawings pass through several
programs. Some lengths in a floor plan cannot lie much: door leaves (their swing radius),
wall thickness, the building's size, and DIMENSION entities whose text gives the length in
feet and inches or with a unit. Each is measured in drawing units; a unit is plausible for
a kind of evidence when it puts most of the measurements in the range the trade uses.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import shapely

from clearway.converter.grouping import pairs_within
from clearway.converter.openings import arc_radius
from clearway.converter.units import UNITS_TO_M

#: Units a content judgement may choose between (yards do not occur in floor plans).
CANDIDATE_UNITS = ("mm", "cm", "m", "in", "ft")
#: Plausible ranges, metres (common practice): a door leaf, the thickness of a wall, the
#: larger side of one floor plan.
DOOR_LEAF_M = (0.6, 1.3)
WALL_THICKNESS_M = (0.05, 0.8)
PLAN_SPAN_M = (3.0, 2000.0)
#: The depth of a pallet-rack or shelving bay, metres (common practice: a bay holds one
#: pallet of 0.8 to 1.2 m across its depth, shelving 0.6 m; two bays back to back drawn as
#: one rectangle 2.2 to 2.5 m). Only rectangles at most RACK_BAY_ASPECT times as long as
#: deep count: a whole row drawn as one rectangle says nothing about the unit.
RACK_DEPTH_M = (0.6, 2.5)
RACK_BAY_ASPECT = 5.0
#: ... and at least this much longer than deep (a back-to-back bay, 2.7 m x 2.4 m, is 1.125).
RACK_BAY_SQUARE = 1.05
#: A rectangle on a racking layer longer than RACK_BAY_ASPECT times its depth is a whole row
#: when it is at least this share of the plan's larger side long (a row of 8 bays, 22 m, in a
#: 400 m hall); an upright frame, 1.1 m long, is far less.
RACK_ROW_SHARE = 0.05
#: With no unit in the header, the content decides with a full weight of support (say, every
#: door leaf plausible), or with CLEAR_SUPPORT and a lead of CLEAR_LEAD over every other unit:
#: measured walls always include a few faces that are no wall's two sides.
CLEAR_SUPPORT = 0.75
CLEAR_LEAD = 0.25
#: A header whose unit makes the plan larger or smaller than any one floor (PLAN_SPAN_M: a
#: drawing in mm whose template header says metres is hundreds of kilometres across) is
#: overruled by a lead of this much support (say, three quarters of the walls plausible in
#: the other unit and none in the header's), where a plausible plan needs a full 1.0.
IMPOSSIBLE_PLAN_LEAD = 0.5
#: Most walls are 0.08 to 0.5 m thick (common practice: a stud partition with a board each
#: side is about 0.1 m, masonry and exterior walls up to 0.5 m); a thickness in the wider
#: range but outside this one counts half. It separates units a factor 2.54 apart: 8 units
#: are a block wall in inches (0.20 m) but thinner than most walls in cm (0.08 m).
TYPICAL_WALL_M = (0.09, 0.5)

#: The header's linear unit formats that show lengths in feet and inches, one drawing unit
#: an inch: $LUNITS 3 (engineering) and 4 (architectural) (DXF reference, HEADER section).
INCH_FORMATS = {3: "engineering", 4: "architectural"}

_FEET_INCHES = re.compile(r"""^\s*(?:(\d+(?:\.\d+)?)\s*'\s*-?\s*)?(?:(\d+(?:\.\d+)?)(?:\s+(\d+)/(\d+))?\s*(?:"|''))?\s*$""")
_WITH_UNIT = re.compile(r"^\s*(\d+(?:[.,]\d+)?)\s*(mm|cm|m)\s*$", re.IGNORECASE)

#: Room-area texts: a number with a unit of area after it ("28.51 m²", "855 SQ. FT.", "345 SF")
#: or before it ("mq=28.51", Italian metri quadri). Common practice: plans label each room
#: with its net floor area, computed by the CAD program from the room's outline.
_NUMBER = r"(\d{1,3}(?:[,.]\d{3})+(?:[.,]\d+)?|\d+(?:[.,]\d+)?)"
_SQUARE_METRES = r"(?:m²|m2|mq|sq\.?\s*m\.?|sqm)"
_SQUARE_FEET = r"(?:ft²|ft2|sq\.?\s*ft\.?|sqft|s\.?f\.?)"
_AREA_AFTER = re.compile(_NUMBER + r"\s*(" + _SQUARE_METRES + "|" + _SQUARE_FEET + r")(?![a-z0-9])",
                         re.IGNORECASE)
_AREA_BEFORE = re.compile(r"(?<![a-z])(" + _SQUARE_METRES + "|" + _SQUARE_FEET + r")\s*[=:]?\s*"
                          + _NUMBER, re.IGNORECASE)
#: Room-size texts: two lengths with a times sign between ("14'2\" x 12'4\"", "3.60 x 4.20 m"),
#: the room's clear width and depth (common practice on residential plans and on plans that
#: floor scanners export).
_SIZE = re.compile(r"^\s*(.+?)\s*[xX\u00d7*]\s*(.+?)\s*$")
_BARE_NUMBER = re.compile(r"^\d+(?:[.,]\d+)?$")
#: Square metres in a square foot (exact: 0.3048 m squared).
SQUARE_FOOT_M2 = 0.09290304
#: Area or size texts implying one unit (within 3 %) that are enough to count: one alone may
#: be a coincidence.
MIN_AREA_TEXTS = 2


@dataclass(frozen=True)
class Evidence:
    """One kind of evidence: its name, the measurements (drawing units) and what each
    measurement is in metres for a metres-per-unit factor of 1 (the factor it implies, for
    dimensions), and its weight in the decision."""

    kind: str
    values: np.ndarray
    weight: float
    implied: bool = False   # values are metres per drawing unit (dimension, area or size text)


def door_swings(arcs):
    """Radii (drawing units) of the arcs that sweep about a quarter turn (60 to 120 degrees),
    the way door swings are drawn."""
    radius, sweep = arc_radius(arcs)
    return radius[(sweep >= 60) & (sweep <= 120) & (radius > 0)]


#: A door swing hinges on a jamb: its centre lies on the wall's linework or within the wall's
#: thickness of it, at most this share of its radius (a 0.9 m leaf in a 0.45 m wall; common
#: practice). Arcs in fittings and symbols (basins, bubbles, arrows) mostly do not.
HINGE_REACH = 0.5


def hinged_on(arcs, lines):
    """Which flattened `arcs` (drawing units) have their centre within HINGE_REACH of their
    radius of `lines`, shape (N,).

    Examples
    --------
    >>> import shapely
    >>> wall = [shapely.LineString([(0, 0), (10, 0)])]
    >>> swing = shapely.LineString([(2.9, 0), (2 + 0.9 * 0.7071, 0.9 * 0.7071), (2, 0.9)])
    >>> basin = shapely.LineString([(5.3, 3), (5 + 0.3 * 0.7071, 3 + 0.3 * 0.7071), (5, 3.3)])
    >>> hinged_on([swing, basin], wall).tolist()
    [True, False]
    """
    arcs = np.asarray(arcs, dtype=object)
    if not len(arcs) or not len(lines):
        return np.zeros(len(arcs), dtype=bool)
    xy, index = shapely.get_coordinates(arcs, return_index=True)
    count = np.bincount(index, minlength=len(arcs))
    first = np.cumsum(count) - count
    a, b, c = xy[first], xy[first + count // 2], xy[first + count - 1]
    # the circumcentre of the arc's ends and middle vertex (roadmap.delaunay.circumcircles
    # does the same for triangles, but importing it would load scipy.spatial to read a file)
    d = 2 * (a[:, 0] * (b[:, 1] - c[:, 1]) + b[:, 0] * (c[:, 1] - a[:, 1])
             + c[:, 0] * (a[:, 1] - b[:, 1]))
    sa, sb, sc = (a ** 2).sum(axis=1), (b ** 2).sum(axis=1), (c ** 2).sum(axis=1)
    with np.errstate(divide="ignore", invalid="ignore"):
        x = (sa * (b[:, 1] - c[:, 1]) + sb * (c[:, 1] - a[:, 1]) + sc * (a[:, 1] - b[:, 1])) / d
        y = (sa * (c[:, 0] - b[:, 0]) + sb * (a[:, 0] - c[:, 0]) + sc * (b[:, 0] - a[:, 0])) / d
        radius = np.hypot(a[:, 0] - x, a[:, 1] - y)
    ok = np.isfinite(x) & np.isfinite(y) & np.isfinite(radius) & (count >= 3)
    near = np.zeros(len(arcs), dtype=bool)
    if ok.any():
        tree = shapely.STRtree(np.asarray(lines, dtype=object))
        centres = shapely.points(x[ok], y[ok])
        _, distance = tree.query_nearest(centres, return_distance=True, all_matches=False)
        near[np.flatnonzero(ok)] = distance <= HINGE_REACH * radius[ok]
    return near


def wall_thicknesses(lines, *, limit=4000):
    """Distances (drawing units) between parallel wall lines that overlap along their length:
    the wall's two faces. Each line contributes its nearest parallel partner."""
    best, _ = nearest_parallel(lines, limit=limit)
    return best[np.isfinite(best)]


def nearest_parallel(lines, *, limit=None):
    """For every straight segment of `lines`, the distance (drawing units) to the nearest
    parallel segment that overlaps it along half the shorter one's length: a wall's other face.

    Parameters
    ----------
    lines : sequence of shapely LineString or LinearRing
        Lines of more than 12 vertices (curves flattened to chords) have no faces.
    limit : int, optional
        Stop taking segments once this many are taken (lines in their order).

    Returns
    -------
    best : (S,) ndarray of float
        inf where a segment has no partner.
    line : (S,) ndarray of int
        The index in `lines` of each segment's line.

    Examples
    --------
    >>> import shapely
    >>> best, line = nearest_parallel([shapely.LineString([(0, 0), (10, 0)]),
    ...                                shapely.LineString([(0, 3), (10, 3)]),
    ...                                shapely.LineString([(20, 0), (20, 1)])])
    >>> best.tolist(), line.tolist()
    ([3.0, 3.0, inf], [0, 1, 2])
    """
    lines = np.asarray(lines, dtype=object)
    none = np.empty(0), np.empty(0, dtype=np.intp)
    if len(lines) < 2:
        return none
    segments, owner = [], []
    for number, line in enumerate(lines):
        xy = np.asarray(line.coords)[:, :2]
        if len(xy) > 12:
            continue  # a curve flattened to chords (a round column): no wall faces
        segments.extend(zip(xy[:-1], xy[1:]))
        owner.extend([number] * (len(xy) - 1))
        if limit is not None and len(segments) >= limit:
            break
    if len(segments) < 2:
        return none
    a = np.array([s[0] for s in segments])
    b = np.array([s[1] for s in segments])
    owner = np.array(owner, dtype=np.intp)
    best = np.full(len(a), np.inf)
    finite_best, taken = _nearest_parallel(a, b)
    best[taken] = finite_best
    return best, owner


def _nearest_parallel(a, b):
    """(best gap per kept segment, indices of the kept segments) for segments a -> b."""
    empty = np.empty(0), np.empty(0, dtype=np.intp)
    taken = np.arange(len(a))
    with np.errstate(over="ignore", invalid="ignore"):
        d = b - a
        length = np.hypot(d[:, 0], d[:, 1])
    keep = length > 0
    with np.errstate(over="ignore", invalid="ignore"):
        keep &= np.isfinite(length) & np.isfinite(a).all(axis=1) & np.isfinite(b).all(axis=1)
    a, b, d, length, taken = a[keep], b[keep], d[keep], length[keep], taken[keep]
    if len(a) < 2:
        return empty
    unit = d / length[:, None]
    middle = a / 2 + b / 2
    finite = np.isfinite(middle).all(axis=1)
    if finite.sum() < 2:
        return empty
    a, b, unit, middle, length = a[finite], b[finite], unit[finite], middle[finite], length[finite]
    taken = taken[finite]
    reach = float(np.median(length)) * 2 + 1e-9
    if not np.isfinite(reach) or np.abs(middle).max() > 1e15:
        return empty  # absurd coordinates: refused by the limits later, not measured here
    # every (segment, neighbour) pair at once, each way round: a Python loop over pairs cost
    # a third of a second on a floor of a few thousand wall segments
    one, other = pairs_within(middle, reach)
    i, j = np.concatenate([one, other]), np.concatenate([other, one])
    cosine = unit[i, 0] * unit[j, 0] + unit[i, 1] * unit[j, 1]
    pair = np.abs(cosine) >= 0.995
    i, j = i[pair], j[pair]
    offset = middle[j] - a[i]
    gap = np.abs(unit[i, 0] * offset[:, 1] - unit[i, 1] * offset[:, 0])
    start = np.einsum("ij,ij->i", a[j] - a[i], unit[i])
    end = np.einsum("ij,ij->i", b[j] - a[i], unit[i])
    overlap = np.minimum(np.maximum(start, end), length[i]) - np.maximum(np.minimum(start, end), 0.0)
    pair = (gap > 0) & (overlap > 0.5 * np.minimum(length[i], length[j]))
    best = np.full(len(middle), np.inf)
    np.minimum.at(best, i[pair], gap[pair])
    return best, taken


def rack_depths(parts, *, limit=4000, rows=False, span=0.0):
    """Depths (drawing units) of the rack bays among closed four-cornered parts: the shorter
    side of each rectangle (opposite sides within 1 %, diagonals too) at most RACK_BAY_ASPECT
    times shorter than the longer, at most `limit` of them. Squares (sides within
    RACK_BAY_SQUARE of each other) are upright posts or columns, not bays: a 100 mm post
    read as a bay 1 m deep would make a metric warehouse ten times too large. With `rows`,
    the depths of the rectangles longer than that instead, and at least RACK_ROW_SHARE of
    the plan's `span` long: whole rack rows drawn as one outline, their bays as lines across
    them or not drawn. An upright frame drawn as a rectangle (100 x 1,100 mm) is as thin for
    its length as a row, but a small share of the plan: its 100 mm would read as a 1 m row
    in cm.

    Examples
    --------
    >>> from clearway.converter.parts import CLOSED, Parts
    >>> bays = Parts.from_list([[(0, 0), (108, 0), (108, 42), (0, 42)],
    ...                         [(0, 0), (1200, 0), (1200, 42), (0, 42)],
    ...                         [(0, 0), (100, 0), (100, 100), (0, 100)],
    ...                         [(0, 0), (5, 0), (3, 4)]], [CLOSED, CLOSED, CLOSED, CLOSED])
    >>> rack_depths(bays).tolist()
    [42.0]
    >>> rack_depths(bays, rows=True, span=3600).tolist()
    [42.0]
    >>> rack_depths(bays, rows=True, span=36000).tolist()
    []
    """
    from clearway.converter.parts import CLOSED

    counts = np.diff(parts.offsets)
    four = np.flatnonzero((parts.kinds == CLOSED) & (counts == 4))[:limit]
    if not len(four):
        return np.empty(0)
    corners = parts.coords[parts.offsets[four][:, None] + np.arange(4)]
    with np.errstate(over="ignore", invalid="ignore"):
        sides = np.linalg.norm(np.roll(corners, -1, axis=1) - corners, axis=2)
        diagonals = np.linalg.norm(corners[:, 2:] - corners[:, :2], axis=2)
        rectangle = (np.abs(sides[:, 0] - sides[:, 2]) <= 0.01 * sides[:, 0]) & \
            (np.abs(sides[:, 1] - sides[:, 3]) <= 0.01 * sides[:, 1]) & \
            (np.abs(diagonals[:, 0] - diagonals[:, 1]) <= 0.01 * diagonals[:, 0]) & \
            (sides.min(axis=1) > 0) & np.isfinite(sides).all(axis=1)
    short = np.minimum(sides[rectangle, 0], sides[rectangle, 1])
    long = np.maximum(sides[rectangle, 0], sides[rectangle, 1])
    if rows:
        return short[(long > RACK_BAY_ASPECT * short) & (long >= RACK_ROW_SHARE * span)]
    return short[(long <= RACK_BAY_ASPECT * short) & (long > RACK_BAY_SQUARE * short)]


def dimension_factors(dimensions):
    """Metres per drawing unit implied by dimension texts that state a length in feet and
    inches (``13'-8"``, ``9' 6 1/2"``) or with a metric unit (``3.60 m``)."""
    factors = []
    for _, measured, text in dimensions:
        metres = text_length_m(text)
        if metres and measured > 0:
            factors.append(metres / measured)
    return np.array(factors)


def text_length_m(text):
    """The length a dimension text states, metres, or None when it states no unit.

    Examples
    --------
    >>> round(text_length_m("13'-8\\""), 4), round(text_length_m('2\\' 10 1/2"'), 4), text_length_m("3.60 m")
    (4.1656, 0.8763, 3.6)
    >>> text_length_m("4150") is None
    True
    """
    text = text.strip().replace("\u2032", "'").replace("\u2033", '"')
    match = _WITH_UNIT.match(text)
    if match:
        return float(match.group(1).replace(",", ".")) * UNITS_TO_M[match.group(2).lower()]
    if "'" not in text and '"' not in text:
        return None
    match = _FEET_INCHES.match(text)
    if not match or not any(match.groups()):
        return None
    feet, inches, numerator, denominator = match.groups()
    total = float(feet or 0) * 12 + float(inches or 0)
    if numerator and denominator and float(denominator) > 0:
        total += float(numerator) / float(denominator)
    return total * 0.0254 if total > 0 else None


def _plain_number(text, feet=False):
    """A number as a plan writes it: with both separators the last is the decimal one
    (1,257.42 or 1.257,42); a separator written twice groups thousands (1.257.000); one comma
    before three digits groups thousands in square feet (1,257 sf), else it is decimal (28,51)."""
    separators = [c for c in text if c in ",."]
    if len(set(separators)) == 2:
        decimal = separators[-1]
        return float(text.replace("," if decimal == "." else ".", "").replace(decimal, "."))
    if len(separators) > 1:
        return float(text.replace(separators[0], ""))
    if separators == [","] and feet and re.fullmatch(r"\d{1,3},\d{3}", text):
        return float(text.replace(",", ""))
    return float(text.replace(",", "."))


def text_area_m2(text):
    """The floor area a room's text states, square metres, or None when it states none.

    Examples
    --------
    >>> text_area_m2("mq=28.51"), text_area_m2("Palier 2,09 m²"), text_area_m2("AREA :- 116.818 Sq.M.")
    (28.51, 2.09, 116.818)
    >>> round(text_area_m2("855 SQ. FT."), 4), round(text_area_m2("1,257 sf"), 4)
    (79.4321, 116.7791)
    >>> text_area_m2("1.257,5 m2"), text_area_m2("12,500 m²")
    (1257.5, 12.5)
    >>> text_area_m2("H=2.60"), text_area_m2("3.60 m"), text_area_m2("12 SFX")
    (None, None, None)
    """
    match = _AREA_AFTER.search(text)
    if match:
        value, unit = match.group(1), match.group(2)
    else:
        match = _AREA_BEFORE.search(text)
        if not match:
            return None
        unit, value = match.group(1), match.group(2)
    feet = re.fullmatch(_SQUARE_METRES, unit, re.IGNORECASE) is None
    area = _plain_number(value, feet)
    if feet:
        area *= SQUARE_FOOT_M2
    return area if area > 0 else None


def area_factors(texts, rings):
    """Metres per drawing unit implied by room-area texts (`text_area_m2`) inside closed
    outlines: sqrt(stated area / the area of the smallest outline holding the text).

    Parameters
    ----------
    texts : sequence of (x, y, text), drawing units
    rings : array of closed LineString or LinearRing, drawing units (any layer's closed
        polylines: room outlines are often drawn for the area they state)

    Returns
    -------
    (N,) ndarray, one factor for each area text inside an outline.

    Examples
    --------
    >>> room = shapely.box(0, 0, 5000, 4000).exterior           # 5 m x 4 m drawn in mm
    >>> area_factors([(2500, 2000, "20.00 m²"), (9000, 0, "7 m²")], [room]).tolist()
    [0.001]
    """
    stated = [(x, y, area) for x, y, text in texts
              if (area := text_area_m2(text)) is not None]
    rings = np.asarray(rings, dtype=object).reshape(-1)
    if not stated or len(rings) == 0:
        return np.empty(0)
    outlines = shapely.polygons(rings)
    size = shapely.area(outlines)
    keep = shapely.is_valid(outlines) & (size > 0)
    outlines, size = outlines[keep], size[keep]
    if len(outlines) == 0:
        return np.empty(0)
    xy = np.array([(x, y) for x, y, _ in stated], dtype=float)
    text_index, outline = shapely.STRtree(outlines).query(shapely.points(xy),
                                                          predicate="within")
    smallest = np.full(len(stated), np.inf)
    np.minimum.at(smallest, text_index, size[outline])
    held = np.isfinite(smallest)
    area = np.array([a for _, _, a in stated])
    return np.sqrt(area[held] / smallest[held])


def text_size_m(text):
    """The two sides a room-size text states, metres, or None when it states no size with a
    unit (feet and inches, or mm, cm or m after the second side).

    Examples
    --------
    >>> [round(v, 4) for v in text_size_m("14'2'' x 12'4''")]
    [4.318, 3.7592]
    >>> text_size_m("3.60 x 4.20 m"), text_size_m("Kitchen\\n360 x 420 cm")
    ((3.6, 4.2), (3.6, 4.2))
    >>> text_size_m("3.60 x 4.20"), text_size_m("2 x 4"), text_size_m("Hallway")
    (None, None, None)
    """
    for line in text.replace("\\P", "\n").replace("\\n", "\n").splitlines():
        match = _SIZE.match(line)
        if not match:
            continue
        first, second = match.groups()
        width, depth = text_length_m(first), text_length_m(second)
        metric = _WITH_UNIT.match(second)
        if width is None and metric and _BARE_NUMBER.match(first):
            width = text_length_m(f"{first} {metric.group(2)}")   # "3.60 x 4.20 m": both in m
        if width and depth:
            return width, depth
    return None


def size_factors(texts, walls, *, reach):
    """Metres per drawing unit implied by room-size texts (`text_size_m`): the clear span of
    the room across each text, along x and along y, to the nearest wall linework.

    Parameters
    ----------
    texts : sequence of (x, y, text), drawing units
    walls : array of LineString (wall faces), drawing units
    reach : float
        How far the spans are sought, drawing units (the plan's size).

    Returns
    -------
    (N,) ndarray, one value for each text with walls round it: the geometric mean of the
    factors its two sides imply where they agree (within 3 %, in either order); else the
    factor of a side that implies a candidate unit (a room's other side often ends at a
    closet or an alcove), stated width along x, depth along y; else NaN (no unit).

    Examples
    --------
    >>> room = shapely.box(0, 0, 400, 300).exterior              # 4 m x 3 m drawn in cm
    >>> size_factors([(150, 120, "3.00 x 4.00 m")], [room], reach=1000).round(6).tolist()
    [0.01]
    """
    stated = [(x, y, size) for x, y, text in texts if (size := text_size_m(text)) is not None]
    walls = np.asarray(walls, dtype=object).reshape(-1)
    if not stated or len(walls) == 0 or not reach > 0:
        return np.empty(0)
    faces = shapely.get_parts(walls)
    # marks smaller than a fiftieth of the plan (arrows, ticks, small columns) are no room's
    # sides: a span is measured between walls
    low_x, low_y, high_x, high_y = shapely.bounds(faces).T
    faces = faces[np.hypot(high_x - low_x, high_y - low_y) >= reach / 50]
    origin = np.repeat(np.array([(x, y) for x, y, _ in stated], dtype=float), 4, axis=0)
    step = np.tile(np.array([(1, 0), (-1, 0), (0, 1), (0, -1)], dtype=float), (len(stated), 1))
    rays = shapely.linestrings(np.stack([origin, origin + step * reach], axis=1))
    ray, face = shapely.STRtree(faces).query(rays, predicate="intersects")
    points, hit = shapely.get_coordinates(shapely.intersection(rays[ray], faces[face]),
                                          return_index=True)
    nearest = np.full(len(rays), np.inf)
    np.minimum.at(nearest, ray[hit],
                  np.abs(((points - origin[ray[hit]]) * step[ray[hit]]).sum(axis=1)))
    span_x, span_y = (nearest[0::4] + nearest[1::4]), (nearest[2::4] + nearest[3::4])
    factors = []
    for (_, _, (a, b)), across, along in zip(stated, span_x, span_y):
        if not (np.isfinite(across) and np.isfinite(along) and across > 0 and along > 0):
            continue
        value = np.nan
        for first, second in ((a / across, b / along), (a / along, b / across)):
            if abs(first / second - 1) <= 0.03:
                value = float(np.sqrt(first * second))
                break
        else:
            sides = [ratio for ratio in (a / across, b / along) if _implies_a_unit(ratio)]
            value = sides[0] if sides else np.nan
        factors.append(value)
    return np.array(factors, dtype=float)


def _implies_a_unit(factor):
    """Whether metres-per-unit `factor` is a candidate unit's, within 3 %."""
    return any(abs(factor / UNITS_TO_M[units] - 1) <= 0.03 for units in CANDIDATE_UNITS)


def header_evidence(header):
    """Evidence from the header's other unit settings, for a drawing whose $INSUNITS names
    no unit: a length format in feet and inches ($LUNITS 3 or 4: the unit is an inch) and
    the imperial measurement system ($MEASUREMENT = 0: inches or feet).

    Examples
    --------
    >>> [item.kind for item in header_evidence({"$LUNITS": 4, "$MEASUREMENT": 0})]
    ['length format', 'measurement']
    >>> header_evidence({"$LUNITS": 2, "$MEASUREMENT": 1})
    []
    """
    found = []
    if header.get("$LUNITS") in INCH_FORMATS:
        found.append(Evidence("length format", np.array([float(header["$LUNITS"])]), 2.0))
    if header.get("$MEASUREMENT") == 0:
        found.append(Evidence("measurement", np.array([0.0]), 1.0))
    return found


def plausibility(evidence, units):
    """Share (0 to 1) of the measurements that unit `units` makes plausible."""
    if evidence.kind == "length format":
        return float(units == "in")
    if evidence.kind == "measurement":
        return float(units in ("in", "ft"))
    factor = UNITS_TO_M[units]
    if evidence.implied:
        # a dimension's factor agrees with a unit within 3 % (rounded dimension text)
        return float(np.mean(np.abs(evidence.values / factor - 1) <= 0.03))
    low, high = {"door swings": DOOR_LEAF_M, "wall thickness": WALL_THICKNESS_M,
                 "rack bays": RACK_DEPTH_M, "rack rows": RACK_DEPTH_M,
                 "extent": PLAN_SPAN_M}[evidence.kind]
    metres = evidence.values * factor
    share = (metres >= low) & (metres <= high)
    if evidence.kind == "wall thickness":
        typical = (metres >= TYPICAL_WALL_M[0]) & (metres <= TYPICAL_WALL_M[1])
        return float(np.mean(np.where(typical, 1.0, 0.5 * share)))
    return float(np.mean(share))


def describe(evidence, units):
    """One phrase: what the evidence measures in `units` ("doors 0.71-0.91 m")."""
    if evidence.kind == "length format":
        return f"$LUNITS = {evidence.values[0]:.0f} ({INCH_FORMATS[int(evidence.values[0])]}: the unit is an inch)"
    if evidence.kind == "measurement":
        return "$MEASUREMENT = 0 (imperial)"
    factor = UNITS_TO_M[units]
    values = evidence.values
    if evidence.implied:
        texts = {"area text": "room-area texts", "size text": "room-size texts"}.get(
            evidence.kind, "dimension texts")
        values = values[np.isfinite(values)]
        return f"{len(values)} {texts} give {np.median(values) / factor:.3g} x this unit"
    low, high = np.percentile(values * factor, [10, 90])
    name = {"door swings": "doors", "wall thickness": "walls", "extent": "the plan"}.get(evidence.kind)
    if evidence.kind == "extent":
        return f"the plan {_metres(high)} across"
    if evidence.kind in ("rack bays", "rack rows"):
        return f"{evidence.kind} {_metres(low)}-{_metres(high)} deep"
    return f"{name} {_metres(low)}-{_metres(high)}" + (" thick" if name == "walls" else " wide")


def _metres(value):
    if value < 0.1:
        return f"{value * 1000:.0f} mm"
    return f"{value:.2f} m" if value < 100 else f"{value:.0f} m"


def judge_units(evidence):
    """Score every candidate unit: {unit: weighted plausibility}, the best unit first."""
    scores = {}
    for units in CANDIDATE_UNITS:
        scores[units] = sum(item.weight * plausibility(item, units) for item in evidence)
    return dict(sorted(scores.items(), key=lambda pair: -pair[1]))


def gather_evidence(*, swing_arcs, wall_lines, dimensions, span, rack_bays=(), rack_rows=(),
                    areas=(), sizes=()):
    """Collect the evidence (drawing units) that is there; a kind with too few samples is
    left out (one arc is a chair, two doors a plan). `rack_bays` and `rack_rows` are the
    depths of rack bays and of whole rows (`rack_depths`), `areas` and `sizes` the factors
    room-area and room-size texts imply (`area_factors`, `size_factors`)."""
    found = []
    radii = door_swings(swing_arcs)
    if len(radii) >= 2:
        found.append(Evidence("door swings", radii, 2.0))
    if len(rack_bays) >= 4:
        found.append(Evidence("rack bays", np.asarray(rack_bays, dtype=float), 2.0))
    if len(rack_rows) >= 4:
        # a row is as deep as its bays, but a long rectangle on a racking layer may also be
        # a walkway or a zone: it counts half as much as the bays
        found.append(Evidence("rack rows", np.asarray(rack_rows, dtype=float), 1.0))
    thickness = wall_thicknesses(wall_lines)
    if len(thickness) >= 4:
        # the most common thicknesses: the lower three quarters (a room's width is no wall)
        thickness = np.sort(thickness)[: max(4, int(len(thickness) * 0.75))]
        found.append(Evidence("wall thickness", thickness, 1.0))
    factors = dimension_factors(dimensions)
    if len(factors):
        found.append(Evidence("dimension text", factors, 3.0, implied=True))
    # an area text whose outline is not its room's (a corridor, the whole floor, a frame
    # round the text) implies no unit at all: only those that imply one count
    areas = np.asarray(areas, dtype=float)
    agree = np.array([_implies_a_unit(factor) for factor in areas], dtype=bool)
    if agree.sum() >= MIN_AREA_TEXTS:
        found.append(Evidence("area text", areas[agree], 3.0, implied=True))
    # a size text's span runs between walls, so every one measured counts: a unit must
    # explain most of them (NaN where a text implies none)
    sizes = np.asarray(sizes, dtype=float)
    if np.isfinite(sizes).sum() >= MIN_AREA_TEXTS:
        found.append(Evidence("size text", sizes, 3.0, implied=True))
    if span > 0:
        found.append(Evidence("extent", np.array([span]), 1.0))
    return found


def decide_from_content(header_unit, override, evidence, *, source):
    """Decide the unit from the option, the header and the content's evidence.

    Parameters
    ----------
    header_unit : str or None
        The unit the header names (None when it names none clearway knows).
    override : str or None
        The user's --units: it always wins.
    evidence : list of Evidence

    Returns
    -------
    (units, unit_source, note, evidence_lines, warnings)
        `units` None when neither the header nor the content decides (the caller assumes).
    """
    scores = judge_units(evidence) if evidence else {}
    supporting = [item for item in evidence if item.kind != "extent"]
    # the plan's size alone never decides: every unit makes some building; nor does the
    # imperial measurement system alone, which leaves inches and feet
    substantive = [item for item in supporting if item.kind != "measurement"]
    support = judge_units(supporting) if supporting else {}
    lines = tuple(f"{item.kind}: {', '.join(f'{unit} {plausibility(item, unit):.0%}' for unit in CANDIDATE_UNITS)}"
                  for item in evidence)
    if override is not None:
        return override, "option", None, lines, ()
    best = next(iter(scores), None)
    read = "; ".join(describe(item, best) for item in evidence) if best else ""
    if header_unit is not None:
        extent = _extent_item(evidence)
        impossible = extent is not None and best is not None and \
            plausibility(extent, header_unit) == 0.0 and plausibility(extent, best) > 0.0
        lead = IMPOSSIBLE_PLAN_LEAD if impossible else 1.0
        if best and best != header_unit and substantive and \
                scores[best] - scores.get(header_unit, 0.0) >= 1.5 and \
                support[best] - support.get(header_unit, 0.0) >= lead:
            said = "; ".join(describe(item, header_unit) for item in evidence)
            also = _alike(evidence, scores, support, best)
            warning = (f"{source}: header says {header_unit}: {said}; read in {best}: {read}"
                       f"{also}; pass --units {header_unit} if the header is right")
            note = (f"Read in {best} from the drawing's content (the header says {header_unit}, "
                    f"but in {header_unit} {said}; in {best} {read}{also}); pass --units to say "
                    f"otherwise.")
            return best, "content", note, lines, (warning,)
        return header_unit, "header", None, lines, ()
    runner_up = max((value for unit, value in support.items() if unit != best), default=0.0)
    clear = best in support and (support[best] >= 1.0 or (
        support[best] >= CLEAR_SUPPORT and support[best] - runner_up >= CLEAR_LEAD))
    if best and substantive and scores[best] >= 1.0 and clear:
        also = _alike(evidence, scores, support, best)
        note = (f"Read in {best} from the drawing's content (the header's $INSUNITS gives no "
                f"unit): {read}{also}; pass --units to say otherwise.")
        warning = (f"{source}: drawing has no units in its header; read in {best} from its "
                   f"content ({read}){also}; pass --units if that is wrong")
        return best, "content", note, lines, (warning,)
    lean = _leaning_unit(evidence, substantive)
    if lean is not None:
        read = "; ".join(describe(item, lean) for item in evidence)
        note = (f"Read in {lean}, the unit the drawing's content leans to (the header's "
                f"$INSUNITS gives no unit, and metres would make the plan implausibly large): "
                f"{read}; pass --units to say otherwise.")
        warning = (f"{source}: drawing has no units in its header, and its content does not "
                   f"settle one; read in {lean}, the likeliest ({read}), not in metres (the plan "
                   f"{_metres(_extent(evidence))} across); pass --units if that is wrong")
        return lean, "content", note, lines, (warning,)
    return None, "assumed", None, lines, ()


def _alike(evidence, scores, support, best):
    """"; in UNIT it reads just as well: ..." for each unit the content fits exactly as well
    as `best` (the choice among them is the order of CANDIDATE_UNITS, and the user must hear
    of the others), or ""."""
    alike = [unit for unit in scores if unit != best and
             abs(scores[unit] - scores[best]) < 1e-9 and
             abs(support.get(unit, 0.0) - support.get(best, 0.0)) < 1e-9]
    return "".join(f"; in {unit} it reads just as well: "
                   f"{'; '.join(describe(item, unit) for item in evidence)}" for unit in alike)


def _extent_item(evidence):
    """The extent evidence (the plan's size), or None."""
    return next((item for item in evidence if item.kind == "extent"), None)


def _extent(evidence):
    """The plan's size in drawing units (the extent evidence), or 0."""
    extent = _extent_item(evidence)
    return float(extent.values[0]) if extent is not None else 0.0


def _leaning_unit(evidence, substantive):
    """The unit to read a drawing with no unit in its header in, when its content does not
    settle one but metres would make the plan larger than any one floor (PLAN_SPAN_M): among
    the units that make its size plausible, the one the substantive evidence supports most,
    ahead of every other; None when metres is plausible or nothing leads.

    Without it the plan is assumed in metres, or in the first unit of a fixed order that
    makes its size a building (`units.likely_unit`), whatever its walls say.
    """
    extent = _extent_item(evidence)
    if extent is None or not substantive or plausibility(extent, "m") > 0:
        return None
    support = {unit: sum(item.weight * plausibility(item, unit) for item in substantive)
               for unit in CANDIDATE_UNITS if plausibility(extent, unit) > 0}
    ranked = sorted(support.items(), key=lambda pair: -pair[1])
    if not ranked or ranked[0][1] <= 0 or (len(ranked) > 1 and ranked[1][1] >= ranked[0][1]):
        return None
    return ranked[0][0]
