"""Numbers of the SVG preview: `number` and `point_list` against Python's decimal module."""

from __future__ import annotations

from decimal import ROUND_HALF_EVEN, Decimal

import numpy as np
import pytest

from clearway.exporters.svg_parts import number, point_list


def _millimetres(value: float) -> str:
    """source: Python's decimal module: the exact decimal value of the double, rounded half
    to even at 0.001 (as C's printf %.3f rounds it), trailing zeros and a negative zero's
    sign dropped."""
    rounded = Decimal(value).quantize(Decimal("0.001"), rounding=ROUND_HALF_EVEN)
    text = format(rounded.normalize(), "f")
    return "0" if text == "-0" else text


def _values(rng, count):
    return np.concatenate([
        rng.uniform(-1000, 1000, count), np.round(rng.uniform(-1000, 1000, count), 3),
        np.round(rng.uniform(-10, 10, count), 1), rng.uniform(-0.002, 0.002, count),
        rng.choice([0.0, -0.0, 0.0625, -2.0625, 10.0, -100.0, 1e6, 0.5, -0.0005], count)])


@pytest.mark.parametrize("seed", range(3))
def test_number_and_point_list_write_what_decimal_rounds(seed):
    rng = np.random.default_rng(seed)
    values = _values(rng, 400)
    rng.shuffle(values)
    expected = [_millimetres(v) for v in values.tolist()]
    assert [number(v) for v in values.tolist()] == expected
    xy = values.reshape(-1, 2)
    # point_list writes y flipped: the decimal text of -y
    flipped = [_millimetres(-v) for v in xy[:, 1].tolist()]
    assert point_list(xy) == " ".join(f"{x},{y}" for x, y in zip(expected[::2], flipped))


def test_point_list_of_short_lists():
    # analytic: 2.0625 is exact in binary, a tie at 0.001 that rounds to the even 2.062
    assert point_list(np.array([[2.0625, -0.0004]])) == "2.062,0"
    assert point_list(np.array([[-0.0, 0.0], [100.0, 100.0]])) == "0,0 100,-100"
    assert point_list(np.zeros((0, 2))) == ""
