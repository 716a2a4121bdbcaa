"""Whether ezdxf's ordinary reader reads a DXF file as its recovery reader would.

The recovery reader repairs what it finds wrong, tag by tag in Python, and is about a third
slower than the ordinary reader on a sound file, where it repairs nothing. `sound_text`
checks, over arrays of all group codes at once, that none of its repairs applies.
"""

from __future__ import annotations

import re

import numpy as np

#: What ezdxf's reader knows of group codes and sections, written out so that a file can be
#: checked without importing ezdxf (the build process checks it while the reader imports
#: ezdxf: `filetext`); tests/converter/test_document.py holds each equal to ezdxf's own.
#: The group codes of a point's x (ezdxf.lldxf.types.POINT_CODES).
POINT_CODES = frozenset((*range(10, 19), 110, 111, 112, 210, 211, 212, 213, *range(1010, 1014)))
#: The group codes whose values it converts to int (those typed int in
#: ezdxf.lldxf.types.TYPE_TABLE: the integer and boolean ranges of the DXF reference's group
#: code value types), first and last of each range.
INT_CODE_RANGES = ((60, 79), (90, 99), (160, 179), (270, 299), (370, 389), (400, 409),
                   (420, 429), (440, 459), (1060, 1071))
#: The sections it reads (ezdxf.lldxf.const.MANAGED_SECTIONS).
MANAGED_SECTIONS = frozenset({"HEADER", "CLASSES", "TABLES", "BLOCKS", "ENTITIES", "OBJECTS",
                              "ACDSDATA"})
#: The tables in the order it writes them (ezdxf.lldxf.const.TABLE_NAMES_ACAD_ORDER).
TABLE_NAMES_ACAD_ORDER = ("VPORT", "LTYPE", "LAYER", "STYLE", "VIEW", "UCS", "APPID",
                          "DIMSTYLE", "BLOCK_RECORD")

_ESCAPE = re.compile(rb"\\[UuMm]\+")
_LOWER = re.compile(rb"[a-z]")
_HEX_LINES = re.compile(rb"(?:[ \t]*[0-9A-Fa-f]+[ \t]*\n)*")
_INT_LINES = re.compile(rb"(?:[ \t]*[+-]?[0-9]+[ \t]*\n)*")
_X_CODES = np.array(sorted(POINT_CODES))
_Y_CODES = _X_CODES + 10
_Z_CODES = np.setdiff1d(_X_CODES + 20, [38])   # a lone 38 is an elevation, not a z
_INT_CODES = np.concatenate([np.arange(first, last + 1) for first, last in INT_CODE_RANGES])
_LINE_ORDER = np.full(32, -1)
_LINE_ORDER[[10, 20, 30, 11, 21, 31]] = np.arange(6)


def sound_text(data):
    """Return `data` (ASCII DXF bytes) as text when ezdxf's recovery would repair nothing.

    Recovery differs from the ordinary reader only where it repairs: text that is not ASCII
    (decoded by the header's code page), \\U+ and \\M+ escapes, lower-case structure names,
    misplaced or missing point coordinates, LINE coordinates out of order, handles that are
    not hexadecimal, integers written otherwise, MTEXT split in chunks, tags outside
    sections, repeated or unknown sections, DXF R12, tables out of order or holding foreign
    entries, a root dictionary not first, and broken APP DATA or XDATA (which recovery
    refuses). Each is checked over arrays of all group codes at once. Returns None when
    any check fails, or when `data` is no plain sequence of tags; the caller then recovers.
    """
    if not data.isascii() or _ESCAPE.search(data):
        return None
    if b"\r" in data:
        if data.count(b"\r") != data.count(b"\r\n"):
            return None                     # a lone CR: text mode would split a value there
        data = data.replace(b"\r\n", b"\n")
    lines = data.split(b"\n")
    count = len(lines) // 2
    try:
        codes = np.array(lines[0:2 * count:2]).astype(np.int64)
    except (ValueError, OverflowError):
        return None
    values = lines[1:2 * count:2]
    zero = np.flatnonzero(codes == 0)
    names = [values[i].strip() for i in zero.tolist()]
    if b"EOF" not in names or _LOWER.search(b"".join(names)):
        return None
    end = int(zero[names.index(b"EOF")])         # both readers stop at the first EOF
    keep = zero <= end
    codes, values, zero, names = codes[:end + 1], values[:end + 1], zero[keep], names[:int(keep.sum())]
    if not (_points_in_order(codes) and _lines_in_order(codes, zero, names)
            and _plain_values(codes, values) and _sections_sound(codes, values, zero, names)
            and _extensions_sound(codes, values, zero)):
        return None
    return data.decode("ascii")


def _points_in_order(codes):
    """Every x is followed by its y, every y follows its x, every z its y."""
    x = np.flatnonzero(np.isin(codes, _X_CODES))
    y = np.flatnonzero(np.isin(codes, _Y_CODES))
    z = np.flatnonzero(np.isin(codes, _Z_CODES))
    if len(x) and (x[-1] + 1 >= len(codes) or (codes[x + 1] != codes[x] + 10).any()):
        return False
    if len(y) and (y[0] < 1 or (codes[y - 1] != codes[y] - 10).any()):
        return False
    return not len(z) or (z[0] >= 2 and (codes[z - 1] == codes[z] - 10).all()
                          and (codes[z - 2] == codes[z] - 20).all())


def _entity_of(codes, zero):
    """Index of the structure (code 0) tag each tag belongs to, -1 before the first."""
    return np.cumsum(np.isin(np.arange(len(codes)), zero)) - 1


def _lines_in_order(codes, zero, names):
    """The coordinates of each LINE run 10 20 30 11 21 31, together (recovery reorders them)."""
    line = np.array([name == b"LINE" for name in names], bool)
    if not line.any():
        return True
    entity = _entity_of(codes, zero)
    small = np.where(codes < 32, codes, 0)
    coordinate = np.flatnonzero((entity >= 0) & line[np.maximum(entity, 0)] & (_LINE_ORDER[small] >= 0)
                                & (codes < 32))
    same = entity[coordinate[1:]] == entity[coordinate[:-1]]
    step = (np.diff(coordinate) == 1) & (np.diff(_LINE_ORDER[codes[coordinate]]) > 0)
    return bool(step[same].all())


def _plain_values(codes, values):
    """Handles are hexadecimal, integers plain integers, and no MTEXT holds chunks (code 3)."""
    def joined(mask):
        return b"\n".join(values[i] for i in np.flatnonzero(mask).tolist()) + b"\n"
    handles = (codes == 5) | (codes == 105)
    if handles.any() and not _HEX_LINES.fullmatch(joined(handles)):
        return False
    integers = np.isin(codes, _INT_CODES)
    return not integers.any() or bool(_INT_LINES.fullmatch(joined(integers)))


def _sections_sound(codes, values, zero, names):
    """Sections follow each other with nothing between; each known and named once; R2000 or
    later; tables in order holding only their own entries; the root dictionary first."""
    structure = [(i, name) for i, name in zip(zero.tolist(), names)
                 if name in (b"SECTION", b"ENDSEC", b"EOF")]
    expected, section_names = b"SECTION", []
    for position, (index, name) in enumerate(structure):
        if name != expected and not (expected == b"SECTION" and name == b"EOF"):
            return False
        if name == b"SECTION":
            if index + 1 >= len(codes) or codes[index + 1] != 2:
                return False
            section_names.append(values[index + 1].decode())
        elif name == b"ENDSEC":
            following = structure[position + 1][0] if position + 1 < len(structure) else -1
            if following != index + 1:
                return False                # tags outside sections
        expected = b"ENDSEC" if name == b"SECTION" else b"SECTION"
    if structure[0][0] != 0 or len(set(section_names)) != len(section_names) \
            or not set(section_names) <= set(MANAGED_SECTIONS) or "HEADER" not in section_names:
        return False
    version = np.flatnonzero(codes == 9)
    version = [i for i in version.tolist() if values[i].strip() == b"$ACADVER"]
    if len(version) != 1 or version[0] + 1 >= len(codes) or codes[version[0] + 1] != 1:
        return False
    acadver = values[version[0] + 1].decode()
    if not re.fullmatch(r"AC[0-9]{4}", acadver.strip()) or acadver.strip() <= "AC1009":
        return False
    where = dict(zip(section_names, [i for i, name in structure if name == b"SECTION"]))
    return _tables_sound(codes, values, zero, names, where.get("TABLES")) and \
        _root_dictionary_first(codes, values, zero, names, where.get("OBJECTS"))


def _section_entities(zero, names, start):
    """(position in zero, name) of the structure tags of the section starting at `start`."""
    first = int(np.searchsorted(zero, start)) + 1
    for position in range(first, len(names)):
        if names[position] == b"ENDSEC":
            return
        yield position, names[position]


def _tables_sound(codes, values, zero, names, start):
    if start is None:
        return True
    order, table = [], None
    for position, name in _section_entities(zero, names, start):
        index = int(zero[position])
        if name == b"TABLE":
            if table is not None or index + 1 >= len(codes) or codes[index + 1] != 2:
                return False
            table = values[index + 1].decode().strip()
            if table not in TABLE_NAMES_ACAD_ORDER or values[index + 1].decode() != table:
                return False
            order.append(TABLE_NAMES_ACAD_ORDER.index(table))
        elif name == b"ENDTAB":
            if table is None:
                return False
            table = None
        elif table is None or name.decode() != table:
            return False                    # an entry outside its table
    return table is None and order == sorted(set(order))


def _root_dictionary_first(codes, values, zero, names, start):
    for position, name in _section_entities(zero, names, start):
        if name != b"DICTIONARY":
            return False
        end = int(zero[position + 1])
        body = np.flatnonzero(codes[int(zero[position]):end] == 3) + int(zero[position])
        return any(values[i] == b"ACAD_GROUP" for i in body.tolist())
    return True


def _extensions_sound(codes, values, zero):
    """APP DATA (102) opens and closes in pairs inside one entity, before its XDATA; XDATA
    (1001 on) holds only codes from 1000 and balanced lists; no embedded objects (101).

    APP DATA belongs to the first, unnamed part of an entity, before its first subclass
    marker (100): after that marker, both of ezdxf's readers take a 102 as an ordinary tag
    (the data of an XRECORD, such as a visual style's properties, uses it freely).
    """
    if (codes == 101).any():
        return False
    entity = _entity_of(codes, zero)
    subclass = np.flatnonzero(codes == 100)
    first_subclass = np.full(len(zero) + 1, len(codes))
    np.minimum.at(first_subclass, entity[subclass] + 1, subclass)
    marks = np.flatnonzero(codes == 102)
    marks = marks[marks < first_subclass[entity[marks] + 1]]
    if len(marks):
        if len(marks) % 2:
            return False
        opens, closes = marks[0::2], marks[1::2]
        if (entity[opens] != entity[closes]).any():
            return False
        for opening, closing in zip(opens.tolist(), closes.tolist()):
            head, tail = values[opening].strip(), values[closing].strip()
            if values[opening] != head or values[closing] != tail or not head.startswith(b"{") \
                    or tail not in (b"}", head[1:] + b"}") or (codes[opening:closing] >= 1000).any():
                return False
    xdata = np.flatnonzero(codes == 1001)
    if not len(xdata):
        return True
    start = np.full(len(zero) + 1, len(codes))
    np.minimum.at(start, entity[xdata] + 1, xdata)
    inside = np.arange(len(codes)) >= start[entity + 1]
    if (codes[inside] < 1000).any():
        return False
    level = {}
    for index in np.flatnonzero(codes == 1002).tolist():
        value = values[index]
        if value not in (b"{", b"}"):
            return False
        key = int(entity[index])
        level[key] = level.get(key, 0) + (1 if value == b"{" else -1)
        if level[key] < 0:
            return False
    return not any(level.values())
