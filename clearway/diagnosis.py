"""Why a build found no lane: a one-line diagnosis that tells the user what to pass.

A roadmap with no lane is not a result to hand over. The usual causes, in the order checked:
lanes a rectangular robot's body does not fit along (wide enough for its width, too short
or too sharply bent for its length), the unit (a plan read in the wrong unit is too small
or too large for the robot), a floor too narrow for the robot everywhere, openings that
were not recognised (their layers unmapped), and a floor that is not enclosed (no boundary
drawn and walls that leak).
"""

from __future__ import annotations

import shapely

from clearway.errors import DrawingError


def check_lanes(plan, roadmap):
    """Raise DrawingError with a diagnosis when `roadmap` has no lane at all."""
    if roadmap.graph.number_of_edges() > 0:
        return
    raise DrawingError(f"{plan.source}: no lane for this robot anywhere on the floor: "
                       f"{diagnose(plan, roadmap)}")


def diagnose(plan, roadmap):
    """Return the likely causes of an empty roadmap, most likely first, as one sentence."""
    clearance = roadmap.robot.clearance
    parts = [part for part in shapely.get_parts(plan.free_space) if not part.is_empty]
    xmin, ymin, xmax, ymax = plan.extents
    span = max(xmax - xmin, ymax - ymin)
    widest = 0.0
    if parts:
        largest = max(parts, key=lambda part: part.area)
        circle = shapely.maximum_inscribed_circle(largest, 0.01)
        widest = 2.0 * float(circle.length)
    robot = roadmap.robot
    what = "radius" if robot.length is None else "half its width"
    causes = [f"the widest free floor is {widest:.2f} m across and the robot needs "
              f"{2 * clearance:.2f} m ({what} + margin on both sides)"]
    dropped = [short for short in roadmap.findings.body if short.what in ("lane", "link")]
    if dropped:
        # lanes wide enough for the body's width, dropped because the body does not fit
        # heading along them (too short for its length, or bends it cannot take)
        best = max(dropped, key=lambda short: short.has)
        causes.insert(0, f"{len(dropped)} lane(s) wide enough for the robot's width were "
                         f"dropped because its {robot.length:.2f} m x {robot.width:.2f} m "
                         f"body does not fit along them (at ({best.x:.2f}, {best.y:.2f}) m, "
                         f"where it fits best: {robot.short_beside(best.has)})")
    source = {"option": "as given with --units", "header": "from the header's $INSUNITS",
              "content": "from the drawing's content", "assumed": "assumed"}.get(plan.unit_source, "")
    if span < 4.0 or span > 3000.0 or widest < 2 * clearance:
        causes.append(f"the drawing was read in {plan.units} ({source}) and spans {span:.2f} m: "
                      f"if that is not the building's size, pass --units")
    if not plan.openings:
        causes.append("no openings were recognised in the walls: map door and window layers "
                      "with --openings (see `clearway layers`)")
    if plan.leaks:
        causes.append(f"the floor escapes through {len(plan.leaks)} gap(s) in the walls: close "
                      f"them or draw the floor's outline and pass --boundary")
    return "; ".join(causes)
