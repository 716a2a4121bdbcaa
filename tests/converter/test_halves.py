"""A large model space read in two halves side by side reads as the whole file does.

`filetext.entity_halves` cuts the ENTITIES section of sound text in two; the reference for
the cut is ezdxf itself, reading the whole file and each half. `read.read_drawing` then
reads the halves in two processes and merges them; the reference is the same reader on the
whole file, in one process.
"""

from __future__ import annotations

import io
import re

import ezdxf
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

import clearway.converter.read as read
from benchmarks.synthetic import write_style
import clearway.converter.document as document
import clearway.converter.filetext as filetext
from clearway.converter.filetext import entity_halves
from clearway.converter.sound import sound_text
from clearway.converter.plain import cut_plain_entities
from clearway.errors import LimitError
from clearway.limits import Limits
from tests.conftest import SAMPLES, new_drawing, walled_room
from tests.converter.test_document import contents

KINDS = ("line", "lwpolyline", "polyline", "insert", "attributed", "circle", "text", "hatch")


def add(msp, kind, k):
    """Add one entity of `kind` (the k-th) to `msp`; return its handle."""
    x = float(k)
    if kind == "line":
        entity = msp.add_line((x, 0), (x, 1), dxfattribs={"layer": "A-WALL"})
    elif kind == "lwpolyline":
        entity = msp.add_lwpolyline([(x, 0), (x + 1, 0), (x + 1, 1)], close=True)
    elif kind == "polyline":       # POLYLINE, VERTEX, VERTEX, VERTEX, SEQEND
        entity = msp.add_polyline2d([(x, 0), (x + 1, 0), (x + 1, 1)])
    elif kind in ("insert", "attributed"):
        entity = msp.add_blockref("PALLET", (x, 2), dxfattribs={"layer": "A-STATION"})
        if kind == "attributed":   # INSERT, ATTRIB, ATTRIB, SEQEND
            entity.add_attrib("ID", f"P{k}", (x, 2))
            entity.add_attrib("KIND", "dock", (x, 2.5))
    elif kind == "circle":
        entity = msp.add_circle((x, 3), 0.2, dxfattribs={"layer": "A-COLS"})
    elif kind == "text":
        entity = msp.add_text(f"ROOM {k}", dxfattribs={"layer": "A-ANNO"})
    else:
        entity = msp.add_hatch(dxfattribs={"layer": "A-AREA-KEEPOUT"})
        entity.paths.add_polyline_path([(x, 4), (x + 1, 4), (x + 1, 5)], is_closed=True)
    return entity.dxf.handle


def text_of(kinds):
    """Sound DXF text of a drawing with one entity of each of `kinds`, and their handles."""
    doc = new_drawing()
    block = doc.blocks.new("PALLET")
    block.add_lwpolyline([(0, 0), (1, 0), (1, 1), (0, 1)], close=True)
    msp = doc.modelspace()
    handles = [add(msp, kind, k) for k, kind in enumerate(kinds)]
    stream = io.StringIO()
    doc.write(stream)
    text = sound_text(stream.getvalue().encode("ascii"))
    assert text is not None
    return text, handles


def section_of(text):
    """The ENTITIES section of `text`, from its name to its end."""
    start = text.index("\nENTITIES\n")
    return text[start:text.index("\nENDSEC\n", start)]


def work(section):
    """The work of reading the entities in `section` as `filetext.entity_halves` weighs it."""
    entities = re.findall(r"\n  0\n([A-Z]+)\n", "\n" + section)
    return sum(1 if kind == "INSERT" else filetext.ENTITY_WORK for kind in entities)


def model_space(text):
    """ezdxf's reading of `text`: (handles of the model space in order, its audit's findings,
    (type, vertex or attribute count) of each entity)."""
    doc = ezdxf.read(io.StringIO(text))
    auditor = doc.audit()
    entities = list(doc.modelspace())
    shape = [(e.dxftype(), len(e.vertices) if e.dxftype() == "POLYLINE"
              else len(e.attribs) if e.dxftype() == "INSERT" else 0) for e in entities]
    return [e.dxf.handle for e in entities], len(auditor.fixes) + len(auditor.errors), shape


# source: ezdxf reading the whole file and each half (independent of the cut)
@settings(max_examples=25, deadline=None)
@given(st.lists(st.sampled_from(KINDS), min_size=2, max_size=12))
def test_the_halves_hold_every_entity_once_in_order_and_whole(kinds):
    text, handles = text_of(kinds)
    whole, findings, shape = model_space(text)
    assert whole == handles and findings == 0
    first, second = entity_halves(text)
    first_handles, first_findings, first_shape = model_space(first)
    second_handles, second_findings, second_shape = model_space(second)
    assert first_handles + second_handles == whole
    # cut at the first entity from the middle of the work on (an INSERT weighing 1, any
    # other entity and each that follows one ENTITY_WORK): the halves differ by at most
    # twice the entity (with what follows it) that straddles the middle, and the work of
    # the share of the section the middle is looked for in
    largest = max(work(section_of(text_of([kind])[0])) for kind in set(kinds))
    section = section_of(text)
    size = max(len(section) // filetext.WORK_CHUNKS, 1)
    share = max(work(section[at:at + size + 40]) for at in range(0, len(section), size))
    assert first_handles and second_handles
    assert abs(work(section_of(first)) - work(section_of(second))) <= 2 * (largest + share)
    # a polyline keeps its vertices, an insert its attributes: nothing cut apart
    assert first_shape + second_shape == shape
    assert first_findings == second_findings == 0


def test_the_cut_halves_the_work_not_the_characters():
    # 200 bays as INSERTs read straight from the text, then 40 polylines: by the characters
    # the cut would fall among the INSERTs, leaving the second half most of the work
    text, _ = text_of(["insert"] * 200 + ["lwpolyline"] * 40)
    first, second = entity_halves(text)
    total = work(section_of(text))
    assert total == 200 + 40 * filetext.ENTITY_WORK
    assert abs(work(section_of(first)) - work(section_of(second))) <= 2 * filetext.ENTITY_WORK


def test_text_without_two_entities_or_a_large_enough_model_space_is_not_cut():
    text, _ = text_of(["line"])
    assert entity_halves(text) is None
    assert entity_halves(text.replace("ENTITIES", "NOTHING")) is None
    # source: ezdxf's ascii_tags_loader strips only the line end from a value: "ENTITIES "
    # names no section it knows, and ezdxf would not read the entities there as such
    text, _ = text_of(["line", "circle", "text"])
    assert entity_halves(text) is not None
    assert entity_halves(text.replace("\nENTITIES\n", "\nENTITIES \n")) is None
    text, _ = text_of(["line", "circle"])
    section = text[text.index("ENTITIES"):text.index("ENDSEC", text.index("ENTITIES"))]
    assert entity_halves(text, least=work(section)) is not None
    assert entity_halves(text, least=work(section) + 1) is None


@pytest.mark.parametrize("refer", ["extension dictionary", "group"])
def test_entities_objects_refer_to_keep_the_file_whole(refer, monkeypatch):
    doc = new_drawing()
    msp = doc.modelspace()
    lines = [msp.add_line((k, 0), (k, 1), dxfattribs={"layer": "A-WALL"}) for k in range(6)]
    if refer == "group":
        doc.groups.new("RACK ROW").extend(lines[4:])
        # as CAD programs write it, each member names its group as a reactor (before 1.4,
        # ezdxf leaves that to the audit)
        doc.audit()
    else:
        lines[5].new_extension_dict().add_xrecord("PROPERTIES").extend([(1, "steel")])
    stream = io.StringIO()
    doc.write(stream)
    text = sound_text(stream.getvalue().encode("ascii"))
    assert text is not None and model_space(text)[1] == 0
    assert entity_halves(text) is None
    # source: ezdxf's audit: cut anyway, the first half holds objects whose entities are
    # in the second, and its audit repairs them (the reader would then read the file whole)
    monkeypatch.setattr(filetext, "_REFERRED", ())
    first, second = entity_halves(text)
    assert model_space(first)[1] > 0


def body_of(text):
    """The text ezdxf is given of sound `text`: without its plain entities, where it has
    some (`plain.cut_plain_entities`)."""
    plain = cut_plain_entities(text)
    return text if plain is None else plain.text


@pytest.fixture
def split_reads(monkeypatch):
    """Every drawing read in halves: in a second process where one can be forked, else here
    in turn. Returns the texts the ordinary reader was given in this process."""
    texts = []
    sound = document.read_sound

    def recorded(text, **options):
        texts.append(text)
        return sound(text, **options)

    monkeypatch.setattr(read, "_halves", entity_halves)
    monkeypatch.setattr(read, "read_sound", recorded)
    monkeypatch.setattr(document, "read_sound", recorded)
    return texts


def whole_contents(path, monkeypatch):
    with monkeypatch.context() as patch:
        patch.setattr(read, "_halves", lambda text: None)
        return contents(path)


@pytest.fixture(scope="module")
def suite_drawing(tmp_path_factory):
    """A mixed floor of the benchmark suite: rooms, curved walls, racking, stations."""
    return write_style(tmp_path_factory.mktemp("suite") / "mixed.dxf", "mixed", 300)


@pytest.mark.parametrize("name", ["mixed suite drawing"]
                         + sorted(path.name for path in SAMPLES.glob("*.dxf")))
def test_halves_read_as_the_whole_file(name, suite_drawing, split_reads, monkeypatch):
    path = suite_drawing if name == "mixed suite drawing" else SAMPLES / name
    whole = whole_contents(path, monkeypatch)
    split_reads.clear()
    assert contents(path) == whole
    # the halves were read (the second here too when no process could be forked), never
    # the whole file
    first, second = (body_of(half) for half in entity_halves(path.read_text()))
    assert split_reads in ([first], [first, second])


@pytest.mark.parametrize("refused", [0, 1])
def test_a_half_the_ordinary_reader_refuses_sends_the_whole_file_to_it(
        refused, suite_drawing, split_reads, monkeypatch):
    whole = whole_contents(suite_drawing, monkeypatch)
    text = suite_drawing.read_text()
    halves = entity_halves(text)
    sound = document.read_sound
    here = []

    def refusing(candidate, **options):
        here.append(candidate)
        refused_half = (halves[refused], body_of(halves[refused]))
        return None if candidate in refused_half else sound(candidate, **options)

    monkeypatch.setattr(read, "read_sound", refusing)
    monkeypatch.setattr(document, "read_sound", refusing)
    assert contents(suite_drawing) == whole
    # the first half, without its plain entities, then as written where refused; the second
    # in another process where one was forked; then the whole file, without them (as the
    # refused second half, when the first holds plain entities only), else as written
    assert here[0] == body_of(halves[0]) and here[-1] in (body_of(text), text)
    assert set(here[1:-1]) <= {halves[0], halves[1], body_of(halves[1]), body_of(text)}


def test_a_limit_reached_in_the_second_half_is_reported_as_in_the_whole(tmp_path, split_reads,
                                                                          monkeypatch):
    doc = new_drawing()
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)
    msp.add_circle((5, 4), 3.0, dxfattribs={"layer": "A-COLS"})     # drawn last
    path = tmp_path / "circle.dxf"
    doc.saveas(path)
    limits = Limits(max_curve_vertices=8)
    # every entity left to ezdxf, so that there are halves to read
    monkeypatch.setattr(read, "cut_plain_entities", lambda text: None)
    with pytest.raises(LimitError) as split:
        read.read_drawing(path, chord_tolerance=0.001, limits=limits)
    assert split_reads[0] == entity_halves(path.read_text())[0]
    monkeypatch.setattr(read, "_halves", lambda text: None)
    with pytest.raises(LimitError) as whole:
        read.read_drawing(path, chord_tolerance=0.001, limits=limits)
    assert str(split.value) == str(whole.value)
