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
