"""Join stations (docks, chargers, pick stations) to the lanes by straight, clear links.

A station joins the nearest point of a lane that it can reach by a straight segment clear of
obstacles by at least the required clearance c along its whole length (checked by exact
distances every 2 cm). Where several points are equally near (within 1 mm), an existing
node (a lane's end) wins, then the lower (x, y), which is the lower node id. A link that
would meet its lane within 0.1 m of an existing node meets that node instead, when the
longer link stays clear too.

A station drawn as a block marks its equipment (a charger on the wall, a dock leveller, a
pick table), not where the robot stands. When such a block lies in the clearance band, or a
little way inside the obstacle it is mounted on, the robot stands at the nearest point ahead
of it along its heading that keeps the required clearance (`standing_points`), or, when its
heading leads nowhere clear, at the nearest such point in any direction; the lanes end
there, and the last stretch onto the equipment is the robot's own docking move, which this
graph does not check. A station drawn as a point or circle is where the robot stands.
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

#: A block station may lie this far inside the obstacle it is mounted on, metres (a charger
#: inserted on a wall's centre line); its standing point lies at most this much farther out
#: than the required clearance.
MOUNT_DEPTH = 0.5
#: Standing points are searched at this step along each direction, metres, and the nearest
#: one is then bisected to STANDOFF_TOLERANCE.
STANDOFF_STEP = 0.01
STANDOFF_TOLERANCE = 1e-4
#: Directions tried when the heading leads nowhere clear (every 5 degrees).
STANDOFF_DIRECTIONS = 72

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


#: Candidates whose links are tested together, nearest first: the first alone (it is seen
#: from most stations), then batches growing to LINK_BATCH.
LINK_BATCH = 32


def _batches(count: int):
    """(start, stop) of the batches of `count` candidates, nearest first: 1, 3, 12, then
    LINK_BATCH at a time. Whether a link is clear is a test of that link alone, so the batches
    decide only how much is tested before the first clear link is found.

    >>> list(_batches(50))
    [(0, 1), (1, 4), (4, 16), (16, 48), (48, 50)]
    """
    start, size = 0, 1
    while start < count:
        yield start, min(start + size, count)
        start += size
        size = min(4 * size if size > 1 else 3, LINK_BATCH)


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
        for start, stop in _batches(len(points)):
            seen = _visible(here, points[start:stop], field, clearance)
            visible = np.flatnonzero(seen)
            if len(visible) == 0:
                continue
            best = start + visible[0]
            tied = np.arange(best, np.searchsorted(distance, distance[best] + TIE, "right"))
            # the links of this batch are tested already; only the tied ones beyond it are not
            clear = np.zeros(len(tied), dtype=bool)
            within = tied < stop
            clear[within] = seen[tied[within] - start]
            if not within.all():
                clear[~within] = _visible(here, points[tied[~within]], field, clearance)
            tied = tied[clear]
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


def standing_points(stations: np.ndarray, headings, field: ClearanceField, free_space,
                    clearance: float) -> tuple[np.ndarray, np.ndarray]:
    """Where the robot stands at each station, and how far that is from the drawn point.

    Parameters
    ----------
    stations : (N, 2) float ndarray, drawn positions, metres (local frame)
    headings : sequence of float or None, degrees counter-clockwise from +X; None for a
        station drawn as a point or circle, which is where the robot stands
    field : ClearanceField
    free_space : Polygon or MultiPolygon (prepared or not)
    clearance : float, required clearance c, metres

    Returns
    -------
    (N, 2) float ndarray of standing points and (N,) float ndarray of standoffs, metres. A
    station on the free floor with clearance c, a point station, and a block with no
    standing point within c + MOUNT_DEPTH keep their drawn point and a standoff of 0.

    Examples
    --------
    >>> from clearway.roadmap.clearance import clearance_field
    >>> room = shapely.box(0, 0, 4, 3)
    >>> field = clearance_field(np.array(shapely.get_coordinates(room.boundary))[
    ...     np.arange(4)[:, None] + [0, 1]])
    >>> xy, standoff = standing_points(np.array([[0.1, 1.5]]), [0.0], field, room, 0.45)
    >>> xy.round(4).tolist(), round(float(standoff[0]), 4)
    ([[0.45, 1.5]], 0.35)
    """
    stations = np.asarray(stations, dtype=float).reshape(-1, 2)
    result, standoff = stations.copy(), np.zeros(len(stations))
    todo = [i for i, heading in enumerate(headings) if heading is not None]
    if not todo:
        return result, standoff
    shapely.prepare(free_space)

    def clear(xy):
        xy = xy.reshape(-1, 2)
        return shapely.contains_xy(free_space, xy[:, 0], xy[:, 1]) & \
            field.at_least(xy, clearance - 1e-9)

    settled = clear(stations[todo])
    steps = np.arange(0.0, clearance + MOUNT_DEPTH + STANDOFF_STEP / 2, STANDOFF_STEP)
    for index in (i for i, ok in zip(todo, settled) if not ok):
        here = stations[index]
        angles = np.radians(float(headings[index])
                            + np.arange(STANDOFF_DIRECTIONS) * 360.0 / STANDOFF_DIRECTIONS)
        ways = np.column_stack([np.cos(angles), np.sin(angles)])
        points = here + steps[None, :, None] * ways[:, None, :]
        inside = shapely.contains_xy(free_space, points[..., 0], points[..., 1])
        good = inside.copy()
        good[inside] = field.at_least(points[inside], clearance - 1e-9)
        found = []
        for way in range(STANDOFF_DIRECTIONS):
            entry = int(np.argmax(inside[way]))
            if not inside[way, entry] or steps[entry] > MOUNT_DEPTH:
                continue
            hits = np.flatnonzero(good[way, entry:])
            if len(hits) == 0 or not inside[way, entry:entry + hits[0] + 1].all():
                continue
            found.append((way != 0, entry + int(hits[0]), way, entry))
        for _, stop, way, entry in sorted(found):
            low, high = steps[max(stop - 1, entry)], steps[stop]
            if stop > entry:
                while high - low > STANDOFF_TOLERANCE:
                    middle = (low + high) / 2.0
                    low, high = (low, middle) if clear(here + middle * ways[way])[0] \
                        else (middle, high)
            point = here + high * ways[way]
            if shapely.covers(free_space, shapely.LineString([here + steps[entry] * ways[way],
                                                              point])):
                result[index], standoff[index] = point, high
                break
    return result, standoff


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
