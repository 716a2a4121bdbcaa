"""Byte- and tag-level fuzzing of DXF input: every input ends, in bounded time, with a result
or a ClearwayError of one line; on the command line with exit code 2, one stderr line and
no files written.

Inputs are mutations of the bundled sample drawings (ASCII and binary DXF) described by a
short recipe, so hypothesis shows and shrinks the recipe, not 30 kB of bytes. The budget is
small in CI; set CLEARWAY_FUZZ_EXAMPLES for a longer run by hand, e.g.

    CLEARWAY_FUZZ_EXAMPLES=2000 pytest tests/fuzz -q

The number of inputs tried per target is printed in the "fuzz inputs tried" summary.
"""

from __future__ import annotations

import subprocess
import sys
import time

import ezdxf
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clearway.errors import ClearwayError
from clearway.converter import list_layers, read_floorplan
from tests.fuzz.mutations import (EXAMPLES, FUZZ, NAMES, TIMEOUT_S, mutate, recipes, time_limit,
                                  unit, where)


def run_in_process(function, path, counts, target):
    """Run `function(path)` under the time limit; return "result" or "refused"."""
    start = time.perf_counter()
    with time_limit(TIMEOUT_S):
        try:
            function(path)
            outcome = "result"
        except ClearwayError as err:
            message = str(err)
            assert message and "\n" not in message and "\r" not in message, repr(message)
            assert message.startswith(path.name), message      # subject first: the file
            outcome = "refused"
    assert time.perf_counter() - start < TIMEOUT_S
    counts[f"{target}: {outcome}"] += 1
    return outcome


@FUZZ
@given(name=st.sampled_from(NAMES), binary=st.booleans(), recipe=recipes)
def test_mutated_drawing_reads_or_is_refused(tmp_path, originals, fuzz_counts, name, binary,
                                             recipe):
    data = originals[f"{name} (binary)" if binary else name]
    path = tmp_path / "mutated.dxf"
    path.write_bytes(mutate(data, recipe))
    run_in_process(read_floorplan, path, fuzz_counts, "read_floorplan, mutated samples")


@FUZZ
@given(name=st.sampled_from(NAMES), binary=st.booleans(), recipe=recipes)
def test_mutated_drawing_lists_or_is_refused(tmp_path, originals, fuzz_counts, name, binary,
                                             recipe):
    data = originals[f"{name} (binary)" if binary else name]
    path = tmp_path / "mutated.dxf"
    path.write_bytes(mutate(data, recipe))
    run_in_process(list_layers, path, fuzz_counts, "list_layers, mutated samples")


@settings(max_examples=max(EXAMPLES // 3, 10), deadline=None,
          suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(name=st.sampled_from(NAMES), cut=unit)
def test_truncated_drawing_is_refused(tmp_path, originals, fuzz_counts, name, cut):
    # analytic: a file cut before its EOF marker has an unterminated section or no EOF
    data = originals[name]
    end = data.rindex(b"EOF")
    path = tmp_path / "cut.dxf"
    path.write_bytes(data[:where(cut, end)])
    assert run_in_process(read_floorplan, path, fuzz_counts, "read_floorplan, truncated") \
        == "refused"


# --- regression inputs found by fuzzing (each crashed before the fix) --------------------

def _find_line(data, old, new):
    assert old in data
    return data.replace(old, new, 1)


@pytest.mark.parametrize("case", ["renamed entity", "huge coordinate", "far line",
                                  "huge MINSERT", "nan in polyline"])
def test_fuzz_regressions(tmp_path, originals, fuzz_counts, case):
    """Inputs that crashed or hung before the fixes of issue 6, each rebuilt by hand."""
    doc = ezdxf.new("R2010", units=6)
    msp = doc.modelspace()
    msp.add_lwpolyline([(0, 0), (10, 0), (10, 8), (0, 8)], close=True,
                       dxfattribs={"layer": "A-WALL"})
    msp.add_lwpolyline([(0.2, 0.2), (9.8, 0.2), (9.8, 7.8), (0.2, 7.8)], close=True,
                       dxfattribs={"layer": "A-WALL"})
    msp.add_circle((5, 4), 0.3, dxfattribs={"layer": "A-COLS"})
    block = doc.blocks.new("DOCK")
    block.add_circle((0, 0), 0.2)
    block.add_attdef("LABEL", (0, 0))
    insert = msp.add_blockref("DOCK", (2, 2), dxfattribs={"layer": "STATION"})
    insert.add_attrib("LABEL", "D1", (2, 2))
    if case == "far line":
        msp.add_line((0, 0), (0, 2.54e7), dxfattribs={"layer": "A-WALL"})  # hung in leak search
    if case == "huge MINSERT":           # 2^31 x 2^31 cells: a MemoryError before
        msp.add_blockref("DOCK", (1, 1), dxfattribs={"layer": "A-EQPM-RACK"}).grid(
            size=(2 ** 31 - 1, 2 ** 31 - 1), spacing=(1, 1))
    if case == "nan in polyline":
        msp.add_lwpolyline([(1, 1), (2, 1), (2, 2)], dxfattribs={"layer": "A-WALL"})
    path = tmp_path / f"{case.replace(' ', '_')}.dxf"
    doc.saveas(path)
    data = path.read_bytes()
    if case == "renamed entity":        # DXFAttributeError 'layer' for entity CISCLE
        data = _find_line(data, b"\nCIRCLE\n", b"\nCISCLE\n")
    elif case == "huge coordinate":     # GEOSException NaN/Inf and OverflowError before
        data = _find_line(data, b"\n 10\n5.0\n", b"\n 10\n1e308\n")
    elif case == "nan in polyline":
        data = _find_line(data, b"\n 10\n2.0\n 20\n1.0", b"\n 10\nnan\n 20\n1.0")
    path.write_bytes(data)
    outcome = run_in_process(read_floorplan, path, fuzz_counts, "regressions")
    assert run_in_process(list_layers, path, fuzz_counts, "regressions") == \
        ("refused" if case in ("huge MINSERT", "nan in polyline") else "result")
    expected = {"renamed entity": "result", "huge coordinate": "refused", "far line": "refused",
                "huge MINSERT": "refused", "nan in polyline": "refused"}
    assert outcome == expected[case]


# --- the command line: exit 2, one line on stderr, nothing written ------------------------

CLI = "from clearway.cli import main; main()"
CLI_RECIPES = [
    [("truncate", 0.5, 0.0, b"")],
    [("count", 0.3, 0.0, b"1e308")],
    [("cut_line", 0.4, 0.0, b"")],
    [("flip", 0.001, 0.2, b"")],
    [("value", 0.0, 0.0, b"")],
    [("swap_codes", 0.2, 0.7, b""), ("repeat", 0.1, 0.9, b"")],
]


@pytest.mark.parametrize("recipe", CLI_RECIPES, ids=lambda recipe: recipe[0][0])
def test_cli_layers_on_mutated_drawing(tmp_path, originals, fuzz_counts, recipe):
    data = mutate(originals["distribution_centre"], recipe)
    drawing = tmp_path / "in" / "mutated.dxf"
    drawing.parent.mkdir()
    drawing.write_bytes(data)
    before = sorted(tmp_path.rglob("*"))
    done = subprocess.run([sys.executable, "-c", CLI, "layers", str(drawing)],
                          capture_output=True, text=True, timeout=60, cwd=tmp_path)
    assert done.returncode in (0, 2), done.stderr        # 3 would be a bug in clearway
    assert "Traceback" not in done.stderr
    if done.returncode == 2:
        assert len(done.stderr.splitlines()) == 1, done.stderr
        assert done.stderr.startswith("Error: "), done.stderr
        assert done.stdout == ""
    else:
        assert done.stderr == "", done.stderr
    assert sorted(tmp_path.rglob("*")) == before               # nothing written
    fuzz_counts[f"clearway layers (subprocess): exit {done.returncode}"] += 1


# --- the ordinary reader's fast path against ezdxf's recovery -----------------------------

@FUZZ
@given(name=st.sampled_from(NAMES), recipe=recipes)
def test_mutated_drawing_reads_as_recovery_reads_it(tmp_path, originals, fuzz_counts, name,
                                                   recipe, monkeypatch):
    """A mutated file that `sound_text` passes to ezdxf's ordinary reader gives what the
    recovery reader gives (the reference: ezdxf's own recovery), repair notices included."""
    import clearway.converter.filetext as filetext
    from clearway.converter.sound import sound_text
    from tests.converter.test_document import contents

    data = mutate(originals[name], recipe)
    if sound_text(data) is None:
        fuzz_counts["ordinary reader, mutated samples: left to recovery"] += 1
        return
    path = tmp_path / "mutated.dxf"
    path.write_bytes(data)

    def outcome():
        try:
            return contents(path)
        except ClearwayError as err:
            return str(err)
    with time_limit(TIMEOUT_S):
        fast = outcome()
        with monkeypatch.context() as patch:
            patch.setattr(filetext, "sound_text", lambda data: None)
            recovered = outcome()
    assert fast == recovered
    fuzz_counts["ordinary reader, mutated samples: compared"] += 1
