"""Text and number helpers shared by the exporters: safe strings, exact floats, fixed wording."""

from __future__ import annotations

import math
import re

import orjson

from clearway import __version__
from clearway.sorting import natural_key  # noqa: F401  (the exporters' sort key)

#: The tool name and version written into every output.
TOOL_VERSION = f"clearway {__version__}"

#: The caution every human-facing output carries.
SAFETY_CAUTION = (
    "Planning aid only, not a safety function: verify every lane on site under ISO 3691-4, "
    "the robot maker's safety manual and local codes, by qualified people."
)

# XML 1.0 sec. 2.2 Char production: everything outside it cannot appear in an XML document,
# not even as a character reference.
_XML_ILLEGAL = re.compile("[^\t\n\r\u0020-\ud7ff\ue000-\ufffd\U00010000-\U0010ffff]")
# Lone surrogates cannot be encoded as UTF-8; JSON keeps everything else (escaped by json).
_SURROGATE = re.compile("[\ud800-\udfff]")


def xml_text(value: object) -> str:
    """Return `value` as a string that XML 1.0 can hold.

    Characters outside the XML 1.0 ``Char`` production (C0 controls other than tab, line
    feed and carriage return, lone surrogates, U+FFFE, U+FFFF) are dropped; everything
    else, right-to-left marks included, is kept. Escaping of ``<``, ``&`` and quotes is
    left to the XML writer (lxml).

    Examples
    --------
    >>> xml_text("Dock <A> & \\x07B\\u200f")
    'Dock <A> & B\\u200f'
    """
    return _XML_ILLEGAL.sub("", str(value))


def json_text(value: object) -> str:
    """Return `value` as a string that UTF-8 JSON can hold (lone surrogates become U+FFFD)."""
    return _SURROGATE.sub("\ufffd", str(value))


def compact_json(value) -> str:
    """Return `value` as compact JSON text (RFC 8259): no spaces, every character kept as is.

    Encoded by orjson, about ten times as fast as the standard library's encoder on the
    outputs' coordinate lists, and the same text as ``json.dumps(value, separators=(",",
    ":"), ensure_ascii=False)`` but for two spellings: a number below 1e-4 may be written
    otherwise (``0.00001`` for ``1e-05``; the same double either way), and NaN and the
    infinities, which JSON cannot hold, become ``null`` (RFC 8259 sec. 6). Values that may
    be non-finite go through :func:`finite_or_none` first. numpy scalars and arrays are
    written as the numbers they hold; an integer beyond 64 bits is refused (TypeError).

    Examples
    --------
    >>> compact_json({"x": [0.1, 2.0, 1e-05], "name": "Büro", "ok": True})
    '{"x":[0.1,2.0,0.00001],"name":"Büro","ok":true}'
    """
    return orjson.dumps(value, option=orjson.OPT_SERIALIZE_NUMPY).decode("utf-8")


def exact_float(value: float) -> str:
    """Format a float so that ``float(text) == value`` exactly, in the shortest form.

    Python's ``repr`` gives the shortest string that round-trips (e.g. ``'0.35'``,
    ``'1e-05'``, ``'5400000.125'``); it is deterministic across platforms.

    Examples
    --------
    >>> exact_float(0.1 + 0.2), exact_float(3)
    ('0.30000000000000004', '3.0')
    """
    return repr(float(value))


def finite_or_none(value: float | None) -> float | None:
    """Return `value` as a Python float, or None when it is None, NaN or infinite (JSON-safe)."""
    if value is None:
        return None
    value = float(value)
    return value if math.isfinite(value) else None
