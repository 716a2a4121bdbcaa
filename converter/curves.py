"""Flatten polyline bulges into chords, and turn wide polylines into bands."""

from __future__ import annotations

import numpy as np
import shapely


def arc_segments(radius, sweep, tolerance):
    """Return how many chords keep an arc of `radius` and `sweep` within `tolerance`.

    A chord spanning the angle phi departs from its arc by the sagitta
    r (1 - cos(phi / 2)); choosing phi <= 2 acos(1 - tolerance / r) bounds it.

    Examples
    --------
    >>> arc_segments(1.0, np.pi, 0.001)
    36
    """
    radius, sweep = abs(float(radius)), abs(float(sweep))
    if radius <= tolerance or sweep == 0.0:
        return 1
    step = 2.0 * np.arccos(1.0 - tolerance / radius)
    count = sweep / step if step > 0 else np.inf
    return max(1, int(np.ceil(count))) if count < 2.0 ** 62 else 2 ** 62  # caller caps it


def bulge_polyline(xy, bulges, *, closed, tolerance, max_vertices=None):
    """Return the vertices of a polyline whose bulged segments are flattened into chords.

    Parameters
    ----------
    xy : (N, 2) array_like
        Vertices, drawing units.
    bulges : (N,) array_like
        Bulge of the segment starting at each vertex: tan(sweep / 4), positive counter-clockwise.
    closed : bool
        Whether a segment runs from the last vertex back to the first.
    tolerance : float
        Largest distance between an arc and its chords, drawing units. Must be > 0.
    max_vertices : int, optional
        Return None instead when the result would have more vertices than this.

    Returns
    -------
    (M, 2) ndarray or None
        For a closed polyline the first vertex is not repeated at the end.

    Examples
    --------
    >>> half = bulge_polyline([(-1, 0), (1, 0)], [1, 0], closed=True, tolerance=1e-3)
    >>> round(float(shapely.Polygon(half).area), 3)   # pi / 2 less the chords' slivers
    1.569
    """
    if tolerance <= 0:
        raise ValueError(f"tolerance must be > 0, got {tolerance}")
    xy = np.asarray(xy, dtype=float)[:, :2]
    bulges = np.asarray(bulges, dtype=float)
    count = len(xy)
    segment_count = count if closed else count - 1
    if not np.any(bulges[:segment_count]):
        return xy
    pieces = []
    total = 0
    for index in range(segment_count):
        start, end = xy[index], xy[(index + 1) % count]
        pieces.append(start[None, :])
        bulge = bulges[index]
        chord = float(np.hypot(*(end - start)))
        if bulge == 0.0 or chord == 0.0:
            continue
        sweep = 4.0 * np.arctan(bulge)
        radius = chord / (2.0 * abs(np.sin(sweep / 2.0)))
        left = np.array([start[1] - end[1], end[0] - start[0]]) / chord
        centre = (start + end) / 2.0 + left * chord * (1.0 - bulge * bulge) / (4.0 * bulge)
        begin = np.arctan2(*(start - centre)[::-1])
        steps = arc_segments(radius, sweep, tolerance)
        total += steps
        if max_vertices is not None and total > max_vertices:
            return None
        angles = begin + sweep * np.arange(1, steps) / steps
        pieces.append(centre + radius * np.column_stack([np.cos(angles), np.sin(angles)]))
    if not closed:
        pieces.append(xy[-1:])
    return np.concatenate(pieces)


def widened_polyline(xy, bulges, start_widths, end_widths, *, closed, tolerance):
    """Return the band a polyline with widths covers, as a shapely Polygon or MultiPolygon.

    Each segment becomes a quadrilateral whose width runs from its start width to its end
    width (a bulged segment follows its arc); joints are filled with discs of the local width.

    Examples
    --------
    >>> band = widened_polyline([(0, 0), (10, 0)], [0, 0], [0.2, 0.2], [0.2, 0.2],
    ...                         closed=False, tolerance=1e-3)
    >>> round(band.area, 6)
    2.0
    """
    xy = np.asarray(xy, dtype=float)[:, :2]
    count = len(xy)
    segment_count = count if closed else count - 1
    shapes = []
    for index in range(segment_count):
        ends = np.array([xy[index], xy[(index + 1) % count]])
        path = bulge_polyline(ends, [bulges[index], 0.0], closed=False, tolerance=tolerance)
        widths = np.linspace(start_widths[index], end_widths[index], len(path)) / 2.0
        direction = np.gradient(path, axis=0)
        length = np.hypot(direction[:, 0], direction[:, 1])
        if not np.any(length > 0):
            continue
        normal = np.column_stack([-direction[:, 1], direction[:, 0]]) / np.maximum(length, 1e-12)[:, None]
        outline = np.concatenate([path + normal * widths[:, None],
                                  (path - normal * widths[:, None])[::-1]])
        shapes.append(shapely.make_valid(shapely.Polygon(outline)))
        if index < segment_count - 1 or closed:
            shapes.append(shapely.Point(path[-1]).buffer(widths[-1], quad_segs=4))
    return shapely.union_all(shapes)
