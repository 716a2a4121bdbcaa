"""Hostile text end to end: labels, layer names and file names holding markup characters,
quotes, control characters and right-to-left marks come out escaped and intact.

The drawing is built in code; `clearway build` runs in a subprocess, as a user would run it.
"""

from __future__ import annotations

import json
import subprocess
import sys
import unicodedata

import geojson
import networkx as nx
import pytest
import resvg_py
from lxml import etree

from tests.conftest import new_drawing

CLI = "from clearway.cli import main; main()"

# Markup characters, both quotes, C0 controls that XML 1.0 forbids (BEL, ESC, SOH), a tab that
# it allows, and the right-to-left override and mark (U+202E, U+200F; Unicode UAX #9).
ATTRIB_LABEL = 'Dock <A&B> "q" \'x\' \x07\x1b\t\u202eRTL\u200f end'
TEXT_LABEL = 'Charger & <Bay> "2" \x01\u202e\u200f'
WALL_LAYER = 'A-WALL <&"\'>\u202e\u200f\x07'
FROZEN_LAYER = 'A-WALL frozen <&>\u202e'
STATION_LAYER = 'STATION <"&">\u200f\x1b'
# ezdxf refuses a whole file whose INSERT with attributes sits on a layer named with any of
# <>/\":;?*=` (it validates the SEQEND it creates), so the docks' layer avoids those
DOCK_LAYER = "STATION & 'dock' \u202e\u200f\x07"
FILE_NAME = 'plan <&"\'\u202e\x07>.dxf'


def xml_char_only(text: str) -> str:
    """Keep only the characters of the XML 1.0 Char production (W3C XML 1.0, sec. 2.2)."""
    return "".join(char for char in text if char in "\t\n\r" or 0x20 <= ord(char) <= 0xD7FF
                   or 0xE000 <= ord(char) <= 0xFFFD or 0x10000 <= ord(char) <= 0x10FFFF)


def hostile_drawing(folder):
    """A 20 m x 10 m hall with a dock (block ATTRIB label) and a charger (POINT + TEXT).

    ezdxf's writer refuses the hostile layer names, so placeholders are replaced in the
    saved bytes (R2010 DXF is UTF-8), as another CAD program might have written them.
    """
    doc = new_drawing(6)
    msp = doc.modelspace()
    for x0, y0, x1, y1 in ((0, 0, 20, 10), (0.2, 0.2, 19.8, 9.8)):
        msp.add_lwpolyline([(x0, y0), (x1, y0), (x1, y1), (x0, y1)], close=True,
                           dxfattribs={"layer": "PLACEHOLDERWALL"})
    doc.layers.add("PLACEHOLDERFROZEN").freeze()
    msp.add_line((5, 5), (6, 5), dxfattribs={"layer": "PLACEHOLDERFROZEN"})
    block = doc.blocks.new("DOCK")
    block.add_circle((0, 0), 0.2)
    block.add_attdef("LABEL", (0, 0))
    msp.add_blockref("DOCK", (3, 3), dxfattribs={"layer": DOCK_LAYER}).add_attrib(
        "LABEL", ATTRIB_LABEL, (3, 3))
    msp.add_point((15, 6), dxfattribs={"layer": "PLACEHOLDERSTATION"})
    msp.add_text(TEXT_LABEL, dxfattribs={"layer": "PLACEHOLDERSTATION", "insert": (15.3, 6.3)})
    staging = folder / "staging.dxf"
    doc.saveas(staging)
    data = staging.read_bytes()
    for placeholder, name in (("PLACEHOLDERWALL", WALL_LAYER), ("PLACEHOLDERFROZEN", FROZEN_LAYER),
                              ("PLACEHOLDERSTATION", STATION_LAYER)):
        assert placeholder.encode() in data
        data = data.replace(placeholder.encode(), name.encode("utf-8"))
    staging.unlink()
    path = folder / FILE_NAME
    path.write_bytes(data)
    return path


def clearway(*args, cwd):
    return subprocess.run([sys.executable, "-c", CLI, *map(str, args)], capture_output=True,
                          cwd=cwd, timeout=120, env={"PATH": "/usr/bin:/bin"})


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("hostile")
    drawing = hostile_drawing(folder)
    done = clearway("build", drawing.name, "-o", "out", cwd=folder)
    assert done.returncode == 0, done.stderr.decode("utf-8", "replace")
    assert b"Traceback" not in done.stderr
    return drawing, folder / "out", done.stderr.decode("utf-8")


def assert_safe_on_a_terminal(text: str) -> None:
    """No control, format (bidi) or separator character (Unicode general categories Cc, Cf,
    Zl, Zp) except the line feeds between lines: nothing a terminal would act on."""
    for line in text.split("\n"):
        bad = [char for char in line if unicodedata.category(char) in ("Cc", "Cf", "Zl", "Zp")]
        assert not bad, (bad, line)


def test_build_writes_the_five_files(built):
    _, outdir, _ = built
    assert {path.name for path in outdir.iterdir()} == {
        "roadmap.graphml", "roadmap.geojson", "roadmap.svg", "report.json", "roadmap.html"}


def test_graphml_keeps_labels_and_source_escaped_and_intact(built):
    _, outdir, _ = built
    data = (outdir / "roadmap.graphml").read_bytes()
    # W3C XML 1.0 sec. 2.2: BEL, ESC and SOH cannot appear, not even as &#7; references
    for control in (b"\x07", b"\x1b", b"\x01", b"&#7;", b"&#x7;", b"&#27;", b"&#x1b;"):
        assert control not in data.lower()
    assert b"&lt;A&amp;B&gt;" in data and b"&amp; &lt;Bay&gt;" in data        # escaped markup
    expected = {xml_char_only(ATTRIB_LABEL), xml_char_only(TEXT_LABEL)}
    # lxml, the XML parser of libxml2
    root = etree.fromstring(data, etree.XMLParser(resolve_entities=False, no_network=True))
    ns = {"g": "http://graphml.graphdrawing.org/xmlns"}
    label_key = root.xpath("g:key[@attr.name='label' and @for='node']/@id", namespaces=ns)[0]
    labels = {text for text in root.xpath(f"//g:node/g:data[@key='{label_key}']/text()",
                                          namespaces=ns)}
    assert expected <= labels
    source_key = root.xpath("g:key[@attr.name='source']/@id", namespaces=ns)[0]
    assert root.xpath(f"//g:graph/g:data[@key='{source_key}']/text()", namespaces=ns) == [
        xml_char_only(FILE_NAME)]
    # networkx's own GraphML reader agrees
    graph = nx.read_graphml(outdir / "roadmap.graphml", force_multigraph=True)
    assert expected <= {data.get("label") for _, data in graph.nodes(data=True)}
    assert graph.graph["source"] == xml_char_only(FILE_NAME)
    assert "\u202e" in graph.graph["source"] and '<&"\'' in graph.graph["source"]


def test_geojson_and_report_keep_every_character(built):
    _, outdir, _ = built
    text = (outdir / "roadmap.geojson").read_bytes()
    # RFC 8259 sec. 7: control characters U+0000-U+001F must be escaped inside strings
    assert not any(byte < 0x20 and byte not in b"\n" for byte in text)
    top = json.loads(text)
    collection = geojson.loads(text.decode("utf-8"))
    assert collection.is_valid, collection.errors()
    assert top["source"] == FILE_NAME
    labels = {f["properties"]["label"] for f in top["features"]
              if f["properties"]["element"] == "station"}
    assert labels == {ATTRIB_LABEL, TEXT_LABEL}                  # JSON keeps controls too
    report = json.loads((outdir / "report.json").read_bytes())
    assert report["source"] == FILE_NAME
    assert {s["label"] for s in report["stations"]} == {ATTRIB_LABEL, TEXT_LABEL}
    assert all(s["reachable"] for s in report["stations"])
    # the frozen wall layer is named in a warning, quoted as a Python literal (one line,
    # controls and format characters spelled out)
    assert any(repr(FROZEN_LAYER) in warning and "frozen or off" in warning
               for warning in report["warnings"])
    assert not any("\n" in warning or "\r" in warning for warning in report["warnings"])


def test_svg_shows_labels_and_title_escaped_and_intact(built):
    _, outdir, _ = built
    data = (outdir / "roadmap.svg").read_bytes()
    for control in (b"\x07", b"\x1b", b"\x01", b"&#7;", b"&#x7;", b"&#27;", b"&#x1b;"):
        assert control not in data.lower()
    root = etree.fromstring(data, etree.XMLParser(resolve_entities=False, no_network=True))
    texts = ["".join(node.itertext()) for node in root.iter("{*}text", "{*}title")]
    for label in (ATTRIB_LABEL, TEXT_LABEL):
        assert any(xml_char_only(label) in text for text in texts), label
    assert any(xml_char_only(FILE_NAME) in text for text in texts)
    png = bytes(resvg_py.svg_to_bytes(svg_string=data.decode("utf-8")))
    assert png[:8] == b"\x89PNG\r\n\x1a\n"                      # source: PNG spec sec. 5.2


def test_layers_json_keeps_hostile_layer_names(built):
    drawing, _, _ = built
    done = clearway("layers", "--json", drawing.name, cwd=drawing.parent)
    assert done.returncode == 0, done.stderr
    table = json.loads(done.stdout)
    rows = {row["name"]: row for row in table["layers"]}
    assert {WALL_LAYER, FROZEN_LAYER, STATION_LAYER, DOCK_LAYER} <= set(rows)
    assert rows[WALL_LAYER]["role"] == "wall" and rows[STATION_LAYER]["role"] == "station"
    assert rows[DOCK_LAYER]["role"] == "station"
    assert rows[FROZEN_LAYER]["frozen"] and not rows[WALL_LAYER]["frozen"]


def test_terminal_output_spells_out_controls_and_bidi_marks(built):
    drawing, _, progress = built
    assert_safe_on_a_terminal(progress)
    # the file name appears with its override and BEL written as escapes
    assert 'plan <&"\'\\u202e\\x07>.dxf: ' in progress
    table = clearway("layers", drawing.name, cwd=drawing.parent)
    assert table.returncode == 0
    text = table.stdout.decode("utf-8")
    assert_safe_on_a_terminal(text)
    assert 'A-WALL <&"\'>\\u202e\\u200f\\x07' in text               # WALL_LAYER, spelled out
    # one line per layer, per warning and per kind of unit evidence, plus head, column
    # titles and foot: none broken
    table = json.loads(clearway("layers", "--json", drawing.name, cwd=drawing.parent).stdout)
    warnings = [line for line in text.splitlines() if line.startswith("warning: ")]
    assert len(warnings) == len(table["warnings"])
    assert len(text.splitlines()) == len(table["layers"]) + len(warnings) + \
        len(table["unit_evidence"]) + 3


def test_refused_hostile_file_name_is_one_safe_line(tmp_path):
    drawing = tmp_path / "evil\u202e\x1b[2J\nname.dxf"
    drawing.write_bytes(b"")
    for args in (["layers", drawing.name], ["build", drawing.name, "-o", "out"]):
        done = clearway(*args, cwd=tmp_path)
        assert done.returncode == 2
        stderr = done.stderr.decode("utf-8")
        assert stderr.count("\n") == 1 and stderr.startswith("Error: ")
        assert_safe_on_a_terminal(stderr)
        assert "evil\\u202e\\x1b[2J\\nname.dxf" in stderr
    assert not (tmp_path / "out").exists()
