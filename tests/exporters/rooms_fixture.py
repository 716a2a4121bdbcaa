"""The hall of hall_fixture.py with openings and rooms, for the outputs that show them.

Rooms are duck-typed values (id, names, area, reachable, geometry); openings are the
converter's own ``Opening``.
"""

from __future__ import annotations

from types import SimpleNamespace

import shapely

from clearway.converter.floorplan import Opening


def plan_with_rooms_and_openings(plan):
    """The hall with a door in its west wall, a window, and two rooms (as duck-typed values)."""
    openings = (Opening(x=-0.1, y=5.0, width=1.2, kind="door", exterior=True,
                        start=(-0.1, 4.4), end=(-0.1, 5.6), depth=0.2),
                Opening(x=10.0, y=10.1, width=2.0, kind="window", exterior=True,
                        start=(9.0, 10.1), end=(11.0, 10.1), depth=0.2))
    rooms = (SimpleNamespace(id="r1", names=["Goods in <A>"], area=None, reachable=True,
                             geometry=shapely.box(0, 0, 6, 10)),
             SimpleNamespace(id="r2", names=["Plant room"], area=8.0, reachable=False,
                             geometry=shapely.box(16, 0, 20, 2)))
    return SimpleNamespace(**{**plan.__dict__, "openings": openings, "rooms": rooms})
