"""Shared fixtures: DXF drawings built in code (ezdxf), small enough to read at a glance."""

from __future__ import annotations

import json
import os
import signal
from pathlib import Path

import ezdxf
import pytest

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"

#: --doctest-modules (pyproject.toml) would import every conftest.py a second time as a plain
#: module named `conftest`, and several share that name; pytest loads them as conftests anyway.
collect_ignore_glob = ["*conftest.py"]

#: Real floor plans drawn by others (tests/data/real/SOURCES.md) cannot be committed; they are
#: read from the folder named by CLEARWAY_REAL_DRAWINGS, else ``../shared/real_drawings``.
REAL_DRAWINGS = Path(os.environ["CLEARWAY_REAL_DRAWINGS"]) if os.environ.get("CLEARWAY_REAL_DRAWINGS") \
    else Path(__file__).resolve().parents[2] / "shared" / "real_drawings"
REAL_PROBES = json.loads((Path(__file__).resolve().parent / "data" / "real" / "probes.json")
                         .read_text(encoding="utf-8"))
#: The real drawings at hand; with none, their tests are not collected (nothing to skip).
REAL_AT_HAND = sorted(name for name in REAL_PROBES if (REAL_DRAWINGS / name).is_file())
if not REAL_AT_HAND:
    collect_ignore_glob.append("converter/test_real_drawings.py")


def new_drawing(units=6):
    """Return a new R2010 drawing with $INSUNITS = `units` (6 = metres)."""
    return ezdxf.new("R2010", units=units)


def rectangle(x0, y0, x1, y1):
    return [(x0, y0), (x1, y0), (x1, y1), (x0, y1)]


def walled_room(msp, x0, y0, x1, y1, *, thickness=0.2, layer="A-WALL"):
    """Draw a room's wall as two nested closed polylines `thickness` apart (outer face at x0..x1)."""
    msp.add_lwpolyline(rectangle(x0, y0, x1, y1), close=True, dxfattribs={"layer": layer})
    msp.add_lwpolyline(rectangle(x0 + thickness, y0 + thickness, x1 - thickness, y1 - thickness),
                       close=True, dxfattribs={"layer": layer})


def wall_with_gap(msp, x0, y0, x1, y1, *, thickness=0.2, gap=(4.0, 5.0), layer="A-WALL"):
    """Draw a double-line rectangular wall whose south side is open between gap[0] and gap[1] (x).

    Both wall pieces either side of the opening are closed with jamb lines, as drawn for a
    doorway; the opening itself is not closed by any wall line.
    """
    t = thickness
    outer = [(gap[0], y0), (x0, y0), (x0, y1), (x1, y1), (x1, y0), (gap[1], y0)]
    inner = [(gap[0], y0 + t), (x0 + t, y0 + t), (x0 + t, y1 - t), (x1 - t, y1 - t),
             (x1 - t, y0 + t), (gap[1], y0 + t)]
    msp.add_lwpolyline(outer, dxfattribs={"layer": layer})
    msp.add_lwpolyline(inner, dxfattribs={"layer": layer})
    for x in gap:
        msp.add_line((x, y0), (x, y0 + t), dxfattribs={"layer": layer})


def save(doc, folder, name="plan.dxf"):
    """Save `doc` into `folder`; return the path."""
    path = Path(folder) / name
    doc.saveas(path)
    return path


@pytest.fixture
def room_drawing(tmp_path):
    """A 10 m x 8 m room, walls 0.2 m, in metres; returns (doc, msp, save())."""
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 10, 8)

    def write(name="plan.dxf"):
        return save(doc, tmp_path, name)
    return doc, msp, write


@pytest.fixture
def samples():
    """Folder of the bundled sample drawings."""
    return SAMPLES


def pytest_sessionstart(session):
    """Give SIGINT its default handler when the run inherited it ignored.

    A shell without job control starts background commands with SIGINT ignored, and
    children inherit that: the interrupt tests' builds would then never see the SIGINT they
    are sent (Python keeps an inherited SIG_IGN), and each injected step would wait out
    its timeout."""
    if signal.getsignal(signal.SIGINT) is signal.SIG_IGN:
        signal.signal(signal.SIGINT, signal.default_int_handler)

