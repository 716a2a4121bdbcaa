"""What a commissioning engineer must know about a lane graph: the Findings.

- Components of the graph and the stations in each; unreachable pairs.
- Narrow passages: where the raw free space connects but the drivable region does not. They
  are found on the medial axis of the raw free space [CB00]_: a stretch of axis whose
  clearance dips below c between two drivable regions; its width is twice the clearance at
  the bottleneck (the maximin point, found by merging axis vertices in falling clearance).
- Pinch points: the lowest point of each run of a lane whose clearance is below the comfort
  clearance (by default c + 0.2 m).
- Personnel flags: in zones shared with people, lanes whose clearance minus the robot's
  half-width is below the personnel clearance (0.5 m by default, from memory of ISO 3691-4's
  clear zone beside driverless trucks; configurable).

References
----------
.. [CB00] H. Choset and J. Burdick, "Sensor-based exploration: the hierarchical generalized
   Voronoi graph", International Journal of Robotics Research 19(2), 2000.
"""

from __future__ import annotations

import dataclasses
import itertools

import networkx as nx
import numpy as np
import shapely
from networkx.utils import UnionFind
from scipy.sparse.csgraph import connected_components

from clearway.roadmap.graph import _adjacency
from clearway.roadmap.inflate import polygon_parts, to_local
from clearway.roadmap.model import (Findings, NarrowPassage, PersonnelFlag, PinchPoint,
                           StationResult)
from clearway.roadmap.stations import containing_region


def narrow_passages(axis, clearance: float, regions, offset=(0.0, 0.0)) -> list[NarrowPassage]:
    """Return each place too narrow for the robot between two drivable regions.

    Parameters
    ----------
    axis : MedialAxis of the raw free space (local frame)
    clearance : float, required clearance c, metres
    regions : (K,) Polygon, the drivable regions (local frame)
    offset : (x0, y0), metres
        The local frame's origin: the passages are returned in the drawing frame.

    Returns
    -------
    list of NarrowPassage
        ``regions`` holds the indices of the two regions each joins; ``blocks`` is empty.
    """
    count = len(axis.vertices)
    if count == 0 or len(regions) < 2:
        return []
    drivable = axis.clearance >= clearance
    edges = axis.edges
    both = drivable[edges].all(axis=1)
    _, label = connected_components(_adjacency(count, edges[both]), directed=False)
    fragments = np.unique(label[drivable])
    # each fragment's region: that of its vertex of most clearance (the first by index)
    by_clearance = np.flatnonzero(drivable)[np.argsort(-axis.clearance[drivable], kind="stable")]
    _, first = np.unique(label[by_clearance], return_index=True)
    fragment_region = containing_region(axis.vertices[by_clearance[first]], regions)
    region = np.full(count, -1)
    region[drivable] = fragment_region[np.searchsorted(fragments, label[drivable])]
    low_edges = edges[~drivable[edges].all(axis=1)]
    inner_all = low_edges[~drivable[low_edges].any(axis=1)]
    _, low_label = connected_components(_adjacency(count, inner_all), directed=False)
    mixed = low_edges[drivable[low_edges].any(axis=1)]
    low_end = np.where(drivable[mixed[:, 0]], mixed[:, 1], mixed[:, 0])
    high_end = np.where(drivable[mixed[:, 0]], mixed[:, 0], mixed[:, 1])
    reached = region[high_end] >= 0
    touched = np.unique(np.column_stack([low_label[low_end], region[high_end]])[reached], axis=0)
    components, regions_touched = np.unique(touched[:, 0], return_counts=True)
    # the low vertices, the edges between them and the edges to drivable vertices, grouped
    # by low component (each group in its original order)
    low_vertices = np.flatnonzero(~drivable)
    members_of = _groups(low_label[low_vertices], low_vertices)
    inner_of = _groups(low_label[inner_all[:, 0]], inner_all)
    attach_of = _groups(low_label[low_end], mixed)
    found = []
    for component in components[regions_touched >= 2].tolist():
        members = members_of(component)
        inner = inner_of(component)
        attach = attach_of(component)
        neighbours = {int(v): [] for v in members}
        for a, b in inner.tolist():
            neighbours[a].append(b)
            neighbours[b].append(a)
        for a, b in attach.tolist():
            low, high = (a, b) if not drivable[a] else (b, a)
            if region[high] >= 0:
                neighbours[low].append(-1 - int(region[high]))
        # merge the axis vertices in falling clearance; a region is the negative id -1 - k.
        # Where two sets that each reach a region meet, the vertex is a bottleneck.
        sets = UnionFind()
        region_of_set: dict[int, int | None] = {}     # set root -> a region it reaches
        for vertex in members[np.argsort(-axis.clearance[members], kind="stable")]:
            vertex = int(vertex)
            region_of_set[sets[vertex]] = None
            for other in neighbours[vertex]:
                if other < 0 and other not in sets.parents:
                    region_of_set[sets[other]] = -1 - other
                if other not in sets.parents:
                    continue
                ra, rb = sets[vertex], sets[other]
                if ra == rb:
                    continue
                a, b = region_of_set[ra], region_of_set[rb]
                if a is not None and b is not None:
                    x, y = axis.vertices[vertex]
                    found.append(NarrowPassage(float(x) + offset[0], float(y) + offset[1],
                                               float(2 * axis.clearance[vertex]),
                                               regions=(a, b)))
                sets.union(ra, rb)
                region_of_set[sets[ra]] = b if b is not None else a
    return found


def _groups(keys: np.ndarray, rows: np.ndarray):
    """Return a function giving the `rows` whose key is k, in their order (keys (N,))."""
    order = np.argsort(keys, kind="stable")
    keys = keys[order]

    def rows_of(key):
        start, stop = np.searchsorted(keys, [key, key + 1])
        return rows[order[start:stop]]
    return rows_of


def pinch_points(samples, comfort: float, offset) -> list[PinchPoint]:
    """Lowest point of every run of lane samples whose clearance is below `comfort` metres."""
    result, seen = [], set()
    below = samples.clearance < comfort
    if not below.any():
        return result
    change = np.r_[True, (below[1:] != below[:-1]) | (samples.owner[1:] != samples.owner[:-1])]
    starts = np.flatnonzero(change)
    stops = np.r_[starts[1:], len(below)]
    for start, stop in zip(starts, stops):
        if not below[start]:
            continue
        key = samples.edge_ids[samples.owner[start]]
        if key in samples.station_links:
            continue  # a station's straight approach, not a lane
        low = start + int(np.argmin(samples.clearance[start:stop]))
        x, y = samples.xy[low] + np.asarray(offset)
        spot = (round(float(x), 2), round(float(y), 2))
        if spot in seen:
            continue
        seen.add(spot)
        result.append(PinchPoint(float(x), float(y), float(samples.clearance[low]), key))
    return result


def personnel_flags(samples, shared_zones, offset, *, half_width: float,
                    required: float) -> list[PersonnelFlag]:
    """Flag each edge inside `shared_zones` whose clearance - half_width < `required` m."""
    if shared_zones is None or len(samples.xy) == 0:
        return []
    zones = polygon_parts(shared_zones)
    if len(zones) == 0:
        return []
    zone = shapely.MultiPolygon(list(to_local(zones, offset)))
    shapely.prepare(zone)
    inside = shapely.intersects_xy(zone, samples.xy[:, 0], samples.xy[:, 1])
    side = samples.clearance - half_width
    flagged = inside & (side < required)
    result = []
    for owner in np.unique(samples.owner[flagged]):
        mine = np.flatnonzero(flagged & (samples.owner == owner))
        low = mine[np.argmin(side[mine])]
        x, y = samples.xy[low] + np.asarray(offset)
        result.append(PersonnelFlag(samples.edge_ids[owner], float(x), float(y),
                                    float(samples.clearance[low]), float(side[low]),
                                    float(required)))
    return result


def run_checks(graph: nx.MultiGraph, samples, joins, labels, station_nodes, station_xy, axis,
               clearance: float, comfort: float, *, robot, shared_zones,
               personnel_clearance: float, low_clearance_penalty: float, regions,
               region_of_station, offset, warnings=(), body=(), standoff=None) -> Findings:
    """Collect every finding about the weighed lane graph (see the module docstring)."""
    number = {node: int(node[1:]) for node in graph}
    components = sorted(nx.connected_components(graph),
                        key=lambda nodes: min(number[n] for n in nodes))
    station_count = [sum(graph.nodes[n]["kind"] == "station" for n in nodes)
                     for nodes in components]
    order = sorted(range(len(components)), key=lambda i: -station_count[i])
    components = [components[i] for i in order]
    component_of = {node: k for k, nodes in enumerate(components) for node in nodes}
    passages = narrow_passages(axis, clearance, regions, offset)
    main_regions = set()
    if components:
        main_xy = np.array([[graph.nodes[n]["x"], graph.nodes[n]["y"]]
                            for n in components[0]]) - np.asarray(offset)
        main_regions = set(containing_region(main_xy, regions).tolist()) - {-1}
    blocks: dict[int, list[str]] = {}
    pending = []
    for index, join in enumerate(joins):
        node = station_nodes.get(index)
        component = component_of.get(node) if node is not None else None
        reachable = component == 0
        reason = "" if reachable else (join if isinstance(join, str) else
                                       f"in graph component {component}, apart from "
                                       f"component 0")
        if node is not None and not reachable:
            bottleneck = _bottleneck(passages, region_of_station[index], main_regions)
            if bottleneck is not None:
                blocks.setdefault(bottleneck, []).append(labels[index])
                passage = passages[bottleneck]
                reason += (f"; narrowest place {passage.width:.2f} m wide at "
                           f"({passage.x:.2f}, {passage.y:.2f})")
        pending.append((index, node, component, reachable, reason))
    standoff = np.zeros(len(pending)) if standoff is None else standoff
    stations = tuple(StationResult(labels[i], float(x), float(y), node, component, reachable,
                                   reason, standoff=float(standoff[i]) if node is not None
                                   else 0.0)
                     for (i, node, component, reachable, reason), (x, y) in zip(
                         pending, station_xy))
    station_labels = tuple(tuple(sorted(graph.nodes[n]["label"] for n in nodes
                                        if graph.nodes[n]["kind"] == "station"))
                           for nodes in components)
    unreachable = tuple(
        (a.label, b.label) for a, b in itertools.combinations(
            sorted(stations, key=lambda r: r.label), 2)
        if a.component is None or b.component is None or a.component != b.component)
    narrow = tuple(dataclasses.replace(passage, blocks=tuple(sorted(blocks.get(i, ()))))
                   for i, passage in enumerate(passages))
    return Findings(
        stations=stations, components=station_labels, unreachable_pairs=unreachable,
        pinch_points=tuple(pinch_points(samples, comfort, offset)),
        narrow_passages=narrow,
        personnel=tuple(personnel_flags(samples, shared_zones, offset,
                                        half_width=robot.half_width,
                                        required=personnel_clearance)),
        body=tuple(body), warnings=tuple(warnings),
        personnel_clearance=float(personnel_clearance))


def weigh_edges(graph: nx.MultiGraph, comfort: float, low_clearance_penalty: float) -> None:
    """Set each edge's weight: its length, times (1 + penalty) when its clearance_min is
    below `comfort` metres. Changes `graph` in place."""
    for _, _, data in graph.edges(data=True):
        penalty = low_clearance_penalty if data["clearance_min"] < comfort else 0.0
        data["weight"] = float(data["length"] * (1.0 + penalty))


def _bottleneck(passages, region, targets):
    """Index of the narrowest passage on the widest route from `region` to `targets`.

    Kruskal's order on a maximum spanning forest of the regions: the passage that first
    joins `region` to a target, taking the widest first, is the route's narrowest.
    """
    if region < 0 or not targets:
        return None
    sets = UnionFind([region, *targets])
    for index in sorted(range(len(passages)), key=lambda i: -passages[i].width):
        sets.union(*passages[index].regions)
        if any(sets[region] == sets[target] for target in targets):
            return index
    return None
