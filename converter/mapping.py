"""Map a drawing's layers to roles and decide its unit: what `layers` shows and `build` uses.

Layer names decide roles (`roles.Roles`). When no layer is named as walls or boundary, the
layer whose content looks most like walls (pairs of parallel lines, then the most linework)
is taken for walls, and the user is told. The unit comes from --units, else the header
checked against the content's evidence (`evidence`), else a guess from the plan's size.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import shapely

from clearway.errors import DrawingError

from clearway.converter.evidence import (MIN_AREA_TEXTS, WALL_THICKNESS_M, area_factors,
                                         decide_from_content, describe, gather_evidence,
                                         header_evidence, hinged_on, judge_units,
                                         nearest_parallel, rack_depths, size_factors,
                                         text_area_m2, text_size_m, wall_thicknesses)
from clearway.converter.floorplan import ROLES, LeftOutLayer
from clearway.converter.inserts import BLOCK_OPENING_PREFIX
from clearway.converter.openings import arc_radius
from clearway.converter.parts import CLOSED, OPEN, Parts
from clearway.converter.read import read_drawing
from clearway.converter.roles import (DEFAULT_IGNORED_PATTERNS, DEFAULT_ROLE_PATTERNS,
                                      NOT_RACKING_PATTERNS, ROLE_OPTION_NAMES,
                                      ignored_by_default, matches_any,
                                      name_candidates, opening_kind)
from clearway.converter.units import INSUNITS_CODES, UNITS_TO_M, decide_units
from clearway.converter.views import VIEW_GAP, find_views


@dataclass
class LayerMapping:
    """A read drawing with its layer roles and unit decided (drawing units inside)."""

    content: object
    visible: set
    role_of: dict                      # layer -> role or None (guesses included)
    by_role: dict                      # role -> visible layers holding something
    units: str
    m_per_unit: float
    unit_note: str
    unit_source: str
    unit_evidence: tuple
    warnings: list = field(default_factory=list)
    left_out: tuple = ()               # LeftOutLayer per visible layer no role takes
    unit_doubt: str = ""               # why --units looks wrong ("" when it does not)


def _holds(content, name):
    return bool(content.counts.get(name)) or name in content.parts


def map_drawing(path, *, roles, units, chord_tolerance, limits, ahead=None):
    """Read `path`, give every layer its role and decide the unit; return a LayerMapping.
    `ahead`: its text read ahead (`read.read_drawing`)."""
    content = read_drawing(path, chord_tolerance=chord_tolerance, units=units, limits=limits,
                           block_kind=opening_kind, ahead=ahead)
    source = content.source
    visible = {name for name, (frozen, off) in content.layer_states.items() if not (frozen or off)}
    role_of = {name: roles.role_of(name) for name in content.layer_states}
    warnings = list(content.warnings)
    wall_like = [name for name in visible if role_of.get(name) in ("wall", "boundary")
                 and _holds(content, name)]
    if "wall" not in roles.explicit and "boundary" not in roles.explicit:
        guess = guess_wall_layer(content, visible, role_of)
        if guess is not None and not wall_like:
            name, reason = guess
            role_of[name] = "wall"
            warnings.append(f"{source}: no layer is named as walls; took layer {name!r} for walls "
                            f"({reason}); pass --walls to choose")
        elif guess is not None and _outweighs(content, guess[0], wall_like):
            name, reason = guess
            role_of[name] = "wall"
            warnings.append(f"{source}: the wall layers ({', '.join(sorted(wall_like)[:3])}) hold "
                            f"few wall faces; layer {name!r} looks more like walls ({reason}) and "
                            f"was taken for walls too; pass --walls to choose")
    by_role = {role: [] for role in ROLES}
    for name in sorted(content.layer_states):
        role = role_of.get(name)
        if role is None or not _holds(content, name):
            continue
        if name not in visible:
            if content.counts.get(name):
                warnings.append(f"{source}: layer {name!r} ({role}) is frozen or off; ignored")
            continue
        by_role[role].append(name)
    left_out = left_out_layers(content, visible, role_of, roles)
    for layer in left_out:
        if layer.replaced_by:
            option = layer.replaced_by
            patterns = " ".join(roles.patterns[layer.default_role])
            warnings.append(f"{source}: layer {layer.name!r} has {layer.holds} and no role: its "
                            f"default role {layer.default_role} was replaced by {option} "
                            f"{patterns!r}; add {option} {layer.name!r} to keep it")
    decision = _decide_units(content, units, by_role, visible, role_of)
    unit, factor, note, source_kind, lines, unit_warnings, doubt = decision
    warnings += unit_warnings
    return LayerMapping(content, visible, role_of, by_role, unit, factor, note, source_kind,
                        lines, warnings, left_out, doubt)


def left_out_layers(content, visible, role_of, roles):
    """Return a LeftOutLayer for each visible layer with linework or points and no role.

    Parameters
    ----------
    content : DrawingContent
    visible : set of str
        Layers neither frozen nor off.
    role_of : mapping of str to str or None
        Each layer's role as decided (a guessed wall layer included).
    roles : Roles
        The patterns in force; a default role the user replaced is named.

    Returns
    -------
    tuple of LeftOutLayer, sorted by name (case-insensitive)
    """
    found = []
    for name in sorted(visible, key=str.upper):
        if role_of.get(name) is not None or name.startswith(BLOCK_OPENING_PREFIX):
            continue
        counts = content.counts.get(name, {})
        if not (len(content.parts.get(name, ())) or counts.get("POINT")):
            continue
        names = name_candidates(name)
        default = next((role for role in ROLES
                        if matches_any(names, DEFAULT_ROLE_PATTERNS[role])), "")
        ignored = ignored_by_default(names) or (
            default == "racking" and matches_any(names, NOT_RACKING_PATTERNS))
        replaced = default in roles.explicit and not ignored
        found.append(LeftOutLayer(name, tuple(sorted(counts.items())), default, ignored,
                                  f"--{ROLE_OPTION_NAMES[default]}" if replaced else ""))
    return tuple(found)


#: Layers never guessed to be walls: furniture, fittings, annotation, hatching, grids and
#: axes (also in Chinese and Japanese drafting: 轴线, 标注, 文字, 尺寸, 家具, 填充, DOTE), the
#: site around the building (planting, trees, contours, paving), and floor markings (painted
#: aisle lines and AGV paths come in pairs of parallel lines as walls do).
NOT_WALLS = ("*FURN*", "*MOBIL*", "*MÖBEL*", "*MOEBEL*", "*FIXT*", "*EQPM*", "*EQUIP*",
             "*TEXT*", "*DIM*", "*ANNO*", "*HATCH*", "*PATT*", "*GRID*", "*AXIS*", "*TITLE*",
             "*VIEWPORT*", "*VPORT*", "DEFPOINTS", "*PLANT*", "*TREE*", "*VEGET*", "*LANDSCAP*",
             "*TOPO*", "*CONTOUR*", "*PFLANZ*", "*BAUM*", "*ARBRE*", "*ARBOL*", "*PAVING*",
             "*TEXTURE*", "*FLOORING*", "*TILE*", "L-*", "DOTE*", "*轴*", "*標註*", "*标注*",
             "*文字*", "*尺寸*", "*家具*", "*填充*", "*STRIP*", "*PAINT*", "*MARKING*",
             "*AGV*") + DEFAULT_IGNORED_PATTERNS


def guess_wall_layer(content, visible, role_of):
    """Return (layer, reason) for the unmapped layer that looks most like walls, or None.

    Walls are drawn as two parallel faces: the layer with the most lines that have a
    parallel partner close by wins; with none, the layer with the most linework.
    """
    best, best_key, reason = None, None, ""
    for name in sorted(visible):
        if role_of.get(name) is not None or name not in content.parts or \
                matches_any(name_candidates(name), NOT_WALLS):
            continue
        lines, rings, _ = content.parts[name].geometries()
        count = len(lines) + len(rings)
        if count < 8:
            continue
        pairs = len(wall_thicknesses(np.concatenate([lines, rings])))
        key = (pairs, count)
        if best_key is None or key > best_key:
            best, best_key = name, key
            reason = (f"{pairs} of its {count} lines have a parallel partner, as wall faces do"
                      if pairs else f"it holds the most linework, {count} lines")
    return None if best is None else (best, reason)


#: An unnamed layer is taken for walls beside the named ones when it has this many times
#: their wall-face pairs, and at least MIN_FACE_PAIRS (a plan imported from PDF or another
#: program often keeps the structure on a layer named for something else).
OUTWEIGH_FACTOR = 4
MIN_FACE_PAIRS = 40
#: The header's unit is doubted (said, not overridden) when the content's measurements
#: (doors, walls, dimension texts; not the plan's size) give another unit at least this
#: share of their weight and the header's unit at most HEADER_DOUBT_LEFT of it.
HEADER_DOUBT_SUPPORT = 0.75
HEADER_DOUBT_LEFT = 0.25


def _outweighs(content, name, wall_layers):
    """True when layer `name` holds far more parallel wall faces than `wall_layers` together."""
    def pairs(names):
        geometry = [np.concatenate(content.parts[n].geometries()[:2]) for n in names
                    if n in content.parts]
        return len(wall_thicknesses(np.concatenate(geometry))) if geometry else 0
    found = pairs([name])
    return found >= MIN_FACE_PAIRS and found >= OUTWEIGH_FACTOR * pairs(wall_layers)


def _span(content, layers):
    boxes = [content.parts[name].extents() for name in layers
             if name in content.parts and len(content.parts[name])]
    if not boxes:
        return 0.0
    box = np.array(boxes, dtype=float)
    with np.errstate(over="ignore", invalid="ignore"):  # refused later by the limits
        span = float(np.max(box[:, 2:].max(axis=0) - box[:, :2].min(axis=0)))
    return span if np.isfinite(span) else 0.0


#: Door swings hinged on the walls that are enough to judge the unit by alone.
MIN_HINGED_SWINGS = 3


def _quarter_turns(arcs):
    _, sweep = arc_radius(arcs)
    return (sweep >= 60) & (sweep <= 120)


def _decide_units(content, override, by_role, visible, role_of):
    """(units, m_per_unit, note, source, evidence lines, warnings, unit doubt) for a drawing."""
    source = content.source
    mapped = [name for role in ("wall", "boundary", "racking", "keepout", "opening", "stair")
              for name in by_role[role]]
    span = _span(content, mapped or [name for name in visible if name in content.parts])
    arc_layers = by_role["opening"] + by_role["wall"] + \
        [BLOCK_OPENING_PREFIX + "door"] + \
        [name for name in visible if role_of.get(name) is None]
    arcs = Parts.concat([content.parts[name] for name in arc_layers if name in content.parts]).arcs()
    wall = Parts.concat([content.parts[name] for name in by_role["wall"] if name in content.parts])
    lines, rings, fills = wall.geometries()
    if len(arcs):
        # door swings hinge on the walls: arcs of fittings and symbols elsewhere (basins,
        # section bubbles) would speak for another unit; kept all when too few are hinged
        hinged = hinged_on(arcs, np.concatenate([lines, rings])) & _quarter_turns(arcs)
        if hinged.sum() >= MIN_HINGED_SWINGS:
            arcs = arcs[hinged]
    racks = Parts.concat([content.parts[name] for name in by_role["racking"]
                          if name in content.parts])
    evidence = gather_evidence(swing_arcs=arcs, wall_lines=np.concatenate([lines, rings]),
                               dimensions=content.dimensions, span=span,
                               rack_bays=rack_depths(racks),
                               rack_rows=rack_depths(racks, rows=True, span=span),
                               areas=_area_factors(content, visible),
                               sizes=_size_factors(content, visible,
                                                   [lines, rings, shapely.boundary(fills)], span))
    header_unit = INSUNITS_CODES.get(content.insunits)
    if header_unit is None:
        evidence += header_evidence(content.header)
    unit, unit_source, note, lines, warnings = decide_from_content(
        header_unit, override, evidence, source=source)
    if unit_source == "content":
        return unit, UNITS_TO_M[unit], note, "content", lines, tuple(warnings), ""
    chosen, factor, default_note, span_warnings = decide_units(content.insunits, override, span,
                                                               source=source)
    kind = "option" if override else "header" if header_unit else "assumed"
    doubt = unit_doubt(header_unit, override, evidence, source=source) or \
        header_doubt(header_unit, override, evidence)
    if doubt:
        span_warnings = (*span_warnings, f"{source}: {doubt}")
    return chosen, factor, default_note, kind, lines, tuple(span_warnings), doubt


def _texts_stating(content, visible, reading):
    """(x, y, text) of the texts and attributes on visible layers that `reading` (text ->
    value or None) finds a value in."""
    return [(x, y, text) for layer, x, y, text, _ in content.texts + content.attribute_texts
            if layer in visible and reading(text) is not None]


def _area_factors(content, visible):
    """Metres per unit that the room-area texts on visible layers imply (`area_factors`),
    measured against the closed outlines and filled areas of every visible layer."""
    texts = _texts_stating(content, visible, text_area_m2)
    if len(texts) < MIN_AREA_TEXTS:
        return np.empty(0)
    outlines = [np.empty(0, dtype=object)]
    for name in sorted(visible):
        if name in content.parts and len(content.parts[name].kinds):
            _, rings, fills = content.parts[name].geometries()
            outlines += [rings, shapely.get_exterior_ring(fills)]
    return area_factors(texts, np.concatenate(outlines))


def _size_factors(content, visible, walls, span):
    """Metres per unit that the room-size texts on visible layers imply (`size_factors`),
    measured between the wall faces `walls` (arrays of lines)."""
    texts = _texts_stating(content, visible, text_size_m)
    if len(texts) < MIN_AREA_TEXTS:
        return np.empty(0)
    return size_factors(texts, np.concatenate([np.asarray(w, dtype=object) for w in walls]),
                        reach=span)


def header_doubt(header_unit, override, evidence):
    """Say why the header's unit looks wrong, or "": it kept the header (the content's lead
    was short of overriding it), but what the content measures is implausible in it and
    plausible in another unit (walls 2.5 m thick in cm, 0.25 m in mm).

    Returns
    -------
    str
        "the header says cm: walls 2.50 m-3.00 m thick, ...; in mm: walls 0.25 m-0.30 m
        thick, ...; pass --units mm if the header is wrong", or "".
    """
    if override is not None or header_unit is None:
        return ""
    substantive = [item for item in evidence if item.kind not in ("extent", "measurement",
                                                                   "length format")]
    if not substantive:
        return ""
    support = judge_units(substantive)
    best = next(iter(support))
    weight = sum(item.weight for item in substantive)
    if best == header_unit or support[best] < HEADER_DOUBT_SUPPORT * weight or \
            support.get(header_unit, 0.0) > HEADER_DOUBT_LEFT * weight:
        return ""
    said = ", ".join(describe(item, header_unit) for item in evidence)
    read = ", ".join(describe(item, best) for item in evidence)
    return (f"the header says {header_unit}: {said}; in {best}: {read}; pass --units {best} "
            f"if the header is wrong")


def unit_doubt(header_unit, override, evidence, *, source):
    """Say why --units looks wrong, or "": the header, else the content, decides another unit.

    Parameters
    ----------
    header_unit : str or None
    override : str or None
        The user's --units.
    evidence : list of evidence.Evidence

    Returns
    -------
    str
        "read in m as --units says: walls 300 m thick, the plan 60000 m across; in mm, as
        the header says: walls 0.30 m thick, ...; pass --units mm if that is right", or "".
    """
    if override is None or not evidence:
        return ""
    natural, kind, *_ = decide_from_content(header_unit, None, evidence, source=source)
    if natural is None or natural == override:
        return ""
    said = ", ".join(describe(item, override) for item in evidence)
    read = ", ".join(describe(item, natural) for item in evidence)
    return (f"read in {override} as --units says: {said}; in {natural}, as the "
            f"{'header' if kind == 'header' else 'content'} says: {read}; pass --units "
            f"{natural} if that is right")


@dataclass
class ViewChoice:
    """The drawings found in model space and the warnings about the choice."""

    views: list
    warnings: list


def keep_one_view(mapping, *, region=None, apply=True):
    """Find the drawings in model space and keep only the floor plan's linework and texts.

    Parameters
    ----------
    mapping : LayerMapping
        Its content is filtered in place when `apply` (parts, points, texts, dimensions).
    region : (x0, y0, x1, y1), optional
        Drawing units: keep what lies inside this box instead of the chosen view.
    """
    content, factor, source = mapping.content, mapping.m_per_unit, mapping.content.source
    layers = [name for role in ("wall", "opening", "stair", "racking", "keepout", "boundary")
              for name in mapping.by_role[role]] + \
        [BLOCK_OPENING_PREFIX + kind for kind in ("door", "window")]
    layers = [name for name in layers if name in content.parts]
    boxes = [content.parts[name].part_bounds() for name in layers]
    boxes = np.concatenate(boxes) if boxes else np.empty((0, 4))
    finite = np.isfinite(boxes).all(axis=1)
    boxes = boxes[finite]
    arcs = Parts.concat([content.parts[name] for name in layers]).arcs()
    if len(arcs):
        _, sweep = arc_radius(arcs)
        arcs = arcs[(sweep >= 60) & (sweep <= 120)]
    points = shapely.get_coordinates(shapely.line_interpolate_point(arcs, 0.5, normalized=True)) \
        if len(arcs) else np.empty((0, 2))
    labels, views = find_views(boxes, points, gap=VIEW_GAP / factor)
    if len(views) > 1 and views[0].swings < 2:
        # no drawing shows door swings: count each one's wall faces to find the plan
        faces = np.concatenate([_wall_faces(content.parts[name], factor)
                                if name in mapping.by_role["wall"] else
                                np.zeros(len(content.parts[name]), dtype=np.int64)
                                for name in layers])
        faces = faces[finite]
        labels, views = find_views(boxes, points, gap=VIEW_GAP / factor, faces=faces)
    warnings = []
    if region is not None:
        box = tuple(float(v) for v in region)
        if not (box[0] < box[2] and box[1] < box[3]):
            raise DrawingError(f"{source}: --region must be X0,Y0,X1,Y1 with X0 < X1 and Y0 < Y1, "
                               f"got {','.join(f'{v:g}' for v in box)}")
        warnings.append(f"{source}: built the region {_box_text(box, factor)} given with --region")
    elif len(views) > 1:
        chosen = views[0]
        margin = VIEW_GAP / factor / 2
        box = (chosen.extents[0] - margin, chosen.extents[1] - margin,
               chosen.extents[2] + margin, chosen.extents[3] + margin)
        others = "; ".join(_box_text(view.extents, factor) for view in views[1:6])
        more = f" and {len(views) - 6} more" if len(views) > 6 else ""
        faces = f", {chosen.faces} wall faces" if chosen.swings < 2 else ""
        warnings.append(f"{source}: model space holds {len(views)} separate drawings; built the "
                        f"one at {_box_text(chosen.extents, factor)} ({chosen.parts} parts, "
                        f"{chosen.swings} door swings{faces}); left out {others}{more}; pass "
                        f"--region X0,Y0,X1,Y1 (drawing units) to choose another")
    else:
        return ViewChoice(views, warnings)
    if apply:
        _keep_inside(content, box)
    return ViewChoice(views, warnings)


def _wall_faces(parts, factor):
    """Count, for each part (P,), its straight segments with a parallel partner at a wall's
    thickness (WALL_THICKNESS_M): the faces of the walls a floor plan cuts."""
    counts = np.diff(parts.offsets)
    kinds = parts.kinds
    lines = np.isin(kinds, (OPEN, CLOSED)) & (counts >= 2)
    faces = np.zeros(len(kinds), dtype=np.int64)
    if lines.sum() < 2:
        return faces
    number = np.flatnonzero(lines)
    geometries = [shapely.linearrings(parts.coords[parts.offsets[i]:parts.offsets[i + 1]])
                  if kinds[i] == CLOSED and counts[i] >= 3 else
                  shapely.linestrings(parts.coords[parts.offsets[i]:parts.offsets[i + 1]])
                  for i in number]
    best, owner = nearest_parallel(geometries)
    low, high = (value / factor for value in WALL_THICKNESS_M)
    paired = (best >= low) & (best <= high)
    np.add.at(faces, number[owner[paired]], 1)
    return faces


def _box_text(box, factor):
    x0, y0, x1, y1 = (value * factor for value in box)
    return f"({x0:.1f}, {y0:.1f})-({x1:.1f}, {y1:.1f}) m"


def _keep_inside(content, box):
    """Drop from `content` every part, point and text whose middle lies outside `box`."""
    x0, y0, x1, y1 = box

    def inside(x, y):
        return (x >= x0) & (x <= x1) & (y >= y0) & (y <= y1)

    for store in (content.parts, content.footprints):
        for name, parts in list(store.items()):
            bounds = parts.part_bounds()
            middle_x = (bounds[:, 0] + bounds[:, 2]) / 2
            middle_y = (bounds[:, 1] + bounds[:, 3]) / 2
            store[name] = parts.select(inside(middle_x, middle_y))
    content.points = [item for item in content.points if inside(item[1], item[2])]
    content.texts = [item for item in content.texts if inside(item[1], item[2])]
    content.attribute_texts = [item for item in content.attribute_texts if inside(item[1], item[2])]
