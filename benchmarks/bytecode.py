"""Compile clearway's sources to bytecode before a benchmark times its processes.

pip compiles an installed package's modules when it installs them; an editable checkout
compiles each module the first time it is imported, and never when PYTHONDONTWRITEBYTECODE is
set (as it is on some shared machines), in which case every timed process would compile the
whole package again: about 0.1 s of every start-up that no installed copy pays. The
__pycache__ folders this writes are ignored by git.
"""

from __future__ import annotations

import compileall
from pathlib import Path

ROOT = Path(__file__).resolve().parent.parent
PACKAGES = ("clearway", "converter", "roadmap", "exporters")


def compile_sources() -> None:
    """Write the bytecode of every module of the four packages (as `pip install` does)."""
    for package in PACKAGES:
        compileall.compile_dir(ROOT / package, quiet=1)


if __name__ == "__main__":
    compile_sources()
