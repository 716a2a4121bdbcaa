"""Outputs rendered in a forked second process: same bytes, errors and interrupts as in one."""

from __future__ import annotations

import contextlib
import gc
import hashlib
import os
import pickle
import signal
import subprocess
import sys
import threading
import time
from pathlib import Path

import pytest

import clearway.side_by_side as runner
from clearway.errors import ClearwayError
from clearway.side_by_side import Aside, can_fork, side_by_side

ROOT = Path(__file__).resolve().parent.parent
SAMPLE = ROOT / "sample_drawings" / "distribution_centre.dxf"

needs_fork = pytest.mark.skipif(not (sys.platform.startswith("linux") and hasattr(os, "fork")),
                                reason="a second process needs Linux fork")


@pytest.fixture
def one_thread(monkeypatch):
    """The mechanism's tests fork even where an earlier test left a thread waiting (the
    browser tests' asyncio child watcher): the renderers here take no lock such a thread
    could hold. A build forks only when it has one thread (the next test)."""
    monkeypatch.delenv("CLEARWAY_PROCESSES", raising=False)
    monkeypatch.setattr("clearway.side_by_side.threading.active_count", lambda: 1)


def _processes():
    """(pid, parent pid, command line bytes) of every process (Linux /proc)."""
    for entry in os.listdir("/proc"):
        if entry.isdigit():
            try:
                status = Path("/proc", entry, "status").read_text()
                command = Path("/proc", entry, "cmdline").read_bytes()
            except OSError:
                continue
            ppid = next(line.split()[1] for line in status.splitlines()
                        if line.startswith("PPid:"))
            yield int(entry), int(ppid), command


def _children() -> set[int]:
    """Processes whose parent is this one (other tests may have left some: compare)."""
    return {pid for pid, ppid, _ in _processes() if ppid == os.getpid()}


@needs_fork
def test_aside_renderers_run_in_another_process_and_keep_the_order(one_thread):
    before, here = _children(), os.getpid()
    result = side_by_side({"a": lambda: str(os.getpid()).encode(),
                                  "b": lambda: str(os.getpid()).encode(),
                                  "c": lambda: b"c" * 3_000_000},   # larger than a pipe holds
                                 aside=["b", "c"])
    assert list(result) == ["a", "b", "c"]
    assert result["a"] == str(here).encode() and result["b"] != str(here).encode()
    assert result["c"] == b"c" * 3_000_000
    assert _children() <= before


@needs_fork
def test_the_child_runs_without_the_collector_and_this_process_keeps_it(one_thread):
    assert gc.isenabled()
    with Aside(lambda: (os.getpid(), gc.isenabled())) as child:
        pid, enabled = child.result()
    assert pid != os.getpid() and enabled is False
    assert gc.isenabled()


@needs_fork
def test_an_error_in_the_child_is_raised_here_as_itself(one_thread):
    before = _children()

    def refuse():
        raise ClearwayError("plan.dxf: no walls")
    with pytest.raises(ClearwayError, match="plan.dxf: no walls"):
        side_by_side({"a": lambda: b"", "b": refuse}, aside=["b"])
    assert _children() <= before


class _Unpicklable(Exception):
    def __reduce__(self):
        raise pickle.PicklingError("no")


@needs_fork
def test_an_error_that_cannot_travel_arrives_as_its_text(one_thread):
    def fail():
        raise _Unpicklable("lost detail")
    with pytest.raises(RuntimeError, match="_Unpicklable: lost detail"):
        side_by_side({"a": lambda: b"", "b": fail}, aside=["b"])


@needs_fork
def test_a_child_that_dies_is_reported_and_reaped(one_thread):
    before = _children()
    with pytest.raises(RuntimeError, match="ended without a result"):
        side_by_side({"a": lambda: b"", "b": lambda: os._exit(7)}, aside=["b"])
    assert _children() <= before


@needs_fork
def test_an_error_here_stops_the_child(one_thread):
    def slow():
        time.sleep(30)
        return b""

    def fail():
        raise ValueError("here")
    before, start = _children(), time.monotonic()
    with pytest.raises(ValueError, match="here"):
        side_by_side({"a": fail, "b": slow}, aside=["b"])
    assert time.monotonic() - start < 10 and _children() <= before


def test_another_thread_keeps_everything_here():
    stop = threading.Event()
    waiter = threading.Thread(target=stop.wait)
    waiter.start()
    try:
        assert not can_fork()
        here = str(os.getpid()).encode()
        assert side_by_side({"a": lambda: str(os.getpid()).encode()},
                                   aside=["a"]) == {"a": here}
    finally:
        stop.set()
        waiter.join()


def test_switched_off_everything_renders_here(monkeypatch):
    monkeypatch.setenv("CLEARWAY_PROCESSES", "1")
    assert not can_fork()
    here = str(os.getpid()).encode()
    assert side_by_side({"a": lambda: str(os.getpid()).encode()}, aside=["a"]) == \
        {"a": here}


@needs_fork
def test_aside_with_too_little_work_runs_here_unless_two_processes_are_asked_for(
        one_thread, monkeypatch):
    here = os.getpid()
    monkeypatch.delenv("CLEARWAY_PROCESSES", raising=False)
    with Aside(os.getpid, fork=False) as child:
        assert child.result() == here
    monkeypatch.setenv("CLEARWAY_PROCESSES", "2")
    with Aside(os.getpid, fork=False) as child:
        assert child.result() != here


def _build(tmp_path, name, processes, sample=SAMPLE):
    out = tmp_path / name
    env = {**os.environ, "CLEARWAY_PROCESSES": processes}
    done = subprocess.run([sys.executable, "-m", "clearway", "build", str(sample), "-o", str(out),
                           "-q"], env=env, capture_output=True, text=True, timeout=300)
    assert done.returncode == 0, done.stderr
    return out


@needs_fork
@pytest.mark.parametrize("sample", [SAMPLE, ROOT / "sample_drawings" / "clinic.dxf"],
                         ids=["warehouse", "rooms"])
def test_the_build_writes_the_same_bytes_with_one_process_or_two(tmp_path, sample):
    # with two, the drawing is read, the rooms are found and the preview is rendered in a
    # second process (clearway.side_by_side)
    _same_outputs(_build(tmp_path, "one", "1", sample), _build(tmp_path, "two", "2", sample))


@needs_fork
def test_a_drawing_read_ahead_builds_the_same_bytes_with_one_process_or_two(tmp_path):
    sys.path.insert(0, str(ROOT))
    from benchmarks.synthetic import write_style
    from clearway.converter.ahead import read_ahead
    drawing = tmp_path / "mezzanines.dxf"
    write_style(str(drawing), "mixed", 3500)
    # with two processes the build reads its text ahead and feeds it to the reader
    assert read_ahead(drawing) is not None
    _same_outputs(_build(tmp_path, "one", "1", drawing), _build(tmp_path, "two", "2", drawing))


def _same_outputs(one: Path, two: Path) -> None:
    names = sorted(path.name for path in one.iterdir())
    assert names == sorted(path.name for path in two.iterdir()) and "roadmap.svg" in names
    for name in names:
        assert (one / name).read_bytes() == (two / name).read_bytes(), name


@needs_fork
@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM], ids=["SIGINT", "SIGTERM"])
def test_an_interrupt_while_rendering_leaves_no_second_process(tmp_path, signum):
    out = tmp_path / "out"
    env = {**os.environ, "CLEARWAY_PROCESSES": "2"}
    process = subprocess.Popen([sys.executable, "-m", "clearway", "build", str(SAMPLE), "-o",
                                str(out)], env=env, stderr=subprocess.PIPE, text=True)
    for line in process.stderr:
        if line.startswith("rendering "):
            break
    time.sleep(0.05)
    process.send_signal(signum)
    process.stderr.read()
    process.wait(timeout=60)
    time.sleep(0.2)
    # the forked child has the build's command line: none may be left running
    assert not [pid for pid, _, command in _processes() if str(out).encode() in command]


@needs_fork
def test_aside_runs_while_the_block_runs_and_its_error_keeps_the_child_traceback(one_thread):
    here = os.getpid()
    with Aside(os.getpid) as child:
        assert child.result() != here and child.result() == child.result()

    def deep():
        raise ClearwayError("plan.dxf: no walls")
    with pytest.raises(ClearwayError, match="plan.dxf: no walls") as caught:
        with Aside(lambda: deep()) as child:
            child.result()
    # the frames of the second process come back as text
    assert any("in deep" in note for note in caught.value.__notes__)


@needs_fork
def test_leaving_the_block_first_stops_the_child(one_thread):
    before, start = _children(), time.monotonic()
    with pytest.raises(ValueError, match="here"):
        with Aside(lambda: time.sleep(30)):
            raise ValueError("here")
    assert time.monotonic() - start < 10 and _children() <= before


@needs_fork
def test_a_plan_read_in_the_second_process_comes_back_whole(one_thread):
    from clearway.converter import read_floorplan
    with Aside(lambda: read_floorplan(SAMPLE)) as child:
        there = child.result()
    here = read_floorplan(SAMPLE)
    # the regions come back as a read-only mapping, every geometry coordinate for coordinate
    assert there == here and type(there.regions) is type(here.regions)
    assert all(there.regions[role].equals_exact(here.regions[role], 0) for role in here.regions)


@needs_fork
@pytest.mark.parametrize("signum", [signal.SIGINT, signal.SIGTERM], ids=["SIGINT", "SIGTERM"])
def test_an_interrupt_while_reading_leaves_no_second_process(tmp_path, signum):
    sys.path.insert(0, str(ROOT))
    from benchmarks.synthetic import write_style
    drawing, out = tmp_path / "hall.dxf", tmp_path / "out"
    write_style(str(drawing), "current", 3000)          # read for about a second
    # (a shell without job control starts its background jobs with SIGINT ignored)
    process = subprocess.Popen([sys.executable, "-m", "clearway", "build", str(drawing), "-o",
                                str(out)], stderr=subprocess.PIPE, text=True,
                               preexec_fn=lambda: signal.signal(signal.SIGINT, signal.SIG_DFL))
    deadline = time.monotonic() + 60
    while not [pid for pid, ppid, _ in _processes() if ppid == process.pid]:
        assert time.monotonic() < deadline and process.poll() is None
        time.sleep(0.01)
    process.send_signal(signum)
    process.stderr.read()
    process.wait(timeout=60)
    time.sleep(0.2)
    assert process.returncode != 0 and not out.exists()
    assert not [pid for pid, _, command in _processes() if str(out).encode() in command]


def _alive(pid: int) -> bool:
    """Whether `pid` runs (a zombie, dead and not yet reaped, does not)."""
    try:
        with open(f"/proc/{pid}/stat", encoding="ascii") as stat:
            return stat.read().rsplit(")", 1)[1].split()[0] != "Z"
    except FileNotFoundError:
        return False


@needs_fork
def test_a_child_of_a_child_ends_when_its_parent_is_killed(one_thread, tmp_path):
    # the reader forks one to parse half the drawing: a build killed while reading (its
    # reader killed by SIGKILL, which cannot be caught) must leave nothing parsing on
    marker = tmp_path / "grandchild"

    def middle():
        with Aside(lambda: (marker.write_text(str(os.getpid())), time.sleep(60))) as inner:
            time.sleep(60)
            return inner.result()

    with Aside(middle) as outer:
        deadline = time.monotonic() + 30
        while not (marker.exists() and marker.read_text()) and time.monotonic() < deadline:
            time.sleep(0.01)
        grandchild = int(marker.read_text())
        assert _alive(grandchild)
        os.kill(outer.pid, signal.SIGKILL)
        deadline = time.monotonic() + 10
        while _alive(grandchild) and time.monotonic() < deadline:
            time.sleep(0.01)
        assert not _alive(grandchild)


def test_meanwhile_runs_on_a_second_thread_and_joins_it_on_leaving(monkeypatch):
    started, go_on = threading.Event(), threading.Event()

    def work():
        started.set()
        assert go_on.wait(10)       # runs while the block runs: the block lets it finish
        return threading.current_thread()

    monkeypatch.setattr(runner, "cores", lambda: 2)
    with runner.meanwhile(work) as working:
        assert started.wait(10)
        go_on.set()
    thread = working.result()
    assert thread is not threading.current_thread()
    assert not thread.is_alive()                    # joined: the build may fork again


def test_meanwhile_raises_the_threads_error_and_joins_it_when_the_block_fails(monkeypatch):
    monkeypatch.setattr(runner, "cores", lambda: 2)
    with runner.meanwhile(lambda: 1 / 0) as working:
        pass
    with pytest.raises(ZeroDivisionError):
        working.result()
    threads = []
    with pytest.raises(KeyError), runner.meanwhile(
            lambda: threads.append(threading.current_thread()) or time.sleep(0.2)):
        raise KeyError("the block's own error")
    assert threads and not threads[0].is_alive()


def test_meanwhile_on_one_core_calls_the_function_here_first(monkeypatch):
    monkeypatch.setattr(runner, "cores", lambda: 1)
    order = []
    with runner.meanwhile(lambda: order.append(threading.get_ident()) or "done") as w:
        order.append("block")
    assert order == [threading.get_ident(), "block"] and w.result() == "done"


def _wait_for(path: Path, seconds: float = 30) -> None:
    deadline = time.monotonic() + seconds
    while not path.exists() and time.monotonic() < deadline:
        time.sleep(0.005)
    assert path.exists()


@contextlib.contextmanager
def _listening(read, entered: Path, monkeypatch, cores: int = 2):
    """An Aside listening to `read` (on `cores` cores), once `read` has made `entered`."""
    monkeypatch.setattr(runner, "cores", lambda: cores)
    with Aside(read, listen=True) as reader:
        _wait_for(entered)
        yield reader


@needs_fork
def test_hold_waits_while_the_child_keeps_every_core_busy(one_thread, monkeypatch, tmp_path):
    # the build imports between holds while the reader parses its halves in two processes
    entered, left = tmp_path / "entered", tmp_path / "left"

    def read():
        with runner.every_core_busy():
            entered.touch()
            time.sleep(0.3)
            left.touch()
        time.sleep(0.3)         # still working, but no longer on every core
        return "plan"

    with _listening(read, entered, monkeypatch) as reader:
        reader.hold()
        assert left.exists()
        reader.hold()           # said and done: returns at once
        assert reader.result() == "plan"


@needs_fork
def test_hold_returns_when_the_child_ends_while_busy(one_thread, monkeypatch, tmp_path):
    entered = tmp_path / "entered"

    def read():
        with runner.every_core_busy():
            entered.touch()
            os._exit(5)

    with _listening(read, entered, monkeypatch) as reader:
        reader.hold()
        with pytest.raises(RuntimeError, match="ended without a result"):
            reader.result()


@needs_fork
def test_with_three_cores_or_more_the_child_says_nothing(one_thread, monkeypatch, tmp_path):
    entered, release = tmp_path / "entered", tmp_path / "release"

    def read():
        with runner.every_core_busy():
            entered.touch()
            _wait_for(release, seconds=20)
        return "plan"

    start = time.monotonic()
    with _listening(read, entered, monkeypatch, cores=3) as reader:
        reader.hold()           # would wait for the release this test gives only after it
        release.touch()
        assert reader.result() == "plan"
    assert time.monotonic() - start < 10


def _digest(value) -> tuple[int, str]:
    return len(value), hashlib.sha256(value).hexdigest()


@needs_fork
def test_a_child_takes_what_this_process_feeds_it_after_the_fork(one_thread, tmp_path):
    # the build reads the drawing's text ahead while the reader imports ezdxf; what it
    # feeds may be larger than the pipe holds, so that this process waits for the child
    food = os.urandom(3 * runner.FEED_PIPE + 17)
    started = tmp_path / "started"

    def eat():
        started.touch()              # forked before anything was fed
        return os.getpid(), _digest(runner.fed()), runner.fed()

    with Aside(eat, fed=True) as child:
        _wait_for(started)
        child.feed(lambda: food)
        child.feed(lambda: b"a second helping")     # once only: not given
        pid, digest, again = child.result()
    assert pid != os.getpid() and digest == _digest(food) and again is None


@needs_fork
def test_a_child_left_unfed_or_gone_takes_nothing_and_stops_nobody(one_thread):
    with Aside(runner.fed, fed=True) as child:
        assert child.result() is None               # asked for the result before any feed
        child.feed(lambda: b"too late")

    with Aside(lambda: "not hungry", fed=True) as child:
        _wait_for_exit(child.pid)
        child.feed(lambda: os.urandom(2 * runner.FEED_PIPE))    # the child has gone
        assert child.result() == "not hungry"


def test_where_the_work_runs_here_nothing_is_made_or_fed(monkeypatch):
    monkeypatch.setenv("CLEARWAY_PROCESSES", "1")
    made = []
    with Aside(runner.fed, fed=True) as child:
        child.feed(lambda: made.append(1) or b"food")
        assert child.result() is None and made == []
    assert runner.fed() is None                     # nor in a process never fed


def _wait_for_exit(pid, seconds=20.0):
    """Wait until the child `pid` has ended (it stays a zombie until reaped)."""
    deadline = time.monotonic() + seconds
    while Path(f"/proc/{pid}/status").read_text().split("State:")[1].split()[0] != "Z":
        assert time.monotonic() < deadline, "the child did not end"
        time.sleep(0.01)


@needs_fork
def test_then_goes_on_in_the_child_after_the_result_at_the_lowest_priority(one_thread, tmp_path):
    # the reader, once it has sent the plan, draws the floor's areas for the outputs
    release = tmp_path / "release"

    def after(pid):
        _wait_for(release)           # the result came while `then` was still at work
        return pid, os.getpid(), os.nice(0), os.urandom(3 * runner.FEED_PIPE)

    mine = os.nice(0)
    with Aside(os.getpid, then=after) as child:
        first = child.result()
        release.touch()
        pid, there, nice, payload = child.later()
        assert child.later() is None                # given once
    # source: POSIX nice(); 19 is the lowest priority an unprivileged process can take
    assert first == pid == there != os.getpid() and nice == 19
    assert len(payload) == 3 * runner.FEED_PIPE     # more than the pipe holds
    assert os.nice(0) == mine                       # this process keeps its priority


@needs_fork
def test_an_error_in_then_is_raised_by_later_and_a_failed_result_skips_then(one_thread,
                                                                           tmp_path):
    def fails(_):
        raise ClearwayError("floor: no areas")

    with Aside(lambda: 1, then=fails) as child:
        assert child.result() == 1
        with pytest.raises(ClearwayError, match="no areas") as caught:
            child.later()
    assert any("in the second process" in note for note in caught.value.__notes__)

    called = tmp_path / "called"
    with pytest.raises(ZeroDivisionError):
        with Aside(lambda: 1 / 0, then=lambda _: called.touch()) as child:
            child.later()
    assert not called.exists()


@needs_fork
def test_leaving_before_later_stops_the_child_at_work_on_then(one_thread):
    before, start = _children(), time.monotonic()
    with Aside(lambda: "plan", then=lambda _: time.sleep(30)) as child:
        assert child.result() == "plan"
    assert time.monotonic() - start < 10 and _children() <= before


def test_where_the_work_runs_here_then_is_not_called(monkeypatch):
    monkeypatch.setenv("CLEARWAY_PROCESSES", "1")
    called = []
    with Aside(lambda: "plan", then=lambda _: called.append(1)) as child:
        assert child.result() == "plan" and child.later() is None
    assert called == [] and not child.forked


@needs_fork
def test_a_floor_the_reader_fails_to_draw_leaves_the_outputs_as_they_were(one_thread, tmp_path,
                                                                          monkeypatch):
    # drawing the floor beforehand only saves time: where it fails in the reader (out of
    # memory, killed), the renderers draw the areas themselves
    from click.testing import CliRunner

    from clearway.cli_build import build

    def build_into(name):
        out = tmp_path / name
        done = CliRunner().invoke(build, [str(SAMPLE), "-o", str(out), "-q"])
        assert done.exit_code == 0, done.output
        return out

    monkeypatch.setenv("CLEARWAY_PROCESSES", "2")     # the floor drawn whatever its size
    drawn = build_into("drawn")

    def fails(*args, **kwargs):
        raise MemoryError("the reader ran out of memory")
    monkeypatch.setattr("clearway.exporters.floor.draw_floor", fails)
    monkeypatch.setattr("clearway.exporters.draw_floor", fails, raising=False)
    _same_outputs(drawn, build_into("failed"))


@needs_fork
def test_what_the_reader_drew_or_failed_to_draw(one_thread):
    from clearway.cli_build import _floor_drawn
    with Aside(lambda: (None, None), then=lambda read: "areas") as reader:
        reader.result()
        assert _floor_drawn(reader) == "areas"

    def fails(_):
        raise MemoryError("the reader ran out of memory")
    with Aside(lambda: (None, None), then=fails) as reader:
        reader.result()
        assert _floor_drawn(reader) is None

    with Aside(lambda: (None, None), then=lambda _: os.kill(os.getpid(), signal.SIGKILL)) \
            as reader:
        reader.result()
        assert _floor_drawn(reader) is None


def test_a_message_cut_short_is_a_missing_result():
    # a child killed while it sends: its length came, not all of its pickle
    import io
    whole = pickle.dumps(("ok", list(range(100))))
    for sent in (b"", runner._SIZE.pack(len(whole))[:5],
                 runner._SIZE.pack(len(whole)) + whole[:-1]):
        child = Aside(lambda: None)
        child.pipe = io.BytesIO(sent)
        status, error = child._receive()
        assert status == "error" and "ended without a result" in str(error)
    child.pipe = io.BytesIO(runner._SIZE.pack(len(whole)) + whole)
    assert child._receive() == ("ok", list(range(100)))
