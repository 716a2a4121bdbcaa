"""Hostile and foreign GraphML given to route, compare and build --previous: exit 2 with one
line on stderr, nothing written, no file or network access through the XML, bounded time."""

from __future__ import annotations

import io
import time

import networkx as nx
import pytest
from click.testing import CliRunner

from clearway.cli import main
from tests.conftest import SAMPLES

NS = "http://graphml.graphdrawing.org/xmlns"
SECRET = "site-secret-5d81c"
KEYS = (f'<graphml xmlns="{NS}"><key id="a" for="node" attr.name="x" attr.type="double"/>'
        '<key id="b" for="node" attr.name="y" attr.type="double"/>'
        '<graph edgedefault="undirected">')


def _declared(doctype: str, body: str, encoding: str = "utf-8") -> bytes:
    return (f'<?xml version="1.0" encoding="{encoding.upper()}"?>{doctype}{KEYS}{body}'
            '</graph></graphml>').encode(encoding)


def xxe(folder, encoding="utf-8"):
    # source: OWASP XML External Entity Prevention Cheat Sheet, external entity example
    return _declared(f'<!DOCTYPE graphml [<!ENTITY leak SYSTEM "file://{folder / "secret.txt"}">]>',
                     '<node id="n0"><data key="a">&leak;</data><data key="b">0</data></node>',
                     encoding)


def parameter_entity(folder, encoding="utf-8"):
    # source: OWASP XXE Prevention Cheat Sheet, parameter entities in the internal subset
    return _declared(f'<!DOCTYPE graphml [<!ENTITY % p SYSTEM "file://{folder / "secret.txt"}">'
                     ' %p;]>', '<node id="n0"><data key="a">0</data><data key="b">0</data></node>',
                     encoding)


def external_dtd(folder, encoding="utf-8"):
    return _declared(f'<!DOCTYPE graphml SYSTEM "file://{folder / "secret.txt"}">',
                     '<node id="n0"><data key="a">0</data><data key="b">0</data></node>',
                     encoding)


def billion_laughs(folder, encoding="utf-8"):
    # source: the "billion laughs" expansion, ten levels of ten references (10^9 "lol"s)
    entities = '<!ENTITY l0 "lol">' + "".join(
        f'<!ENTITY l{i} "{("&l" + str(i - 1) + ";") * 10}">' for i in range(1, 10))
    return _declared(f"<!DOCTYPE graphml [{entities}]>",
                     '<node id="n0"><data key="a">&l9;</data><data key="b">0</data></node>',
                     encoding)


def foreign_graphml(folder, encoding="utf-8"):
    # valid GraphML written by networkx, but no clearway keys (no x / y)
    buffer = io.BytesIO()
    nx.write_graphml(nx.path_graph(4), buffer, encoding=encoding)
    return buffer.getvalue()


def svg_file(folder, encoding="utf-8"):
    return ('<?xml version="1.0"?><svg xmlns="http://www.w3.org/2000/svg" width="1" height="1">'
            '<rect width="1" height="1"/></svg>').encode(encoding)


def xhtml_file(folder, encoding="utf-8"):
    return ('<html xmlns="http://www.w3.org/1999/xhtml"><body><p>graph</p></body></html>'
            ).encode(encoding)


def text_not_numbers(folder, encoding="utf-8"):
    return _declared("", '<node id="n0"><data key="a">west</data><data key="b">0</data></node>',
                     encoding)


def cut_short(folder, encoding="utf-8"):
    return _declared("", '<node id="n0"><data key="a">0</data><data key="b">0</data></node>',
                     encoding)[:-20]


def empty_file(folder, encoding="utf-8"):
    return b""


HOSTILE = {"external entity": (xxe, "DOCTYPE or ENTITY declarations are not allowed"),
           "external entity utf-16": (lambda f: xxe(f, "utf-16"),
                                      "DOCTYPE or ENTITY declarations are not allowed"),
           "parameter entity": (parameter_entity, "DOCTYPE or ENTITY declarations are not allowed"),
           "external DTD": (external_dtd, "DOCTYPE or ENTITY declarations are not allowed"),
           "billion laughs": (billion_laughs, "DOCTYPE or ENTITY declarations are not allowed"),
           "billion laughs utf-16": (lambda f: billion_laughs(f, "utf-16"),
                                     "DOCTYPE or ENTITY declarations are not allowed"),
           "networkx graph": (foreign_graphml, "not a clearway graph"),
           "SVG": (svg_file, "not <graphml>"),
           "XHTML": (xhtml_file, "not <graphml>"),
           "text coordinate": (text_not_numbers, "non-numeric x 'west'"),
           "cut short": (cut_short, "not well-formed XML"),
           "empty": (empty_file, "graph file is empty")}

COMMANDS = {
    "route": lambda bad, good, out: ["route", bad, "--matrix"],
    "route FROM TO": lambda bad, good, out: ["route", bad, "n0", "n1"],
    "compare (old)": lambda bad, good, out: ["compare", bad, good, "--svg", out / "diff.svg"],
    "compare (new)": lambda bad, good, out: ["compare", good, bad, "--svg", out / "diff.svg"],
    "build --previous": lambda bad, good, out: ["build", SAMPLES / "clinic.dxf", "-o", out,
                                                "--previous", bad],
}


@pytest.fixture(scope="module")
def good_graph(tmp_path_factory):
    """A clearway graph of the clinic sample, for the other side of compare."""
    outdir = tmp_path_factory.mktemp("clinic")
    result = CliRunner().invoke(main, ["build", str(SAMPLES / "clinic.dxf"), "-o", str(outdir),
                                       "-q"])
    assert result.exit_code == 0, result.output
    return outdir / "roadmap.graphml"


@pytest.mark.parametrize("command", sorted(COMMANDS))
@pytest.mark.parametrize("case", sorted(HOSTILE))
def test_hostile_or_foreign_graph_exits_2_with_one_line(tmp_path, good_graph, case, command):
    make, message = HOSTILE[case]
    (tmp_path / "secret.txt").write_text(SECRET)
    bad = tmp_path / "input.graphml"
    bad.write_bytes(make(tmp_path))
    out = tmp_path / "out"
    args = [str(arg) for arg in COMMANDS[command](bad, good_graph, out)]
    started = time.perf_counter()
    result = CliRunner().invoke(main, args)
    assert time.perf_counter() - started < 5              # refused, never expanded
    assert result.exit_code == 2, (result.exit_code, result.output, result.exception)
    lines = result.stderr.splitlines()
    assert len(lines) == 1, lines
    assert lines[0].startswith(f"Error: {bad}: ") and message in lines[0], lines[0]
    assert "Traceback" not in result.output and result.stdout == ""
    assert SECRET not in result.output                    # nothing read through the XML
    assert not out.exists()                               # no OUTDIR, no --svg file


def test_xinclude_is_never_processed(tmp_path, good_graph):
    # source: W3C XInclude 1.0; lxml only includes when asked (.xinclude()), and clearway
    # never asks, so the secret file's text cannot reach a label
    (tmp_path / "secret.txt").write_text(SECRET)
    data = good_graph.read_bytes()
    include = (f'<xi:include xmlns:xi="http://www.w3.org/2001/XInclude" '
               f'href="file://{tmp_path / "secret.txt"}" parse="text"/>').encode()
    assert b"<graph " in data
    data = data.replace(b"</graph>", b'<node id="zz">' + include + b"</node></graph>", 1)
    bad = tmp_path / "include.graphml"
    bad.write_bytes(data)
    for args in (["route", str(bad), "--matrix", "--json"],
                 ["compare", str(good_graph), str(bad), "--json"]):
        result = CliRunner().invoke(main, args)
        assert SECRET not in result.output
        assert "Traceback" not in result.output
        assert result.exit_code in (0, 2), (result.exit_code, result.output, result.exception)
        if result.exit_code == 2:
            assert len(result.stderr.splitlines()) == 1
