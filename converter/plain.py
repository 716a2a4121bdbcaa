"""Plain INSERTs read straight from a sound drawing's text, not through ezdxf's entities.

A warehouse plan is mostly INSERTs of a few blocks, one per bay: in the mixed suite drawing
at 20,000 bays they are 72 % of the text, and ezdxf took 1.45 s to read and audit it whole
against 0.43 s without them. An INSERT written plainly, with a handle, an owner, a layer,
a block name, an insertion point and at most a line type, a colour, a line weight, a scale
and a rotation, and nothing else (no attributes, extrusion, array, extension data), means
only those values.
`cut_plain_inserts` takes such INSERTs out of the ENTITIES section with one regular
expression, their values converted as ezdxf's reader converts them (`float` of the value
line); ezdxf reads the rest. `PlainInserts.fit` then checks what ezdxf's audit would have
checked of them (the block is defined, the layer name is valid, the line type defined,
the handle new; `cut_plain_inserts` checks the colour and the line weight), and
each INSERT keeps its place among the other entities (`before`), so the model space is read
in the file's order.

ezdxf loads an INSERT's group codes into its attributes whatever their subclass and order
(`SubclassProcessor.simple_dxfattribs_loader`), so the values are the same; an INSERT
written any other way, or in a drawing whose other entities do not all carry a handle, is
left to ezdxf.
"""

from __future__ import annotations

import bisect
import re
from dataclasses import dataclass

import numpy as np

from ezdxf.entities.insert import acdb_block_reference
from ezdxf.lldxf.const import VALID_DXF_LINEWEIGHT_VALUES
from ezdxf.lldxf.validator import is_valid_layer_name, make_table_key

#: A group code line: the code, spaces about it allowed (ezdxf reads it with `int`).
_CODE = r"[ \t]*{}[ \t]*\n"
_VALUE = r"([^\n]*)\n"


def _tag(code, *, optional=False, value=_VALUE):
    tag = _CODE.format(code) + value
    return f"(?:{tag})?" if optional else tag


#: One plain INSERT, from its group code 0 to the next entity's (the lookahead: nothing else
#: follows). In sound text (`sound.sound_text`) every group code line is an integer, so a
#: line "INSERT" is a value and the "0" before it a group code.
_PLAIN_INSERT = re.compile(
    r"^[ \t]*0[ \t]*\nINSERT\n"
    + _tag(5, optional=True) + _tag(330, optional=True)
    + _tag(100, value=r"AcDbEntity\n") + _tag(8)
    + _tag(6, optional=True) + _tag(62, optional=True) + _tag(370, optional=True)
    + _tag(100, value=r"AcDbBlockReference\n") + _tag(2)
    + _tag(10) + _tag(20) + _tag(30, optional=True)
    + _tag(41, optional=True) + _tag(42, optional=True) + _tag(43, optional=True)
    + _tag(50, optional=True)
    + r"(?=[ \t]*0[ \t]*\n)", re.MULTILINE)
#: An entity's start and, where it follows at once, its handle.
_ENTITY = re.compile(r"^[ \t]*0[ \t]*\n([A-Z0-9_]*[A-Z_][A-Z0-9_]*)\n(?:[ \t]*5[ \t]*\n([^\n]*)\n)?",
                     re.MULTILINE)
#: The lines before "ENTITIES" that make it a section's name, and the group code 0 line
#: before an "ENDSEC" (searched for at their ends).
_SECTION_HEAD = re.compile(r"(?:^|\n)[ \t]*0[ \t]*\nSECTION\n[ \t]*2[ \t]*\n$")
_CODE_ZERO = re.compile(r"\n[ \t]*0[ \t]*\n$")
#: Entities that belong to the one before them; they are not in the model space's list.
_FOLLOWERS = frozenset({"VERTEX", "SEQEND", "ATTRIB"})
#: ezdxf's defaults of the values a plain INSERT may leave out.
_DEFAULT = {key: acdb_block_reference.attribs[key].default
            for key in ("xscale", "yscale", "rotation")}


@dataclass
class PlainInserts:
    """The plain INSERTs of a drawing's model space and the drawing's text without them.

    text : str, the drawing without them, for ezdxf
    handle, owner, linetype : per INSERT, str or None (not written)
    layer, name : per INSERT, str, as written
    x, y, xscale, yscale, rotation : per INSERT, float (ezdxf's default where not written)
    before : per INSERT, the index of the first other entity after it (in the ENTITIES
        section of `text`, followers not counted), ascending
    order : handle -> index of each other entity
    starts : where each other entity starts in `text`, ascending
    """

    text: str
    handle: list
    owner: list
    layer: list
    linetype: list
    name: list
    x: list
    y: list
    xscale: list
    yscale: list
    rotation: list
    before: list
    order: dict
    starts: list

    def __len__(self):
        return len(self.before)

    def index_at(self, position: int) -> int:
        """The index of the first other entity at `position` in `text` or after it."""
        return bisect.bisect_left(self.starts, position)

    def index_of_first(self, text: str) -> int:
        """The index of the first entity of the ENTITIES section of `text`, a part of this
        drawing cut from `self.text` (`document.entity_halves`); len(order) for none."""
        span = entities_span(text)
        for match in _ENTITY.finditer(text, *span) if span else ():
            kind, handle = match.groups()
            if kind not in _FOLLOWERS:
                return self.order[handle]
        return len(self.order)

    def fit(self, doc) -> bool:
        """Whether ezdxf, reading the whole text, would have read these INSERTs as they are
        and kept the model space in this order: each INSERT's block is defined in `doc`
        (the audit deletes one whose block is not), its layer name valid (the audit reports
        one that is not), its owner the model space and its handle new; and each model-space
        entity of `doc` carries the handle it was written with, in order."""
        modelspace = doc.modelspace()
        owner = modelspace.block_record_handle
        blocks = doc.blocks
        entities = doc.entitydb
        names = {name: name in blocks for name in set(self.name)}
        if not all(names.values()):
            return False
        if not all(is_valid_layer_name(layer) for layer in set(self.layer)):
            return False
        if any(value is not None and make_table_key(value) not in ("bylayer", "byblock")
               and value not in doc.linetypes for value in set(self.linetype)):
            return False
        if any(value is not None and value != owner for value in set(self.owner)):
            return False
        if any(handle is not None and handle in entities for handle in self.handle):
            return False
        last = -1
        for entity in modelspace:
            index = self.order.get(entity.dxf.get("handle"))
            if index is None or index <= last:
                return False
            last = index
        return True


def cut_plain_inserts(text: str) -> PlainInserts | None:
    """Take the plain INSERTs out of sound DXF `text` (`document.ordinary_text`); None when
    it has none, or when its other entities do not each carry a handle of their own (the
    model space could not then be put back in order)."""
    span = entities_span(text)
    if span is None:
        return None
    begin, end = span
    stop = text.index("\n", end) + 1                # the ENDSEC's group code ends the last
    # one pass in C: the text between the INSERTs, each followed by its 11 values
    cut = _PLAIN_INSERT.split(text[begin:stop])
    if len(cut) == 1:
        return None
    width = _PLAIN_INSERT.groups + 1
    pieces = cut[::width]
    (handle, owner, layer, linetype, color, lineweight, name, x, y, z, xscale, yscale, zscale,
     rotation) = (cut[k::width] for k in range(1, width))
    try:
        # what ezdxf's audit would repair sends the file to its recovery: not taken out
        if any(value is not None and not 0 <= int(value) <= 257 for value in set(color)):
            return None
        if any(value is not None and int(value) not in VALID_DXF_LINEWEIGHT_VALUES
               for value in set(lineweight)):
            return None
        x, y = list(map(float, x)), list(map(float, y))
        for values in (z, zscale):              # ezdxf refuses a value that is no number
            for value in values:
                if value is not None:
                    float(value)
        xscale, yscale, rotation = (
            [_DEFAULT[key] if value is None else float(value) for value in values]
            for key, values in (("xscale", xscale), ("yscale", yscale), ("rotation", rotation)))
    except ValueError:
        return None                             # ezdxf refuses the file: it says why
    rest = "".join([text[:begin], *pieces, text[stop:]])
    order, starts = {}, []
    for match in _ENTITY.finditer(rest, begin):
        kind, key = match.groups()
        if kind == "ENDSEC":
            break
        if kind in _FOLLOWERS:
            continue
        if key is None or key in order:
            return None
        order[key] = len(starts)
        starts.append(match.start())
    written = [key for key in handle if key is not None]
    if len(set(written)) != len(written) or any(key in order for key in written):
        return None
    # where each INSERT stood in the text without them: after the pieces before it
    stood = begin + np.cumsum([len(piece) for piece in pieces[:-1]])
    before = np.searchsorted(np.asarray(starts, dtype=np.int64), stood).tolist()
    return PlainInserts(text=rest, handle=handle, owner=owner, layer=layer, linetype=linetype,
                        name=name, x=x, y=y, xscale=xscale, yscale=yscale, rotation=rotation,
                        before=before, order=order, starts=starts)


def entities_span(text: str) -> tuple[int, int] | None:
    """(start, end) of the entities of sound DXF `text`: from the first after the ENTITIES
    section's head to its ENDSEC; None without such a section."""
    at = text.find("\nENTITIES\n")
    while at >= 0 and not _SECTION_HEAD.search(text, max(0, at - 40), at + 1):
        at = text.find("\nENTITIES\n", at + 1)
    if at < 0:
        return None
    begin = at + len("\nENTITIES\n")
    end = text.find("\nENDSEC\n", begin - 1)
    while end >= 0 and not _CODE_ZERO.search(text, max(0, end - 12), end + 1):
        end = text.find("\nENDSEC\n", end + 1)
    if end < 0:
        return None
    line = text.rfind("\n", 0, end) + 1          # the line of its group code 0
    return begin, line
