"""The commit record of an output set: which temporary file becomes which final name.

`write_outputs` stages every file of a set under a temporary name, then writes this record
(``.clearway-journal``, itself through a temporary file, flushed to disk and renamed into
place). The rename of the record is the commit point: from then on the set is complete on
disk, and whoever holds the folder's lock next finishes it, in the same process or after a
crash (SIGKILL, power loss). Each entry names a temporary file, its final name and, when the
final name already held a file, a hard link (or copy) of that file, so that a set whose
renames fail half way can be put back as it was.

Both directions are idempotent: a process killed while redoing or undoing leaves a record that
the next one applies again from wherever the first one stopped.
"""

from __future__ import annotations

import contextlib
import json
import os
import tempfile
from pathlib import Path

#: Prefix and suffix of every temporary file (hidden, easy to recognise and clean up).
TEMP_PREFIX = ".clearway-"
TEMP_SUFFIX = ".part"
#: The commit record's name in the output folder.
JOURNAL_NAME = ".clearway-journal"
_FORMAT = "clearway output journal 1"


def is_temporary(name: str) -> bool:
    return name.startswith(TEMP_PREFIX) and name.endswith(TEMP_SUFFIX)


def write_record(folder: Path, descriptor: int, entries, direction: str) -> None:
    """Write the record atomically and durably: temporary file, fsync, rename, fsync folder.

    `entries` are (temporary, final, backup or None) file names; `direction` is "redo" (the
    set is committed) or "undo" (put the previous set back).
    """
    record = {"format": _FORMAT, "direction": direction,
              "entries": [list(entry) for entry in entries]}
    handle, temporary = tempfile.mkstemp(prefix=f"{JOURNAL_NAME}.", suffix=TEMP_SUFFIX,
                                         dir=folder)
    try:
        with os.fdopen(handle, "wb") as file:
            file.write(json.dumps(record).encode("utf-8"))
            file.flush()
            os.fsync(file.fileno())
        os.replace(temporary, folder / JOURNAL_NAME)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(temporary)
        raise
    os.fsync(descriptor)


def read_record(folder: Path):
    """Return (direction, entries) of the folder's record, or None when there is none.

    A record that is not one clearway wrote (or names anything but plain file names of the
    expected kinds) counts as none: it is never acted on.
    """
    try:
        record = json.loads((folder / JOURNAL_NAME).read_bytes())
    except FileNotFoundError:
        return None
    except (OSError, ValueError):
        return ("invalid", [])
    try:
        direction, entries = record["direction"], [tuple(entry) for entry in record["entries"]]
        valid = (record["format"] == _FORMAT and direction in ("redo", "undo")
                 and all(_valid_entry(*entry) for entry in entries))
    except (KeyError, TypeError, ValueError):
        valid = False
    return (direction, entries) if valid else ("invalid", [])


def _plain(name) -> bool:
    return (isinstance(name, str) and name not in ("", ".", "..")
            and "/" not in name and os.sep not in name and "\0" not in name)


def _valid_entry(temporary, final, backup) -> bool:
    return (_plain(temporary) and is_temporary(temporary) and _plain(final)
            and not final.startswith(TEMP_PREFIX)
            and (backup is None or (_plain(backup) and is_temporary(backup))))


def redo(folder: Path, entries) -> None:
    """Rename every temporary file still there over its final name."""
    for temporary, final, _ in entries:
        if os.path.lexists(folder / temporary):
            os.replace(folder / temporary, folder / final)


def undo(folder: Path, entries) -> None:
    """Put back the previous set: restore each final name from its backup, or remove it."""
    for temporary, final, backup in entries:
        if os.path.lexists(folder / temporary):          # never renamed: final is the old one
            os.unlink(folder / temporary)
        elif backup is not None:
            if os.path.lexists(folder / backup):
                os.replace(folder / backup, folder / final)
        elif os.path.lexists(folder / final):            # a name the previous set lacked
            os.unlink(folder / final)


def finish(folder: Path, descriptor: int) -> bool:
    """Apply the folder's record, if any, then remove it and every temporary file.

    Only call while holding the folder's lock: then no live build owns any of them.
    Returns True when a record was found.
    """
    found = read_record(folder)
    if found is not None:
        direction, entries = found
        if direction == "redo":
            redo(folder, entries)
        elif direction == "undo":
            undo(folder, entries)
        os.fsync(descriptor)
        os.unlink(folder / JOURNAL_NAME)
        os.fsync(descriptor)
    remove_temporaries(folder)
    return found is not None


def remove_temporaries(folder: Path) -> None:
    """Remove every temporary file in `folder` (backups of a finished set among them).

    A file that cannot be removed is tried once more after the others (a passing error need
    not leave a stray file); the second failure is raised.
    """
    for final_pass in (False, True):
        for name in os.listdir(folder):
            if is_temporary(name):
                try:
                    os.unlink(folder / name)
                except FileNotFoundError:
                    pass
                except OSError:
                    if final_pass:
                        raise
