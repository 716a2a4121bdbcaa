"""A drawing read ahead by another process reads as the reader reads it alone.

The reference is ezdxf: its ordinary reader on the whole file, with nothing taken out
(`cut_plain_entities` made to find nothing), as in test_plain.py.
"""

from __future__ import annotations

import os
import subprocess
import sys
import threading

import pytest

import clearway.converter.ahead as ahead
import clearway.converter.read as read
from clearway.converter.filetext import rough_work
from clearway.converter.read import read_drawing
from tests.conftest import SAMPLES, new_drawing, rectangle, walled_room
from tests.converter.test_document import contents, values_of


def warehouse(path, bays=60):
    """A small hall of `bays` rack bays and one turned and narrowed (plain INSERTs), aisle
    lines and rack outlines (plain LINEs and LWPOLYLINEs), with a few entities written
    otherwise (an INSERT seen from below, circles, a text)."""
    doc = new_drawing()
    block = doc.blocks.new("BAY")
    block.add_lwpolyline([(0, 0), (2.7, 0), (2.7, 1.1), (0, 1.1)], close=True)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 40, 30)
    for k in range(bays):
        x, y = 2 + 2.8 * (k % 12), 3 + 4.5 * (k // 12)
        msp.add_blockref("BAY", (x, y), dxfattribs={"layer": "RACK"})
        msp.add_line((x, y + 1.6), (x + 2.8, y + 1.6), dxfattribs={"layer": "AISLE"})
        if k % 12 == 0:
            msp.add_lwpolyline(rectangle(x - 0.1, y - 0.1, x + 33.7, y + 1.2), close=True,
                               dxfattribs={"layer": "RACK-OUTLINE"})
        if k % 7 == 0:
            msp.add_circle((x + 1, y + 2.5), 0.2, dxfattribs={"layer": "A-COLS"})
    msp.add_blockref("BAY", (36, 25), dxfattribs={"layer": "RACK", "rotation": 30,
                                                  "xscale": 0.5})
    msp.add_blockref("BAY", (36, 20), dxfattribs={"layer": "RACK", "extrusion": (0, 0, -1)})
    msp.add_text("HALL 1", dxfattribs={"layer": "A-TEXT", "insert": (20, 28), "height": 0.5})
    doc.saveas(path)
    return path


@pytest.fixture
def any_work(monkeypatch):
    """Read ahead whatever the work: the drawings here are small."""
    monkeypatch.setattr(ahead, "READ_AHEAD_WORK", 0)


def with_sha(path, **options):
    content = read_drawing(path, chord_tolerance=0.001, **options)
    return content.source, content.sha256


def test_read_ahead_a_drawing_reads_as_ezdxf_reads_it_whole(tmp_path, any_work, monkeypatch):
    path = warehouse(tmp_path / "hall.dxf")
    early = ahead.read_ahead(path)
    assert early is not None and early.plain.kind.count("INSERT") == 61
    given = read_drawing(path, chord_tolerance=0.001, ahead=early)
    with monkeypatch.context() as patch:
        patch.setattr(read, "cut_plain_entities", lambda text: None)
        assert contents(path) == values_of(given)         # source: ezdxf, the whole file
        assert (given.source, given.sha256) == with_sha(path)


def test_what_was_read_ahead_of_another_file_is_not_used(tmp_path, any_work):
    first, second = warehouse(tmp_path / "a.dxf", 30), warehouse(tmp_path / "b.dxf", 45)
    given = read_drawing(second, chord_tolerance=0.001, ahead=ahead.read_ahead(first))
    assert values_of(given) == contents(second)
    assert given.sha256 == with_sha(second)[1]


def test_a_cut_ezdxf_would_repair_sends_the_reader_to_the_file(tmp_path, any_work,
                                                                monkeypatch):
    # an INSERT of a block that is not defined: ezdxf's audit deletes it, so its recovery
    # reads the file; what was read ahead is of no use
    path = warehouse(tmp_path / "hall.dxf")
    text = path.read_text()
    path.write_text(text.replace("\n  2\nBAY\n 10\n", "\n  2\nNOBAY\n 10\n", 1))
    early = ahead.read_ahead(path)
    assert early is not None and "NOBAY" in [values[0] for values in early.plain.values
                                             if isinstance(values[0], str)]
    given = read_drawing(path, chord_tolerance=0.001, ahead=early)
    assert given.repairs and values_of(given) == contents(path)


def test_light_halved_unsound_or_missing_drawings_are_not_read_ahead(tmp_path, monkeypatch):
    path = warehouse(tmp_path / "hall.dxf")
    assert ahead.read_ahead(path) is None                   # far below READ_AHEAD_WORK
    monkeypatch.setattr(ahead, "READ_AHEAD_WORK", 0)
    assert ahead.read_ahead(path) is not None
    with monkeypatch.context() as patch:
        patch.setattr(ahead, "SPLIT_WORK", 10)              # the reader reads it in halves
        assert ahead.read_ahead(path) is None
    older = tmp_path / "older.dxf"         # said to be R12: the recovery reader reads it
    older.write_text(path.read_text().replace("\nAC1024\n", "\nAC1009\n", 1))
    assert older.read_text() != path.read_text() and ahead.read_ahead(older) is None
    assert ahead.read_ahead(tmp_path / "missing.dxf") is None
    assert ahead.read_ahead(tmp_path) is None                # a folder


def test_the_build_process_reads_ahead_without_importing_ezdxf(tmp_path):
    path = warehouse(tmp_path / "hall.dxf")
    script = ("import sys, clearway.converter.ahead as a; a.READ_AHEAD_WORK = 0; "
              f"early = a.read_ahead({str(path)!r}); "
              "print(early is not None, 'ezdxf' in sys.modules)")
    done = subprocess.run([sys.executable, "-c", script], capture_output=True, text=True,
                          check=True)
    assert done.stdout.split() == ["True", "False"]


def test_a_drawing_with_windows_line_ends_is_read_ahead_as_one_with_unix_ones(tmp_path,
                                                                             monkeypatch):
    # common practice: AutoCAD on Windows ends each line of a DXF file in CR LF
    unix = warehouse(tmp_path / "unix.dxf")
    windows = tmp_path / "windows.dxf"
    windows.write_bytes(unix.read_bytes().replace(b"\n", b"\r\n"))
    work = rough_work(unix.read_bytes())
    assert work == rough_work(windows.read_bytes()) > 300
    monkeypatch.setattr(ahead, "READ_AHEAD_WORK", work)
    early = ahead.read_ahead(windows)
    assert early is not None and early.plain.text == ahead.read_ahead(unix).plain.text
    given = read_drawing(windows, chord_tolerance=0.001, ahead=early)
    assert values_of(given) == contents(windows) == contents(unix)


@pytest.mark.skipif(not hasattr(os, "mkfifo"), reason="named pipes are a POSIX thing")
def test_a_drawing_piped_in_is_left_to_the_reader(tmp_path):
    # a pipe can be read once: read ahead, the reader would find it empty, or wait on it
    pipe = tmp_path / "plan.dxf"
    os.mkfifo(pipe)
    drawing = (SAMPLES / "clinic.dxf").read_bytes()
    writer = threading.Thread(target=pipe.write_bytes, args=(drawing,))
    writer.start()
    try:
        assert ahead.read_ahead(pipe) is None               # reading nothing
        done = subprocess.run([sys.executable, "-m", "clearway", "build", str(pipe), "-o",
                               str(tmp_path / "out"), "-q"], capture_output=True, text=True,
                              timeout=60)
    finally:
        if writer.is_alive():                               # nobody read it: unblock
            with open(pipe, "rb") as end:
                end.read()
        writer.join()
    assert done.returncode == 0, done.stderr
    assert (tmp_path / "out" / "roadmap.graphml").exists()
