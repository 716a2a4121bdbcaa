"""Fixtures for the exporter tests: the hand-built hall of hall_fixture.py."""

from __future__ import annotations

import pytest

from hall_fixture import make_plan, make_roadmap


@pytest.fixture
def plan():
    return make_plan()


@pytest.fixture
def roadmap(plan):
    return make_roadmap(plan)
