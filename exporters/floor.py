"""The floor's areas as the outputs draw them, made before the lanes are.

The preview and the GeoJSON each draw the plan's areas (walls, racking, keep-out
zones, the free floor) and two more that the required clearance alone decides: the drivable
region (the free floor eroded by the clearance, ``roadmap.drivable_floor``) and the clearance
band (the free floor the robot's centre may not enter, which the page draws too). None of
them needs the lanes. On a large floor the band, the preview's path text and the GeoJSON's
lines of them take a few tenths of a second in each of the two processes that render:
`clearway build` has them made in a third process while the roadmap is built, when one core
is often idle, and hands them to the renderers.

A renderer takes them only where they were made for the roadmap's own drivable region,
coordinate for coordinate (:meth:`FloorDrawn.fits`), and for the origin (or the anchor) it
draws in; otherwise it draws the areas itself. Either way the bytes are the same.
"""

from __future__ import annotations

from dataclasses import dataclass

import shapely

from clearway.exporters import geojson, svg
from clearway.exporters.anchor import check_anchor
from clearway.exporters.svg_parts import floor_band


@dataclass(frozen=True)
class FloorDrawn:
    """The areas of one floor plan for one drivable region, as each output draws them.

    drivable : MultiPolygon, drawing frame; the drivable region they were made for
    band : geometry or None, ``clearance_band`` of the plan and that region
    svg_origin : (x, y), metres; the preview's origin (``svg.drawing_origin``) for them
    svg_paths : dict of role -> SVG path data (``svg.area_paths``)
    anchor : the GeoJSON anchor they were projected with, or None
    geojson_lines : list of str, the GeoJSON's lines of them (``geojson.area_lines``)
    """

    drivable: object
    band: object
    svg_origin: tuple
    svg_paths: dict
    anchor: object
    geojson_lines: list

    def fits(self, roadmap) -> bool:
        """True when `roadmap`'s drivable region is the one these areas were made for:
        the same parts and coordinates in the same order (GEOS's exact equality)."""
        return bool(shapely.equals_exact(self.drivable, roadmap.drivable, tolerance=0.0))


def draw_floor(plan, drivable, *, anchor=None) -> FloorDrawn:
    """Draw `plan`'s areas with `drivable` (``roadmap.drivable_floor`` of its free space) for
    the preview and the GeoJSON, and the clearance band, which the page draws too; `anchor`
    as ``render_geojson`` takes it (checked first).

    Examples
    --------
    >>> from clearway.converter.floorplan import FloorPlan
    >>> floor = shapely.box(0, 0, 10, 6)
    >>> plan = FloorPlan(source="demo.dxf", sha256="", units="m", m_per_unit=1.0,
    ...                  unit_note="", stations=(), free_space=floor,
    ...                  regions={"wall": floor.exterior.buffer(0.1)})
    >>> drawn = draw_floor(plan, shapely.MultiPolygon([shapely.box(0.5, 0.5, 9.5, 5.5)]))
    >>> sorted(drawn.svg_paths), round(drawn.band.area, 6)
    (['band', 'free', 'wall'], 15.0)
    """
    if anchor is not None:
        anchor = check_anchor(anchor)
    band = floor_band(plan.free_space, drivable)
    origin = svg.drawing_origin(svg.plan_bounds(plan, drivable))
    return FloorDrawn(drivable=drivable, band=band, svg_origin=tuple(origin.tolist()),
                      svg_paths=svg.area_paths(plan, band, origin), anchor=anchor,
                      geojson_lines=geojson.area_lines(plan, drivable, anchor))
