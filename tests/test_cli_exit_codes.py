"""Exit codes that tell the truth (issue 12): 2 for input the user can fix, 3 for a bug.

A ValueError raised by a bug in clearway used to be reported as bad input (exit 2), which
hid the bug and blamed the user. Now anything a command did not expect is an internal error:
exit 3, one line saying so and naming a file with the full traceback (or the traceback itself
with --debug), and the previous outputs untouched.
"""

from __future__ import annotations

import re
import tempfile
from pathlib import Path

import pytest
from click.testing import CliRunner

import clearway.exporters
import clearway.roadmap
from clearway.cli import main
from tests.conftest import SAMPLES

DRAWING = SAMPLES / "clinic.dxf"


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args])


def snapshot(folder: Path) -> dict[str, bytes]:
    return {path.name: path.read_bytes() for path in sorted(folder.iterdir())}


@pytest.fixture
def previous_outputs(tmp_path):
    outdir = tmp_path / "out"
    assert run("build", DRAWING, "-o", outdir, "-q").exit_code == 0
    return outdir, snapshot(outdir)


@pytest.fixture
def a_bug(monkeypatch):
    """A ValueError from deep inside the roadmap stage, as a bug would raise it."""
    def build_roadmap(*args, **kwargs):
        raise ValueError("index 3 is out of bounds for the lane table")
    monkeypatch.setattr(clearway.roadmap, "build_roadmap", build_roadmap)


def test_issue_12_a_bug_is_exit_3_with_one_line_and_a_saved_traceback(
        tmp_path, monkeypatch, previous_outputs, a_bug):
    outdir, before = previous_outputs
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path))      # where the traceback goes
    result = run("build", DRAWING, "-o", outdir, "-q", "--robot-radius", "0.3")
    assert result.exit_code == 3
    assert result.stdout == ""
    [line] = result.stderr.splitlines()
    match = re.fullmatch(r"Error: internal error in clearway \S+ \(a bug, not a problem with "
                         r"your input\): ValueError: index 3 is out of bounds for the lane "
                         r"table; full traceback in (\S+) \(please report it\)", line)
    assert match, line
    saved = Path(match.group(1)).read_text(encoding="utf-8")
    assert Path(match.group(1)).parent == tmp_path
    assert "Traceback (most recent call last)" in saved and "in build_roadmap" in saved
    assert "command: clearway" in saved     # the arguments are pytest's own under CliRunner
    assert snapshot(outdir) == before                    # outputs untouched


def test_issue_12_debug_prints_the_traceback_instead(tmp_path, monkeypatch, previous_outputs,
                                                      a_bug):
    outdir, before = previous_outputs
    monkeypatch.setattr(tempfile, "tempdir", str(tmp_path / "nowhere"))   # never written
    result = run("--debug", "build", DRAWING, "-o", outdir, "-q")
    assert result.exit_code == 3
    assert "Traceback (most recent call last)" in result.stderr
    assert result.stderr.splitlines()[-1].endswith("the traceback is above")
    assert snapshot(outdir) == before


@pytest.mark.parametrize("args, message", [
    (lambda d: ["build", d / "absent.dxf", "-o", d / "out"], r"absent\.dxf"),
    (lambda d: ["build", DRAWING, "-o", d / "out", "--robot-radius", "-1"],
     r"'--robot-radius': -1\.0 is not in the range x>0"),
    (lambda d: ["layers", d], r"pytest-"),                    # a folder (tmp_path), not a drawing
    (lambda d: ["route", d / "absent.graphml", "A", "B"], r"absent\.graphml"),
])
def test_input_the_user_can_fix_stays_exit_2_with_one_line(tmp_path, args, message):
    result = run(*args(tmp_path))
    assert result.exit_code == 2, result.output
    [line] = result.stderr.splitlines()
    assert line.startswith("Error: ") and re.search(message, line), line
    assert "internal error" not in line


def test_a_bad_checks_value_in_the_config_file_is_bad_input_not_a_bug(tmp_path):
    config = tmp_path / "clearway.toml"
    config.write_text("[checks]\npersonnel_clearance = -0.5\n", encoding="utf-8")
    result = run("build", DRAWING, "-o", tmp_path / "out", "-q", "--config", config)
    assert result.exit_code == 2
    assert result.stderr.splitlines() == [
        "Error: [checks] personnel_clearance: -0.5 is not in the range x>=0.0."]
    assert not (tmp_path / "out").exists()
