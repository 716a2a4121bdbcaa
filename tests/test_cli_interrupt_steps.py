"""Nothing lost, step by step: `clearway build` interrupted at every file-system step it takes.

Issue 12: a signal handed to a BLAS worker thread, or an OSError, between two renames of the
output set left some files new and some old. Here `tests/interruption_seam.py` injects the
interruption just before each step in OUTDIR (creating a temporary file, backing up an old
output, renaming the commit record or an output, removing the record or a backup), for
SIGINT, SIGTERM, an OSError and SIGKILL, while a thread keeps BLAS busy. Every run must end
with the previous set or the new one, byte for byte, and no other file; after SIGKILL the
next build (or a command reading the folder) completes or discards the set first.
The random-timing test is tests/test_cli_interrupts.py.
"""

from __future__ import annotations

import hashlib
import json
import signal
import subprocess
import sys
from pathlib import Path

import pytest
from click.testing import CliRunner

from clearway.cli import main
from clearway.cli_build import BUILD_FILES
from tests.conftest import new_drawing, rectangle, save, walled_room
from tests.test_cli_interrupts import restore, snapshot

SEAM = Path(__file__).with_name("interruption_seam.py")
EVERY_STEP = "tempfile.mkstemp,os.link,os.rename,os.remove"
COMMIT_STEPS = "os.rename,os.remove"
RADIUS = {"old": "0.35", "new": "0.3"}
#: Exit codes of an interrupted build: click's "Aborted." (1) for SIGINT, 128 + 15 for
#: SIGTERM (common practice: 128 + signal number); "late" when the handler ran only after
#: the build returned (CPython may run a handler late when other threads run).
INTERRUPTED = {"SIGINT": {1, "late KeyboardInterrupt"}, "SIGTERM": {143, "late 143"}}


def digest(files: dict[str, bytes]) -> dict[str, str]:
    # source: FIPS 180-4 SHA-256, computed by hashlib
    return {name: hashlib.sha256(content).hexdigest() for name, content in sorted(files.items())}


@pytest.fixture(scope="module")
def case(tmp_path_factory):
    """A small room with a rack and its output sets for two robot radii, built in process."""
    folder = tmp_path_factory.mktemp("steps")
    doc = new_drawing(6)
    msp = doc.modelspace()
    walled_room(msp, 0, 0, 12, 8)
    msp.add_lwpolyline(rectangle(4, 3, 8, 5), close=True, dxfattribs={"layer": "A-RACK"})
    drawing = save(doc, folder)
    sets = {}
    for name, radius in RADIUS.items():
        result = CliRunner().invoke(main, ["build", str(drawing), "-o", str(folder / name), "-q",
                                           "--robot-radius", radius])
        assert result.exit_code == 0, result.output
        sets[name] = snapshot(folder / name)
        assert list(sets[name]) == sorted(BUILD_FILES)
    # every file differs between the two sets, so a mixed set cannot pass for either
    assert all(sets["old"][name] != sets["new"][name] for name in BUILD_FILES)
    return drawing, folder, sets


def run_seam(kind, start, old_folder, events, drawing, outdir, radius, cwd):
    return subprocess.run(
        [sys.executable, str(SEAM), kind, str(start), str(old_folder), events, "--", "build",
         str(drawing), "-o", str(outdir), "-q", "--robot-radius", radius],
        capture_output=True, text=True, cwd=cwd, timeout=600)


@pytest.mark.parametrize("kind", ["SIGINT", "SIGTERM", "oserror"])
def test_an_interruption_at_any_step_leaves_the_old_or_the_new_set(tmp_path, case, kind):
    drawing, folder, sets = case
    old, new = digest(sets["old"]), digest(sets["new"])
    outdir = tmp_path / "out"
    outdir.mkdir()
    done = run_seam(kind, 0, folder / "old", EVERY_STEP, drawing, outdir, RADIUS["new"],
                    tmp_path)
    runs = [json.loads(line) for line in done.stdout.splitlines()]
    assert done.returncode == 0, done.stderr
    assert "Traceback" not in done.stderr, done.stderr
    # one step per file: its temporary, its backup, its rename, its backup's removal; and
    # the commit record's temporary, rename and removal
    assert len(runs) - 1 == 4 * len(BUILD_FILES) + 3, [run["fired"] for run in runs]
    assert runs[-1]["fired"] is None and runs[-1]["code"] == 0 and runs[-1]["files"] == new
    outcomes = []
    for run in runs[:-1]:
        where = f"{kind} before step {run['k']} ({run['fired']})"
        assert run["files"] in (old, new), f"{where}: a mixed set or a stray file"
        if kind == "oserror":
            # a failed backup link falls back to a copy, and once the record is removed the
            # new set is complete (a backup that will not go is tried again); any other
            # failure puts the old set back
            done_anyway = run["fired"].startswith("os.link") or (
                run["fired"].startswith("os.remove") and run["fired"].endswith(".old.part"))
            expected = 0 if done_anyway else 2
            assert run["code"] == expected, where
            assert (run["files"] == old) == (run["code"] == 2), where
        else:
            assert run["code"] in INTERRUPTED[kind], where
        outcomes.append("new" if run["files"] == new else "old")
    # staging (temporaries and backups) comes before the commit point, the rest after it
    staging = 2 * len(BUILD_FILES)
    if kind != "oserror":
        assert outcomes == ["old"] * staging + ["new"] * (len(outcomes) - staging), outcomes
    print(f"\n{kind}: {len(outcomes)} steps: {outcomes}")


def test_a_killed_build_is_completed_or_discarded_by_the_next_build(tmp_path, case):
    """SIGKILL before each rename and removal; each next build, itself killed one step
    later, first finds the interrupted set completed (record written) or the old one kept."""
    drawing, folder, sets = case
    outdir = tmp_path / "out"
    outdir.mkdir()
    restore(outdir, sets["old"])
    current, k = "old", 0
    while True:
        target = "new" if current == "old" else "old"
        done = run_seam("SIGKILL", k, folder / "old", COMMIT_STEPS, drawing, outdir,
                        RADIUS[target], tmp_path)
        report = json.loads(done.stdout.splitlines()[0])
        assert report["found"] == digest(sets[current]), f"killed before step {k - 1}"
        if report["fired"] is None:
            assert done.returncode == 0, done.stderr
            assert snapshot(outdir) == sets[target]
            break
        assert done.returncode == -signal.SIGKILL, done.stderr
        if k > 0:        # step 0 is the commit record's rename: the set was not committed yet
            current = target
        k += 1
    # the record's rename, each output's rename, the record's and each backup's removal
    assert k == 2 * len(BUILD_FILES) + 2


def test_a_command_reading_the_folder_completes_a_killed_build(tmp_path, case):
    drawing, folder, sets = case
    outdir = tmp_path / "out"
    outdir.mkdir()
    restore(outdir, sets["old"])
    done = run_seam("SIGKILL", 2, folder / "old", COMMIT_STEPS, drawing, outdir,
                    RADIUS["new"], tmp_path)
    assert done.returncode == -signal.SIGKILL, done.stderr
    left = snapshot(outdir)
    assert left != sets["old"] and left != sets["new"]          # half renamed, record there
    result = CliRunner().invoke(main, ["route", str(outdir / "roadmap.graphml"), "--matrix"])
    assert result.exit_code == 0, result.output
    assert snapshot(outdir) == sets["new"]
