"""Issue 15: when --units contradicts the drawing's header (or its content) and a limit or
an empty floor follows, the one-line error says so first, with what the drawing measures in
both units, and names the right --units; a build that succeeds carries the same warning."""

from __future__ import annotations

import json
from pathlib import Path

import pytest
from click.testing import CliRunner

from clearway.cli import main

SAMPLES = Path(__file__).resolve().parent.parent / "sample_drawings"


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args])


# source: sample_drawings/README.md: the distribution centre is 60 m x 40 m in millimetres
# with 0.1 m partitions, 0.3 m exterior walls and 2.7 m x 1.1 m rack bays, the clinic
# 60 ft x 40 ft in inches with 5 in partitions and 8 in exterior walls; exact by definition: 1 ft = 0.3048 m, 1 in =
# 0.0254 m, so 60 m read as ft is 60000 x 0.3048 = 18288 m and 60 ft read as mm is 0.72 m
@pytest.mark.parametrize(("drawing", "units", "start", "then"), [
    ("distribution_centre", "m", "read in m as --units says: rack bays 1100 m-1100 m deep, "
     "walls 100 m-300 m thick, the plan 60000 m across; in mm, as the header says: rack bays "
     "1.10 m-1.10 m deep, walls 0.10 m-0.30 m thick, the plan 60.00 m across; pass --units mm "
     "if that is right; as read: ", "over the limit max_extent"),
    ("distribution_centre", "ft", "read in ft as --units says: rack bays 335 m-335 m deep, "
     "walls 30.48 m-91.44 m thick, "
     "the plan 18288 m across; in mm, as the header says", "max_boundary_length"),
    ("clinic", "mm", "read in mm as --units says: walls 5 mm-8 mm thick, the plan 0.72 m "
     "across; in in, as the header says: walls 0.13 m-0.20 m thick, the plan 18.29 m across; "
     "pass --units in if that is right; as read: ", "no enclosed floor"),
])
def test_a_unit_mistake_is_named_before_the_limit_it_causes(tmp_path, drawing, units, start,
                                                            then):
    outdir = tmp_path / "out"
    result = run("build", SAMPLES / f"{drawing}.dxf", "-o", outdir, "--units", units)
    assert result.exit_code == 2
    (line,) = result.stderr.splitlines()
    assert line.startswith(f"Error: {drawing}.dxf: {start}"), line
    assert then in line.split("; as read: ", 1)[1]
    assert not outdir.exists() or not any(outdir.iterdir())


def test_a_build_in_a_doubtful_unit_warns(tmp_path):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "--units", "m", "--no-html")
    assert result.exit_code == 0, result.output
    # the summary says it too, not only report.json
    assert "units: read in m as --units says: walls 5.00 m-8.00 m thick" in result.stderr
    report = json.loads((tmp_path / "report.json").read_text(encoding="utf-8"))
    # analytic: 60 ft = 720 in read as metres is 720 m
    assert ("clinic.dxf: read in m as --units says: walls 5.00 m-8.00 m thick, the plan 720 m "
            "across; in in, as the header says") in " ".join(report["warnings"])


@pytest.mark.parametrize(("drawing", "units"), [
    ("clinic", "in"),                   # what the header says
    ("office_ground_floor", "mm"),      # what the content says, against the header's in
])
def test_units_that_agree_with_the_drawing_raise_no_doubt(tmp_path, drawing, units):
    result = run("layers", SAMPLES / f"{drawing}.dxf", "--units", units, "--json")
    assert result.exit_code == 0, result.output
    assert not [w for w in json.loads(result.stdout)["warnings"] if "--units says" in w]


def test_the_office_read_in_its_header_unit_is_doubted():
    # source: sample_drawings/README.md: the office is drawn in millimetres although its
    # header says inches, with 100 mm partitions and 300 mm exterior walls
    result = run("layers", SAMPLES / "office_ground_floor.dxf", "--units", "in", "--json")
    (doubt,) = [w for w in json.loads(result.stdout)["warnings"] if "--units says" in w]
    assert "pass --units mm if that is right" in doubt
    assert "in mm, as the content says: doors" in doubt and "walls 0.10 m-0.30 m thick" in doubt
