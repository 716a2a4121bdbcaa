"""Wall faces, gap closing, filled areas, free space and leaks."""

import threading

import numpy as np
import pytest
import shapely

from clearway.converter import read_floorplan
from clearway.converter.polygons import node_lines, segments, union_polygons, wall_regions
from tests.conftest import new_drawing, rectangle, save, wall_with_gap


def test_double_line_wall_band_is_solid_and_the_room_is_free(room_drawing):
    doc, msp, write = room_drawing
    plan = read_floorplan(write())
    # analytic: band between 10 x 8 and 9.6 x 7.6 rectangles
    assert plan.regions["wall"].area == pytest.approx(80 - 9.6 * 7.6, abs=1e-9)
    assert plan.free_space.area == pytest.approx(9.6 * 7.6, abs=1e-9)
    assert len(plan.free_space.geoms) == 1


def test_closed_outline_does_not_fill_the_building(tmp_path):
    doc = new_drawing(6)
    doc.modelspace().add_lwpolyline(rectangle(0, 0, 20, 10), close=True,
                                    dxfattribs={"layer": "A-WALL"})
    plan = read_floorplan(save(doc, tmp_path), nominal_wall_thickness=0.05)
    # analytic: the single line gets the nominal thickness, 0.025 m either side
    assert plan.free_space.area == pytest.approx(19.95 * 9.95, rel=1e-6)
    assert plan.regions["wall"].area < 0.05 * 61


def test_round_column_is_solid_and_a_wide_circle_is_a_room(room_drawing):
    doc, msp, write = room_drawing
    msp.add_circle((3, 4), 0.25, dxfattribs={"layer": "A-COLS"})
    msp.add_circle((7, 4), 1.0, dxfattribs={"layer": "A-WALL"})  # 2 m: a round room
    plan = read_floorplan(write())
    assert shapely.Point(3, 4).within(plan.regions["wall"])
    assert shapely.Point(7, 4).within(plan.free_space)
    # analytic: pi r^2 within the chord bound (1 mm)
    column = plan.regions["wall"].intersection(shapely.box(2, 3, 4, 5)).area
    assert np.pi * 0.25 ** 2 - 0.001 * 2 * np.pi * 0.25 <= column <= np.pi * 0.25 ** 2
    assert len(plan.free_space.geoms) == 2  # the round room is its own component


def test_face_wider_than_max_wall_thickness_is_a_room():
    # analytic: a 0.5 m band is solid under 0.6 m and a room under 0.4 m
    rings = [shapely.box(0, 0, 10, 10.5).exterior, shapely.box(0.5, 0.5, 9.5, 10).exterior]
    solid, _, _ = wall_regions([], rings, [], gap_tolerance=0.01, max_wall_thickness=0.6,
                            nominal_wall_thickness=0.05)
    assert solid.area == pytest.approx(10 * 10.5 - 9 * 9.5)
    solid, _, _ = wall_regions([], rings, [], gap_tolerance=0.01, max_wall_thickness=0.4,
                            nominal_wall_thickness=0.05)
    # analytic: only nominal 0.05 m bands along both rings (perimeters 41 m and 37 m)
    assert solid.area == pytest.approx(0.05 * (41 + 37), rel=0.01)


def test_t_junction_one_millimetre_short_is_closed(room_drawing):
    doc, msp, write = room_drawing
    # a partition from the north wall's inner face down to 1 mm above the south wall's
    for x in (4.95, 5.05):
        msp.add_line((x, 7.8), (x, 0.201), dxfattribs={"layer": "A-WALL"})
    plan = read_floorplan(write(), gap_tolerance=0.01)
    # analytic: the 0.1 m partition splits the 9.6 m x 7.6 m room into two closed rooms
    areas = sorted(polygon.area for polygon in plan.free_space.geoms)
    assert len(areas) == 2
    assert sum(areas) == pytest.approx(9.6 * 7.6 - 0.1 * 7.6, abs=1e-3)
    assert shapely.Point(5.0, 3.0).within(plan.regions["wall"])
    # without gap closing the two faces still end side by side, 0.1 m apart and square to
    # the segment between their ends: a wall stopping open, closed at its end (a jamb)
    loose = read_floorplan(write(), gap_tolerance=0.0)
    assert shapely.Point(5.0, 3.0).within(loose.regions["wall"])


def test_endpoint_gap_closed_endpoint_to_endpoint():
    lines = [shapely.LineString([(0, 0), (1, 0)]), shapely.LineString([(1.005, 0), (2, 0)])]
    edges = node_lines(lines, gap_tolerance=0.01)
    assert shapely.union_all(edges).length == pytest.approx(2.0)
    assert shapely.line_merge(shapely.union_all(edges)).geom_type == "LineString"


def test_corner_overshoot_is_dropped():
    # common practice: wall faces drawn as LINEs run on a millimetre or two past a corner
    lines = [shapely.LineString([(0, 0), (1.002, 0)]), shapely.LineString([(1, -0.003), (1, 1)])]
    edges = node_lines(lines, gap_tolerance=0.01)
    # analytic: what is left is the L from (0, 0) via (1, 0) to (1, 1), 2 m long
    assert shapely.union_all(edges).length == pytest.approx(2.0)
    assert shapely.line_merge(shapely.union_all(edges)).geom_type == "LineString"
    # a short line with both ends free is linework, not an overshoot
    assert len(node_lines([shapely.LineString([(5, 5), (5.004, 5)])], gap_tolerance=0.01)) == 1


@pytest.mark.parametrize("overshoot", [0.001, 0.003])
def test_wall_lines_overshooting_their_corners_keep_the_opening(tmp_path, overshoot):
    # common practice (DRAFTING.md, broken linework): every wall face a LINE that runs on past
    # its corner by a millimetre or a few; before, the overshoots became loose bands that
    # bulged each wall end, the opening was not found and the building had no floor
    def walls(msp, extend):
        t, (g0, g1) = 0.2, (8.0, 9.2)
        segments = [((g0, 0), (0, 0)), ((0, 0), (0, 12)), ((0, 12), (20, 12)), ((20, 12), (20, 0)),
                    ((20, 0), (g1, 0)), ((g0, t), (t, t)), ((t, t), (t, 12 - t)),
                    ((t, 12 - t), (20 - t, 12 - t)), ((20 - t, 12 - t), (20 - t, t)),
                    ((20 - t, t), (g1, t)), ((g0, 0), (g0, t)), ((g1, 0), (g1, t))]
        for start, end in segments:
            a, b = np.asarray(start, float), np.asarray(end, float)
            step = (b - a) / np.linalg.norm(b - a) * extend
            msp.add_line(a - step, b + step, dxfattribs={"layer": "A-WALL"})

    plans = []
    for extend in (0.0, overshoot):
        doc = new_drawing(6)
        walls(doc.modelspace(), extend)
        plans.append(read_floorplan(save(doc, tmp_path, f"plan_{extend}.dxf")))
    clean, drawn = plans
    [opening] = drawn.openings
    # analytic: the opening spans x 8.0-9.2 in the 0.2 m south wall
    assert (opening.x, opening.y, opening.width) == pytest.approx((8.6, 0.1, 1.2), abs=0.02)
    assert drawn.leaks == ()
    assert drawn.free_space.area == pytest.approx(clean.free_space.area, rel=1e-3)
    # analytic: the floor is the 19.6 m x 11.6 m interior
    assert drawn.free_space.area == pytest.approx(19.6 * 11.6, rel=0.01)


def test_duplicated_reversed_and_zero_length_lines_do_no_harm(room_drawing):
    doc, msp, write = room_drawing
    baseline = read_floorplan(write("a.dxf")).free_space.area
    msp.add_line((10, 0), (0, 0), dxfattribs={"layer": "A-WALL"})
    msp.add_line((0, 0), (10, 0), dxfattribs={"layer": "A-WALL"})
    msp.add_line((0, 0), (5, 0), dxfattribs={"layer": "A-WALL"})
    msp.add_line((3, 3), (3, 3), dxfattribs={"layer": "A-WALL"})
    assert read_floorplan(write("b.dxf")).free_space.area == pytest.approx(baseline)


def test_open_exterior_gap_is_an_exterior_opening_not_a_leak(tmp_path):
    doc = new_drawing(6)
    wall_with_gap(doc.modelspace(), 0, 0, 20, 12, thickness=0.2, gap=(8.0, 9.2))
    plan = read_floorplan(save(doc, tmp_path))
    assert plan.leaks == ()
    [opening] = plan.openings
    # analytic: the opening spans x 8.0-9.2 in the 0.2 m south wall, nothing drawn in it
    assert (opening.x, opening.y) == pytest.approx((8.6, 0.1), abs=0.02)
    assert opening.width == pytest.approx(1.2, abs=0.02)
    assert (opening.kind, opening.exterior, opening.depth) == ("open", True, pytest.approx(0.2))
    assert any("1.20 m" in warning and "exterior" in warning for warning in plan.warnings)
    # the floor is the interior: the exterior opening is closed for the robot
    assert plan.free_space.area == pytest.approx(19.6 * 11.6, rel=0.01)


def test_leak_is_reported_with_location_and_width(tmp_path):
    doc = new_drawing(6)
    # 3.0 m with nothing drawn in it: wider than an unexplained doorway, so a leak
    wall_with_gap(doc.modelspace(), 0, 0, 20, 12, thickness=0.2, gap=(8.0, 11.0))
    plan = read_floorplan(save(doc, tmp_path))
    assert len(plan.leaks) == 1
    leak = plan.leaks[0]
    assert (leak.x, leak.y) == pytest.approx((9.5, 0.1), abs=0.02)
    assert leak.width == pytest.approx(3.0, abs=0.02)
    assert any("3.00 m gap" in warning for warning in plan.warnings)
    assert plan.free_space.area == pytest.approx(19.6 * 11.6, rel=0.01)


def test_wide_dock_opening_leak(tmp_path):
    doc = new_drawing(4)  # millimetres
    wall_with_gap(doc.modelspace(), 0, 0, 40000, 25000, thickness=300, gap=(10000, 13500))
    plan = read_floorplan(save(doc, tmp_path))
    assert [round(leak.width, 2) for leak in plan.leaks] == [3.5]


def test_closed_building_has_no_leak(samples):
    assert read_floorplan(samples / "clinic.dxf").leaks == ()


def test_coverage_union_equals_general_union():
    # rack bays edge to edge: both unions must agree (shapely's union_all as reference)
    bays = [shapely.box(x * 2.7, y * 1.1, (x + 1) * 2.7, (y + 1) * 1.1)
            for x in range(20) for y in range(2)]
    bays = shapely.set_precision(np.array(bays), 1e-4)
    fast = union_polygons(bays)
    assert fast.equals(shapely.union_all(bays))
    assert fast.area == pytest.approx(40 * 2.97)
    overlapping = np.array([shapely.box(0, 0, 2, 2)] * 9 + [shapely.box(1, 1, 3, 3)])
    assert union_polygons(overlapping).area == pytest.approx(7.0)


def test_inscribed_radius_of_thin_u_and_wide_rooms():
    from clearway.converter.polygons import inscribed_radius
    # a 0.4 m thick U-shaped wall 20 m across: its centroid lies outside it, 10 m from it,
    # so a first pass must not take that distance for the radius
    u_wall = shapely.box(0, 0, 20, 0.4) | shapely.box(0, 0, 0.4, 20) | shapely.box(19.6, 0, 20, 20)
    room = shapely.box(0, 0, 30, 12)
    ring_room = shapely.box(-5, -5, 45, 25).difference(shapely.box(0, 0, 40, 20))
    radius = inscribed_radius(np.array([u_wall, room, ring_room]), 0.006, above=0.303)
    # analytic: in the U's outer corner the circle touches both outer faces and the inner
    # corner (w, w): sqrt(2) (w - r) = r, r = w sqrt(2) / (1 + sqrt(2)) = 0.2343 m for w = 0.4;
    # a 30 x 12 m room has 6 m; the 5 m wide ring around a 40 x 20 m hole has the same
    # corner circle, 5 sqrt(2) / (1 + sqrt(2)) = 2.93 m
    assert radius[0] == pytest.approx(0.4 * 2 ** 0.5 / (1 + 2 ** 0.5), abs=0.006)
    assert radius[1] > 0.303 + 0.012 and radius[1] <= 6.0 + 1e-9
    assert radius[2] > 0.303 + 0.012 and radius[2] <= 5 * 2 ** 0.5 / (1 + 2 ** 0.5) + 1e-9


def test_inscribed_radius_settles_narrow_faces_by_erosion_only_when_they_are_narrower():
    from clearway.converter.polygons import inscribed_radius
    band = shapely.box(0, 0, 10, 8).difference(shapely.box(0.3, 0.3, 9.7, 7.7))
    column = shapely.Point(5, 5).buffer(0.2, quad_segs=10)
    just_wider = shapely.affinity.rotate(shapely.box(0, 0, 12, 0.56), 30)
    faces = np.array([band, column, just_wider, shapely.box(0, 0, 30, 12)])
    radius = inscribed_radius(faces, 0.006, above=0.303, below=0.27)
    plain = inscribed_radius(faces, 0.006, above=0.303)
    # analytic: the 0.3 m band's widest circle sits in a corner, 0.3 sqrt(2) / (1 + sqrt(2))
    # = 0.176 m (as in the U above); the column's is 0.2 m: both under 0.27 m, so erosion
    # settles them with the bound itself
    assert radius[:2].tolist() == [0.27, 0.27]
    assert plain[0] == pytest.approx(0.3 * 2 ** 0.5 / (1 + 2 ** 0.5), abs=0.006) and plain[1] == pytest.approx(0.2, abs=0.006)
    # analytic: a 0.56 m strip has 0.28 m > 0.27 m, so it gets the fine search's radius
    assert radius[2] == pytest.approx(0.28, abs=0.006) and radius[2] == plain[2]
    assert radius[3] == plain[3]


def test_union_tiling_says_when_the_pieces_lie_exactly_inside():
    from clearway.converter.polygons import union_tiling
    # source: shapely's plain union_all is the reference union
    bays = shapely.set_precision(np.array([shapely.box(x * 2.7, 0, (x + 1) * 2.7, 1.1)
                                           for x in range(12)]), 1e-4)
    merged, tiled = union_tiling(bays)
    assert tiled and merged.equals(shapely.union_all(bays))
    # exact: a coverage union computes no new vertex, so every bay is covered by the union
    assert shapely.covered_by(bays, merged).all()
    overlapping = np.concatenate([bays, [shapely.box(1, 0.5, 30, 2)]])
    merged, tiled = union_tiling(overlapping)
    assert not tiled and merged.equals(shapely.union_all(overlapping))


def test_union_of_footprints_over_their_uprights_leaves_the_uprights_out():
    from clearway.converter.polygons import inside_others, union_tiling
    # a rack row drawn as a block of bay blocks: each bay's two 0.1 m upright frames (closed
    # outlines), and the row's footprint over them; back-to-back rows meet edge to edge
    uprights, rows = [], []
    for y in (0.0, 1.1):
        rows.append(shapely.box(0, y, 27, y + 1.1))
        for k in range(10):
            uprights += [shapely.box(2.7 * k, y, 2.7 * k + 0.1, y + 1.1),
                         shapely.box(2.7 * k + 2.6, y, 2.7 * k + 2.7, y + 1.1)]
    pieces = np.array(uprights + rows + [shapely.box(0, 0, 27, 1.1)], dtype=object)
    inside = inside_others(pieces)
    # exact: every upright lies in its row; of the two equal footprints, the second goes
    assert inside.tolist() == [True] * len(uprights) + [False, False, True]
    merged, tiled = union_tiling(pieces)
    # source: shapely's plain union_all of every piece is the reference union
    assert merged.equals(shapely.union_all(pieces)) and not tiled
    # the union's vertices are the rows' corners: none of the uprights' on the rows' edges
    corners = {tuple(xy) for xy in shapely.get_coordinates(np.array(rows)).round(9)}
    assert {tuple(xy) for xy in shapely.get_coordinates(merged).round(9)} == corners
    assert not shapely.is_prepared(pieces).any()


def rotated_double_row(bays, angle, *, width=2.7, depth=1.1, grid=1e-4):
    """Back-to-back rows of bays rotated by `angle` degrees, each bay's insertion point
    rounded to `grid` (as a drawing stores it) and its corners placed from there."""
    theta = np.radians(angle)
    along, across = np.array([np.cos(theta), np.sin(theta)]), np.array([-np.sin(theta), np.cos(theta)])
    tiles = []
    for side in (0, 1):
        for k in range(bays):
            origin = np.round((k * width * along + side * depth * across) / grid) * grid
            corners = [origin, origin + width * along, origin + width * along + depth * across,
                       origin + depth * across]
            tiles.append(shapely.Polygon(corners))
    return np.array(tiles)


@pytest.mark.parametrize("angle", [17.0, 30.0, 61.3])
def test_rotated_bays_that_almost_meet_are_united_by_snapping(angle):
    from clearway.converter.polygons import TILE_SNAP, union_tiling
    bays = rotated_double_row(40, angle)
    merged, tiled = union_tiling(bays)
    # source: shapely's exact union_all as the reference; the snapped union differs from it
    # by less than TILE_SNAP everywhere (both ways), and the 0.1 mm slits that rounding
    # leaves between the rows are closed: one polygon for the double row
    exact = shapely.union_all(bays)
    assert not tiled
    assert shapely.difference(merged, shapely.buffer(exact, TILE_SNAP)).is_empty
    assert shapely.difference(exact, shapely.buffer(merged, TILE_SNAP)).is_empty
    assert len(merged.geoms) == 1 and len(merged.geoms[0].interiors) == 0
    # analytic: 80 bays of 2.7 x 1.1 m, each side moved by at most TILE_SNAP
    assert merged.area == pytest.approx(80 * 2.7 * 1.1, abs=80 * 2 * (2.7 + 1.1) * TILE_SNAP)


@pytest.mark.parametrize("stray", [0.0, 1e-4, 1e-3])
def test_lines_between_bays_that_stray_by_rounding_close_nothing(stray):
    from clearway.converter.polygons import TILE_SNAP, filled_regions
    # rack rows drawn as one outline each at 17 degrees, a line between bays whose ends
    # each stray `stray` metres beyond the outline (placed on their own, then rounded)
    theta = np.radians(17.0)
    along, across = np.array([np.cos(theta), np.sin(theta)]), np.array([-np.sin(theta), np.cos(theta)])
    rings, lines = [], []
    for row in range(3):
        origin = row * 4.0 * across
        corners = [origin, origin + 27 * along, origin + 27 * along + 1.1 * across,
                   origin + 1.1 * across]
        rings.append(shapely.LinearRing(corners))
        for k in range(1, 10):
            foot = origin + 2.7 * k * along
            lines.append(shapely.LineString([foot - stray * across,
                                             foot + (1.1 + stray) * across]))
    area = filled_regions(np.array(lines), np.array(rings), [], gap_tolerance=0.01,
                          nominal_thickness=0.05)
    outlines = shapely.union_all(shapely.polygons(np.array(rings)))
    if stray <= TILE_SNAP:
        # the outlines, to the bit: the lines add no face and no vertex
        assert area.equals(outlines) and shapely.get_num_coordinates(area) == 3 * 5
    # 1 mm out is beyond rounding: the lines go to the search for faces, whatever the noding
    # (GEOS's version) makes of their stubs; either way, analytic: the three rows of
    # 27 m x 1.1 m are covered whole
    assert shapely.difference(outlines, area).area == pytest.approx(0.0, abs=1e-9)


def test_snap_corners_declines_chains_and_far_corners():
    from clearway.converter.polygons import snap_corners
    # source: analytic: corners 0.15 mm apart in a chain three long span 0.3 mm > 0.2 mm
    chain = np.array([shapely.box(0, 0, 1, 1), shapely.box(1.00015, 0, 2, 1),
                      shapely.box(1.0003, 1, 2, 2)])
    assert snap_corners(chain, 2e-4) is None
    apart = np.array([shapely.box(0, 0, 1, 1), shapely.box(1.001, 0, 2, 1)])
    assert snap_corners(apart, 2e-4) is None


def test_covered_agrees_with_shapely_covered_by():
    from clearway.converter.polygons import covered, union_tiling
    rng = np.random.default_rng(11)
    tiles = np.array([shapely.box(x, y, x + 1, y + 1) for x in range(6) for y in range(4)
                      if (x, y) not in ((2, 1), (3, 2))])           # two holes in the floor
    area, tiled = union_tiling(tiles)
    # GEOS 3.14 merges this coverage; 3.13 (shapely 2.1.0's wheels) leaves a ring touching
    # itself where the two holes meet at a corner, invalid, and union_tiling falls back to
    # the plain union (not tiled), whose pieces then prove nothing
    assert tiled or shapely.geos_version < (3, 14, 0)
    grid = rng.integers(0, 7, size=(300, 2, 2)).astype(float)    # lines on the tile edges
    loose = rng.uniform(-0.5, 6.5, size=(300, 2, 2))             # lines anywhere
    lines = shapely.linestrings(np.concatenate([grid, loose]))
    lines = lines[shapely.length(lines) > 0]
    # source: shapely's plain covered_by on the union is the reference
    expected = shapely.covered_by(lines, area)
    assert expected.any() and not expected.all()
    assert (covered(lines, area) == expected).all()
    if tiled:
        assert (covered(lines, area, pieces=tiles) == expected).all()
        # a line over two tiles is covered by neither alone, yet by the union
        across = shapely.LineString([(0.5, 0.5), (1.5, 0.5)])
        assert covered([across], area, pieces=tiles).tolist() == [True]
    assert not shapely.is_prepared(area)             # the caller's geometry is left as it was


def test_segments_cover_the_lines_they_come_from():
    rings = shapely.get_exterior_ring(np.array([shapely.box(0, 0, 2, 1),
                                                shapely.Point(5, 5).buffer(1.0)]))
    pieces = segments(rings)
    # source: shapely's union_all and line_merge of the pieces give back each ring
    merged = shapely.get_parts(shapely.line_merge(shapely.union_all(pieces)))
    assert len(pieces) == int(np.sum(shapely.get_num_coordinates(rings))) - 2
    assert sorted(round(length, 9) for length in shapely.length(merged)) == \
        sorted(round(length, 9) for length in shapely.length(rings))


def test_pieces_near_edge_agree_with_shapely_distance():
    from clearway.converter.polygons import pieces_near_edge
    rng = np.random.default_rng(2)
    hall = shapely.Polygon([(0, 0), (120, 0), (120, 40), (60, 80), (0, 80)])
    xy = rng.uniform(-5, 125, size=(400, 2))
    columns = shapely.buffer(shapely.points(xy), 0.2, quad_segs=4)
    walls = shapely.MultiPolygon(list(shapely.get_parts(shapely.union_all(columns))))
    kept = pieces_near_edge(walls, hall, 21.0)
    # source: shapely's plain contains_properly and distance to the hall's outline
    pieces = shapely.get_parts(walls)
    expected = ~shapely.contains_properly(hall, pieces) | \
        (shapely.distance(pieces, hall.exterior) <= 21.0)
    assert 0 < expected.sum() < len(pieces)
    assert shapely.get_parts(kept).tolist() == pieces[expected].tolist()
    assert not shapely.is_prepared(hall)
    assert pieces_near_edge(walls, shapely.box(-10, -10, 130, 130), 200.0) is None


@pytest.mark.parametrize("gap", [0.0, 3.0])
def test_leak_search_with_columns_deep_inside_matches_the_search_over_every_piece(gap):
    from clearway.converter.polygons import CLOSING_REACH, find_leaks, pieces_near_edge
    # a closed 200 x 120 m hall, 0.3 m walls, columns on a 6 m grid (most deeper inside
    # than the closing reaches), and a 30 x 40 m annex east of it with a gap `gap` wide in
    # its east wall: the annex's floor escapes through the gap
    hall, inner = shapely.box(0, 0, 200, 120), shapely.box(0.3, 0.3, 199.7, 119.7)
    annex = shapely.box(200, 40, 230, 80).difference(shapely.box(199.7, 40.3, 229.7, 79.7))
    annex = annex.difference(shapely.box(229, 60, 231, 60 + gap))
    grid = np.array([(x, y) for x in np.arange(6, 195, 6.0) for y in np.arange(6, 115, 6.0)])
    columns = shapely.buffer(shapely.points(grid), 0.25, quad_segs=4)
    walls = shapely.union_all([hall.difference(inner), annex, *columns])
    enclosed = shapely.union_all([inner, walls] + ([shapely.box(200, 40, 230, 80)] if not gap
                                                   else []))
    assert pieces_near_edge(walls, enclosed, CLOSING_REACH * 8.0) is not None
    leaks, sealed = find_leaks(walls, enclosed)
    # source: the closing over every piece with shapely's plain buffer and union_all
    closed = shapely.buffer(shapely.buffer(walls, 4.0, join_style="mitre"), -4.0,
                            join_style="mitre")
    base = shapely.union_all(shapely.polygons(shapely.get_exterior_ring(
        shapely.get_parts(enclosed))))
    filled = shapely.polygons(shapely.get_exterior_ring(shapely.get_parts(
        shapely.union_all([closed, base]))))
    escaped = shapely.difference(shapely.union_all(filled), shapely.union_all([closed, base]))
    assert (escaped.area >= 1.0) == bool(leaks)
    if gap:
        # analytic: one leak, in the middle of the 3 m gap in the annex wall at x = 229.7 to 230
        assert len(leaks) == 1 and leaks[0][1] == pytest.approx(61.5, abs=0.1)
        assert sealed.area == pytest.approx(200 * 120 + 30 * 40, rel=1e-3)
    else:
        assert leaks == [] and sealed.area == pytest.approx(200 * 120 + 30 * 40, rel=1e-9)



@pytest.mark.parametrize("gap", [0.2, 0.9, 3.5, 6.0])
def test_a_gap_is_found_by_the_narrowest_closing_that_seals_it(gap):
    """A 40 x 30 m building, 0.3 m walls, three columns inside, and one gap in its south
    wall: a hairline, a door, a dock door and a drive-in opening. The closings are tried two
    at a time on threads, and the search stops at the first that seals the floor; the 6 m
    gap is sealed by the widest closing only (8 m; 4 m does not)."""
    from clearway.converter.polygons import LEAK_WIDTHS, find_leaks
    outer, inner = shapely.box(0, 0, 40, 30), shapely.box(0.3, 0.3, 39.7, 29.7)
    walls = outer.difference(inner).difference(shapely.box(12 - gap / 2, -1, 12 + gap / 2, 1))
    walls = shapely.union_all([walls] + [shapely.box(x, 10, x + 0.4, 10.4)
                                         for x in (10, 20, 30)])
    assert gap < LEAK_WIDTHS[-2] or LEAK_WIDTHS[-2] < gap < LEAK_WIDTHS[-1]
    leaks, sealed = find_leaks(walls, walls)
    # analytic: one leak in the middle of the gap, in the wall's line, as wide as the gap
    # (less the 1 mm the slivers are opened by, at each end)
    assert len(leaks) == 1
    assert leaks[0] == pytest.approx((12.0, 0.15, gap), abs=3e-3)
    assert sealed.area == pytest.approx(40 * 30, rel=1e-9)
    # the threads are joined: none is left to keep the build from forking
    assert not any(t.name.startswith("ThreadPoolExecutor") for t in threading.enumerate())


def _corridor_wing(msp, mouths=("west",)):
    """A 30 x 12 m wing of 0.2 m walls (each wall piece a closed rectangle) with a corridor
    1.6 m clear from west to east between closed rooms; the corridor's ends named in
    `mouths` are open to the outside, nothing drawn across them."""
    pieces = [(0, 0, 30, 0.2), (0, 11.8, 30, 12),
              (0.2, 4.9, 29.8, 5.1), (0.2, 6.7, 29.8, 6.9)]  # corridor walls
    for x0, end in ((0, "west"), (29.8, "east")):
        pieces += [(x0, 0, x0 + 0.2, 5.1), (x0, 6.7, x0 + 0.2, 12)] if end in mouths else [
            (x0, 0, x0 + 0.2, 12)]
    for x0, y0, x1, y1 in pieces:
        msp.add_lwpolyline(rectangle(x0, y0, x1, y1), close=True, dxfattribs={"layer": "A-WALL"})


@pytest.mark.parametrize("mouths", [("west",), ("west", "east")])
def test_a_corridor_open_at_its_end_is_floor_with_its_mouth_a_leak(tmp_path, mouths):
    """A corridor whose end is left open (an entrance with nothing drawn in it, flush with
    the corridor's walls) is as narrow as the gap it opens through: every closing that
    seals the gap fills the corridor too. It is floor, and its mouths are reported."""
    doc = new_drawing(6)
    _corridor_wing(doc.modelspace(), mouths)
    plan = read_floorplan(save(doc, tmp_path))
    # analytic: each mouth spans y 5.1 to 6.7 in its end wall's line (x 0 to 0.2, 29.8 to 30)
    expected = [(0.0, 5.9, 1.6), (30.0, 5.9, 1.6)][:len(mouths)]
    assert [(leak.x, leak.y, leak.width) for leak in plan.leaks] == [
        pytest.approx(leak, abs=0.21) for leak in expected]
    assert plan.free_space.contains(shapely.Point(15.0, 5.9))
    # analytic: the wing's floor inside its walls, less the two corridor walls, plus each
    # mouth's 0.2 m x 1.6 m through its wall line (sealed at the wall's outer face)
    closed = new_drawing(6)
    _corridor_wing(closed.modelspace(), ())
    closed = read_floorplan(save(closed, tmp_path, "closed.dxf"))
    assert closed.leaks == ()
    floor = 29.6 * 11.6 - 2 * 29.6 * 0.2
    assert closed.free_space.area == pytest.approx(floor, rel=1e-9)
    assert plan.free_space.area == pytest.approx(floor + len(mouths) * 0.2 * 1.6, rel=1e-3)


@pytest.mark.parametrize("outline", ["pilasters", "entrance recess", "courtyard"])
def test_notches_in_a_facade_are_not_floor(outline):
    """What a closing also fills but is outside: the bays between pilasters (0.4 m deep,
    5.6 m wide), an entrance recess (3 m wide, 2 m deep) and a U-shaped building's
    courtyard (6 m wide, 20 m deep). None is reported, none joins the floor."""
    from clearway.converter.polygons import find_leaks
    outer, inner = shapely.box(0, 0, 40, 30), shapely.box(0.3, 0.3, 39.7, 29.7)
    if outline == "pilasters":
        walls = shapely.union_all([outer.difference(inner)] + [
            shapely.box(x, -0.4, x + 0.4, 0) for x in np.arange(0.0, 40.1, 6.0)])
    elif outline == "entrance recess":
        notch = shapely.box(18.5, -0.1, 21.5, 2.0)
        walls = shapely.union_all([outer.difference(inner).difference(notch),
                                   notch.buffer(0.3, join_style="mitre").difference(notch)
                                   .intersection(shapely.box(0, 0, 40, 30))])
        inner = inner.difference(notch.buffer(0.3, join_style="mitre"))
    else:
        court = shapely.box(17, -0.1, 23, 20)
        walls = shapely.union_all([outer.difference(inner).difference(court),
                                   court.buffer(0.3, join_style="mitre").difference(court)
                                   .intersection(shapely.box(0, 0, 40, 30))])
        inner = inner.difference(court.buffer(0.3, join_style="mitre"))
    enclosed = shapely.union_all([inner, walls])
    leaks, sealed = find_leaks(walls, enclosed)
    assert leaks == []
    # analytic: the building's own outline, nothing added
    assert sealed.area == pytest.approx(shapely.union_all([inner, walls]).area, rel=1e-9)


def _random_runs(rng, runs, *, rows=3):
    """Runs of rack bays (1 to `rows` rows of 1 to 12 bays, now and then a cell left out: a
    notch, or a hole in a 3 x 3 block), apart from each other, in shuffled order."""
    bays = []
    for run in range(runs):
        x0, y0 = (run % 8) * 40.0, (run // 8) * 9.0
        height, length = rng.integers(1, rows + 1), rng.integers(1, 13)
        if height == 3 and rng.random() < 0.3:
            length = 3                                   # a ring of 8 bays around a hole
        skip = (height // 2, length // 2) if rng.random() < 0.4 else None
        for row in range(height):
            for index in range(length):
                if (row, index) != skip:
                    bays.append(shapely.box(x0 + index * 2.7, y0 + row * 1.1,
                                            x0 + (index + 1) * 2.7, y0 + (row + 1) * 1.1))
    bays = shapely.set_precision(np.array(bays), 1e-4)
    return bays[rng.permutation(len(bays))]


@pytest.mark.parametrize("seed", range(16))
def test_coverage_union_by_group_is_shapelys_coverage_union_to_the_byte(seed):
    from clearway.converter.polygons import _coverage_union_by_group, coverage_union
    rng = np.random.default_rng(seed)
    # two rows at most: every bay lies on its run's outline, so the groups are always used
    bays = _random_runs(rng, 60, rows=2 if seed % 2 else 3)
    # source: shapely's plain coverage_union_all (GEOS) of all the bays at once
    expected = shapely.to_wkb(shapely.coverage_union_all(bays))
    assert shapely.to_wkb(coverage_union(bays)) == expected
    grouped = _coverage_union_by_group(bays, min_groups=2, min_size=1)
    assert grouped is not None or seed % 2 == 0
    assert grouped is None or shapely.to_wkb(grouped) == expected
    # and the union itself is right: shapely's union_all covers the same ground
    assert coverage_union(bays).symmetric_difference(shapely.union_all(bays)).area < 1e-9


def test_coverage_union_by_group_declines_what_it_cannot_order():
    from clearway.converter.polygons import _coverage_union_by_group
    bays = _random_runs(np.random.default_rng(1), 80, rows=2)
    grouped = _coverage_union_by_group(bays)
    assert grouped is not None
    # source: shapely's plain coverage_union_all of all the bays at once
    assert shapely.to_wkb(grouped) == shapely.to_wkb(shapely.coverage_union_all(bays))
    # two squares meeting at a corner merge into two polygons: the union is taken whole
    corner = np.concatenate([bays, shapely.set_precision(np.array(
        [shapely.box(400, 400, 401, 401), shapely.box(401, 401, 402, 402)]), 1e-4)])
    assert _coverage_union_by_group(corner) is None
    # a block whose first bay lies inside it (no edge on its outline): taken whole
    block = shapely.set_precision(np.array([shapely.box(500 + x, 500 + y, 501 + x, 501 + y)
                                            for x, y in [(1, 1)] + [(x, y) for x in range(3)
                                                                    for y in range(3)
                                                                    if (x, y) != (1, 1)]]), 1e-4)
    assert _coverage_union_by_group(np.concatenate([block, bays])) is None


def test_coverage_union_by_group_keeps_holes_to_the_byte():
    from clearway.converter.polygons import _coverage_union_by_group
    # 20 rings of 8 bays, each around an empty cell (every bay on the ring's outline)
    rng = np.random.default_rng(4)
    cells = [(g % 5 * 10.0 + x, g // 5 * 10.0 + y) for g in range(20) for x in range(3)
             for y in range(3) if (x, y) != (1, 1)]
    bays = shapely.set_precision(np.array([shapely.box(x, y, x + 1, y + 1) for x, y in cells]),
                                 1e-4)[rng.permutation(len(cells))]
    grouped = _coverage_union_by_group(bays)
    assert grouped is not None
    assert all(len(polygon.interiors) == 1 for polygon in grouped.geoms)
    # source: shapely's plain coverage_union_all of all the bays at once
    assert shapely.to_wkb(grouped) == shapely.to_wkb(shapely.coverage_union_all(bays))


@pytest.mark.parametrize("seed", [0, 1, 2])
def test_union_touching_is_the_union_of_all(seed):
    from clearway.converter.polygons import union_touching

    rng = np.random.default_rng(seed)
    corners = rng.integers(0, 40, size=(60, 2)) * 0.25        # quarter metres: exact crossings
    sizes = rng.integers(1, 12, size=(60, 2)) * 0.25
    boxes = shapely.box(*corners.T, *(corners + sizes).T)
    columns = shapely.buffer(shapely.points(rng.uniform(0, 12, size=(30, 2))), 0.2)
    parts = np.concatenate([boxes, columns])
    merged = union_touching(parts)
    whole = shapely.union_all(parts)
    # analytic: a union is the same point set whichever operands are united first
    assert merged.is_valid
    assert shapely.symmetric_difference(merged, whole).area == pytest.approx(0, abs=1e-9)
    assert len(merged.geoms) == len(shapely.get_parts(whole))


def test_free_space_is_the_same_bytes_whatever_the_order_of_the_obstacles():
    from clearway.converter.polygons import free_space

    hall = shapely.box(0, 0, 30, 20)
    racks = [shapely.box(2 + 4 * k, 3, 4 + 4 * k, 17) for k in range(6)]
    pillars = [shapely.box(3.5 + 4 * k, 9.75, 4.5 + 4 * k, 10.25) for k in range(6)]
    once = free_space(hall, [shapely.union_all(racks), shapely.union_all(pillars)])
    again = free_space(hall, [shapely.union_all(pillars[::-1]), *racks[::-1]])
    # analytic: the same set difference; normalized, so the ring order and the first vertex
    # of each ring (which the boundary sampling starts from) do not depend on the union's order
    assert shapely.to_wkb(once) == shapely.to_wkb(again)
    assert once.area == pytest.approx(30 * 20 - 6 * 2 * 14 - 6 * 0.5 * 0.5, abs=1e-9)


def test_floor_plan_areas_and_openings_do_not_show_how_they_were_united(samples):
    plan = read_floorplan(samples / "office_ground_floor.dxf")
    # analytic: a normalized geometry is its own normal form, to the byte (GEOS normalize)
    for role, region in plan.regions.items():
        assert shapely.to_wkb(shapely.normalize(region)) == shapely.to_wkb(region), role
    assert shapely.to_wkb(shapely.normalize(plan.free_space)) == shapely.to_wkb(plan.free_space)
    # a gap found from either jamb is one opening: the lower jamb in (x, y) comes first
    assert len(plan.openings) == 17              # sample_drawings/README.md: 17 openings
    assert all(opening.start <= opening.end for opening in plan.openings)
