"""Join stations (docks, chargers, pick stations) to the lanes by straight, clear links.

A station joins the nearest point of a lane that it can reach by a straight segment clear of
obstacles by at least the required clearance c along its whole length (checked by exact
distances every 2 cm). Where several points are equally near (within 1 mm), an existing
node (a lane's end) wins, then the lower (x, y), which is the lower node id. A link that
would meet its lane within 0.1 m of an existing node meets that node instead, when the
longer link stays clear too.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from clearway.roadmap.clearance import ClearanceField, sample_lines

#: A station this close to a lane splits the lane itself, metres.
ON_LANE = 1e-3
#: Candidate points farther than the nearest visible one by less than this tie, metres.
TIE = 1e-3
#: Links are checked for clearance every LINK_STEP metres.
LINK_STEP = 0.02
#: Candidate points are taken every CANDIDATE_STEP metres along nearby lanes.
CANDIDATE_STEP = 0.1
#: A link that would meet a lane this close to an existing node meets the node instead,
#: metres: a lane stub of a few centimetres between a link node and a junction is noise
#: to fleet software, and the link grows by at most this much.
NODE_SNAP = 0.1

REASON_BAND = "inside an obstacle's clearance band"
REASON_OFF_FLOOR = "not on the free floor (drawn inside an obstacle or outside the building)"
REASON_NO_LANE = "its region has no lane"
REASON_NO_LINK = "no straight clear link to a lane"


@dataclass(frozen=True)
class Attachment:
    """Where a station joins: lane index, point on it (local frame, metres), distance along."""

    lane: int
    x: float
    y: float
    along: float
    on_lane: bool


def containing_region(points: np.ndarray, regions: np.ndarray) -> np.ndarray:
    """Index of the drivable region holding each point (N, 2), -1 where none (1 mm slack).

    The lowest index wins where regions overlap or share a border. Points inside a region
    are found with prepared point-in-polygon tests, one vectorized call per region on the
    points within its bounds, which come from the points sorted by x (a slab of the sorted
    order, then its y range), not from a pass over every point; only the rest take the
    slower 1 mm distance test.

    Examples
    --------
    >>> rooms = np.array([shapely.box(0, 0, 2, 2), shapely.box(2, 0, 4, 2)])
    >>> containing_region(np.array([[1, 1], [2, 1], [4.0005, 1], [5, 1]]), rooms).tolist()
    [0, 0, 1, -1]
    """
    points = np.asarray(points, dtype=float).reshape(-1, 2)
    result = np.full(len(points), -1, dtype=np.int64)
    if len(regions) == 0 or len(points) == 0:
        return result
    bounds = shapely.bounds(regions)
    by_x = np.argsort(points[:, 0], kind="stable")
    first = np.searchsorted(points[by_x, 0], bounds[:, 0], "left")
    stop = np.searchsorted(points[by_x, 0], bounds[:, 2], "right")
    for index in np.flatnonzero(stop > first).tolist():
        slab = by_x[first[index]:stop[index]]
        y = points[slab, 1]
        near = slab[(result[slab] < 0) & (y >= bounds[index, 1]) & (y <= bounds[index, 3])]
        if len(near):
            region = regions[index]
            shapely.prepare(region)
            inside = shapely.contains_xy(region, points[near, 0], points[near, 1])
            result[near[inside]] = index
    rest = np.flatnonzero(result < 0)
    if len(rest) == 0:
        return result
    tree = shapely.STRtree(regions)
    point_index, region_index = tree.query(shapely.points(points[rest]), predicate="dwithin",
                                           distance=ON_LANE)
    _lowest(result, rest, point_index, region_index)
    return result


def _lowest(result, rows, point_index, region_index) -> None:
    """Set result[rows[p]] to the lowest region index paired with each point p."""
    if len(point_index) == 0:
        return
    order = np.lexsort((region_index, point_index))
    point_index, region_index = point_index[order], region_index[order]
    first = np.r_[True, point_index[1:] != point_index[:-1]]
    result[rows[point_index[first]]] = region_index[first]


def _candidates(point, lanes, chosen, radius):
    """Candidate lane points near `point`: each lane's nearest point and its samples."""
    subset = lanes[chosen]
    nearest = shapely.get_coordinates(
        shapely.line_interpolate_point(subset, shapely.line_locate_point(subset, point)))
    dense = shapely.segmentize(subset, CANDIDATE_STEP)
    xy, owner = shapely.get_coordinates(dense, return_index=True)
    near = np.hypot(*(xy - shapely.get_coordinates(point)[0]).T) <= radius
    points = np.concatenate([nearest, xy[near]])
    owners = np.concatenate([chosen, chosen[owner[near]]])
    return points, owners


def _visible(here, points, field, clearance):
    """Whether the straight links from `here` to each of `points` (M, 2) stay clear."""
    result = np.hypot(*(points - here).T) <= ON_LANE
    far = np.flatnonzero(~result)
    if len(far):
        links = shapely.linestrings(
            np.stack([np.broadcast_to(here, points[far].shape), points[far]], 1))
        xy, owner = sample_lines(links, LINK_STEP)
        need = np.minimum(clearance, field.at(points[far])) - 1e-9
        short = ~field.at_least(xy, need[owner])
        result[far] = np.bincount(owner[short], minlength=len(far)) == 0
    return result


def _snap_to_node(here, point, lane_ends, distance, field, clearance):
    """Return `point`, or the lane end (2, 2) within NODE_SNAP of it when the link stays clear.

    A station standing on the lane (within ON_LANE) keeps its own point: it splits the lane.
    """
    gaps = np.hypot(*(lane_ends - point).T)
    nearest = lane_ends[int(np.argmin(gaps))]
    if distance <= ON_LANE or gaps.min() > NODE_SNAP or gaps.min() <= TIE:
        return point
    return nearest if _visible(here, nearest[None], field, clearance)[0] else point


def _nearest_distance(point, lanes, mine, tree) -> float:
    """Distance from `point` to its nearest lane among `mine` (a boolean mask of lanes).

    The same float as the least ``shapely.distance`` to every lane of `mine`: the lanes of
    `mine` within 1 um of the nearest lane of all hold the least one when there are any.
    """
    _, gap = tree.query_nearest(point, return_distance=True, all_matches=False)
    near = tree.query(point, predicate="dwithin", distance=float(gap[0]) + 1e-6)
    near = near[mine[near]]
    if len(near) == 0:
        near = np.flatnonzero(mine)
    return float(shapely.distance(point, lanes[near]).min())


def _attach(point, lanes, mine, tree, ends, field, clearance):
    here = shapely.get_coordinates(point)[0]
    radius = _nearest_distance(point, lanes, mine, tree) + 1.0
    total = np.count_nonzero(mine)
    while True:
        chosen = tree.query(point, predicate="dwithin", distance=radius)
        chosen = np.unique(chosen[mine[chosen]])
        points, owners = _candidates(point, lanes, chosen, radius)
        distance = np.hypot(*(points - here).T)
        order = np.lexsort((points[:, 1], points[:, 0], distance))
        points, owners, distance = points[order], owners[order], distance[order]
        for start in range(0, len(points), 32):
            visible = np.flatnonzero(_visible(here, points[start:start + 32], field, clearance))
            if len(visible) == 0:
                continue
            best = start + visible[0]
            tied = np.arange(best, np.searchsorted(distance, distance[best] + TIE, "right"))
            tied = tied[_visible(here, points[tied], field, clearance)]
            at_node = np.array([np.hypot(*(ends[owners[i]] - points[i]).T).min() <= TIE
                                for i in tied])
            pool = tied[at_node] if at_node.any() else tied
            pick = pool[np.lexsort((points[pool, 1], points[pool, 0]))[0]]
            x, y = _snap_to_node(here, points[pick], ends[owners[pick]], distance[pick],
                                 field, clearance)
            line = lanes[owners[pick]]
            return Attachment(int(owners[pick]), float(x), float(y),
                              float(shapely.line_locate_point(line, shapely.Point(x, y))),
                              bool(distance[pick] <= ON_LANE))
        if len(chosen) == total:
            return None
        radius *= 3.0


def link_stations(stations: np.ndarray, lanes: np.ndarray, lane_region: np.ndarray,
                  regions: np.ndarray, field: ClearanceField, free_space,
                  clearance: float) -> list[Attachment | str]:
    """Find where each station joins a lane, or why it cannot.

    Parameters
    ----------
    stations : (N, 2) float ndarray, metres (local frame)
    lanes : (L,) object ndarray of LineString, metres
    lane_region : (L,) int ndarray, the drivable region of each lane
    regions : (K,) object ndarray of Polygon, the drivable regions
    field : ClearanceField
    free_space : Polygon or MultiPolygon
    clearance : float, required clearance c, metres

    Returns
    -------
    list of Attachment, or of a one-line reason (str), one per station.
    """
    stations = np.asarray(stations, dtype=float).reshape(-1, 2)
    if len(stations) == 0:
        return []
    tree = shapely.STRtree(lanes)
    ends = np.stack([shapely.get_coordinates(shapely.get_point(lanes, 0)),
                     shapely.get_coordinates(shapely.get_point(lanes, -1))], 1) \
        if len(lanes) else np.zeros((0, 2, 2))
    station_clearance = field.at(stations)
    shapely.prepare(free_space)
    inside = shapely.contains_xy(free_space, stations[:, 0], stations[:, 1])
    region = containing_region(stations, regions)
    results: list[Attachment | str] = []
    for index, here in enumerate(stations):
        if not inside[index]:
            results.append(REASON_OFF_FLOOR)
            continue
        if station_clearance[index] < clearance - 1e-9:
            results.append(REASON_BAND)
            continue
        mine = lane_region == region[index]
        if region[index] < 0 or not mine.any():
            results.append(REASON_NO_LANE)
            continue
        found = _attach(shapely.Point(here), lanes, mine, tree, ends, field, clearance)
        results.append(found if found is not None else REASON_NO_LINK)
    return results
