"""Which files ezdxf's ordinary reader may read (`sound_text`), and that it then reads them as
ezdxf's recovery reader does: the reference is ezdxf's own recovery path."""

from __future__ import annotations

import io

import ezdxf
import pytest
from ezdxf import recover

import clearway.converter.document as document
import clearway.converter.filetext as filetext
from clearway.converter.sound import sound_text
from clearway.converter.read import read_drawing
from tests.conftest import SAMPLES, new_drawing, walled_room


def drawing_bytes(tmp_path, version="R2010"):
    doc = ezdxf.new(version, units=6) if version != "R2010" else new_drawing()
    msp = doc.modelspace()
    if version == "R2010":
        walled_room(msp, 0, 0, 10, 8)
    msp.add_line((1, 1), (4, 1), dxfattribs={"layer": "A-WALL"})
    msp.add_text("OFFICE", dxfattribs={"layer": "A-ANNO"}).set_placement((5, 4))
    path = tmp_path / "plan.dxf"
    doc.saveas(path)
    return path.read_bytes()


def contents(path):
    """What clearway reads from `path`, as comparable plain values."""
    return values_of(read_drawing(path, chord_tolerance=0.001))


def values_of(content):
    """A DrawingContent as comparable plain values (its digest and file name left out)."""
    def plain(by_layer):
        return {layer: (parts.coords.tobytes(), parts.offsets.tobytes(), parts.kinds.tobytes())
                for layer, parts in by_layer.items()}
    return (content.insunits, content.layer_states, {k: dict(v) for k, v in content.counts.items()},
            plain(content.parts), plain(content.footprints), content.points, content.texts,
            content.attribute_texts, content.inserts, content.dimensions, content.header, dict(content.skipped), content.paperspace,
            content.warnings, content.repairs, content.drawing_date)


def recovered_contents(path, monkeypatch):
    with monkeypatch.context() as patch:
        patch.setattr(filetext, "sound_text", lambda data: None)   # recovery for every file
        return contents(path)


@pytest.mark.parametrize("name", sorted(path.name for path in SAMPLES.glob("*.dxf")))
def test_sample_drawings_take_the_ordinary_reader_and_read_as_recovered(name, monkeypatch):
    path = SAMPLES / name
    assert sound_text(path.read_bytes()) is not None
    assert contents(path) == recovered_contents(path, monkeypatch)


def test_crlf_line_ends_are_sound_and_read_alike(tmp_path, monkeypatch):
    data = drawing_bytes(tmp_path).replace(b"\n", b"\r\n")
    path = tmp_path / "crlf.dxf"
    path.write_bytes(data)
    assert sound_text(data) is not None
    assert contents(path) == recovered_contents(path, monkeypatch)


def _first(data, old, new):
    assert old in data, old
    return data.replace(old, new, 1)


# source: ezdxf's recover.py and lldxf/repair.py, the repairs its recovery reader makes that
# the ordinary reader does not (each edit below would be repaired, or read otherwise)
EDITS = {
    "non-ASCII text": lambda d: _first(d, b"\nOFFICE\n", "\nBÜRO\n".encode("cp1252")),
    "unicode escape": lambda d: _first(d, b"\nOFFICE\n", b"\nB\\U+00DCRO\n"),
    "lower-case entity": lambda d: _first(d, b"\nLINE\n", b"\nline\n"),
    "lone carriage return": lambda d: _first(d, b"\nOFFICE\n", b"\nOFF\rICE\n"),
    "LINE end before start": lambda d: _first(d, b" 10\n1.0\n 20\n1.0\n 30\n0.0\n 11\n4.0\n 21\n1.0\n 31\n0.0\n",
                                              b" 11\n4.0\n 21\n1.0\n 31\n0.0\n 10\n1.0\n 20\n1.0\n 30\n0.0\n"),
    "y without x": lambda d: _first(d, b"\nLINE\n", b"\nLINE\n 20\n3.0\n"),
    "handle not hexadecimal": lambda d: _first(d, b"\nLINE\n  5\n", b"\nLINE\n  5\nZZ"),
    "integer as a float": lambda d: _first(d, b"\n 62\n", b"\n 62\n1.0\n 62\n"),
    "tags outside a section": lambda d: _first(d, b"ENDSEC\n  0\nSECTION\n",
                                               b"ENDSEC\n999\nx\n  9\n$X\n  0\nSECTION\n"),
    "two ENTITIES sections": lambda d: _first(d, b"  0\nEOF", b"  0\nSECTION\n  2\nENTITIES\n  0\nENDSEC\n  0\nEOF"),
    "APP DATA not closed": lambda d: _first(d, b"\n102\n}\n", b"\n"),
}


@pytest.mark.parametrize("edit", sorted(EDITS))
def test_files_recovery_would_repair_are_left_to_it(tmp_path, edit):
    data = drawing_bytes(tmp_path)
    assert sound_text(data) is not None
    assert sound_text(EDITS[edit](data)) is None


def test_dxf_r12_is_left_to_recovery(tmp_path):
    # source: ezdxf's recover.py removes subclass markers and R2000 sections from R12 files
    assert sound_text(drawing_bytes(tmp_path, "R12")) is None


@pytest.mark.parametrize("edit", sorted(EDITS))
def test_edited_files_read_as_recovery_reads_them(tmp_path, edit, monkeypatch):
    path = tmp_path / "edited.dxf"
    path.write_bytes(EDITS[edit](drawing_bytes(tmp_path)))
    try:
        expected = recovered_contents(path, monkeypatch)
    except Exception as err:   # recovery refuses it: so must the reading path
        with pytest.raises(type(err)):
            contents(path)
        return
    assert contents(path) == expected


def test_recover_and_ordinary_documents_agree_on_a_sound_file(tmp_path):
    data = drawing_bytes(tmp_path)
    ordinary = ezdxf.read(io.StringIO(sound_text(data)))
    recovered, auditor = recover.read(io.BytesIO(data))
    assert not auditor.fixes and not auditor.errors and not ordinary.audit().has_fixes
    def entities(doc):
        return [(e.dxftype(), e.dxf.handle, e.dxf.layer) for e in doc.modelspace()]
    assert entities(ordinary) == entities(recovered)
    assert [layer.dxf.name for layer in ordinary.layers] == [layer.dxf.name for layer in recovered.layers]


def xrecord_drawing(tmp_path, tags):
    """A sound drawing with an XRECORD holding `tags` under the root dictionary."""
    doc = new_drawing()
    walled_room(doc.modelspace(), 0, 0, 10, 8)
    record = doc.objects.add_xrecord(doc.rootdict.dxf.handle)
    record.extend(tags)
    doc.rootdict["CLEARWAY_TEST"] = record
    path = tmp_path / "xrecord.dxf"
    doc.saveas(path)
    return path


# source: ezdxf's lldxf/extendedtags.py: APP DATA is collected in an entity's first, unnamed
# part only; a 102 after a subclass marker is an ordinary tag to both readers. Real drawings
# keep visual-style properties so (tests/data/real/SOURCES.md: the university floor, the
# house plan with elevations)
@pytest.mark.parametrize("tags", [[(102, "MATERIAL"), (1, "concrete")],
                                  [(102, "{NOT_APP_DATA"), (70, 1)],
                                  [(102, "VTR_VISUALSTYLE"), (102, "VTR_GRIDDISPLAY"), (102, "ODD")]])
def test_a_102_in_an_xrecords_data_is_sound_and_reads_as_recovered(tmp_path, tags, monkeypatch):
    path = xrecord_drawing(tmp_path, tags)
    assert sound_text(path.read_bytes()) is not None
    assert contents(path) == recovered_contents(path, monkeypatch)


def test_an_unclosed_app_data_before_the_subclass_is_still_left_to_recovery(tmp_path):
    data = drawing_bytes(tmp_path)
    assert sound_text(EDITS["APP DATA not closed"](data)) is None


def test_a_sound_file_whose_audit_only_removes_an_empty_group_is_read_once(tmp_path,
                                                                            monkeypatch):
    doc = new_drawing()
    walled_room(doc.modelspace(), 0, 0, 10, 8)
    doc.groups.new("*A1")           # an anonymous group whose entities were all erased
    path = tmp_path / "empty-group.dxf"
    doc.saveas(path)
    assert sound_text(path.read_bytes()) is not None
    # source: ezdxf's recovery reader on the same file, with the same repair notice
    expected = recovered_contents(path, monkeypatch)
    assert any("empty group" in notice for notice in expected[-2])

    def refuse(*args, **kwargs):
        raise AssertionError("read a second time by the recovery reader")

    monkeypatch.setattr(document.recover, "read", refuse)
    assert contents(path) == expected


def test_what_the_checks_know_of_ezdxf_is_ezdxfs_own():
    # source: ezdxf's reader, the tables it types group codes and orders sections with; the
    # checks keep their own copies so that a file is checked without importing ezdxf
    from ezdxf.lldxf import const
    from ezdxf.lldxf.types import POINT_CODES, TYPE_TABLE

    from clearway.converter import sound
    assert sound.POINT_CODES == POINT_CODES
    ints = {code for first, last in sound.INT_CODE_RANGES for code in range(first, last + 1)}
    assert ints == {code for code, kind in TYPE_TABLE.items() if kind is int}
    assert sound.MANAGED_SECTIONS == set(const.MANAGED_SECTIONS)
    assert list(sound.TABLE_NAMES_ACAD_ORDER) == list(const.TABLE_NAMES_ACAD_ORDER)


def test_the_file_and_its_text_are_checked_without_importing_ezdxf():
    import subprocess
    import sys
    script = ("import sys\n"
              "from clearway.converter.filetext import load_bytes, ordinary_text\n"
              "from clearway.converter.plain import cut_plain_entities\n"
              f"text = ordinary_text(load_bytes({str(SAMPLES / 'clinic.dxf')!r}))\n"
              "print(cut_plain_entities(text) is not None, 'ezdxf' in sys.modules)\n")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True)
    assert done.stdout.split() == ["True", "False"]
