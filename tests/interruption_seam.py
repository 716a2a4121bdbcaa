"""Run `clearway build` with an interruption injected at a chosen file-system step.

    python tests/interruption_seam.py KIND START OLD_SET EVENTS -- BUILD ARGUMENTS...

An audit hook (PEP 578) counts the file-system steps the build takes inside OUTDIR, of the
audit events named in EVENTS (comma-separated: ``tempfile.mkstemp`` creates a temporary
file, ``os.link`` a backup, ``os.rename`` renames the commit record or an output, and
``os.remove`` removes the record or a backup; counted from the build's first temporary file,
after it has completed any interrupted set), and just before step k injects KIND:

- ``SIGINT`` / ``SIGTERM``: the signal is sent to a thread that keeps BLAS busy, not to the
  main thread, as the kernel may do with a signal sent to the process;
- ``oserror``: the rename or removal raises OSError (EIO);
- ``SIGKILL``: the process dies there.

For every kind but SIGKILL the build runs again in the same process for k = START, START+1,
... (OUTDIR reset from the folder OLD_SET each time) until a run completes with nothing
injected. A harmless SIGUSR1 after each run makes Python run any handler still pending (a
"late" exit code), so that no signal spills into the next run. After each run one JSON line goes to stdout: k, whether the injection happened and
where, the exit code, and the sha256 of every file then in OUTDIR (hidden ones included).
With SIGKILL only k = START runs; the line written first gives what the build found in OUTDIR
just before it wrote its first temporary file (after completing any interrupted set).
"""

from __future__ import annotations

import contextlib
import errno
import hashlib
import json
import os
import select
import signal
import sys
import threading

import numpy as np


def digest(folder: str) -> dict[str, str]:
    return {name: hashlib.sha256(open(os.path.join(folder, name), "rb").read()).hexdigest()
            for name in sorted(os.listdir(folder))}


def keep_blas_busy(stop: threading.Event) -> None:
    matrix = np.random.default_rng(0).random((256, 256))
    while not stop.wait(0.005):          # leave the other core some room between products
        matrix = matrix @ matrix
        matrix /= np.abs(matrix).max()


def main() -> None:
    kind, start, old_set = sys.argv[1], int(sys.argv[2]), sys.argv[3]
    events = set(sys.argv[4].split(","))
    arguments = sys.argv[sys.argv.index("--") + 1:]
    outdir = os.path.realpath(arguments[arguments.index("-o") + 1])
    stop = threading.Event()
    worker = threading.Thread(target=keep_blas_busy, args=(stop,), daemon=True)
    worker.start()
    state = {"k": start, "step": 0, "fired": None, "found": None, "armed": False}

    def inside(path) -> bool:
        return os.path.dirname(os.path.realpath(os.fsdecode(path))) == outdir

    def hook(event, args):
        if not state["armed"]:
            return
        if event == "tempfile.mkstemp" and state["found"] is None and inside(args[0]):
            state["found"] = digest(outdir)
        if event not in events or not inside(args[0]) or state["found"] is None:
            return
        step, state["step"] = state["step"], state["step"] + 1
        if step != state["k"]:
            return
        state["fired"] = f"{event} {os.path.basename(os.fsdecode(args[0]))}"
        if kind == "SIGKILL":
            print(json.dumps({"k": step, "found": state["found"], "fired": state["fired"]}),
                  flush=True)
            os.kill(os.getpid(), signal.SIGKILL)
        elif kind == "oserror":
            raise OSError(errno.EIO, "injected input/output error")
        else:
            signal.pthread_kill(worker.ident, getattr(signal, kind))
            # wait until the worker's C-level handler has run (it writes the signal number
            # to the wake-up pipe): from then on the signal is pending for the main thread
            select.select([wakeup], [], [], 60)
            os.read(wakeup, 64)

    sys.addaudithook(hook)
    signal.signal(signal.SIGUSR1, lambda number, frame: None)
    # as build does: SIGTERM ends the process through SystemExit, also between two runs
    signal.signal(signal.SIGTERM, lambda number, frame: sys.exit(128 + number))
    wakeup, wakeup_write = os.pipe()
    os.set_blocking(wakeup, False)
    os.set_blocking(wakeup_write, False)
    signal.set_wakeup_fd(wakeup_write)
    from clearway.cli import main as clearway
    while True:
        if kind != "SIGKILL":
            for name in os.listdir(outdir):
                os.unlink(os.path.join(outdir, name))
            for name in os.listdir(old_set):
                with open(os.path.join(old_set, name), "rb") as source, \
                        open(os.path.join(outdir, name), "wb") as target:
                    target.write(source.read())
        with contextlib.suppress(BlockingIOError):
            os.read(wakeup, 4096)                 # the fence's own byte, from the last run
        state.update(step=0, fired=None, found=None, armed=True)
        try:
            clearway(arguments, prog_name="clearway")
            code = 0
        except SystemExit as exit:
            code = exit.code
        except KeyboardInterrupt:                 # not turned into "Aborted." by click
            code = "KeyboardInterrupt"
        state["armed"] = False
        try:            # fence: a signal still pending runs its handler now, not in the next run
            signal.raise_signal(signal.SIGUSR1)
        except SystemExit as exit:
            code = f"late {exit.code}"
        except KeyboardInterrupt:
            code = "late KeyboardInterrupt"
        print(json.dumps({"k": state["k"], "found": state["found"], "fired": state["fired"],
                          "code": code, "files": digest(outdir)}), flush=True)
        if state["fired"] is None or kind == "SIGKILL":
            break
        state["k"] += 1
    stop.set()


if __name__ == "__main__":
    main()
