"""exporters.compare_svg: valid SVG (lxml, resvg), one mark per change, text escaped intact."""

from __future__ import annotations


import pytest
import resvg_py
from lxml import etree

from clearway.exporters import render_compare_svg
from clearway.roadmap import compare_graphs

from tests.roadmap import test_compare as cases

SVG = "{http://www.w3.org/2000/svg}"   # source: SVG 1.1 (W3C), sec. 5.1.2 namespace


def drawing():
    old, new = cases.revisions()
    changes = compare_graphs(old, new)
    return old, new, changes, render_compare_svg(old, new, changes, title="A -> B")


def test_one_mark_per_change_and_legend_counts():
    old, new, changes, data = drawing()
    root = etree.fromstring(data)
    classes = [element.get("class") for element in root.iter() if element.get("class")]
    assert classes.count("lane-removed") == len(changes.edges_removed) == 1
    assert classes.count("lane-added") == len(changes.edges_added) == 1
    assert classes.count("node-removed") == 1 and classes.count("node-added") == 1
    assert classes.count("node-moved") == 1 and classes.count("pinch") == 1
    # every lane of the new revision is drawn once, unchanged or added
    assert classes.count("lane-unchanged") + classes.count("lane-added") == new.number_of_edges()
    legend = "".join(root.find(f".//{SVG}g[@class='legend']").itertext())
    assert "lane removed (1)" in legend and "new pinch point, clearance now (1)" in legend
    assert "ISO 3691-4" in legend


def test_renders_with_resvg():
    # independent reference: resvg parses and rasterises the document
    *_, data = drawing()
    png = bytes(resvg_py.svg_to_bytes(svg_string=data.decode("utf-8")))
    assert png[:8] == b"\x89PNG\r\n\x1a\n"      # source: PNG spec (ISO/IEC 15948) sec. 5.2


def test_hostile_labels_stay_escaped_and_intact():
    old, new = cases.revisions()
    label = 'Dock <7> & "B"\u200f'
    new.nodes["n8"]["label"] = label + "\x07"
    changes = compare_graphs(old, new)
    root = etree.fromstring(render_compare_svg(old, new, changes, title="<script>"))
    texts = ["".join(t.itertext()) for t in root.iter(f"{SVG}text")]
    # the XML-illegal BEL is dropped (as by every clearway export); the rest stays intact
    assert label in texts and "<script>" in texts
    assert not list(root.iter(f"{SVG}script"))


def test_bad_width_refused():
    old, new, changes, _ = drawing()
    with pytest.raises(ValueError, match="width must be > 0 px, got 0"):
        render_compare_svg(old, new, changes, width=0)
