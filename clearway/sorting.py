"""Sort keys shared by every stage (standard library only, like the other leaf modules)."""

from __future__ import annotations

import re

_DIGIT_RUNS = re.compile(r"(\d+)")


def natural_key(text: str) -> tuple:
    """Sort key that orders ``n2`` before ``n10`` (digit runs compare as numbers).

    Examples
    --------
    >>> sorted(["n10", "e3", "n2"], key=natural_key)
    ['e3', 'n2', 'n10']
    """
    return tuple((0, int(part), "") if part.isdigit() else (1, 0, part)
                 for part in _DIGIT_RUNS.split(str(text)) if part)
