"""Nothing lost: `clearway build` interrupted at random moments, and two builds at once.

The same at every file-system step, deterministically: tests/test_cli_interrupt_steps.py.
Each build runs as its own process (``python -c 'from clearway.cli import script;
script()'``, what the `clearway` script runs), as from a shell or a scheduler. After an
interrupt OUTDIR holds the previous set byte for byte or the complete new one, never a mix
and never a temporary file; two builds into one folder leave the files of one of them. Set
CLEARWAY_SIGNAL_RUNS for more runs by hand, e.g.

    CLEARWAY_SIGNAL_RUNS=40 pytest tests/test_cli_interrupts.py -q -s
"""

from __future__ import annotations

import hashlib
import json
import os
import random
import signal
import subprocess
import sys
import time
from collections import Counter

import pytest
from lxml import etree

from benchmarks.synthetic import write_warehouse

from clearway.cli_build import BUILD_FILES

CLI = "from clearway.cli import script; script()"
FILES = set(BUILD_FILES)
ENV = dict(os.environ)
#: Interrupted runs per signal and way of timing it; rounds of two concurrent builds.
RUNS = int(os.environ.get("CLEARWAY_SIGNAL_RUNS", "3"))
ROUNDS = max(RUNS, 3)
SEED = int(os.environ.get("CLEARWAY_SIGNAL_SEED", "6"))
#: Exit codes of an interrupted run: SIGINT is click's "Aborted." (1), or the signal itself
#: (-2) while Python is still starting; SIGTERM is 128 + 15 from build's handler, or -15
#: before it is installed (common practice: 128 + signal number).
INTERRUPTED = {signal.SIGINT: {1, -signal.SIGINT}, signal.SIGTERM: {143, -signal.SIGTERM}}


def start_build(drawing, outdir, *options, cwd):
    return subprocess.Popen([sys.executable, "-c", CLI, "build", str(drawing), "-o", str(outdir),
                             *options], stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                            cwd=cwd, env=ENV, text=True)


def snapshot(folder) -> dict[str, bytes]:
    """Every file in `folder`, hidden ones included."""
    return {path.name: path.read_bytes() for path in sorted(folder.iterdir())}


def restore(folder, files: dict[str, bytes]) -> None:
    for path in folder.iterdir():
        path.unlink()
    for name, content in files.items():
        (folder / name).write_bytes(content)


@pytest.fixture(scope="module")
def drawings(tmp_path_factory):
    """Two warehouses of ~1,000 bays (about 0.3 s of work after 0.8 s of start-up)."""
    folder = tmp_path_factory.mktemp("warehouses")
    return (write_warehouse(folder / "hall_a.dxf", bays=1000),
            write_warehouse(folder / "hall_b.dxf", bays=960))


@pytest.fixture(scope="module")
def sets(tmp_path_factory, drawings):
    """Each build's set when it runs alone, and how long hall_a with radius 0.3 m takes."""
    folder = tmp_path_factory.mktemp("alone")
    found = {}
    for name, drawing, radius in (("a old", drawings[0], "0.35"), ("a new", drawings[0], "0.3"),
                                  ("b", drawings[1], "0.3")):
        start = time.perf_counter()
        done = subprocess.run([sys.executable, "-c", CLI, "build", str(drawing), "-o",
                               str(folder / name), "-q", "--robot-radius", radius],
                              capture_output=True, text=True, env=ENV, timeout=120)
        found[f"{name} seconds"] = time.perf_counter() - start
        assert done.returncode == 0, done.stderr
        found[name] = snapshot(folder / name)
        assert set(found[name]) == FILES
    assert found["a old"] != found["a new"]
    return found


@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM], ids=["SIGINT", "SIGTERM"])
def test_interrupted_build_leaves_old_set_or_complete_new_set(tmp_path, drawings, sets, signum):
    old, new, duration = sets["a old"], sets["a new"], sets["a new seconds"]
    outdir = tmp_path / "out"
    outdir.mkdir()
    rng = random.Random(SEED * 100 + signum)
    outcomes = Counter()
    # "anywhere": stratified random delays over the whole run, start-up included;
    # "writing": a few ms after the build says it is rendering, where the set is written
    plan = [("anywhere", duration * 1.1 * (index + rng.random()) / RUNS) for index in range(RUNS)]
    plan += [("writing", rng.uniform(0.0, 0.06)) for _ in range(RUNS)]
    for when, delay in plan:
        restore(outdir, old)
        process = start_build(drawings[0], outdir, "--robot-radius", "0.3", cwd=tmp_path)
        if when == "writing":
            for line in process.stderr:
                if line.startswith("rendering "):
                    break
        time.sleep(delay)
        process.send_signal(signum)
        _, stderr = process.communicate(timeout=60)
        after = snapshot(outdir)
        assert not [name for name in after if name.startswith(".")], sorted(after)
        assert after in (old, new), f"{when} {delay:.3f} s: a mixed set {sorted(after)}"
        if after == old:
            assert process.returncode in INTERRUPTED[signum], (process.returncode, stderr)
            outcomes[f"{when}: old set kept, exit {process.returncode}"] += 1
        else:
            assert process.returncode in INTERRUPTED[signum] | {0}, (process.returncode, stderr)
            outcomes[f"{when}: new set, exit {process.returncode}"] += 1
        if when == "writing":           # past start-up, build's own handling answers
            assert "Traceback" not in stderr, stderr
    print(f"\n{signal.Signals(signum).name}: {sum(outcomes.values())} runs "
          f"(run {duration:.2f} s): {dict(sorted(outcomes.items()))}")
    assert sum(outcomes.values()) == 2 * RUNS


def identity(folder) -> dict[str, tuple]:
    """(source, sha256, robot radius) as each of the four files states it."""
    root = etree.fromstring((folder / "roadmap.graphml").read_bytes())
    ns = {"g": "http://graphml.graphdrawing.org/xmlns"}

    def graph_value(name):
        key = root.xpath(f"g:key[@for='graph' and @attr.name='{name}']/@id", namespaces=ns)[0]
        return root.xpath(f"g:graph/g:data[@key='{key}']/text()", namespaces=ns)[0]
    top = json.loads((folder / "roadmap.geojson").read_bytes())
    report = json.loads((folder / "report.json").read_bytes())
    svg = etree.fromstring((folder / "roadmap.svg").read_bytes())
    title = svg.find("{http://www.w3.org/2000/svg}title").text
    return {"roadmap.graphml": (graph_value("source"), graph_value("sha256"),
                                float(graph_value("robot_radius"))),
            "roadmap.geojson": (top["source"], top["sha256"], top["robot"]["radius"]),
            "report.json": (report["source"], report["sha256"], report["robot"]["radius"]),
            "roadmap.svg": (title.rsplit(" ", 1)[-1],)}


def test_two_builds_into_one_folder_leave_one_whole_set(tmp_path, drawings, sets):
    options = (("--robot-radius", "0.35"), ("--robot-radius", "0.3"))
    alone = [sets["a old"], sets["b"]]
    for drawing, files in zip(drawings, alone):
        restore_to = tmp_path / drawing.stem
        restore_to.mkdir()
        restore(restore_to, files)
        # source: FIPS 180-4 SHA-256 of the drawing file, computed by hashlib
        assert identity(restore_to)["report.json"][1] == \
            hashlib.sha256(drawing.read_bytes()).hexdigest()
    rng = random.Random(SEED)
    landed = Counter()
    for round_number in range(ROUNDS):
        outdir = tmp_path / f"shared_{round_number}"
        if round_number % 2:                                    # an earlier set is there
            outdir.mkdir()
            restore(outdir, alone[1])
        order = [0, 1] if rng.random() < 0.5 else [1, 0]
        processes = []
        for index in order:
            processes.append(start_build(drawings[index], outdir, "-q", *options[index],
                                         cwd=tmp_path))
            time.sleep(rng.uniform(0.0, 0.02))
        for process in processes:
            _, stderr = process.communicate(timeout=120)
            assert process.returncode == 0, stderr
        after = snapshot(outdir)
        assert set(after) == FILES, sorted(after)              # no temporary files either
        assert after in alone, "a mixed set"
        stated = identity(outdir)
        source, sha256, radius = stated["report.json"]
        assert stated["roadmap.graphml"] == stated["roadmap.geojson"] == (source, sha256, radius)
        assert stated["roadmap.svg"] == (source,)
        landed[source] += 1
    print(f"\nconcurrent rounds: {sum(landed.values())}, last set to land: {dict(landed)}")


def test_an_interrupt_turned_import_error_is_an_interrupt(monkeypatch):
    # a SIGINT that lands while a compiled module is being imported surfaces as an
    # ImportError ("numpy._core.multiarray failed to import") with no trace of the interrupt;
    # once Ctrl-C has come it is reported as interrupted (exit 1), not as an internal error
    import click
    from click.testing import CliRunner

    from clearway import cli

    @click.command("interrupted-import")
    def interrupted_import():
        cli._INTERRUPTED.append(signal.SIGINT)
        raise ImportError("numpy._core.multiarray failed to import")

    monkeypatch.setattr(cli, "_INTERRUPTED", [])
    cli.main.add_command(interrupted_import)
    try:
        result = CliRunner().invoke(cli.main, ["interrupted-import"])
    finally:
        cli.main.commands.pop("interrupted-import")
    assert result.exit_code == 1, result.output
    assert "internal error" not in result.output and "Aborted." in result.output
