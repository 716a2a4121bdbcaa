"""A DXF file as bytes and as text, before any parser reads it: the checks that it is a whole
DXF file, the check that ezdxf's ordinary reader may read it (`sound.sound_text`), and its
ENTITIES section (found, weighed and cut in two halves).

Nothing here imports ezdxf, so the build process can do this work on the drawing while the
process that reads it imports ezdxf (`read_ahead`; clearway.converter.read).
"""

from __future__ import annotations

import re
from pathlib import Path

import numpy as np

from clearway.errors import DrawingError
from clearway.limits import Limits
from clearway.converter.sound import sound_text

BINARY_SENTINEL = b"AutoCAD Binary DXF\r\n\x1a\x00"
_MARKER = re.compile(rb"^[ \t]*0[ \t]*\r?\n[ \t]*(SECTION|ENDSEC|EOF)[ \t]*\r?$", re.MULTILINE)
_SECTION_NAME = re.compile(rb"SECTION[ \t]*\r?\n[ \t]*2[ \t]*\r?\n[ \t]*(\w+)")


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


def load_bytes(path, limits=None) -> bytes:
    """The bytes of the DXF file `path`: DrawingError when it is missing, unreadable, not DXF
    or truncated, LimitError when it is larger than `limits` allow."""
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
    return data


def ordinary_text(data):
    """`data` as text when ezdxf's ordinary reader may read it (`sound.sound_text`), else
    None (binary DXF among them)."""
    return None if data.startswith(BINARY_SENTINEL) else sound_text(data)


#: Tags as ezdxf's reader takes them: a group code line is an integer, spaces about it
#: allowed; a value line is the value, spaces and all (ezdxf strips only the line end).
#: The lines before "ENTITIES" that make it a section's name, and the group code 0 line
#: before an "ENDSEC" (searched for at their ends, `entities_span`).
_SECTION_HEAD = re.compile(r"(?:^|\n)[ \t]*0[ \t]*\nSECTION\n[ \t]*2[ \t]*\n$")
_CODE_ZERO = re.compile(r"\n[ \t]*0[ \t]*\n$")
#: A tag of group code 0 (an entity starts), and the entity's handle where it follows at
#: once. Its value has a letter, so it cannot be a group code line, and the line before it
#: is a group code 0, not a value: in sound text every group code is an integer.
ENTITY = re.compile(r"^[ \t]*0[ \t]*\n([A-Z0-9_]*[A-Z_][A-Z0-9_]*)\n(?:[ \t]*5[ \t]*\n([^\n]*)\n)?",
                    re.MULTILINE)
#: Entities that belong to the one before them (a POLYLINE's vertices, an INSERT's
#: attributes, the end of either): not in the model space's list, and a half never starts
#: with one.
FOLLOWERS = frozenset({"VERTEX", "SEQEND", "ATTRIB"})
#: APP DATA of entities that objects refer to.
_REFERRED = ("{ACAD_XDICTIONARY", "{ACAD_REACTORS")


def entity_halves(text, least: int = 0):
    """Split sound DXF `text` (`ordinary_text`) into two drawings, (first, second), or None
    when it has no ENTITIES section of two entities or more and `least` work or more (as
    `_middle_of_the_work` weighs it), or when objects refer to its entities.

    Each keeps every section of `text` (header, tables, blocks, objects) but only half its
    ENTITIES section: `first` the entities before the cut, `second` those from it. Read side
    by side, the two give the model space of `text` in order. The cut is the first entity
    from the middle of the work of reading them on (`_middle_of_the_work`: a plainly written
    INSERT, read straight from the text, is a fifth of the work of another entity; by the
    characters, the mixed suite drawing at 20,000 bays had 13,700 INSERTs in its first half
    and the polylines in its second, read in 0.11 and 0.26 s), and never between a POLYLINE
    or an INSERT and what follows it.

    Examples
    --------
    >>> entities = "".join(f"  0\\nLINE\\n  8\\n{layer}\\n" for layer in "ABCD")
    >>> text = f"  0\\nSECTION\\n  2\\nENTITIES\\n{entities}  0\\nENDSEC\\n  0\\nEOF\\n"
    >>> first, second = entity_halves(text)
    >>> [line for line in first.split("\\n") if len(line) == 1]
    ['A', 'B']
    >>> [line for line in second.split("\\n") if len(line) == 1]
    ['C', 'D']
    """
    span = entities_span(text)
    if span is None:
        return None
    begin, end = span
    work = _work(text, begin, end)
    if work[-1] < least:
        return None
    # an entity with an extension dictionary, or one a group or an associative object
    # watches, is referred to from the OBJECTS section: the half without it would hold
    # objects that refer to nothing, which its audit repairs, and the file is read whole
    if any(text.find(mark, begin, end) >= 0 for mark in _REFERRED):
        return None
    # the cut: the first entity from the middle on, but never the first entity, nor past
    # the last. Only the few entities about the middle are looked at (matching every entity
    # of the 4 MB section of the mixed suite drawing at 20,000 bays took 0.07 s); the rest
    # of the section is scanned only when no entity starts after the middle.
    first = _first_entity(text, begin, end)
    middle = _middle_of_the_work(work, begin, end)
    cut = None if first is None else \
        _first_entity(text, max(middle, first + 1), end)
    if cut is None:
        starts = [match.start() for match in ENTITY.finditer(text, begin, end)
                  if match.group(1) not in FOLLOWERS]
        if len(starts) < 2:
            return None
        cut = starts[-1]
    return text[:cut] + text[end:], text[:begin] + text[cut:]


#: The work of reading a model space (`entity_halves`: a plainly written INSERT weighing 1,
#: any other entity 5) from which the reader reads it in two halves side by side
#: (clearway.converter.read, clearway.side_by_side), where a second process can be forked.
#: Each half parses the header, tables, blocks and objects again, and the fork and the merge
#: cost about 0.03 s.
#: Reading in the reader's process, from its start to the blocks: the mixed suite floor at
#: 20,000 bays (a work of 45,700) 0.28 s in one pass, 0.19 s in halves; at 5,000 bays
#: (11,000) 0.131 s in one pass, 0.148 s in halves. Whole builds paired with a bare parse
#: (seven to nine runs), halves against one pass: `loose_lines` at 5,000 bays (27,400)
#: 2.39x against 2.75x in one run, 2.68x against 2.69x in another; `current` at 5,000 bays
#: (5,300, nearly all INSERTs) 1.83x against 1.69x.
SPLIT_WORK = 20_000
#: The share of the section cut into, to weigh the work of each (`_middle_of_the_work`).
WORK_CHUNKS = 64
#: An entity's work against a plainly written INSERT's (`plain.py`): on the mixed suite
#: floor at 20,000 bays, a half of 13,700 INSERTs took 0.11 s to read, one of 6,300 INSERTs
#: and 5,100 other entities, mostly polylines, 0.26 s: about 8 us and 40 us each.
ENTITY_WORK = 5


def _work(text, start, stop):
    """The work of reading the entities in `text[start:stop]`, summed over WORK_CHUNKS equal
    shares of it (ascending): the entities counted by their group code lines written "  0"
    (as AutoCAD and ezdxf write them), an INSERT (mostly read straight from the text,
    `plain.py`) weighing 1 and any other ENTITY_WORK; the characters where no entity is
    written so."""
    size = max((stop - start) // WORK_CHUNKS, 1)
    work = []
    for at in range(start, stop, size):
        # each line "  0" (or "INSERT") counted in the share its line end before it is in
        entities = text.count("\n  0\n", at - 1, min(at + size + 3, stop))
        inserts = text.count("\nINSERT\n", at - 1, min(at + size + 6, stop))
        work.append(inserts + ENTITY_WORK * (entities - inserts))
    if sum(work) <= 0:
        work = [min(at + size, stop) - at for at in range(start, stop, size)]
    return np.cumsum(work) if work else np.zeros(1, dtype=np.int64)


def rough_work(data: bytes) -> int:
    """The work of reading the entities of DXF `data` (bytes), roughly, as `_work` weighs
    it: the group code lines written "  0" after a line end are counted over the whole
    file, table entries, the blocks' entities and the sections' ends among them; an INSERT
    weighs 1 and anything else ENTITY_WORK. Lines may end in CR LF, as AutoCAD writes them
    on Windows. A few milliseconds for a megabyte, before the text is checked.

    Examples
    --------
    >>> rough_work(b"  0\\nSECTION\\n  2\\nENTITIES\\n  0\\nINSERT\\n  0\\nLINE\\n  0\\nENDSEC\\n")
    11
    >>> rough_work(b"  0\\r\\nSECTION\\r\\n  2\\r\\nENTITIES\\r\\n  0\\r\\nINSERT\\r\\n  0\\r\\nLINE\\r\\n"
    ...            b"  0\\r\\nENDSEC\\r\\n")
    11
    """
    entities = data.count(b"\n  0\n") + data.count(b"\n  0\r\n")
    inserts = data.count(b"\nINSERT\n") + data.count(b"\nINSERT\r\n")
    return inserts + ENTITY_WORK * (entities - inserts)


def _middle_of_the_work(work, start, stop):
    """Where half the `work` (`_work` of `text[start:stop]`) is done: the start of the first
    share whose work, with the work before it, passes half."""
    size = max((stop - start) // WORK_CHUNKS, 1)
    chunk = int(np.searchsorted(work, work[-1] / 2.0, side="right"))
    return min(start + chunk * size, stop)


def entities_span(text: str) -> tuple[int, int] | None:
    """(start, end) of the entities of sound DXF `text`: from the first after the ENTITIES
    section's head to the group code line of its ENDSEC; None without such a section.

    Examples
    --------
    >>> text = "  0\\nSECTION\\n  2\\nENTITIES\\n  0\\nLINE\\n  8\\nA\\n  0\\nENDSEC\\n  0\\nEOF\\n"
    >>> begin, end = entities_span(text)
    >>> text[begin:end]
    '  0\\nLINE\\n  8\\nA\\n'
    """
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
    return begin, text.rfind("\n", 0, end) + 1


def _first_entity(text, start, stop):
    """Where the first entity (not a follower) of `text` starts within [start, stop), or
    None."""
    return next((match.start() for match in ENTITY.finditer(text, start, stop)
                 if match.group(1) not in FOLLOWERS), None)
