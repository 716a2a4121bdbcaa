"""GraphML export checked by two independent readers (networkx, igraph), lxml and shapely."""

from __future__ import annotations

import io
import re
from pathlib import Path

import igraph
import networkx as nx
import pytest
import shapely
from hypothesis import given, settings
from hypothesis import strategies as st
from lxml import etree

from clearway.exporters import read_graphml, render_graph, render_graphml
from clearway.exporters.text import xml_text
from hall_fixture import HOSTILE, make_plan, make_roadmap

NS = {"g": "http://graphml.graphdrawing.org/xmlns"}

# source: the brief's GraphML contract (attr.name -> attr.type per domain)
EXPECTED_KEYS = {
    ("graph", "units"): "string", ("graph", "source"): "string", ("graph", "sha256"): "string",
    ("graph", "robot_radius"): "double", ("graph", "margin"): "double",
    ("graph", "required_clearance"): "double", ("graph", "tool_version"): "string",
    ("node", "x"): "double", ("node", "y"): "double", ("node", "clearance"): "double",
    ("node", "kind"): "string", ("node", "label"): "string",
    ("node", "room"): "string",         # issue 10: the room id, "" outside every room
    ("edge", "length"): "double", ("edge", "weight"): "double",
    ("edge", "clearance_min"): "double", ("edge", "geometry"): "string",
}


def test_keys_are_typed_once_each_with_double_not_float(plan, roadmap):
    root = etree.fromstring(render_graphml(plan, roadmap))
    keys = [(k.get("for"), k.get("attr.name"), k.get("attr.type"))
            for k in root.findall("g:key", NS)]
    # source: GraphML 1.0 primer sec. 4.3 -- attr.type is one of boolean, int, long, float,
    # double, string; a float (single precision) would lose digits of our coordinates
    assert {(d, n): t for d, n, t in keys} == EXPECTED_KEYS
    assert len(keys) == len(EXPECTED_KEYS)
    graph = root.find("g:graph", NS)
    assert graph.get("edgedefault") == "undirected" and graph.get("id") == "roadmap"


def test_networkx_reads_back_every_value_exactly(plan, roadmap):
    data = render_graphml(plan, roadmap)
    read = nx.read_graphml(io.BytesIO(data), force_multigraph=True)
    graph = roadmap.graph
    assert read.number_of_nodes() == graph.number_of_nodes() == 3
    assert read.number_of_edges() == graph.number_of_edges() == 3
    for node, attrs in graph.nodes(data=True):
        got = read.nodes[node]
        assert (got["x"], got["y"], got["clearance"]) == (attrs["x"], attrs["y"],
                                                          attrs["clearance"])
        assert (got["kind"], got["label"]) == (attrs["kind"], attrs["label"])
    # parallel edges e1, e2 between n1 and n2 keep their own ids as edge keys
    assert sorted(read["n1"]["n2"]) == ["e1", "e2"]
    for u, v, key, attrs in graph.edges(keys=True, data=True):
        got = read[u][v][key]
        for name in ("length", "weight", "clearance_min"):
            assert got[name] == attrs[name]
    assert read.graph["units"] == "m" and read.graph["source"] == plan.source
    assert read.graph["sha256"] == plan.sha256
    assert read.graph["robot_radius"] == 0.35 and read.graph["margin"] == 0.1
    assert read.graph["required_clearance"] == roadmap.robot.clearance
    assert read.graph["tool_version"].startswith("clearway ")


def test_igraph_reads_the_same_counts_and_values(plan, roadmap, tmp_path):
    path = tmp_path / "roadmap.graphml"
    path.write_bytes(render_graphml(plan, roadmap))
    read = igraph.Graph.Read_GraphML(str(path))
    reference = nx.read_graphml(path, force_multigraph=True)
    assert (read.vcount(), read.ecount()) == (3, 3)
    assert not read.is_directed()
    for vertex in read.vs:
        expected = reference.nodes[vertex["id"]]
        for name in ("x", "y", "clearance", "kind", "label"):
            assert vertex[name] == expected[name]
    names = [v["id"] for v in read.vs]
    for edge in read.es:
        u, v = names[edge.source], names[edge.target]
        matches = [attrs for attrs in reference[u][v].values()
                   if attrs["geometry"] == edge["geometry"]]
        assert len(matches) == 1
        for name in ("length", "weight", "clearance_min"):
            assert edge[name] == matches[0][name]
    assert read["units"] == "m" and read["robot_radius"] == 0.35


def test_wkt_runs_from_source_to_target_node(plan, roadmap):
    root = etree.fromstring(render_graphml(plan, roadmap))
    nodes = {n.get("id"): {d.get("key"): d.text for d in n} for n in root.iter("{*}node")}
    for edge in root.iter("{*}edge"):
        wkt = next(d.text for d in edge if d.get("key") == "e_geometry")
        line = shapely.from_wkt(wkt)
        assert line.geom_type == "LineString" and line.is_valid
        source, target = nodes[edge.get("source")], nodes[edge.get("target")]
        # analytic: the lane polyline joins the two end nodes exactly
        assert line.coords[0] == (float(source["n_x"]), float(source["n_y"]))
        assert line.coords[-1] == (float(target["n_x"]), float(target["n_y"]))
        length = next(float(d.text) for d in edge if d.get("key") == "e_length")
        assert line.length == pytest.approx(length, rel=1e-12)


def test_same_input_gives_identical_bytes_whatever_the_insertion_order(plan, roadmap):
    first = render_graphml(plan, roadmap)
    shuffled = nx.MultiGraph(**roadmap.graph.graph)
    for node in reversed(list(roadmap.graph.nodes)):
        shuffled.add_node(node, **roadmap.graph.nodes[node])
    for u, v, key, attrs in reversed(list(roadmap.graph.edges(keys=True, data=True))):
        shuffled.add_edge(v, u, key=key, **attrs)
    again = render_graphml(plan, type(roadmap)(shuffled, roadmap.robot, roadmap.drivable,
                                                roadmap.findings))
    assert first == again == render_graphml(plan, roadmap)
    # no date or time anywhere (the pattern of test_report.py: any year, not only this one)
    assert not re.search(rb"\d{4}-\d{2}-\d{2}|\d{2}:\d{2}:\d{2}", first)


@pytest.mark.parametrize("shift", [(0.0, 0.0), (500000.123456789, 5400000.987654321)])
def test_issue_16_a_graph_read_back_writes_the_same_bytes(shift):
    plan = make_plan(shift=shift)
    roadmap = make_roadmap(plan)
    graph = roadmap.graph.copy()
    graph.nodes["n3"]["label"] = HOSTILE          # escaped, XML-illegal controls dropped
    written = render_graphml(plan, type(roadmap)(graph, roadmap.robot, roadmap.drivable))
    back = read_graphml(written)
    assert render_graph(back) == written
    assert render_graph(read_graphml(render_graph(back))) == written


def test_issue_16_old_files_with_a_graph_clearance_still_read(plan, roadmap):
    # files written before the rename call the required clearance `clearance`
    old = render_graphml(plan, roadmap).replace(b"g_required_clearance", b"g_clearance") \
        .replace(b'attr.name="required_clearance"', b'attr.name="clearance"')
    assert b'attr.name="clearance" attr.type="double"' in old.split(b"<graph ")[0]
    back = read_graphml(old)
    assert back.graph["required_clearance"] == roadmap.robot.clearance
    assert "clearance" not in back.graph


def test_survey_coordinates_round_trip_exactly():
    # issue 6: site plans at survey coordinates (x ~ 5e5 m, y ~ 5.4e6 m) keep every digit
    plan = make_plan(shift=(500000.123456789, 5400000.987654321))
    roadmap = make_roadmap(plan)
    read = nx.read_graphml(io.BytesIO(render_graphml(plan, roadmap)), force_multigraph=True)
    for node, attrs in roadmap.graph.nodes(data=True):
        assert (read.nodes[node]["x"], read.nodes[node]["y"]) == (attrs["x"], attrs["y"])
    for u, v, key, attrs in roadmap.graph.edges(keys=True, data=True):
        line = shapely.from_wkt(read[u][v][key]["geometry"])
        assert shapely.equals_exact(line, attrs["geometry"], tolerance=0.0) or \
            shapely.equals_exact(line.reverse(), attrs["geometry"], tolerance=0.0)


def test_hostile_label_is_escaped_and_kept_except_xml_illegal_controls(plan, roadmap):
    graph = roadmap.graph.copy()
    graph.nodes["n3"]["label"] = HOSTILE
    hostile_roadmap = type(roadmap)(graph, roadmap.robot, roadmap.drivable)
    data = render_graphml(plan, hostile_roadmap)
    assert b"\x07" not in data
    # source: XML 1.0 sec. 2.4 -- '<' and '&' in character data must be escaped
    assert b"Dock &lt;B&gt; &amp;" in data
    read = nx.read_graphml(io.BytesIO(data), force_multigraph=True)
    expected = HOSTILE.replace("\x07", "")
    assert read.nodes["n3"]["label"] == expected == xml_text(HOSTILE)
    assert "\u200f" in expected and "Süd" in expected
    assert read.graph["source"] == "hall <1>.dxf"


def _written_by_lxml(graph) -> bytes:
    """The GraphML of `graph` written element by element with lxml, as clearway wrote it
    before it wrote the text itself: the reference for `render_graph`'s bytes."""
    from clearway.exporters.graphml import _text, declared_keys, linestring_wkt, oriented_edges
    from clearway.exporters.graphml_keys import GRAPHML_NS, SCHEMA_LOCATION, XSI_NS, key_id
    from clearway.sorting import natural_key
    q = f"{{{GRAPHML_NS}}}"
    keys, written = declared_keys(graph)
    root = etree.Element(q + "graphml", nsmap={None: GRAPHML_NS, "xsi": XSI_NS})
    root.set(f"{{{XSI_NS}}}schemaLocation", SCHEMA_LOCATION)
    for domain, name, kind in keys:
        etree.SubElement(root, q + "key", {"id": key_id(domain, name), "for": domain,
                                           "attr.name": name, "attr.type": kind})
    element = etree.SubElement(root, q + "graph", {"id": "roadmap", "edgedefault": "undirected"})

    def add_data(parent, domain, values):
        for name in sorted(values):
            entry = written[domain].get(name)
            if entry is not None:
                etree.SubElement(parent, q + "data", key=entry[0]).text = \
                    _text(values[name], entry[1])

    add_data(element, "graph", graph.graph)
    for node_id in sorted(graph.nodes, key=natural_key):
        node = etree.SubElement(element, q + "node", {"id": xml_text(node_id)})
        add_data(node, "node", {"label": "", "room": ""} | graph.nodes[node_id])
    for edge_id, source, target, attrs, coords in oriented_edges(graph):
        edge = etree.SubElement(element, q + "edge", {"id": xml_text(edge_id),
                                                      "source": xml_text(source),
                                                      "target": xml_text(target)})
        add_data(edge, "edge", attrs | {"geometry": linestring_wkt(coords)})
    return etree.tostring(root, xml_declaration=True, encoding="UTF-8", pretty_print=True)


#: Text that XML writers escape or normalize, or must keep as it is.
_AWKWARD = st.text(st.sampled_from(list("&<>\"'\r\n\t ]]x9\x07\x85\u2028\u200f\ufffe") +
                                   ["\U0001F600", "ü", "漢"]), max_size=12)


@st.composite
def _graphs(draw):
    graph = nx.MultiGraph(units=draw(_AWKWARD), source=draw(_AWKWARD), margin=0.1)
    names = draw(st.lists(_AWKWARD, min_size=1, max_size=6, unique=True))
    for index, name in enumerate(names):
        attrs = {"x": float(index), "y": draw(st.floats(allow_nan=True, allow_infinity=True)),
                 "clearance": 0.5, "kind": draw(_AWKWARD), "label": draw(_AWKWARD)}
        if draw(st.booleans()):
            attrs["room_names"] = draw(_AWKWARD)
        if draw(st.booleans()):
            attrs["reverse_only"] = draw(st.booleans())
        graph.add_node(name, **attrs)
    for index in range(draw(st.integers(0, 6))):
        u, v = draw(st.sampled_from(names)), draw(st.sampled_from(names))
        start, end = graph.nodes[u], graph.nodes[v]
        graph.add_edge(u, v, key=draw(_AWKWARD) + f"e{index}", length=1.0, weight=1.0,
                       clearance_min=draw(st.floats()), geometry=shapely.LineString(
                           [(start["x"], 0.0), (end["x"], 1.0)]))
    return graph


@settings(max_examples=150, deadline=None)
@given(_graphs())
def test_the_text_written_is_lxmls_byte_for_byte(graph):
    # source: lxml (libxml2's serializer), an independent XML writer, writing the same
    # elements: escaping, empty elements, indentation and the declaration agree
    assert render_graph(graph) == _written_by_lxml(graph)
    etree.fromstring(render_graph(graph))       # and it is well-formed XML


def test_a_built_roadmap_is_written_as_lxml_writes_it():
    from clearway.converter import read_floorplan
    from clearway.roadmap import build_roadmap
    from clearway.roadmap.model import Robot
    plan = read_floorplan(Path(__file__).resolve().parents[2] / "sample_drawings" / "clinic.dxf")
    roadmap = build_roadmap(plan.obstacles, plan.free_space,
                            [(s.label, s.x, s.y, s.kind, s.heading) for s in plan.stations],
                            robot=Robot.disc(0.3, margin=0.1), openings=plan.openings,
                            texts=plan.texts)
    graph = roadmap.graph.copy(as_view=True)
    graph.graph = roadmap.graph.graph | {"source": plan.source, "sha256": plan.sha256}
    assert render_graph(graph) == _written_by_lxml(graph)
