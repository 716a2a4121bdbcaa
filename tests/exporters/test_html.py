"""roadmap.html: one self-contained, deterministic page whose embedded data is the roadmap.

What the page does in a browser is tested in tests/browser/; these tests read the bytes.
"""

from __future__ import annotations

import html.parser
import json
import re

import pytest

from clearway.exporters import SAFETY_CAUTION, render_geojson, render_html
from clearway.exporters.html import page_data, script_json
from clearway.roadmap import compare_graphs
from hall_fixture import HOSTILE, make_plan, make_roadmap
from rooms_fixture import plan_with_rooms_and_openings


class _Page(html.parser.HTMLParser):
    """Collect tags, the data script's text and every reference to another resource."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tags, self.scripts, self.references, self.title = [], [], [], ""
        self._in = None

    def handle_starttag(self, tag, attrs):
        self.tags.append(tag)
        attrs = dict(attrs)
        self._in = (tag, attrs.get("type", ""))
        self.references += [value for key, value in attrs.items() if key in ("src", "href")]

    def handle_endtag(self, tag):
        self._in = None

    def handle_data(self, data):
        if self._in and self._in[0] == "script":
            self.scripts.append((self._in[1], data))
        if self._in and self._in[0] == "title":
            self.title += data


def _parse(page: bytes) -> _Page:
    parser = _Page()
    parser.feed(page.decode("utf-8"))
    parser.close()
    return parser


def _data(page: bytes) -> dict:
    (text,) = [text for kind, text in _parse(page).scripts if kind == "application/json"]
    return json.loads(text)


def test_same_input_gives_the_same_bytes(plan, roadmap):
    first = render_html(plan, roadmap, date="drawing of 2026-01-31")
    assert first == render_html(make_plan(), make_roadmap(make_plan()),
                                date="drawing of 2026-01-31")
    assert first.startswith(b"<!DOCTYPE html>")     # source: HTML Living Standard sec. 13.1.1


def test_page_is_self_contained(plan, roadmap):
    page = render_html(plan, roadmap, date="undated")
    parsed = _parse(page)
    # nothing fetched: no src or href anywhere, no url() in the style sheet, no @import
    assert parsed.references == []
    assert not re.search(rb"url\(|@import|https?://(?!www\.w3\.org)", page)
    # the content security policy forbids every fetch (W3C CSP Level 3, default-src 'none')
    assert b"default-src 'none'" in page
    kinds = sorted(kind for kind, _ in parsed.scripts)
    assert kinds == ["", "application/json"]


def test_caution_robot_and_date_are_in_the_page(plan, roadmap):
    page = render_html(plan, roadmap, date="drawing of 2026-01-31")
    text = page.decode("utf-8")
    assert SAFETY_CAUTION in text                    # in the always-visible heading
    data = _data(page)
    assert data["caution"] == SAFETY_CAUTION
    assert data["date"] == "drawing of 2026-01-31"
    # hall_fixture: disc robot 0.35 m + 0.1 m margin -> 0.45 m required clearance
    assert "radius 0.35 m" in data["robot"] and "required clearance 0.45 m" in data["robot"]


def test_hostile_label_reaches_the_data_intact_and_never_the_markup(plan, roadmap):
    page = render_html(plan, roadmap, date="undated")
    parsed = _parse(page)
    # the label's <B> is not a tag, and its text appears only inside the JSON data (escaped)
    assert "b" not in parsed.tags
    assert b"<B>" not in page and b"Dock <" not in page
    data = _data(page)
    labels = [row[0] for row in data["stations"]]
    assert HOSTILE in labels                        # control char, RTL mark and all
    assert parsed.title == "clearway roadmap \u2014 hall <1>.dxf"
    assert any("keep-out <KO>" in item["detail"] for item in data["problems"])


@pytest.mark.parametrize("label", ["</script><script>alert(1)</script>", "<!--", "]]>",
                                   "a\u2028b\u2029c", "&lt;"])
def test_script_json_cannot_end_the_script_element(label):
    text = script_json({"label": label})
    # source: HTML Living Standard sec. 4.12.1.3: "<!--", "<script" and "</script" inside a
    # script element change how it is parsed; ECMA-262 before ES2019 ends strings at U+2028
    for bad in ("<", ">", "&", "\u2028", "\u2029"):
        assert bad not in text
    assert json.loads(text) == {"label": label}


def test_hostile_source_name_is_escaped_in_the_title(roadmap):
    plan = make_plan()
    hostile_plan = type(plan)(**{**plan.__dict__, "source": "</title><script>x()</script>.dxf"})
    page = render_html(hostile_plan, roadmap, date="undated")
    parsed = _parse(page)
    assert parsed.title == "clearway roadmap \u2014 </title><script>x()</script>.dxf"
    assert [kind for kind, _ in parsed.scripts] == ["application/json", ""]


def test_graph_data_is_the_graph_exactly(plan, roadmap):
    data = _data(render_html(plan, roadmap, date="undated"))
    graph = roadmap.graph
    # nodes and lanes in the GraphML's order (natural order of ids), numbers exact
    assert [row[0] for row in data["nodes"]] == ["n1", "n2", "n3"]
    assert [row[0] for row in data["edges"]] == ["e1", "e2", "e3"]
    for node_id, x, y, kind, label, clearance, turns in data["nodes"]:
        attrs = graph.nodes[node_id]
        assert (x, y, kind, label) == (attrs["x"], attrs["y"], attrs["kind"], attrs["label"])
        assert clearance == attrs["clearance"] and turns is None      # a disc robot turns anywhere
    for edge_id, source, target, length, weight, clearance, coords in data["edges"]:
        (u, v, attrs), = [(u, v, d) for u, v, k, d in graph.edges(keys=True, data=True)
                          if k == edge_id]
        assert {source, target} == {u, v}
        assert (length, weight, clearance) == (attrs["length"], attrs["weight"],
                                               attrs["clearance_min"])
        # drawn coordinates: within 0.5 mm of the lane (rounded to 1 mm), from source to target
        start = graph.nodes[source]
        assert abs(coords[0] - start["x"]) <= 5e-4 and abs(coords[1] - start["y"]) <= 5e-4


def test_problems_list_every_finding_with_its_place(plan, roadmap):
    data = _data(render_html(plan, roadmap, date="undated"))
    kinds = [item["kind"] for item in data["problems"]]
    # hall_fixture: 1 unreachable station, 1 leak, 1 narrow passage, 1 pinch point,
    # 1 personnel flag, 2 warnings (plan + findings)
    assert sorted(kinds) == sorted(["unreachable", "leak", "narrow", "pinch", "personnel",
                                    "warning", "warning"])
    unreachable = next(item for item in data["problems"] if item["kind"] == "unreachable")
    # the passage that blocks it, and what the robot needs: 2 x (0.35 m + 0.1 m)
    assert "passage 0.62 m wide" in unreachable["detail"]
    assert "the robot needs 0.90 m" in unreachable["detail"]
    pinch = next(item for item in data["problems"] if item["kind"] == "pinch")
    assert (pinch["x"], pinch["y"]) == (3.0, 5.0)
    assert all(item["x"] is None for item in data["problems"] if item["kind"] == "warning")


def test_page_is_smaller_than_twice_the_geojson(plan, roadmap):
    page = render_html(plan, roadmap, date="undated")
    geojson = render_geojson(plan, roadmap)
    # the budget for a page that vendors a library; ours must keep it as well.
    # The hall is tiny, so the script dominates: compare the data alone
    assert len(script_json(page_data(plan, roadmap, date="undated"))) < 2 * len(geojson)


def test_changes_layer_holds_the_revision_changes(plan, roadmap):
    old = roadmap.graph.copy()
    old.remove_edge("n3", "n1", "e3")
    old.remove_node("n3")
    changes = compare_graphs(old, roadmap.graph)
    data = _data(render_html(plan, roadmap, date="undated", changes=changes))
    # analytic: n3 and its lane e3 exist only in the new graph
    assert [row[0] for row in data["changes"]["nodes_added"]] == ["n3"]
    assert [row[0] for row in data["changes"]["lanes_added"]] == ["e3"]
    assert data["changes"]["lanes_removed"] == []
    assert _data(render_html(plan, roadmap, date="undated"))["changes"] is None


def test_rooms_and_openings_reach_the_page_when_present(plan, roadmap):
    data = _data(render_html(plan_with_rooms_and_openings(plan), roadmap, date="undated"))
    assert [room["names"] for room in data["rooms"]] == [["Goods in <A>"], ["Plant room"]]
    # analytic: a 6 m x 10 m box has 60 m^2; the given area is kept as given
    assert [room["area"] for room in data["rooms"]] == [60.0, 8.0]
    (ring,), = data["rooms"][0]["polygons"]
    assert sorted(zip(ring[::2], ring[1::2])) == [(0.0, 0.0), (0.0, 10.0), (6.0, 0.0), (6.0, 10.0)]
    door, window = data["openings"]
    assert (door["kind"], door["passable"], door["width"]) == ("door", True, 1.2)
    assert (window["kind"], window["passable"]) == ("window", False)   # floorplan: windows close
    assert door["line"] == [-0.1, 4.4, -0.1, 5.6]
    plain = _data(render_html(plan, roadmap, date="undated"))
    assert plain["rooms"] == [] and plain["openings"] == []


def test_allowed_turns_reach_the_page_for_the_route_search(plan, roadmap):
    graph = roadmap.graph.copy()
    graph.nodes["n1"]["turns"] = "e1:e2 e3:e3"          # roadmap/turns.py format, EDGE:EDGE
    changed = type(roadmap)(**{**roadmap.__dict__, "graph": graph})
    rows = {row[0]: row for row in _data(render_html(plan, changed, date="undated"))["nodes"]}
    assert rows["n1"][6] == "e1:e2 e3:e3"
    assert rows["n2"][6] is None                          # no attribute: every turn allowed


def test_rooms_of_the_roadmap_and_openings_of_the_plan_both_show(plan, roadmap):
    from types import SimpleNamespace
    both = plan_with_rooms_and_openings(plan)
    plan_openings = SimpleNamespace(**{**plan.__dict__, "openings": both.openings})
    roadmap_rooms = SimpleNamespace(**{**roadmap.__dict__, "rooms": both.rooms})
    data = _data(render_html(plan_openings, roadmap_rooms, date="undated"))
    # rooms live on the Roadmap, openings on the FloorPlan: one must not hide the other
    assert len(data["rooms"]) == 2 and len(data["openings"]) == 2
