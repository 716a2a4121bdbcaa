"""The `clearway` process: it ends without Python's finalization once its command has
finished (clearway.cli.script), and nothing it printed or its exit code is lost."""

from __future__ import annotations

import json
import os
import subprocess
import sys

from click.testing import CliRunner

from clearway.cli import main
from tests.conftest import SAMPLES

DRAWING = SAMPLES / "clinic.dxf"


def process(*arguments, **options):
    return subprocess.run([sys.executable, "-m", "clearway", *map(str, arguments)],
                          capture_output=True, text=True, timeout=300, **options)


def test_what_was_written_but_not_flushed_comes_through(tmp_path):
    # through a pipe standard output is block-buffered: the process ends without
    # finalization, so the buffer is flushed first (click.echo flushes its own lines)
    probe = ("import sys; sys.stdout.write('written before'); "
             f"sys.argv = ['clearway', 'build', {str(DRAWING)!r}, '-o', "
             f"{str(tmp_path / 'out')!r}, '-q']; "
             "from clearway.cli import script; script()")
    environment = {name: value for name, value in os.environ.items()
                   if name != "PYTHONUNBUFFERED"}
    done = subprocess.run([sys.executable, "-c", probe], capture_output=True, text=True,
                          timeout=300, env=environment)
    assert (done.returncode, done.stdout, done.stderr) == (0, "written before", "")


def test_what_the_command_prints_comes_through_a_pipe_whole():
    done = process("layers", DRAWING, "--json")
    in_process = CliRunner().invoke(main, ["layers", str(DRAWING), "--json"])
    assert done.returncode == 0 and in_process.exit_code == 0
    assert json.loads(done.stdout) == json.loads(in_process.output)
    assert done.stdout == in_process.output


def test_a_build_writes_its_outputs_and_says_so_before_the_process_ends(tmp_path):
    done = process("build", DRAWING, "-o", tmp_path / "out")
    assert done.returncode == 0
    assert done.stderr.rstrip().splitlines()[-1].startswith("planning aid: verify on site")
    assert sorted(path.name for path in (tmp_path / "out").iterdir()) == [
        "report.json", "roadmap.geojson", "roadmap.graphml", "roadmap.html", "roadmap.svg"]
    json.loads((tmp_path / "out" / "report.json").read_text())


def test_exit_codes_come_through(tmp_path):
    missing = process("build", tmp_path / "missing.dxf", "-o", tmp_path / "out")
    assert missing.returncode == 2
    assert missing.stderr.strip().splitlines() == [
        f"Error: {tmp_path / 'missing.dxf'}: file not found"]
    assert process("build").returncode == 2                    # a usage error (click)
    assert process("--version").returncode == 0
