"""Write a set of output files so that readers see either the old set or the new one.

Every file is first written in full to a temporary name in the output folder (same file
system, so the rename is atomic) and flushed to disk. Only when all of them succeeded are they
renamed over the final names, one after the other, while SIGINT / SIGTERM are held back (so
an interrupt cannot split the set). An exclusive ``flock`` on the folder is held from the first
temporary file to the last rename, so two builds into the same folder never interleave their
files (the set that lands last is whole), and temporary files that a killed build left behind
(SIGKILL, power loss) are removed by the next build into that folder.
On any failure (including KeyboardInterrupt) before the renames, the temporary files are
removed and the previous outputs are left exactly as they were.

POSIX only (Linux, macOS, the BSDs): the lock is ``flock``, and the renames rely on POSIX
signal masks and on fsync of a folder. On Windows this module imports (so rendering works),
but `write_outputs` raises OSError saying the system is not supported.
"""

from __future__ import annotations

import contextlib
import errno
import os
import signal
import stat
import tempfile
import threading
from pathlib import Path

try:
    import fcntl
except ImportError:                    # Windows: no flock; see the module docstring
    fcntl = None

#: Prefix and suffix of the temporary files (hidden, easy to recognise and clean up).
TEMP_PREFIX = ".clearway-"
TEMP_SUFFIX = ".part"


def _check_names(files) -> None:
    if not isinstance(files, dict):
        raise TypeError(f"files must be a dict of name -> bytes, got {type(files).__name__}")
    for name, content in files.items():
        if (not isinstance(name, str) or not name or name in (".", "..")
                or "/" in name or os.sep in name or "\0" in name):
            raise ValueError(f"output file name must be a plain file name, got {name!r}")
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
def _signals_held():
    """Hold SIGINT and SIGTERM back during the renames, so that they land as a whole set.

    A signal that arrives meanwhile is delivered (KeyboardInterrupt, or the SIGTERM
    handler) right after the last rename.
    """
    held = {signal.SIGINT, signal.SIGTERM}
    if threading.current_thread() is not threading.main_thread():
        yield                          # signals are only handled in the main thread
        return
    previous = signal.pthread_sigmask(signal.SIG_BLOCK, held)
    try:
        yield
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, previous)


def write_outputs(outdir, files: dict[str, bytes]) -> list[Path]:
    """Write `files` into `outdir` as one set, atomically per file and in order.

    Parameters
    ----------
    outdir : str or path-like
        Output folder; created (with parents) when missing.
    files : dict of str to bytes
        File name (no folder part) -> complete content.

    Returns
    -------
    list of Path
        The final paths, in the order of `files`.

    Raises
    ------
    OSError
        The folder cannot be created or written; no temporary file is left behind and no
        existing output was changed.
    """
    _check_names(files)
    folder = Path(outdir)
    folder.mkdir(parents=True, exist_ok=True)
    temporaries: list[tuple[Path, Path]] = []
    with _folder_lock(folder) as descriptor:
        _remove_stale_temporaries(folder)
        try:
            _write_set(folder, files, temporaries, descriptor)
        except BaseException:
            for temporary, _ in temporaries:
                with contextlib.suppress(FileNotFoundError):
                    temporary.unlink()
            # an interrupt between mkstemp creating a file and its name being recorded
            # leaves one more; under the lock every temporary file in the folder is ours
            _remove_stale_temporaries(folder)
            raise
    return [final for _, final in temporaries]


def _remove_stale_temporaries(folder: Path) -> None:
    """Remove temporary files of builds that died; only called while holding the lock."""
    for stale in folder.glob(f"{TEMP_PREFIX}*{TEMP_SUFFIX}"):
        with contextlib.suppress(FileNotFoundError):
            stale.unlink()


def _write_set(folder: Path, files, temporaries, descriptor) -> None:
    for name, content in files.items():
        final = folder / name
        handle_descriptor, temporary = tempfile.mkstemp(
            prefix=f"{TEMP_PREFIX}{name}.", suffix=TEMP_SUFFIX, dir=folder)
        temporaries.append((Path(temporary), final))
        with os.fdopen(handle_descriptor, "wb") as handle:
            handle.write(content)
            handle.flush()
            os.fchmod(handle.fileno(), _final_mode(final))
            os.fsync(handle.fileno())
    with _signals_held():
        for temporary, final in temporaries:
            os.replace(temporary, final)
        os.fsync(descriptor)              # make the renames themselves durable
