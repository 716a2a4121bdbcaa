"""Open a DXF file safely: byte checks, ezdxf's readers, the header's save date.

Damaged files go through ezdxf's recovery path and its repairs are returned as notices;
truncated or non-DXF bytes are refused here, because recovery accepts them silently. A file
that checks over its group codes prove sound (`sound.sound_text`) and whose audit finds
nothing is read by ezdxf's ordinary reader instead, about a third faster: none of the
repairs the recovery path makes applies to it, so what clearway reads is the same. Such
text can also be cut into two drawings with half the model space each (`entity_halves`), for
the reader to read side by side.
"""

from __future__ import annotations

import contextlib
import datetime
import hashlib
import io
import logging
import re
from pathlib import Path

import numpy as np

from ezdxf import recover
from ezdxf.audit import AuditError
from ezdxf.document import Drawing
from ezdxf.lldxf.const import DXFError
from ezdxf.lldxf.tagger import binary_tags_loader

from clearway.errors import DrawingError
from clearway.limits import Limits
from clearway.converter.roles import Roles
from clearway.converter.sound import sound_text

BINARY_SENTINEL = b"AutoCAD Binary DXF\r\n\x1a\x00"
_MARKER = re.compile(rb"^[ \t]*0[ \t]*\r?\n[ \t]*(SECTION|ENDSEC|EOF)[ \t]*\r?$", re.MULTILINE)
_SECTION_NAME = re.compile(rb"SECTION[ \t]*\r?\n[ \t]*2[ \t]*\r?\n[ \t]*(\w+)")
#: What ezdxf raises on a damaged file or entity (found by fuzzing the sample drawings):
#: its own DXFError family, and plain Python errors from fields that recovery left missing,
#: of the wrong type or out of range.
#: Repair notices kept in full (the report lists them; the summary counts them).
MAX_NOTICES = 200

DAMAGE = (DXFError, AttributeError, AssertionError, ValueError, TypeError, KeyError,
          IndexError, ZeroDivisionError, OverflowError, UnicodeError, EOFError)


#: Julian day number of 2000-01-01.
_JDN_2000 = 2451545


def saved_date(header) -> str:
    """Return when the drawing was last saved ($TDUPDATE, else $TDCREATE), ISO 8601, or "".

    DXF stores both as the Julian day number of the local date plus the fraction of the day
    since midnight. Values outside the years 1900 to 2999 are taken as missing.
    """
    for name in ("$TDUPDATE", "$TDCREATE"):
        with contextlib.suppress(*DAMAGE):
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


def parse_document(data, source, text):
    """(document, repair notices) of the checked bytes `data` (`load_bytes`) of file `source`,
    `text` being `ordinary_text(data)` (None: not sound, for the recovery reader).

    The notices are ezdxf's own words for each repair, at most MAX_NOTICES of them.
    """
    try:
        with quiet_library():
            if data.startswith(BINARY_SENTINEL):  # recovery reads ASCII only
                doc = Drawing.load(binary_tags_loader(data))
                auditor = doc.audit()
            else:
                doc, auditor = _read_ascii(data, text)
    except RecursionError:
        raise DrawingError(f"{source}: not a readable DXF file (structures nest too "
                           f"deeply to recover)") from None
    except DAMAGE as err:
        message = str(err).splitlines()[0].strip() if str(err).strip() else type(err).__name__
        raise DrawingError(f"{source}: not a readable DXF file ({message[:200]})") from None
    return doc, repair_notices(auditor)


def repair_notices(auditor):
    """ezdxf's own words for each repair and each damage its `auditor` found, at most
    MAX_NOTICES of them."""
    notices = [f"repaired: {fix.message}" for fix in auditor.fixes]
    notices += [f"damaged: {error.message}" for error in auditor.errors
                if "block reference cycle" not in error.message.lower()]
    if len(notices) > MAX_NOTICES:
        notices = notices[:MAX_NOTICES] + [f"{len(notices) - MAX_NOTICES} more not listed"]
    return notices


def _read_ascii(data, text):
    """(document, auditor) of an ASCII DXF: the ordinary reader when `data` is sound (its
    `text` is not None), else ezdxf's recovery: also when the ordinary reader refuses what the
    checks let through, and when its audit finds anything to repair but TOLERATED_FIXES
    (recovery leaves empty tables out and numbers the handles of what the audit adds
    differently, so its notices would differ)."""
    if text is not None:
        read = read_sound(text, tolerated=TOLERATED_FIXES)
        if read is not None:
            return read
    page = guess_code_page(data)
    if page is not None:
        data = _with_code_page(data, page)
    return recover.read(io.BytesIO(data))


def ordinary_text(data):
    """`data` as text when ezdxf's ordinary reader may read it (`sound.sound_text`), else
    None (binary DXF among them)."""
    return None if data.startswith(BINARY_SENTINEL) else sound_text(data)


#: Repairs of ezdxf's audit that its recovery reader makes alike, to the word of the notice,
#: and that neither adds an entry nor touches what clearway reads: removing a group left
#: empty (AutoCAD leaves its anonymous groups so when their entities are erased). A sound
#: file whose audit makes only these is not read a second time by the recovery reader (a
#: 3 MB house plan with one such group: reading 2.00 -> 0.98 s, against 1.26 s for the recovery
#: reader alone, the same content).
TOLERATED_FIXES = frozenset({AuditError.REMOVE_EMPTY_GROUP})


def read_sound(text, tolerated=frozenset()):
    """(document, auditor) of ezdxf's ordinary reader on sound `text` (`ordinary_text`), or
    None when the reader refuses it, or the audit reports an error or makes a repair other
    than those `tolerated` (AuditError codes)."""
    try:
        with quiet_library():
            doc = Drawing.read(io.StringIO(text))
            auditor = doc.audit()
    except DAMAGE:
        return None
    if auditor.errors or any(fix.code not in tolerated for fix in auditor.fixes):
        return None
    return doc, auditor


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


#: Code pages tried, in this order, for the text of a drawing whose header names none: ezdxf's
#: default (Western European), then Japanese, simplified and traditional Chinese, Korean.
#: DXF R12 files and other programs' output carry text in the code page of the machine that
#: wrote them (a Japanese drafting program writes Shift-JIS layer names such as 壁 for walls
#: and no $DWGCODEPAGE); DXF R2007 and later are UTF-8 and are not guessed.
CODE_PAGES = (("ANSI_1252", "cp1252"), ("ANSI_932", "cp932"), ("ANSI_936", "gbk"),
              ("ANSI_950", "cp950"), ("ANSI_949", "cp949"))
_LAYER_VALUE = re.compile(rb"\n[ \t]*8[ \t]*\r?\n([^\r\n]*)")
_VERSION = re.compile(rb"\$ACADVER[ \t]*\r?\n[ \t]*1[ \t]*\r?\n[ \t]*AC(\d+)")
_HEADER = re.compile(rb"\n[ \t]*2[ \t]*\r?\n[ \t]*HEADER[ \t]*\r?\n")


def guess_code_page(data):
    r"""Return the $DWGCODEPAGE value (``ANSI_932``) under which the non-ASCII layer names of
    `data` read as the most layer roles' words, when the header names no code page and
    that is not ezdxf's default; else None.

    Each page must decode every such name; ezdxf's default keeps ties.

    Examples
    --------
    >>> walls, door = "壁".encode("cp932"), "建具".encode("cp932")
    >>> guess_code_page(b"  0\nSECTION\n  8\n" + walls + b"\n  8\n" + door + b"\n")
    'ANSI_932'
    >>> guess_code_page(b"  0\nSECTION\n  8\n" + "墙体".encode("gbk") + b"\n")
    'ANSI_936'
    >>> guess_code_page(b"  0\nSECTION\n  8\n" + "Tür".encode("cp1252") + b"\n") is None
    True
    """
    if b"$DWGCODEPAGE" in data:
        return None
    version = _VERSION.search(data)
    if version is not None and int(version.group(1)) >= 1021:
        return None
    names = {name for name in _LAYER_VALUE.findall(data) if not name.isascii()}
    if not names:
        return None
    roles = Roles()
    best, best_count = None, 0
    for page, codec in CODE_PAGES:
        try:
            decoded = [name.decode(codec) for name in names]
        except UnicodeDecodeError:
            continue
        count = sum(roles.role_of(name) is not None for name in decoded)
        if count > best_count:
            best, best_count = page, count
    return None if best == CODE_PAGES[0][0] else best


def _with_code_page(data, page):
    """`data` with ``$DWGCODEPAGE`` set to `page` at the head of its HEADER section."""
    header = _HEADER.search(data)
    if header is None:
        return data
    newline = b"\r\n" if b"\r\n" in data[:header.end()] else b"\n"
    entry = newline.join([b"  9", b"$DWGCODEPAGE", b"  3", page.encode("ascii")]) + newline
    return data[:header.end()] + entry + data[header.end():]
