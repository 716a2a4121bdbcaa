"""Place the preview's labels where they cover no lane, no symbol and no other label.

Each label tries a ring of positions around its symbol, nearest first, and takes the first
whose box touches nothing drawn before it; when every position touches something it takes
the one that covers the least (lane length plus a large weight for labels and symbols).
Boxes are in the drawing frame (metres, y up), estimated from the font size: the widest
common glyphs of a sans-serif face are about 0.62 em wide.
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely.strtree import STRtree

#: Advance width of one character, em (DejaVu Sans digits are 0.636 em; from memory).
CHAR_WIDTH = 0.62
#: Cost of covering a symbol or a label, in metres of covered lane.
_CLASH = 1e6


def text_box(x: float, y: float, text: str, size: float, anchor: str = "start"):
    """Return the box of one line of text whose baseline starts at (x, y), y up, metres."""
    width = CHAR_WIDTH * size * len(text)
    left = x - width if anchor == "end" else x - width / 2 if anchor == "middle" else x
    return shapely.box(left, y - 0.25 * size, left + width, y + 0.95 * size)


class LabelPlacer:
    """Choose label positions clear of `lanes` and of everything placed before.

    Parameters
    ----------
    lanes : sequence of shapely LineString
        The lanes as drawn, drawing frame (metres, y up).
    lane_width : float
        Stroke width of a lane, metres.
    """

    def __init__(self, lanes, lane_width: float) -> None:
        self._lanes = [line.buffer(lane_width / 2, quad_segs=2) for line in lanes]
        self._lane_tree = STRtree(self._lanes)
        self._symbols: list = []
        self._symbol_tree = None
        self._taken = np.empty((0, 4))       # bounds of the labels placed, one a row

    def block(self, geometry) -> None:
        """Keep labels off `geometry` (a symbol's outline); call before the first `place`."""
        self._symbols.append(geometry)
        self._symbol_tree = None

    def _cost(self, box, within=None, beat=float("inf")) -> float:
        """Cost of placing `box`; any value not below `beat` when it cannot be below it."""
        if self._symbol_tree is None:
            self._symbol_tree = STRtree(self._symbols)
        # labels are axis-aligned boxes: two touch when their bounds overlap, edges included
        x0, y0, x1, y1 = box.bounds
        taken = self._taken
        clash = _CLASH * (len(self._symbol_tree.query(box, predicate="intersects"))
                          + int(np.count_nonzero((taken[:, 0] <= x1) & (taken[:, 2] >= x0)
                                                 & (taken[:, 1] <= y1) & (taken[:, 3] >= y0)))
                          + (within is not None and not within.covers(box)))
        if clash >= beat:           # the covered lane only adds to it
            return clash
        lanes = self._lane_tree.query(box, predicate="intersects")
        return clash + sum(self._lanes[i].intersection(box).area for i in lanes)

    def place(self, x: float, y: float, text: str, size: float, reach: float, *,
              prefer_left: bool = False, within=None) -> tuple[float, float, str]:
        """Return (x, y, anchor) of the baseline for `text` beside the symbol at (x, y).

        `reach` is the symbol's half-size, metres; positions start just beyond it. With
        `within` (a polygon: the name of an area), the text is first tried centred on
        (x, y), and a position whose box leaves `within` counts as a clash.
        """
        gap = reach + 0.3 * size
        sides = [("start", gap), ("end", -gap)]
        if prefer_left:
            sides.reverse()
        candidates = [(x, y - 0.35 * size, "middle")] if within is not None else []
        for step in (0.0, 1.0, 2.2):
            for anchor, dx in sides:
                for dy in (-0.35 * size, 0.9 * size + step * size, -1.6 * size - step * size):
                    candidates.append((x + dx * (1 + step), y + dy, anchor))
            for dy in (gap + 0.3 * size + step * size, -gap - 1.0 * size - step * size):
                candidates.append((x, y + dy, "middle"))
        best, best_cost = None, float("inf")
        for cx, cy, anchor in candidates:
            box = text_box(cx, cy, text, size, anchor)
            cost = self._cost(box, within, best_cost)
            if cost < best_cost:
                best, best_cost = (cx, cy, anchor, box), cost
            if cost == 0:
                break
        cx, cy, anchor, box = best
        self._taken = np.vstack([self._taken, box.bounds])
        return cx, cy, anchor
