"""One installed namespace (issue 12): the wheel holds `clearway` and nothing else at the top.

Packages named `converter`, `roadmap` and `exporters` exist on the package index; installed
beside any of them, a clearway that put its stage folders at the top of site-packages would
break one or the other. The folders stay at the repository's top level and install as
clearway.converter, clearway.roadmap and clearway.exporters.
"""

from __future__ import annotations

import importlib.util
import shutil
import subprocess
import sys
import zipfile
from pathlib import Path

import clearway.roadmap

ROOT = Path(__file__).resolve().parent.parent
STAGES = ("converter", "roadmap", "exporters")


def test_issue_12_the_wheel_has_one_top_level_package(tmp_path):
    source = tmp_path / "source"                   # a copy: building writes build/ beside it
    source.mkdir()
    for name in ("pyproject.toml", "README.md"):
        shutil.copy2(ROOT / name, source / name)
    for folder in ("clearway", *STAGES):
        shutil.copytree(ROOT / folder, source / folder,
                        ignore=shutil.ignore_patterns("__pycache__", "*.pyc"))
    done = subprocess.run([sys.executable, "-m", "pip", "wheel", "--no-deps", "-q", "-w",
                           str(tmp_path / "dist"), str(source)],
                          capture_output=True, text=True, timeout=600)
    assert done.returncode == 0, done.stderr
    [wheel] = (tmp_path / "dist").glob("clearway-*.whl")
    with zipfile.ZipFile(wheel) as archive:
        names = archive.namelist()
        [top_level_file] = [name for name in names if name.endswith(".dist-info/top_level.txt")]
        top_level = archive.read(top_level_file).decode().split()
    # source: PEP 427 (the wheel format): a wheel's root holds the packages and the
    # {name}-{version}.dist-info folder
    roots = {name.split("/")[0] for name in names}
    assert {root for root in roots if not root.endswith(".dist-info")} == {"clearway"}
    assert top_level == ["clearway"]
    for stage in STAGES:
        assert f"clearway/{stage}/__init__.py" in names
        assert not any(name.startswith(f"{stage}/") for name in names)
    assert "clearway/exporters/viewer.js" in names               # package data came along


def test_issue_12_the_editable_install_maps_the_stage_folders_into_clearway():
    # the suite runs on `pip install -e .`: the packages are the repository's own folders
    assert Path(clearway.roadmap.__file__).resolve() == ROOT / "roadmap" / "__init__.py"
    # and, from a folder outside the repository, nothing is importable as a top-level stage
    probe = ("import importlib.util, clearway.roadmap, clearway.converter, clearway.exporters; "
             "print([importlib.util.find_spec(name) is None for name in "
             f"{list(STAGES)!r}])")
    done = subprocess.run([sys.executable, "-I", "-c", probe], capture_output=True, text=True,
                          cwd=Path(sys.prefix), timeout=120)
    assert done.returncode == 0, done.stderr
    assert done.stdout.split() == ["[True,", "True,", "True]"]
    assert importlib.util.find_spec("clearway.roadmap") is not None
