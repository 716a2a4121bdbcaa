"""The `clearway` command line: thin wrappers that parse options, call the library, write.

The group `main` and `layers` live here; `build` (clearway.cli_build), `route` and
`compare` (clearway.cli_graphs) and `view` (clearway.cli_view) are registered on it below.
"""

from __future__ import annotations

import os
import signal
import sys

import click

from clearway import __version__
from clearway.cli_build import build
from clearway.cli_common import InputError, converter_options, drawing_options, terminal_text
from clearway.cli_errors import escaped_error
from clearway.cli_graphs import compare, route
from clearway.cli_view import view
from clearway.errors import ClearwayError

__all__ = ["main", "script", "InputError", "drawing_options", "converter_options"]


class OneLineErrorGroup(click.Group):
    """A click group whose usage errors, like every input error, print exactly one line.

    click's own display adds the usage and a hint (three lines); a script reading stderr
    wants the cause alone, with exit code 2 as before. An exception a command did not expect
    is exit 2 when the input caused it and exit 3 otherwise (`clearway.cli_errors`).
    """

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True,
             **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        previous = signal.getsignal(signal.SIGINT)
        _INTERRUPTED.clear()                 # one command's interrupts
        if previous is signal.default_int_handler:
            signal.signal(signal.SIGINT, _note_interrupt)
        try:
            result = super().main(args, prog_name, complete_var, standalone_mode=False,
                                  **extra)
        except click.exceptions.NoArgsIsHelpError as err:
            click.echo(err.format_message())         # bare `clearway`: the help, on stdout
            sys.exit(0)
        except click.UsageError as err:
            where = f"{err.ctx.command_path}: " if err.ctx is not None else ""
            click.echo(terminal_text(f"Error: {where}{err.format_message()}"), err=True)
            sys.exit(err.exit_code)
        except click.ClickException as err:
            click.echo(terminal_text(f"Error: {err.format_message()}"), err=True)
            sys.exit(err.exit_code)
        except click.Abort:
            click.echo("Aborted.", err=True)
            sys.exit(1)
        finally:
            if previous is signal.default_int_handler:
                signal.signal(signal.SIGINT, previous)
        sys.exit(result if isinstance(result, int) else 0)

    def invoke(self, ctx):
        try:
            return super().invoke(ctx)
        except (click.ClickException, click.exceptions.Exit, click.Abort):
            raise
        except Exception as err:       # KeyboardInterrupt and SystemExit pass untouched
            if _INTERRUPTED:
                # an interrupt inside a compiled module's import comes back as an
                # ImportError with no trace of it: it is still an interrupt, not a bug
                raise KeyboardInterrupt from None
            raise escaped_error(err, debug=ctx.params.get("debug", False)) from None


#: Set once Ctrl-C (SIGINT) has reached a command run from the terminal.
_INTERRUPTED: list[int] = []


def _note_interrupt(signum, frame):
    """Python's own SIGINT behaviour (raise KeyboardInterrupt), remembering that it came."""
    _INTERRUPTED.append(signum)
    raise KeyboardInterrupt


@click.group(cls=OneLineErrorGroup, context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="clearway")
@click.option("--debug", is_flag=True,
              help="On an internal error (exit 3), print the traceback instead of saving it.")
def main(debug):
    """Turn a DXF floor plan into a weighted graph of safe robot lanes.

    The graph is a planning aid: verify it on site, under ISO 3691-4, the robot
    maker's safety manual and local codes, by qualified people.
    """


def _format_layer_table(table) -> str:
    lines = [f"{table.source}: units {table.units} ({table.m_per_unit:g} m per unit). "
             f"{table.unit_note}",
             f"{'LAYER':<24} {'ROLE':<9} {'STATE':<7} {'CLOSED':>6} {'OPEN':>5}  "
             f"{'EXTENTS (m)':<35} ENTITIES"]
    for row in table.layers:
        state = "frozen" if row.frozen else "off" if row.off else "-"
        extents = ("{:.2f},{:.2f} .. {:.2f},{:.2f}".format(*row.extents)
                   if row.extents else "-")
        entities = ", ".join(f"{name} {count}" for name, count in row.entities) or "-"
        lines.append(f"{row.name:<24} {row.role or '-':<9} {state:<7} {row.closed:>6} "
                     f"{row.open:>5}  {extents:<35} {entities}")
    lines.append(f"Model space only; entities on frozen or off layers are ignored; "
                 f"{table.paperspace} paper-space entities ignored.")
    lines += [f"unit evidence: {line}" for line in table.unit_evidence]
    if len(table.views) > 1:
        for drawing in table.views:
            x0, y0, x1, y1 = (value * table.m_per_unit for value in drawing.extents)
            mark = "built" if drawing.chosen else "left out"
            lines.append(f"drawing at ({x0:.1f}, {y0:.1f})-({x1:.1f}, {y1:.1f}) m: "
                         f"{drawing.parts} parts, {drawing.swings} door swings"
                         f"{f', {drawing.faces} wall faces' if drawing.faces else ''}; {mark} "
                         f"(drawing units {','.join(f'{v:.6g}' for v in drawing.extents)})")
    lines += [f"warning: {warning}" for warning in table.warnings]
    return "\n".join(lines)


@main.command()
@click.argument("drawing")
@click.option("--json", "as_json", is_flag=True, help="Print the table as JSON on stdout.")
@drawing_options
def layers(drawing, as_json, **options):
    """List the layers of DRAWING with their entities, extents and layer roles.

    Counts are model-space entities by DXF type (an INSERT counts once, on its own
    layer); CLOSED and OPEN count closed and open linework; extents are in metres.
    Use it to choose the patterns for --openings, --stairs, --walls, --racking,
    --keepout, --boundary, --stations and --shared. It also tells the unit and what the
    drawing's content says about it, and the separate drawings found in model space.
    """
    from clearway.converter import list_layers     # the converter only: no roadmap stage
    try:
        kwargs = converter_options(options)
        table = list_layers(drawing, roles=kwargs["roles"], units=kwargs["units"],
                            limits=kwargs["limits"], region=kwargs.get("region"))
    except ClearwayError as err:
        raise InputError(str(err)) from None
    text = table.to_json() if as_json else "\n".join(
        terminal_text(line) for line in _format_layer_table(table).splitlines())
    click.echo(text)


for _command in (build, route, compare, view):
    main.add_command(_command)


def script():
    """Run the command line as a process of its own: the `clearway` script, `python -m clearway`.

    When the command has finished (its outputs written and closed, its exit code set), the
    process ends without Python's finalization (:func:`os._exit`, once the standard streams
    are flushed), which would only free memory the system reclaims at once: tearing the
    modules down frees the drawing, the roadmap and the outputs' trees one object at a
    time (whole builds of the mixed suite floor, paired: 3.32x -> 3.24x the bare parse at
    5,000 bays, 4.25x -> 4.20x at 20,000). The objects still alive are first moved out of
    the cyclic garbage collector's reach (:func:`gc.freeze`), for the way out below.
    Nothing that the command needs is left to run at exit: every output is written and
    renamed before the command returns, and every forked child has been reaped. From then
    on SIGINT and SIGTERM are ignored: there is nothing left for them to stop (Ctrl-C just
    as a build ended printed a traceback from logging's exit handler). Where a stream
    cannot be flushed (a reader that went away), the process exits the usual way, without
    Python's last full collection (0.04 to 0.13 s of CPU on the 5,000-bay suite drawings).
    In process (click's CliRunner, the library) nothing of this happens: call :data:`main`
    there.
    """
    import gc

    try:
        main(prog_name="clearway")
    except SystemExit as stop:
        code = stop.code
    else:
        code = 0
    finally:
        # the command is done (or has stopped): an interrupt now has nothing left to stop,
        # and would only print a traceback from the way out
        for signum in (signal.SIGINT, signal.SIGTERM):
            signal.signal(signum, signal.SIG_IGN)
        gc.freeze()
    if code is None:
        code = 0
    elif not isinstance(code, int):
        print(code, file=sys.stderr)
        code = 1
    try:
        sys.stdout.flush()
        sys.stderr.flush()
    except (OSError, ValueError):
        raise SystemExit(code) from None
    os._exit(code)
