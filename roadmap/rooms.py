"""Rooms: the free floor split at passable openings and at narrowings of the lanes.

A room is a face of the free floor cut along the jamb-to-jamb line of every passable interior
opening (a door or an open gap) and, in open plans, along the critical lines of the medial
axis: where a lane between two obstacles passes a local minimum of clearance that is markedly
lower than the clearance on both sides [Thr98]_. The cut lines and the floor's outline are
noded and polygonized, so every point of the free floor lies in exactly one room (up to the
cut lines themselves). Rooms are named from the texts inside them.

References
----------
.. [Thr98] S. Thrun, "Learning metric-topological maps for indoor mobile robot navigation",
   Artificial Intelligence 99(1), 1998, sec. 3 (critical points and critical lines).
"""

from __future__ import annotations

import re
from dataclasses import dataclass

import numpy as np
import shapely

from clearway.roadmap.graph import chain_lanes
from clearway.roadmap.stations import containing_region

#: Cut lines reach this far past each jamb into the wall, metres, so that they cross the
#: floor's outline even where the jamb is drawn a hair short.
EXTEND = 0.05
#: A local minimum of clearance is a narrowing when the lane rises to at least this many
#: times its clearance on both sides (a doorway 0.9 m wide between rooms at least 1.35 m
#: wide; from practice with open plans, not a standard).
NARROWING_RATIO = 1.5
#: Narrowings with less clearance than this (gaps under 0.2 m) are drafting slivers, metres.
NARROWING_FLOOR = 0.1
#: Faces smaller than this (m^2) are slivers of a cut and join their neighbour.
SLIVER = 1e-3
#: Largest room, m², that a station's label alone may name: a charger closet or a store
#: room named by the one station in it, not a hall holding one charger (common practice).
STATION_ROOM_AREA = 100.0
#: Layer names that hold annotation (room names and numbers) in common layer conventions.
ANNOTATION_LAYER = re.compile(r"anno|text|txt|room|raum|name|num|iden|label|tag|space|nplt",
                              re.IGNORECASE)


@dataclass(frozen=True)
class Cut:
    """A line along which the floor was split: an opening of the drawing or a narrowing.

    start, end : (2,) metres (local frame); width : clear width, metres;
    opening : index into the given openings, -1 for a narrowing.
    """

    start: tuple[float, float]
    end: tuple[float, float]
    width: float
    opening: int


def opening_cuts(openings, offset) -> list[Cut]:
    """Cut lines of the passable interior openings, extended EXTEND into both walls."""
    cuts = []
    shift = np.asarray(offset, dtype=float)
    for index, opening in enumerate(openings):
        if not opening.passable or opening.exterior:
            continue
        start = np.asarray(opening.start, dtype=float) - shift
        end = np.asarray(opening.end, dtype=float) - shift
        span = float(np.hypot(*(end - start)))
        if span <= 0:
            continue
        along = (end - start) / span
        cuts.append(Cut(tuple(start - EXTEND * along), tuple(end + EXTEND * along),
                        float(opening.width), index))
    return cuts


def _segmented_max(values: np.ndarray, segment: np.ndarray) -> np.ndarray:
    """Running maximum of `values` restarting at every new `segment` id (ids ascending)."""
    if len(values) == 0:
        return values
    big = float(values.max() - min(values.min(), 0.0) + 1.0)
    lifted = values + segment * big
    return np.maximum.accumulate(lifted) - segment * big


def narrowings(vertices, clearance, edges, *, avoid=(), ratio: float = NARROWING_RATIO,
               floor: float = NARROWING_FLOOR) -> list[Cut]:
    """Critical lines of the medial axis: one per lane at its significant clearance minimum.

    Parameters
    ----------
    vertices : (V, 2) metres; clearance : (V,) metres; edges : (E, 2) int
        The medial axis (local frame).
    avoid : sequence of Cut
        Cuts already made (openings); a narrowing within its clearance of one is the same
        doorway and is skipped.

    Returns
    -------
    list of Cut, perpendicular to the lane through the minimum, reaching EXTEND past the
    two nearest obstacles.
    """
    keep = clearance >= floor
    if not keep.any() or len(edges) == 0:
        return []
    index = np.flatnonzero(keep)
    renumber = np.cumsum(keep) - 1
    sub_edges = renumber[edges[keep[edges].all(axis=1)]]
    if len(sub_edges) == 0:
        return []
    chains = chain_lanes(len(index), sub_edges)
    order = index[chains.order]
    lane = np.repeat(np.arange(len(chains)), np.diff(chains.offsets))
    values = clearance[order]
    before = _segmented_max(values, lane)
    after = _segmented_max(values[::-1], lane[::-1] * -1 + lane.max())[::-1]
    first = np.zeros(len(order), bool)
    first[chains.offsets[:-1]] = True
    last = np.zeros(len(order), bool)
    last[chains.offsets[1:] - 1] = True
    interior = ~first & ~last
    candidate = interior & (before >= ratio * values) & (after >= ratio * values)
    # each lane's lowest candidate, its lower (x, y) on ties
    mine = np.flatnonzero(candidate)
    mine = mine[np.lexsort((vertices[order[mine], 1], vertices[order[mine], 0], values[mine],
                            lane[mine]))]
    picks = mine[np.r_[True, lane[mine][1:] != lane[mine][:-1]]] if len(mine) else mine
    near = _near_any(vertices[order[picks]], values[picks] + EXTEND, avoid)
    cuts = []
    for pick in picks[~near]:
        point, half = vertices[order[pick]], float(values[pick])
        direction = vertices[order[pick + 1]] - vertices[order[pick - 1]]
        length = float(np.hypot(*direction))
        if length <= 0:
            continue
        normal = np.array([-direction[1], direction[0]]) / length
        reach = half + EXTEND
        cuts.append(Cut(tuple(point - reach * normal), tuple(point + reach * normal),
                        2 * half, -1))
    return cuts


def _near_any(points: np.ndarray, reach: np.ndarray, cuts) -> np.ndarray:
    """(P,) bool: whether each of `points` (P, 2) lies within its `reach` of any of `cuts`.

    The pairs to measure come from an R-tree of the cuts (within the reach plus 1 um, far
    above the rounding of either distance); each is then measured by its projection on
    the cut.
    """
    near = np.zeros(len(points), bool)
    if len(points) == 0 or not cuts:
        return near
    starts = np.array([cut.start for cut in cuts], dtype=float).reshape(-1, 2)
    ends = np.array([cut.end for cut in cuts], dtype=float).reshape(-1, 2)
    tree = shapely.STRtree(shapely.linestrings(np.stack([starts, ends], axis=1)))
    point, cut = tree.query(shapely.points(points), predicate="dwithin",
                            distance=np.asarray(reach, dtype=float) + 1e-6)
    spans = ends - starts
    squared = np.array([max(float(span @ span), 1e-24) for span in spans])
    span = spans[cut]
    offset = points[point] - starts[cut]
    t = np.clip((offset[:, 0] * span[:, 0] + offset[:, 1] * span[:, 1]) / squared[cut],
                0.0, 1.0)
    close = (np.hypot(offset[:, 0] - t * span[:, 0], offset[:, 1] - t * span[:, 1])
             <= np.asarray(reach, dtype=float)[point])
    near[point[close]] = True
    return near


def split_floor(free_space, cuts) -> np.ndarray:
    """Split `free_space` (local frame) along `cuts`; return the rooms, (R,) Polygon.

    Faces of the noded outline and cut lines that lie in the free floor; slivers under
    SLIVER m^2 join the neighbour they share the longest border with.
    """
    parts = shapely.get_parts(free_space)
    parts = parts[shapely.area(parts) > 0]
    if not cuts:
        return parts
    lines = shapely.linestrings([[c.start, c.end] for c in cuts])
    # the parts are the query's side: each is prepared once, however many cuts it meets
    part_index, line_index = shapely.STRtree(lines).query(parts, predicate="intersects")
    order = np.lexsort((line_index, part_index))
    part_index, line_index = part_index[order], line_index[order]
    touched = np.zeros(len(parts), bool)
    touched[part_index] = True
    rooms = list(parts[~touched])
    for index in np.flatnonzero(touched):
        part = parts[index]
        mine = lines[line_index[part_index == index]]
        noded = shapely.union_all(np.r_[shapely.boundary(part), mine])
        faces = shapely.get_parts(shapely.polygonize(shapely.get_parts(noded)))
        inside = shapely.contains_xy(part, *shapely.get_coordinates(
            shapely.point_on_surface(faces)).T) if len(faces) else np.zeros(0, bool)
        faces = list(faces[inside])
        faces = _merge_slivers(faces)
        rooms.extend(faces if faces else [part])
    return np.array(rooms, dtype=object)


def _merge_slivers(faces: list) -> list:
    small = [f for f in faces if f.area < SLIVER]
    large = [f for f in faces if f.area >= SLIVER]
    if not large:
        return faces
    for sliver in small:
        shared = [shapely.length(shapely.intersection(sliver.boundary, f.boundary))
                  for f in large]
        best = int(np.argmax(shared))
        merged = shapely.union(large[best], sliver)
        if merged.geom_type == "Polygon":
            large[best] = merged
    return large


def locate(points, rooms: np.ndarray, *, slack: float = 0.0) -> np.ndarray:
    """Index of the room holding each point (N, 2), -1 where none; lowest index on borders.

    As ``containing_region`` (1 mm slack); with `slack` > 0, the points still outside every
    room take the nearest room within `slack` metres.
    """
    result = containing_region(points, rooms)
    rest = np.flatnonzero(result < 0)
    if slack > 0 and len(rest) and len(rooms):
        points = np.asarray(points, dtype=float).reshape(-1, 2)
        found, nearest = shapely.STRtree(rooms).query_nearest(
            shapely.points(points[rest]), max_distance=slack, all_matches=False)
        result[rest[found]] = nearest
    return result


#: A door tag giving width and height in feet and inches (3068 = 3'0" x 6'8", 16070 = a
#: 16'0" x 7'0" overhead door; common practice in US plans).
DOOR_TAG = re.compile(r"^(?:[1-9]|1\d)\d[6-8]\d$")
#: An area label beside a room's name (71.25 m², 18,0 m2, 859 SQ. FT., 859 SF, 859 ft²;
#: common practice): a measurement, not the room's name.
AREA_LABEL = re.compile(r"^\s*(?:A\s*=\s*)?\d[\d,.' ]*\s*(?:m²|m2|sq\.?\s*m|sq\.?\s*ft\.?|sf|ft²|ft2)\s*$",
                        re.IGNORECASE)


def room_names(rooms: np.ndarray, texts, offset, openings=(),
               station_labels=()) -> list[tuple[str, ...]]:
    """The texts inside each room: annotation layers first, then by height, largest first.

    Texts of several lines keep their lines joined by a space; empty texts, repeats and
    lines that are area labels (`AREA_LABEL`) are left out, and so are door tags (`DOOR_TAG`) standing within 1.5 m of a door among
    `openings` (drawing frame, like the texts). A text that reads as one of
    `station_labels` labels its station: it names a room only that has no other text and
    no other station label and is no larger than STATION_ROOM_AREA (a charger closet called
    CHARGER), never a hall of chargers and docks ("C1 C2 D1 D2") nor a hall holding one.

    Examples
    --------
    >>> [bool(DOOR_TAG.match(text)) for text in ("3068", "2468", "16070", "101", "2.14", "1204")]
    [True, True, True, False, False, False]
    >>> [bool(AREA_LABEL.match(text)) for text in ("71.25 m²", "859 SQ. FT.", "12 m2", "ROOM 12")]
    [True, True, True, False]
    """
    names: list[list] = [[] for _ in range(len(rooms))]
    texts = [t for t in texts if str(t.text).strip()]
    doors = np.array([(o.x, o.y) for o in openings if o.kind == "door"], dtype=float).reshape(-1, 2)
    if len(doors):
        texts = [t for t in texts if not (DOOR_TAG.match(str(t.text).strip()) and
                                           np.hypot(*(doors - (t.x, t.y)).T).min() <= 1.5)]
    if not texts:
        return [() for _ in rooms]
    xy = np.array([(t.x, t.y) for t in texts], dtype=float) - np.asarray(offset, dtype=float)
    owner = locate(xy, rooms)
    for text, room in zip(texts, owner):
        if room >= 0:
            names[room].append(text)
    labels = {" ".join(str(label).split()) for label in station_labels}
    small = shapely.area(rooms) <= STATION_ROOM_AREA
    result = []
    for mine, closet in zip(names, small):
        mine.sort(key=lambda t: (not ANNOTATION_LAYER.search(t.layer or ""), -float(t.height),
                                 -float(t.y), float(t.x)))
        seen: list[str] = []
        for text in mine:
            label = " ".join(" ".join(line for line in str(text.text).splitlines()
                                      if not AREA_LABEL.match(line)).split())
            if label and label not in seen:
                seen.append(label)
        named = [label for label in seen if label not in labels]
        result.append(tuple(named if named or len(seen) > 1 or not closet else seen))
    return result


def room_seeds(rooms: np.ndarray, vertices, clearance, usable, threshold: float, *,
               degree, lane_degree, tie: float = 1e-3) -> np.ndarray:
    """Per room, its room node: a usable lane vertex of greatest clearance inside it.

    Vertices within `tie` metres of a room's greatest clearance tie (a room's axis often
    has a plateau). Among them a vertex already on the pruned lanes (`lane_degree` > 0)
    wins, a lane's end or junction first, so that a lane that reaches the room is used as
    it is; then a junction of the whole axis (`degree` >= 3, a room's centre); then the
    lower (x, y), so the choice is deterministic.

    Returns
    -------
    (R,) int ndarray, the vertex of each room, -1 where none is usable
    """
    seeds = np.full(len(rooms), -1, dtype=np.int64)
    candidates = np.flatnonzero(usable & (clearance >= threshold))
    owner = locate(vertices[candidates], rooms) if len(candidates) else candidates
    candidates, owner = candidates[owner >= 0], owner[owner >= 0]
    if len(candidates) == 0:
        return seeds
    best = np.full(len(rooms), -np.inf)
    np.maximum.at(best, owner, clearance[candidates])
    near = clearance[candidates] >= best[owner] - tie
    on_lane = lane_degree[candidates] > 0
    lane_end = on_lane & (lane_degree[candidates] != 2)
    junction = degree[candidates] >= 3
    order = np.lexsort((vertices[candidates, 1], vertices[candidates, 0],
                        -clearance[candidates], ~junction, ~lane_end, ~on_lane, ~near, owner))
    owner_sorted = owner[order]
    first = np.r_[True, owner_sorted[1:] != owner_sorted[:-1]]
    seeds[owner_sorted[first]] = candidates[order[first]]
    return seeds


def _probe_sides(start, end, distance):
    """Two points `distance` metres either side of the middle of the segment start-end."""
    start, end = np.asarray(start, float), np.asarray(end, float)
    span = end - start
    length = float(np.hypot(*span))
    middle = (start + end) / 2
    if length <= 0:
        return np.vstack([middle, middle])
    normal = np.array([-span[1], span[0]]) / length
    return np.vstack([middle - distance * normal, middle + distance * normal])


def passage_rooms(openings, narrowing_cuts, rooms, offset) -> list[tuple[int, ...]]:
    """The rooms either side of each opening (all kinds), then of each narrowing.

    A cut's sides are probed 2 cm off its middle; a closed opening's (a window's) from the
    faces of its wall, half its depth plus 5 cm off.
    """
    shift = np.asarray(offset, dtype=float)
    probes = []
    for opening in openings:
        cut = opening.passable and not opening.exterior
        distance = 0.02 if cut else float(opening.depth) / 2 + 0.05
        probes.append(_probe_sides(np.asarray(opening.start) - shift,
                                   np.asarray(opening.end) - shift, distance))
    for cut in narrowing_cuts:
        probes.append(_probe_sides(cut.start, cut.end, 0.02))
    if not probes:
        return []
    owner = locate(np.vstack(probes), rooms, slack=0.1).reshape(-1, 2)
    return [tuple(sorted({int(r) for r in pair if r >= 0})) for pair in owner]


def describe_rooms(rooms, seeds, names, cuts, openings, graph, vertices, regions, offset,
                   clearance: float):
    """The Room and Passage values of the roadmap; sets node attributes in `graph`.

    Every node gets ``room`` (the id of the room it stands in, "" outside every room); each
    room node also ``room_node`` (that room's id) and, when the room has names,
    ``room_names`` (the names one a line: a name never holds a line break).

    Parameters
    ----------
    rooms : (R,) Polygon, local frame; seeds : (R,) lane vertex per room, -1 where none
    names : list of tuple of str per room; cuts : the narrowing cuts (local frame)
    openings : the drawing's openings (drawing frame)
    graph : networkx.MultiGraph in the drawing frame, node ids assigned
    vertices : (V, 2) lane vertices (local frame); regions : (K,) drivable regions (local)
    clearance : required clearance c, metres

    Returns
    -------
    rooms : tuple of Room, sorted by id; passages : tuple of Passage
    """
    from clearway.roadmap.inflate import to_drawing
    from clearway.roadmap.model import Passage, Room

    shift = np.asarray(offset, dtype=float)
    anchor = np.array([vertices[s] if s >= 0 else shapely.get_coordinates(
        shapely.point_on_surface(room))[0] for s, room in zip(seeds, rooms)]).reshape(-1, 2)
    order = np.lexsort((anchor[:, 1], anchor[:, 0]))
    room_id = np.empty(len(rooms), dtype=object)
    room_id[order] = [f"r{k}" for k in range(len(rooms))]
    # which graph node stands at each seed
    nodes = list(graph.nodes)
    node_xy = np.array([(graph.nodes[n]["x"], graph.nodes[n]["y"]) for n in nodes],
                       dtype=float).reshape(-1, 2) - shift
    owner = locate(node_xy, rooms, slack=0.01)
    for node, room in zip(nodes, owner):
        graph.nodes[node]["room"] = room_id[room] if room >= 0 else ""
    at_node = {tuple(np.round(xy, 6)): n for xy, n in zip(node_xy, nodes)}
    # the robot enters a room when its node lies in the largest drivable region
    region_of_seed = containing_region(vertices[np.maximum(seeds, 0)], regions) \
        if len(regions) else np.full(len(rooms), -1)
    main = int(np.argmax(shapely.area(regions))) if len(regions) else -1
    sides = passage_rooms(openings, cuts, rooms, offset)
    need = 2 * clearance + 2e-6
    passages = []
    for index, opening in enumerate(openings):
        passages.append(Passage(
            float(opening.x), float(opening.y), float(opening.width), index,
            bool(opening.passable and opening.width >= need),
            tuple(sorted(room_id[r] for r in sides[index])),
            tuple(map(float, opening.start)), tuple(map(float, opening.end)),
            f"o{index}", str(opening.kind), bool(opening.exterior)))
    for k, cut in enumerate(cuts):
        if len(sides[len(openings) + k]) < 2:
            continue        # a narrowing that parts nothing (an aisle with a way round)
        start, end = np.asarray(cut.start) + shift, np.asarray(cut.end) + shift
        middle = (start + end) / 2
        passages.append(Passage(float(middle[0]), float(middle[1]), float(cut.width), -1,
                                bool(cut.width >= need),
                                tuple(sorted(room_id[r] for r in sides[len(openings) + k])),
                                tuple(map(float, start)), tuple(map(float, end)),
                                f"c{len(passages) - len(openings)}"))
    around = [[] for _ in rooms]
    kept = list(range(len(openings))) + [len(openings) + k for k in range(len(cuts))
                                         if len(sides[len(openings) + k]) >= 2]
    for index, side in enumerate(sides[i] for i in kept):
        if index < len(openings) and not openings[index].passable:
            continue
        for r in side:
            around[r].append(index)
    result = []
    for r in order:
        seed = int(seeds[r])
        node = at_node.get(tuple(np.round(vertices[seed], 6)), "") if seed >= 0 else ""
        if node:        # the room node says which room it stands for, and its names
            graph.nodes[node]["room_node"] = str(room_id[r])
            if names[r]:
                graph.nodes[node]["room_names"] = "\n".join(names[r])
        reachable = bool(seed >= 0 and node and region_of_seed[r] == main)
        reason, blocked, width = "", -1, None
        if not reachable:
            stops = [i for i in around[r] if not passages[i].fits]
            if stops:
                blocked = max(stops, key=lambda i: (passages[i].width, -i))
                width = passages[blocked].width
                reason = (f"its {'narrowing' if passages[blocked].opening < 0 else 'opening'}"
                          f" is {width:.2f} m wide, the robot needs {2 * clearance:.2f} m")
            elif seed < 0:
                reason = "narrower than the robot needs"
            else:
                reason = "not connected to the main floor"
        polygon = to_drawing(rooms[r], offset)
        result.append(Room(
            str(room_id[r]), polygon, tuple(names[r]), float(polygon.area),
            float(anchor[r, 0] + shift[0]), float(anchor[r, 1] + shift[1]), node, reachable,
            tuple(around[r]), reason, blocked, width))
    return tuple(result), tuple(passages)
