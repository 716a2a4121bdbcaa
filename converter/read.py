"""Read a DXF drawing with ezdxf (the only module that imports it) into plain arrays.

Damaged files go through ezdxf's recovery path and its repairs become warnings; truncated or
non-DXF bytes are refused here, because recovery accepts them silently. Each block definition
is flattened once per layer (block units) and then placed for all its INSERTs and MINSERT cells
with numpy (`Parts.placed`), which handles nesting, non-uniform scale, rotation, mirroring and
extrusion through each INSERT's own transformation matrix.
"""

from __future__ import annotations

import contextlib
import datetime
import hashlib
import io
import itertools
import logging
import math
import re
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely
from ezdxf import recover
from ezdxf.document import Drawing
from ezdxf.lldxf.tagger import binary_tags_loader
from ezdxf.entities.boundary_paths import BoundaryPathType, EdgeType
from ezdxf.lldxf.const import DXFError
from ezdxf.math import X_AXIS, Y_AXIS
from ezdxf.path import from_hatch_boundary_path

from clearway.collector import paused_collector
from clearway.errors import ClearwayError, DrawingError, LimitError
from clearway.limits import Limits
from clearway.converter.curves import bulge_polyline, widened_polyline
from clearway.converter.parts import ARC, CLOSED, HOLE, OPEN, SHELL, Parts
from clearway.converter.units import INSUNITS_CODES, UNITS_TO_M

BINARY_SENTINEL = b"AutoCAD Binary DXF\r\n\x1a\x00"
_MARKER = re.compile(rb"^[ \t]*0[ \t]*\r?\n[ \t]*(SECTION|ENDSEC|EOF)[ \t]*\r?$", re.MULTILINE)
_SECTION_NAME = re.compile(rb"SECTION[ \t]*\r?\n[ \t]*2[ \t]*\r?\n[ \t]*(\w+)")
_LINEWORK = ("LINE", "LWPOLYLINE", "POLYLINE", "ARC", "CIRCLE", "ELLIPSE", "SPLINE")
_FILLS = ("HATCH", "SOLID", "TRACE", "3DFACE")
_TEXTS = ("TEXT", "MTEXT")
_LABEL_TAGS = ("LABEL", "NAME", "ID", "STATION", "TAG")
#: What ezdxf raises on a damaged file or entity (found by fuzzing the sample drawings):
#: its own DXFError family, and plain Python errors from fields that recovery left missing,
#: of the wrong type or out of range.
_DAMAGE = (DXFError, AttributeError, AssertionError, ValueError, TypeError, KeyError,
           IndexError, ZeroDivisionError, OverflowError, UnicodeError, EOFError)


class _TooMany(Exception):
    """A flattened curve has more vertices than allowed (caught and reported in read.py)."""


class _NotFinite(Exception):
    """An entity has coordinates that are not finite (caught and reported in read.py)."""


def _not_finite(source, layer):
    return DrawingError(f"{source}: layer {layer!r} has coordinates that are not finite")


@dataclass
class DrawingContent:
    """Everything clearway uses from a drawing, in drawing units, model space only.

    parts : layer -> Parts (blocks placed; layer 0 inside a block resolved to the INSERT's layer)
    points : (layer, x, y, label or None, dxftype) for POINT, CIRCLE centres and INSERTs
    texts : (layer, x, y, text) for TEXT and MTEXT
    """

    source: str
    sha256: str
    insunits: int | None
    layer_states: dict = field(default_factory=dict)      # name -> (frozen, off)
    counts: dict = field(default_factory=lambda: defaultdict(Counter))
    closed_open: dict = field(default_factory=lambda: defaultdict(lambda: [0, 0]))
    parts: dict = field(default_factory=dict)
    points: list = field(default_factory=list)
    texts: list = field(default_factory=list)
    skipped: Counter = field(default_factory=Counter)     # (layer, dxftype) -> count
    paperspace: int = 0
    warnings: list = field(default_factory=list)
    drawing_date: str = ""                                # ISO 8601, "" when unknown


#: Julian day number of 2000-01-01.
_JDN_2000 = 2451545


def saved_date(header) -> str:
    """Return when the drawing was last saved ($TDUPDATE, else $TDCREATE), ISO 8601, or "".

    DXF stores both as the Julian day number of the local date plus the fraction of the day
    since midnight. Values outside the years 1900 to 2999 are taken as missing.
    """
    for name in ("$TDUPDATE", "$TDCREATE"):
        with contextlib.suppress(*_DAMAGE):
            days = float(header.get(name, 0.0))
            if 2415021 <= days < 2816788:
                day = datetime.date(2000, 1, 1) + datetime.timedelta(days=int(days) - _JDN_2000)
                return day.isoformat()
    return ""


@contextlib.contextmanager
def quiet_library():
    """Keep ezdxf's log records and prints off the user's terminal for the duration."""
    names = ["ezdxf"] + [name for name in logging.root.manager.loggerDict if name.startswith("ezdxf.")]
    loggers = [logging.getLogger(name) for name in names]
    previous = [logger.disabled for logger in loggers]
    for logger in loggers:
        logger.disabled = True
    try:
        with contextlib.redirect_stdout(io.StringIO()), contextlib.redirect_stderr(io.StringIO()):
            yield
    finally:
        for logger, state in zip(loggers, previous):
            logger.disabled = state


def check_dxf_bytes(data, source):
    """Raise DrawingError unless `data` looks like a complete DXF file."""
    if not data.strip():
        raise DrawingError(f"{source}: file is empty")
    if data[:4] in (b"AC10", b"AC1.", b"AC2."):
        raise DrawingError(f"{source}: this is a DWG file, not DXF; save it as DXF from the CAD program")
    if data.startswith(BINARY_SENTINEL):
        if b"EOF" not in data[-8:]:
            raise DrawingError(f"{source}: binary DXF is truncated (no end-of-file marker)")
        return
    head = data[:4096].lstrip(b"\xef\xbb\xbf").decode("latin-1").splitlines()
    pairs = [(head[i].strip(), head[i + 1].strip()) for i in range(0, len(head) - 1, 2)]
    pairs = [pair for pair in pairs if pair[0] != "999"]
    if not pairs or pairs[0] != ("0", "SECTION"):
        raise DrawingError(f"{source}: not a DXF file (it does not start with a SECTION)")
    markers = _MARKER.findall(data)
    names = _SECTION_NAME.findall(data)
    depth = 0
    for marker in markers:
        if marker == b"SECTION":
            if depth:
                break
            depth = 1
        elif marker == b"ENDSEC":
            depth = 0
        elif marker == b"EOF":
            break
    if depth or markers.count(b"SECTION") > markers.count(b"ENDSEC"):
        name = names[markers.count(b"ENDSEC")].decode() if len(names) > markers.count(b"ENDSEC") else "?"
        raise DrawingError(f"{source}: file is truncated: section {name} is not terminated")
    if not markers or markers[-1] != b"EOF":
        raise DrawingError(f"{source}: file is truncated: no end-of-file marker")


def open_document(path, limits=None):
    """Read `path` through ezdxf's recovery; return (document, sha256, repair warnings)."""
    limits = limits or Limits()
    path = Path(path)
    source = path.name
    try:
        if path.is_file():
            limits.check("max_file_size", path.stat().st_size / 1e6, subject=source,
                         what="file size in MB")
        data = path.read_bytes()
    except FileNotFoundError:
        raise DrawingError(f"{path}: file not found") from None
    except IsADirectoryError:
        raise DrawingError(f"{path}: is a folder, not a DXF file") from None
    except OSError as err:
        raise DrawingError(f"{path}: cannot read file ({err.strerror})") from None
    check_dxf_bytes(data, source)
    try:
        with quiet_library():
            if data.startswith(BINARY_SENTINEL):  # recovery reads ASCII only
                doc = Drawing.load(binary_tags_loader(data))
                auditor = doc.audit()
            else:
                doc, auditor = recover.read(io.BytesIO(data))
    except RecursionError:
        raise DrawingError(f"{source}: not a readable DXF file (structures nest too "
                           f"deeply to recover)") from None
    except _DAMAGE as err:
        message = str(err).splitlines()[0].strip() if str(err).strip() else type(err).__name__
        raise DrawingError(f"{source}: not a readable DXF file ({message[:200]})") from None
    warnings = [f"{source}: repaired: {fix.message}" for fix in auditor.fixes]
    warnings += [f"{source}: damaged: {error.message}" for error in auditor.errors
                 if "block reference cycle" not in error.message.lower()]
    if len(warnings) > 20:
        warnings = warnings[:20] + [f"{source}: {len(warnings) - 20} more repairs not listed"]
    return doc, hashlib.sha256(data).hexdigest(), warnings


@paused_collector()  # ezdxf's many long-lived objects make each full collection costly
def read_drawing(path, *, chord_tolerance, units=None, limits=None):
    """Read a drawing's model space into a DrawingContent (drawing units).

    Parameters
    ----------
    path : str or Path
    chord_tolerance : float
        Chord tolerance for flattening curves, metres. Must be > 0. It is converted to
        drawing units with `units`, else the header's $INSUNITS, else metres.
    units : str, optional
        A key of UNITS_TO_M.
    limits : clearway.limits.Limits, optional
        Resource limits; the defaults when None.

    Raises
    ------
    DrawingError
        Missing, truncated, non-DXF or unreadable file; a block that inserts itself;
        coordinates that are not finite.
    LimitError
        The file, a curve, a MINSERT, the block nesting or the expanded geometry is
        larger than `limits` allow.
    """
    limits = limits or Limits()
    doc, sha256, warnings = open_document(path, limits)
    source = Path(path).name
    insunits = doc.header.get("$INSUNITS", None)
    unit = units or INSUNITS_CODES.get(insunits, "m")
    tolerance = chord_tolerance / UNITS_TO_M[unit]
    content = DrawingContent(source, sha256, insunits if isinstance(insunits, int) else None,
                             warnings=warnings, drawing_date=saved_date(doc.header))
    for layer in doc.layers:
        with contextlib.suppress(*_DAMAGE):
            content.layer_states[str(layer.dxf.name)] = (layer.is_frozen(), layer.is_off())
    content.paperspace = _paperspace_count(doc)
    budget = _Budget(limits, source)
    reader = _BlockReader(doc, source, limits, budget)
    chunks = defaultdict(list)
    inserts = defaultdict(list)
    damaged = Counter()
    for entity in doc.modelspace():
        if not entity.is_alive:
            continue
        dxftype, layer = entity.dxftype(), entity_layer(entity)
        content.counts[layer][dxftype] += 1
        content.layer_states.setdefault(layer, (False, False))
        try:
            _read_entity(entity, dxftype, layer, tolerance, content, chunks, inserts, limits,
                         budget)
        except ClearwayError:
            raise
        except _TooMany as err:
            raise _curve_limit(limits, source, dxftype, layer, err.args[0]) from None
        except _NotFinite:
            raise _not_finite(source, layer) from None
        except _DAMAGE:  # lenient per entity: a damaged one is skipped and reported
            damaged[(layer, dxftype)] += 1
    for (layer, dxftype), count in sorted(damaged.items()):
        content.warnings.append(f"{source}: {count} damaged {dxftype} on layer {layer!r} skipped")
    for (name, insert_layer), matrix_list in inserts.items():
        if content.layer_states.get(insert_layer, (False, False))[0]:
            continue  # an INSERT on a frozen layer hides its whole block
        matrices = np.concatenate(matrix_list)
        for block_layer, parts in reader.block_parts(name, tolerance / _scale(matrices)).items():
            target = insert_layer if block_layer == "0" else block_layer
            budget.spend(parts, len(matrices), f"INSERTs of block {name!r}")
            chunks[target].append(parts.placed(matrices))
    content.warnings += reader.warnings
    content.parts = {layer: Parts.concat(found) for layer, found in chunks.items()}
    for layer in content.parts:  # layers used inside blocks need not be in the table
        content.layer_states.setdefault(layer, (False, False))
    for layer, parts in content.parts.items():
        if not np.isfinite(parts.coords).all():
            raise DrawingError(f"{source}: layer {layer!r} has coordinates that are not finite")
    for layer, x, y, *_ in content.points + content.texts:
        if not (math.isfinite(x) and math.isfinite(y)):
            raise DrawingError(f"{source}: layer {layer!r} has coordinates that are not finite")
    return content


def _read_entity(entity, dxftype, layer, tolerance, content, chunks, inserts, limits, budget):
    """Add one model-space entity to `content`, `chunks` (linework) or `inserts`."""
    if dxftype == "INSERT":
        matrices = insert_matrices(entity, limits=limits, source=content.source)
        label = attribute_label(entity)
        name = str(entity.dxf.name)
        inserts[(name, layer)].append(matrices)
        for x, y in matrices[:, 2, :].tolist():
            content.points.append((layer, x, y, label, dxftype))
    elif dxftype == "POINT":
        location = entity.dxf.location
        content.points.append((layer, float(location.x), float(location.y), None, dxftype))
    elif dxftype in _TEXTS:
        content.texts.append(text_item(entity, layer))
    else:
        found = flatten_entity(entity, tolerance, limits.max_curve_vertices)
        if found is None:
            content.skipped[(layer, dxftype)] += 1
            return
        if dxftype == "CIRCLE":
            centre = entity.ocs().to_wcs(entity.dxf.center)
            content.points.append((layer, float(centre.x), float(centre.y), None, dxftype))
        if dxftype in _LINEWORK:
            closed = any(kind not in (OPEN, ARC) for _, kind in found)
            content.closed_open[layer][0 if closed else 1] += 1
        parts = Parts.from_list(*zip(*found)) if found else Parts.empty()
        budget.spend(parts, 1, f"{dxftype} on layer {layer!r}")
        chunks[layer].append(parts)


def entity_layer(entity):
    """Return an entity's layer name ("0" when a damaged or unmodelled entity has none)."""
    try:
        return str(entity.dxf.get("layer", "0"))
    except _DAMAGE:
        return "0"


def _paperspace_count(doc):
    """Count paper-space entities (0 when recovery left the layouts damaged)."""
    total = 0
    try:
        for layout in doc.layouts:
            with contextlib.suppress(*_DAMAGE):
                if not layout.is_modelspace:
                    total += len(layout)
    except _DAMAGE:
        pass
    return total


def _scale(matrices):
    """Largest linear scale of (M, 3, 2) affine matrices (for the chord tolerance)."""
    scale = float(np.max(np.linalg.norm(matrices[:, :2, :], ord=2, axis=(1, 2))))
    return scale if math.isfinite(scale) and scale > 1e-9 else 1e-9 if scale <= 1e-9 else 1e300


def _curve_limit(limits, source, dxftype, layer, count):
    return LimitError(
        f"{source}: a {dxftype} on layer {layer!r} flattens to more than {count} vertices, "
        f"over the limit max_curve_vertices = {limits.max_curve_vertices}; the chord tolerance "
        f"may be too fine for its size or units; if the drawing really needs it, raise the "
        f"limit in the --config file: [limits] max_curve_vertices = {10 * count}")


class _Budget:
    """Running count of expanded parts and vertices against max_entities / max_vertices."""

    def __init__(self, limits, source):
        self.limits, self.source = limits, source
        self.parts = self.vertices = 0

    def spend(self, parts, copies, where):
        self.parts += len(parts) * copies
        self.vertices += len(parts.coords) * copies
        hint = f"reached while expanding {where}"
        self.limits.check("max_entities", self.parts, subject=self.source,
                          what="linework parts after block expansion", hint=hint)
        self.limits.check("max_vertices", self.vertices, subject=self.source,
                          what="vertices after block expansion", hint=hint)


def insert_matrices(insert, *, limits=None, source=""):
    """Return the (M, 3, 2) row-vector affine matrices of an INSERT (M cells of a MINSERT).

    Raises LimitError when a MINSERT has more cells than ``limits.max_entities``.
    """
    limits = limits or Limits()
    base = _plan_matrix(insert)
    if base is None:
        rows = np.array(list(insert.matrix44().rows()), dtype=float)
        base = rows[[0, 1, 3], :2]
    row_count = max(int(insert.dxf.get("row_count", 1)), 1)
    column_count = max(int(insert.dxf.get("column_count", 1)), 1)
    if row_count * column_count == 1:
        return base[None]
    limits.check("max_entities", row_count * column_count, subject=source,
                 what=f"the number of cells of a MINSERT of block {str(insert.dxf.name)!r} "
                      f"({row_count} x {column_count})")
    columns, grid_rows = np.meshgrid(np.arange(column_count), np.arange(row_count))
    offsets = np.column_stack([columns.ravel() * insert.dxf.column_spacing,
                               grid_rows.ravel() * insert.dxf.row_spacing])
    offsets = np.unique(offsets, axis=0)  # zero spacing repeats a cell; keep it once
    angle = math.radians(insert.dxf.rotation)
    rotation = np.array([[math.cos(angle), math.sin(angle)], [-math.sin(angle), math.cos(angle)]])
    ocs = insert.ocs()
    axes = np.array([list(ocs.to_wcs(X_AXIS))[:2], list(ocs.to_wcs(Y_AXIS))[:2]])
    matrices = np.repeat(base[None], len(offsets), axis=0)
    matrices[:, 2, :] += offsets @ rotation @ axes
    return matrices


def _plan_matrix(insert):
    """The (3, 2) matrix of an INSERT in the plan's plane (extrusion +Z), as ezdxf's
    ``Insert.matrix44`` gives it (scale, then rotation, block base point moved onto the
    insertion point) without its 4 x 4 algebra; None for any other extrusion."""
    dxf = insert.dxf
    extrusion = dxf.get("extrusion", None)
    if extrusion is not None and (extrusion[0] != 0 or extrusion[1] != 0 or extrusion[2] <= 0):
        return None
    angle = math.radians(dxf.rotation)
    cos, sin = math.cos(angle), math.sin(angle)
    xscale, yscale = float(dxf.xscale), float(dxf.yscale)
    x_axis, y_axis = (xscale * cos, xscale * sin), (-yscale * sin, yscale * cos)
    x, y = float(dxf.insert[0]), float(dxf.insert[1])
    block = insert.block()
    if block is not None:
        # plain floats, same operations in the same order as on numpy 2-vectors (whose
        # per-call overhead outweighed the arithmetic), so the matrices are bit-identical
        base_point = block.block.dxf.base_point
        base_x, base_y = float(base_point[0]), float(base_point[1])
        x -= base_x * x_axis[0] + base_y * y_axis[0]
        y -= base_x * x_axis[1] + base_y * y_axis[1]
    return np.array([x_axis, y_axis, (x, y)], dtype=float)


def attribute_label(insert):
    """Return an INSERT's label attribute (LABEL, NAME, ID, ... or the first non-empty one)."""
    values = {str(attrib.dxf.tag).upper(): str(attrib.dxf.text).strip()
              for attrib in insert.attribs if attrib.is_alive}
    for tag in _LABEL_TAGS:
        if values.get(tag):
            return values[tag]
    return next((value for value in values.values() if value), None)


def text_item(entity, layer):
    """Return (layer, x, y, text) for a TEXT or MTEXT."""
    if entity.dxftype() == "TEXT":
        position = entity.ocs().to_wcs(entity.dxf.insert)
    else:
        position = entity.dxf.insert
    return (layer, position.x, position.y, entity.plain_text().strip())


def _xy(vertices, limit=None):
    """(N, 2) array of the x, y of `vertices`; raise _TooMany past `limit` of them."""
    if limit is not None:
        vertices = list(itertools.islice(vertices, limit + 1))
        if len(vertices) > limit:
            raise _TooMany(limit)
    return np.array([(vertex.x, vertex.y) for vertex in vertices], dtype=float).reshape(-1, 2)


def flatten_entity(entity, tolerance, max_vertices=None):
    """Return [(xy, kind), ...] for one entity in its own frame, or None if unsupported.

    Raises _TooMany when a flattened curve would have more than `max_vertices` vertices.
    """
    limit = max_vertices
    dxftype = entity.dxftype()
    if dxftype == "LINE":
        start, end = entity.dxf.start, entity.dxf.end
        return [(np.array([[start.x, start.y], [end.x, end.y]]), OPEN)]
    if dxftype == "LWPOLYLINE":
        points = np.array(entity.get_points("xyseb"), dtype=float).reshape(-1, 5)
        return polyline_parts(points, entity.closed, entity.dxf.const_width, entity.ocs(),
                              entity.dxf.elevation, tolerance, limit)
    if dxftype == "POLYLINE":
        if entity.is_2d_polyline:
            points = np.array([(v.dxf.location.x, v.dxf.location.y,
                                v.dxf.get("start_width", entity.dxf.default_start_width),
                                v.dxf.get("end_width", entity.dxf.default_end_width),
                                v.dxf.bulge) for v in entity.vertices], dtype=float).reshape(-1, 5)
            return polyline_parts(points, entity.is_closed, 0.0, entity.ocs(),
                                  entity.dxf.elevation.z, tolerance, limit)
        if entity.is_3d_polyline:
            return [(_xy(entity.points(), limit), CLOSED if entity.is_closed else OPEN)]
        return None
    if dxftype in ("ARC", "CIRCLE"):
        xy = _xy(entity.flattening(tolerance), limit)
        return [(xy, ARC if dxftype == "ARC" else CLOSED)]
    if dxftype in ("ELLIPSE", "SPLINE"):
        if dxftype == "SPLINE" and limit is not None and max(
                entity.control_point_count(), entity.fit_point_count()) > limit:
            raise _TooMany(limit)  # refused before the costly evaluation
        xy = _xy(entity.flattening(tolerance), limit)
        closed = len(xy) > 2 and np.allclose(xy[0], xy[-1], atol=tolerance)
        return [(xy, CLOSED if closed else OPEN)]
    if dxftype == "HATCH":
        rings = hatch_rings(entity, tolerance, limit)
        if not all(np.isfinite(ring).all() for ring in rings):
            raise _NotFinite()
        rings = [shapely.make_valid(shapely.Polygon(ring)) for ring in rings if len(ring) >= 3]
        area = shapely.Polygon()
        for ring in rings:  # boundary paths nest as islands: even-odd
            area = shapely.symmetric_difference(area, ring)
        return polygon_rings(area)
    if dxftype in ("SOLID", "TRACE", "3DFACE"):
        xy = _xy(entity.wcs_vertices())
        return [(xy, SHELL)] if len(np.unique(xy, axis=0)) >= 3 else []
    return None


def hatch_rings(hatch, tolerance, limit=None):
    """Flatten each boundary path of a HATCH into an (N, 2) ring, world coordinates.

    Polyline paths, and edge paths of lines and arcs, go through the same bulge flattening
    as polylines, so their arcs keep the chord tolerance. ezdxf's own paths approximate arcs
    by one cubic Bezier curve per quarter circle (off by about 2.7e-4 of the radius: 2.7 mm
    on a 10 m arc); they serve only paths with ellipse or spline edges.
    """
    ocs, elevation = hatch.ocs(), hatch.dxf.elevation.z
    rings = []
    for boundary in hatch.paths:
        vertices = _boundary_bulges(boundary)
        if vertices is None:
            path = from_hatch_boundary_path(boundary, ocs, elevation)
            paths = path.sub_paths() if path.has_sub_paths else [path]
            rings += [_xy(part.flattening(tolerance), limit) for part in paths]
            continue
        if len(vertices) < 2:
            continue
        xy = bulge_polyline(vertices[:, :2], vertices[:, 2], closed=True, tolerance=tolerance,
                            max_vertices=limit)
        if xy is None:
            raise _TooMany(limit)
        if not ocs.uz.isclose((0, 0, 1)):
            xy = _xy(ocs.points_to_wcs([(x, y, elevation) for x, y in xy]))
        rings.append(xy)
    return rings


def _boundary_bulges(boundary):
    """A hatch boundary path as (N, 3) x, y, bulge in its OCS; None if it has curved edges
    other than circular arcs."""
    if boundary.type == BoundaryPathType.POLYLINE:
        return np.array([(x, y, bulge) for x, y, bulge in boundary.vertices],
                        dtype=float).reshape(-1, 3)
    vertices = []
    for edge in boundary.edges:
        if edge.type == EdgeType.LINE:
            vertices.append((edge.start[0], edge.start[1], 0.0))
        elif edge.type == EdgeType.ARC:
            vertices += _arc_as_bulges(edge)
        else:
            return None
    return np.array(vertices, dtype=float).reshape(-1, 3)


def _arc_as_bulges(edge):
    """Vertices with bulges tracing a hatch arc edge in its drawn direction (a full circle
    as two halves). ezdxf keeps the angles counter-clockwise and flags the direction."""
    sweep = (edge.end_angle - edge.start_angle) % 360.0 or 360.0
    pieces = 2 if sweep > 180.0 else 1
    sign = 1.0 if edge.ccw else -1.0
    start = edge.start_angle if edge.ccw else edge.end_angle
    bulge = sign * math.tan(math.radians(sweep / pieces) / 4.0)
    vertices = []
    for piece in range(pieces):
        angle = math.radians(start + sign * piece * sweep / pieces)
        vertices.append((edge.center[0] + edge.radius * math.cos(angle),
                         edge.center[1] + edge.radius * math.sin(angle), bulge))
    return vertices


def polyline_parts(points, closed, const_width, ocs, elevation, tolerance, limit=None):
    """Flatten a 2-D polyline given as (N, 5) x, y, start width, end width, bulge (OCS)."""
    if not len(points):
        return []
    if not np.isfinite(points).all():
        raise _NotFinite()
    if limit is not None and len(points) > limit:
        raise _TooMany(limit)
    xy = bulge_polyline(points[:, :2], points[:, 4], closed=closed, tolerance=tolerance,
                        max_vertices=limit)
    if xy is None:
        raise _TooMany(limit)
    wide = const_width > 0 or np.any(points[:, 2:4] > 0)
    if wide:
        widths = np.where(points[:, 2:4] > 0, points[:, 2:4], const_width)
        band = widened_polyline(points[:, :2], points[:, 4], widths[:, 0], widths[:, 1],
                                closed=closed, tolerance=tolerance)
        found = polygon_rings(band)
    else:
        found = [(xy, CLOSED if closed else OPEN)]
    if ocs.uz.isclose((0, 0, 1)):
        return found
    return [(_xy(ocs.points_to_wcs([(x, y, elevation) for x, y in ring])), kind)
            for ring, kind in found]


def polygon_rings(area):
    """Return [(xy, SHELL), (xy, HOLE), ...] for a shapely (Multi)Polygon."""
    found = []
    for polygon in shapely.get_parts(area):
        if polygon.geom_type != "Polygon" or polygon.is_empty:
            continue
        found.append((np.asarray(polygon.exterior.coords)[:-1, :2], SHELL))
        found.extend((np.asarray(ring.coords)[:-1, :2], HOLE) for ring in polygon.interiors)
    return found


class _BlockReader:
    """Flatten each block definition once per tolerance, nested blocks included."""

    def __init__(self, doc, source, limits, budget):
        self.doc, self.source, self.limits, self.budget = doc, source, limits, budget
        self.cache, self.active, self.warnings = {}, [], []
        self.damaged = Counter()

    def block_parts(self, name, tolerance):
        """Return {layer: Parts} of block `name` in block units (layer 0 left as '0')."""
        tolerance = 2.0 ** math.floor(math.log2(min(max(tolerance, 1e-300), 1e300)))  # buckets
        if (name, tolerance) in self.cache:
            return self.cache[(name, tolerance)]
        if name in self.active:
            chain = " -> ".join(self.active[self.active.index(name):] + [name])
            raise DrawingError(f"{self.source}: block {name!r} inserts itself ({chain}); "
                               f"fix the block definitions")
        self.limits.check("max_block_depth", len(self.active) + 1, subject=self.source,
                          what=f"nesting depth of block {name!r}",
                          hint=f"it is inserted through {' -> '.join(self.active[:3])} ...")
        try:
            block = self.doc.blocks.get(name)
        except _DAMAGE:
            block = None
        if block is None:
            self.warnings.append(f"{self.source}: INSERT of undefined block {name!r} skipped")
            return {}
        self.active.append(name)
        chunks = defaultdict(list)
        for entity in block:
            if not entity.is_alive:
                continue
            dxftype, layer = entity.dxftype(), entity_layer(entity)
            try:
                self._add(entity, dxftype, layer, tolerance, chunks)
            except ClearwayError:
                raise
            except _TooMany as err:
                raise _curve_limit(self.limits, self.source, dxftype, layer,
                                   err.args[0]) from None
            except _NotFinite:
                raise _not_finite(self.source, layer) from None
            except _DAMAGE:
                self.damaged[(name, dxftype)] += 1
        self.active.pop()
        result = {layer: Parts.concat(found) for layer, found in chunks.items()}
        self.cache[(name, tolerance)] = result
        if not self.active:
            for (block_name, dxftype), count in sorted(self.damaged.items()):
                self.warnings.append(f"{self.source}: {count} damaged {dxftype} in block "
                                     f"{block_name!r} skipped")
            self.damaged.clear()
        return result

    def _add(self, entity, dxftype, layer, tolerance, chunks):
        if dxftype == "INSERT":
            matrices = insert_matrices(entity, limits=self.limits, source=self.source)
            child = str(entity.dxf.name)
            for child_layer, parts in self.block_parts(child, tolerance / _scale(matrices)).items():
                self.budget.spend(parts, len(matrices), f"block {child!r}")
                chunks[layer if child_layer == "0" else child_layer].append(parts.placed(matrices))
            return
        if dxftype in ("ATTDEF", "ATTRIB") + _TEXTS:
            return
        found = flatten_entity(entity, tolerance, self.limits.max_curve_vertices)
        if found:
            parts = Parts.from_list(*zip(*found))
            self.budget.spend(parts, 1, "block contents")
            chunks[layer].append(parts)
