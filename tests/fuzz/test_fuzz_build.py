"""Fuzzing `clearway build`: mutated drawings through the whole pipeline and the command line.

Every input ends, in bounded time, with exit 0 and the whole set of files, or exit 2 with
exactly one line on stderr and no OUTDIR at all; never exit 3 (an internal error: a bug that
the input found), never a traceback, never a hang, never a partial set.
In process (click's CliRunner, under a SIGALRM time limit) the budget is a third of
CLEARWAY_FUZZ_EXAMPLES; as a separate process (with Python's start-up, ~1 s each) a fifteenth.
"""

from __future__ import annotations

import os
import subprocess
import sys

from click.testing import CliRunner
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from clearway.cli import main
from clearway.cli_build import BUILD_FILES
from tests.fuzz.mutations import EXAMPLES, NAMES, TIMEOUT_S, recipes, mutate, time_limit

FILES = set(BUILD_FILES)
CLI = "from clearway.cli import main; main()"
DERANDOMIZE = not os.environ.get("CLEARWAY_FUZZ_EXAMPLES")
IN_PROCESS = settings(max_examples=max(EXAMPLES // 3, 20), deadline=None, derandomize=DERANDOMIZE,
                      suppress_health_check=[HealthCheck.too_slow,
                                             HealthCheck.function_scoped_fixture])
SUBPROCESS = settings(max_examples=max(EXAMPLES // 15, 6), deadline=None, derandomize=DERANDOMIZE,
                      suppress_health_check=[HealthCheck.too_slow,
                                             HealthCheck.function_scoped_fixture])
#: Seconds one build may take as a separate process: TIMEOUT_S of work plus start-up.
PROCESS_TIMEOUT_S = TIMEOUT_S + 20


def write_input(folder, originals, name, binary, recipe):
    """Write the mutated drawing into the fresh `folder`; return (drawing, outdir)."""
    drawing = folder / "mutated.dxf"
    drawing.write_bytes(mutate(originals[f"{name} (binary)" if binary else name], recipe))
    return drawing, folder / "out"


def check_outcome(exit_code, stdout, stderr, outdir) -> str:
    """Assert the contract of one build; return "built" or "refused"."""
    assert exit_code != 3, f"internal error, a bug found by this input: {stderr}"
    assert "Traceback" not in stderr, stderr
    assert stdout == ""
    if exit_code == 0:
        assert stderr == ""                                           # --quiet
        assert {path.name for path in outdir.iterdir()} == FILES     # no temporary files
        return "built"
    assert exit_code == 2, (exit_code, stderr)
    lines = stderr.splitlines()
    assert len(lines) == 1 and lines[0].startswith("Error: "), stderr
    assert "mutated.dxf" in lines[0], lines[0]                       # the subject is named
    assert not outdir.exists()                                       # nothing written
    return "refused"


@IN_PROCESS
@given(name=st.sampled_from(NAMES), binary=st.booleans(), recipe=recipes)
def test_mutated_drawing_builds_or_is_refused(tmp_path_factory, originals, fuzz_counts, name,
                                              binary, recipe):
    drawing, outdir = write_input(tmp_path_factory.mktemp("build"), originals, name, binary,
                                  recipe)
    with time_limit(TIMEOUT_S):
        # --debug: an internal error (exit 3) shows its traceback in the failure message
        result = CliRunner().invoke(main, ["--debug", "build", str(drawing), "-o", str(outdir),
                                           "-q"])
    if result.exception is not None and not isinstance(result.exception, SystemExit):
        raise result.exception                        # shows the traceback of the crash
    outcome = check_outcome(result.exit_code, result.stdout, result.stderr, outdir)
    fuzz_counts[f"clearway build (in process): {outcome}"] += 1


@SUBPROCESS
@given(name=st.sampled_from(NAMES), binary=st.booleans(), recipe=recipes)
def test_mutated_drawing_through_the_command(tmp_path_factory, originals, fuzz_counts, name,
                                             binary, recipe):
    drawing, outdir = write_input(tmp_path_factory.mktemp("cli"), originals, name, binary,
                                  recipe)
    done = subprocess.run([sys.executable, "-c", CLI, "build", str(drawing), "-o", str(outdir),
                           "-q"], capture_output=True, text=True, timeout=PROCESS_TIMEOUT_S,
                          cwd=drawing.parent, env=dict(os.environ))
    outcome = check_outcome(done.returncode, done.stdout, done.stderr, outdir)
    fuzz_counts[f"clearway build (subprocess): {outcome}"] += 1
