"""Place the preview's labels where they cover no lane, no symbol and no other label.

Each label tries a ring of positions around its symbol, nearest first, and takes the first
whose box touches nothing drawn before it; when every position touches something it takes
the one that covers the least (lane length plus a large weight for labels and symbols).
Boxes are in the drawing frame (metres, y up), estimated from the font size: the widest
common glyphs of a sans-serif face are about 0.62 em wide.

All positions of a label are judged at once: the symbols and labels each box touches come
from one R-tree query and one comparison of bounds, and the lane each box covers is first
estimated for every box together by integrating the lane outlines' edges clipped to the box
(`boxed_areas`). Only boxes whose estimates lie within rounding of the best one have their
covered lane computed by shapely's overlay, so the choice is the one the overlay areas give,
to the bit, at a fraction of the overlays.
"""

from __future__ import annotations

import numpy as np
import shapely
from shapely.strtree import STRtree

#: Advance width of one character, em (DejaVu Sans digits are 0.636 em; from memory).
CHAR_WIDTH = 0.62
#: Cost of covering a symbol or a label, in metres of covered lane.
_CLASH = 1e6
#: Bound on the relative rounding error of an estimated covered area, against the box's
#: coordinates times its size: a double carries 2.2e-16; the rest is headroom for sums.
_ROUNDING = 1e-12
#: Label positions whose symbol pairs are judged together: a position of a large preview
#: meets some 80 symbols' bounds, so this bounds the pair arrays to a few tens of MB.
BOXES_AT_ONCE = 4096


def text_bounds(x: float, y: float, text: str, size: float,
                anchor: str = "start") -> tuple[float, float, float, float]:
    """Return (xmin, ymin, xmax, ymax) of one line of text whose baseline starts at (x, y),
    y up, metres."""
    width = CHAR_WIDTH * size * len(text)
    left = x - width if anchor == "end" else x - width / 2 if anchor == "middle" else x
    return left, y - 0.25 * size, left + width, y + 0.95 * size


def text_box(x: float, y: float, text: str, size: float, anchor: str = "start"):
    """Return the box of one line of text whose baseline starts at (x, y), y up, metres."""
    return shapely.box(*text_bounds(x, y, text, size, anchor))


def outline_edges(polygons) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Return the edges of every ring of `polygons`, for `boxed_areas`.

    Parameters
    ----------
    polygons : sequence of Polygon or MultiPolygon

    Returns
    -------
    edges : (E, 4) ndarray
        x0, y0, x1, y1 of each edge, metres.
    sign : (E,) ndarray of float
        +1 or -1: the edges of a clockwise outer ring or a counter-clockwise hole count
        their area positive, the others negative, so that any orientation adds up.
    owner : (E,) ndarray of int
        Index in `polygons` of the polygon each edge bounds.
    """
    parts, part_owner = shapely.get_parts(np.asarray(polygons, dtype=object), return_index=True)
    parts_mask = shapely.get_type_id(parts) == shapely.GeometryType.POLYGON
    parts, part_owner = parts[parts_mask], part_owner[parts_mask]
    rings, ring_part = shapely.get_rings(parts, return_index=True)
    first_ring = np.r_[True, ring_part[1:] != ring_part[:-1]] if len(rings) else np.ones(0, bool)
    ring_sign = np.where(shapely.is_ccw(rings), -1.0, 1.0) * np.where(first_ring, 1.0, -1.0)
    coords, ring_of = shapely.get_coordinates(rings, return_index=True)
    if len(coords) < 2:
        return np.zeros((0, 4)), np.zeros(0), np.zeros(0, dtype=int)
    same = ring_of[1:] == ring_of[:-1]                       # consecutive points of one ring
    edges = np.hstack([coords[:-1][same], coords[1:][same]])
    ring = ring_of[:-1][same]
    return edges, ring_sign[ring], part_owner[ring_part[ring]]


def boxed_areas(edges: np.ndarray, sign: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    """Return, for each edge, its share of the area of its polygon inside its box.

    The share is the integral, along the edge's x, of the height of the edge above the box's
    bottom, clamped to the box (Green's theorem): summed over the closed rings of a
    polygon (with `sign` from `outline_edges`) it is the area of the polygon inside the box.

    Parameters
    ----------
    edges : (E, 4) ndarray
        x0, y0, x1, y1, metres.
    sign : (E,) ndarray
    bounds : (E, 4) ndarray
        xmin, ymin, xmax, ymax of the box each edge is clipped to, metres.

    Returns
    -------
    (E,) ndarray, square metres (signed; only sums over whole rings are areas)

    Examples
    --------
    >>> square = shapely.box(0, 0, 2, 2)                  # half of it lies in the box
    >>> edges, sign, _ = outline_edges([square])
    >>> float(boxed_areas(edges, sign, np.tile([1.0, -1.0, 3.0, 3.0], (len(edges), 1))).sum())
    2.0
    """
    x0, y0, x1, y1 = edges.T
    left, bottom, right, top = bounds.T
    u0, u1 = np.clip(x0, left, right), np.clip(x1, left, right)
    run = x1 - x0
    steep = run == 0                                          # no extent along x: no area
    safe = np.where(steep, 1.0, run)
    v0 = y0 + (u0 - x0) / safe * (y1 - y0)                   # the edge's y where clipped
    v1 = y0 + (u1 - x0) / safe * (y1 - y0)
    low, high = np.minimum(v0, v1), np.maximum(v0, v1)
    # mean over [low, high] of the height above the bottom clamped to the box, split into
    # the part inside the box's band and the part above it (stable when low ~ high)
    c0, c1 = np.clip(low, bottom, top), np.clip(high, bottom, top)
    spread = high - low
    flat = spread == 0
    span = np.where(flat, 1.0, spread)
    inside = np.where(flat, c0 - bottom, (c1 - c0) / span * ((c0 + c1) / 2 - bottom))
    above = np.where(flat, 0.0,             # a level edge's clamped height is all inside
                     (np.maximum(high, top) - np.maximum(low, top)) / span * (top - bottom))
    return np.where(steep, 0.0, sign * (u1 - u0) * (inside + above))


def _extreme_vertices(geometries) -> np.ndarray:
    """(G, 4, 2): for each geometry, a vertex of least x, of most x, of least y, of most y
    (NaN for a geometry without coordinates)."""
    xy, owner = shapely.get_coordinates(geometries, return_index=True)
    result = np.full((len(geometries), 4, 2), np.nan)
    for slot, key in enumerate((xy[:, 0], -xy[:, 0], xy[:, 1], -xy[:, 1])):
        order = np.lexsort((key, owner))
        first = order[np.r_[True, owner[order][1:] != owner[order][:-1]]] if len(xy) else order
        result[owner[first], slot] = xy[first]
    return result


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
        self._lanes = shapely.buffer(np.asarray(lanes, dtype=object).reshape(-1), lane_width / 2,
                                     quad_segs=2)
        self._lane_tree = STRtree(self._lanes)
        edges, sign, owner = outline_edges(self._lanes)
        order = np.argsort(owner, kind="stable")
        self._edges, self._sign = edges[order], sign[order]
        counts = np.bincount(owner, minlength=len(self._lanes))
        self._edge_stop = np.cumsum(counts)
        self._edge_start = self._edge_stop - counts
        self._symbols: list = []
        self._symbol_tree = None
        self._taken = np.empty((0, 4))       # bounds of the labels placed, one a row

    def block(self, geometry) -> None:
        """Keep labels off `geometry` (a symbol's outline); call before the first `place`."""
        self._symbols.append(geometry)
        self._symbol_tree = None

    def _symbol_hits(self, boxes, bounds) -> np.ndarray:
        """Index into `boxes` of each (box, symbol) pair that intersects: the pairs the
        R-tree's 'intersects' query gives.

        A symbol holds the disc about the middle of its bounds out to its boundary (less a
        margin far above rounding) when its interior holds that middle, so it meets a
        closed box whose point nearest the middle lies in that disc; one with one of its
        extreme vertices in the closed box meets it too (that point lies in both). Only the
        other pairs whose bounds overlap ask GEOS, with the box prepared, as the query
        itself asks.
        """
        if self._symbol_tree is None:
            symbols = np.asarray(self._symbols, dtype=object).reshape(-1)
            self._symbol_tree = STRtree(symbols)
            self._symbol_array = symbols
            self._symbol_extremes = _extreme_vertices(symbols)
            low_x, low_y, high_x, high_y = shapely.bounds(symbols).T
            middle_x, middle_y = (low_x + high_x) / 2, (low_y + high_y) / 2
            middles = shapely.points(middle_x, middle_y)
            held = shapely.contains(symbols, middles)
            radius = np.where(held, shapely.distance(middles, shapely.boundary(symbols)), -1.0)
            # a symbol whose middle is not in it never passes the first test
            self._symbol_discs = middle_x, middle_y, radius * (1 - 1e-9) - 1e-12
        box, symbol = self._symbol_tree.query(boxes)
        if len(box) == 0:
            return box
        x, y, radius = (part[symbol] for part in self._symbol_discs)
        dx = np.clip(x, bounds[box, 0], bounds[box, 2]) - x
        dy = np.clip(y, bounds[box, 1], bounds[box, 3]) - y
        certain = dx * dx + dy * dy <= radius * np.abs(radius)
        rest = np.flatnonzero(~certain)
        x, y = np.moveaxis(self._symbol_extremes[symbol[rest]], 2, 0)    # (R, 4) each
        left, bottom, right, top = (column[:, None] for column in bounds[box[rest]].T)
        certain[rest] = ((x >= left) & (x <= right) & (y >= bottom) & (y <= top)).any(axis=1)
        doubt = np.flatnonzero(~certain)
        if len(doubt):
            shapely.prepare(boxes)
            certain[doubt] = shapely.intersects(boxes[box[doubt]],
                                                self._symbol_array[symbol[doubt]])
        return box[certain]

    def _touches(self, bounds) -> np.ndarray:
        """Number of labels placed so far that each box of `bounds` (B, 4) touches."""
        # labels are axis-aligned boxes: two touch when their bounds overlap, edges included
        taken = self._taken
        x0, y0, x1, y1 = bounds.T
        # only labels that touch the bounds of all the boxes can touch one of them
        taken = taken[(taken[:, 0] <= x1.max()) & (taken[:, 2] >= x0.min())
                      & (taken[:, 1] <= y1.max()) & (taken[:, 3] >= y0.min())]
        x0, y0, x1, y1 = (column[:, None] for column in bounds.T)
        return np.count_nonzero((taken[:, 0] <= x1) & (taken[:, 2] >= x0)
                                & (taken[:, 1] <= y1) & (taken[:, 3] >= y0), axis=1)

    def _lane_cost(self, box) -> float:
        """Lane area `box` covers, by shapely's overlay (the measure positions are judged by)."""
        lanes = self._lane_tree.query(box, predicate="intersects")
        return sum(self._lanes[i].intersection(box).area for i in lanes)

    def _estimates(self, chosen, boxes, bounds) -> tuple[np.ndarray, np.ndarray]:
        """Lane area each box of `chosen` covers, estimated, and the estimate's error bound."""
        box, lane = self._lane_tree.query(boxes[chosen], predicate="intersects")
        counts = self._edge_stop[lane] - self._edge_start[lane]
        pair = np.repeat(np.arange(len(lane)), counts)
        edge = np.arange(len(pair)) - np.repeat(np.cumsum(counts) - counts, counts)
        edge += self._edge_start[lane][pair]
        owner = box[pair]
        limits = bounds[chosen]
        shares = boxed_areas(self._edges[edge], self._sign[edge], limits[owner])
        estimate = np.bincount(owner, weights=shares, minlength=len(chosen))
        lanes = np.bincount(box, minlength=len(chosen))
        scale = ((1.0 + np.abs(limits).max(axis=1))
                 * (limits[:, 2] - limits[:, 0] + limits[:, 3] - limits[:, 1]))
        # no lane touched: the estimate is the overlay's sum, exactly 0
        terms = np.bincount(owner, minlength=len(chosen))
        return estimate, np.where(lanes > 0, _ROUNDING * scale * (1.0 + terms), 0.0)

    def _cheapest(self, boxes, bounds, clash) -> int:
        """Index of the first box of least cost (clash + lane area by overlay)."""
        total = np.full(len(boxes), np.inf)
        error = np.zeros(len(boxes))
        chosen = np.flatnonzero(clash == clash.min())
        while len(chosen):
            total[chosen], error[chosen] = self._estimates(chosen, boxes, bounds)
            total[chosen] += clash[chosen]
            best = int(np.argmin(total))
            # a box not yet estimated costs at least its clash
            chosen = np.flatnonzero(np.isinf(total) & (clash <= total[best] + error[best]))
        near = np.flatnonzero(total <= total[best] + error[best] + error)
        if len(near) == 1:
            return best
        exact = [float(clash[i]) + (self._lane_cost(boxes[i]) if error[i] > 0 else 0)
                 for i in near.tolist()]
        return int(near[exact.index(min(exact))])

    def place(self, x: float, y: float, text: str, size: float, reach: float, *,
              prefer_left: bool = False, within=None) -> tuple[float, float, str]:
        """Return (x, y, anchor) of the baseline for `text` beside the symbol at (x, y).

        `reach` is the symbol's half-size, metres; positions start just beyond it. With
        `within` (a polygon: the name of an area), the text is first tried centred on
        (x, y), and a position whose box leaves `within` counts as a clash.
        """
        return self.place_all([(x, y, text, size, reach, prefer_left, within)])[0]

    def place_all(self, labels, optional=None) -> list[tuple[float, float, str] | None]:
        """Place `labels` one after the other, as `place` does each in turn.

        Parameters
        ----------
        labels : sequence of (x, y, text, size, reach, prefer_left, within)
            The arguments of `place`, one tuple a label, in the order they are placed.
        optional : sequence of bool, optional
            Labels that are left out where every position covers a symbol or a label placed
            before (a value the symbol's other outputs give; on a crowded plan a label laid
            over others is read by no one).

        Returns
        -------
        list of (x, y, anchor), one a label; None for an optional label left out

        Which symbols a position touches and whether it leaves its `within` do not depend
        on the labels placed before it: they are found for every position of every label
        at once (one R-tree query, one GEOS call); only the labels placed so far are
        counted label by label.
        """
        candidates, rows, start = [], [], [0]
        for x, y, text, size, reach, prefer_left, within in labels:
            tried = _positions(x, y, size, reach, prefer_left, within is not None)
            candidates.append(tried)
            rows.extend(text_bounds(cx, cy, text, size, anchor) for cx, cy, anchor in tried)
            start.append(len(rows))
        if not candidates:
            return []
        bounds = np.array(rows, dtype=float).reshape(-1, 4)
        boxes = shapely.box(*bounds.T)
        fixed = np.zeros(len(boxes), dtype=np.int64)
        for first in range(0, len(boxes), BOXES_AT_ONCE):    # each box's pairs are its own
            chunk = slice(first, first + BOXES_AT_ONCE)
            fixed[chunk] = np.bincount(self._symbol_hits(boxes[chunk], bounds[chunk]),
                                       minlength=len(boxes[chunk]))
        owner = np.repeat(np.arange(len(candidates)), np.diff(start))
        area = np.empty(len(candidates), dtype=object)
        area[:] = [label[6] for label in labels]
        area = area[owner]
        bounded = np.flatnonzero([value is not None for value in area])
        if len(bounded):
            fixed[bounded] += ~shapely.covers(area[bounded], boxes[bounded])
        optional = [False] * len(candidates) if optional is None else list(optional)
        placed = []
        for index, tried in enumerate(candidates):
            first, stop = start[index], start[index + 1]
            clash = fixed[first:stop] + self._touches(bounds[first:stop])
            if optional[index] and clash.min() > 0:
                placed.append(None)
                continue
            best = self._cheapest(boxes[first:stop], bounds[first:stop], _CLASH * clash)
            self._taken = np.vstack([self._taken, bounds[first + best]])
            placed.append(tried[best])
        return placed


def _positions(x: float, y: float, size: float, reach: float, prefer_left: bool,
               centred: bool) -> list[tuple[float, float, str]]:
    """The baselines (x, y, anchor) a label tries round its symbol, in order of preference."""
    gap = reach + 0.3 * size
    sides = [("start", gap), ("end", -gap)]
    if prefer_left:
        sides.reverse()
    candidates = [(x, y - 0.35 * size, "middle")] if centred else []
    for step in (0.0, 1.0, 2.2):
        for anchor, dx in sides:
            for dy in (-0.35 * size, 0.9 * size + step * size, -1.6 * size - step * size):
                candidates.append((x + dx * (1 + step), y + dy, anchor))
        for dy in (gap + 0.3 * size + step * size, -gap - 1.0 * size - step * size):
            candidates.append((x, y + dy, "middle"))
    return candidates
