"""The building's interior: solid walls, the openings in them, the envelope and its leaks.

Wall linework becomes solid walls (`polygons.wall_regions`); the gaps between wall ends are
found and classified (`openings`); windows and closed openings are closed like wall. With
every opening bridged the walls enclose the building: its envelope. Openings on the envelope
lead outside: they are closed too and listed as exterior openings, so the navigable floor is
the interior. A gap that no opening explains and through which the floor still escapes is a
leak, reported where it is. All lengths in metres.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import shapely

from clearway.converter.floorplan import Opening
from clearway.converter.openings import (MAX_DOOR_WIDTH, MAX_OPEN_WIDTH, MAX_WINDOW_WIDTH,
                                         classify_gaps, find_gaps, loose_glazing,
                                         open_swept_doorways)
from clearway.converter.polygons import (as_multipolygon, door_swings, fill_holes, find_leaks,
                                         wall_regions)
from clearway.side_by_side import meanwhile

#: Overlap given to a gap where it meets its jambs, metres.
SEAM = 0.003

_MAX_WIDTH = {"open": MAX_OPEN_WIDTH, "door": MAX_DOOR_WIDTH, "closed": MAX_DOOR_WIDTH,
              "window": MAX_WINDOW_WIDTH}


@dataclass(frozen=True)
class Interior:
    """What the walls make of the floor.

    walls : MultiPolygon, solid walls with windows and closed openings filled in
    container : MultiPolygon, the floor inside the envelope (or what the leak search sealed)
    closures : MultiPolygon, exterior doors and open gaps, closed for the robot
    openings : tuple of Opening
    leaks : list of (x, y, width)
    enclosed : bool, the envelope closes once the openings are bridged
    """

    walls: object
    container: object
    closures: object
    openings: tuple
    leaks: list
    enclosed: bool


def building_interior(wall_lines, wall_rings, wall_fills, wall_arcs, *, door_lines, window_lines,
                      other_lines, swing_arcs, texts_xy, gap_tolerance, max_wall_thickness,
                      nominal_wall_thickness, find_envelope=True, loose_lines=()):
    """Return the Interior of a building from its wall linework and opening linework.

    Parameters
    ----------
    wall_lines, wall_rings, wall_fills, wall_arcs : arrays of geometry (`Parts.geometries`)
    door_lines, window_lines, other_lines, swing_arcs : arrays of LineString
        See `openings.classify_gaps`.
    loose_lines : array of LineString
        Linework on layers with no role: see `openings.loose_glazing`.
    texts_xy : (N, 2) array
        Where texts stand: a narrow closed face with a text inside is a room, not a wall.
    find_envelope : bool
        False when a boundary outline is drawn: the envelope is not needed (every opening
        is then interior unless it lies on the outline, decided by the caller).
    """
    wall_lines, wall_rings, _ = open_swept_doorways(
        wall_lines, wall_rings, door_swings(np.asarray(swing_arcs, dtype=object)),
        max_thickness=max_wall_thickness)
    solid, enclosed, loose = wall_regions(wall_lines, wall_rings, wall_fills, arcs=wall_arcs,
                                          texts=texts_xy, gap_tolerance=gap_tolerance,
                                          max_wall_thickness=max_wall_thickness,
                                          nominal_wall_thickness=nominal_wall_thickness)
    hints = np.concatenate([np.asarray(lines, dtype=object) for lines in
                            (door_lines, window_lines, other_lines, swing_arcs)])
    gaps = find_gaps(solid, loose, max_thickness=max_wall_thickness, hints=hints,
                     loose_cap=nominal_wall_thickness / 2.0)
    kinds = classify_gaps(gaps, door_lines=door_lines, window_lines=window_lines,
                          other_lines=other_lines, swing_arcs=swing_arcs)
    # a gap too wide to leave open that nothing on an opening layer explains, spanned by
    # glazing on a layer with no role, is a window where it leads outside; inside, the same
    # lines are as likely a counter across an open kitchen wall, and the gap stays as it was
    wide = [k for k, (gap, kind) in enumerate(zip(gaps, kinds))
            if find_envelope and kind == "open" and gap.width > MAX_OPEN_WIDTH and not gap.minor]
    glazed = [wide[k] for k in np.flatnonzero(loose_glazing([gaps[k] for k in wide],
                                                            loose_lines))] if wide else []
    for k in glazed:
        kinds[k] = "window"
    kept, quads, walls, leaks, container, envelope, outside = _enclose(
        solid, enclosed, gaps, kinds, find_envelope)
    inner = [k for k in glazed if not outside[kept.index(k)]]
    if inner:
        for k in inner:
            kinds[k] = "open"
        kept, quads, walls, leaks, container, envelope, outside = _enclose(
            solid, enclosed, gaps, kinds, find_envelope)
    openings, closures = [], []
    kept = [(gaps[k], kinds[k]) for k in kept]
    for (gap, kind), quad, exterior in zip(kept, quads, outside.tolist()):
        # the jamb listed first is the lower in (x, y): which one a gap is found from
        # depends on where GEOS starts the walls' rings
        start, end = sorted([(round(float(gap.start[0]), 4), round(float(gap.start[1]), 4)),
                             (round(float(gap.end[0]), 4), round(float(gap.end[1]), 4))])
        openings.append(Opening(
            x=round(float(gap.middle[0]), 4), y=round(float(gap.middle[1]), 4),
            width=round(gap.width, 4), kind=kind, exterior=bool(exterior),
            start=start, end=end, depth=round(gap.depth, 4)))
        if exterior and kind in ("door", "open"):
            closures.append(quad)
    closures = as_multipolygon(shapely.union_all(closures)) if closures else shapely.MultiPolygon()
    return Interior(walls=walls, container=as_multipolygon(container), closures=closures,
                    openings=tuple(openings), leaks=leaks,
                    enclosed=not leaks and not envelope.is_empty)


def _enclose(solid, enclosed, gaps, kinds, find_envelope):
    """Bridge the gaps of these kinds and find the envelope: return (kept, quads, walls,
    leaks, container, envelope, outside), `kept` the indices of the gaps bridged, `quads`
    their quads, `outside` whether each leads outside."""
    kept = [k for k, (gap, kind) in enumerate(zip(gaps, kinds))
            if gap.width <= _MAX_WIDTH[kind] and not (gap.minor and kind == "open")]
    # each gap grown by a few millimetres: a quad that only touches the jambs would leave
    # hairline slits at its corners, through which the floor escapes
    quads = shapely.buffer(np.array([gaps[k].quad for k in kept], dtype=object), SEAM,
                           join_style="mitre")
    shut = quads[[kinds[k] in ("window", "closed") for k in kept]] if len(kept) else quads
    walls = _with(solid, shapely.union_all(shut)) if len(shut) else solid
    united = shapely.union_all(quads) if len(quads) else None
    # `enclosed` holds the solid walls already: the quads are all `bridged` adds to it; the
    # two unions are made side by side, on two threads (GEOS releases the GIL)
    with meanwhile(lambda: fill_holes(_with(enclosed, united))) as basing:
        bridged = _with(solid, united)
    base = basing.result()
    leaks, container = find_leaks(bridged, base) if find_envelope else ([], base)
    envelope = fill_holes(container)
    outside = _lead_outside([gaps[k] for k in kept], envelope) if find_envelope and kept \
        else np.zeros(len(kept), dtype=bool)
    return kept, quads, walls, leaks, container, envelope, outside


def _with(area, united):
    """`area` (a MultiPolygon) with the gaps' quads added, as a MultiPolygon; `united` is
    their union, None for none.

    The quads are united among themselves first (most stand apart, so that is quick), then
    with `area` in one overlay: they overlap the walls by SEAM, so the union of every part
    at once (a cascade over hundreds of wall parts and thousands of quads) did the same work
    over many more overlays. On the mixed suite floor as first drawn, at 20,000 bays (228
    wall parts, 2,030 quads) that union took 0.32 s, this one 0.18 s, of which 0.08 s unites
    the quads: that is done once for the walls with every gap bridged and for the enclosed
    area.
    """
    if united is None:
        return area
    return as_multipolygon(shapely.union(area, united))


def _lead_outside(gaps, envelope):
    """Which `gaps` lead outside, shape (N,): a point just beyond the wall, on either side
    of the gap, is outside `envelope` (all gaps' points in one test)."""
    start = np.array([gap.start for gap in gaps], dtype=float).reshape(-1, 2)
    end = np.array([gap.end for gap in gaps], dtype=float).reshape(-1, 2)
    width = np.array([max(gap.width, 1e-12) for gap in gaps], dtype=float)
    reach = np.array([gap.depth / 2.0 + 0.15 for gap in gaps], dtype=float)
    direction = (end - start) / width[:, None]
    normal = np.stack([-direction[:, 1], direction[:, 0]], axis=1)
    middle = (start + end) / 2.0
    probes = np.concatenate([middle + normal * reach[:, None], middle - normal * reach[:, None]])
    inside = shapely.contains_xy(envelope, probes[:, 0], probes[:, 1]).reshape(2, -1)
    return ~inside.all(axis=0)
