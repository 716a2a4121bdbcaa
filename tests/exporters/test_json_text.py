"""compact_json (orjson) against the standard library's JSON encoder and decoder."""

from __future__ import annotations

import json
import math

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from clearway.exporters.text import compact_json, json_text

_FLOATS = st.floats(allow_nan=False, allow_infinity=False)
_TEXT = st.text().map(json_text)              # what the exporters hand over: no lone surrogates
_VALUES = st.recursive(
    st.none() | st.booleans() | st.integers(-2 ** 63, 2 ** 63 - 1) | _FLOATS | _TEXT,
    lambda inner: st.lists(inner, max_size=5) | st.dictionaries(_TEXT, inner, max_size=5),
    max_leaves=25)


def _small_floats(value) -> bool:
    """Whether `value` holds a float of magnitude below 1e-4 other than zero."""
    if isinstance(value, float):
        return value != 0.0 and abs(value) < 1e-4
    if isinstance(value, list):
        return any(_small_floats(item) for item in value)
    if isinstance(value, dict):
        return any(_small_floats(item) for item in value.values())
    return False


@settings(max_examples=300, deadline=None)
@given(_VALUES)
def test_reads_back_as_the_same_values_and_text(value):
    text = compact_json(value)
    # source: Python's json module, an independent RFC 8259 decoder: the same values, every
    # float the same double
    back = json.loads(text)
    assert back == value
    assert json.dumps(back, sort_keys=True) == json.dumps(value, sort_keys=True)
    # and, numbers below 1e-4 aside (spelled 0.00001 here, 1e-05 there), the same text as
    # the standard library's compact encoder
    if not _small_floats(value):
        assert text == json.dumps(value, separators=(",", ":"), ensure_ascii=False)


def test_numbers_json_cannot_hold_become_null_and_numpy_numbers_are_numbers():
    # source: RFC 8259 sec. 6 (no NaN or Infinity in JSON)
    assert json.loads(compact_json([math.nan, math.inf, -math.inf])) == [None, None, None]
    assert compact_json({"a": np.float64(0.1), "b": np.int64(3), "c": np.array([1.5, 2])}) \
        == '{"a":0.1,"b":3,"c":[1.5,2.0]}'
    assert compact_json(1e-05) == "0.00001" and float(compact_json(1e-05)) == 1e-05
