"""The `clearway` command line: thin wrappers that parse options, call the library, write."""

from __future__ import annotations

import contextlib
import json
import math
import os
import sys
import tempfile

import click
from networkx import NetworkXNoPath

from clearway import __version__
from clearway.config import load_config
from clearway.errors import ClearwayError, ConfigError
from converter import ROLE_OPTION_NAMES, UNITS_TO_M, Roles, list_layers
from exporters import read_graphml, render_compare_svg
from roadmap import (ROUTE_METHODS, compare_graphs, distance_matrix, shortest_route,
                     summarize_changes)


class InputError(click.ClickException):
    """Bad input or usage: exactly one line on stderr, exit code 2."""

    exit_code = 2


@click.group(context_settings={"help_option_names": ["-h", "--help"]})
@click.version_option(__version__, prog_name="clearway")
def main():
    """Turn a DXF floor plan into a weighted graph of safe robot lanes.

    The graph is a planning aid: verify it on site, under ISO 3691-4, the robot
    maker's safety manual and local codes, by qualified people.
    """


#: Drawing settings a config file's [drawing] section may hold, passed to read_floorplan.
_DRAWING_KEYS = ("chord_tolerance", "gap_tolerance", "max_wall_thickness",
                 "nominal_wall_thickness", "label_radius")


def drawing_options(command):
    """Add --config, the layer-role options and --units to a command that reads a drawing."""
    role_help = {"walls": "wall faces, columns", "racking": "racking and shelving",
                 "keepout": "keep-out zones", "boundary": "the floor's outline",
                 "stations": "docks, chargers, pick stations",
                 "shared": "zones shared with people"}
    decorators = [click.option("--config", "config", metavar="FILE",
                               help="TOML file with [layers] and [drawing] settings.")]
    decorators += [click.option(f"--{name}", name, multiple=True, metavar="PATTERN",
                                help=f"Layer glob for {role_help[name]} (repeatable; "
                                     f"replaces the default patterns).")
                   for name in ROLE_OPTION_NAMES.values()]
    decorators.append(click.option("--units", type=click.Choice(list(UNITS_TO_M)),
                                   help="Drawing unit, overriding the header's $INSUNITS."))
    for decorator in reversed(decorators):
        command = decorator(command)
    return command


def converter_options(options: dict) -> dict:
    """Return read_floorplan's keyword arguments from command options and the config file.

    The config file (``options["config"]``) gives the base; options given on the command
    line override it key by key. Raises ConfigError for a bad file or value.
    """
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
    units = options.get("units") or drawing.pop("units", None)
    drawing.pop("units", None)
    if units is not None and units not in UNITS_TO_M:
        raise ConfigError(f"{options.get('config')}: [drawing] units must be one of "
                          f"{', '.join(UNITS_TO_M)}, got {units!r}")
    for key in _DRAWING_KEYS:
        if options.get(key) is not None:
            drawing[key] = options[key]
    return {"roles": roles, "units": units, **drawing}


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
    Use it to choose the patterns for --walls, --racking, --keepout, --boundary,
    --stations and --shared.
    """
    try:
        kwargs = converter_options(options)
        table = list_layers(drawing, roles=kwargs["roles"], units=kwargs["units"])
    except ClearwayError as err:
        raise InputError(str(err)) from None
    click.echo(table.to_json() if as_json else _format_layer_table(table))


def _replace_file(path: str, data: bytes) -> None:
    """Write `data` to `path` through a temporary file in the same folder, then rename."""
    target = os.path.abspath(path)
    handle, temporary = tempfile.mkstemp(dir=os.path.dirname(target), prefix=".clearway-")
    try:
        with os.fdopen(handle, "wb") as file:
            file.write(data)
        os.replace(temporary, target)
    except BaseException:
        with contextlib.suppress(OSError):
            os.unlink(temporary)
        raise


def _read_graph(path: str):
    try:
        return read_graphml(path)
    except ClearwayError as err:
        raise InputError(str(err)) from None


@main.command()
@click.argument("old")
@click.argument("new")
@click.option("--json", "as_json", is_flag=True, help="Print the changes as JSON on stdout.")
@click.option("--svg", "svg_path", metavar="FILE", help="Draw both graphs and the changes.")
@click.option("--comfort-clearance", type=float, default=0.6, show_default=True,
              help="Clearance below which a lane is a pinch point, metres.")
@click.option("--match-tolerance", type=float, default=1.0, show_default=True,
              help="Farther than this from any old node, a node counts as added, metres.")
def compare(old, new, as_json, svg_path, comfort_clearance, match_tolerance):
    """Show what changed between the lane graphs OLD.graphml and NEW.graphml."""
    old_graph, new_graph = _read_graph(old), _read_graph(new)
    try:
        changes = compare_graphs(old_graph, new_graph, comfort_clearance=comfort_clearance,
                                 match_tolerance=match_tolerance)
        picture = (render_compare_svg(old_graph, new_graph, changes,
                                      title=f"{os.path.basename(old)} -> "
                                            f"{os.path.basename(new)}")
                   if svg_path else None)
    except ValueError as err:
        raise InputError(str(err)) from None
    if picture is not None:
        try:
            _replace_file(svg_path, picture)
        except OSError as err:
            raise InputError(f"{svg_path}: cannot write ({err.strerror})") from None
    click.echo(changes.to_json() if as_json else summarize_changes(changes), nl=False)


def _number(value: float) -> str:
    return f"{value:.3f}" if math.isfinite(value) else "unreachable"


@main.command()
@click.argument("graph_file", metavar="GRAPH")
@click.argument("ends", nargs=-1, metavar="[FROM TO]")
@click.option("--json", "as_json", is_flag=True, help="Print the result as JSON on stdout.")
@click.option("--avoid", multiple=True, metavar="NODE",
              help="Node id or station label the route must not pass (repeatable).")
@click.option("--method", type=click.Choice(ROUTE_METHODS), default="astar",
              show_default=True, help="Search method; both find the same route cost.")
@click.option("--matrix", is_flag=True, help="Station-to-station route costs instead.")
@click.option("--csv", "csv_path", metavar="FILE", help="With --matrix: write it as CSV.")
def route(graph_file, ends, as_json, avoid, method, matrix, csv_path):
    """Find the shortest route in GRAPH from FROM to TO (station labels or node ids).

    With --matrix, give the route cost in metres between every pair of stations;
    pairs with no route are marked "unreachable" (null in JSON). Exit code 1 when
    FROM and TO are not connected.
    """
    if matrix == bool(ends) or (ends and len(ends) != 2):
        raise InputError("give FROM and TO, or --matrix (not both)")
    if (csv_path or False) and not matrix:
        raise InputError("--csv needs --matrix")
    graph = _read_graph(graph_file)
    if matrix:
        try:
            labels, costs = distance_matrix(graph)
        except ValueError as err:
            raise InputError(f"{graph_file}: {err}") from None
        rows = [["station", *labels]] + [[label, *map(_number, row)]
                                         for label, row in zip(labels, costs.tolist())]
        table = "".join(",".join(_csv_cell(cell) for cell in row) + "\r\n" for row in rows)
        if csv_path:
            try:
                _replace_file(csv_path, table.encode("utf-8"))
            except OSError as err:
                raise InputError(f"{csv_path}: cannot write ({err.strerror})") from None
        if as_json:
            cells = [[value if math.isfinite(value) else None for value in row]
                     for row in costs.tolist()]
            click.echo(json.dumps({"stations": list(labels), "unit": "m", "matrix": cells},
                                  indent=2))
        elif not csv_path:
            click.echo(table, nl=False)
        return
    try:
        found = shortest_route(graph, ends[0], ends[1], method=method, avoid=avoid)
    except ValueError as err:
        raise InputError(f"{graph_file}: {err}") from None
    except NetworkXNoPath as err:
        if as_json:
            click.echo(json.dumps({"from": ends[0], "to": ends[1], "reachable": False}))
        click.echo(f"{graph_file}: {err}", err=True)
        sys.exit(1)
    clearance = found.clearance_min if math.isfinite(found.clearance_min) else None
    if as_json:
        click.echo(json.dumps({"from": ends[0], "to": ends[1], "reachable": True,
                               "method": method, "nodes": list(found.nodes),
                               "edges": list(found.edges), "length": found.length,
                               "cost": found.cost, "clearance_min": clearance,
                               "wkt": found.geometry.wkt}, indent=2))
        return
    click.echo(f"{ends[0]} -> {ends[1]}: {found.length:.3f} m, clearance_min "
               + (f"{clearance:.3f} m" if clearance is not None else "unknown")
               + f", {len(found.nodes)} nodes")
    click.echo("nodes: " + " ".join(found.nodes))
    click.echo(found.geometry.wkt)


def _csv_cell(text: str) -> str:
    text = str(text)
    if any(char in text for char in ',"\r\n') or text[:1] in ("=", "+", "-", "@"):
        return '"' + text.replace('"', '""') + '"'
    return text
