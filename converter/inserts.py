"""INSERTs and blocks: placement matrices, attributes, and each block flattened once.

Each block definition is flattened once per layer (block units) and then placed for all its
INSERTs and MINSERT cells with numpy (`Parts.placed`), which handles nesting, non-uniform
scale, rotation, mirroring and extrusion through each INSERT's own transformation matrix.
"""

from __future__ import annotations

import math
from collections import Counter, defaultdict

import numpy as np
import shapely
from ezdxf.math import X_AXIS, Y_AXIS

from clearway.errors import DrawingError
from clearway.limits import Limits
from clearway.converter.document import DAMAGE
from clearway.converter.entities import TEXTS, flatten_entity, lenient
from clearway.converter.parts import CLOSED, Parts

_LABEL_TAGS = ("LABEL", "NAME", "ID", "STATION", "TAG")
#: Attribute tags that say what kind of station a block is, never its label.
KIND_TAGS = ("TYPE", "KIND")
#: Block contents of INSERTs whose block name marks an opening go to these pseudo-layers
#: (no DXF layer name can hold a NUL), one per kind of opening block.
BLOCK_OPENING_PREFIX = "\x00"


def scale_of(matrices):
    """Largest linear scale of (M, 3, 2) affine matrices (for the chord tolerance)."""
    scale = float(np.max(np.linalg.norm(matrices[:, :2, :], ord=2, axis=(1, 2))))
    return scale if math.isfinite(scale) and scale > 1e-9 else 1e-9 if scale <= 1e-9 else 1e300


def insert_matrices(insert, *, limits=None, source="", base_points=None):
    """Return the (M, 3, 2) row-vector affine matrices of an INSERT (M cells of a MINSERT).

    base_points : dict, optional
        A cache, block name -> its base point (x, y) or None, shared by the INSERTs of one
        document: each block is looked up once instead of once per INSERT.

    Raises LimitError when a MINSERT has more cells than ``limits.max_entities``.
    """
    limits = limits or Limits()
    # the attributes set on the entity, in one copy: each attribute left at its default
    # costs ezdxf's namespace a failed lookup and a search of the definitions
    attribs = insert.dxf.all_existing_dxf_attribs()
    base = _plan_matrix(insert, attribs, base_points)
    if base is not None:
        base = np.array(base, dtype=float)
    else:
        rows = np.array(list(insert.matrix44().rows()), dtype=float)
        base = rows[[0, 1, 3], :2]
    row_count = max(int(attribs.get("row_count", 1)), 1)
    column_count = max(int(attribs.get("column_count", 1)), 1)
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


#: DXF defaults of the INSERT attributes `_plan_matrix` reads, from ezdxf's definitions
#: (filled on first use).
_INSERT_DEFAULTS: dict = {}


def _attribute(insert, attribs, key):
    """The INSERT's attribute `key` as ``insert.dxf.key`` gives it: its value, else the
    DXF default."""
    if key in attribs:
        return attribs[key]
    if key not in _INSERT_DEFAULTS:
        _INSERT_DEFAULTS[key] = insert.dxf.dxf_default_value(key)
    return _INSERT_DEFAULTS[key]


def _plan_matrix(insert, attribs, base_points=None):
    """The (3, 2) matrix of an INSERT in the plan's plane (extrusion +Z), as ezdxf's
    ``Insert.matrix44`` gives it (`plan_rows`), as three (x, y) tuples of rows; None for any
    other extrusion.

    attribs : dict, the attributes set on the INSERT (``all_existing_dxf_attribs``)
    base_points : dict, optional, block name -> base point (x, y) or None (a cache)
    """
    extrusion = attribs.get("extrusion", None)
    if extrusion is not None and (extrusion[0] != 0 or extrusion[1] != 0 or extrusion[2] <= 0):
        return None
    point = _attribute(insert, attribs, "insert")
    return plan_rows(_attribute(insert, attribs, "rotation"), _attribute(insert, attribs, "xscale"),
                     _attribute(insert, attribs, "yscale"), point[0], point[1],
                     _base_point(insert, base_points))


def plan_rows(rotation, xscale, yscale, x, y, base):
    """The rows (x axis, y axis, origin) of the plan matrix of an INSERT of extrusion +Z, as
    ezdxf's ``Insert.matrix44`` gives them (scale, then rotation, the block's `base` point,
    (x, y) or None, moved onto the insertion point (x, y)) without its 4 x 4 algebra.

    Plain floats, the same operations in the same order as on numpy 2-vectors (whose
    per-call overhead outweighed the arithmetic), so the rows are bit-identical.
    """
    angle = math.radians(rotation)
    cos, sin = math.cos(angle), math.sin(angle)
    xscale, yscale = float(xscale), float(yscale)
    x_axis, y_axis = (xscale * cos, xscale * sin), (-yscale * sin, yscale * cos)
    x, y = float(x), float(y)
    if base is not None:
        base_x, base_y = base
        x -= base_x * x_axis[0] + base_y * y_axis[0]
        y -= base_x * x_axis[1] + base_y * y_axis[1]
    return x_axis, y_axis, (x, y)


def single_plan_insert(insert, base_points=None):
    """The rows (x axis, y axis, origin) of the one matrix `insert_matrices` returns for
    an INSERT of one cell in the plan's plane, as tuples of floats; None for any other
    INSERT (a MINSERT of several cells, another extrusion).

    The same values in the same order of work as `insert_matrices`, without its arrays.
    """
    attribs = insert.dxf.all_existing_dxf_attribs()
    rows = _plan_matrix(insert, attribs, base_points)
    if rows is None or max(int(attribs.get("row_count", 1)), 1) * \
            max(int(attribs.get("column_count", 1)), 1) != 1:
        return None
    return rows


def _base_point(insert, cache):
    """(x, y) of the base point of the INSERT's block, None without a block."""
    return block_base_point(insert.doc.blocks if insert.doc else None, insert.dxf.name, cache)


def block_base_point(blocks, name, cache=None):
    """(x, y) of the base point of block `name` in `blocks` (a document's BlocksSection, or
    None), None without such a block; `cache`, a dict, keeps each block's."""
    if cache is not None and name in cache:
        return cache[name]
    block = blocks.get(name) if blocks is not None else None
    base = None
    if block is not None:
        point = block.block.dxf.base_point
        base = (float(point[0]), float(point[1]))
    if cache is not None:
        cache[name] = base
    return base


def attribute_label(insert, found=None):
    """Return an INSERT's label attribute (LABEL, NAME, ID, ..., else the first non-empty
    one that is not a KIND_TAGS attribute).

    `found` is the INSERT's `attributes` when the caller has them already.
    """
    values = {tag: text for tag, text, _ in (attributes(insert) if found is None else found)}
    for tag in _LABEL_TAGS:
        if values.get(tag):
            return values[tag]
    return next((value for tag, value in values.items() if value and tag not in KIND_TAGS),
                None)


def attributes(insert):
    """Return an INSERT's live ATTRIBs as a list of (tag, text, entity)."""
    return [(str(attrib.dxf.tag).upper(), str(attrib.dxf.text).strip(), attrib)
            for attrib in insert.attribs if attrib.is_alive]


class BlockReader:
    """Flatten each block definition once per tolerance, nested blocks included.

    `block_kind(name)` names the kind of opening a block draws ("door", "window") or None;
    the contents of such a block, on any layer, are kept under the pseudo-layer
    ``BLOCK_OPENING_PREFIX + kind`` instead of their own layers (a door leaf drawn on the
    wall layer inside a door block is still a door leaf).
    """

    def __init__(self, doc, source, limits, budget, block_kind=None):
        self.doc, self.source, self.limits, self.budget = doc, source, limits, budget
        self.block_kind = block_kind or (lambda name: None)
        self.cache, self.active, self.warnings = {}, [], []
        self.base_points = {}  # block name -> base point, for `insert_matrices`
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
        except DAMAGE:
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
            with lenient(self.source, self.limits, dxftype, layer, self.damaged, (name, dxftype)):
                self._add(entity, dxftype, layer, tolerance, chunks)
        self.active.pop()
        result = {layer: Parts.concat(found) for layer, found in chunks.items()}
        self.cache[(name, tolerance)] = result
        if not self.active:
            for (block_name, dxftype), count in sorted(self.damaged.items()):
                self.warnings.append(f"{self.source}: {count} damaged {dxftype} in block "
                                     f"{block_name!r} skipped")
            self.damaged.clear()
        return result

    def footprint(self, name, tolerance):
        """Return the convex hull of block `name`'s contents as Parts (one closed ring, block
        units) when its linework encloses nothing of that hull, else None.

        A rack bay drawn as four upright posts and two beam lines, or a whole row of them,
        leaves the space under its pallets open at both ends: only the block says that the
        space is the rack's. Opening blocks have none; a block whose closed outlines cover 90 %
        of its hull (a bay's rectangle, a run of them) already says where it stands.
        """
        if self.block_kind(name):
            return None
        key = ("footprint", name, tolerance)
        if key not in self.cache:
            found = [parts for layer, parts in self.block_parts(name, tolerance).items()
                     if not layer.startswith(BLOCK_OPENING_PREFIX)]
            parts = Parts.concat(found)
            hull = shapely.convex_hull(shapely.multipoints(parts.coords)) \
                if len(parts.coords) >= 3 else None
            ring = None
            if hull is not None and hull.geom_type == "Polygon" and hull.area > 0:
                _, rings, fills = parts.geometries()
                closed = np.concatenate([shapely.polygons(rings), fills])
                if not len(closed) or shapely.union_all(shapely.make_valid(closed)).area < \
                        0.9 * hull.area:
                    ring = Parts.from_list([np.asarray(hull.exterior.coords)[:-1]], [CLOSED])
            self.cache[key] = ring
        return self.cache[key]

    def placed_parts(self, name, matrices, tolerance, insert_layer):
        """Yield (layer, Parts) of block `name` placed by `matrices`, layers resolved.

        Layer 0 inside the block takes `insert_layer`; every layer of an opening block goes
        to its opening pseudo-layer.
        """
        kind = self.block_kind(name)
        for block_layer, parts in self.block_parts(name, tolerance / scale_of(matrices)).items():
            if kind and not block_layer.startswith(BLOCK_OPENING_PREFIX):
                target = BLOCK_OPENING_PREFIX + kind
            else:
                target = insert_layer if block_layer == "0" else block_layer
            self.budget.spend(parts, len(matrices), f"INSERTs of block {name!r}")
            yield target, parts.placed(matrices)

    def _add(self, entity, dxftype, layer, tolerance, chunks):
        if dxftype == "INSERT":
            matrices = insert_matrices(entity, limits=self.limits, source=self.source,
                                       base_points=self.base_points)
            child = str(entity.dxf.name)
            kind = self.block_kind(child)
            # inline rather than through placed_parts: one frame less per nesting level
            for child_layer, parts in self.block_parts(child, tolerance / scale_of(matrices)).items():
                self.budget.spend(parts, len(matrices), f"block {child!r}")
                if kind and not child_layer.startswith(BLOCK_OPENING_PREFIX):
                    target = BLOCK_OPENING_PREFIX + kind
                else:
                    target = layer if child_layer == "0" else child_layer
                chunks[target].append(parts.placed(matrices))
            return
        if dxftype in ("ATTDEF", "ATTRIB") + TEXTS:
            return
        found = flatten_entity(entity, tolerance, self.limits.max_curve_vertices)
        if found:
            parts = Parts.from_list(*zip(*found))
            self.budget.spend(parts, 1, "block contents")
            chunks[layer].append(parts)


def entity_layer(entity):
    """Return an entity's layer name ("0" when a damaged or unmodelled entity has none)."""
    try:
        return str(entity.dxf.get("layer", "0"))
    except DAMAGE:
        return "0"
