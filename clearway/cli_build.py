"""`clearway build`: the lane graph of a drawing, written as one set of files."""

from __future__ import annotations

import functools
import importlib
import math
import signal
import threading

import click

from clearway.cli_common import (InputError, Metres, converter_options, drawing_options,
                                 read_graph, setting, terminal_text)
from clearway.cli_robot import build_robot
from clearway.collector import paused_collector
from clearway.config import COMFORT_ALLOWANCE, DEFAULTS, load_config
from clearway.errors import ClearwayError
from clearway.roadmap import ROBOT_KINDS          # a constant: the stages load when build runs

# the stages (numpy, scipy, shapely, ezdxf, ...) are imported inside the functions that call
# them, not when the command line starts: `clearway --help` stays fast


#: Imported before the drawing is read in a second process: the reader and the roadmap stage
#: both use them, and a fork shares them. scipy is not among them: the reader does without
#: it (clearway.converter.grouping), and this process imports it (about 0.35 s) while the
#: other reads.
SHARED_LIBRARIES = ("numpy", "shapely")
#: The libraries of the roadmap stage and the exporters, imported while the reader reads, in
#: steps of at most about 0.12 s: between steps this process holds back while the reader
#: parses a large drawing's two halves in two processes (clearway.converter.read,
#: HOLD_CHARACTERS), which a third process on two cores would slow.
STAGE_LIBRARIES = ("scipy.sparse", "scipy.sparse.csgraph", "scipy.spatial", "networkx",
                   "lxml.etree")
#: The files `build` writes, in the order they are rendered.
BUILD_FILES = ("roadmap.graphml", "roadmap.geojson", "roadmap.svg", "report.json", "roadmap.html")
#: Lanes from which the preview renders in a second process. The fork costs about 0.01 s; the
#: preview of `flue_sealed` at 5,000 bays (318 lanes) takes 0.32 s CPU of the outputs' 0.87 s,
#: and rendered aside its whole build took 3.93 s instead of 4.42 s (wall, medians of five,
#: loaded machine). The samples (under 100 lanes) stay in one process.
SIDE_BY_SIDE_EDGES = 200
#: Vertices of the free space and the plan's areas from which the reader draws the outputs'
#: areas while the lanes are built (clearway.exporters.floor; any number with
#: CLEARWAY_PROCESSES=2). On the mixed suite floor at 20,000 bays (126,000 vertices) the
#: whole build took 0.19 s less (median of seven paired builds), on flue_sealed (202,000)
#: 0.21 s less; at 5,000 bays (once the GraphML was written as text, which left the preview
#: the longer of the two output processes) mixed (30,000) 0.051 s less (14 of 15), current
#: (14,000), angled (11,800) and flue_open (24,000) 0.009 to 0.016 s less (7 or 8 of 11).
FLOOR_VERTICES = 10_000


def _factor(name: str, value) -> float:
    """Parse a config value that is a factor >= 0 (no unit)."""
    number = float(value)                 # the config file has checked it is a number
    if not (math.isfinite(number) and number >= 0):
        raise InputError(f"{name} must be a number >= 0, got {value}")
    return number


def _parse_anchor(value: str | None):
    from clearway.exporters import check_anchor
    if value is None:
        return None
    try:
        return check_anchor(tuple(float(part) for part in value.split(",")))
    except ValueError as err:
        raise InputError(f"--anchor {value}: {err}; expected LAT,LON,BEARING in degrees, "
                         "e.g. 48.137,11.575,30") from None


def _draw_floor(read, clearance: float, anchor):
    """In the reader, once it has sent what it read: the floor's areas as the outputs draw
    them (clearway.exporters.floor), for a plan of FLOOR_VERTICES or more; else None."""
    import shapely

    from clearway.side_by_side import forced
    plan, refused = read
    if refused is not None:
        return None
    areas = [area for area in (plan.free_space, *plan.regions.values()) if area is not None]
    if not forced() and (not areas or shapely.get_num_coordinates(areas).sum() < FLOOR_VERTICES):
        return None
    # the renderers (lxml among them) are imported by the reader only for a floor it draws
    from clearway.exporters import draw_floor
    from clearway.roadmap import drivable_floor
    return draw_floor(plan, drivable_floor(plan.free_space, clearance), anchor=anchor)


def _floor_drawn(reader):
    """The floor's areas the reader drew once it had sent the plan (``Aside.later``), or None
    where it drew none or failed: the renderers then draw the areas themselves, with the
    same code, and meet any fault of it there. Drawing them beforehand only saves time, so
    its failure (the reader out of memory, killed) must not fail the build."""
    try:
        return reader.later()
    except Exception:  # noqa: BLE001 - see above; Ctrl-C and SIGTERM still stop the build
        return None


def _drawing_date(plan) -> str:
    """The title block's date: the drawing's own, so rebuilding gives byte-identical files."""
    return f"drawing of {plan.drawing_date}" if plan.drawing_date else "drawing undated"


def _read_plan(drawing, options: dict, ahead=lambda: None):
    """``(read_floorplan(drawing, **options), None)``, or ``(None, text)`` of the ClearwayError
    it raised: from a second process the text is what matters (some such errors carry data
    that does not pickle). `ahead` gives the drawing's text read ahead, or None; it is asked
    once the converter (and ezdxf) is imported."""
    from clearway.converter import read_floorplan
    try:
        return read_floorplan(drawing, **options, ahead=ahead()), None
    except ClearwayError as err:
        return None, str(err)


def _read_ahead(drawing, options: dict):
    """The drawing's text read ahead for the reader (clearway.converter.ahead), or None."""
    from clearway.converter.ahead import read_ahead
    return read_ahead(drawing, options.get("limits"))


def _count(number: int, singular: str, plural: str = "") -> str:
    """'1 leak', '2 leaks'; irregular plurals given."""
    return f"{number} {singular if number == 1 else plural or singular + 's'}"


def _summary(plan, roadmap, outdir: str, names=BUILD_FILES, counts=None) -> list[str]:
    """The lines printed after a build (`counts`: its report data, when already made)."""
    from clearway.exporters import report_data
    counts = report_data(plan, roadmap) if counts is None else counts
    findings = roadmap.findings
    unreachable = [s for s in findings.stations if not s.reachable]
    lines = [f"{plan.source}: {counts['counts']['edges']} lanes, "
             f"{counts['lane_length']:.1f} m in total, {counts['counts']['junctions']} junctions, "
             f"stations reached {counts['counts']['stations_reachable']}/"
             f"{counts['counts']['stations']}"]
    if counts["components"] > 1:
        sizes = counts["component_nodes"]
        shown = ", ".join(str(size) for size in sizes[:5]) + (", ..." if len(sizes) > 5 else "")
        lines.append(f"separate lane networks: {counts['components']} ({shown} nodes); "
                     "no route joins them")
    for station in unreachable:
        lines.append(f"  unreachable: {station.label} ({station.reason or 'no lane reaches it'})")
    standing = [s for s in findings.stations if s.standoff > 0.0]
    if standing:
        farthest = max(standing, key=lambda s: s.standoff)
        lines.append(f"stations standing clear of their blocks: {len(standing)} (up to "
                     f"{farthest.standoff:.2f} m, {farthest.label}); the move onto the "
                     f"equipment is the robot's own docking, not checked here")
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
    if "body" in counts:
        body = counts["body"]
        rounds = sum(1 for turn in body["turns"] if turn["what"] == "turn round")
        lines.append("body: " + ", ".join(_count(*item) for item in (
            (len(body["lanes"]), "lane or link it cannot drive (dropped)",
             "lanes or links it cannot drive (dropped)"),
            (len(body["turns"]) - rounds, "turn forbidden", "turns forbidden"),
            (rounds, "turn round forbidden", "turns round forbidden"),
            (len(body["reverse_only"]), "dead end to back out of",
             "dead ends to back out of"))) + " (report.json lists them)")
    if plan.floor_doubt:
        lines.append(f"floor: {plan.floor_doubt.split(': ', 1)[-1]}")
    if plan.unit_doubt:
        lines.append(f"units: {plan.unit_doubt}")
    elif plan.unit_source in ("content", "assumed"):
        # no unit the header names (or one the content overruled): say how it was chosen
        lines.append(f"units: {plan.unit_note}")
    lines += _left_out_lines(plan.left_out)
    lines.append(f"files in {outdir}: {', '.join(names)}")
    lines.append("planning aid: verify on site under ISO 3691-4, the robot maker's safety "
                 "manual and local codes, by qualified people")
    return lines


def _left_out_lines(left_out, shown: int = 8) -> list[str]:
    """The layers no role takes, as summary lines: those without a role, then those the
    defaults leave out on purpose; each list cut at `shown` names (report.json has all)."""
    def names(layers):
        text = "; ".join(f"{layer.name} ({layer.holds}"
                         + (f", default role {layer.default_role} replaced by "
                            f"{layer.replaced_by}" if layer.replaced_by else "") + ")"
                         for layer in layers[:shown])
        return text + (f"; and {len(layers) - shown} more (report.json lists them)"
                       if len(layers) > shown else "")
    lines = []
    without = [layer for layer in left_out if not layer.ignored]
    ignored = [layer for layer in left_out if layer.ignored]
    if without:
        lines.append(f"left out, no role: {names(without)}")
    if ignored:
        lines.append(f"left out on purpose (overhead, hidden, demolished or annotation): "
                     f"{names(ignored)}")
    return lines


def _sigterm_as_exit(command):
    """Run `command` with SIGTERM raising SystemExit(143), so that cleanup code runs.

    Python's default SIGTERM ends the process at once; as an exception it unwinds through
    write_outputs, which holds the signal back while it changes OUTDIR and acts on it once
    the set is whole (the previous one, or the new one).
    """
    @functools.wraps(command)
    def wrapper(*args, **kwargs):
        if threading.current_thread() is not threading.main_thread():
            return command(*args, **kwargs)

        def terminate(signum, frame):
            _SIGNALLED.append(signum)
            raise SystemExit(128 + signum)
        previous = signal.signal(signal.SIGTERM, terminate)
        _SIGNALLED.clear()
        try:
            return command(*args, **kwargs)
        finally:
            signal.signal(signal.SIGTERM, previous)
    return wrapper


#: SIGTERMs that reached a running build (see _sigterm_as_exit).
_SIGNALLED: list[int] = []


def _stop_if_signalled() -> None:
    """Stop as the signal asked if SIGINT or SIGTERM came while modules were imported.

    A signal inside the import of a compiled module comes back as an ImportError, which a
    library importing an optional module of its own catches and forgets; the build would
    then go on to write its outputs as if nothing had been asked.
    """
    from clearway.cli import _INTERRUPTED
    if _SIGNALLED:
        raise SystemExit(128 + _SIGNALLED[-1])
    if _INTERRUPTED:
        raise KeyboardInterrupt


@click.command()
@click.argument("drawing")
@click.option("-o", "--outdir", required=True, metavar="OUTDIR",
              help="Folder for roadmap.graphml, roadmap.geojson, roadmap.svg, report.json, roadmap.html "
                   "(created when missing).")
@drawing_options
@click.option("--robot-radius", metavar="M", type=Metres(),
              help=f"Disc robot radius, metres [default {DEFAULTS['robot']['radius']}, or "
                   "[robot] radius].")
@click.option("--robot-size", metavar="LxW",
              help="Rectangular robot, length x width in metres; lanes are kept where the "
                   "body fits heading along them, turns are checked where it must turn.")
@click.option("--robot-kind", type=click.Choice(list(ROBOT_KINDS)),
              help="How the robot turns: differential (in place), car (arcs of at least "
                   "--turn-radius), omni [default differential].")
@click.option("--rotation-centre", metavar="FORWARD,LEFT",
              help="Rotation centre (drive axle) of a rectangular robot as an offset from "
                   "its centre, metres [default 0,0].")
@click.option("--turn-radius", metavar="M", type=Metres(),
              help="Car robot: smallest turning radius of the rotation centre, metres.")
@click.option("--reverse/--no-reverse", default=None,
              help="Car robot: may it back up [default yes].")
@click.option("--margin", metavar="M", type=Metres(allow_zero=True),
              help=f"Safety margin kept around the robot's body, metres "
                   f"[default {DEFAULTS['robot']['margin']:.2f}].")
@click.option("--comfort-clearance", metavar="M", type=Metres(),
              help=f"Lanes with less clearance are reported as pinch points, metres "
                   f"[default: required clearance + {COMFORT_ALLOWANCE} m].")
@click.option("--anchor", metavar="LAT,LON,BEARING",
              help="WGS84 position of the drawing origin and bearing of its +Y axis (degrees): "
                   "the GeoJSON gets longitude/latitude instead of local metres.")
@click.option("--previous", metavar="OLD.graphml",
              help="Graph of the previous revision: nodes within 0.5 m of an old node of "
                   "the same kind (and label) keep its id, lanes between them keep theirs "
                   "(compare pairs nodes within the same 0.5 m); a room holding more than half "
                   "of an old room keeps its id (rooms from roadmap.geojson beside it).")
@click.option("--no-html", is_flag=True, help="Leave out roadmap.html, the interactive viewer.")
@click.option("--dxf", "with_dxf", is_flag=True,
              help="Also write roadmap.dxf: lanes, node and lane ids, stations and findings "
                   "on layers of their own, in the drawing's units and frame, to lay over "
                   "the plan in CAD.")
@click.option("--csv", "with_csv", is_flag=True,
              help="Also write nodes.csv and lanes.csv for spreadsheets.")
@click.option("--id-sheet", "with_ids", is_flag=True,
              help="Also write roadmap_ids.svg: the plan with every node and lane id and a "
                   "coordinate grid.")
@click.option("--strict", is_flag=True,
              help="Exit 1 (after writing) when a station is unreachable or free space leaks.")
@click.option("-q", "--quiet", is_flag=True, help="Print only errors.")
@_sigterm_as_exit
def build(drawing, outdir, robot_radius, robot_size, robot_kind, rotation_centre, turn_radius,
          reverse, margin, comfort_clearance, anchor, previous, no_html, with_dxf, with_csv,
          with_ids, strict, quiet, **options):
    """Build the lane graph of DRAWING into OUTDIR.

    Writes roadmap.graphml, roadmap.geojson, roadmap.svg, report.json and roadmap.html (the
    viewer; --no-html leaves it out) as one set: all are rendered first and replace earlier
    outputs only when every one succeeded.
    Exit 0 when built, 1 with --strict when a station is unreachable or free space leaks,
    2 for bad input.
    """
    from clearway.side_by_side import Aside, fed, forced, side_by_side

    def say(message: str) -> None:
        if not quiet:
            click.echo(terminal_text(message), err=True)

    try:
        config = load_config(options.get("config"))
        try:
            robot = build_robot(config, robot_radius, robot_size, margin, robot_kind,
                                rotation_centre, turn_radius, reverse,
                                source=options.get("config"))
        except ValueError as err:      # Robot's checks of the robot the user described
            raise InputError(str(err)) from None
        checks = {**DEFAULTS["checks"], **config.get("checks", {})}
        comfort = (comfort_clearance if comfort_clearance is not None
                   else setting("[checks] comfort_clearance", checks.get("comfort_clearance"),
                                Metres()))
        anchor = _parse_anchor(anchor)
        previous_graph = read_graph(previous) if previous else None
        reading = converter_options(options, config)
        # the drawing is read in a second process while this one imports what comes next
        # (clearway.side_by_side), holding back while the reader keeps both cores busy; the
        # libraries both need are imported once, before. While the reader imports ezdxf,
        # this process reads the drawing's text ahead for it (clearway.converter.ahead).
        # The imports make long-lived objects only: the collector's passes over them are
        # left out (the stage's imports took 0.30 s instead of 0.34 s, medians of five)
        with paused_collector():
            for name in SHARED_LIBRARIES:
                importlib.import_module(name)
        # Once the plan is sent, the reader goes on to draw the floor's areas as the outputs
        # draw them, which needs the plan and the clearance only, in the time the roadmap
        # leaves it (clearway.exporters.floor); the renderers take them where they fit
        reader = Aside(lambda: _read_plan(drawing, reading, ahead=fed), listen=True, fed=True,
                       then=lambda read: _draw_floor(read, robot.clearance, anchor))
        with reader:
            with paused_collector():
                reader.feed(lambda: _read_ahead(drawing, reading))
                for name in STAGE_LIBRARIES:
                    reader.hold()
                    importlib.import_module(name)
                reader.hold()
                from clearway.beside import rooms_beside
                from clearway.cli_view import html_page
                from clearway.diagnosis import check_lanes
                from clearway.exporters import (clearance_band, oriented_edges, render_geojson,
                                                render_graphml, render_id_sheet, render_report,
                                                render_svg, render_tables, report_data,
                                                write_outputs)
                from clearway.roadmap import build_roadmap, carry_ids_over, site_warnings
                _stop_if_signalled()
                plan, refused = reader.result()
            if refused is not None:
                raise InputError(refused)
            # said once read, so that a drawing refused by the reader gives one line only
            say(f"read {drawing}: units {plan.units}, "
                f"{sum(len(p.geoms) for p in plan.obstacles.values())} obstacle polygons, "
                f"{len(plan.stations)} stations")
            roadmap = build_roadmap(
                plan.obstacles, plan.free_space,
                [(s.label, s.x, s.y, s.kind, s.heading) for s in plan.stations],
                robot=robot, shared_zones=plan.regions["shared"], comfort_clearance=comfort,
                personnel_clearance=setting("[checks] personnel_clearance",
                                            checks["personnel_clearance"],
                                            Metres(allow_zero=True)),
                low_clearance_penalty=_factor("[checks] low_clearance_penalty",
                                              checks["low_clearance_penalty"]),
                openings=plan.openings, texts=plan.texts,
                progress=lambda *stage: say("  " + " ".join(str(part) for part in stage)))
            floor = _floor_drawn(reader)
        if floor is not None and not floor.fits(roadmap):
            floor = None
        check_lanes(plan, roadmap)
        if previous_graph is not None:
            for warning in site_warnings(previous_graph, roadmap.graph):
                click.echo(terminal_text(f"warning: --previous {previous}: {warning}"), err=True)
            say(f"  ids carried over from {previous}")
            previous_rooms = rooms_beside(previous, previous_graph)
            if previous_rooms is None and roadmap.rooms:
                click.echo(terminal_text(f"warning: --previous {previous}: no roadmap.geojson "
                                         "of that build in drawing metres beside it; room ids "
                                         "start afresh"), err=True)
            roadmap = carry_ids_over(roadmap, previous_graph, previous_rooms=previous_rooms)
        names = BUILD_FILES[:-1] if no_html else BUILD_FILES
        say(f"rendering {', '.join(names)}")
        # what several outputs use is made once in each process that needs it: the preview
        # and the page draw the clearance band; four outputs list the lanes as written (ids,
        # ends, coordinates); report.json and the summary printed at the end share the report
        band = functools.cache(lambda: floor.band if floor is not None
                               else clearance_band(plan, roadmap))
        edges = functools.cache(lambda: oriented_edges(roadmap.graph))
        report = functools.cache(lambda: report_data(plan, roadmap))
        renderers = dict(zip(names, (
            lambda: render_graphml(plan, roadmap, edges=edges()),
            lambda: render_geojson(plan, roadmap, anchor=anchor, edges=edges(), floor=floor),
            lambda: render_svg(plan, roadmap, date=_drawing_date(plan), band=band(),
                               edges=edges(), floor=floor),
            lambda: render_report(plan, roadmap, data=report()),
            lambda: html_page(plan, roadmap, _drawing_date(plan), previous_graph, band=band(),
                              edges=edges()))))
        # the preview takes about as long as the other outputs together: on a large graph
        # it renders in a second process meanwhile (clearway.side_by_side), forked before
        # the band and the lanes are made, so that each process makes its own side by side
        large = roadmap.graph.number_of_edges() >= SIDE_BY_SIDE_EDGES or forced()
        files = side_by_side(renderers, aside=["roadmap.svg"] if large else ())
        if with_dxf:
            from clearway.exporters import render_dxf   # ezdxf: in this process only for it
            files["roadmap.dxf"] = render_dxf(plan, roadmap)
        if with_csv:
            files.update(render_tables(roadmap))
        if with_ids:
            files["roadmap_ids.svg"] = render_id_sheet(
                roadmap.graph, title=f"clearway ids \u2014 {plan.source}",
                areas={**plan.regions, "free": plan.free_space})
    except ClearwayError as err:         # anything else is a bug: exit 3 (clearway.cli_errors)
        raise InputError(str(err)) from None
    except OSError as err:
        raise InputError(f"{err.filename or drawing}: {err.strerror or err}") from None
    try:
        write_outputs(outdir, files)
    except OSError as err:
        raise InputError(f"{outdir}: cannot write outputs ({err.strerror or err})") from None
    for line in _summary(plan, roadmap, outdir, list(files), report()):
        say(line)
    unreachable = sum(1 for s in roadmap.findings.stations if not s.reachable)
    if strict and (unreachable or plan.leaks):
        click.echo(f"strict: {_count(unreachable, 'unreachable station')}, "
                   f"{_count(len(plan.leaks), 'leak')}; outputs written to {outdir}", err=True)
        click.get_current_context().exit(1)
