"""Several drawings in one model space: group the mapped linework by the gaps between them.

Model space often holds a section, elevations or a second floor beside the plan, on the same
layers. Linework whose bounding boxes come within VIEW_GAP of each other belongs to one
drawing; the floor plan is the group with door swings in it (plans show doors swinging;
sections and elevations do not), the largest by area among those. Where no group shows door
swings (doors drawn as bare gaps, arcs lost in a PDF import), the plan is the group with the
most wall faces, wall lines with a parallel partner at a wall's thickness: a plan cuts every
wall, while a site plan beside it, larger by area, draws a few outlines; then the largest.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from clearway.converter.grouping import components

#: Two pieces of linework this close (metres) or closer belong to the same drawing.
VIEW_GAP = 2.0


@dataclass(frozen=True)
class View:
    """One group of linework: extents (drawing units), number of parts, door swings in it."""

    extents: tuple[float, float, float, float]
    parts: int
    swings: int
    chosen: bool = False
    faces: int = 0        # wall-face segments (counted only where no group shows door swings)


#: Largest raster (cells) the grouping uses; a drawing with far-flung linework gets coarser cells.
MAX_CELLS = 4_000_000
#: Marked cells up to which the groups are labelled through a graph in numpy (no scipy import
#: in the reading process: 0.07-0.12 s for 200,000 cells against about 0.4 s to import
#: scipy.ndimage there).
LABEL_BY_GRAPH = 200_000


def group_boxes(boxes, gap):
    """Label boxes (N, 4) into groups that come within `gap` of each other, in a chain.

    The boxes are marked on a raster of `gap`-sized cells (coarser when the extent would need
    more than MAX_CELLS) and the marked cells grouped with their eight neighbours, so two
    boxes up to one cell apart join; linear in the number of boxes and cells.

    Examples
    --------
    >>> group_boxes([(0, 0, 10, 5), (11, 0, 20, 5), (40, 0, 50, 5)], 2.0).tolist()
    [0, 0, 1]
    """
    boxes = np.asarray(boxes, dtype=float).reshape(-1, 4)
    if not len(boxes):
        return np.empty(0, dtype=np.int64)
    low = boxes[:, :2].min(axis=0)
    with np.errstate(over="ignore", invalid="ignore"):
        span = boxes[:, 2:].max(axis=0) - low
    if not np.isfinite(span).all() or not np.isfinite(low).all():
        return np.zeros(len(boxes), dtype=np.int64)  # absurd extents: the limits refuse them
    with np.errstate(over="ignore"):
        area = float(span[0]) * float(span[1])
    if not np.isfinite(area):
        return np.zeros(len(boxes), dtype=np.int64)  # absurd extents: the limits refuse them
    cell = max(gap, float(np.sqrt(max(area, 1e-12) / MAX_CELLS)), 1e-12)
    shape = (np.floor(span / cell).astype(np.int64) + 2)
    first = np.floor((boxes[:, :2] - low) / cell).astype(np.int64)
    last = np.floor((boxes[:, 2:] - low) / cell).astype(np.int64)
    marks = np.zeros((shape[0] + 1, shape[1] + 1), dtype=np.int64)
    np.add.at(marks, (first[:, 0], first[:, 1]), 1)
    np.add.at(marks, (last[:, 0] + 1, first[:, 1]), -1)
    np.add.at(marks, (first[:, 0], last[:, 1] + 1), -1)
    np.add.at(marks, (last[:, 0] + 1, last[:, 1] + 1), 1)
    covered = np.cumsum(np.cumsum(marks, axis=0), axis=1)[:-1, :-1] > 0
    if covered.sum() > LABEL_BY_GRAPH:
        from scipy import ndimage

        labels, _ = ndimage.label(covered, structure=np.ones((3, 3), dtype=int))
        return labels[first[:, 0], first[:, 1]] - 1
    return _label_cells(covered)[first[:, 0], first[:, 1]]


def _label_cells(covered):
    """Label the 8-connected groups of True cells 0, 1, ... in the order a row-major scan meets
    them (as scipy.ndimage.label numbers them, less one); -1 elsewhere.

    Through grouping.components, so reading a drawing does not import scipy; ndimage.label
    is quicker on rasters of more than LABEL_BY_GRAPH marked cells, and is used there.

    Examples
    --------
    >>> _label_cells(np.array([[1, 0, 0, 1], [0, 1, 0, 1], [0, 0, 0, 0], [1, 1, 0, 0]], bool))
    array([[ 0, -1, -1,  1],
           [-1,  0, -1,  1],
           [-1, -1, -1, -1],
           [ 2,  2, -1, -1]])
    """
    rows, cols = covered.shape
    index = np.full(covered.shape, -1, dtype=np.int64)
    flat = np.flatnonzero(covered)  # row-major order
    index.flat[flat] = np.arange(len(flat))
    heads, tails = [], []
    # each neighbour pair once: right, down, down-right, down-left
    for dr, dc in ((0, 1), (1, 0), (1, 1), (1, -1)):
        start, stop = max(0, -dc), cols - max(0, dc)
        a = index[: rows - dr, start:stop]
        b = index[dr:, start + dc: stop + dc]
        both = (a >= 0) & (b >= 0)
        heads.append(a[both])
        tails.append(b[both])
    heads, tails = np.concatenate(heads), np.concatenate(tails)
    # components are numbered by their lowest cell, and the cells are in scan order
    index.flat[flat] = components(len(flat), heads, tails)
    return index


def split_at_gaps(boxes, labels, gap):
    """Split each group of boxes (N, 4) where a band at least `gap` wide runs across it, in x
    or in y, with no box in it; again in each part, until none does. Return the new labels.

    The raster of :func:`group_boxes` joins boxes up to two cells apart: two plans of the
    same floor stacked on a sheet 3.6 m apart (the floor plan above its electrical plan)
    would be built as one.

    Examples
    --------
    >>> split_at_gaps([(0, 0, 10, 8), (0, 11.5, 10, 19.5), (4, 8, 5, 9)], np.array([0, 0, 0]),
    ...               2.0).tolist()
    [0, 1, 0]
    """
    boxes = np.asarray(boxes, dtype=float).reshape(-1, 4)
    labels = np.asarray(labels, dtype=np.int64)
    if not len(labels):
        return labels
    with np.errstate(over="ignore", invalid="ignore"):
        span = boxes[:, 2:].max(axis=0) - boxes[:, :2].min(axis=0)
        if not np.isfinite(span[0] * span[1]):
            return labels            # absurd extents, as group_boxes: the limits refuse them
    groups = [np.flatnonzero(labels == label) for label in range(int(labels.max()) + 1)]
    done = []
    while groups:
        members = groups.pop()
        beyond = _beyond_a_gap(boxes[members], gap)
        if beyond is None:
            done.append(members)
        else:
            groups += [members[~beyond], members[beyond]]
    done.sort(key=lambda members: int(members.min()))
    split = np.empty_like(labels)
    for label, members in enumerate(done):
        split[members] = label
    return split


def _beyond_a_gap(boxes, gap):
    """Which boxes lie beyond the first empty band at least `gap` wide (x, then y), or None."""
    for axis in (0, 1):
        low, high = boxes[:, axis], boxes[:, axis + 2]
        order = np.argsort(low, kind="stable")
        reach = np.maximum.accumulate(high[order])
        wide = np.flatnonzero(low[order][1:] - reach[:-1] >= gap)
        if len(wide):
            return low >= low[order][wide[0] + 1]
    return None


def merge_nested(boxes, labels):
    """Join groups whose extents overlap, until none do; return the new labels (0..G-1).

    Drawings set side by side in model space do not overlap; a column or a free-standing
    wall standing more than the gap away from the walls around it lies inside their
    extents, and belongs to the same drawing.

    Examples
    --------
    >>> merge_nested([(0, 0, 30, 1), (0, 0, 1, 20), (10, 10, 11, 11), (50, 0, 60, 5)],
    ...              np.array([0, 0, 1, 2])).tolist()
    [0, 0, 0, 1]
    """
    boxes = np.asarray(boxes, dtype=float).reshape(-1, 4)
    labels = np.asarray(labels, dtype=np.int64)
    while len(labels):
        count = int(labels.max()) + 1
        low = np.full((count, 2), np.inf)
        high = np.full((count, 2), -np.inf)
        np.minimum.at(low, labels, boxes[:, :2])
        np.maximum.at(high, labels, boxes[:, 2:])
        extents = shapely.box(low[:, 0], low[:, 1], high[:, 0], high[:, 1])
        rows, columns = shapely.STRtree(extents).query(extents, predicate="intersects")
        # touching at an edge is not overlapping: keep pairs that share some area
        inner = (np.minimum(high[rows], high[columns]) > np.maximum(low[rows], low[columns])).all(axis=1)
        rows, columns = rows[inner], columns[inner]
        joined = components(count, rows, columns)
        merged = int(joined.max()) + 1 if count else 0
        if merged == count:
            return labels
        labels = joined[labels]
    return labels


def find_views(boxes, swing_points, *, gap, faces=None):
    """Group part boxes (N, 4) into views; return (labels (N,), views sorted by preference).

    `swing_points` (M, 2) are the middles of door-swing arcs. The first view is the plan.
    `faces` (N,), optional, counts the wall-face segments of each part; among views without
    door swings the one with the most comes first.

    Examples
    --------
    A site plan (a large outline) beside a plan whose walls have faces, no door swings:

    >>> boxes = np.array([(0, 0, 10, 8), (0, 0, 10, 0.2), (30, 0, 60, 40)])
    >>> find_views(boxes, np.empty((0, 2)), gap=2.0)[0].tolist()
    [1, 1, 0]
    >>> find_views(boxes, np.empty((0, 2)), gap=2.0, faces=np.array([4, 2, 0]))[0].tolist()
    [0, 0, 1]
    """
    labels = merge_nested(boxes, split_at_gaps(boxes, group_boxes(boxes, gap), gap))
    if not len(labels):
        return labels, []
    views = []
    swing_points = np.asarray(swing_points, dtype=float).reshape(-1, 2)
    faces = np.zeros(len(labels), dtype=np.int64) if faces is None else np.asarray(faces)
    for label in range(int(labels.max()) + 1):
        mine = labels == label
        own = boxes[mine]
        low, high = own[:, :2].min(axis=0), own[:, 2:].max(axis=0)
        inside = np.all((swing_points >= low) & (swing_points <= high), axis=1)
        views.append((label, View(tuple(float(v) for v in (*low, *high)), int(len(own)),
                                  int(inside.sum()), faces=int(faces[mine].sum()))))

    def preference(item):
        view = item[1]
        area = (view.extents[2] - view.extents[0]) * (view.extents[3] - view.extents[1])
        return (view.swings < 2, -view.faces if view.swings < 2 else 0, -area)
    views.sort(key=preference)
    order = {label: rank for rank, (label, _) in enumerate(views)}
    ranked = np.array([order[label] for label in labels])
    views = [View(view.extents, view.parts, view.swings, chosen=rank == 0, faces=view.faces)
             for rank, (_, view) in enumerate(views)]
    return ranked, views
