"""Read a DXF drawing's model space into plain arrays (drawing units): the reading stage.

The file is opened by `document` (byte checks, ezdxf's ordinary reader or its recovery),
entities are flattened by `entities` (a dispatch table per entity type) and blocks placed by
`inserts`. These modules (and `PlainEntities.fit` in `plain`) are the only ones that import
ezdxf; nothing from ezdxf leaves them. The checks of the file and its text (`filetext`,
`sound`) and the cut of its plain entities need none of it, so that the build process can
do them ahead of the reader (`ahead`).

INSERTs, LINEs and LWPOLYLINEs written plainly (`plain.cut_plain_entities`: a warehouse's
bays and most of its linework) are taken out of a sound file's text and read from it
directly, in their places among the entities ezdxf reads: the same values, without ezdxf's
entity objects.

A sound file with a large model space (SPLIT_WORK) is read in two halves side by side:
the second half's entities in a forked process (clearway.side_by_side), the first's here,
and the two merged in order before the blocks are placed. Where the ordinary reader refuses
either half, or its audit finds anything, the whole file is read in one pass instead.
"""

from __future__ import annotations

import contextlib
import hashlib
import math
import os
import re
import struct
from collections import Counter, defaultdict
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from clearway.collector import paused_collector
from clearway.side_by_side import Aside, can_fork, every_core_busy
from clearway.errors import DrawingError
from clearway.limits import Limits
from clearway.converter.document import (DAMAGE, TOLERATED_FIXES, parse_document, read_sound,
                                         repair_notices, saved_date)
from clearway.converter.entities import (LINEWORK, TEXTS, flatten_entity, lenient,
                                         plan_polyline_parts, text_item)
from clearway.converter.filetext import SPLIT_WORK, entity_halves, load_bytes, ordinary_text
from clearway.converter.inserts import (BLOCK_OPENING_PREFIX, BlockReader, attribute_label,
                                        attributes, block_base_point, entity_layer,
                                        insert_matrices, plan_rows, scale_of,
                                        single_plan_insert)
from clearway.converter.parts import ARC, OPEN, Parts
from clearway.converter.plain import cut_plain_entities
from clearway.converter.units import INSUNITS_CODES, UNITS_TO_M


@dataclass
class DrawingContent:
    """Everything clearway uses from a drawing, in drawing units, model space only.

    parts : layer -> Parts (blocks placed; layer 0 inside a block resolved to the INSERT's
        layer; the contents of opening blocks under ``BLOCK_OPENING_PREFIX + kind``)
    points : (layer, x, y, label or None, dxftype) for POINT, CIRCLE centres and INSERTs
    texts : (layer, x, y, text, height) for TEXT and MTEXT
    attribute_texts : the same for the ATTRIBs of INSERTs (room tags)
    inserts : (layer, block name, x, y, heading, attributes {tag: text}) per placed copy;
        heading is where the block's +X axis points, degrees counter-clockwise from +X
    dimensions : (layer, measured length, displayed text) of linear DIMENSIONs
    header : a few header values that speak about units ($MEASUREMENT, $LUNITS, $DIMLUNIT)
    repairs : ezdxf's notices for each repair its recovery made
    footprints : INSERT layer -> Parts, one closed ring per placed copy of a block whose
        linework encloses nothing: the convex hull of its contents (`BlockReader.footprint`)
    """

    source: str
    sha256: str
    insunits: int | None
    layer_states: dict = field(default_factory=dict)      # name -> (frozen, off)
    counts: dict = field(default_factory=lambda: defaultdict(Counter))
    closed_open: dict = field(default_factory=lambda: defaultdict(lambda: [0, 0]))
    parts: dict = field(default_factory=dict)
    footprints: dict = field(default_factory=dict)        # INSERT layer -> Parts (rings)
    points: list = field(default_factory=list)
    texts: list = field(default_factory=list)
    attribute_texts: list = field(default_factory=list)
    inserts: list = field(default_factory=list)
    dimensions: list = field(default_factory=list)
    header: dict = field(default_factory=dict)
    skipped: Counter = field(default_factory=Counter)     # (layer, dxftype) -> count
    paperspace: int = 0
    warnings: list = field(default_factory=list)
    repairs: list = field(default_factory=list)
    drawing_date: str = ""                                # ISO 8601, "" when unknown


class _Budget:
    """Running count of expanded parts and vertices against max_entities / max_vertices."""

    def __init__(self, limits, source):
        self.limits, self.source = limits, source
        self.parts = self.vertices = 0

    def spend(self, parts, copies, where):
        self.add(len(parts) * copies, len(parts.coords) * copies, where)

    def add(self, parts, vertices, where):
        self.parts += parts
        self.vertices += vertices
        hint = f"reached while expanding {where}"
        self.limits.check("max_entities", self.parts, subject=self.source,
                          what="linework parts after block expansion", hint=hint)
        self.limits.check("max_vertices", self.vertices, subject=self.source,
                          what="vertices after block expansion", hint=hint)


#: Size of a drawing (characters) from which, while its halves are parsed side by side, the
#: build process is asked to hold back its own imports (clearway.side_by_side.every_core_busy):
#: on two cores a third process slows both halves. Medians of seven to fifteen builds, time
#: to the plan in the build process: the mixed suite floor at 5,000 bays (870,000
#: characters) 1.003 -> 0.965 s, two real plans of 1.1 and 1.4 MB 0.05 and 0.07 s sooner.
#: Below this the halves are read quickly, and the imports left over after them would keep
#: the build waiting longer than the hold gained: the current suite floor at 2,000 bays
#: (269,000 characters) had its plan 0.06 s later.
HOLD_CHARACTERS = 600_000

_HEADER_KEYS = ("$MEASUREMENT", "$LUNITS", "$DIMLUNIT", "$DIMLFAC")


@paused_collector()  # ezdxf's many long-lived objects make each full collection costly
def read_drawing(path, *, chord_tolerance, units=None, limits=None, block_kind=None,
                 ahead=None):
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
    block_kind : callable, optional
        Block name -> "door", "window" or None: the contents of INSERTs of such blocks go
        to the opening pseudo-layers (see `inserts.BlockReader`).
    ahead : clearway.converter.ahead.ReadAhead, optional
        This file's text as another process read it ahead (`ahead.read_ahead`). Where
        ezdxf's ordinary reader reads the rest as it stands, the plain entities taken out
        there are read with it, as they would have been here; otherwise the file is read
        here.

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
    source = Path(path).name
    read = _read_cut(ahead.plain, TOLERATED_FIXES) \
        if ahead is not None and ahead.path == os.fspath(path) else None
    if read is not None:
        content, reading = _read_model_space(read[0], source, ahead.sha256,
                                             repair_notices(read[1]), chord_tolerance, units,
                                             limits, read[2])
        return _place_blocks(read[0], content, reading, limits, block_kind)
    data = load_bytes(path, limits)
    sha256 = hashlib.sha256(data).hexdigest()
    text = ordinary_text(data)
    halves = _halves(text) if text is not None else None
    if halves is not None:
        first = rest = None
        busy = every_core_busy() if len(text) >= HOLD_CHARACTERS else contextlib.nullcontext()
        with busy, Aside(lambda: _read_half(halves[1], source, sha256, chord_tolerance, units,
                                            limits)) as second:
            first = _read_plainly(halves[0])
            if first is not None:
                content, reading = _read_model_space(first[0], source, sha256, [],
                                                     chord_tolerance, units, limits, first[2])
                rest = second.result()
        if rest is not None:
            _merge(content, reading, rest)
            return _place_blocks(first[0], content, reading, limits, block_kind)
    whole = _read_plainly(text, tolerated=TOLERATED_FIXES, fallback=False) \
        if text is not None else None
    if whole is not None:
        doc, repairs, plain = whole[0], repair_notices(whole[1]), whole[2]
    else:
        (doc, repairs), plain = parse_document(data, source, text), None
    content, reading = _read_model_space(doc, source, sha256, repairs, chord_tolerance, units,
                                         limits, plain)
    return _place_blocks(doc, content, reading, limits, block_kind)


def _read_plainly(text, tolerated=frozenset(), fallback=True):
    """(document, auditor, PlainEntities or None) of sound `text`: its plain entities taken
    out (`plain.cut_plain_entities`) and the rest read by ezdxf's ordinary reader
    (`document.read_sound`), where they fit what ezdxf reads (`PlainEntities.fit`); else,
    with `fallback`, the whole of `text` read by it. None when the ordinary reader refuses it
    or its audit finds anything but `tolerated`, and, without `fallback`, when the plain
    entities could not be read so (the caller reads the file its own way)."""
    plain = cut_plain_entities(text)
    read = _read_cut(plain, tolerated) if plain is not None else None
    if read is not None or not fallback:
        return read
    read = read_sound(text, tolerated=tolerated)
    return None if read is None else (*read, None)


def _read_cut(plain, tolerated):
    """(document, auditor, `plain`) of the text `plain` was cut from: the rest read by ezdxf's
    ordinary reader, where it reads it and its audit finds nothing but `tolerated`, and the
    plain entities fit what it read (`PlainEntities.fit`); else None."""
    try:
        read = read_sound(plain.text, tolerated=tolerated)
    except RecursionError:
        read = None         # parse_document says so of the whole file
    return (*read, plain) if read is not None and plain.fit(read[0]) else None


def _halves(text):
    """The two drawings `text`'s model space is read in side by side, or None: one pass
    (a small model space, or no second process to be had)."""
    return entity_halves(text, least=SPLIT_WORK) if can_fork() else None


@dataclass
class _Reading:
    """What a pass over the model space gathers besides DrawingContent: linework chunks per
    layer, INSERT matrices per (block, layer), damaged entities per (layer, type), the
    budget spent, the paper-space entities of the ENTITIES section."""

    tolerance: float            # the chord tolerance in drawing units
    chunks: dict
    inserts: dict
    damaged: Counter
    budget: _Budget
    paperspace: int = 0


def _read_model_space(doc, source, sha256, repairs, chord_tolerance, units, limits,
                      plain=None):
    """(DrawingContent, _Reading) of `doc`'s model space, blocks not yet placed.

    plain : PlainEntities, optional
        Entities taken out of the text `doc` was read from: read in their places among its
        entities.
    """
    insunits = doc.header.get("$INSUNITS", None)
    unit = units or INSUNITS_CODES.get(insunits, "m")
    tolerance = chord_tolerance / UNITS_TO_M[unit]
    content = DrawingContent(source, sha256, insunits if isinstance(insunits, int) else None,
                             repairs=repairs, drawing_date=saved_date(doc.header))
    if repairs:
        content.warnings.append(f"{source}: ezdxf's recovery repaired the file ({len(repairs)} "
                                f"notices; report.json lists them under repairs)")
    for key in _HEADER_KEYS:
        with contextlib.suppress(*DAMAGE):
            if key in doc.header:
                content.header[key] = doc.header.get(key)
    for layer in doc.layers:
        with contextlib.suppress(*DAMAGE):
            content.layer_states[str(layer.dxf.name)] = (layer.is_frozen(), layer.is_off())
    content.paperspace = _paperspace_count(doc)
    reading = _Reading(tolerance, defaultdict(list), defaultdict(list), Counter(),
                       _Budget(limits, source))
    with contextlib.suppress(*DAMAGE):
        reading.paperspace = len(doc.paperspace())
    base_points, headings_by_axis = {}, {}
    cursor, stop = 0, len(plain) if plain is not None else 0
    for entity in doc.modelspace():
        if cursor < stop:
            index = plain.order[entity.dxf.handle]
            while cursor < stop and plain.before[cursor] <= index:
                _read_plain(doc, plain, cursor, content, reading, limits, base_points,
                            headings_by_axis)
                cursor += 1
        if not entity.is_alive:
            continue
        dxftype, layer = entity.dxftype(), entity_layer(entity)
        content.counts[layer][dxftype] += 1
        content.layer_states.setdefault(layer, (False, False))
        with lenient(source, limits, dxftype, layer, reading.damaged, (layer, dxftype)):
            _read_entity(entity, dxftype, layer, tolerance, content, reading.chunks,
                         reading.inserts, limits, reading.budget, base_points, headings_by_axis)
    while cursor < stop:
        _read_plain(doc, plain, cursor, content, reading, limits, base_points, headings_by_axis)
        cursor += 1
    return content, reading


@paused_collector()
def _read_half(text, source, sha256, chord_tolerance, units, limits):
    """The second half's `_read_model_space`, made fit to send back (`_merge`), or None when
    ezdxf's ordinary reader refuses `text` or its audit finds anything."""
    read = _read_plainly(text)
    if read is None:
        return None
    content, reading = _read_model_space(read[0], source, sha256, [], chord_tolerance, units,
                                         limits, read[2])
    content.closed_open = dict(content.closed_open)      # its default factory is a lambda
    reading.budget = (reading.budget.parts, reading.budget.vertices)
    # each layer's linework as one Parts and each block's INSERT matrices as one array: the
    # same values in the same order (`_place_blocks` joins them so), but a few arrays to
    # pickle instead of thousands of small ones (the second half of the mixed suite floor
    # at 20,000 bays: 4,754 chunks and 6,257 matrices, pickled and unpickled in 0.086 s,
    # now in 0.010 s)
    reading.chunks = {layer: [Parts.concat(found)] for layer, found in reading.chunks.items()}
    reading.inserts = {key: [_stacked(found)] for key, found in reading.inserts.items()}
    return content, reading


def _merge(content, reading, rest):
    """Add the second half's content and reading (`_read_half`) to the first's, as if one
    pass had read on: lists extended, counts added, new keys after the first's."""
    other, more = rest
    for layer, counts in other.counts.items():
        content.counts[layer].update(counts)
    for layer, state in other.layer_states.items():
        content.layer_states.setdefault(layer, state)
    for layer, (closed, open_) in other.closed_open.items():
        content.closed_open[layer][0] += closed
        content.closed_open[layer][1] += open_
    for name in ("points", "texts", "attribute_texts", "inserts", "dimensions"):
        getattr(content, name).extend(getattr(other, name))
    content.skipped.update(other.skipped)
    # the paper space of the ENTITIES section is split between the halves; the other
    # layouts (in the blocks section) are in both
    content.paperspace += more.paperspace
    for layer, found in more.chunks.items():
        reading.chunks[layer].extend(found)
    for key, found in more.inserts.items():
        reading.inserts[key].extend(found)
    reading.damaged.update(more.damaged)
    reading.budget.add(*more.budget, "the model space")


def _place_blocks(doc, content, reading, limits, block_kind):
    """Finish `content`: report damaged entities, place the blocks of the INSERTs read,
    gather the linework, check that every coordinate is finite."""
    source, tolerance = content.source, reading.tolerance
    reader = BlockReader(doc, source, limits, reading.budget, block_kind)
    chunks, footprints = reading.chunks, defaultdict(list)
    for (layer, dxftype), count in sorted(reading.damaged.items()):
        content.warnings.append(f"{source}: {count} damaged {dxftype} on layer {layer!r} skipped")
    for (name, insert_layer), matrix_list in reading.inserts.items():
        if content.layer_states.get(insert_layer, (False, False))[0]:
            continue  # an INSERT on a frozen layer hides its whole block
        matrices = _stacked(matrix_list)
        for target, parts in reader.placed_parts(name, matrices, tolerance, insert_layer):
            chunks[target].append(parts)
        hull = reader.footprint(name, tolerance / scale_of(matrices))
        if hull is not None:
            footprints[insert_layer].append(hull.placed(matrices))
    content.warnings += reader.warnings
    content.parts = {layer: Parts.concat(found) for layer, found in chunks.items()}
    content.footprints = {layer: Parts.concat(found) for layer, found in footprints.items()}
    for layer in content.parts:  # layers used inside blocks need not be in the table
        if not layer.startswith(BLOCK_OPENING_PREFIX):
            content.layer_states.setdefault(layer, (False, False))
    for layer, parts in content.parts.items():
        if not np.isfinite(parts.coords).all():
            raise DrawingError(f"{source}: layer {layer!r} has coordinates that are not finite")
    for layer, x, y, *_ in content.points + content.texts:
        if not (math.isfinite(x) and math.isfinite(y)):
            raise DrawingError(f"{source}: layer {layer!r} has coordinates that are not finite")
    return content


def _read_entity(entity, dxftype, layer, tolerance, content, chunks, inserts, limits, budget,
                 base_points=None, headings_by_axis=None):
    """Add one model-space entity to `content`, `chunks` (linework) or `inserts`.

    base_points, headings_by_axis : dict, optional
        Caches shared by the entities of one document: block base points
        (`inserts.insert_matrices`) and INSERT headings by the block's +X axis.
    """
    base_points = {} if base_points is None else base_points
    headings_by_axis = {} if headings_by_axis is None else headings_by_axis
    if dxftype == "INSERT":
        rows = single_plan_insert(entity, base_points)
        if rows is None:
            matrices = insert_matrices(entity, limits=limits, source=content.source,
                                       base_points=base_points)
            origins = matrices[:, 2, :].tolist()
            # the way the block's +X axis points in the plan (rotation, mirroring, extrusion)
            headings = (np.degrees(np.arctan2(matrices[:, 0, 1], matrices[:, 0, 0])) % 360.0).tolist()
        else:  # one cell in the plan: its rows as floats, stacked with the others at the end
            matrices, origins, headings = rows, [rows[2]], _headings(rows, headings_by_axis)
        found = attributes(entity) if entity.attribs else []
        label = attribute_label(entity, found) if found else None
        name = str(entity.dxf.name)
        _add_insert(content, inserts, layer, name, matrices, origins, headings, label,
                    {tag: text for tag, text, _ in found})
        for _, text, attrib in found:
            if text:
                with contextlib.suppress(*DAMAGE):
                    content.attribute_texts.append(text_item(attrib, entity_layer(attrib)))
    elif dxftype == "POINT":
        location = entity.dxf.location
        content.points.append((layer, float(location.x), float(location.y), None, dxftype))
    elif dxftype in TEXTS:
        content.texts.append(text_item(entity, layer))
    elif dxftype == "DIMENSION":
        content.skipped[(layer, dxftype)] += 1
        dimension = _dimension(entity, layer)
        if dimension is not None:
            content.dimensions.append(dimension)
    else:
        found = flatten_entity(entity, tolerance, limits.max_curve_vertices)
        if found is None:
            content.skipped[(layer, dxftype)] += 1
            return
        if dxftype == "CIRCLE":
            centre = entity.ocs().to_wcs(entity.dxf.center)
            content.points.append((layer, float(centre.x), float(centre.y), None, dxftype))
        _add_linework(found, dxftype, layer, content, chunks, budget)


def _add_linework(found, dxftype, layer, content, chunks, budget):
    """Add an entity's flattened linework `found`, [(xy, kind), ...], to `chunks` and count
    it closed or open in `content`."""
    if dxftype in LINEWORK:
        closed = any(kind not in (OPEN, ARC) for _, kind in found)
        content.closed_open[layer][0 if closed else 1] += 1
    parts = Parts.from_list(*zip(*found)) if found else Parts.empty()
    budget.spend(parts, 1, f"{dxftype} on layer {layer!r}")
    chunks[layer].append(parts)


def _headings(rows, headings_by_axis):
    """[heading] of a one-cell INSERT's plan `rows`: where its block's +X axis points,
    degrees; the same few axes recur across thousands of INSERTs, each computed once."""
    axis = struct.pack("2d", *rows[0])  # bit for bit: -0.0 and 0.0 differ here
    if axis not in headings_by_axis:
        matrix = np.array(rows, dtype=float)[None]
        headings_by_axis[axis] = (
            np.degrees(np.arctan2(matrix[:, 0, 1], matrix[:, 0, 0])) % 360.0).tolist()
    return headings_by_axis[axis]


def _add_insert(content, inserts, layer, name, matrices, origins, headings, label, tags):
    """Add an INSERT of block `name` on `layer` to `inserts` and `content` (its points and
    placed copies)."""
    inserts[(name, layer)].append(matrices)
    for x, y in origins:
        content.points.append((layer, x, y, label, "INSERT"))
    for (x, y), heading in zip(origins, headings):
        content.inserts.append((layer, name, x, y, heading, tags))


def _read_plain(doc, plain, k, content, reading, limits, base_points, headings_by_axis):
    """Add entity `k` of `plain` (PlainEntities) as `_read_model_space` and `_read_entity`
    add one read by ezdxf."""
    kind, layer, values = plain.kind[k], plain.layer[k], plain.values[k]
    content.counts[layer][kind] += 1
    content.layer_states.setdefault(layer, (False, False))
    if kind == "INSERT":
        name, x, y, xscale, yscale, rotation = values
        rows = plan_rows(rotation, xscale, yscale, x, y,
                         block_base_point(doc.blocks, name, base_points))
        _add_insert(content, reading.inserts, layer, name, rows, [rows[2]],
                    _headings(rows, headings_by_axis), None, {})
        return
    with lenient(content.source, limits, kind, layer, reading.damaged, (layer, kind)):
        if kind == "LINE":
            x1, y1, x2, y2 = values
            found = [(np.array([[x1, y1], [x2, y2]]), OPEN)]
        else:
            points, closed, width, _ = values
            found = plan_polyline_parts(points, closed, width, reading.tolerance,
                                        limits.max_curve_vertices)
        _add_linework(found, kind, layer, content, reading.chunks, reading.budget)


def _stacked(matrix_list):
    """One (M, 3, 2) array of INSERT matrices: (M_i, 3, 2) arrays and single matrices given
    as three (x, y) tuples of rows (`inserts.single_plan_insert`), in order."""
    if all(isinstance(item, tuple) for item in matrix_list):
        return np.array(matrix_list, dtype=float).reshape(-1, 3, 2)
    return np.concatenate([np.array(item, dtype=float)[None] if isinstance(item, tuple) else item
                           for item in matrix_list])


_MTEXT_CODES = re.compile(r"\\[A-Za-z][^;\\]*;|[{}]|\\P")


def _dimension(entity, layer):
    """(layer, measured length in drawing units, displayed text) of a linear DIMENSION.

    The displayed text is the one its rendered block shows (what a reader of the plan
    sees), else the text override; None for other dimension types or damaged ones.
    """
    with contextlib.suppress(*DAMAGE):
        if entity.dimtype not in (0, 1):  # linear, rotated and aligned only
            return None
        measured = float(entity.get_measurement())
        if not math.isfinite(measured) or measured <= 0:
            return None
        shown = ""
        block = entity.get_geometry_block()
        if block is not None:
            for item in block:
                if item.dxftype() in TEXTS:
                    shown = item.plain_text().strip()
                    break
        if not shown:
            override = str(entity.dxf.get("text", "") or "")
            shown = "" if override in ("", "<>") else override
        return (layer, measured, _MTEXT_CODES.sub("", shown).strip())
    return None


def _paperspace_count(doc):
    """Count paper-space entities (0 when recovery left the layouts damaged)."""
    total = 0
    try:
        for layout in doc.layouts:
            with contextlib.suppress(*DAMAGE):
                if not layout.is_modelspace:
                    total += len(layout)
    except DAMAGE:
        pass
    return total
