"""Run independent pieces of work side by side: some in a forked process, the rest in this one.

Five uses, each of work that does not depend on the rest:

- `clearway build` reads the drawing in the second process while this one imports the
  roadmap stage and the exporters (a few tenths of a second of start-up), and gets the
  floor plan back. First, while the reader imports ezdxf, this process reads the drawing's
  text ahead and feeds it to the reader (:meth:`Aside.feed`, :func:`fed`). While that
  reader parses a large drawing in two halves (next), this process holds back its imports
  (:func:`every_core_busy`, :meth:`Aside.hold`). Once it has sent the plan, the reader
  draws a large floor's areas for the outputs while this process builds the lanes
  (``Aside(then=)``, :meth:`Aside.later`; clearway.exporters.floor);
- that reader parses a large model space in two halves, the second in a process of its own
  (clearway.converter.read): on two cores the 4 MB drawing of the mixed suite floor at 20,000
  bays, as first drawn, is read in 2.94 s instead of 4.02 s (the benchmark suite's reading
  stage);
- the five outputs of a build are made from the same finished roadmap. On a 20,000-bay
  warehouse the preview (label placement, path text) takes about as long as the other four
  together, so a second process that renders it while this one renders the rest shortens
  the output stage by close to half on two cores;
- the Delaunay triangulation of a floor of 60,000 boundary samples or more is made in
  strips (clearway.roadmap.delaunay), half of them in the second process;
- on a medial axis of 100,000 vertices or more, the floor is split into rooms in the
  second process while this one prunes the lanes (clearway.roadmap.build).

The child is a fork: it shares the caller's data copy-on-write and sends back only its
results (one pickle through a pipe). It writes no file and prints nothing; this process
writes every output, as one set, as before. On Linux the kernel kills a child when the
process that forked it ends, however it ends, so a child's own child never runs on alone.

A fork is used only where it is safe and pays: on Linux (where fork is the default way to
start a process), with no other thread running (a fork copies only the calling thread),
and for enough work (the caller says; CLEARWAY_PROCESSES=2 forks for any work, for tests);
otherwise, and when CLEARWAY_PROCESSES=1, everything runs here in turn. The results are the
same either way: the work is a deterministic function of its inputs.

Work that releases the GIL (GEOS's operations, scipy's k-d tree) can run beside other such
work on a second thread instead (:func:`meanwhile`), where a fork would cost more than the
work: the clearance field's indexes while GEOS finds the floor the robot reaches
(clearway.roadmap.build), two unions of the walls side by side (clearway.converter). The
thread is joined when its block ends, so a fork after it is still safe.

An error in the child is raised here as if the work had run here (the exception is
pickled back, with the child's traceback in a note; one that cannot be pickled arrives as a
RuntimeError with its text). If this process stops first (an error in its own work, Ctrl-C,
SIGTERM), the child is killed and reaped before the exception goes on.
"""

from __future__ import annotations

import contextlib
import gc
import os
import pickle
import select
import signal
import struct
import sys
import threading
import traceback
from concurrent.futures import Future, ThreadPoolExecutor
from typing import Callable, Iterator, Mapping, Sequence

#: Environment variable: "1" renders everything in this process, "2" forks even for a
#: little work (tests); unset, the caller's measure of the work decides.
PROCESSES_VARIABLE = "CLEARWAY_PROCESSES"
#: Bytes the pipe that feeds a child holds (:meth:`Aside.feed`), where Linux allows it (its
#: default limit, /proc/sys/fs/pipe-max-size): this process writes what it feeds and goes
#: on, before the child reads it. The mixed suite floor at 5,000 bays read ahead is 0.64 MB.
FEED_PIPE = 1 << 20


def cores() -> int:
    """Processor cores this process may run on (threads as well as processes)."""
    return len(os.sched_getaffinity(0)) if hasattr(os, "sched_getaffinity") else \
        (os.cpu_count() or 1)


@contextlib.contextmanager
def meanwhile(function: Callable[[], object]) -> Iterator[Future]:
    """Call `function` on a second thread while this one runs the ``with`` block.

    For work that releases the GIL beside other work that does (GEOS's operations, scipy's
    k-d tree, numpy on large arrays): on two cores the pair takes about as long as the
    longer of the two. Yields a Future of the function's result, to take after the block.
    Leaving the block joins the thread, whatever happened in it: a thread left running
    would keep the build from forking (:func:`can_fork`). With one core, `function` is
    called here, before the block.

    Examples
    --------
    >>> with meanwhile(lambda: sum(range(10))) as summing:
    ...     here = 2 + 2
    >>> summing.result() + here
    49
    """
    if cores() < 2:
        future = Future()
        future.set_result(function())
        yield future
        return
    with ThreadPoolExecutor(1) as pool:
        yield pool.submit(function)


#: In a child forked to listen (``Aside(..., listen=True)``): the write end of the pipe on
#: which it tells its parent when it keeps every core busy (:func:`every_core_busy`).
_telling: int | None = None
#: In a child forked to be fed (``Aside(..., fed=True)``), until :func:`fed` takes what came:
#: the read end of the pipe its parent feeds.
_feeding: int | None = None


def fed():
    """In a child forked to be fed (``Aside(..., fed=True)``), what its parent gave it
    (:meth:`Aside.feed`), once it has come; None when it gave nothing, in a second call, and
    in a process that was not so forked (the work runs where nothing is fed).

    Examples
    --------
    >>> with Aside(lambda: fed(), fed=True) as child:
    ...     child.feed(lambda: "text read ahead")
    ...     child.result() in ("text read ahead", None)    # None where nothing can fork
    True
    """
    global _feeding
    if _feeding is None:
        return None
    end, _feeding = _feeding, None
    with os.fdopen(end, "rb") as pipe:
        payload = pipe.read()
    return pickle.loads(payload) if payload else None


@contextlib.contextmanager
def every_core_busy() -> Iterator[None]:
    """Around work of this process that keeps every core busy (on two cores: this process
    and a child of its own, as the reader's two halves): the parent, if it listens
    (:meth:`Aside.hold`), holds back its own work until the block ends. With three cores
    or more there is room for the parent as well, and nothing is said.
    """
    if _telling is None or cores() > 2:
        yield
        return
    os.write(_telling, b"+")
    try:
        yield
    finally:
        os.write(_telling, b"-")


def forced() -> bool:
    """True when CLEARWAY_PROCESSES=2 asks for the second process whatever the work."""
    return os.environ.get(PROCESSES_VARIABLE, "").strip() == "2"


def can_fork() -> bool:
    """True where a forked child is safe: Linux, one thread, not switched off."""
    return (sys.platform.startswith("linux") and hasattr(os, "fork")
            and threading.active_count() == 1
            and os.environ.get(PROCESSES_VARIABLE, "").strip() != "1")


def side_by_side(work: Mapping[str, Callable[[], object]],
                 aside: Sequence[str] = ()) -> dict[str, object]:
    """Call every function of `work`; those named in `aside` in a forked child when
    :func:`can_fork`.

    Parameters
    ----------
    work : mapping of name -> callable without arguments returning a picklable value
        (rendered bytes, arrays)
    aside : names of `work` to run in the child (at most about half the work)

    Returns
    -------
    dict of name -> value, in the order of `work`.

    Examples
    --------
    >>> side_by_side({"a": lambda: b"1", "b": lambda: b"2"}, aside=["b"])
    {'a': b'1', 'b': b'2'}
    """
    wanted = set(aside)
    aside = [name for name in work if name in wanted]
    if not aside:
        return {name: make() for name, make in work.items()}
    with Aside(lambda: {name: work[name]() for name in aside}) as child:
        results = {name: make() for name, make in work.items() if name not in aside}
        results.update(child.result())
    return {name: results[name] for name in work}


class Aside:
    """`function` (no arguments, a picklable result) called in a forked child from the
    moment the ``with`` block is entered, where :func:`can_fork`; else here, when
    :meth:`result` is first asked for. This process meanwhile runs the block. With
    `fork` false (too little work to pay for a process) it runs here too, unless
    CLEARWAY_PROCESSES=2 asks for the second process.

    With `listen`, the child can say when its work keeps every core busy
    (:func:`every_core_busy`), and :meth:`hold` waits until it is no longer so. With `fed`,
    this process can give the child one value after the fork (:meth:`feed`), which the
    child takes with :func:`fed`.

    With `then`, a function of the result, the child goes on once it has sent the result:
    it calls ``then(result)`` at the lowest priority (nice 19, so that it takes only the
    time the other processes leave) and sends that too, for :meth:`later`. Where the
    function runs here, `then` is not called.

    Leaving the block before :meth:`result` (an error, Ctrl-C, SIGTERM) kills and reaps the
    child.

    Examples
    --------
    >>> with Aside(lambda: sum(range(10))) as child:
    ...     here = 2 + 2
    ...     child.result() + here
    49
    """

    def __init__(self, function: Callable[[], object], fork: bool = True,
                 listen: bool = False, fed: bool = False,
                 then: Callable[[object], object] | None = None):
        self.function = function
        self.then = then
        self.fork = fork
        self.listen = listen
        self.fed = fed
        self.pid = None
        self.pipe = None
        self.told = None       # the read end of the child's _telling, when listening
        self.feeding = None    # the write end of the child's _feeding, until fed
        self.busy = False      # the child last said it keeps every core busy
        self.done = False
        self.value = None
        self.forked = False    # the function runs (or ran) in a child

    def __enter__(self) -> "Aside":
        if not (self.fork or forced()) or not can_fork():
            return self
        global _telling, _feeding
        read_end, write_end = os.pipe()
        told, tell = os.pipe() if self.listen else (None, None)
        food, feed = _feed_pipe() if self.fed else (None, None)
        parent = os.getpid()
        gc.freeze()      # the child's collector then leaves the shared objects' pages alone
        try:
            pid = os.fork()
        except OSError:
            gc.unfreeze()
            for end in (read_end, write_end, told, tell, food, feed):
                if end is not None:
                    os.close(end)
            return self
        if pid == 0:     # the child: work, send, leave without running any exit handler
            for end in (read_end, told, feed):
                if end is not None:
                    os.close(end)
            for end in (_telling, _feeding):     # this process's own pipes to its parent
                if end is not None:
                    os.close(end)
            _telling, _feeding = tell, food
            _die_with(parent)
            _child(self.function, write_end, self.then)
        gc.unfreeze()
        os.close(write_end)
        if tell is not None:
            os.close(tell)
            self.told = told
        if food is not None:
            os.close(food)
            self.feeding = feed
        self.pid, self.pipe = pid, os.fdopen(read_end, "rb")
        self.forked = True
        return self

    def hold(self) -> None:
        """Return once the child is not keeping every core busy (:func:`every_core_busy`).

        For work of this process that may as well come a little later, such as imports: run
        beside the child's busiest part, it would only slow that down. Returns at once when
        the child said nothing, or has ended, or this Aside does not listen.
        """
        while self.told is not None:
            if not select.select([self.told], [], [], None if self.busy else 0)[0]:
                return
            said = os.read(self.told, 64)
            if said:
                self.busy = said.endswith(b"+")
            else:                       # the child has ended: nothing more will come
                self._stop_listening()

    def feed(self, make: Callable[[], object]) -> None:
        """Give the child ``make()`` (picklable), for it to take with :func:`fed`; once.

        Only a child forked to be fed is given anything: where the function runs here
        instead, `make` is not called, and :func:`fed` gives None. Beyond FEED_PIPE bytes
        this waits until the child reads; a child that ended without reading is given
        nothing.
        """
        if self.feeding is None:
            return
        end, self.feeding = self.feeding, None
        try:
            view = memoryview(pickle.dumps(make(), protocol=pickle.HIGHEST_PROTOCOL))
            while view:
                view = view[os.write(end, view):]
        except BrokenPipeError:
            pass
        finally:
            os.close(end)

    def _stop_feeding(self) -> None:
        if self.feeding is not None:
            os.close(self.feeding)
            self.feeding = None

    def _stop_listening(self) -> None:
        os.close(self.told)
        self.told, self.busy = None, False

    def result(self):
        """The function's value; its exception, raised here, if it raised one."""
        if self.done:
            return self.value
        if self.pid is None:
            self.value, self.done = self.function(), True
            return self.value
        self._stop_feeding()           # nothing more will come: the child's fed() gives None
        status, value = self._receive()
        if self.then is None or status != "ok":
            self._reap()
        self.done = True
        if status != "ok":
            raise value
        self.value = value
        return value

    def later(self):
        """What `then` made of the result in the child, once it has come (the result is
        taken first); its exception, raised here, if it raised one. None where the function
        ran here, or without `then`.
        """
        if not self.forked or self.then is None:
            return None
        self.result()
        if self.pid is None:
            return None
        status, value = self._receive()
        self._reap()
        if status != "ok":
            raise value
        return value

    def _receive(self):
        """The next (status, value) the child sent (:func:`_send`)."""
        head = self.pipe.read(_SIZE.size)
        size = _SIZE.unpack(head)[0] if len(head) == _SIZE.size else 0
        payload = self.pipe.read(size) if size else b""
        if not size or len(payload) < size:      # it ended before or while it sent
            return "error", RuntimeError("the second process ended without a result")
        return pickle.loads(payload)

    def _reap(self) -> None:
        self.pipe.close()
        os.waitpid(self.pid, 0)
        self.pid = None

    def __exit__(self, *exc) -> None:
        if self.told is not None:
            self._stop_listening()
        self._stop_feeding()
        if self.pid is not None:       # left before the result: stop the child
            self.pipe.close()
            _stop(self.pid)
            self.pid = None
        return None


def _feed_pipe() -> tuple[int, int]:
    """(read end, write end) of a new pipe that holds FEED_PIPE bytes where Linux allows it."""
    food, feed = os.pipe()
    # without fcntl, F_SETPIPE_SZ (Linux 2.6.35 on) or the user's leave, the pipe holds less
    with contextlib.suppress(ImportError, AttributeError, OSError):
        import fcntl
        fcntl.fcntl(feed, fcntl.F_SETPIPE_SZ, FEED_PIPE)
    return food, feed


#: prctl's option that has the kernel signal a process when the thread that forked it ends
#: (linux/prctl.h).
_PR_SET_PDEATHSIG = 1


def _die_with(parent: int) -> None:
    """Have the kernel kill this child when `parent`, which forked it, ends, however it ends.

    A child may fork a child of its own (the reader parses half the drawing in one): killed
    by its parent (Ctrl-C, SIGTERM), it cannot stop that one, which would parse on, alone.
    Where prctl is not to be had, nothing is asked.
    """
    try:
        import ctypes
        libc = ctypes.CDLL(None, use_errno=True)
        libc.prctl(_PR_SET_PDEATHSIG, signal.SIGKILL, 0, 0, 0)
    except (OSError, AttributeError):
        return
    if os.getppid() != parent:      # it ended before the request was made
        os._exit(1)


#: The length of each pickle a child sends, before it (8 bytes, little-endian).
_SIZE = struct.Struct("<Q")


def _child(function, write_end, then=None) -> None:
    """Run in the forked child: call `function`, pickle the outcome into the pipe; with
    `then`, call it with the result at the lowest priority and pickle that outcome too;
    _exit."""
    code = 0
    # the child does one piece of work and ends: the collector would only rescan what the
    # work leaves behind (the reader's ezdxf document, one pass of 0.07 s on the mixed suite
    # floor at 20,000 bays) to free what the child's exit frees anyway
    gc.disable()
    try:
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        with os.fdopen(write_end, "wb") as pipe:
            outcome = _outcome(function)
            _send(pipe, outcome)
            if then is not None and outcome[0] == "ok":
                pipe.flush()
                with contextlib.suppress(OSError, AttributeError):
                    os.nice(19)
                _send(pipe, _outcome(lambda: then(outcome[1])))
    except BaseException:  # noqa: BLE001 - the parent reports a missing result
        code = 1
    finally:
        os._exit(code)


def _outcome(function) -> tuple[str, object]:
    """("ok", function()) or ("error", the exception it raised)."""
    try:
        return "ok", function()
    except BaseException as err:  # noqa: BLE001 - every failure goes back to the parent
        # its traceback stays here: the frames go back as text, in a note on it
        err.add_note("in the second process:\n"
                     + "".join(traceback.format_tb(err.__traceback__)).rstrip())
        return "error", err


def _send(pipe, outcome) -> None:
    """Write `outcome` to `pipe` as a pickle after its length."""
    try:
        payload = pickle.dumps(outcome, protocol=pickle.HIGHEST_PROTOCOL)
    except Exception:  # noqa: BLE001 - an exception that cannot be pickled
        err = outcome[1]
        payload = pickle.dumps(("error", RuntimeError(f"{type(err).__name__}: {err}")))
    pipe.write(_SIZE.pack(len(payload)))
    pipe.write(payload)


def _stop(pid: int) -> None:
    """Kill the child `pid` and reap it (it may have ended already)."""
    try:
        os.kill(pid, signal.SIGKILL)
    except ProcessLookupError:
        pass
    try:
        os.waitpid(pid, 0)
    except ChildProcessError:
        pass
