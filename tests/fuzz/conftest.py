"""Fuzz tests count the inputs they try; the totals are printed at the end of the run."""

from __future__ import annotations

from collections import Counter

import ezdxf
import pytest

from tests.fuzz.mutations import NAMES, SAMPLES

_TRIED: Counter = Counter()


@pytest.fixture(scope="session")
def fuzz_counts():
    """Counter of inputs tried, keyed by "target: outcome"."""
    return _TRIED


@pytest.fixture(scope="session")
def originals(tmp_path_factory):
    """Bytes of each sample drawing, ASCII and binary DXF (binary written by ezdxf)."""
    folder = tmp_path_factory.mktemp("binary")
    found = {}
    for name in NAMES:
        found[name] = (SAMPLES / f"{name}.dxf").read_bytes()
        binary = folder / f"{name}.dxf"
        ezdxf.readfile(SAMPLES / f"{name}.dxf").saveas(binary, fmt="bin")
        found[f"{name} (binary)"] = binary.read_bytes()
    return found


def pytest_terminal_summary(terminalreporter):
    if not _TRIED:
        return
    terminalreporter.section("fuzz inputs tried")
    for key in sorted(_TRIED):
        terminalreporter.write_line(f"{key}: {_TRIED[key]}")
