"""Plainly written entities read straight from a sound drawing's text, not through ezdxf.

A warehouse plan is mostly INSERTs of a few blocks, one per bay, and lines and polylines:
in the mixed suite drawing at 20,000 bays the INSERTs are 72 % of the text, and ezdxf took
1.45 s to read and audit it whole against 0.43 s without them. An INSERT, a LINE or an
LWPOLYLINE written plainly means only the values written:

- every one: a handle, an owner, a layer, and at most a line type, a colour and a line
  weight; no extension data, APP DATA, thickness or extrusion;
- an INSERT: a block name, an insertion point, at most a scale and a rotation (no
  attributes, no array);
- a LINE: its two points;
- an LWPOLYLINE: its flags, at most a constant width and an elevation, its vertices with
  at most their widths and bulges.

`cut_plain_entities` takes such entities out of the ENTITIES section with one regular
expression, their values converted as ezdxf's reader converts them (`float` of the value
line); ezdxf reads the rest. `PlainEntities.fit` then checks what ezdxf's audit would have
checked of them (an INSERT's block is defined, the layer name is valid, the line type
defined, the handle new; `cut_plain_entities` checks the colour and the line weight), and
each keeps its place among the other entities (`before`), so the model space is read in
the file's order.

ezdxf loads an INSERT's and a LINE's group codes into their attributes whatever their
order (`SubclassProcessor.simple_dxfattribs_loader`), and an LWPOLYLINE's vertices one 10
after another, each with the 40, 41 and 42 after it (`LWPolylinePoints.from_tags`), so the
values are the same; an entity written any other way, or in a drawing whose other entities
do not all carry a handle, is left to ezdxf.
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np

from clearway.converter.filetext import ENTITY, FOLLOWERS, entities_span


def _tag(code, *, optional=False, value=r"([^\n]*)\n"):
    """A tag: its group code line (the code, spaces about it allowed: ezdxf reads it with
    `int`), then its value line, captured unless `value` says otherwise."""
    tag = rf"[ \t]*{code}[ \t]*\n" + value
    return f"(?:{tag})?" if optional else tag


#: The tags every plain entity starts with, after its type: handle, owner, the AcDbEntity
#: subclass with the layer, line type, colour and line weight (6 groups).
_COMMON = (_tag(5, optional=True) + _tag(330, optional=True)
           + _tag(100, value=r"AcDbEntity\n") + _tag(8)
           + _tag(6, optional=True) + _tag(62, optional=True) + _tag(370, optional=True))
_INSERT = (r"(INSERT)\n" + _COMMON + _tag(100, value=r"AcDbBlockReference\n") + _tag(2)
           + _tag(10) + _tag(20) + _tag(30, optional=True)
           + _tag(41, optional=True) + _tag(42, optional=True) + _tag(43, optional=True)
           + _tag(50, optional=True))
_LINE = (r"(LINE)\n" + _COMMON + _tag(100, value=r"AcDbLine\n")
         + _tag(10) + _tag(20) + _tag(30, optional=True)
         + _tag(11) + _tag(21) + _tag(31, optional=True))
#: An LWPOLYLINE's vertices, one at least (ezdxf refuses a polyline without any): 10 and
#: 20, then 40, 41 and 42 in any order.
_VERTICES = r"((?:[ \t]*10[ \t]*\n[^\n]*\n[ \t]*20[ \t]*\n[^\n]*\n(?:[ \t]*4[012][ \t]*\n[^\n]*\n)*)+)"
_LWPOLYLINE = (r"(LWPOLYLINE)\n" + _COMMON + _tag(100, value=r"AcDbPolyline\n")
               + _tag(90, value=r"[^\n]*\n") + _tag(70) + _tag(43, optional=True)
               + _tag(38, optional=True) + _VERTICES)
#: One plain entity, from its group code 0 to the next entity's (the lookahead: nothing else
#: follows). In sound text (`sound.sound_text`) every group code line is an integer, so a
#: line "INSERT" is a value and the "0" before it a group code.
_PLAIN = re.compile(r"^[ \t]*0[ \t]*\n(?:" + "|".join((_INSERT, _LINE, _LWPOLYLINE)) + r")"
                    + r"(?=[ \t]*0[ \t]*\n)", re.MULTILINE)
#: How many groups each kind has, and where they start among the expression's (its type's
#: group first).
_WIDTH = {"INSERT": re.compile(_INSERT).groups, "LINE": re.compile(_LINE).groups,
          "LWPOLYLINE": re.compile(_LWPOLYLINE).groups}
_FIRST = {"INSERT": 1, "LINE": 1 + _WIDTH["INSERT"], "LWPOLYLINE": 1 + _WIDTH["INSERT"] + _WIDTH["LINE"]}
#: What ezdxf knows of these entities, written out so that the text is cut without
#: importing ezdxf (`filetext`); tests/converter/test_plain.py holds each equal to ezdxf's own.
#: Its defaults of the values a plain INSERT may leave out (the attributes' defaults of
#: ezdxf.entities.insert.acdb_block_reference).
DEFAULTS = {"xscale": 1, "yscale": 1, "rotation": 0}
#: The line weights its audit leaves as they are (ezdxf.lldxf.const.VALID_DXF_LINEWEIGHT_VALUES):
#: hundredths of a millimetre, and -1, -2, -3 by layer, by block and the default.
LINEWEIGHTS = frozenset({0, 5, 9, 13, 15, 18, 20, 25, 30, 35, 40, 50, 53, 60, 70, 80, 90, 100,
                         106, 120, 140, 158, 200, 211, -1, -2, -3})


@dataclass
class PlainEntities:
    """The plain entities of a drawing's model space and the drawing's text without them.

    text : str, the drawing without them, for ezdxf
    kind : per entity, "INSERT", "LINE" or "LWPOLYLINE"
    layer : per entity, str, as written
    values : per entity, what it means:
        INSERT (block name, x, y, xscale, yscale, rotation), floats ezdxf's default where
        not written;
        LINE (x1, y1, x2, y2);
        LWPOLYLINE ((N, 5) array of x, y, start width, end width, bulge as ezdxf keeps
        them, closed, constant width, elevation)
    handle, owner, linetype : per entity, str or None (not written)
    before : per entity, the index of the first other entity after it (in the ENTITIES
        section of `text`, followers not counted), ascending
    order : handle -> index of each other entity
    """

    text: str
    kind: list
    layer: list
    values: list
    handle: list
    owner: list
    linetype: list
    before: list
    order: dict

    def __len__(self):
        return len(self.before)

    def fit(self, doc) -> bool:
        """Whether ezdxf, reading the whole text, would have read these entities as they
        are and kept the model space in this order: each INSERT's block is defined in `doc`
        (the audit deletes one whose block is not), each layer name valid (the audit reports
        one that is not), each line type defined (the audit removes one that is not), each
        owner the model space and each handle new; and each model-space entity of `doc`
        carries the handle it was written with, in order."""
        # imported here, where ezdxf has read the rest: the cut needs none of it
        from ezdxf.lldxf.validator import is_valid_layer_name, make_table_key

        modelspace = doc.modelspace()
        owner = modelspace.block_record_handle
        names = {values[0] for kind, values in zip(self.kind, self.values) if kind == "INSERT"}
        if not all(name in doc.blocks for name in names):
            return False
        if not all(is_valid_layer_name(layer) for layer in set(self.layer)):
            return False
        if any(value is not None and make_table_key(value) not in ("bylayer", "byblock")
               and value not in doc.linetypes for value in set(self.linetype)):
            return False
        if any(value is not None and value != owner for value in set(self.owner)):
            return False
        entities = doc.entitydb
        if any(handle is not None and handle in entities for handle in self.handle):
            return False
        last = -1
        for entity in modelspace:
            index = self.order.get(entity.dxf.get("handle"))
            if index is None or index <= last:
                return False
            last = index
        return True


def cut_plain_entities(text: str) -> PlainEntities | None:
    """Take the plain entities out of sound DXF `text` (`filetext.ordinary_text`); None when
    it has none, or when its other entities do not each carry a handle of their own (the
    model space could not then be put back in order)."""
    span = entities_span(text)
    if span is None:
        return None
    begin, end = span
    stop = text.index("\n", end) + 1                # the ENDSEC's group code ends the last
    # one pass in C: the text between the entities, each followed by the expression's groups
    cut = _PLAIN.split(text[begin:stop])
    if len(cut) == 1:
        return None
    width = _PLAIN.groups + 1
    pieces = cut[::width]
    kinds, layers, handles, owners, linetypes, values = [], [], [], [], [], []
    try:
        for row in range(1, len(cut), width):
            for kind, first in _FIRST.items():
                if cut[row + first - 1] is not None:
                    break
            groups = cut[row + first - 1:row + first - 1 + _WIDTH[kind]]
            _, handle, owner, layer, linetype, color, lineweight = groups[:7]
            # what ezdxf's audit would repair sends the file to its recovery: not taken out
            if color is not None and not 0 <= int(color) <= 257:
                return None
            if lineweight is not None and int(lineweight) not in LINEWEIGHTS:
                return None
            values.append(_READ[kind](groups[7:]))
            kinds.append(kind)
            layers.append(layer)
            handles.append(handle)
            owners.append(owner)
            linetypes.append(linetype)
    except ValueError:
        return None                                 # ezdxf refuses the file: it says why
    rest = "".join([text[:begin], *pieces, text[stop:]])
    order, starts = {}, []
    for match in ENTITY.finditer(rest, begin):
        kind, key = match.groups()
        if kind == "ENDSEC":
            break
        if kind in FOLLOWERS:
            continue
        if key is None or key in order:
            return None
        order[key] = len(starts)
        starts.append(match.start())
    written = [key for key in handles if key is not None]
    if len(set(written)) != len(written) or any(key in order for key in written):
        return None
    # where each stood in the text without them: after the pieces before it
    stood = begin + np.cumsum([len(piece) for piece in pieces[:-1]])
    before = np.searchsorted(np.asarray(starts, dtype=np.int64), stood).tolist()
    return PlainEntities(text=rest, kind=kinds, layer=layers, values=values, handle=handles,
                         owner=owners, linetype=linetypes, before=before, order=order)


def _insert(groups):
    name, x, y, z, xscale, yscale, zscale, rotation = groups
    for value in (z, zscale):                       # ezdxf refuses a value that is no number
        if value is not None:
            float(value)
    return (name, float(x), float(y),
            DEFAULTS["xscale"] if xscale is None else float(xscale),
            DEFAULTS["yscale"] if yscale is None else float(yscale),
            DEFAULTS["rotation"] if rotation is None else float(rotation))


def _line(groups):
    x1, y1, z1, x2, y2, z2 = groups
    for value in (z1, z2):
        if value is not None:
            float(value)
    return float(x1), float(y1), float(x2), float(y2)


#: An LWPOLYLINE vertex's value (after x and y) for each group code.
_VERTEX_COLUMN = {"40": 2, "41": 3, "42": 4}


def _lwpolyline(groups):
    flags, width, elevation, block = groups
    lines = block.split("\n")[:-1]
    codes, numbers = lines[0::2], lines[1::2]
    if len(codes) == 0:
        points = np.zeros((0, 5))
    elif all(code.strip() in ("10", "20") for code in codes):
        points = np.zeros((len(codes) // 2, 5))
        points[:, 0] = [float(value) for value in numbers[0::2]]
        points[:, 1] = [float(value) for value in numbers[1::2]]
    else:
        rows = []
        for code, value in zip(codes, numbers):
            code = code.strip()
            if code == "10":
                rows.append([float(value), 0.0, 0.0, 0.0, 0.0])
            elif code == "20":
                rows[-1][1] = float(value)
            else:
                rows[-1][_VERTEX_COLUMN[code]] = float(value)
        points = np.array(rows, dtype=np.float64)
    return (points, bool(int(flags) & 1), 0.0 if width is None else float(width),
            0.0 if elevation is None else float(elevation))


_READ = {"INSERT": _insert, "LINE": _line, "LWPOLYLINE": _lwpolyline}
