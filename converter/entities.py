"""Flatten one DXF entity into plan linework: a dispatch table from entity type to reader.

Each reader returns ``[(xy, kind), ...]`` in the entity's own frame (block units inside a
block), with kinds from `parts` (open, closed, arc, filled shell and hole); an entity type
with no reader is not plan geometry. Curves keep a chord tolerance given in drawing units.
"""

from __future__ import annotations

import functools
import itertools
import math

import numpy as np
import shapely
from ezdxf.entities.boundary_paths import BoundaryPathType, EdgeType
from ezdxf.math import OCS, arc_segment_count
from ezdxf.path import from_hatch_boundary_path

from clearway.errors import ClearwayError, DrawingError, LimitError
from clearway.converter.document import DAMAGE
from clearway.converter.curves import bulge_polyline, widened_polyline
from clearway.converter.parts import ARC, CLOSED, HOLE, OPEN, SHELL

LINEWORK = ("LINE", "LWPOLYLINE", "POLYLINE", "ARC", "CIRCLE", "ELLIPSE", "SPLINE", "MLINE")
TEXTS = ("TEXT", "MTEXT")


class TooMany(Exception):
    """A flattened curve has more vertices than allowed (the reader reports the limit)."""


class NotFinite(Exception):
    """An entity has coordinates that are not finite (the reader refuses the drawing)."""


class lenient:  # lower case: used as a context manager, as contextlib.suppress is
    """Be lenient per entity, strict per drawing, around reading one entity.

    A damaged entity (ezdxf raised one of DAMAGE) is skipped and counted in
    ``damaged[key]``; a curve over ``limits.max_curve_vertices`` raises LimitError and
    coordinates that are not finite raise DrawingError, both naming the layer. (A class
    rather than a generator: it is entered once per entity, tens of thousands of times.)
    """

    __slots__ = ("source", "limits", "dxftype", "layer", "damaged", "key")

    def __init__(self, source, limits, dxftype, layer, damaged, key):
        self.source, self.limits, self.dxftype = source, limits, dxftype
        self.layer, self.damaged, self.key = layer, damaged, key

    def __enter__(self):
        return None

    def __exit__(self, kind, err, traceback):
        if kind is None or issubclass(kind, ClearwayError):
            return False
        if issubclass(kind, TooMany):
            count = err.args[0]
            raise LimitError(
                f"{self.source}: a {self.dxftype} on layer {self.layer!r} flattens to more than "
                f"{count} vertices, over the limit max_curve_vertices = "
                f"{self.limits.max_curve_vertices}; the chord tolerance may be too fine for its "
                f"size or units; if the drawing really needs it, raise the limit in the --config "
                f"file: [limits] max_curve_vertices = {10 * count}") from None
        if issubclass(kind, NotFinite):
            raise DrawingError(f"{self.source}: layer {self.layer!r} has coordinates that are "
                               f"not finite") from None
        if issubclass(kind, DAMAGE):
            self.damaged[self.key] += 1
            return True
        return False


def text_item(entity, layer):
    """Return (layer, x, y, text, height) for a TEXT, MTEXT or ATTRIB (drawing units)."""
    if entity.dxftype() in ("TEXT", "ATTRIB"):
        position = entity.ocs().to_wcs(entity.dxf.insert)
        height = entity.dxf.get("height", 0.0)
    else:
        position = entity.dxf.insert
        height = entity.dxf.get("char_height", 0.0)
    return (layer, float(position.x), float(position.y), entity.plain_text().strip(),
            abs(float(height or 0.0)))


def _xy(vertices, limit=None):
    """(N, 2) array of the x, y of `vertices`; raise TooMany past `limit` of them."""
    if limit is not None:
        vertices = list(itertools.islice(vertices, limit + 1))
        if len(vertices) > limit:
            raise TooMany(limit)
    return np.array([(vertex.x, vertex.y) for vertex in vertices], dtype=float).reshape(-1, 2)


def _line(entity, tolerance, limit):
    start, end = entity.dxf.start, entity.dxf.end
    return [(np.array([[start.x, start.y], [end.x, end.y]]), OPEN)]


def _lwpolyline(entity, tolerance, limit):
    # ezdxf keeps the points as an (N, 5) x, y, start width, end width, bulge array, the
    # values get_points("xyseb") returns one Python tuple at a time
    values = getattr(getattr(entity, "lwpoints", None), "values", None)
    if isinstance(values, np.ndarray) and values.ndim == 2 and values.shape[1] == 5:
        points = np.array(values, dtype=float)
    else:
        points = np.array(entity.get_points("xyseb"), dtype=float).reshape(-1, 5)
    return polyline_parts(points, entity.closed, entity.dxf.const_width, entity.ocs(),
                          entity.dxf.elevation, tolerance, limit)


def _polyline(entity, tolerance, limit):
    if entity.is_2d_polyline:
        points = np.array([(v.dxf.location.x, v.dxf.location.y,
                            v.dxf.get("start_width", entity.dxf.default_start_width),
                            v.dxf.get("end_width", entity.dxf.default_end_width),
                            v.dxf.bulge) for v in entity.vertices], dtype=float).reshape(-1, 5)
        return polyline_parts(points, entity.is_closed, 0.0, entity.ocs(),
                              entity.dxf.elevation.z, tolerance, limit)
    if entity.is_3d_polyline:
        return [(_xy(entity.points(), limit), CLOSED if entity.is_closed else OPEN)]
    return None  # polyface and mesh: not plan linework


def _arc_or_circle(entity, tolerance, limit):
    kind = ARC if entity.dxftype() == "ARC" else CLOSED
    radius = abs(entity.dxf.radius)
    if _beyond_segment_count(radius, tolerance):
        # two chords, each spanning at most half a turn, depart from the arc by at most its
        # radius, which is within the tolerance (ezdxf's own angles and vertices)
        if kind == ARC:
            start, end = entity.dxf.start_angle, entity.dxf.end_angle
            sweep = (end - start) % 360.0 or 360.0
            angles = [start, start + sweep / 2, start + sweep]
        else:
            angles = [0.0, 180.0, 360.0]
        return [(_xy(entity.vertices(angles), limit), kind)]
    return [(_xy(entity.flattening(tolerance), limit), kind)]


def _beyond_segment_count(radius, tolerance):
    """True where ezdxf's arc_segment_count is wrong: a radius between half the tolerance
    and the tolerance (a sub-millimetre circle in a drawing in millimetres). It takes the
    chord for a sagitta greater than the radius as the chord of the smaller arc, whose
    angle goes to 0 as the sagitta nears the diameter: 105,414,358 segments for a circle
    of radius 0.5000000000000001 at a tolerance of 1, which the vertex limit refused with
    the whole drawing. At or under half the tolerance it returns 1, and at the tolerance 2."""
    return tolerance / 2 < radius < tolerance


def _circle(entity, tolerance, limit):
    """A CIRCLE in the plan's plane flattened as ezdxf's ``Circle.flattening`` does it: the
    same segment count and angles, and per vertex the same libm cosine and sine, product and
    sum (``Vec3.from_deg_angle(angle, radius) + center``), so the same floats, without a
    Vec3 per vertex (a warehouse's thousands of round columns). Any other extrusion, or a
    size that is not finite, takes ezdxf's own path."""
    dxf = entity.dxf
    extrusion = dxf.get("extrusion", None)
    radius, center = abs(dxf.radius), dxf.center
    if (extrusion is not None and tuple(extrusion) != (0.0, 0.0, 1.0)) or not (
            math.isfinite(radius) and math.isfinite(center.x) and math.isfinite(center.y)):
        return _arc_or_circle(entity, tolerance, limit)
    if radius <= 0.0:
        return [(np.zeros((0, 2)), CLOSED)]
    count = 2 if _beyond_segment_count(radius, tolerance) else \
        arc_segment_count(radius, math.tau, tolerance)
    if limit is not None and count + 1 > limit:
        raise TooMany(limit)
    # numpy's product and sum round each element as one float operation does, as ezdxf's
    xy = _unit_circle(count) * radius + np.array([center.x, center.y])
    return [(xy, CLOSED)]


@functools.lru_cache(maxsize=64)
def _unit_circle(count):
    """(count + 1, 2) cosines and sines of ezdxf's angles round a circle (read-only).

    math's, not numpy's, cosine and sine: numpy may take SIMD routines of its own, whose
    last bit can differ from libm's, which ezdxf's vectors use.
    """
    angles = [math.radians(angle) for angle in np.linspace(0.0, 360.0, count + 1).tolist()]
    unit = np.array([(math.cos(angle), math.sin(angle)) for angle in angles], dtype=float)
    unit.setflags(write=False)
    return unit


def _curve(entity, tolerance, limit):
    if entity.dxftype() == "SPLINE" and limit is not None and max(
            entity.control_point_count(), entity.fit_point_count()) > limit:
        raise TooMany(limit)  # refused before the costly evaluation
    xy = _xy(entity.flattening(tolerance), limit)
    closed = len(xy) > 2 and np.allclose(xy[0], xy[-1], atol=tolerance)
    return [(xy, CLOSED if closed else OPEN)]


def _hatch(entity, tolerance, limit):
    rings = hatch_rings(entity, tolerance, limit)
    if not all(np.isfinite(ring).all() for ring in rings):
        raise NotFinite()
    rings = [shapely.make_valid(shapely.Polygon(ring)) for ring in rings if len(ring) >= 3]
    area = shapely.Polygon()
    for ring in rings:  # boundary paths nest as islands: even-odd
        area = shapely.symmetric_difference(area, ring)
    return polygon_rings(area)


def _solid(entity, tolerance, limit):
    xy = _xy(entity.wcs_vertices())
    return [(xy, SHELL)] if len(np.unique(xy, axis=0)) >= 3 else []


def _mline(entity, tolerance, limit):
    """A multiline (walls drawn as parallel lines in one entity): the lines and arcs its
    style draws, from ezdxf's explosion of it; its fill, if any, is left to the faces."""
    found = []
    for part in entity.virtual_entities():
        kind = part.dxftype()
        if kind == "LINE":
            found += _line(part, tolerance, limit)
        elif kind == "ARC":
            found += _arc_or_circle(part, tolerance, limit)
    return found


#: Entity type -> reader(entity, tolerance, max_vertices) -> [(xy, kind), ...] or None.
READERS = {
    "LINE": _line, "LWPOLYLINE": _lwpolyline, "POLYLINE": _polyline,
    "ARC": _arc_or_circle, "CIRCLE": _circle, "ELLIPSE": _curve, "SPLINE": _curve,
    "HATCH": _hatch, "SOLID": _solid, "TRACE": _solid, "3DFACE": _solid, "MLINE": _mline,
}


def flatten_entity(entity, tolerance, max_vertices=None):
    """Return [(xy, kind), ...] for one entity in its own frame, or None if unsupported.

    Raises TooMany when a flattened curve would have more than `max_vertices` vertices.
    """
    reader = READERS.get(entity.dxftype())
    return None if reader is None else reader(entity, tolerance, max_vertices)


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
            raise TooMany(limit)
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
        raise NotFinite()
    if limit is not None and len(points) > limit:
        raise TooMany(limit)
    xy = bulge_polyline(points[:, :2], points[:, 4], closed=closed, tolerance=tolerance,
                        max_vertices=limit)
    if xy is None:
        raise TooMany(limit)
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


#: The frame of an entity drawn in the plan's plane (extrusion +Z): its OCS is the WCS.
_PLAN = OCS()


def plan_polyline_parts(points, closed, const_width, tolerance, limit=None):
    """`polyline_parts` of a 2-D polyline in the plan's plane (extrusion +Z)."""
    return polyline_parts(points, closed, const_width, _PLAN, 0.0, tolerance, limit)


def polygon_rings(area):
    """Return [(xy, SHELL), (xy, HOLE), ...] for a shapely (Multi)Polygon."""
    found = []
    for polygon in shapely.get_parts(area):
        if polygon.geom_type != "Polygon" or polygon.is_empty:
            continue
        found.append((np.asarray(polygon.exterior.coords)[:-1, :2], SHELL))
        found.extend((np.asarray(ring.coords)[:-1, :2], HOLE) for ring in polygon.interiors)
    return found


