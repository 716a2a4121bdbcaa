"""Start-up: a command imports only what it runs (issue 12).

`clearway --help` and `--version` used to import numpy, scipy, shapely, networkx, ezdxf and
every exporter before parsing a single option (about 0.9 s of imports). Time is measured by
benchmarks/bench_startup.py; here each command runs in a fresh interpreter and the test checks
which modules it loaded, which does not depend on how busy the machine is.
"""

from __future__ import annotations

import json
import subprocess
import sys

import pytest

from tests.conftest import SAMPLES

#: Libraries a command that computes nothing has no use for.
HEAVY = ("numpy", "scipy", "shapely", "networkx", "ezdxf", "lxml")
#: The one roadmap module the command line loads: the choices and defaults it offers.
CONSTANTS = {"clearway.roadmap.choices"}
PROBE = """
import json, sys
from clearway.cli import main
try:
    main(sys.argv[1:], prog_name="clearway")
except SystemExit as exit:
    code = exit.code
print(json.dumps({"code": code, "modules": sorted(sys.modules)}), file=sys.stderr)
"""


def loaded(*arguments) -> tuple[int, set[str]]:
    done = subprocess.run([sys.executable, "-c", PROBE, *arguments], capture_output=True,
                          text=True, timeout=120)
    report = json.loads(done.stderr.strip().splitlines()[-1])
    return report["code"], set(report["modules"])


def top_level(modules: set[str]) -> set[str]:
    return {name.split(".")[0] for name in modules}


@pytest.mark.parametrize("arguments", [["--help"], ["--version"], ["build", "--help"],
                                       ["route", "--help"], ["layers", "--help"]],
                         ids=" ".join)
def test_help_and_version_load_no_numerical_library(arguments):
    code, modules = loaded(*arguments)
    assert code in (0, None)
    assert top_level(modules) & set(HEAVY) == set()
    stages = {name for name in modules - CONSTANTS if name.startswith(
        ("clearway.roadmap.", "clearway.converter.convert", "clearway.exporters."))}
    assert stages == set(), sorted(stages)


def test_layers_reads_the_drawing_without_the_roadmap_stage():
    code, modules = loaded("layers", str(SAMPLES / "clinic.dxf"))
    assert code in (0, None)
    assert "clearway.converter.convert" in modules and "ezdxf" in modules
    roadmap = {name for name in modules - CONSTANTS if name.startswith("clearway.roadmap.")}
    assert roadmap == set(), sorted(roadmap)
    assert "networkx" not in top_level(modules)


def test_build_forks_its_reader_before_it_imports_the_graph_library():
    # the reader (a forked child, clearway.side_by_side) waits for everything imported before
    # the fork; it has no use for networkx or scipy, which this process imports while it reads
    probe = ("import json, sys\n"
             "import clearway.side_by_side as s\n"
             "def stop(self):\n"
             "    print(json.dumps(sorted(sys.modules)), file=sys.stderr)\n"
             "    raise SystemExit(0)\n"
             "s.Aside.__enter__ = stop\n"
             "from clearway.cli import main\n"
             "main(sys.argv[1:], prog_name='clearway')\n")
    done = subprocess.run([sys.executable, "-c", probe, "build", str(SAMPLES / "clinic.dxf"),
                           "-o", "unused", "-q"], capture_output=True, text=True, timeout=120)
    before_fork = top_level(set(json.loads(done.stderr.strip().splitlines()[-1])))
    assert {"numpy", "shapely"} <= before_fork      # shared with the reader: imported once
    assert before_fork & {"networkx", "scipy", "ezdxf", "lxml"} == set()
