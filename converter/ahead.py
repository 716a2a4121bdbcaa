"""Reading a drawing ahead: the work on its text that needs no ezdxf, done in one process
while another, which reads the drawing, imports ezdxf.

`clearway build` reads the drawing in a second process (clearway.side_by_side), which
spends its first 0.2 s or so importing ezdxf and the converter. The build process meanwhile
loads the file, checks it and cuts its plain entities out (`read_ahead`: 0.06 s on the mixed
suite floor at 5,000 bays), and feeds the result to the reader, which takes it up where it
would have done the same (`read.read_drawing`). Nothing here imports ezdxf, nor anything
that does (tests/converter/test_ahead.py holds it).

A drawing the reader reads in two halves (`filetext.SPLIT_WORK`), or one that is not sound,
is not read ahead: each half cuts its own plain entities in its own process, and the
recovery reader takes the bytes whole.
"""

from __future__ import annotations

import hashlib
import os
from dataclasses import dataclass
from typing import TYPE_CHECKING

from clearway.errors import ClearwayError
from clearway.converter.filetext import (SPLIT_WORK, entity_halves, load_bytes, ordinary_text,
                                         rough_work)

if TYPE_CHECKING:
    from clearway.converter.plain import PlainEntities

#: The work of reading a drawing (`filetext.rough_work`) from which it is read ahead. Below it
#: the reader's own work is short, and the build process, which has 0.3 to 0.4 s of imports
#: of its own to do meanwhile, would have the reader wait instead of the other way round.
#: Whole builds paired with a bare parse (nine to fifteen runs), the suite's floors at 5,000
#: bays read ahead at any work against not at all: `current` (a rough work of 5,800) 0.835
#: -> 0.883 s, `angled` (5,500) 0.938 -> 0.949 s, `flue_sealed` (8,700) 1.259 -> 1.174 s,
#: `mixed` (11,500) 1.707 -> 1.652 s.
READ_AHEAD_WORK = 7_000


@dataclass(frozen=True)
class ReadAhead:
    """A drawing's text as read ahead: `plain` its plain entities and the text without them.

    path : str, the file as named (``os.fspath``)
    sha256 : str, of the file's bytes
    plain : clearway.converter.plain.PlainEntities
    """

    path: str
    sha256: str
    plain: PlainEntities


def read_ahead(path, limits=None) -> ReadAhead | None:
    """The text of the drawing at `path`, checked and cut (`plain.cut_plain_entities`), or
    None where the reader does otherwise, or may as well: it is not a regular file (a pipe
    is read once, by the reader), the file cannot be read or is refused (the reader says
    why), it is less work than READ_AHEAD_WORK (roughly: `filetext.rough_work`), its model
    space may be read in two halves (a rough work of SPLIT_WORK or more), it is not sound,
    or it has no plain entities.

    Examples
    --------
    >>> read_ahead("no such drawing.dxf") is None       # the reader says it is missing
    True
    """
    # only a regular file can be read twice: a pipe read here would leave the reader nothing
    if not os.path.isfile(path):
        return None
    try:
        data = load_bytes(path, limits)
    except (ClearwayError, OSError):
        return None
    # from SPLIT_WORK on the reader may read the file in halves, each cutting its own
    if not READ_AHEAD_WORK <= rough_work(data) < SPLIT_WORK:
        return None
    # imported only here: below READ_AHEAD_WORK it is time the build process may not have
    from clearway.converter.plain import cut_plain_entities

    text = ordinary_text(data)
    if text is None or entity_halves(text, least=SPLIT_WORK) is not None:
        return None
    plain = cut_plain_entities(text)
    if plain is None:
        return None
    return ReadAhead(os.fspath(path), hashlib.sha256(data).hexdigest(), plain)
