"""The floor's areas drawn before the lanes: the same bytes as drawn by each renderer, and
used only where they were made for the roadmap's own drivable region, origin and anchor; and
every renderer with the collector paused."""

from __future__ import annotations

import dataclasses
import json

import pytest
import shapely

from clearway.exporters import draw_floor, render_geojson, render_graphml, render_html, render_svg
from clearway.exporters.svg_parts import clearance_band
from clearway.roadmap import build_roadmap, drivable_floor
from clearway.roadmap.model import Robot
from hall_fixture import make_plan, make_roadmap

DATE = "2026-12-05"
#: (latitude, longitude, bearing) of a made-up site, degrees.
ANCHOR = (52.0, 4.0, 30.0)


def _outputs(plan, roadmap, floor=None, anchor=None):
    return (render_svg(plan, roadmap, date=DATE, floor=floor),
            render_geojson(plan, roadmap, anchor=anchor, floor=floor))


@pytest.mark.parametrize("anchor", [None, ANCHOR], ids=["metres", "anchored"])
@pytest.mark.parametrize("shift", [(0.0, 0.0), (512_345.0, 5_401_234.0)], ids=["origin", "survey"])
def test_drawn_beforehand_the_areas_give_the_same_bytes(shift, anchor):
    plan = make_plan(shift=shift)
    roadmap = make_roadmap(plan)
    floor = draw_floor(plan, roadmap.drivable, anchor=anchor)
    assert floor.fits(roadmap)
    assert _outputs(plan, roadmap, floor, anchor) == _outputs(plan, roadmap, None, anchor)


def test_the_band_is_the_free_floor_less_the_drivable_region():
    plan = make_plan()
    roadmap = make_roadmap(plan)
    floor = draw_floor(plan, roadmap.drivable)
    # source: set algebra; the drivable region lies inside the free floor, so the band's
    # area is the difference of the two areas
    assert floor.band.area == pytest.approx(plan.free_space.area - roadmap.drivable.area,
                                            rel=1e-12)
    assert floor.band.equals_exact(clearance_band(plan, roadmap), 0.0)


def test_areas_for_another_drivable_region_are_not_used():
    plan = make_plan()
    roadmap = make_roadmap(plan)
    # a wider robot's region: every renderer draws the areas itself
    other = draw_floor(plan, roadmap.drivable.buffer(-0.1))
    assert not other.fits(roadmap)
    assert _outputs(plan, roadmap, other) == _outputs(plan, roadmap)


def test_areas_for_another_origin_or_anchor_are_not_used():
    plan = make_plan()
    roadmap = make_roadmap(plan)
    floor = draw_floor(plan, roadmap.drivable, anchor=ANCHOR)
    moved = dataclasses.replace(floor, svg_origin=(1000.0, 0.0),
                                svg_paths={role: "M0,0 1,0 1,-1Z" for role in floor.svg_paths})
    assert render_svg(plan, roadmap, date=DATE, floor=moved) == \
        render_svg(plan, roadmap, date=DATE)
    # drawn for an anchor, not used without one (nor for another one)
    assert render_geojson(plan, roadmap, floor=floor) == render_geojson(plan, roadmap)
    elsewhere = (ANCHOR[0] + 1.0, *ANCHOR[1:])
    assert render_geojson(plan, roadmap, anchor=elsewhere, floor=floor) == \
        render_geojson(plan, roadmap, anchor=elsewhere)
    # and the anchored lines are the GeoJSON's: longitude and latitude near the anchor
    first = json.loads(floor.geojson_lines[0])
    lon, lat = first["geometry"]["coordinates"][0][0][0]
    assert abs(lat - ANCHOR[0]) < 0.01 and abs(lon - ANCHOR[1]) < 0.01


@pytest.mark.parametrize("robot", [Robot.disc(0.35, margin=0.1), Robot.disc(0.5, margin=0.15)],
                         ids=["small", "large"])
@pytest.mark.parametrize("shift", [(0.0, 0.0), (512_345.0, 5_401_234.0)], ids=["origin", "survey"])
def test_the_drivable_floor_is_the_roadmaps_coordinate_for_coordinate(robot, shift):
    plan = make_plan(shift=shift)
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y) for s in plan.stations], robot=robot)
    drivable = drivable_floor(plan.free_space, robot.clearance)
    assert shapely.equals_exact(drivable, roadmap.drivable, 0.0)
    # source: analytic geometry; the hall's floor (20 x 10 m, less the racking and the
    # keep-out corner) eroded by c keeps no point within c of a wall
    c = robot.clearance
    assert shapely.distance(drivable, plan.free_space.boundary) == pytest.approx(c, abs=1e-3)
    assert draw_floor(plan, drivable).fits(roadmap)


@pytest.mark.parametrize("module, inner, render", [
    ("svg", "lane_bins", lambda plan, roadmap: render_svg(plan, roadmap, date=DATE)),
    ("geojson", "compact_json", lambda plan, roadmap: render_geojson(plan, roadmap)),
    ("graphml", "linestring_wkt", lambda plan, roadmap: render_graphml(plan, roadmap)),
    ("html", "lane_bins", lambda plan, roadmap: render_html(plan, roadmap, date=DATE)),
], ids=["svg", "geojson", "graphml", "html"])
def test_every_renderer_runs_with_the_collector_paused(monkeypatch, module, inner, render):
    # many small containers, none in a cycle (clearway/collector.py): a decorator moved off
    # its renderer would leave the collector's passes in again, the bytes unchanged
    import gc
    import importlib
    plan = make_plan()
    roadmap = make_roadmap(plan)
    target = importlib.import_module(f"clearway.exporters.{module}")
    original, seen = getattr(target, inner), []
    monkeypatch.setattr(target, inner, lambda *a, **k: seen.append(gc.isenabled())
                        or original(*a, **k))
    assert gc.isenabled()
    render(plan, roadmap)
    assert seen and not any(seen) and gc.isenabled()
