"""Write a set of output files so that readers see either the old set or the new one.

Every file is first written in full to a temporary name in the output folder (same file
system, so each rename is atomic) and flushed to disk; a file already at a final name gets a
hard link (or copy) as its backup. Then a commit record listing temporary -> final names is
written and flushed (`clearway.exporters.journal`): that is the commit point. The renames
follow, the record is removed, and so are the backups.

- An interrupt (SIGINT, SIGTERM, SIGHUP) is deferred by a Python-level handler while the
  folder is being changed; Python runs handlers on the main thread only, whichever thread the
  kernel delivered the signal to. Before the commit point the temporary files are removed and
  the previous set stays; after it the new set is completed. Either way the signal is then
  delivered as it would have been (KeyboardInterrupt, the caller's handler, or the default).
- An OSError during the renames puts the previous set back from the backups.
- A build killed outright (SIGKILL, power loss) leaves the record; the next build into the
  folder, or any clearway command that reads it (`finish_interrupted_set`), completes the set
  before doing anything else.

An exclusive ``flock`` on the folder is held from before the first temporary file to after the
last rename, so two builds into one folder never interleave their files (the set that lands
last is whole), and any record or temporary file found while holding it belongs to no live
build.

POSIX only (Linux, macOS, the BSDs): the lock is ``flock``, and the commit relies on fsync of
a folder. On Windows this module imports (so rendering works), but `write_outputs` raises
OSError saying the system is not supported.
"""

from __future__ import annotations

import contextlib
import errno
import os
import shutil
import signal
import stat
import tempfile
import threading
from pathlib import Path

try:
    import fcntl
except ImportError:                    # Windows: no flock; see the module docstring
    fcntl = None

from clearway.exporters import journal
from clearway.exporters.journal import TEMP_PREFIX, TEMP_SUFFIX

__all__ = ["write_outputs", "finish_interrupted_set", "TEMP_PREFIX", "TEMP_SUFFIX"]

#: Signals held back while the folder changes; each ends or interrupts the process by default.
DEFERRED_SIGNALS = tuple(getattr(signal, name) for name in ("SIGINT", "SIGTERM", "SIGHUP")
                         if hasattr(signal, name))


def _check_names(files) -> None:
    if not isinstance(files, dict):
        raise TypeError(f"files must be a dict of name -> bytes, got {type(files).__name__}")
    for name, content in files.items():
        if (not isinstance(name, str) or not name or name in (".", "..")
                or "/" in name or os.sep in name or "\0" in name):
            raise ValueError(f"output file name must be a plain file name, got {name!r}")
        if name.startswith(TEMP_PREFIX):
            raise ValueError(f"output file name must not start with {TEMP_PREFIX!r}, "
                             f"got {name!r}")
        if not isinstance(content, (bytes, bytearray)):
            raise TypeError(f"{name}: content must be bytes, got {type(content).__name__}")


def _final_mode(path: Path) -> int:
    try:
        return stat.S_IMODE(path.stat().st_mode)      # keep the mode of the file replaced
    except FileNotFoundError:
        return 0o644


@contextlib.contextmanager
def _folder_lock(folder: Path):
    if fcntl is None:
        raise OSError(errno.ENOTSUP, "writing outputs needs a POSIX system (Linux, macOS); "
                      "Windows is not supported")
    descriptor = os.open(folder, os.O_RDONLY)
    try:
        fcntl.flock(descriptor, fcntl.LOCK_EX)
        yield descriptor
    finally:
        os.close(descriptor)          # closing releases the lock


@contextlib.contextmanager
def _signals_deferred():
    """Record SIGINT, SIGTERM and SIGHUP instead of acting on them; act on them at the end.

    Yields the list of signals caught so far. A Python-level handler is used rather than a
    thread's signal mask: the kernel may hand a process-directed signal to any thread (BLAS
    workers included), but Python always runs the handler on the main thread. Outside the
    main thread no handler can be installed; the main thread's own handlers then apply and
    cannot interrupt this thread.
    """
    caught: list[int] = []
    if threading.current_thread() is not threading.main_thread():
        yield caught
        return
    previous = {}
    try:
        for signum in DEFERRED_SIGNALS:
            handler = signal.getsignal(signum)
            if handler is None or handler == signal.SIG_IGN:
                continue                       # installed outside Python, or ignored
            previous[signum] = signal.signal(signum, lambda number, frame:
                                             caught.append(number))
        yield caught
    finally:
        for signum, handler in previous.items():
            signal.signal(signum, handler)
        for signum in dict.fromkeys(caught):
            signal.raise_signal(signum)        # runs the restored handler now


def write_outputs(outdir, files: dict[str, bytes]) -> list[Path]:
    """Write `files` into `outdir` as one set: afterwards the folder holds all of them or,
    on failure or interrupt, the previous set byte for byte.

    Parameters
    ----------
    outdir : str or path-like
        Output folder; created (with parents) when missing.
    files : dict of str to bytes
        File name (no folder part, not starting with ``.clearway-``) -> complete content.

    Returns
    -------
    list of Path
        The final paths, in the order of `files`.

    Raises
    ------
    OSError
        The folder cannot be created or written; no temporary file is left behind and no
        existing output was changed. (If even putting the previous set back fails, the
        commit record stays and the next clearway command in the folder completes the new
        set.)
    """
    _check_names(files)
    folder = Path(outdir)
    folder.mkdir(parents=True, exist_ok=True)
    entries: list[tuple[str, str, str | None]] = []
    committed = False
    with _folder_lock(folder) as descriptor, _signals_deferred() as caught:
        journal.finish(folder, descriptor)            # a set that a killed build left
        try:
            _stage(folder, files, entries, caught)
            if not caught:                            # else: stop before the commit point
                committed = True
                _commit(folder, descriptor, entries)
            else:
                journal.remove_temporaries(folder)
        except BaseException:
            # signals are still deferred, so a second Ctrl-C cannot cut this short; with no
            # record this removes the temporary files, with one it completes what it says
            with contextlib.suppress(OSError):
                journal.finish(folder, descriptor)
            raise
    if not committed:  # the signal's handler did not end the run: say nothing was written
        raise InterruptedError(errno.EINTR, "interrupted before the outputs were replaced")
    return [folder / name for name in files]


def _stage(folder: Path, files, entries, caught) -> None:
    """Write each file to a temporary name and back up the file it will replace."""
    for name, content in files.items():
        if caught:
            return
        final = folder / name
        handle, temporary = tempfile.mkstemp(prefix=f"{TEMP_PREFIX}{name}.", suffix=TEMP_SUFFIX,
                                             dir=folder)
        with os.fdopen(handle, "wb") as file:
            file.write(content)
            file.flush()
            os.fchmod(file.fileno(), _final_mode(final))
            os.fsync(file.fileno())
        backup = None
        if os.path.lexists(final):
            backup = Path(temporary).name[:-len(TEMP_SUFFIX)] + ".old" + TEMP_SUFFIX
            _back_up(final, folder / backup)
        entries.append((Path(temporary).name, name, backup))


def _back_up(final: Path, backup: Path) -> None:
    if final.is_dir() and not final.is_symlink():
        raise IsADirectoryError(errno.EISDIR, "an output name is a folder", str(final))
    try:
        os.link(final, backup, follow_symlinks=False)
    except OSError:                                    # a file system without hard links
        shutil.copy2(final, backup, follow_symlinks=False)
        if not backup.is_symlink():
            with open(backup, "rb") as file:
                os.fsync(file.fileno())


def _commit(folder: Path, descriptor: int, entries) -> None:
    """Write the commit record, rename every file, remove the record; undo on OSError."""
    journal.write_record(folder, descriptor, entries, "redo")     # the commit point
    try:
        journal.redo(folder, entries)
        os.fsync(descriptor)
        os.unlink(folder / journal.JOURNAL_NAME)
        os.fsync(descriptor)
    except OSError as err:
        try:
            journal.write_record(folder, descriptor, entries, "undo")
            journal.undo(folder, entries)
            os.fsync(descriptor)
            os.unlink(folder / journal.JOURNAL_NAME)
            os.fsync(descriptor)
        except OSError:
            err.strerror = (f"{err.strerror or err}; the outputs are half replaced, and the "
                            "next clearway command in this folder finishes the set")
            raise err from None
        raise
    with contextlib.suppress(OSError):                 # backups left now go with the next run
        journal.remove_temporaries(folder)


def finish_interrupted_set(outdir) -> bool:
    """Complete an output set that a killed build left half written in `outdir`.

    Cheap when there is nothing to do (one folder listing). Waits while a build holds the
    folder's lock. A folder that cannot be changed (read-only, missing) is left as it is.
    Returns True when an interrupted set was found and completed.
    """
    folder = Path(outdir)
    try:
        if not any(journal.is_temporary(name) or name == journal.JOURNAL_NAME
                   for name in os.listdir(folder)):
            return False
        with _folder_lock(folder) as descriptor, _signals_deferred():
            return journal.finish(folder, descriptor)
    except OSError:
        return False
