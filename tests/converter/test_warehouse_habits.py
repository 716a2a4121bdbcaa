"""Warehouse drawings drawn the way other offices draw them (new-user audit)."""

import json

from click.testing import CliRunner

from clearway.cli import main
from tests.conftest import new_drawing, save, walled_room


def test_station_labels_do_not_name_the_hall(tmp_path):
    """A charger's text label and a dock's label attribute name their stations, not the
    room they stand in; the hall keeps the name written on the annotation layer."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 30, 20)  # one hall, 0.2 m walls
    charger = doc.blocks.new("CHG")
    charger.add_circle((0, 0), 0.3)
    dock = doc.blocks.new("DOCK_STN")
    dock.add_lwpolyline([(-0.4, -0.4), (0.4, -0.4), (0.4, 0.4), (-0.4, 0.4)], close=True)
    dock.add_attdef("ID", (0, 0.6), height=0.2)
    # common practice: the charger's number written beside it on the chargers' layer
    msp.add_blockref("CHG", (25, 17), dxfattribs={"layer": "CHARGERS"})
    msp.add_text("C1", dxfattribs={"layer": "CHARGERS", "height": 0.3, "insert": (25, 17.5)})
    msp.add_blockref("DOCK_STN", (5, 2), dxfattribs={"layer": "DOCKING"}).add_auto_attribs(
        {"ID": "D1"})
    msp.add_text("PICKING HALL", dxfattribs={"layer": "A-ANNO-TEXT", "height": 0.5,
                                             "insert": (12, 10)})
    result = CliRunner().invoke(main, ["build", str(save(doc, tmp_path)), "-o",
                                       str(tmp_path / "out"), "--quiet"])
    assert result.exit_code == 0, result.output
    report = json.loads((tmp_path / "out" / "report.json").read_text())
    assert sorted(station["label"] for station in report["stations"]) == ["C1", "D1"]
    # analytic: one closed hall, one room, named by the one text that is no station's label
    assert [room["names"] for room in report["rooms"]] == [["PICKING HALL"]]
