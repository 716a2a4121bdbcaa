"""From a DXF file to a FloorPlan in metres, and the layer table people use to choose roles."""

from __future__ import annotations

import gc
import json
from dataclasses import dataclass, replace

import numpy as np
import shapely

from clearway.collector import paused_collector
from clearway.errors import ConfigError, DrawingError
from clearway.limits import Limits
from clearway.converter.floorplan import OBSTACLE_ROLES, FloorPlan, Leak, PlanText, Station
from clearway.converter.parts import Parts
from clearway.converter.inserts import BLOCK_OPENING_PREFIX, KIND_TAGS
from clearway.converter.interior import building_interior
from clearway.converter.polygons import (BEAM_PAIR_DEPTH, as_multipolygon, boundary_regions,
                                        filled_regions, fill_holes,
                                        free_space, node_lines)
from clearway.converter.mapping import NOT_WALLS, guess_wall_layer, keep_one_view, map_drawing
from clearway.converter.roles import ROLE_OPTION_NAMES, Roles, matches_any, name_candidates, opening_kind
from clearway.converter.units import UNITS_TO_M

#: Coordinates are snapped to this grid, metres (0.1 mm), so shared edges match exactly.
SNAP_M = 1e-4


@dataclass(frozen=True)
class LayerRow:
    """One layer of the layer table: model-space entity counts, extents (metres), state, role."""

    name: str
    entities: tuple[tuple[str, int], ...]
    closed: int
    open: int
    extents: tuple[float, float, float, float] | None
    frozen: bool
    off: bool
    role: str | None


@dataclass(frozen=True)
class LayerTable:
    """The drawing's layers with their roles under the current patterns."""

    source: str
    units: str
    m_per_unit: float
    unit_note: str
    layers: tuple[LayerRow, ...]
    paperspace: int = 0
    warnings: tuple[str, ...] = ()
    unit_source: str = "header"
    unit_evidence: tuple[str, ...] = ()
    views: tuple = ()

    def to_dict(self):
        """Return the table as plain data: {"units", "m_per_unit", "unit_source",
        "unit_evidence", "warnings", "layers": [...]}."""
        return {"units": self.units, "m_per_unit": self.m_per_unit,
                "unit_source": self.unit_source, "unit_note": self.unit_note,
                "unit_evidence": list(self.unit_evidence), "warnings": list(self.warnings),
                "views": [{"extents": [round(v * self.m_per_unit, 4) for v in view.extents],
                           "parts": view.parts, "door_swings": view.swings,
                           "chosen": view.chosen} for view in self.views],
                "layers": [
            {"name": row.name, "entities": dict(row.entities),
             "extents": list(row.extents) if row.extents else None,
             "frozen": row.frozen, "off": row.off, "role": row.role} for row in self.layers]}

    def to_json(self):
        """Return the table as JSON text."""
        return json.dumps(self.to_dict(), indent=2)


def _check_options(roles, units, limits, **lengths):
    if roles is not None and not isinstance(roles, Roles):
        raise TypeError(f"roles must be a converter.Roles, got {type(roles).__name__}")
    if limits is not None and not isinstance(limits, Limits):
        raise TypeError(f"limits must be a clearway.limits.Limits, got {type(limits).__name__}")
    if units is not None and units not in UNITS_TO_M:
        raise ConfigError(f"units must be one of {', '.join(UNITS_TO_M)}, got {units!r}")
    for name, value in lengths.items():
        if not isinstance(value, (int, float)) or not np.isfinite(value) or value < 0 \
                or (value == 0 and name in ("chord_tolerance", "max_wall_thickness")):
            raise ConfigError(f"{name} must be a length > 0 m, got {value!r}")


def list_layers(path, *, roles=None, units=None, limits=None, region=None):
    """Return the LayerTable of a drawing: what each layer holds and the role it gets.

    Parameters
    ----------
    path : str or Path
    roles : Roles, optional
        Layer role patterns; the defaults when None.
    units : str, optional
        A key of UNITS_TO_M overriding the header's $INSUNITS.
    limits : clearway.limits.Limits, optional
        Resource limits; the defaults when None.

    Raises
    ------
    DrawingError
        The file is missing, truncated, not DXF or unreadable.
    LimitError
        The file or its expanded geometry is larger than `limits` allow.
    """
    _check_options(roles, units, limits)
    roles = roles or Roles()
    mapping = map_drawing(path, roles=roles, units=units, chord_tolerance=0.001,
                          limits=limits or Limits())
    content, unit, factor, note = mapping.content, mapping.units, mapping.m_per_unit, mapping.unit_note
    views = keep_one_view(mapping, region=region, apply=False)
    rows = []
    for name in sorted(content.layer_states, key=str.upper):
        frozen, off = content.layer_states[name]
        parts = content.parts.get(name, Parts.empty())
        boxes = [parts.extents()] if len(parts) else []
        points = [(x, y) for layer, x, y, *_ in content.points + content.texts if layer == name]
        if points:
            xy = np.array(points, dtype=float)
            boxes.append((*xy.min(axis=0), *xy.max(axis=0)))
        extents = None
        if boxes:
            box = np.array(boxes) * factor
            extents = tuple(round(float(value), 4) for value in
                            (*box[:, :2].min(axis=0), *box[:, 2:].max(axis=0)))
        closed, open_ = content.closed_open.get(name, (0, 0))
        rows.append(LayerRow(name, tuple(sorted(content.counts.get(name, {}).items())),
                             closed, open_, extents, bool(frozen), bool(off),
                             mapping.role_of.get(name)))
    return LayerTable(content.source, unit, factor, note, tuple(rows), content.paperspace,
                      tuple(mapping.warnings) + tuple(views.warnings), mapping.unit_source,
                      mapping.unit_evidence, tuple(views.views))


# ezdxf's documents hold themselves in reference cycles: after the reading, the collector's
# passes rescan them (0.2 s of the mixed suite floor's 1.3 s conversion at 20,000 bays) to
# free them. Paused, they are freed when the stage ends, or with the reader's process
@paused_collector()
def read_floorplan(path, *, roles=None, units=None, chord_tolerance=0.001, gap_tolerance=0.01,
                   max_wall_thickness=0.6, nominal_wall_thickness=0.05, label_radius=3.0,
                   limits=None, region=None, ahead=None):
    """Read a DXF floor plan into a FloorPlan in metres.

    Parameters
    ----------
    path : str or Path
    roles : Roles, optional
        Layer role patterns; the defaults when None.
    units : str, optional
        A key of UNITS_TO_M overriding the header's $INSUNITS.
    chord_tolerance : float
        Largest distance between a curve and its flattened chords, metres.
    gap_tolerance : float
        Endpoint gaps in linework below this are closed, metres.
    max_wall_thickness : float
        Enclosed wall-layer faces no wider than this are solid wall, metres.
    nominal_wall_thickness : float
        Thickness given to wall lines that enclose nothing, metres.
    label_radius : float
        A station without a label attribute takes the nearest station-layer text within
        this distance, metres.
    limits : clearway.limits.Limits, optional
        Resource limits (file size, extent, expanded entities, ...); the defaults when None.
    region : (x0, y0, x1, y1), optional
        Build only the linework inside this box (drawing units): one of several drawings in
        model space. By default the floor plan among them is chosen (`views`).
    ahead : clearway.converter.ahead.ReadAhead, optional
        The file's text as another process read it ahead (`ahead.read_ahead`), to start
        from (`read.read_drawing`); the result is the same without it.

    Returns
    -------
    FloorPlan

    Raises
    ------
    DrawingError
        Unreadable, truncated or non-DXF file, empty model space, a self-inserting block,
        mapped layers that hold nothing, non-finite coordinates, no enclosed floor,
        duplicate station labels.
    ConfigError
        An option is out of range.
    LimitError
        The drawing needs more work than `limits` allow; the message names the limit.
    """
    _check_options(roles, units, limits, chord_tolerance=chord_tolerance, gap_tolerance=gap_tolerance,
                   max_wall_thickness=max_wall_thickness,
                   nominal_wall_thickness=nominal_wall_thickness, label_radius=label_radius)
    roles = roles or Roles()
    limits = limits or Limits()
    options = dict(units=units, chord_tolerance=chord_tolerance, gap_tolerance=gap_tolerance,
                   max_wall_thickness=max_wall_thickness,
                   nominal_wall_thickness=nominal_wall_thickness, label_radius=label_radius,
                   limits=limits, region=region, ahead=ahead)
    try:
        plan, mapping, whole = _read_plan(path, roles=roles, **options)
    except NoEnclosedFloor as error:
        plan, mapping, whole, failure = None, error.mapping, error.whole, error
    # only when the walls enclose nothing: where they enclose too little, a layer round them
    # is as likely the sheet's frame or the site as the building (a house on a slope took
    # its drawing's frame, and lanes ran round the house outside). First a layer drawn round
    # the walls, then the one the failure's message names as looking like walls.
    if plan is None and not roles.explicit & {"wall", "boundary"} \
            and not mapping.by_role["boundary"]:
        walls = ", ".join(mapping.by_role["wall"][:3]) or "none"
        for candidate in (_surrounding_layer, _wall_guess):
            found = candidate(mapping, whole, reach=max_wall_thickness,
                              gap_tolerance=gap_tolerance)
            if found is None:
                continue
            name, why = found
            wider = Roles({**roles.patterns, "wall": roles.patterns["wall"] + (_glob_literal(name),)},
                          roles.explicit)
            gc.collect()    # the first reading's document, before the second is read
            try:        # reads the file again: only drawings that would fail come here
                retry = _read_plan(path, roles=wider, **options)[0]
            except NoEnclosedFloor:
                continue
            note = (f"{mapping.content.source}: the wall layers ({walls}) enclose no floor; "
                    f"layer {name!r} {why} and was taken for walls too; pass --walls to choose")
            return replace(retry, warnings=retry.warnings + (note,))
    if plan is None:
        raise failure
    return plan


class NoEnclosedFloor(DrawingError):
    """The walls enclose no free space (`mapping`, `whole`: as :func:`_read_plan` returns)."""

    def __init__(self, message, mapping, whole):
        super().__init__(message)
        self.mapping, self.whole = mapping, whole


def _glob_literal(name):
    """A glob pattern that matches `name` alone: ``[`` ``*`` ``?`` bracketed.

    >>> from fnmatch import fnmatchcase
    >>> _glob_literal("Walls [old]*"), fnmatchcase("Walls [old]*", _glob_literal("Walls [old]*"))
    ('Walls [[]old][*]', True)
    """
    return "".join(f"[{c}]" if c in "[*?" else c for c in name)


def _read_plan(path, *, roles, units, chord_tolerance, gap_tolerance, max_wall_thickness,
               nominal_wall_thickness, label_radius, limits, region, ahead):
    """read_floorplan with these roles: return (FloorPlan, LayerMapping, whole), `whole` the
    drawing's parts by layer before the other drawings in model space were left out.

    Raises NoEnclosedFloor, carrying the mapping and `whole`, when the walls enclose no free
    space.
    """
    mapping = map_drawing(path, roles=roles, units=units, chord_tolerance=chord_tolerance,
                          limits=limits, ahead=ahead)
    content, unit, factor, note = mapping.content, mapping.units, mapping.m_per_unit, mapping.unit_note
    source = content.source
    if not any(content.counts.values()):
        raise DrawingError(f"{source}: model space is empty")
    warnings = list(mapping.warnings)
    visible, by_role = mapping.visible, mapping.by_role
    whole = dict(content.parts)
    views = keep_one_view(mapping, region=region)
    warnings += views.warnings
    _check_mapped(content, roles, by_role, source)
    # a limit or an empty floor that the user's --units explains says so first
    subject = f"{source}: {mapping.unit_doubt}; as read" if mapping.unit_doubt else source
    _check_size(content, by_role, factor, unit, limits, subject)
    for (layer, dxftype), count in sorted(content.skipped.items()):
        if layer in visible and mapping.role_of.get(layer) not in (None, "station", "opening"):
            warnings.append(f"{source}: {count} {dxftype} on layer {layer!r} skipped (not plan geometry)")

    def scaled_layers(names):
        parts = Parts.concat([content.parts[name] for name in names if name in content.parts])
        return parts.scaled(factor, grid=SNAP_M)

    def scaled(role):
        return scaled_layers(by_role[role])

    def geometry(role):
        return scaled(role).geometries()

    texts = plan_texts(content, visible, factor)
    common = {"gap_tolerance": gap_tolerance}
    wall_parts = scaled("wall")
    openings = _opening_linework(content, by_role["opening"], scaled_layers)
    unmapped = scaled_layers([name for name in visible if mapping.role_of.get(name) is None])
    swing_arcs = np.concatenate([wall_parts.arcs(), openings.pop("arcs"), unmapped.arcs()])
    interior = building_interior(*wall_parts.geometries(), wall_parts.arcs(), **openings,
                                 swing_arcs=swing_arcs,
                                 texts_xy=np.array([(t.x, t.y) for t in texts]).reshape(-1, 2),
                                 max_wall_thickness=max_wall_thickness,
                                 nominal_wall_thickness=nominal_wall_thickness,
                                 find_envelope=not by_role["boundary"],
                                 loose_lines=np.concatenate(unmapped.geometries()[:2]), **common)
    regions = {"wall": interior.walls}
    loose_racking = []
    for role in ("racking", "keepout", "shared"):
        lines, rings, fills = geometry(role)
        if role == "racking":
            rings = np.concatenate([rings, _rack_footprints(content, by_role[role], factor)])
        regions[role] = filled_regions(lines, rings, fills, nominal_thickness=nominal_wall_thickness,
                                       posts=role == "racking", walls=interior.walls,
                                       loose_out=loose_racking if role == "racking" else None,
                                       **common)
    warnings.extend(_loose_racking_warning(source, loose_racking))
    if by_role["stair"]:  # stairs are impassable: they join the keep-out areas
        stairs = filled_regions(*geometry("stair"), nominal_thickness=nominal_wall_thickness,
                                **common)
        regions["keepout"] = as_multipolygon(shapely.union_all([regions["keepout"], stairs]))
    band, inside = boundary_regions(*geometry("boundary"), nominal_thickness=nominal_wall_thickness,
                                    **common)
    regions["boundary"] = band
    leaks = []
    if by_role["boundary"]:
        if inside.is_empty:
            raise DrawingError(f"{source}: the boundary layers ({', '.join(by_role['boundary'])}) "
                               f"enclose no area; close the outline")
        container = inside
    else:
        leaks, container = interior.leaks, interior.container
        for opening in interior.openings:
            if opening.exterior and opening.kind == "open":
                warnings.append(f"{source}: {opening.width:.2f} m gap with nothing drawn in it in "
                                f"the exterior walls at ({opening.x:.2f}, {opening.y:.2f}) m, taken "
                                f"as an exterior opening and closed; draw the wall if it is missing")
        for x, y, width in leaks:
            warnings.append(f"{source}: floor escapes to the outside through a {width:.2f} m gap "
                            f"in the walls at ({x:.2f}, {y:.2f}) m; close it or draw a boundary")
    free = free_space(container, [regions[role] for role in OBSTACLE_ROLES] + [interior.closures])
    floor_doubt = "" if by_role["boundary"] else _floor_doubt(
        subject, free.area + regions["racking"].area + regions["keepout"].area, interior.walls)
    if floor_doubt:
        warnings.append(floor_doubt)
    if free.is_empty:
        raise NoEnclosedFloor(f"{subject}: no enclosed floor: the wall layers "
                              f"({', '.join(by_role['wall'][:4]) or 'none'}) enclose no free space "
                              f"and no boundary is drawn;{_wall_hint(mapping, whole)} check the layer "
                              f"roles with `clearway layers`", mapping, whole)
    limits.check("max_boundary_length", float(free.boundary.length), subject=subject,
                 what="length of the free space's boundary in metres (the roadmap samples it "
                      "every 0.25 to 1 m)")
    stations = find_stations(content, by_role["station"], factor, label_radius, source)
    # normalized like the free space: how the regions were united does not show in them
    regions = {role: shapely.normalize(region) for role, region in regions.items()}
    # the extents of the union are the combined bounds; no need to build the union itself
    everything = shapely.total_bounds([region for region in regions.values()] + [free])
    return FloorPlan(source=source, sha256=content.sha256, units=unit, m_per_unit=factor,
                     unit_note=note, regions=regions, free_space=free, stations=stations,
                     leaks=tuple(Leak(round(x, 4), round(y, 4), round(width, 4))
                                 for x, y, width in leaks),
                     warnings=tuple(warnings),
                     extents=tuple(float(value) for value in everything),
                     drawing_date=content.drawing_date, repairs=tuple(content.repairs),
                     openings=interior.openings, texts=texts, unit_source=mapping.unit_source,
                     unit_evidence=tuple(mapping.unit_evidence), left_out=mapping.left_out,
                     unit_doubt=mapping.unit_doubt, floor_doubt=floor_doubt), mapping, whole


#: A floor (racking and all) covering less than this share of the convex hull of the walls
#: is doubted: the walls of a real building enclose most of their hull (0.7 to 0.99 on the
#: sample, suite and real drawings whose walls close; an L or U plan about 0.5), while walls
#: that do not close leave 0.01 to 0.22 of it (gaps wider than the leak search's 8 m,
#: walls on a layer with no role, a site drawn with the same wall layers).
MIN_FLOOR_SHARE = 0.35


def _floor_doubt(subject, floor, walls) -> str:
    """Why a floor of `floor` m² (free, racking and keep-out) looks too small for `walls`
    (MultiPolygon, m), or "" when it does not.

    Examples
    --------
    >>> import shapely
    >>> ring = shapely.box(0, 0, 10, 10).difference(shapely.box(0.2, 0.2, 9.8, 9.8))
    >>> _floor_doubt("a.dxf", 9.6 * 9.6, ring)
    ''
    >>> _floor_doubt("a.dxf", 1.8 * 1.8, ring)[:61]
    'a.dxf: the floor found (3 m²) covers 3% of the area the walls'
    """
    hull = shapely.convex_hull(walls)
    share = floor / hull.area if hull.area > 0 else 1.0
    if share >= MIN_FLOOR_SHARE:
        return ""
    return (f"{subject}: the floor found ({floor:.0f} m\u00b2) covers {share:.0%} of the "
            f"area the walls span ({hull.area:.0f} m\u00b2): the walls may not close (a gap "
            f"wider than 8 m, walls on a layer with no role) or include a site or another "
            f"drawing; check `clearway layers` and the preview, or draw a boundary")


#: Layers never taken for a building's shell: what NOT_WALLS names, and the frames drawn
#: round a sheet, which surround the walls too.
NOT_SHELL = NOT_WALLS + ("*BORDER*", "*FRAME*", "*RAHMEN*", "*SHEET*", "*CARTOUCHE*",
                         "*PLANKOPF*", "*TTLB*", "*MARGIN*")
#: The share of the wall layers' line length a layer's outline must hold to be their shell.
SHELL_HOLDS = 0.9


#: Racking lines that enclose nothing, this long in all (metres), are worth a warning:
#: a rack row whose outline does not close reads as floor.
LOOSE_RACKING_LENGTH = 2.0


def _loose_racking_warning(source, lines):
    """A warning for racking lines that close no shape (kept as thin lines), when they run
    LOOSE_RACKING_LENGTH metres or more in all: ``[]`` or one line."""
    lines = np.asarray(lines, dtype=object)
    length = shapely.length(lines) if len(lines) else np.zeros(0)
    if length.sum() < LOOSE_RACKING_LENGTH:
        return []
    x, y = shapely.get_coordinates(shapely.line_interpolate_point(
        lines[np.argmax(length)], 0.5, normalized=True))[0]
    return [f"{source}: {len(lines)} racking line(s), {length.sum():.1f} m in all, close no "
            f"shape and are kept as thin lines (the longest, {length.max():.1f} m, about "
            f"({x:.2f}, {y:.2f}) m): if they are rack faces, the rack between them reads as "
            f"floor; close the rows or draw them as closed shapes"]


def enclosing_layer(mapping, whole, *, gap_tolerance, reach):
    """Return (layer, share held) for the layer with no role that is the walls' shell, or None.

    The wall layers may hold only part of a building: new partitions on a layer named for
    walls (``Wand (neu)``), the outer walls drawn as single lines on a layer named for
    nothing (``Base``). Alone they enclose no floor at all. A layer with no role
    whose outline (the faces its lines close, holes filled) holds at least SHELL_HOLDS of
    the wall layers' line length, and whose lines come within `reach` metres of them (a
    frame drawn round the sheet keeps its distance from the plan), is taken for their shell;
    of several, the tightest outline. `whole`: parts by layer, every drawing in model space
    (the named walls alone may have been split into drawings of their own).
    """
    factor = mapping.m_per_unit

    def linework(names):
        parts = Parts.concat([whole[name] for name in names if name in whole])
        lines, rings, _ = parts.scaled(factor, grid=SNAP_M).geometries()
        return np.concatenate([lines, rings])

    walls = shapely.union_all(linework(mapping.by_role["wall"]))
    if walls.is_empty or walls.length == 0:
        return None
    best = None
    for name in sorted(mapping.visible):
        if mapping.role_of.get(name) is not None or name not in whole or \
                matches_any(name_candidates(name), NOT_SHELL):
            continue
        own = linework([name])
        if not len(own) or shapely.distance(shapely.union_all(own), walls) > reach:
            continue
        faces = shapely.get_parts(shapely.polygonize(node_lines(own, gap_tolerance=gap_tolerance)))
        if not len(faces):
            continue
        outline = fill_holes(shapely.union_all(faces))
        held = shapely.intersection(walls, outline.buffer(gap_tolerance)).length / walls.length
        if held >= SHELL_HOLDS and (best is None or outline.area < best[2]):
            best = (name, held, outline.area)
    return None if best is None else best[:2]


def _check_mapped(content, roles, by_role, source):
    """Refuse roles the user mapped that hold nothing, and drawings with no walls at all."""
    def holds(name):
        return bool(content.counts.get(name)) or name in content.parts
    for role in sorted(roles.explicit):
        if not any(holds(name) for name in by_role[role]):
            patterns = " ".join(roles.patterns[role])
            raise DrawingError(f"{source}: --{ROLE_OPTION_NAMES[role]} {patterns!r} matches no "
                               f"visible layer with entities in model space; see `clearway layers`")
    if not any(holds(name) for role in ("wall", "boundary") for name in by_role[role]):
        raise DrawingError(f"{source}: no wall or boundary layer holds entities; map layers with "
                           f"--walls or --boundary (see `clearway layers`)")


def _surrounding_layer(mapping, whole, *, reach, gap_tolerance):
    """(layer, "surrounds them (why)") for a layer drawn round the wall layers
    (`enclosing_layer`), or None."""
    shell = enclosing_layer(mapping, whole, gap_tolerance=gap_tolerance, reach=reach)
    if shell is None:
        return None
    name, held = shell
    return name, f"surrounds them ({held:.0%} of their lines lie inside its outline)"


def _wall_guess(mapping, whole, **_):
    """(layer, "looks like walls (why)") for the unmapped layer that looks most like walls,
    judged on the whole of model space (`whole`: parts by layer before other drawings were
    left out; the walls of an unmapped layer reach beyond the drawing the mapped layers
    span), or None."""
    guess = guess_wall_layer(replace(mapping.content, parts=whole), mapping.visible,
                             mapping.role_of)
    return None if guess is None else (guess[0], f"looks like walls ({guess[1]})")


def _wall_hint(mapping, whole):
    """' layer X looks like walls (why): pass --walls ...;' for an unmapped candidate, or ''."""
    guess = _wall_guess(mapping, whole)
    if guess is None:
        return ""
    name, why = guess
    return f" layer {name!r} {why}: add --walls {name!r};"


def _check_size(content, by_role, factor, unit, limits, subject):
    """Refuse mapped geometry whose extent or coordinates exceed the limits (metres);
    `subject` begins the message (the file, and why its unit looks wrong)."""
    names = [name for names in by_role.values() for name in names]
    boxes = [content.parts[name].extents() for name in names
             if name in content.parts and len(content.parts[name].coords)]
    points = [(x, y) for layer, x, y, *_ in content.points if layer in names]
    if points:
        xy = np.array(points, dtype=float)
        boxes.append((*xy.min(axis=0), *xy.max(axis=0)))
    if not boxes:
        return
    box = np.array(boxes, dtype=float)
    with np.errstate(over="ignore", invalid="ignore"):
        low, high = box[:, :2].min(axis=0) * factor, box[:, 2:].max(axis=0) * factor
        extent = float(np.max(high - low))
    hint = "" if subject != content.source else \
        f"read in units of {unit}: if the drawing is in another unit, pass --units"
    limits.check("max_coordinate", float(np.max(np.abs([*low, *high]))), subject=subject,
                 what="largest coordinate of the mapped layers in metres", hint=hint)
    limits.check("max_extent", extent, subject=subject,
                 what="extent of the mapped layers in metres", hint=hint)


def find_stations(content, layers, factor, label_radius, source):
    """Return the stations on `layers`, labelled, sorted by label (metres)."""
    layers = set(layers)
    # the block behind each INSERT station, by its layer and insertion point as read
    blocks = {(layer, x, y): (name, heading, tags)
              for layer, name, x, y, heading, tags in content.inserts if layer in layers}
    found = [(x * factor, y * factor, label, blocks.get((layer, x, y)) if dxftype == "INSERT"
              else None) for layer, x, y, label, dxftype in content.points
             if layer in layers and dxftype in ("POINT", "CIRCLE", "INSERT")]
    points = [item[:3] for item in found]
    placed = [item[3] for item in found]
    texts = [(x * factor, y * factor, text) for layer, x, y, text, _ in content.texts
             if layer in layers and text]
    labels = [label for _, _, label in points]
    if texts and any(label is None for label in labels):
        unlabelled = [index for index, label in enumerate(labels) if label is None]
        pxy = np.array([points[index][:2] for index in unlabelled])
        txy = np.array([text[:2] for text in texts])
        distance = np.hypot(*(pxy[:, None, :] - txy[None, :, :]).transpose(2, 0, 1))
        used_points, used_texts = set(), set()
        for flat in np.argsort(distance, axis=None, kind="stable"):
            row, column = divmod(int(flat), len(texts))
            if distance[row, column] > label_radius:
                break
            if row in used_points or column in used_texts:
                continue
            used_points.add(row)
            used_texts.add(column)
            labels[unlabelled[row]] = texts[column][2]
    order = sorted(range(len(points)), key=lambda index: (points[index][1], points[index][0]))
    taken = {label for label in labels if label}
    number = 0
    for index in order:
        if labels[index] is None:
            number += 1
            while f"STATION-{number:03d}" in taken:
                number += 1
            labels[index] = f"STATION-{number:03d}"
    seen = {}
    stations = []
    for (x, y, _), label, block in zip(points, labels, placed):
        x, y = round(x / 1e-4) * 1e-4, round(y / 1e-4) * 1e-4
        if label in seen:
            (x0, y0) = seen[label]
            raise DrawingError(f"{source}: two stations are labelled {label!r}, at ({x0:.2f}, "
                               f"{y0:.2f}) m and ({x:.2f}, {y:.2f}) m; give each a unique label")
        seen[label] = (x, y)
        kind, heading = station_kind(block, label)
        stations.append(Station(label, float(x), float(y), kind, heading))
    return tuple(sorted(stations, key=lambda station: station.label))


#: Words in a block name or label that say what a station is, and the kind each names.
STATION_WORDS = (("charger", ("CHARG", "CHG")), ("dock", ("DOCK",)), ("pick", ("PICK",)))


def station_kind(block, label: str) -> tuple[str, float | None]:
    """Return (kind, heading) of a station from its block and label.

    Parameters
    ----------
    block : tuple or None
        (block name, heading in degrees, {tag: text}) of an INSERT; None for a POINT or
        CIRCLE.
    label : str

    Returns
    -------
    kind : str
        The block's TYPE (else KIND) attribute as written; else "charger", "dock" or
        "pick" when the block name, then the label, holds such a word; else the block
        name ("" for an anonymous block or a point).
    heading : float or None
        Degrees counter-clockwise from +X in [0, 360), rounded to 1e-9; None for a point.

    Examples
    --------
    >>> station_kind(("CHARGER_PAD", 90.0, {}), "C1")
    ('charger', 90.0)
    >>> station_kind(("BAY", 315.0, {"TYPE": "tote drop"}), "B1")
    ('tote drop', 315.0)
    >>> station_kind(None, "PICK-7")
    ('pick', None)
    """
    name, heading, tags = block if block is not None else ("", None, {})
    name = "" if name.startswith("*") else name  # anonymous blocks name nothing
    written = next((tags[tag] for tag in KIND_TAGS if tags.get(tag)), "")
    said = [kind for text in (name.upper(), label.upper()) for kind, words in STATION_WORDS
            if any(word in text for word in words)]
    kind = written or (said[0] if said else name)
    if heading is not None:
        heading = round(float(heading), 9) % 360.0
    return kind, heading


def _rack_footprints(content, layers, factor):
    """Rings, metres, of the racking blocks on `layers` whose linework encloses nothing
    (`inserts.BlockReader.footprint`), where they are a rack's depth: at most
    BEAM_PAIR_DEPTH across (a bay, a row, or a back-to-back pair). A block wider than that
    each way may hold aisles inside its hull, and only its own linework counts.
    """
    found = [content.footprints[name] for name in layers if name in content.footprints]
    if not found:
        return np.empty(0, dtype=object)
    rings = Parts.concat(found).scaled(factor, grid=SNAP_M).geometries()[1]
    # a block smaller than the 0.1 mm snap grid collapses: it holds no pallet
    rings = rings[shapely.area(shapely.polygons(rings)) > 0]
    if not len(rings):
        return np.empty(0, dtype=object)
    boxes = shapely.minimum_rotated_rectangle(shapely.polygons(rings))
    corners = shapely.get_coordinates(shapely.get_exterior_ring(boxes)).reshape(len(boxes), 5, 2)
    sides = np.hypot(*np.diff(corners[:, :3], axis=1).transpose(2, 0, 1))
    return rings[sides.min(axis=1) <= BEAM_PAIR_DEPTH]


def _opening_linework(content, layers, scaled_layers):
    """Opening linework in metres by what it says it is: door, window or unknown, and arcs.

    Opening layers are sorted by their names (``A-DOOR`` doors, ``A-GLAZ`` windows, others
    unknown); the contents of door and window blocks are of their block's kind.
    """
    sorted_layers = {"door": [], "window": [], None: []}
    for name in layers:
        sorted_layers[opening_kind(name)].append(name)
    for kind in ("door", "window"):
        sorted_layers[kind].append(BLOCK_OPENING_PREFIX + kind)
    result, arcs = {}, []
    for kind, key in (("door", "door_lines"), ("window", "window_lines"), (None, "other_lines")):
        parts = scaled_layers(sorted_layers[kind])
        lines, rings, fills = parts.geometries()
        outlines = shapely.get_parts(shapely.boundary(fills)) if len(fills) else fills
        result[key] = np.concatenate([lines, rings, outlines])
        arcs.append(parts.arcs())
    result["arcs"] = np.concatenate(arcs)
    return result


def plan_texts(content, visible, factor):
    """Return the visible texts and block attributes as PlanText, metres, in drawing order."""
    found = []
    for layer, x, y, text, height in content.texts + content.attribute_texts:
        if layer in visible and text:
            found.append(PlanText(text, round(x * factor, 4), round(y * factor, 4),
                                  round(height * factor, 4), layer))
    return tuple(found)
