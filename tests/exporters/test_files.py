"""write_outputs: a set of files lands whole, or the previous set stays byte-identical."""

from __future__ import annotations

import os
import signal
import stat

import pytest

import clearway.exporters.files
from clearway.exporters import finish_interrupted_set, journal, write_outputs

NEW = {"roadmap.graphml": b"<new graph/>", "roadmap.geojson": b"{}",
       "roadmap.svg": b"<svg/>", "report.json": b"{\"new\": 1}\n"}


def _snapshot(folder) -> dict[str, bytes]:
    return {path.name: path.read_bytes() for path in sorted(folder.iterdir())}


def test_creates_the_folder_and_writes_every_file(tmp_path):
    outdir = tmp_path / "a" / "b"
    paths = write_outputs(outdir, NEW)
    assert [p.name for p in paths] == list(NEW)
    assert _snapshot(outdir) == dict(sorted(NEW.items()))
    # common practice: output files readable by everyone, writable by the owner
    assert stat.S_IMODE((outdir / "report.json").stat().st_mode) == 0o644


def test_a_failure_while_writing_leaves_the_previous_set_and_no_temporaries(tmp_path,
                                                                             monkeypatch):
    write_outputs(tmp_path, {name: b"old " + name.encode() for name in NEW})
    before = _snapshot(tmp_path)
    calls = []

    def failing_fsync(descriptor):
        calls.append(descriptor)
        if len(calls) == 4:                       # the last file of the set
            raise OSError(28, "No space left on device")
        return os.fsync(descriptor)

    monkeypatch.setattr(clearway.exporters.files.os, "fsync", failing_fsync)
    with pytest.raises(OSError, match="No space left"):
        write_outputs(tmp_path, NEW)
    assert _snapshot(tmp_path) == before


def test_an_interrupt_while_writing_cleans_up(tmp_path, monkeypatch):
    write_outputs(tmp_path, {"report.json": b"old"})
    real_replace = os.replace

    def interrupted(*args):
        raise KeyboardInterrupt
    monkeypatch.setattr(clearway.exporters.files.os, "replace", interrupted)
    with pytest.raises(KeyboardInterrupt):
        write_outputs(tmp_path, NEW)
    monkeypatch.setattr(clearway.exporters.files.os, "replace", real_replace)
    assert _snapshot(tmp_path) == {"report.json": b"old"}


def test_keeps_the_mode_of_a_replaced_file(tmp_path):
    write_outputs(tmp_path, {"report.json": b"old"})
    (tmp_path / "report.json").chmod(0o640)
    write_outputs(tmp_path, {"report.json": b"new"})
    assert stat.S_IMODE((tmp_path / "report.json").stat().st_mode) == 0o640
    assert (tmp_path / "report.json").read_bytes() == b"new"


@pytest.mark.parametrize("name", ["../escape.json", "sub/report.json", "", ".", "a\0b"])
def test_refuses_names_with_a_folder_part(tmp_path, name):
    with pytest.raises(ValueError, match="plain file name"):
        write_outputs(tmp_path, {name: b"x"})
    assert list(tmp_path.iterdir()) == []


def test_refuses_text_content(tmp_path):
    with pytest.raises(TypeError, match="bytes"):
        write_outputs(tmp_path, {"report.json": "not bytes"})
    assert list(tmp_path.iterdir()) == []


def test_an_interrupt_during_the_renames_lands_after_the_whole_set(tmp_path, monkeypatch):
    write_outputs(tmp_path, {name: b"old" for name in NEW})
    real_replace = os.replace

    def replace_and_interrupt(source, target):
        if target.name == "roadmap.graphml":        # the first rename of the set
            signal.raise_signal(signal.SIGINT)      # Ctrl-C, as the user would press it
        return real_replace(source, target)
    monkeypatch.setattr(clearway.exporters.files.os, "replace", replace_and_interrupt)
    with pytest.raises(KeyboardInterrupt):
        write_outputs(tmp_path, NEW)
    assert _snapshot(tmp_path) == dict(sorted(NEW.items()))    # whole new set, no temporaries


def test_a_later_build_removes_what_a_killed_build_left_behind(tmp_path):
    # a SIGKILL between writing and renaming leaves a hidden temporary file; the lock is
    # held from the first temporary file to the last rename, so any such file found
    # while holding it belongs to no live build
    write_outputs(tmp_path, {"report.json": b"old"})
    stale = tmp_path / f"{clearway.exporters.files.TEMP_PREFIX}report.json.x1y2{clearway.exporters.files.TEMP_SUFFIX}"
    stale.write_bytes(b"half a report")
    write_outputs(tmp_path, NEW)
    assert _snapshot(tmp_path) == dict(sorted(NEW.items()))


def test_issue_16_without_fcntl_the_package_imports_and_writing_says_windows_is_unsupported(
        tmp_path, room_drawing):
    """Windows has no fcntl: the library still imports and renders; `build` refuses to write
    with one line (exit 2) instead of an ImportError traceback at import time."""
    import subprocess
    import sys
    _, _, write = room_drawing
    drawing = write()
    outdir = tmp_path / "out"
    # `sys.modules["fcntl"] = None` makes `import fcntl` raise ImportError, as on Windows
    script = ("import sys; sys.modules['fcntl'] = None\n"
              "import clearway.exporters, clearway.exporters.files as files\n"
              "assert files.fcntl is None\n"
              "from clearway.cli import main\n"
              "main(['build', sys.argv[1], '-o', sys.argv[2], '-q'])\n")
    result = subprocess.run([sys.executable, "-c", script, str(drawing), str(outdir)],
                            capture_output=True, text=True, timeout=120)
    assert result.returncode == 2, result.stderr
    lines = result.stderr.splitlines()
    assert len(lines) == 1 and "Windows is not supported" in lines[0], result.stderr
    assert not outdir.exists() or list(outdir.iterdir()) == []


def _committed_but_killed(folder, old, new, renamed):
    """The folder as a build killed after its commit record and `renamed` renames leaves it."""
    write_outputs(folder, old)
    entries = []
    for index, (name, content) in enumerate(new.items()):
        temporary = f"{clearway.exporters.files.TEMP_PREFIX}{name}.t{index}.part"
        (folder / temporary).write_bytes(content)
        backup = f"{clearway.exporters.files.TEMP_PREFIX}{name}.t{index}.old.part"
        os.link(folder / name, folder / backup)
        entries.append((temporary, name, backup))
    descriptor = os.open(folder, os.O_RDONLY)
    try:
        journal.write_record(folder, descriptor, entries, "redo")
    finally:
        os.close(descriptor)
    for temporary, name, _ in entries[:renamed]:
        os.replace(folder / temporary, folder / name)


@pytest.mark.parametrize("renamed", [0, 2, 4])
def test_a_set_committed_by_a_killed_build_is_completed_by_the_next_reader(tmp_path, renamed):
    old = {name: b"old " + name.encode() for name in NEW}
    _committed_but_killed(tmp_path, old, NEW, renamed)
    assert finish_interrupted_set(tmp_path) is True
    assert _snapshot(tmp_path) == dict(sorted(NEW.items()))
    assert finish_interrupted_set(tmp_path) is False             # nothing left to do


def test_the_next_build_completes_a_killed_set_before_writing_its_own(tmp_path, monkeypatch):
    old = {name: b"old " + name.encode() for name in NEW}
    _committed_but_killed(tmp_path, old, NEW, 1)
    seen = []
    real_mkstemp = clearway.exporters.files.tempfile.mkstemp

    def mkstemp(*args, **kwargs):
        if not seen:
            seen.append(_snapshot(tmp_path))
        return real_mkstemp(*args, **kwargs)
    monkeypatch.setattr(clearway.exporters.files.tempfile, "mkstemp", mkstemp)
    write_outputs(tmp_path, {"report.json": b"third"})
    assert seen == [dict(sorted(NEW.items()))]
    assert _snapshot(tmp_path) == {**dict(sorted(NEW.items())), "report.json": b"third"}


def test_a_record_clearway_did_not_write_is_never_acted_on(tmp_path):
    write_outputs(tmp_path, {"report.json": b"old", "notes.txt": b"keep"})
    (tmp_path / ".clearway-x.part").write_bytes(b"x")
    (tmp_path / journal.JOURNAL_NAME).write_text(
        '{"format": "clearway output journal 1", "direction": "redo", '
        '"entries": [[".clearway-x.part", "../notes.txt", null]]}')
    assert finish_interrupted_set(tmp_path) is True
    assert _snapshot(tmp_path) == {"notes.txt": b"keep", "report.json": b"old"}


def test_a_folder_at_an_output_name_leaves_the_previous_set(tmp_path):
    write_outputs(tmp_path, {name: b"old" for name in NEW})
    (tmp_path / "roadmap.svg").unlink()
    (tmp_path / "roadmap.svg").mkdir()
    before = _snapshot_names(tmp_path)
    with pytest.raises(IsADirectoryError):
        write_outputs(tmp_path, NEW)
    assert _snapshot_names(tmp_path) == before
    assert (tmp_path / "report.json").read_bytes() == b"old"


def _snapshot_names(folder):
    return sorted(path.name for path in folder.iterdir())


def test_refuses_names_of_its_own_temporary_files(tmp_path):
    with pytest.raises(ValueError, match="must not start with"):
        write_outputs(tmp_path, {".clearway-journal": b"x"})
    assert list(tmp_path.iterdir()) == []
