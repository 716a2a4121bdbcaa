"""A synthetic warehouse drawing of any size, for benchmarks: ``write_warehouse(path, bays=5000)``.

Double rows of 2.7 m x 1.1 m rack bays (each bay one INSERT of a block) with 3.2 m aisles,
4 m cross aisles between blocks of 20 bays, the last block's rows butting the east wall
(dead-end aisles), a single row backing onto the south wall in each block, columns in the
cross aisles, a 0.3 m double-line exterior wall, and docks (stations) along the west aisle.
Millimetres ($INSUNITS = 4). Deterministic: the same arguments write the same drawing.
"""

from __future__ import annotations

import math
from pathlib import Path

import ezdxf
import numpy as np

BAY_LENGTH, BAY_DEPTH, AISLE, CROSS_AISLE, BAYS_PER_RUN = 2.7, 1.1, 3.2, 4.0, 20


def warehouse_layout(bays, *, runs_across=3):
    """Return (bay origins in metres, building width, building depth) for about `bays` bays."""
    per_double_row = 2 * BAYS_PER_RUN * runs_across
    backed = BAYS_PER_RUN * runs_across  # one row per block backing onto the south wall
    double_rows = max(1, math.ceil(max(bays - backed, 0) / per_double_row))
    origins = []
    for run in range(runs_across):
        x0 = 4.0 + run * (BAYS_PER_RUN * BAY_LENGTH + CROSS_AISLE)
        origins.extend((x0 + index * BAY_LENGTH, 0.0) for index in range(BAYS_PER_RUN))
    for row in range(double_rows):
        y = 6.0 + row * (2 * BAY_DEPTH + AISLE)
        for run in range(runs_across):
            x0 = 4.0 + run * (BAYS_PER_RUN * BAY_LENGTH + CROSS_AISLE)
            for side in (0, 1):
                for index in range(BAYS_PER_RUN):
                    origins.append((x0 + index * BAY_LENGTH, y + side * BAY_DEPTH))
    origins = origins[:bays]
    width = 4.0 + runs_across * BAYS_PER_RUN * BAY_LENGTH + (runs_across - 1) * CROSS_AISLE + 0.3
    depth = 6.0 + double_rows * (2 * BAY_DEPTH + AISLE) + 3.0
    return origins, width, depth


def write_warehouse(path, bays=5000, *, runs_across=3):
    """Write the synthetic warehouse to `path` (DXF, millimetres); return the path."""
    mm = 1000.0
    origins, width, depth = warehouse_layout(bays, runs_across=runs_across)
    doc = ezdxf.new("R2010", units=4)
    msp = doc.modelspace()
    block = doc.blocks.new("RACK_BAY")
    block.add_lwpolyline([(0, 0), (BAY_LENGTH * mm, 0), (BAY_LENGTH * mm, BAY_DEPTH * mm),
                          (0, BAY_DEPTH * mm)], close=True)
    for x, y in origins:
        msp.add_blockref("RACK_BAY", (round(x * mm, 1), round(y * mm, 1)),
                         dxfattribs={"layer": "A-EQPM-RACK"})
    for offset in (0.0, 0.3):  # exterior wall: outer and inner face; the east rows butt it
        msp.add_lwpolyline([(-offset * mm, -offset * mm), ((width - 0.3 + offset) * mm, -offset * mm),
                            ((width - 0.3 + offset) * mm, (depth + offset) * mm),
                            (-offset * mm, (depth + offset) * mm)],
                           close=True, dxfattribs={"layer": "A-WALL-EXTR"})
    for run in range(1, runs_across):
        x = 4.0 + run * (BAYS_PER_RUN * BAY_LENGTH + CROSS_AISLE) - CROSS_AISLE / 2
        y = 6.0 + 2 * BAY_DEPTH + AISLE / 2
        while y < depth - 3.0:
            msp.add_circle((x * mm, y * mm), 0.2 * mm, dxfattribs={"layer": "A-COLS"})
            y += 2 * (2 * BAY_DEPTH + AISLE)
    for number, y in enumerate(np.arange(3.0, depth - 2.0, 25.0), start=1):  # west-aisle docks
        msp.add_point((2.0 * mm, y * mm), dxfattribs={"layer": "A-EQPM-STATION"})
        msp.add_text(f"DOCK-{number:02d}", dxfattribs={"layer": "A-EQPM-STATION",
                                                       "insert": (2.2 * mm, (y + 0.2) * mm)})
    doc.saveas(Path(path))
    return Path(path)


# ---------------------------------------------------------------------------------------------
# The benchmark suite: warehouse styles a new user would try (issue 11).

#: Style name -> one line saying what it adds to a plain grid of double rows.
STYLES = {
    "current": "the original benchmark: double rows, columns in the cross aisles",
    "flue_sealed": "back-to-back rows with a 0.1 m flue, columns in the flue line sealing it",
    "flue_open": "back-to-back rows with a 0.1 m flue open to the cross aisles at both ends",
    "dock_columns": "a 30 m deep open dock along the south wall with a row of columns",
    "dock_open": "the same dock without columns",
    "angled": "rows at 30 degrees to the walls",
    "mixed": "racking beside mezzanine-style blocks of small rooms and curved walls",
    "loose_lines": "walls, rack rows and square columns as loose lines and outlines (exploded "
                   "blocks), dock doors left open in the south wall",
}
FLUE, COLUMN_RADIUS, COLUMN_EVERY, RUN_PITCH = 0.1, 0.2, 5, BAYS_PER_RUN * BAY_LENGTH + CROSS_AISLE
DOCK_DEPTH, ROOM_W, ROOM_D, DOOR, PARTITION, CURVE_PITCH = 30.0, 5.0, 4.0, 1.2, 0.15, 30.0


class _Sheet:
    """Collects a drawing's entities in metres; writes millimetres."""

    def __init__(self):
        self.bays, self.circles, self.walls, self.arcs, self.stations = [], [], [], [], []

    def wall_box(self, x0, y0, x1, y1):
        self.walls.append([(x0, y0), (x1, y0), (x1, y1), (x0, y1)])

    def save(self, path, width, depth):
        mm = 1000.0
        doc = ezdxf.new("R2010", units=4)
        msp = doc.modelspace()
        block = doc.blocks.new("RACK_BAY")
        block.add_lwpolyline([(0, 0), (BAY_LENGTH * mm, 0), (BAY_LENGTH * mm, BAY_DEPTH * mm),
                              (0, BAY_DEPTH * mm)], close=True)
        for x, y, angle in self.bays:
            msp.add_blockref("RACK_BAY", (round(x * mm, 1), round(y * mm, 1)),
                             dxfattribs={"layer": "A-EQPM-RACK", "rotation": angle})
        for offset in (0.0, 0.3):
            msp.add_lwpolyline([(-offset * mm, -offset * mm), ((width + offset) * mm, -offset * mm),
                                ((width + offset) * mm, (depth + offset) * mm),
                                (-offset * mm, (depth + offset) * mm)],
                               close=True, dxfattribs={"layer": "A-WALL-EXTR"})
        for x, y in self.circles:
            msp.add_circle((round(x * mm, 1), round(y * mm, 1)), COLUMN_RADIUS * mm,
                           dxfattribs={"layer": "A-COLS"})
        for ring in self.walls:
            msp.add_lwpolyline([(round(x * mm, 1), round(y * mm, 1)) for x, y in ring],
                               close=True, dxfattribs={"layer": "A-WALL-PRTN"})
        for ring in self.arcs:  # (x, y, bulge) vertices
            msp.add_lwpolyline([(round(x * mm, 1), round(y * mm, 1), b) for x, y, b in ring],
                               format="xyb", close=True, dxfattribs={"layer": "A-WALL-PRTN"})
        for number, (x, y) in enumerate(self.stations, start=1):
            msp.add_point((x * mm, y * mm), dxfattribs={"layer": "A-EQPM-STATION"})
            msp.add_text(f"ST-{number:03d}", dxfattribs={"layer": "A-EQPM-STATION",
                                                         "insert": ((x + 0.2) * mm, (y + 0.2) * mm)})
        doc.saveas(Path(path))
        return Path(path)


def _grid(bays, pitch, aspect=1.6):
    """Runs across and double rows for about `bays` bays on a floor about `aspect` x as wide as
    deep."""
    per_cell = 2 * BAYS_PER_RUN
    runs = max(1, round(math.sqrt(bays * pitch / (aspect * per_cell * RUN_PITCH))))
    return runs, max(1, math.ceil(bays / (per_cell * runs)))


def _racking(sheet, bays, *, flue, y_start, columns, runs=None):
    """Double rows in runs of 20 bays from y_start, `runs` across (by default as many as keep the
    racking about 1.6 x as wide as deep); return (width, top of the racking)."""
    pitch = 2 * BAY_DEPTH + flue + AISLE
    runs = runs or _grid(bays, pitch)[0]
    rows = max(1, math.ceil(bays / (2 * BAYS_PER_RUN * runs)))
    placed = 0
    for row in range(rows):
        y = y_start + row * pitch
        for run in range(runs):
            x0 = 4.0 + run * RUN_PITCH
            for side, dy in ((0, 0.0), (1, BAY_DEPTH + flue)):
                for index in range(BAYS_PER_RUN):
                    if placed < bays:
                        sheet.bays.append((x0 + index * BAY_LENGTH, y + dy, 0.0))
                        placed += 1
            middle = y + BAY_DEPTH + flue / 2
            if columns == "flue":  # both run ends and every COLUMN_EVERY bays: sealed slots
                sheet.circles.extend((x0 + k * BAY_LENGTH, middle)
                                     for k in range(0, BAYS_PER_RUN + 1, COLUMN_EVERY))
            elif columns == "aisle" and run and row % 2 == 0:
                sheet.circles.append((x0 - CROSS_AISLE / 2, y + 2 * BAY_DEPTH + flue + AISLE / 2))
        sheet.stations.append((2.0, y + 2 * BAY_DEPTH + flue + AISLE / 2)) if row % 8 == 0 else None
    width = 4.0 + runs * RUN_PITCH
    return width, y_start + rows * pitch


def _angled(sheet, bays, angle_deg=30.0):
    """Rows at `angle_deg` to the walls inside a floor sized for about `bays` bays."""
    pitch = 2 * BAY_DEPTH + AISLE
    angle = math.radians(angle_deg)
    along = np.array([math.cos(angle), math.sin(angle)])
    across = np.array([-math.sin(angle), math.cos(angle)])
    corners = np.array([(0, 0), (BAY_LENGTH, 0), (BAY_LENGTH, BAY_DEPTH), (0, BAY_DEPTH)])
    scale = math.sqrt(bays * RUN_PITCH * pitch / (2 * BAYS_PER_RUN * 1.6) / 0.8)
    for _ in range(30):  # grow the floor until the bays fit
        width, depth = 1.6 * scale, scale
        reach = int((width + depth) / min(RUN_PITCH, pitch)) + 2
        run, row, index = np.meshgrid(np.arange(-reach, reach), np.arange(-reach, reach),
                                      np.arange(BAYS_PER_RUN), indexing="ij")
        run, row, index = run.ravel(), row.ravel(), index.ravel()
        origins = []
        for side in (0, 1):
            u = run * RUN_PITCH + index * BAY_LENGTH
            v = row * pitch + side * BAY_DEPTH
            origins.append(u[:, None] * along + v[:, None] * across)
        origins = np.concatenate(origins)
        xy = origins[:, None, :] + corners @ np.stack([along, across])
        inside = ((xy[..., 0] > 4.0) & (xy[..., 0] < width - 4.0) & (xy[..., 1] > 6.0)
                  & (xy[..., 1] < depth - 3.0)).all(axis=1)
        if inside.sum() >= bays:
            break
        scale *= 1.05
    chosen = origins[inside]
    chosen = chosen[np.lexsort((chosen[:, 0], chosen[:, 1]))][:bays]
    sheet.bays.extend((float(x), float(y), angle_deg) for x, y in chosen)
    sheet.stations.extend((2.0, float(y)) for y in np.arange(4.0, depth - 2.0, 40.0))
    return width, depth


def _rooms(sheet, x0, y0, columns, rows):
    """A block of small rooms (ROOM_W x ROOM_D) in pairs facing 3 m corridors, doors DOOR wide."""
    t = PARTITION
    pitch = 2 * ROOM_D + 3.0
    for row in range(rows):
        yb = y0 + row * pitch
        for side, (ya, yc) in enumerate(((yb, yb + ROOM_D), (yb + ROOM_D + 3.0, yb + pitch))):
            door_y = yc if side == 0 else ya  # each room's door faces the corridor
            back_y = ya if side == 0 else yc
            xe = x0 + columns * ROOM_W
            sheet.wall_box(x0, back_y - t / 2, xe, back_y + t / 2)
            for column in range(columns):
                xa = x0 + column * ROOM_W
                sheet.wall_box(xa - t / 2, ya, xa + t / 2, yc)
                door = xa + ROOM_W / 2
                sheet.wall_box(xa, door_y - t / 2, door - DOOR / 2, door_y + t / 2)
                sheet.wall_box(door + DOOR / 2, door_y - t / 2, xa + ROOM_W, door_y + t / 2)
                if column % 4 == 1 and row % 2 == 0:
                    sheet.stations.append((door, (ya + yc) / 2))
            sheet.wall_box(xe - t / 2, ya, xe + t / 2, yc)
    return x0 + columns * ROOM_W, y0 + rows * pitch


def _curved_wall(sheet, cx, cy, radius, start_deg, sweep_deg, thickness=0.2):
    """A free-standing curved partition: a band between two concentric arcs, as one ring."""
    a0, a1 = math.radians(start_deg), math.radians(start_deg + sweep_deg)
    bulge = math.tan(math.radians(sweep_deg) / 4)
    outer, inner = radius + thickness / 2, radius - thickness / 2
    sheet.arcs.append([(cx + outer * math.cos(a0), cy + outer * math.sin(a0), bulge),
                       (cx + outer * math.cos(a1), cy + outer * math.sin(a1), 0.0),
                       (cx + inner * math.cos(a1), cy + inner * math.sin(a1), -bulge),
                       (cx + inner * math.cos(a0), cy + inner * math.sin(a0), 0.0)])


def write_style(path, style="current", bays=5000):
    """Write one warehouse of the suite (:data:`STYLES`) with about `bays` bays; return the path.

    Deterministic: the same arguments write the same drawing. Floors keep an aspect of about
    1.6, so twice the bays is about twice the floor area in every style.
    """
    if style not in STYLES:
        raise ValueError(f"unknown style {style!r}; one of {', '.join(STYLES)}")
    if style == "current":
        return write_warehouse(path, bays, runs_across=_grid(bays, 2 * BAY_DEPTH + AISLE)[0])
    if style == "loose_lines":
        return _loose_lines(path, bays)
    sheet = _Sheet()
    if style in ("flue_sealed", "flue_open"):
        width, top = _racking(sheet, bays, flue=FLUE, y_start=6.0,
                              columns="flue" if style == "flue_sealed" else "aisle")
        depth = top + 3.0
    elif style in ("dock_columns", "dock_open"):
        width, top = _racking(sheet, bays, flue=0.0, y_start=DOCK_DEPTH, columns="aisle")
        depth = top + 3.0
        sheet.stations.extend((x, 2.0) for x in np.arange(10.0, width - 5.0, 15.0))
        if style == "dock_columns":
            sheet.circles.extend((x, DOCK_DEPTH / 2) for x in np.arange(12.0, width - 6.0, 12.0))
    elif style == "angled":
        width, depth = _angled(sheet, bays)
    else:  # mixed: racking on two thirds of the floor's width, rooms and curved walls beside it
        racked = int(bays * 2 / 3)
        runs = _grid(bays, 2 * BAY_DEPTH + AISLE, aspect=1.6 * 2 / 3)[0]  # one width for both
        width, top = _racking(sheet, bays - racked, flue=0.0, y_start=6.0, columns="aisle",
                              runs=runs)
        _, top = _racking(sheet, racked, flue=FLUE, y_start=top + 8.0, columns="aisle", runs=runs)
        x0, columns = width + 6.0, max(2, int(width / 2 / ROOM_W))
        rows = max(1, int((top - 6.0) / 2 / (2 * ROOM_D + 3.0)))  # rooms on the lower half
        _, rooms_top = _rooms(sheet, x0, 6.0, columns, rows)
        across = max(1, int(columns * ROOM_W / CURVE_PITCH))  # curved walls on the upper half
        for k, y in enumerate(np.arange(rooms_top + 20.0, top - 5.0, CURVE_PITCH)):
            for j in range(across):
                _curved_wall(sheet, x0 + (j + 0.5) * columns * ROOM_W / across, float(y), 10.0,
                             200.0 + 40 * ((k + j) % 2), 140.0)
        width = x0 + columns * ROOM_W + 6.0
        depth = top + 3.0
    return sheet.save(path, width, depth)


#: loose_lines: bays per row, exterior wall thickness, dock doors (width, pitch), column size.
LOOSE_ROW, LOOSE_WALL, DOCK_DOOR, DOCK_PITCH, SQUARE_COLUMN = 24, 0.25, 3.5, 8.0, 0.4


def _loose_lines(path, bays):
    """Write the `loose_lines` style: the drawing habits of a plan whose blocks were exploded.

    The exterior wall is two faces of LINEs 0.25 m apart on a structural layer (S-WALL),
    broken by a 3.5 m dock door every 8 m along the south wall with nothing drawn across it
    (each a leak the build reports, wider than an opening left open); each rack row is one
    closed outline with a LINE between bays (RACK); 0.4 m square columns (S-COLS) stand in
    the flue line of every other double row, every fourth bay, and in a row across the open
    dock area; stations in the aisles as in the other styles.
    """
    mm = 1000.0
    flue, pitch = 0.15, 2 * BAY_DEPTH + 0.15 + AISLE
    run_pitch = LOOSE_ROW * BAY_LENGTH + CROSS_AISLE
    per_run = 2 * LOOSE_ROW
    runs = max(1, round(math.sqrt(bays * pitch / (1.6 * per_run * run_pitch))))
    rows = max(1, math.ceil(bays / (per_run * runs)))
    y0 = 25.0                                        # an open dock area south of the racking
    width, depth = 4.0 + runs * run_pitch + 2.0, y0 + rows * pitch + 3.0
    doc = ezdxf.new("R2010", units=4)
    msp = doc.modelspace()

    def line(a, b, layer):
        msp.add_line((round(a[0] * mm, 1), round(a[1] * mm, 1)),
                     (round(b[0] * mm, 1), round(b[1] * mm, 1)), dxfattribs={"layer": layer})

    def outline(x0, y0, x1, y1, layer):
        msp.add_lwpolyline([(round(x * mm, 1), round(y * mm, 1))
                            for x, y in ((x0, y0), (x1, y0), (x1, y1), (x0, y1))],
                           close=True, dxfattribs={"layer": layer})

    doors = [(x, x + DOCK_DOOR) for x in np.arange(10.0, width - 10.0 - DOCK_DOOR, DOCK_PITCH)]
    for offset in (0.0, LOOSE_WALL):               # inner face, then outer face
        xa, ya, xb, yb = -offset, -offset, width + offset, depth + offset
        cuts = [xa, *[x for door in doors for x in door], xb]
        for start, end in zip(cuts[::2], cuts[1::2]):
            line((start, ya), (end, ya), "S-WALL")
        line((xb, ya), (xb, yb), "S-WALL")
        line((xb, yb), (xa, yb), "S-WALL")
        line((xa, yb), (xa, ya), "S-WALL")
    for door in doors:                              # the jambs
        for x in door:
            line((x, -LOOSE_WALL), (x, 0.0), "S-WALL")
    placed, stations = 0, []
    for row in range(rows):
        y = y0 + row * pitch
        for run in range(runs):
            x0 = 4.0 + run * run_pitch
            for yy in (y, y + BAY_DEPTH + flue):
                count = min(LOOSE_ROW, bays - placed)
                if count <= 0:
                    break
                placed += count
                outline(x0, yy, x0 + count * BAY_LENGTH, yy + BAY_DEPTH, "RACK")
                for k in range(1, count):
                    line((x0 + k * BAY_LENGTH, yy), (x0 + k * BAY_LENGTH, yy + BAY_DEPTH), "RACK")
            if row % 2 == 0:                        # columns in the flue line
                for k in range(0, LOOSE_ROW + 1, 4):
                    cx, cy, h = x0 + k * BAY_LENGTH, y + BAY_DEPTH + flue / 2, SQUARE_COLUMN / 2
                    outline(cx - h, cy - h, cx + h, cy + h, "S-COLS")
        if row % 8 == 0:
            aisle_y = y + 2 * BAY_DEPTH + flue + AISLE / 2
            stations.append((f"ST-{len(stations) + 1:03d}", 2.0, aisle_y))
    for cx in np.arange(12.0, width - 6.0, 12.0):   # a row of columns across the dock area
        h = SQUARE_COLUMN / 2
        outline(cx - h, y0 / 2 - h, cx + h, y0 / 2 + h, "S-COLS")
    stations += [(f"DOCK-{number:02d}", float(x), 3.0)
                 for number, x in enumerate(np.arange(14.0, width - 10.0, 24.0), start=1)]
    for label, x, y in stations:
        msp.add_point((x * mm, y * mm), dxfattribs={"layer": "A-EQPM-STATION"})
        msp.add_text(label, dxfattribs={"layer": "A-EQPM-STATION",
                                        "insert": ((x + 0.2) * mm, (y + 0.2) * mm)})
    doc.saveas(Path(path))
    return Path(path)
