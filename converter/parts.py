"""Ragged arrays of plan linework: the form geometry takes between reading and polygons.

A block's geometry is flattened once into `Parts` (block units) and then placed for all of
its INSERTs at once by `Parts.placed`, a numpy affine transform, instead of asking the CAD
library for each INSERT's entities.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

#: Part kinds: open linework, closed linework, the shell and the holes of a filled area, and
#: an ARC entity (open linework that may be a door swing rather than a wall face).
OPEN, CLOSED, SHELL, HOLE, ARC = 0, 1, 2, 3, 4


@dataclass(frozen=True)
class Parts:
    """Polylines in one frame, as one coordinate array.

    Attributes
    ----------
    coords : (K, 2) ndarray of float
        Vertices of every part, one after another.
    offsets : (P + 1,) ndarray of int
        Part i is ``coords[offsets[i]:offsets[i + 1]]``.
    kinds : (P,) ndarray of int8
        OPEN, CLOSED (a ring, last vertex not repeated), SHELL or HOLE. A SHELL's holes
        follow it directly.
    """

    coords: np.ndarray
    offsets: np.ndarray
    kinds: np.ndarray

    @classmethod
    def empty(cls):
        return cls(np.empty((0, 2)), np.zeros(1, dtype=np.int64), np.empty(0, dtype=np.int8))

    @classmethod
    def from_list(cls, polylines, kinds):
        """Build from a list of (N_i, 2) arrays and their kinds."""
        if not polylines:
            return cls.empty()
        lengths = [len(line) for line in polylines]
        offsets = np.zeros(len(lengths) + 1, dtype=np.int64)
        np.cumsum(lengths, out=offsets[1:])
        coords = np.concatenate([np.asarray(line, dtype=float)[:, :2] for line in polylines])
        return cls(coords, offsets, np.asarray(kinds, dtype=np.int8))

    @classmethod
    def concat(cls, many):
        """Join several Parts into one."""
        many = [parts for parts in many if len(parts.kinds)]
        if not many:
            return cls.empty()
        if len(many) == 1:
            return many[0]
        sizes = np.cumsum([0] + [len(parts.coords) for parts in many[:-1]])
        offsets = np.concatenate([many[0].offsets[:1]] + [
            parts.offsets[1:] + size for parts, size in zip(many, sizes)])
        return cls(np.concatenate([parts.coords for parts in many]), offsets,
                   np.concatenate([parts.kinds for parts in many]))

    def __len__(self):
        return len(self.kinds)

    def placed(self, matrices):
        """Return copies of these parts placed by each affine matrix, as one Parts.

        Parameters
        ----------
        matrices : (M, 3, 2) ndarray
            Row-vector affine transforms: ``[x, y, 1] @ matrix``.

        Returns
        -------
        Parts with M * P parts (copy m of part i is part m * P + i).
        """
        matrices = np.asarray(matrices, dtype=float)
        count = len(matrices)
        if count == 0 or not len(self.kinds):
            return Parts.empty()
        placed = np.einsum("kj,mji->mki", self.coords, matrices[:, :2, :]) + matrices[:, None, 2, :]
        size = len(self.coords)
        offsets = (self.offsets[1:][None, :] + size * np.arange(count)[:, None]).ravel()
        return Parts(placed.reshape(-1, 2), np.concatenate([[0], offsets]),
                     np.tile(self.kinds, count))

    def scaled(self, factor, *, grid):
        """Return the parts multiplied by `factor` and snapped to multiples of `grid`."""
        coords = np.round(self.coords * factor / grid) * grid
        return Parts(coords, self.offsets, self.kinds)

    def extents(self):
        """Return (xmin, ymin, xmax, ymax) of all vertices, or None when empty."""
        if not len(self.coords):
            return None
        low, high = self.coords.min(axis=0), self.coords.max(axis=0)
        return (float(low[0]), float(low[1]), float(high[0]), float(high[1]))

    def geometries(self):
        """Return shapely arrays (open lines, closed rings as lines, filled polygons).

        Degenerate parts (fewer distinct vertices than their kind needs) are dropped.
        """
        counts = np.diff(self.offsets)
        index = np.repeat(np.arange(len(self.kinds)), counts)
        keep_open = np.isin(self.kinds, (OPEN, ARC)) & (counts >= 2) | \
            (self.kinds == CLOSED) & (counts == 2)
        keep_closed = (self.kinds == CLOSED) & (counts >= 3)
        result = []
        for keep, build in ((keep_open, shapely.linestrings), (keep_closed, shapely.linearrings)):
            if not keep.any():
                result.append(np.empty(0, dtype=object))
                continue
            mask = keep[index]
            result.append(build(self.coords[mask],
                                indices=np.unique(index[mask], return_inverse=True)[1]))
        result.append(self._polygons(counts, index))
        return tuple(result)

    def arcs(self):
        """Return the ARC parts as an array of open line strings (those of `geometries` too)."""
        counts = np.diff(self.offsets)
        keep = (self.kinds == ARC) & (counts >= 2)
        if not keep.any():
            return np.empty(0, dtype=object)
        index = np.repeat(np.arange(len(self.kinds)), counts)
        mask = keep[index]
        return shapely.linestrings(self.coords[mask],
                                   indices=np.unique(index[mask], return_inverse=True)[1])

    def _polygons(self, counts, index):
        filled = (self.kinds == SHELL) | (self.kinds == HOLE)
        keep = filled & (counts >= 3)
        if not keep.any():
            return np.empty(0, dtype=object)
        polygon_of_part = np.cumsum(self.kinds == SHELL) - 1
        mask = keep[index]
        rings = shapely.linearrings(self.coords[mask],
                                    indices=np.unique(index[mask], return_inverse=True)[1])
        ring_polygon = polygon_of_part[keep]
        polygons = shapely.polygons(rings, indices=np.unique(ring_polygon, return_inverse=True)[1])
        polygons = polygons[~shapely.is_empty(polygons)]
        invalid = ~shapely.is_valid(polygons)
        if invalid.any():  # self-touching hatch rings, bow-tie solids
            polygons[invalid] = shapely.make_valid(polygons[invalid])
        return polygons

    def part_bounds(self):
        """Return each part's (xmin, ymin, xmax, ymax), shape (P, 4)."""
        if not len(self.kinds):
            return np.empty((0, 4))
        starts = self.offsets[:-1]
        counts = np.diff(self.offsets)
        nonempty = counts > 0
        result = np.full((len(self.kinds), 4), np.nan)
        if nonempty.any():
            low = np.minimum.reduceat(self.coords, starts[nonempty], axis=0)
            high = np.maximum.reduceat(self.coords, starts[nonempty], axis=0)
            result[nonempty] = np.hstack([low, high])
        return result

    def select(self, keep):
        """Return the parts where boolean `keep` (P,) is True; a hole goes with its shell."""
        keep = np.asarray(keep, dtype=bool).copy()
        if not len(self.kinds):
            return self
        shell_of = np.maximum.accumulate(np.where(self.kinds == SHELL,
                                                  np.arange(len(self.kinds)), -1))
        holes = (self.kinds == HOLE) & (shell_of >= 0)
        keep[holes] = keep[shell_of[holes]]
        counts = np.diff(self.offsets)
        vertex_keep = np.repeat(keep, counts)
        offsets = np.zeros(int(keep.sum()) + 1, dtype=np.int64)
        np.cumsum(counts[keep], out=offsets[1:])
        return Parts(self.coords[vertex_keep], offsets, self.kinds[keep])
