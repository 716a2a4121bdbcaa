"""The `clearway` command line: thin wrappers that parse options, call the library, write."""

from __future__ import annotations

import contextlib
import datetime
import functools
import json
import math
import os
import signal
import sys
import tempfile
import threading

import click
from networkx import NetworkXNoPath

from clearway import __version__
from clearway.config import load_config
from clearway.errors import ClearwayError, ConfigError
from clearway.limits import Limits
from converter import ROLE_OPTION_NAMES, UNITS_TO_M, Roles, list_layers, read_floorplan
from exporters import (check_anchor, read_graphml, render_compare_svg, render_geojson,
                       render_graphml, render_report, render_svg, summarize, write_outputs)
from roadmap import (ROUTE_METHODS, Robot, build_roadmap, carry_ids_over, compare_graphs,
                     distance_matrix, shortest_route, summarize_changes)


class InputError(click.ClickException):
    """Bad input or usage: exactly one line on stderr, exit code 2."""

    exit_code = 2


class OneLineErrorGroup(click.Group):
    """A click group whose usage errors, like every input error, print exactly one line.

    click's own display adds the usage and a hint (three lines); a script reading stderr
    wants the cause alone, with exit code 2 as before.
    """

    def main(self, args=None, prog_name=None, complete_var=None, standalone_mode=True,
             **extra):
        if not standalone_mode:
            return super().main(args, prog_name, complete_var, standalone_mode=False, **extra)
        try:
            result = super().main(args, prog_name, complete_var, standalone_mode=False,
                                  **extra)
        except click.exceptions.NoArgsIsHelpError as err:
            click.echo(err.format_message())         # bare `clearway`: the help, on stdout
            sys.exit(0)
        except click.UsageError as err:
            where = f"{err.ctx.command_path}: " if err.ctx is not None else ""
            click.echo(f"Error: {where}{err.format_message()}", err=True)
            sys.exit(err.exit_code)
        except click.ClickException as err:
            err.show()
            sys.exit(err.exit_code)
        except click.Abort:
            click.echo("Aborted.", err=True)
            sys.exit(1)
        sys.exit(result if isinstance(result, int) else 0)


@click.group(cls=OneLineErrorGroup, context_settings={"help_option_names": ["-h", "--help"]})
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
                               help="TOML file with [layers], [drawing], [robot], [checks] and "
                                    "[limits] settings.")]
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
    line override it key by key; the file's [limits] section becomes ``limits``. Raises
    ConfigError for a bad file or value.
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
    try:
        limits = Limits.from_config(config["limits"])
    except ConfigError as err:
        raise ConfigError(f"{options.get('config')}: {err}") from None
    return {"roles": roles, "units": units, "limits": limits, **drawing}


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
        table = list_layers(drawing, roles=kwargs["roles"], units=kwargs["units"],
                            limits=kwargs["limits"])
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
@click.option("--comfort-clearance", type=float,
              help="Clearance below which a lane is a pinch point, metres [default: the "
                   "new graph's required clearance + 0.2 m, else 0.6 m].")
@click.option("--match-tolerance", type=float, default=1.0, show_default=True,
              help="Farther than this from any old node, a node counts as added, metres.")
def compare(old, new, as_json, svg_path, comfort_clearance, match_tolerance):
    """Show what changed between the lane graphs OLD.graphml and NEW.graphml."""
    old_graph, new_graph = _read_graph(old), _read_graph(new)
    try:
        changes = compare_graphs(old_graph, new_graph, comfort_clearance=comfort_clearance,
                                 match_tolerance=match_tolerance)
        picture = (render_compare_svg(old_graph, new_graph, changes,
                                      title=f"{_short_name(old)} -> {_short_name(new)}")
                   if svg_path else None)
    except ValueError as err:
        raise InputError(str(err)) from None
    if picture is not None:
        try:
            _replace_file(svg_path, picture)
        except OSError as err:
            raise InputError(f"{svg_path}: cannot write ({err.strerror})") from None
    click.echo(changes.to_json() if as_json else summarize_changes(changes), nl=False)


def _short_name(path: str) -> str:
    """The file name with its folder (revisions are often roadmap.graphml in two folders)."""
    return os.path.join(os.path.basename(os.path.dirname(os.path.abspath(path))),
                        os.path.basename(path))


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


#: The files `build` writes, in the order they are rendered.
BUILD_FILES = ("roadmap.graphml", "roadmap.geojson", "roadmap.svg", "report.json")


def _metres(name: str, value, *, allow_zero: bool = False) -> float | None:
    """Parse an option or config value in metres; None stays None."""
    if value is None:
        return None
    try:
        number = float(value)
    except (TypeError, ValueError):
        raise InputError(f"{name} must be a number of metres, got {value!r}") from None
    if not (math.isfinite(number) and (number >= 0 if allow_zero else number > 0)):
        raise InputError(f"{name} must be {'>=' if allow_zero else '>'} 0 m, got {value}")
    return number


def _build_robot(config: dict, robot_radius, robot_size, margin):
    """The robot from the options, else from [robot] of the config file, else the defaults."""
    if robot_radius is not None and robot_size is not None:
        raise InputError("--robot-radius and --robot-size exclude each other; pass one")
    section = config.get("robot", {})
    margin = (_metres("--margin", margin, allow_zero=True) if margin is not None
              else _metres("[robot] margin", section.get("margin", 0.10), allow_zero=True))
    if robot_size is not None:
        parts = robot_size.lower().split("x")
        if len(parts) != 2:
            raise InputError(f"--robot-size must be LENGTHxWIDTH in metres (e.g. 1.0x0.6), "
                             f"got {robot_size!r}")
        return Robot.rectangle(_metres("--robot-size length", parts[0]),
                               _metres("--robot-size width", parts[1]), margin=margin)
    if robot_radius is None and "length" in section and "width" in section:
        return Robot.rectangle(_metres("[robot] length", section["length"]),
                               _metres("[robot] width", section["width"]), margin=margin)
    if robot_radius is not None:
        return Robot.disc(_metres("--robot-radius", robot_radius), margin=margin)
    return Robot.disc(_metres("[robot] radius", section.get("radius", 0.35)), margin=margin)


def _parse_anchor(value: str | None):
    if value is None:
        return None
    try:
        return check_anchor(tuple(float(part) for part in value.split(",")))
    except ValueError as err:
        raise InputError(f"--anchor {value}: {err}; expected LAT,LON,BEARING in degrees, "
                         "e.g. 48.137,11.575,30") from None


def _today() -> str:
    """Today's date, ISO 8601; SOURCE_DATE_EPOCH (reproducible-builds.org) pins it."""
    epoch = os.environ.get("SOURCE_DATE_EPOCH")
    if epoch and epoch.isdigit():
        moment = datetime.datetime.fromtimestamp(int(epoch), datetime.timezone.utc)
        return moment.date().isoformat()
    return datetime.date.today().isoformat()


def _count(number: int, singular: str, plural: str = "") -> str:
    """'1 leak', '2 leaks'; irregular plurals given."""
    return f"{number} {singular if number == 1 else plural or singular + 's'}"


def _summary(plan, roadmap, outdir: str) -> list[str]:
    counts = summarize(plan, roadmap)
    findings = roadmap.findings
    unreachable = [s for s in findings.stations if not s.reachable]
    lines = [f"{plan.source}: {counts['counts']['edges']} lanes, "
             f"{counts['lane_length']:.1f} m in total, {counts['counts']['junctions']} junctions, "
             f"stations reached {counts['counts']['stations_reachable']}/"
             f"{counts['counts']['stations']}"]
    for station in unreachable:
        lines.append(f"  unreachable: {station.label} ({station.reason or 'no lane reaches it'})")
    if findings.pinch_points:
        pinch = min(findings.pinch_points, key=lambda p: p.clearance)
        lines.append(f"narrowest pinch: {pinch.clearance:.2f} m clearance at "
                     f"({pinch.x:.2f}, {pinch.y:.2f})")
    problems = ", ".join(_count(*item) for item in (
        (len(unreachable), "unreachable station"), (len(plan.leaks), "leak"),
        (len(findings.narrow_passages), "narrow passage"),
        (len(findings.pinch_points), "pinch point"),
        (len(findings.personnel), "lane short of personnel clearance",
         "lanes short of personnel clearance"),
        (len(plan.warnings) + len(findings.warnings), "warning")))
    lines.append(f"problems: {problems}")
    lines.append(f"files in {outdir}: {', '.join(BUILD_FILES)}")
    lines.append("planning aid: verify on site under ISO 3691-4, the robot maker's safety "
                 "manual and local codes, by qualified people")
    return lines


def _sigterm_as_exit(command):
    """Run `command` with SIGTERM raising SystemExit(143), so that cleanup code runs.

    Python's default SIGTERM ends the process at once; as an exception it unwinds through
    write_outputs, which removes its temporary files (and holds the signal back while it
    renames the finished set).
    """
    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        if threading.current_thread() is not threading.main_thread():
            return command(*args, **kwargs)

        def terminate(signum, frame):
            raise SystemExit(128 + signum)
        previous = signal.signal(signal.SIGTERM, terminate)
        try:
            return command(*args, **kwargs)
        finally:
            signal.signal(signal.SIGTERM, previous)
    return wrapper


@main.command()
@click.argument("drawing")
@click.option("-o", "--outdir", required=True, metavar="OUTDIR",
              help="Folder for roadmap.graphml, roadmap.geojson, roadmap.svg, report.json "
                   "(created when missing).")
@drawing_options
@click.option("--robot-radius", metavar="M",
              help="Disc robot radius, metres [default 0.35, or [robot] radius].")
@click.option("--robot-size", metavar="LxW",
              help="Rectangular robot, length x width in metres; lanes are checked for its "
                   "circumscribed radius.")
@click.option("--margin", metavar="M",
              help="Safety margin added to the radius, metres [default 0.10].")
@click.option("--comfort-clearance", metavar="M",
              help="Lanes with less clearance are reported as pinch points, metres "
                   "[default: required clearance + 0.2 m].")
@click.option("--anchor", metavar="LAT,LON,BEARING",
              help="WGS84 position of the drawing origin and bearing of its +Y axis (degrees): "
                   "the GeoJSON gets longitude/latitude instead of local metres.")
@click.option("--previous", metavar="OLD.graphml",
              help="Graph of the previous revision: nodes within 0.25 m of an old node of "
                   "the same kind (and label) keep its id, lanes between them keep theirs.")
@click.option("--strict", is_flag=True,
              help="Exit 1 (after writing) when a station is unreachable or free space leaks.")
@click.option("-q", "--quiet", is_flag=True, help="Print only errors.")
@_sigterm_as_exit
def build(drawing, outdir, robot_radius, robot_size, margin, comfort_clearance, anchor,
          previous, strict, quiet, **options):
    """Build the lane graph of DRAWING into OUTDIR.

    Writes roadmap.graphml, roadmap.geojson, roadmap.svg and report.json as one set: all
    four are rendered first and replace earlier outputs only when every one succeeded.
    Exit 0 when built, 1 with --strict when a station is unreachable or free space leaks,
    2 for bad input.
    """
    def say(message: str) -> None:
        if not quiet:
            click.echo(message, err=True)

    try:
        config = load_config(options.get("config"))
        robot = _build_robot(config, robot_radius, robot_size, margin)
        checks = config.get("checks", {})
        comfort = (_metres("--comfort-clearance", comfort_clearance)
                   if comfort_clearance is not None
                   else _metres("[checks] comfort_clearance", checks.get("comfort_clearance")))
        anchor = _parse_anchor(anchor)
        previous_graph = read_graphml(previous) if previous else None
        # said once read, so that a drawing refused by the reader gives one line only
        plan = read_floorplan(drawing, **converter_options(options))
        say(f"read {drawing}: units {plan.units}, "
            f"{sum(len(p.geoms) for p in plan.obstacles.values())} obstacle polygons, "
            f"{len(plan.stations)} stations")
        roadmap = build_roadmap(
            plan.obstacles, plan.free_space, [(s.label, s.x, s.y) for s in plan.stations],
            robot=robot, shared_zones=plan.regions["shared"], comfort_clearance=comfort,
            personnel_clearance=float(checks.get("personnel_clearance", 0.5)),
            low_clearance_penalty=float(checks.get("low_clearance_penalty", 0.0)),
            progress=lambda *stage: say("  " + " ".join(str(part) for part in stage)))
        if previous_graph is not None:
            say(f"  ids carried over from {previous}")
            roadmap = carry_ids_over(roadmap, previous_graph)
        say("rendering roadmap.graphml, roadmap.geojson, roadmap.svg, report.json")
        files = dict(zip(BUILD_FILES, (
            render_graphml(plan, roadmap), render_geojson(plan, roadmap, anchor=anchor),
            render_svg(plan, roadmap, date=_today()), render_report(plan, roadmap))))
    except (ClearwayError, ValueError) as err:     # ValueError: a library's bad-value check
        raise InputError(str(err)) from None
    except OSError as err:
        raise InputError(f"{err.filename or drawing}: {err.strerror or err}") from None
    try:
        write_outputs(outdir, files)
    except OSError as err:
        raise InputError(f"{outdir}: cannot write outputs ({err.strerror or err})") from None
    for line in _summary(plan, roadmap, outdir):
        say(line)
    unreachable = sum(1 for s in roadmap.findings.stations if not s.reachable)
    if strict and (unreachable or plan.leaks):
        click.echo(f"strict: {_count(unreachable, 'unreachable station')}, "
                   f"{_count(len(plan.leaks), 'leak')}; outputs written to {outdir}", err=True)
        click.get_current_context().exit(1)
