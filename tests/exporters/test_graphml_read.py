"""exporters.graphml_read: clearway graphs come back intact; hostile or foreign files are refused."""

from __future__ import annotations

import io
import math
import os
import time
from pathlib import Path

import networkx as nx
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
import shapely

from clearway.errors import GraphFileError, LimitError
from clearway.exporters import read_graphml

from tests.lane_fixtures import lane_graph, write_spec_graphml

NS = "http://graphml.graphdrawing.org/xmlns"  # source: GraphML 1.0 primer, sec. 2


def _graphml(body: str, keys: str | None = None) -> bytes:
    keys = keys if keys is not None else (
        '<key id="a" for="node" attr.name="x" attr.type="double"/>'
        '<key id="b" for="node" attr.name="y" attr.type="double"/>'
        '<key id="c" for="edge" attr.name="geometry" attr.type="string"/>')
    return (f'<?xml version="1.0" encoding="UTF-8"?><graphml xmlns="{NS}">{keys}'
            f'<graph edgedefault="undirected">{body}</graph></graphml>').encode()


NODES = ('<node id="n0"><data key="a">0</data><data key="b">0</data></node>'
         '<node id="n1"><data key="a">4</data><data key="b">0</data></node>')

def sample_graph() -> nx.MultiGraph:
    graph = lane_graph(
        {"n1": (0.0, 0.0, "station", "DOCK <1> & \"A\"", 0.8), "n2": (3.0, 4.0, "junction", "", 1.2),
         "n10": (3.0, 10.0, "end", "", 0.9)},
        [("e1", "n1", "n2", {"clearance_min": 0.7}),
         ("e2", "n1", "n2", {"via": [(0.0, 4.0)], "clearance_min": 0.5}),
         ("e3", "n10", "n2", {"weight": 7.5})],
        source="hall.dxf", tool_version="clearway test", robot_radius=0.35)
    return graph


def test_round_trip_keeps_every_attribute():
    graph = sample_graph()
    back = read_graphml(write_spec_graphml(graph))
    assert sorted(back.nodes) == ["n1", "n10", "n2"]
    assert sorted(back.edges(keys=True)) == sorted(graph.edges(keys=True))
    for node, attrs in graph.nodes(data=True):
        assert back.nodes[node] == attrs
    for u, v, key, attrs in graph.edges(keys=True, data=True):
        got = back.edges[u, v, key]
        for name in ("length", "weight", "clearance_min"):
            assert got[name] == attrs[name] and type(got[name]) is float
        # geometry equal up to direction, and oriented from the file's source to target
        assert got["geometry"].equals(attrs["geometry"])
    assert back.graph["robot_radius"] == 0.35 and back.graph["units"] == "m"
    # analytic: 3-4-5 triangle, then 4 + 3 via (0, 4)
    assert back.edges["n1", "n2", "e1"]["length"] == 5.0
    assert back.edges["n1", "n2", "e2"]["length"] == 7.0


def test_geometry_is_oriented_from_source_to_target():
    # written backwards (target to source): the reader turns it round
    back = read_graphml(_graphml(NODES + '<edge id="e0" source="n1" target="n0"><data key="c">'
                                 'LINESTRING (0 0, 2 1, 4 0)</data></edge>'))
    line = back.edges["n0", "n1", "e0"]["geometry"]
    assert list(line.coords) == [(4.0, 0.0), (2.0, 1.0), (0.0, 0.0)]
    # analytic: two legs of sqrt(2^2 + 1^2)
    assert back.edges["n0", "n1", "e0"]["length"] == pytest.approx(2 * math.sqrt(5), abs=1e-12)


def test_agrees_with_networkx_reader():
    # independent reference: networkx's own GraphML reader on the same bytes
    data = write_spec_graphml(sample_graph())
    theirs = nx.read_graphml(io.BytesIO(data), force_multigraph=True)
    ours = read_graphml(data)
    assert sorted(theirs.nodes) == sorted(ours.nodes)
    assert sorted(k for *_, k in theirs.edges(keys=True)) == sorted(
        k for *_, k in ours.edges(keys=True))
    for node in ours:
        assert (theirs.nodes[node]["x"], theirs.nodes[node]["y"]) == (
            ours.nodes[node]["x"], ours.nodes[node]["y"])


def test_reads_path_and_binary_file(tmp_path):
    path = tmp_path / "roadmap.graphml"
    path.write_bytes(write_spec_graphml(sample_graph()))
    assert nx.utils.graphs_equal(nx.Graph(read_graphml(path)), nx.Graph(read_graphml(str(path))))
    with open(path, "rb") as file:
        assert read_graphml(file).number_of_edges() == 3


def test_older_files_without_optional_attributes():
    data = write_spec_graphml(sample_graph(),
                              omit=("weight", "clearance", "geometry", "label", "kind",
                                    "clearance_min", "length"))
    back = read_graphml(data)
    edge = back.edges["n10", "n2", "e3"]
    # analytic: straight segment (3, 10) -> (3, 4), 6 m; weight falls back to length
    assert edge["length"] == 6.0 and edge["weight"] == 6.0
    assert edge["geometry"].equals(shapely.LineString([(3, 10), (3, 4)]))
    assert math.isnan(edge["clearance_min"]) and math.isnan(back.nodes["n1"]["clearance"])
    assert back.nodes["n1"]["label"] == ""
    # kind from degree: n10 has one lane end (end), n1 two (waypoint), n2 three (junction)
    assert [back.nodes[n]["kind"] for n in ("n10", "n1", "n2")] == ["end", "waypoint", "junction"]


NOT_CLEARWAY = {
    "not xml": (b"this is not xml <", "not a GraphML file: it is not XML"),
    "empty": (b"   ", "graph file is empty"),
    "other root": (b'<svg xmlns="http://www.w3.org/2000/svg"/>', "not <graphml>"),
    "no x/y keys": (_graphml('<node id="n0"/>', keys=""), "no node x/y keys"),
    "missing node": (_graphml(NODES + '<edge id="e0" source="n0" target="n9"/>'),
                     "missing node 'n9'"),
    "text coordinate": (_graphml('<node id="n0"><data key="a">left</data>'
                                 '<data key="b">0</data></node>'), "non-numeric x 'left'"),
    "infinite coordinate": (_graphml('<node id="n0"><data key="a">inf</data>'
                                     '<data key="b">0</data></node>'), "no finite x"),
    "bad wkt": (_graphml(NODES + '<edge id="e0" source="n0" target="n1">'
                         '<data key="c">LINESTRING (0 0,</data></edge>'), "unreadable WKT"),
    "polygon wkt": (_graphml(NODES + '<edge id="e0" source="n0" target="n1"><data key="c">'
                             'POLYGON ((0 0, 4 0, 4 1, 0 0))</data></edge>'), "not a LINESTRING"),
    "detached geometry": (_graphml(NODES + '<edge id="e0" source="n0" target="n1"><data key="c">'
                                   'LINESTRING (0 0, 5 0)</data></edge>'),
                          "does not join its two nodes"),
    "duplicate edge id": (_graphml(NODES + '<edge id="e0" source="n0" target="n1"/>'
                                   '<edge id="e0" source="n1" target="n0"/>'), "used twice"),
    "directed": (_graphml(NODES).replace(b'"undirected"', b'"directed"'), "directed"),
    "undeclared key": (_graphml('<node id="n0"><data key="zz">1</data></node>'),
                       "undeclared key 'zz'"),
}


@pytest.mark.parametrize("case", sorted(NOT_CLEARWAY))
def test_not_a_clearway_graph_is_refused_in_one_line(tmp_path, case):
    data, message = NOT_CLEARWAY[case]
    path = tmp_path / "foreign.graphml"
    path.write_bytes(data)
    with pytest.raises(GraphFileError, match=message) as caught:
        read_graphml(path)
    text = str(caught.value)
    assert text.startswith(str(path) + ": ") and "\n" not in text


def test_missing_file_is_a_graph_file_error(tmp_path):
    with pytest.raises(GraphFileError, match="graph file not found"):
        read_graphml(tmp_path / "absent.graphml")


def test_size_limit():
    data = write_spec_graphml(sample_graph())
    with pytest.raises(LimitError, match=f"larger than {len(data) - 1} bytes"):
        read_graphml(data, max_bytes=len(data) - 1)
    assert read_graphml(data, max_bytes=len(data)).number_of_nodes() == 3


# --- hostile files --------------------------------------------------------------------------

SECRET = "root-password-hash-7f3a"


def _xxe(target: Path, encoding: str = "utf-8") -> bytes:
    # source: OWASP XXE Prevention Cheat Sheet, "external entity" example
    text = (f'<?xml version="1.0" encoding="{encoding.upper()}"?>'
            f'<!DOCTYPE graphml [<!ENTITY leak SYSTEM "file://{target}">]>'
            f'<graphml xmlns="{NS}"><key id="a" for="node" attr.name="x" attr.type="string"/>'
            '<key id="b" for="node" attr.name="y" attr.type="double"/>'
            '<graph edgedefault="undirected"><node id="n0"><data key="a">&leak;</data>'
            '<data key="b">0</data></node></graph></graphml>')
    return text.encode(encoding)


def _laughs(encoding: str = "utf-8") -> bytes:
    # source: the "billion laughs" entity expansion (ten levels of ten references each)
    entities = '<!ENTITY l0 "lol">' + "".join(
        f'<!ENTITY l{i} "{("&l" + str(i - 1) + ";") * 10}">' for i in range(1, 10))
    text = (f'<?xml version="1.0" encoding="{encoding.upper()}"?><!DOCTYPE graphml [{entities}]>'
            f'<graphml xmlns="{NS}"><key id="a" for="node" attr.name="x" attr.type="string"/>'
            '<graph edgedefault="undirected"><node id="n0"><data key="a">&l9;</data></node>'
            '</graph></graphml>')
    return text.encode(encoding)


@pytest.mark.parametrize("encoding", ["utf-8", "utf-16"])
def test_external_entity_is_refused_without_reading_the_file(tmp_path, encoding):
    secret = tmp_path / "secret.txt"
    secret.write_text(SECRET)
    path = tmp_path / "xxe.graphml"
    path.write_bytes(_xxe(secret, encoding))
    started = time.perf_counter()
    with pytest.raises(GraphFileError, match="DOCTYPE or ENTITY declarations are not allowed") as caught:
        read_graphml(path)
    assert time.perf_counter() - started < 1.0
    assert SECRET not in str(caught.value) and "\n" not in str(caught.value)


def test_external_entity_through_the_parser_alone_stays_unresolved(tmp_path):
    # defence in depth: even past the declaration check, lxml with these options keeps
    # the entity as an unresolved reference (the secret never enters the tree)
    from lxml import etree
    secret = tmp_path / "secret.txt"
    secret.write_text(SECRET)
    parser = etree.XMLParser(resolve_entities=False, no_network=True, load_dtd=False,
                             huge_tree=False)
    root = etree.fromstring(_xxe(secret), parser)
    assert SECRET not in etree.tostring(root).decode()


@pytest.mark.parametrize("encoding", ["utf-8", "utf-16"])
def test_billion_laughs_is_refused_quickly(encoding):
    started = time.perf_counter()
    with pytest.raises(GraphFileError, match="DOCTYPE or ENTITY declarations are not allowed"):
        read_graphml(_laughs(encoding))
    assert time.perf_counter() - started < 1.0


@pytest.mark.parametrize("shift", [(0.0, 0.0), (5e5, 5.4e6)])
def test_reads_what_the_exporter_writes(shift):
    # the hall of hall_fixture.py (also at survey coordinates) through render_graphml
    from clearway.exporters import render_graphml
    from hall_fixture import make_plan, make_roadmap
    plan = make_plan(shift=shift)
    roadmap = make_roadmap(plan)
    back = read_graphml(render_graphml(plan, roadmap))
    graph = roadmap.graph
    assert sorted(back.nodes) == sorted(graph.nodes)
    assert sorted(back.edges(keys=True)) == sorted(graph.edges(keys=True))
    for node, attrs in graph.nodes(data=True):
        for name in ("x", "y", "clearance", "kind", "label"):
            assert back.nodes[node][name] == attrs[name]       # floats round-trip exactly
    for u, v, key, attrs in graph.edges(keys=True, data=True):
        got = back.edges[u, v, key]
        assert got["geometry"].equals(attrs["geometry"])
        assert (got["length"], got["weight"], got["clearance_min"]) == (
            attrs["length"], attrs["weight"], attrs["clearance_min"])
    assert back.graph["required_clearance"] == roadmap.robot.clearance
    assert back.graph["source"] == plan.source and back.graph["sha256"] == plan.sha256


@settings(max_examples=int(os.environ.get("CLEARWAY_FUZZ_EXAMPLES", "60")), deadline=None)
@given(st.data())
def test_mutated_files_give_a_graph_or_one_clear_error(data):
    # byte-level fuzzing: flips, cuts and insertions anywhere in a valid file
    original = bytearray(write_spec_graphml(sample_graph()))
    for _ in range(data.draw(st.integers(1, 4))):
        where = data.draw(st.integers(0, len(original) - 1))
        action = data.draw(st.sampled_from(["flip", "cut", "insert"]))
        if action == "flip":
            original[where] ^= 1 << data.draw(st.integers(0, 7))
        elif action == "cut":
            del original[where:where + data.draw(st.integers(1, 200))]
        else:
            original[where:where] = data.draw(st.sampled_from(
                [b"<", b"&amp;", b"\x00", b"<!ENTITY x 'y'>", b"nan", b"-1e400", b'"', b"]]>"]))
        if not original:
            original = bytearray(b" ")
    try:
        graph = read_graphml(bytes(original))
    except (GraphFileError, LimitError) as err:
        assert "\n" not in str(err) and str(err).startswith("<graph bytes>: ")
    else:
        for _, attrs in graph.nodes(data=True):
            assert math.isfinite(attrs["x"]) and math.isfinite(attrs["y"])
        for *_, attrs in graph.edges(data=True):
            assert attrs["weight"] >= 0 and isinstance(attrs["geometry"], shapely.LineString)
