"""Helpers of the opening search (converter/openings.py) against shapely as the reference."""

import numpy as np
import shapely

from clearway.converter.openings import _nearest_pairs, _split_by_query, line_ends
from clearway.converter import polygons


def test_line_ends_match_shapely_get_point():
    rng = np.random.default_rng(3)
    lines = np.array([shapely.LineString(rng.uniform(0, 10, size=(int(n), 2)))
                      for n in rng.integers(2, 7, size=50)])
    first, second, last, before = line_ends(lines)
    # source: shapely.get_point (negative indices count from the end)
    for found, index in ((first, 0), (second, 1), (last, -1), (before, -2)):
        assert (found == shapely.get_coordinates(shapely.get_point(lines, index))).all()


def test_nearest_pairs_keep_each_rays_first_hit():
    rng = np.random.default_rng(7)
    corners = rng.uniform(0, 20, size=(40, 2))
    sizes = rng.uniform(0.2, 5, size=(40, 2))
    walls = shapely.get_parts(shapely.boundary(shapely.union_all(
        shapely.box(*corners.T, *(corners + sizes).T))))
    segments = polygons.segments(walls)
    # a ray along a segment (collinear) and rays from everywhere in every direction
    origins = np.concatenate([[[-1.0, 0.0]], rng.uniform(-2, 22, size=(400, 2))])
    angles = rng.uniform(0, 2 * np.pi, size=len(origins))
    directions = np.c_[np.cos(angles), np.sin(angles)]
    first = shapely.get_coordinates(shapely.get_point(segments[:1], 0))[0]
    second = shapely.get_coordinates(shapely.get_point(segments[:1], 1))[0]
    directions[0] = (second - first) / np.hypot(*(second - first))
    origins[0] = first - directions[0]
    rays = shapely.linestrings(np.stack([origins, origins + directions * 30.0], axis=1))
    ray, segment = shapely.STRtree(segments).query(rays, predicate="intersects")
    keep = _nearest_pairs(origins, directions, segments, ray, segment)

    def first_hits(pairs):
        points, hit = shapely.get_coordinates(
            shapely.intersection(rays[ray[pairs]], segments[segment[pairs]]), return_index=True)
        owner = ray[pairs][hit]
        along = np.einsum("ij,ij->i", points - origins[owner], directions[owner])
        result = np.full(len(rays), np.inf)
        np.minimum.at(result, owner, along)
        return result

    # source: shapely's intersection of every (ray, segment) pair is the reference
    everything = first_hits(np.ones(len(ray), dtype=bool))
    assert np.isfinite(everything).sum() > 100 and keep.sum() < 0.8 * len(keep)
    assert (first_hits(keep) == everything).all()


def test_split_by_query_matches_one_query_per_geometry():
    rng = np.random.default_rng(5)
    boxes = np.array([shapely.box(x, y, x + 1, y + 1) for x, y in rng.uniform(0, 10, (60, 2))])
    tree = shapely.STRtree(boxes)
    probes = shapely.buffer(shapely.points(rng.uniform(0, 11, (30, 2))), 0.7)
    probes[3] = shapely.Point(-50, -50).buffer(0.1)      # meets nothing
    found = _split_by_query(tree, probes)
    # source: shapely's STRtree.query of each probe alone is the reference
    assert len(found) == len(probes) and len(found[3]) == 0
    for probe, indices in zip(probes, found):
        assert sorted(indices) == sorted(tree.query(probe, predicate="intersects"))
