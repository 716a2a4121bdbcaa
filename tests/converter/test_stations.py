"""Stations: positions and labels."""

import pytest

from clearway.errors import DrawingError
from clearway.converter import read_floorplan

STATIONS = "A-EQPM-STATION"


def add_labelled(doc, msp, label, position):
    if "MARK" not in doc.blocks:
        block = doc.blocks.new("MARK")
        block.add_circle((0, 0), 0.2)
        block.add_attdef("LABEL", (0.3, 0.3))
    msp.add_blockref("MARK", position, dxfattribs={"layer": STATIONS}).add_auto_attribs(
        {"LABEL": label})


def test_labels_from_attribute_text_and_generated(room_drawing):
    doc, msp, write = room_drawing
    add_labelled(doc, msp, "CHG-01", (2, 2))
    msp.add_point((5, 5), dxfattribs={"layer": STATIONS})
    msp.add_text("PICK-07", dxfattribs={"layer": STATIONS, "insert": (5.4, 5.3)})
    msp.add_circle((8, 2), 0.3, dxfattribs={"layer": STATIONS})
    msp.add_text("FAR AWAY", dxfattribs={"layer": STATIONS, "insert": (8, 7.5)})  # 5.5 m off
    plan = read_floorplan(write(), label_radius=3.0)
    assert [(s.label, s.x, s.y) for s in plan.stations] == [
        ("CHG-01", 2, 2), ("PICK-07", 5, 5), ("STATION-001", 8, 2)]


def test_nearest_text_wins(room_drawing):
    doc, msp, write = room_drawing
    msp.add_point((3, 3), dxfattribs={"layer": STATIONS})
    msp.add_point((6, 3), dxfattribs={"layer": STATIONS})
    msp.add_text("WEST", dxfattribs={"layer": STATIONS, "insert": (3.2, 3.2)})
    msp.add_text("EAST", dxfattribs={"layer": STATIONS, "insert": (5.2, 3.2)})
    plan = read_floorplan(write())
    assert {s.label: (s.x, s.y) for s in plan.stations} == {"WEST": (3, 3), "EAST": (6, 3)}


def test_duplicate_labels_name_both_positions(room_drawing):
    doc, msp, write = room_drawing
    add_labelled(doc, msp, "DOCK-01", (2, 2))
    add_labelled(doc, msp, "DOCK-01", (7, 3))
    with pytest.raises(DrawingError, match=r"'DOCK-01', at \(2\.00, 2\.00\) m and "
                                           r"\(7\.00, 3\.00\) m"):
        read_floorplan(write())


def test_sample_stations(samples):
    plan = read_floorplan(samples / "distribution_centre.dxf")
    labels = [station.label for station in plan.stations]
    # from make_samples.py: 6 docks, 3 chargers, 4 pick stations
    assert labels == sorted([f"DOCK-{i:02d}" for i in range(1, 7)] +
                            [f"CHG-{i:02d}" for i in range(1, 4)] +
                            [f"PICK-{i:02d}" for i in range(1, 5)])
    rev_b = read_floorplan(samples / "distribution_centre_rev_b.dxf")
    assert rev_b.stations == plan.stations


@pytest.mark.parametrize("layer", ["CHARGERS", "E-EQPM-CHGR", "AMR Charging Points",
                                   "DOCKING"])
def test_charger_and_docking_layers_are_stations_by_default(room_drawing, layer):
    # common practice: integrators and electrical drafters put the robots' chargers on a
    # layer named for them rather than for "stations"
    doc, msp, write = room_drawing
    doc.layers.add(layer)
    block = doc.blocks.new("CHARGER-AMR")
    block.add_lwpolyline([(-0.3, -0.2), (0.3, -0.2), (0.3, 0.2), (-0.3, 0.2)], close=True)
    msp.add_blockref("CHARGER-AMR", (4, 3), dxfattribs={"layer": layer})
    plan = read_floorplan(write())
    assert [(s.kind, s.x, s.y) for s in plan.stations] == [("charger", 4, 3)]


def test_a_discharge_layer_is_not_a_station_layer(room_drawing):
    # a plumbing discharge stack holds the letters of "charge" but no charger
    doc, msp, write = room_drawing
    doc.layers.add("P-DISCHARGE")
    msp.add_circle((4, 3), 0.1, dxfattribs={"layer": "P-DISCHARGE"})
    assert read_floorplan(write()).stations == ()
