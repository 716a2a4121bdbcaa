"""DXF mutations for the fuzz tests: a short recipe of byte- and tag-level edits, so that
hypothesis shows and shrinks the recipe, not 30 kB of bytes; plus a time limit per input."""

from __future__ import annotations

import contextlib
import faulthandler
import os
import signal
from pathlib import Path

from hypothesis import HealthCheck, settings
from hypothesis import strategies as st

SAMPLES = Path(__file__).resolve().parents[2] / "sample_drawings"
NAMES = ("clinic", "distribution_centre", "distribution_centre_rev_b")
EXAMPLES = int(os.environ.get("CLEARWAY_FUZZ_EXAMPLES", "120"))
#: Seconds one input may take in process (the samples read in well under 0.2 s).
TIMEOUT_S = 10
FUZZ = settings(max_examples=EXAMPLES, deadline=None, derandomize=not os.environ.get(
    "CLEARWAY_FUZZ_EXAMPLES"), suppress_health_check=[HealthCheck.too_slow,
                                                      HealthCheck.function_scoped_fixture])

#: Group codes that hold counts, flags and sizes (DXF reference: 90 vertex count of
#: LWPOLYLINE, 70/71 MINSERT columns/rows, 72-74 spline and hatch counts, 91-98 hatch paths,
#: edges and spline knots), plus coordinates (10/20) and scales and radii (40-45, 50).
COUNT_CODES = (b"90", b"70", b"71", b"72", b"73", b"74", b"91", b"92", b"93", b"94", b"95",
               b"96", b"97", b"98", b"40", b"41", b"42", b"43", b"44", b"45", b"50", b"10",
               b"20")
HOSTILE_VALUES = (b"2147483647", b"-2147483648", b"4294967296", b"1000000000", b"-1", b"0",
                  b"99999999999999999999", b"1e308", b"-1e308", b"1e-320", b"nan", b"inf",
                  b"-inf", b"", b"A-WALL", b"\xff\xfe", b"0\nEOF")


class Hang(BaseException):
    """One input ran past TIMEOUT_S (BaseException: no library code may swallow it)."""


@contextlib.contextmanager
def time_limit(seconds):
    """Raise Hang after `seconds`; as a last resort, dump stacks and exit after 6x that."""
    def expire(*_):
        raise Hang(f"input took more than {seconds} s")
    previous = signal.signal(signal.SIGALRM, expire)
    signal.setitimer(signal.ITIMER_REAL, seconds)
    faulthandler.dump_traceback_later(6 * seconds, exit=True)  # a hang inside C code
    try:
        yield
    finally:
        signal.setitimer(signal.ITIMER_REAL, 0)
        faulthandler.cancel_dump_traceback_later()
        signal.signal(signal.SIGALRM, previous)


# --- mutations: (operation, numbers in [0, 1) choosing where, a value) -------------------

def where(fraction, count):
    return min(int(fraction * count), count - 1)


def mutate(data: bytes, recipe) -> bytes:
    """Apply each (operation, a, b, value) of `recipe` to `data` in order."""
    for operation, a, b, value in recipe:
        lines = data.split(b"\n")
        pairs = max(len(lines) // 2, 1)
        if operation == "flip":           # flipped bits anywhere
            blob = bytearray(data)
            if blob:
                blob[where(a, len(blob))] ^= 1 << where(b, 8)
            data = bytes(blob)
            continue
        if operation == "truncate":       # cut off at any byte
            data = data[:where(a, len(data) + 1)]
            continue
        if operation == "cut_tag":        # a (code, value) pair removed
            del lines[2 * where(a, pairs):2 * where(a, pairs) + 2]
        elif operation == "cut_line":     # one line removed: codes and values out of step
            del lines[where(a, len(lines))]
        elif operation == "swap_codes":   # two group codes swapped
            i, j = 2 * where(a, pairs), 2 * where(b, pairs)
            if j < len(lines) and i < len(lines):
                lines[i], lines[j] = lines[j], lines[i]
        elif operation == "count":        # an enormous or absurd count, size or coordinate
            found = [k for k in range(0, len(lines) - 1, 2) if lines[k].strip() in COUNT_CODES]
            if found:
                lines[found[where(a, len(found))] + 1] = value
        elif operation == "value":        # any value replaced
            k = 2 * where(a, pairs) + 1
            if k < len(lines):
                lines[k] = value
        elif operation == "repeat":       # a run of tags repeated elsewhere
            start, at = 2 * where(a, pairs), 2 * where(b, pairs)
            lines[at:at] = lines[start:start + 2 + int(b * 60) * 2]
        data = b"\n".join(lines)
    return data


OPERATIONS = ("flip", "truncate", "cut_tag", "cut_line", "swap_codes", "count", "value",
              "repeat")
unit = st.floats(0, 1, exclude_max=True, allow_nan=False)
recipes = st.lists(st.tuples(st.sampled_from(OPERATIONS), unit, unit,
                             st.sampled_from(HOSTILE_VALUES)), min_size=1, max_size=4)
