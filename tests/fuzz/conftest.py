"""Fuzz tests count the inputs they try; the totals are printed at the end of the run."""

from __future__ import annotations

from collections import Counter

import pytest

_TRIED: Counter = Counter()


@pytest.fixture(scope="session")
def fuzz_counts():
    """Counter of inputs tried, keyed by "target: outcome"."""
    return _TRIED


def pytest_terminal_summary(terminalreporter):
    if not _TRIED:
        return
    terminalreporter.section("fuzz inputs tried")
    for key in sorted(_TRIED):
        terminalreporter.write_line(f"{key}: {_TRIED[key]}")
