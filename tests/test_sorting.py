"""The natural sort key: the same key for clearway's own ids as for any other text."""

from __future__ import annotations

import re

from hypothesis import given, settings
from hypothesis import strategies as st

from clearway.sorting import natural_key


def _by_digit_runs(text: str) -> tuple:
    """The key by its definition: the text cut at its digit runs, each run a number."""
    parts = [part for part in re.split(r"(\d+)", text) if part]
    # source: Python's re, `\d` is a Unicode decimal digit (category Nd), which int() reads
    return tuple((0, int(part), "") if re.fullmatch(r"\d+", part) else (1, 0, part)
                 for part in parts)


@settings(max_examples=300, deadline=None)
@given(st.one_of(st.from_regex(r"[A-Za-z]{1,3}[0-9]{1,7}", fullmatch=True),
                 st.text(st.sampled_from(list("ne_-r0123456789 x\u0661\u00b2Ü")), max_size=10)))
def test_the_key_is_the_digit_runs_key(text):
    natural_key.cache_clear()
    assert natural_key(text) == _by_digit_runs(text) == natural_key(text)


def test_ids_sort_as_numbers_and_the_key_is_remembered():
    natural_key.cache_clear()
    ids = [f"n{i}" for i in (10, 2, 1, 33, 3)] + ["e2", "n02x", "n2a"]
    # source: worked example; letters before digits within a run, numbers by value
    assert sorted(ids, key=natural_key) == ["e2", "n1", "n2", "n2a", "n02x", "n3", "n10", "n33"]
    sorted(ids, key=natural_key)
    assert natural_key.cache_info().hits == len(ids)
    # a superscript two is a digit to str.isdigit, but no number: it sorts as a letter
    assert sorted(["n\u00b2", "n2", "\u00b2"], key=natural_key) == ["n2", "n\u00b2", "\u00b2"]
