"""Plain entities taken out of the text read as ezdxf reads them in it.

The reference throughout is ezdxf itself: its ordinary reader (or, where it refuses, its
recovery) on the whole file, with nothing taken out (`cut_plain_entities` made to find
nothing). What clearway reads must be the same, value for value and in the same order,
whichever entities are taken out, and a file that ezdxf would repair or refuse must go the
way it went before.
"""

from __future__ import annotations

import io
import re

import ezdxf
import pytest
from ezdxf.math import Vec3
from hypothesis import given, settings
from hypothesis import strategies as st

import clearway.converter.read as read
from clearway.converter.filetext import entities_span
from clearway.converter.sound import sound_text
from clearway.converter.plain import cut_plain_entities
from clearway.errors import DrawingError, LimitError
from clearway.limits import Limits
from tests.conftest import new_drawing, rectangle
from tests.converter.test_document import contents

#: How an entity may be written: the PLAIN ones are taken out, the others left to ezdxf.
FORMS = ("plain", "rotated", "scaled", "mirrored", "coloured", "dashed", "weighted",
         "attributed", "tilted", "array", "paper",
         "line", "line 2d", "thick line", "tilted line",
         "polyline", "closed polyline", "bulged", "wide", "tapered", "raised", "tilted polyline")
PLAIN = ("plain", "rotated", "scaled", "mirrored", "coloured", "dashed", "weighted",
         "line", "line 2d", "polyline", "closed polyline", "bulged", "wide", "tapered", "raised")


def add(doc, form, k):
    """Add an entity written in `form` (the k-th), and a POINT after every third; return the
    entity's handle."""
    msp = doc.modelspace() if form != "paper" else doc.paperspace()
    x, y = 1.0 + 0.37 * k, 2.0 + 0.11 * k
    attribs = {"layer": ("A-STATION", "RACK", "0")[k % 3]}
    if form == "rotated":
        attribs["rotation"] = 17.5 * k
    elif form == "scaled":
        attribs.update(xscale=0.5 + k, yscale=2.0, zscale=3.0)
    elif form == "mirrored":
        attribs.update(xscale=-1.0, rotation=90.0)
    elif form == "coloured":
        attribs["color"] = 3
    elif form == "dashed":
        attribs.update(linetype="DASHED", color=256)
    elif form == "weighted":
        attribs.update(lineweight=35, linetype="ByLayer")
    elif form in ("tilted", "tilted line", "tilted polyline"):
        attribs["extrusion"] = Vec3(0, 0, -1)
    elif form == "thick line":
        attribs["thickness"] = 2.5
    elif form == "array":
        attribs.update(row_count=2, column_count=3, row_spacing=1.5, column_spacing=2.0)
    elif form == "wide":
        attribs["const_width"] = 0.05
    elif form == "raised":
        attribs["elevation"] = 1.25
    if "line" in form and "polyline" not in form:
        end = (x + 1.5, y + 0.5) if form == "line 2d" else (x + 1.5, y + 0.5, 0.75)
        entity = msp.add_line((x, y), end, dxfattribs=attribs)
    elif "polyline" in form or form in ("bulged", "wide", "tapered", "raised"):
        points = [(x, y, 0, 0, 0), (x + 2, y, 0, 0, 0), (x + 2, y + 1, 0, 0, 0)]
        if form == "bulged":
            points[1] = (x + 2, y, 0, 0, 0.4142)
        elif form == "tapered":
            points[0] = (x, y, 0.1, 0.02, 0)
        entity = msp.add_lwpolyline(points, format="xyseb", close=form != "polyline",
                                    dxfattribs=attribs)
    else:
        entity = msp.add_blockref(("PALLET", "CHARGER")[k % 2], (x, y), dxfattribs=attribs)
        if form == "attributed":
            entity.add_attrib("ID", f"P{k}", (x, y))
    if k % 3 == 2:
        msp.add_point((x, -y), dxfattribs={"layer": "A-STATION"})
    return entity.dxf.handle


def drawing(forms):
    """(sound DXF text of a walled room with an entity in each of `forms`, in order; the
    handles of the plainly written model-space entities, in order)."""
    doc = new_drawing()
    doc.linetypes.add("DASHED", [0.75, 0.5, -0.25], description="Dashed __ __ __")
    doc.blocks.new("PALLET").add_lwpolyline([(0, 0), (1, 0), (1, 1), (0, 1)], close=True)
    charger = doc.blocks.new("CHARGER", base_point=(0.25, 0.5))
    charger.add_circle((0.25, 0.5), 0.2)
    msp = doc.modelspace()
    walls = [msp.add_lwpolyline(rectangle(*box), close=True, dxfattribs={"layer": "A-WALL"})
             .dxf.handle for box in ((0, 0, 40, 30), (0.2, 0.2, 39.8, 29.8))]
    handles = [add(doc, form, k) for k, form in enumerate(forms)]
    stream = io.StringIO()
    doc.write(stream)
    text = sound_text(stream.getvalue().encode("ascii"))
    assert text is not None
    return text, walls + [handle for handle, form in zip(handles, forms) if form in PLAIN]


def drawing_text(forms):
    return drawing(forms)[0]


def outcome(path):
    """`contents` of `path`, or the message of the DrawingError reading it raised."""
    try:
        return contents(path)
    except DrawingError as error:
        return str(error)


def read_both(tmp_path, text, monkeypatch, name="plan.dxf"):
    """(clearway's reading of `text`, ezdxf's reading of it whole): `outcome` of each."""
    path = tmp_path / name
    path.write_text(text)
    ours = outcome(path)
    with monkeypatch.context() as patch:
        patch.setattr(read, "cut_plain_entities", lambda text: None)
        whole = outcome(path)
    return ours, whole


def handles_of(text, kind="INSERT"):
    """Handles of the entities of `kind` in the ENTITIES section of `text`."""
    begin, end = entities_span(text)
    return re.findall(rf"^  0\n{kind}\n  5\n(\w+)\n", text[begin:end], re.MULTILINE)


# source: ezdxf's reader on the whole file (clearway's reading with nothing taken out)
@settings(max_examples=40, deadline=None)
@given(forms=st.lists(st.sampled_from(FORMS), min_size=1, max_size=14))
def test_plain_entities_read_as_ezdxf_reads_the_whole_file(forms, tmp_path_factory):
    text, expected = drawing(forms)
    tmp_path = tmp_path_factory.mktemp("plain")
    with pytest.MonkeyPatch.context() as monkeypatch:
        ours, whole = read_both(tmp_path, text, monkeypatch)
    assert ours == whole
    # exactly the plainly written ones were taken out, and ezdxf reads the rest as before
    plain = cut_plain_entities(text)
    assert plain is not None and plain.handle == expected
    doc = ezdxf.read(io.StringIO(plain.text))
    assert plain.fit(doc)
    assert not set(expected) & {entity.dxf.handle for entity in doc.modelspace()}


def test_an_insert_ezdxf_would_delete_sends_the_file_to_recovery(tmp_path, monkeypatch):
    # source: ezdxf's audit deletes an INSERT whose block is not defined, so the ordinary
    # reader's result is refused and the file recovered; taken out, it must not be read
    text = drawing_text(["plain", "rotated", "plain"]).replace("\n  2\nCHARGER\n  10\n",
                                                               "\n  2\nNOSUCHBLOCK\n  10\n")
    text = text.replace("\n  2\nCHARGER\n 10\n", "\n  2\nNOSUCHBLOCK\n 10\n")
    assert "NOSUCHBLOCK" in text
    plain = cut_plain_entities(text)
    assert plain is not None and "NOSUCHBLOCK" in [
        values[0] for kind, values in zip(plain.kind, plain.values) if kind == "INSERT"]
    assert not plain.fit(ezdxf.read(io.StringIO(plain.text)))
    ours, whole = read_both(tmp_path, text, monkeypatch)
    assert ours == whole
    assert any("NOSUCHBLOCK" in notice or "BLOCK" in notice for notice in whole[14])


@pytest.mark.parametrize("change", [("\n  6\nDASHED\n", "\n  6\nDOTTED\n"),
                                    ("\n 62\n3\n", "\n 62\n300\n"),
                                    ("\n370\n35\n", "\n370\n33\n")])
def test_what_ezdxf_would_repair_sends_the_file_to_recovery(change, tmp_path, monkeypatch):
    # source: ezdxf's audit removes an undefined line type and a colour index outside 0-257,
    # and sets a line weight that is not one of DXF's to the nearest that is
    text = drawing_text(["plain", "dashed", "coloured", "weighted"])
    assert change[0] in text
    text = text.replace(*change)
    plain = cut_plain_entities(text)
    assert plain is None or not plain.fit(ezdxf.read(io.StringIO(plain.text)))
    ours, whole = read_both(tmp_path, text, monkeypatch)
    assert ours == whole
    assert any("repaired" in notice for notice in whole[14])


def test_an_invalid_layer_name_is_left_to_ezdxf(tmp_path, monkeypatch):
    # source: ezdxf's audit reports an INSERT on a layer named with a character no layer
    # name may hold (validator.is_valid_layer_name)
    text = drawing_text(["line", "plain"]).replace("\n  8\nRACK\n", "\n  8\nRACK<2>\n", 1)
    assert "RACK<2>" in text
    plain = cut_plain_entities(text)
    assert plain is not None and not plain.fit(ezdxf.read(io.StringIO(plain.text)))
    ours, whole = read_both(tmp_path, text, monkeypatch)
    assert ours == whole


def test_a_value_that_is_no_number_is_refused_as_ezdxf_refuses_it(tmp_path, monkeypatch):
    # source: ezdxf's tag compiler converts group code 41 with float() and raises on failure
    text = drawing_text(["scaled", "plain"])
    at = text.index("\nAcDbBlockReference\n")
    text = text[:at] + re.sub(r"\n 41\n[^\n]*\n", "\n 41\nwide\n", text[at:], count=1)
    assert "\n 41\nwide\n" in text and cut_plain_entities(text) is None
    ours, whole = read_both(tmp_path, text, monkeypatch)
    assert isinstance(ours, str) and ours == whole


def test_a_handle_used_twice_or_an_entity_without_one_takes_nothing_out(tmp_path, monkeypatch):
    text = drawing_text(["plain", "plain", "rotated"])
    first, second = handles_of(text)[:2]
    # the second INSERT takes the first one's handle: ezdxf would not keep both as written
    twice = text.replace(f"\n  5\n{second}\n", f"\n  5\n{first}\n", 1)
    assert cut_plain_entities(twice) is None
    # a CIRCLE (left to ezdxf) written without a handle: the model space could not be put
    # back in order
    doc = ezdxf.read(io.StringIO(text))
    circle = doc.modelspace().add_circle((1, 1), 0.2, dxfattribs={"layer": "A-WALL"})
    stream = io.StringIO()
    doc.write(stream)
    written = stream.getvalue()
    bare = written.replace(f"  0\nCIRCLE\n  5\n{circle.dxf.handle}\n", "  0\nCIRCLE\n", 1)
    assert bare != written and cut_plain_entities(bare) is None
    # a handle that a table entry already holds: ezdxf's database keeps one of the two
    layer = ezdxf.read(io.StringIO(text)).layers.get("0").dxf.handle
    taken = text.replace(f"\n  5\n{first}\n", f"\n  5\n{layer}\n", 1)
    plain = cut_plain_entities(taken)
    assert plain is not None and not plain.fit(ezdxf.read(io.StringIO(plain.text)))
    for case in (twice, bare, taken):
        ours, whole = read_both(tmp_path, case, monkeypatch)
        assert ours == whole


def test_a_limit_reached_in_a_plain_polyline_is_reported_as_by_ezdxf(tmp_path, monkeypatch):
    # source: clearway's reading of the whole file by ezdxf, whose flattening of the same
    # polyline meets the same limit on vertices per curve
    text = drawing_text(["bulged", "line", "plain"])
    path = tmp_path / "plan.dxf"
    path.write_text(text)
    limits = Limits(max_curve_vertices=8)
    with pytest.raises(LimitError) as ours:
        read.read_drawing(path, chord_tolerance=1e-6, limits=limits)
    monkeypatch.setattr(read, "cut_plain_entities", lambda text: None)
    with pytest.raises(LimitError) as whole:
        read.read_drawing(path, chord_tolerance=1e-6, limits=limits)
    assert str(ours.value) == str(whole.value)


def test_the_last_entity_and_an_insert_in_a_block_definition(tmp_path, monkeypatch):
    # the section's last entity is an INSERT (the lookahead meets the ENDSEC's group code);
    # INSERTs inside block definitions stay where they are
    doc = new_drawing()
    doc.blocks.new("PALLET").add_lwpolyline([(0, 0), (1, 0), (1, 1)], close=True)
    doc.blocks.new("ROW").add_blockref("PALLET", (0, 0))
    doc.modelspace().add_circle((5, 4), 3.0, dxfattribs={"layer": "A-WALL"})
    doc.modelspace().add_blockref("ROW", (2, 2), dxfattribs={"layer": "RACK"})
    stream = io.StringIO()
    doc.write(stream)
    text = sound_text(stream.getvalue().encode("ascii"))
    plain = cut_plain_entities(text)
    assert plain is not None and plain.kind == ["INSERT"] and plain.values[0][0] == "ROW"
    assert plain.text.count("\nINSERT\n") == text.count("\nINSERT\n") - 1
    ours, whole = read_both(tmp_path, text, monkeypatch)
    assert ours == whole


def test_what_the_cut_knows_of_ezdxf_is_ezdxfs_own():
    # source: ezdxf, the defaults of an INSERT's attributes and the line weights its audit
    # keeps; the cut keeps its own copies so that it runs without importing ezdxf
    from ezdxf.entities.insert import acdb_block_reference
    from ezdxf.lldxf.const import VALID_DXF_LINEWEIGHT_VALUES

    from clearway.converter import plain
    assert plain.LINEWEIGHTS == set(VALID_DXF_LINEWEIGHT_VALUES)
    assert plain.DEFAULTS == {key: acdb_block_reference.attribs[key].default
                              for key in ("xscale", "yscale", "rotation")}
