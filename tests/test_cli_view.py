"""`clearway view` and `build --no-html`: the viewer page is part of the set, or left out."""

from __future__ import annotations

import webbrowser
from pathlib import Path

from click.testing import CliRunner

from clearway.cli import main
from tests.conftest import SAMPLES


def run(*args):
    return CliRunner().invoke(main, [str(arg) for arg in args])


def test_build_writes_the_page_and_no_html_leaves_it_out(tmp_path):
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "with")
    assert result.exit_code == 0, result.output
    page = (tmp_path / "with" / "roadmap.html").read_bytes()
    assert page.startswith(b"<!DOCTYPE html>") and b"EXAM-3" in page
    assert "roadmap.html" in result.stderr
    result = run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / "without", "--no-html")
    assert result.exit_code == 0, result.output
    assert not (tmp_path / "without" / "roadmap.html").exists()
    assert "roadmap.html" not in result.stderr
    # the other four files are the same bytes either way
    for name in ("roadmap.graphml", "roadmap.geojson", "roadmap.svg", "report.json"):
        assert (tmp_path / "with" / name).read_bytes() == \
            (tmp_path / "without" / name).read_bytes(), name


def test_rebuild_gives_the_same_page(tmp_path):
    for folder in ("a", "b"):
        assert run("build", SAMPLES / "clinic.dxf", "-o", tmp_path / folder, "-q").exit_code == 0
    assert (tmp_path / "a" / "roadmap.html").read_bytes() == \
        (tmp_path / "b" / "roadmap.html").read_bytes()


def test_view_opens_the_page_in_the_default_browser(tmp_path, monkeypatch):
    assert run("build", SAMPLES / "clinic.dxf", "-o", tmp_path, "-q").exit_code == 0
    opened = []
    monkeypatch.setattr(webbrowser, "open", lambda uri, *a, **k: opened.append(uri) or True)
    result = run("view", tmp_path)
    assert result.exit_code == 0, result.output
    # source: RFC 8089 (file URI), as pathlib writes it
    assert opened == [(tmp_path / "roadmap.html").resolve().as_uri()]
    assert opened[0].startswith("file:///")


def test_view_without_a_page_is_one_line_exit_2(tmp_path, monkeypatch):
    monkeypatch.setattr(webbrowser, "open", lambda *a, **k: (_ for _ in ()).throw(
        AssertionError("no browser should start")))
    result = run("view", tmp_path)
    assert result.exit_code == 2
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and "roadmap.html: no such file" in lines[0]


def test_view_when_no_browser_starts_is_one_line_exit_2(tmp_path, monkeypatch):
    (tmp_path / "roadmap.html").write_text("<!DOCTYPE html>", encoding="utf-8")
    monkeypatch.setattr(webbrowser, "open", lambda *a, **k: False)
    result = run("view", tmp_path)
    assert result.exit_code == 2
    assert len(result.stderr.splitlines()) == 1 and "open file:///" in result.stderr
