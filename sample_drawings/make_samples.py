"""Write the bundled sample drawings: ``python sample_drawings/make_samples.py``.

Every drawing is an invented scenario, written the way architects and facility teams draw:
walls as pairs of face lines, racking as blocks placed by INSERT and MINSERT, stations as
blocks with a label attribute or as points with a text beside them. The output is
deterministic (fixed header metadata, no randomness), so regenerating leaves git clean.

Layer names follow the common AIA / US National CAD Standard style and match clearway's
default layer roles, so the drawings need no config file.
"""

from __future__ import annotations

import sys
import datetime
from pathlib import Path

import ezdxf
from ezdxf.tools.juliandate import juliandate
from ezdxf.enums import TextEntityAlignment

HERE = Path(__file__).resolve().parent

WALL, EXTERIOR, COLUMNS, OUTLINE = "A-WALL", "A-WALL-EXTR", "A-COLS", "A-FLOR-OTLN"
RACKING, KEEPOUT, STATIONS, SHARED = "A-EQPM-RACK", "A-AREA-KEEPOUT", "A-EQPM-STATION", "A-AREA-SHARED"
DOORS, LEVELLERS, NOTES = "A-DOOR", "A-FLOR-LEVL", "A-ANNO-NOTE"


def new_drawing(insunits):
    """Return a new R2010 drawing with the trade's layers and the station block."""
    doc = ezdxf.new("R2010", units=insunits)
    colours = {WALL: 1, EXTERIOR: 1, COLUMNS: 3, OUTLINE: 8, RACKING: 5, KEEPOUT: 6,
               STATIONS: 2, SHARED: 4, DOORS: 7, LEVELLERS: 8, NOTES: 7}
    for name, colour in colours.items():
        doc.layers.add(name, color=colour)
    return doc


def station_block(doc, radius):
    """Define STATION: a marker ring on layer 0 and a LABEL attribute definition."""
    block = doc.blocks.new("STATION")
    block.add_circle((0, 0), radius)
    block.add_line((-radius, 0), (radius, 0))
    block.add_attdef("LABEL", (radius * 1.2, radius * 1.2), dxfattribs={"height": radius})


def add_station(msp, name, x, y, *, labelled_block, text_height):
    """Place one station: a STATION insert with its LABEL, or a POINT plus a TEXT beside it."""
    if labelled_block:
        insert = msp.add_blockref("STATION", (x, y), dxfattribs={"layer": STATIONS})
        insert.add_auto_attribs({"LABEL": name})
    else:
        msp.add_point((x, y), dxfattribs={"layer": STATIONS})
        msp.add_text(name, height=text_height, dxfattribs={"layer": STATIONS}).set_placement(
            (x + text_height, y + text_height), align=TextEntityAlignment.LEFT)


def double_line_wall(msp, start, end, thickness, layer, *, caps=(True, True), short_end=0.0):
    """Draw a straight wall as its two face LINEs plus end caps, as architects draw them.

    ``short_end`` stops both faces that far short of ``end`` (a drafting gap to be closed).
    """
    (x0, y0), (x1, y1) = start, end
    length = ((x1 - x0) ** 2 + (y1 - y0) ** 2) ** 0.5
    ux, uy = (x1 - x0) / length, (y1 - y0) / length
    nx, ny = -uy * thickness / 2, ux * thickness / 2
    x1s, y1s = x1 - ux * short_end, y1 - uy * short_end
    left = ((x0 + nx, y0 + ny), (x1s + nx, y1s + ny))
    right = ((x0 - nx, y0 - ny), (x1s - nx, y1s - ny))
    msp.add_line(*left, dxfattribs={"layer": layer})
    msp.add_line(*right, dxfattribs={"layer": layer})
    if caps[0]:
        msp.add_line(left[0], right[0], dxfattribs={"layer": layer})
    if caps[1]:
        msp.add_line(left[1], right[1], dxfattribs={"layer": layer})


def rectangle(x0, y0, x1, y1):
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def distribution_centre(*, revision_b=False):
    """The distribution centre, millimetres: 60 m x 40 m, 209 rack bays, 13 stations."""
    mm = 1000.0
    doc = new_drawing(4)
    msp = doc.modelspace()
    station_block(doc, 0.2 * mm)

    # one rack bay (2.7 m x 1.1 m) on layer 0: it takes the layer of the INSERT placing it
    bay = doc.blocks.new("RACK_BAY_2700x1100")
    bay.add_lwpolyline(rectangle(0, 0, 2.7 * mm, 1.1 * mm), close=True)
    bay.add_line((0, 0), (2.7 * mm, 1.1 * mm))
    # a run of nine bays, itself a block of INSERTs (nested blocks)
    run = doc.blocks.new("RACK_RUN_9")
    for index in range(9):
        run.add_blockref(bay.name, (index * 2.7 * mm, 0))

    # exterior wall: two nested closed polylines 0.3 m apart, and the building outline
    msp.add_lwpolyline(rectangle(0, 0, 60 * mm, 40 * mm), close=True,
                       dxfattribs={"layer": EXTERIOR})
    msp.add_lwpolyline(rectangle(0.3 * mm, 0.3 * mm, 59.7 * mm, 39.7 * mm), close=True,
                       dxfattribs={"layer": EXTERIOR})
    msp.add_lwpolyline(rectangle(0, 0, 60 * mm, 40 * mm), close=True,
                       dxfattribs={"layer": OUTLINE})

    # columns on a 12 m grid in the dock zone: round (0.5 m) and square (0.4 m)
    for x in (12, 24, 36):
        msp.add_circle((x * mm, 9.0 * mm), 0.25 * mm, dxfattribs={"layer": COLUMNS})
    for x in (48,):
        msp.add_lwpolyline(rectangle((x - 0.2) * mm, 8.8 * mm, (x + 0.2) * mm, 9.2 * mm),
                           close=True, dxfattribs={"layer": COLUMNS})

    # office partition (0.1 m) in the south-west corner, door 1.2 m wide; its north face
    # stops 1 mm short of the exterior wall, a gap the converter closes
    double_line_wall(msp, (8.0 * mm, 7.0 * mm), (0.3 * mm, 7.0 * mm), 0.1 * mm, WALL,
                     caps=(False, True), short_end=1.0)
    double_line_wall(msp, (8.0 * mm, 7.05 * mm), (8.0 * mm, 3.2 * mm), 0.1 * mm, WALL)
    double_line_wall(msp, (8.0 * mm, 2.0 * mm), (8.0 * mm, 0.3 * mm), 0.1 * mm, WALL,
                     caps=(True, False))
    msp.add_arc((8.0 * mm, 2.0 * mm), 1.2 * mm, 90, 180, dxfattribs={"layer": DOORS})
    if revision_b:
        # revision B: a partition between dock staging and the charging area, door 2.0 m
        double_line_wall(msp, (44.0 * mm, 0.3 * mm), (44.0 * mm, 4.0 * mm), 0.1 * mm, WALL,
                         caps=(False, True))
        double_line_wall(msp, (44.0 * mm, 6.0 * mm), (44.0 * mm, 10.0 * mm), 0.1 * mm, WALL)

    # battery-charging room: hatched keep-out zone with its outline
    keepout = rectangle(50 * mm, 0.3 * mm, 59.7 * mm, 6 * mm)
    msp.add_lwpolyline(keepout, close=True, dxfattribs={"layer": KEEPOUT})
    hatch = msp.add_hatch(color=6, dxfattribs={"layer": KEEPOUT})
    hatch.set_pattern_fill("ANSI31", scale=100)
    hatch.paths.add_polyline_path(keepout, is_closed=True)

    # pedestrian walkway shared with people, along the front of the racking
    walkway = rectangle(0.3 * mm, 10.0 * mm, 31.0 * mm, 11.0 * mm)
    shared = msp.add_hatch(color=4, dxfattribs={"layer": SHARED})
    shared.paths.add_polyline_path(walkway, is_closed=True)

    # racking: double rows (2 x 1.1 m deep) with 3.2 m aisles, a 4.4 m cross aisle at
    # x 31.0-35.4 m, east runs butting the east wall (dead-end aisles), a single row
    # backing onto the north wall
    row_y = [11.6, 17.0, 22.4, 27.8, 33.2]
    if revision_b:
        row_y[2] = 23.0  # revision B: the west half of the third double row moved 0.6 m north
    for y in row_y:
        msp.add_blockref(bay.name, (4.0 * mm, y * mm), dxfattribs={"layer": RACKING}).grid(
            size=(2, 10), spacing=(1.1 * mm, 2.7 * mm))
    for y in (11.6, 17.0, 22.4, 27.8, 33.2):
        for offset in (0.0, 1.1):
            msp.add_blockref(run.name, (35.4 * mm, (y + offset) * mm),
                             dxfattribs={"layer": RACKING})
    msp.add_blockref(bay.name, (4.0 * mm, 38.6 * mm), dxfattribs={"layer": RACKING}).grid(
        size=(1, 10), spacing=(1.1 * mm, 2.7 * mm))
    # the north-east run is drawn mirrored from the east wall
    msp.add_blockref(run.name, (59.7 * mm, 38.6 * mm),
                     dxfattribs={"layer": RACKING, "xscale": -1.0})

    # dock levellers outside the south wall, dock doors (not mapped to any role)
    for index in range(6):
        x = (12 + 5 * index) * mm
        msp.add_lwpolyline(rectangle(x - 1.0 * mm, -2.5 * mm, x + 1.0 * mm, 0),
                           close=True, dxfattribs={"layer": LEVELLERS})
        msp.add_line((x - 1.5 * mm, 0), (x + 1.5 * mm, 0), dxfattribs={"layer": DOORS})

    # stations: docks and chargers as labelled blocks, pick stations as POINT + TEXT
    for index in range(6):
        add_station(msp, f"DOCK-{index + 1:02d}", (12 + 5 * index) * mm, 1.5 * mm,
                    labelled_block=True, text_height=250)
    for index in range(3):
        add_station(msp, f"CHG-{index + 1:02d}", (51 + 3 * index) * mm, 7.5 * mm,
                    labelled_block=True, text_height=250)
    for index, x in enumerate((10.0, 16.0, 22.0, 28.0)):
        add_station(msp, f"PICK-{index + 1:02d}", x * mm, 15.4 * mm,
                    labelled_block=False, text_height=250)
    msp.add_text("BATTERY ROOM - NO ROBOTS", height=300,
                 dxfattribs={"layer": NOTES}).set_placement((51 * mm, 3 * mm))
    return doc


def clinic():
    """The clinic floor, inches: 60 ft x 40 ft, a corridor and five rooms, 4 stations."""
    doc = new_drawing(1)
    msp = doc.modelspace()
    station_block(doc, 6)

    # exterior wall 8 in thick: two nested closed polylines
    msp.add_lwpolyline(rectangle(0, 0, 720, 480), close=True, dxfattribs={"layer": EXTERIOR})
    msp.add_lwpolyline(rectangle(8, 8, 712, 472), close=True, dxfattribs={"layer": EXTERIOR})

    # corridor y 200-272 in, walls 5 in; doorways (jambs capped) in the corridor walls:
    # supply 42 in, pharmacy 36 in, exam 28 in (too narrow for the robot), waiting 48 in,
    # staff 36 in
    def wall_with_doors(y, doors):
        edges = [8.0] + [value for door in doors for value in door] + [712.0]
        for start, end in zip(edges[0::2], edges[1::2]):
            double_line_wall(msp, (start, y), (end, y), 5, WALL,
                             caps=(start != 8.0, end != 712.0))
    wall_with_doors(197.5, [(100, 142), (320, 356), (560, 588)])
    wall_with_doors(274.5, [(150, 198), (500, 536)])
    for x, (y0, y1) in ((242.5, (8, 195)), (482.5, (8, 195)), (362.5, (277, 472))):
        double_line_wall(msp, (x, y0), (x, y1), 5, WALL, caps=(False, False))

    # reception counter wall with a rounded end: a closed polyline with a bulge of 1
    msp.add_lwpolyline([(8, 327, 0, 0, 0), (90, 327, 0, 0, 1), (90, 333, 0, 0, 0), (8, 333)],
                       format="xyseb", close=True, dxfattribs={"layer": WALL})

    # round columns (16 in) in the waiting area
    for x in (120, 240):
        msp.add_circle((x, 400), 8, dxfattribs={"layer": COLUMNS})

    # waiting area and corridor are shared with people
    waiting = rectangle(8, 277, 360, 472)
    shared = msp.add_hatch(color=4, dxfattribs={"layer": SHARED})
    shared.paths.add_polyline_path(waiting, is_closed=True)

    add_station(msp, "SUPPLY", 120, 100, labelled_block=True, text_height=6)
    add_station(msp, "PHARMACY", 400, 100, labelled_block=False, text_height=6)
    add_station(msp, "EXAM-3", 600, 100, labelled_block=True, text_height=6)
    add_station(msp, "CHARGER", 640, 420, labelled_block=True, text_height=6)
    return doc


def _door_block(doc, name, width):
    """A door block as offices draw it: leaf and quarter-circle swing on layer 0, hinge at
    the origin, closed along +x, opening towards +y (block units: mm)."""
    block = doc.blocks.new(name)
    block.add_lwpolyline([(0, 0), (-40, 0), (-40, width), (0, width)], close=True)  # leaf, open
    block.add_arc((0, 0), width, 0, 90)


def _window_block(doc, name):
    """A window block 1000 mm long across a 300 mm wall: frame lines and two glazing lines
    (stretched along x to the opening's width when inserted)."""
    block = doc.blocks.new(name)
    for y in (0, 130, 170, 300):
        block.add_line((0, y), (1000, y))


def office_ground_floor():
    """A small office ground floor as an architect's office sends it, millimetres.

    The habits on purpose: the header says inches ($INSUNITS 1) though every length is in
    mm; the architecture came in as a bound external reference (layers ``ARCH$0$...``), the
    glazing through an attached one (``ARCH|A-GLAZ``); walls are closed outlines stopping at
    every opening (300 mm exterior, 100 mm partitions, a 750 mm masonry wall drawn as two
    outlines); doors and windows are blocks on their own layers; room names are texts; a
    stair; and a building section drawn beside the plan on the same layers.
    """
    import shapely

    doc = ezdxf.new("R2010", units=1)                        # the header lies: inches
    wall, door, glass = "ARCH$0$A-WALL", "ARCH$0$A-DOOR", "ARCH|A-GLAZ"
    stair, text = "ARCH$0$A-FLOR-STRS", "ARCH$0$A-ANNO-TEXT"
    for name, colour in ((wall, 1), (door, 3), (glass, 4), (stair, 8), (text, 7),
                         (STATIONS, 2)):
        doc.layers.add(name, color=colour)
    station_block(doc, 150)
    for width in (800, 1000):
        _door_block(doc, f"DOOR-{width}", width)
    _window_block(doc, "WIN-STD")
    msp = doc.modelspace()

    # walls as solids: the building 24 m x 14 m, exterior 300 mm; a corridor 2.0 m wide
    # along y 6000-8000 with 100 mm partitions; a 750 mm masonry wall at x 12000
    box = shapely.box
    walls = box(0, 0, 24000, 14000).difference(box(300, 300, 23700, 13700))
    walls = walls.union(box(300, 5950, 23700, 6050)).union(box(300, 7950, 23700, 8050))
    for x in (6000, 18000):
        walls = walls.union(box(x - 50, 300, x + 50, 5950)).union(box(x - 50, 8050, x + 50, 13700))
    walls = walls.union(box(11625, 300, 12375, 5950)).union(box(11625, 8050, 12375, 13700))
    doors = [  # doors from the corridor into the rooms, mm (the archive's 800 is too narrow)
        ((2500, 5950), 1000), ((8000, 5950), 1000), ((14000, 5950), 800), ((20000, 5950), 1000),
        ((2500, 7950), 1000), ((8000, 7950), 1000), ((14000, 7950), 1000), ((20000, 7950), 1000)]
    cuts = []
    for (x, y), width in doors:
        cuts.append(box(x, y - 1, x + width, y + 101))
    cuts.append(box(-1, 6300, 301, 7700))                    # 1.4 m double door, west wall
    windows = [(x, 0) for x in (2000, 8000, 14500, 20000)] + [(x, 13700) for x in (2000, 8000, 14500, 20000)]
    for x, y in windows:
        cuts.append(box(x, y - 1, x + 1500, y + 301))
    for cut in cuts:
        walls = walls.difference(cut)
    for polygon in shapely.get_parts(shapely.set_precision(walls, 1.0)):
        for ring in (polygon.exterior, *polygon.interiors):
            msp.add_lwpolyline(list(ring.coords)[:-1], close=True, dxfattribs={"layer": wall})

    for (x, y), width in doors:
        # on the south side of the corridor the leaf swings into the room below (-y)
        south = y < 7000
        msp.add_blockref(f"DOOR-{width}", (x, y + (0 if south else 100)),
                         dxfattribs={"layer": door, "yscale": -1 if south else 1})
    for hinge_y, scale in ((6300, 1), (7700, -1)):            # the entrance's two leaves
        msp.add_blockref("DOOR-800", (300, hinge_y), dxfattribs={
            "layer": door, "rotation": 90, "yscale": scale, "xscale": 700 / 800})
    for x, y in windows:
        msp.add_blockref("WIN-STD", (x, y), dxfattribs={"layer": glass, "xscale": 1.5})

    # a stair in the north-east room: outline and treads (impassable)
    msp.add_lwpolyline(rectangle(21000, 10500, 23500, 13500), close=True, dxfattribs={"layer": stair})
    for k in range(1, 11):
        msp.add_line((21000, 10500 + 280 * k), (23500, 10500 + 280 * k), dxfattribs={"layer": stair})

    for name, x, y in (("1.01 RECEPTION", 3000, 3000), ("1.02 OFFICE", 9000, 3000),
                       ("1.03 ARCHIVE", 15000, 3000), ("1.04 STORE", 21000, 3000),
                       ("1.05 MEETING", 3000, 11000), ("1.06 OFFICE", 9000, 11000),
                       ("1.07 LAB", 15000, 11000), ("1.08 STAIR", 19500, 11000),
                       ("CORRIDOR", 10000, 7000)):
        msp.add_text(name, height=250, dxfattribs={"layer": text}).set_placement(
            (x, y), align=TextEntityAlignment.LEFT)

    add_station(msp, "CHARGER", 1500, 7000, labelled_block=True, text_height=150)
    add_station(msp, "DOCK-A", 3000, 1500, labelled_block=True, text_height=150)
    add_station(msp, "DOCK-B", 15000, 1500, labelled_block=True, text_height=150)
    add_station(msp, "LAB", 15000, 12000, labelled_block=True, text_height=150)

    # section A-A beside the plan on the same wall layer: ground, two floors, roof
    x0 = 30000
    for y in (0, 3500, 7000):
        msp.add_lwpolyline(rectangle(x0, y, x0 + 24000, y + 300), close=True, dxfattribs={"layer": wall})
    for x in (x0, x0 + 23700, x0 + 11625):
        msp.add_lwpolyline(rectangle(x, 300, x + 300, 7000), close=True, dxfattribs={"layer": wall})
    msp.add_lwpolyline([(x0 - 500, 7300), (x0 + 12000, 9500), (x0 + 24500, 7300)],
                       dxfattribs={"layer": wall})
    return doc


#: The invented issue date of each drawing, written as its $TDUPDATE (last saved).
ISSUED = {"distribution_centre.dxf": datetime.datetime(2026, 10, 5, 9, 30),
          "distribution_centre_rev_b.dxf": datetime.datetime(2026, 11, 16, 14, 0),
          "clinic.dxf": datetime.datetime(2026, 9, 21, 11, 0),
          "office_ground_floor.dxf": datetime.datetime(2026, 11, 30, 16, 45)}


def _date_drawing(doc, issued):
    """Save `doc` with a fixed last-saved date instead of ezdxf's fixed 2000-01-01.

    ezdxf sets the header dates while saving, so the date is put in right after that step.
    """
    update = doc._update_metadata

    def update_and_date():
        update()
        doc.header["$TDUPDATE"] = juliandate(issued)
    doc._update_metadata = update_and_date


def write_samples(folder=HERE):
    """Write the three sample drawings into `folder`; return their paths."""
    folder = Path(folder)
    previous = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True  # reproducible dates and GUIDs
    try:
        drawings = {
            "distribution_centre.dxf": distribution_centre(),
            "distribution_centre_rev_b.dxf": distribution_centre(revision_b=True),
            "clinic.dxf": clinic(),
            "office_ground_floor.dxf": office_ground_floor(),
        }
        paths = []
        for name, doc in drawings.items():
            _date_drawing(doc, ISSUED[name])
            # ezdxf adds CLASS records from a set of entity types: fix their order
            doc.classes.add_required_classes(doc.dxfversion)
            doc.classes.classes = dict(sorted(doc.classes.classes.items()))
            doc.saveas(folder / name)
            paths.append(folder / name)
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = previous
    return paths


if __name__ == "__main__":
    for path in write_samples(Path(sys.argv[1]) if len(sys.argv) > 1 else HERE):
        print(path)
