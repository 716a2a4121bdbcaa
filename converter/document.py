"""Open a DXF file safely: byte checks, ezdxf's readers, the header's save date.

Damaged files go through ezdxf's recovery path and its repairs are returned as notices;
truncated or non-DXF bytes are refused here, because recovery accepts them silently. A file
that checks over its group codes prove sound (`sound.sound_text`) and whose audit finds
nothing is read by ezdxf's ordinary reader instead, about a third faster: none of the
repairs the recovery path makes applies to it, so what clearway reads is the same. The
checks of the bytes and of the text, which need no ezdxf, are in `filetext`.
"""

from __future__ import annotations

import contextlib
import datetime
import io
import logging
import re

from ezdxf import recover
from ezdxf.audit import AuditError
from ezdxf.document import Drawing
from ezdxf.lldxf.const import DXFError
from ezdxf.lldxf.tagger import binary_tags_loader

from clearway.errors import DrawingError
from clearway.converter.filetext import BINARY_SENTINEL
from clearway.converter.roles import Roles

#: Repair notices kept in full (the report lists them; the summary counts them).
MAX_NOTICES = 200
#: What ezdxf raises on a damaged file or entity (found by fuzzing the sample drawings):
#: its own DXFError family, and plain Python errors from fields that recovery left missing,
#: of the wrong type or out of range.
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
