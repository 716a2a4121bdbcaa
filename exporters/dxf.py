"""Write the roadmap back into CAD: lanes, nodes, stations and findings as a DXF drawing.

The file is meant to be laid over the architect's plan (attach it as an external reference,
or insert it at 0,0 with scale 1): every coordinate is in the source drawing's own unit and
frame (metres divided by the drawing's metres per unit), and $INSUNITS names that unit.
Each kind of thing sits on a layer of its own, so an integrator can switch them on and off:

=========================  ===========================================================
layer                      content
=========================  ===========================================================
CLEARWAY-LANE              one LWPOLYLINE per lane (edge), from source to target node
CLEARWAY-LANE-ID           the edge id (TEXT) at the middle of each lane
CLEARWAY-NODE              one POINT per node
CLEARWAY-NODE-ID           the node id (TEXT) beside each node
CLEARWAY-STATION           a CIRCLE and the label (TEXT) at each reachable station, and
                           for a block station a LINE from the centre the way it faces
CLEARWAY-STATION-UNREACH   the same for stations the robot cannot reach
CLEARWAY-PINCH             POINT and ``clr`` label: lane clearance below comfort
CLEARWAY-NARROW            POINT and ``gap`` label: an opening too narrow for the robot
CLEARWAY-PERSONNEL         POINT and ``side`` label: too little room beside the robot
CLEARWAY-LEAK              POINT and ``leak`` label: a gap to outside
CLEARWAY-NOTE              the source, the robot and the safety caution (MTEXT)
=========================  ===========================================================

The output is DXF R2010 written by ezdxf, with fixed header dates, so the same input gives
the same bytes.
"""

from __future__ import annotations

import contextlib
import io
import math

import ezdxf
import shapely

from clearway.collector import paused_collector
from clearway.converter.units import INSUNITS_CODES
from clearway.exporters.graphml import oriented_edges
from clearway.exporters.text import SAFETY_CAUTION, TOOL_VERSION, natural_key

#: Layer name -> AutoCAD colour index (ACI).
LAYERS = {"CLEARWAY-LANE": 5, "CLEARWAY-LANE-ID": 8, "CLEARWAY-NODE": 7,
          "CLEARWAY-NODE-ID": 8, "CLEARWAY-STATION": 3, "CLEARWAY-STATION-UNREACH": 1,
          "CLEARWAY-PINCH": 6, "CLEARWAY-NARROW": 30, "CLEARWAY-PERSONNEL": 2,
          "CLEARWAY-LEAK": 1, "CLEARWAY-NOTE": 7}
#: Height of id and label text, metres on the floor.
TEXT_HEIGHT = 0.15
_UNIT_CODES = {name: code for code, name in INSUNITS_CODES.items()}


@paused_collector()  # many small containers, none in a cycle: see collector.py
def render_dxf(plan, roadmap) -> bytes:
    """Return the roadmap as DXF bytes in the source drawing's unit and frame.

    Parameters
    ----------
    plan : converter.floorplan.FloorPlan
        Supplies the unit (``units``, ``m_per_unit``), the stations and the leaks.
    roadmap : roadmap.model.Roadmap

    Returns
    -------
    bytes
        An ASCII DXF R2010 document (UTF-8); see the module docstring for its layers.
    """
    scale = 1.0 / plan.m_per_unit          # drawing units per metre

    def at(x: float, y: float) -> tuple[float, float]:
        return (float(x) * scale, float(y) * scale)

    height = TEXT_HEIGHT * scale
    with _fixed_metadata():
        doc = ezdxf.new("R2010", units=_UNIT_CODES.get(plan.units, 0))
    for name, colour in LAYERS.items():
        doc.layers.add(name, color=colour)
    msp = doc.modelspace()
    graph = roadmap.graph
    for edge_id, _, _, _, coords in oriented_edges(graph):
        msp.add_lwpolyline([at(x, y) for x, y in coords.tolist()],
                           dxfattribs={"layer": "CLEARWAY-LANE"})
        middle = shapely.LineString(coords).interpolate(0.5, normalized=True)
        msp.add_text(edge_id, height=height, dxfattribs={
            "layer": "CLEARWAY-LANE-ID", "insert": at(middle.x, middle.y)})
    for node_id in sorted(graph.nodes, key=natural_key):
        attrs = graph.nodes[node_id]
        msp.add_point(at(attrs["x"], attrs["y"]), dxfattribs={"layer": "CLEARWAY-NODE"})
        x, y = at(attrs["x"], attrs["y"])
        msp.add_text(node_id, height=height, dxfattribs={
            "layer": "CLEARWAY-NODE-ID", "insert": (x + 0.5 * height, y + 0.5 * height)})
    results = {result.label: result for result in roadmap.findings.stations}
    for station in plan.stations:
        result = results.get(station.label)
        layer = ("CLEARWAY-STATION" if result is not None and result.reachable
                 else "CLEARWAY-STATION-UNREACH")
        msp.add_circle(at(station.x, station.y), radius=1.5 * height,
                       dxfattribs={"layer": layer})
        x, y = at(station.x, station.y)
        if station.heading is not None:     # as long as the circle is wide
            angle = math.radians(station.heading)
            msp.add_line((x, y), (x + 3 * height * math.cos(angle),
                                  y + 3 * height * math.sin(angle)), dxfattribs={"layer": layer})
        msp.add_text(station.label, height=height,
                     dxfattribs={"layer": layer, "insert": (x + 2 * height, y + 0.5 * height)})
    findings = roadmap.findings
    marks = ([("CLEARWAY-PINCH", p.x, p.y, f"clr {p.clearance:.2f} m")
              for p in findings.pinch_points]
             + [("CLEARWAY-NARROW", p.x, p.y, f"gap {p.width:.2f} m")
                for p in findings.narrow_passages]
             + [("CLEARWAY-PERSONNEL", f.x, f.y, f"side {f.side_clearance:.2f} m")
                for f in findings.personnel]
             + [("CLEARWAY-LEAK", leak.x, leak.y, f"leak {leak.width:.2f} m")
                for leak in plan.leaks])
    for layer, mx, my, label in marks:
        msp.add_point(at(mx, my), dxfattribs={"layer": layer})
        x, y = at(mx, my)
        msp.add_text(label, height=height,
                     dxfattribs={"layer": layer, "insert": (x + height, y - 1.5 * height)})
    _add_note(msp, plan, roadmap, height)
    _sort_classes(doc)
    stream = io.StringIO()
    with _fixed_metadata():
        doc.write(stream)
    return doc.encode(stream.getvalue())


def _sort_classes(doc) -> None:
    """Give the CLASSES section one order: ezdxf adds a CLASS for each entity type in use by
    iterating a set, whose order changes with Python's string hash seed. Added here first,
    they are sorted by name after the ones the document already holds; writing adds none."""
    held = list(doc.classes.classes)
    doc.classes.add_required_classes(doc.dxfversion)
    added = sorted(set(doc.classes.classes) - set(held))
    ordered = {key: doc.classes.classes[key] for key in held + added}
    doc.classes.classes.clear()
    doc.classes.classes.update(ordered)


def _add_note(msp, plan, roadmap, height: float) -> None:
    xmin, ymin = plan.extents[0] / plan.m_per_unit, plan.extents[1] / plan.m_per_unit
    robot = roadmap.robot
    lines = [f"clearway lanes for {plan.source} ({TOOL_VERSION}), drawing units {plan.units}",
             f"robot radius {robot.radius:g} m, margin {robot.margin:g} m",
             "clr = lane centre to nearest obstacle; gap = clear width of an opening; "
             "side = room beside the robot; leak = gap to outside",
             SAFETY_CAUTION]
    msp.add_mtext("\\P".join(lines), dxfattribs={
        "layer": "CLEARWAY-NOTE", "char_height": height, "insert": (xmin, ymin - 2 * height),
        "attachment_point": 1})


@contextlib.contextmanager
def _fixed_metadata():
    """Have ezdxf write fixed dates and ids instead of the clock's (same input, same bytes)."""
    fixed = ezdxf.options.write_fixed_meta_data_for_testing
    ezdxf.options.write_fixed_meta_data_for_testing = True
    try:
        yield
    finally:
        ezdxf.options.write_fixed_meta_data_for_testing = fixed
