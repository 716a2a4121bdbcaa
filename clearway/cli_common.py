"""Shared pieces of the `clearway` command line: the one-line input error and the options
of every command that reads a drawing or a graph."""

from __future__ import annotations

import math
import os
import re

import click

from clearway.config import load_config
from clearway.errors import ClearwayError, ConfigError
from clearway.limits import Limits
from clearway.converter import ROLE_OPTION_NAMES, UNITS_TO_M, Roles, check_units


#: Characters a terminal acts on instead of showing them: C0 and C1 controls (line breaks
#: and escape sequences among them), Unicode line and paragraph separators, and the
#: bidirectional formatting characters (Unicode UAX #9) that reorder the text shown.
_UNSAFE_ON_TERMINAL = re.compile(
    "[\x00-\x1f\x7f-\x9f\u061c\u200e\u200f\u2028\u2029\u202a-\u202e\u2066-\u2069]")


def terminal_text(text: object) -> str:
    r"""Return `text` with every character a terminal would act on spelled out as an escape.

    Drawings, file names and graph labels come from other people; printed raw, an ESC
    sequence or a right-to-left override in them would rewrite or reorder the line.

    Examples
    --------
    >>> terminal_text("plan\u202e.dxf: bad\nline \x1b[2J")
    'plan\\u202e.dxf: bad\\nline \\x1b[2J'
    """
    return _UNSAFE_ON_TERMINAL.sub(
        lambda match: match.group().encode("unicode_escape").decode("ascii"), str(text))


class Metres(click.FloatRange):
    """click type for a length in metres: a finite float > 0, or >= 0 with `allow_zero`.

    click's FloatRange lets nan and infinity through (no comparison fails for them); a
    length must be finite.
    """

    name = "metres"

    def __init__(self, *, allow_zero: bool = False) -> None:
        super().__init__(min=0.0, min_open=not allow_zero)

    def convert(self, value, param, ctx):
        try:
            float(value)
        except (TypeError, ValueError):
            self.fail(f"{value!r} is not a number of metres", param, ctx)
        number = super().convert(value, param, ctx)
        if not math.isfinite(number):
            self.fail(f"{value!r} is not a finite number of metres", param, ctx)
        return number


def setting(name: str, value, kind: click.ParamType):
    """Check a config file's `value` with the click type its option uses; None stays None.

    Examples
    --------
    >>> setting("[robot] margin", 0.05, Metres(allow_zero=True))
    0.05
    >>> setting("[robot] radius", -1, Metres())
    Traceback (most recent call last):
    clearway.cli_common.InputError: [robot] radius: -1.0 is not in the range x>0.0.
    """
    if value is None:
        return None
    try:
        return kind.convert(value, None, None)
    except click.BadParameter as err:
        raise InputError(f"{name}: {err.message}") from None


class InputError(click.ClickException):
    """Bad input or usage: exactly one line on stderr, exit code 2.

    The message is passed through `terminal_text`, so it stays one line whatever a drawing
    or a library put into it.
    """

    exit_code = 2

    def __init__(self, message: str) -> None:
        super().__init__(terminal_text(message))


def drawing_options(command):
    """Add --config, the layer-role options and --units to a command that reads a drawing."""
    role_help = {"openings": "doors, windows, glazing", "stairs": "stairs (impassable)",
                 "walls": "wall faces, columns", "racking": "racking and shelving",
                 "keepout": "keep-out zones", "boundary": "the floor's outline",
                 "stations": "docks, chargers, pick stations",
                 "shared": "zones shared with people"}
    decorators = [click.option("--config", "config", metavar="FILE",
                               help="TOML file with [layers], [drawing], [robot], [checks] and "
                                    "[limits] settings.")]
    decorators += [click.option(f"--{name}", name, multiple=True, metavar="PATTERN",
                                help=f"Layer glob for {role_help[name]} (repeatable; "
                                     f"replaces the default patterns).")
                   for name in ROLE_OPTION_NAMES.values()]
    decorators.append(click.option("--units", type=click.Choice(list(UNITS_TO_M)),
                                   help="Drawing unit, overriding the header's $INSUNITS and "
                                        "the unit the drawing's content suggests."))
    decorators.append(click.option("--region", metavar="X0,Y0,X1,Y1",
                                   help="Build only what lies inside this box (drawing units), "
                                        "when model space holds several drawings."))
    for decorator in reversed(decorators):
        command = decorator(command)
    return command


def converter_options(options: dict, config: dict | None = None) -> dict:
    """Return read_floorplan's keyword arguments from command options and the config file.

    The config file (``options["config"]``, or `config` when the caller has already loaded
    it) gives the base; options given on the command line override it key by key; the
    file's [limits] section becomes ``limits``. Raises ConfigError for a bad file or value.
    """
    if config is None:
        config = load_config(options.get("config"))
    patterns = dict(config["layers"])
    for name in ROLE_OPTION_NAMES.values():
        if options.get(name):
            patterns[name] = list(options[name])
    try:
        roles = Roles.from_options(**patterns)
    except ValueError as err:
        raise ConfigError(str(err)) from None
    drawing = dict(config["drawing"])
    file_units = drawing.pop("units", None)
    units = options.get("units") or file_units
    try:
        check_units(units)
    except ConfigError as err:
        raise ConfigError(f"{options.get('config')}: [drawing] {err}") from None
    region = options.get("region") or drawing.pop("region", None)
    drawing.pop("region", None)
    if region is not None:
        drawing["region"] = parse_region(region, options.get("config"))
    try:
        limits = Limits.from_config(config["limits"])
    except ConfigError as err:
        raise ConfigError(f"{options.get('config')}: {err}") from None
    return {"roles": roles, "units": units, "limits": limits, **drawing}



def parse_region(value, config=None):
    """Return (x0, y0, x1, y1) from "X0,Y0,X1,Y1" or a list of four numbers; ConfigError if not."""
    parts = value.split(",") if isinstance(value, str) else list(value)
    try:
        box = tuple(float(part) for part in parts)
    except (TypeError, ValueError):
        box = ()
    if len(box) != 4 or not all(map(math.isfinite, box)) or not (box[0] < box[2] and box[1] < box[3]):
        where = f"{config}: [drawing] region" if config and not isinstance(value, str) else "--region"
        raise ConfigError(f"{where} must be X0,Y0,X1,Y1 (drawing units) with X0 < X1 and "
                          f"Y0 < Y1, got {value!r}")
    return box


def replace_file(path: str, data: bytes) -> None:
    """Write `data` to `path` atomically, as a set of one file (``write_outputs``)."""
    from clearway.exporters import write_outputs
    target = os.path.abspath(path)
    write_outputs(os.path.dirname(target), {os.path.basename(target): data})


def read_graph(path: str):
    """Read a GraphML file, first completing an output set a killed build left beside it."""
    from clearway.exporters import finish_interrupted_set, read_graphml
    finish_interrupted_set(os.path.dirname(os.path.abspath(path)))
    try:
        return read_graphml(path)
    except ClearwayError as err:
        raise InputError(str(err)) from None

