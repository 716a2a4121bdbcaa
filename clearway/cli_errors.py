"""Exit codes that tell the truth: 2 for input the user can fix, 3 for a bug in clearway.

A command turns the errors it expects into `InputError` itself. Whatever else escapes it is
sorted here: a `ClearwayError` (bad input, by definition) or an OSError on the user's files is
still exit 2 with one line; anything else is an internal error, exit 3, with one line that says
so and names a file holding the full traceback (``--debug`` prints it instead). Outputs are
untouched either way: they are only ever written as a whole set.
"""

from __future__ import annotations

import sys

import click

from clearway import __version__
from clearway.cli_common import InputError, terminal_text
from clearway.errors import ClearwayError

#: Where saved tracebacks go, and how their files are named.
TRACEBACK_PREFIX = "clearway-traceback-"


class InternalError(click.ClickException):
    """A bug in clearway, not a problem with the input: exit code 3, one line on stderr."""

    exit_code = 3

    def __init__(self, message: str) -> None:
        super().__init__(terminal_text(message))


def escaped_error(err: Exception, *, debug: bool) -> click.ClickException:
    """Return the one-line error to report for `err`, which escaped a command."""
    import traceback                  # here and below: nothing of this slows start-up
    if isinstance(err, ClearwayError):
        return InputError(str(err))
    if isinstance(err, OSError):
        subject = err.filename if err.filename is not None else "clearway"
        return InputError(f"{subject}: {err.strerror or err}")
    what = f"internal error in clearway {__version__} (a bug, not a problem with your input): " \
           f"{type(err).__name__}: {err}"
    if debug:
        traceback.print_exception(err, file=sys.stderr)
        return InternalError(f"{what}; the traceback is above")
    try:
        path = save_traceback(err)
    except OSError as failure:
        return InternalError(f"{what}; the traceback could not be saved ({failure.strerror}), "
                             "run again with --debug to see it")
    return InternalError(f"{what}; full traceback in {path} (please report it)")


def save_traceback(err: BaseException) -> str:
    """Write the traceback of `err`, with the command and versions, to a new private file."""
    import os
    import platform
    import shlex
    import tempfile
    import traceback
    descriptor, path = tempfile.mkstemp(prefix=TRACEBACK_PREFIX, suffix=".txt")
    with os.fdopen(descriptor, "w", encoding="utf-8") as file:
        file.write(f"clearway {__version__}, Python {platform.python_version()}, "
                   f"{platform.platform()}\n")
        file.write(f"command: {shlex.join(['clearway', *sys.argv[1:]])}\n\n")
        file.write("".join(traceback.format_exception(err)))
    return path
