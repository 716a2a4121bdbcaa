"""`clearway route` and `clearway compare`: commands that read lane graphs (GraphML)."""

from __future__ import annotations

import json
import math
import os
import sys

import click

from clearway.cli_common import InputError, Metres, read_graph, replace_file, terminal_text
from clearway.config import COMFORT_ALLOWANCE, DEFAULT_COMFORT
# constants only: networkx and the stages load when a command runs
from clearway.roadmap import ROUTE_METHODS, SAME_PLACE_TOLERANCE


@click.command()
@click.argument("old")
@click.argument("new")
@click.option("--json", "as_json", is_flag=True, help="Print the changes as JSON on stdout.")
@click.option("--svg", "svg_path", metavar="FILE", help="Draw both graphs and the changes.")
@click.option("--comfort-clearance", type=Metres(allow_zero=True),
              help=f"Clearance below which a lane is a pinch point, metres [default: the "
                   f"new graph's required clearance + {COMFORT_ALLOWANCE} m, else "
                   f"{DEFAULT_COMFORT:.2f} m].")
@click.option("--match-tolerance", type=Metres(allow_zero=True), default=SAME_PLACE_TOLERANCE,
              show_default=True,
              help="Farther than this from any old node, a node counts as added, metres "
                   "(the same tolerance build --previous keeps ids within).")
@click.option("--route-tolerance", type=Metres(allow_zero=True),
              help="Station-to-station routes that changed less than this are not listed, "
                   "metres [default: 1 % of the route, at least 0.25 m].")
def compare(old, new, as_json, svg_path, comfort_clearance, match_tolerance, route_tolerance):
    """Show what changed between the lane graphs OLD.graphml and NEW.graphml."""
    from clearway.beside import areas_beside
    from clearway.exporters import render_compare_svg
    from clearway.roadmap import compare_graphs, summarize_changes
    old_graph, new_graph = read_graph(old), read_graph(new)
    try:
        changes = compare_graphs(old_graph, new_graph, comfort_clearance=comfort_clearance,
                                 match_tolerance=match_tolerance,
                                 route_tolerance=route_tolerance)
        picture = (render_compare_svg(old_graph, new_graph, changes,
                                      title=f"{_short_name(old)} -> {_short_name(new)}",
                                      floor=areas_beside(new, new_graph),
                                      floor_old=areas_beside(old, old_graph))
                   if svg_path else None)
    except ValueError as err:
        raise InputError(str(err)) from None
    if picture is not None:
        try:
            replace_file(svg_path, picture)
        except OSError as err:
            raise InputError(f"{svg_path}: cannot write ({err.strerror})") from None
    if as_json:
        for warning in changes.warnings:
            click.echo(terminal_text(f"warning: {warning}"), err=True)
    click.echo(changes.to_json() if as_json else summarize_changes(changes), nl=False)


def _short_name(path: str) -> str:
    """The file name with its folder (revisions are often roadmap.graphml in two folders)."""
    return os.path.join(os.path.basename(os.path.dirname(os.path.abspath(path))),
                        os.path.basename(path))


def _number(value: float) -> str:
    return f"{value:.3f}" if math.isfinite(value) else "unreachable"


@click.command()
@click.argument("graph_file", metavar="GRAPH")
@click.argument("ends", nargs=-1, metavar="[FROM TO]")
@click.option("--json", "as_json", is_flag=True, help="Print the result as JSON on stdout.")
@click.option("--avoid", multiple=True, metavar="NODE",
              help="Node id or station label the route must not pass (repeatable).")
@click.option("--method", type=click.Choice(ROUTE_METHODS), default="astar",
              show_default=True, help="Search method; both find the same route cost.")
@click.option("--matrix", is_flag=True, help="Station-to-station route costs instead.")
@click.option("--rooms", "by_room", is_flag=True,
              help="With --matrix: room-to-room costs (room ids as rows and columns).")
@click.option("--csv", "csv_path", metavar="FILE", help="With --matrix: write it as CSV.")
@click.option("--wkt", "show_wkt", is_flag=True,
              help="Also print the route's geometry as a WKT LINESTRING (metres).")
@click.option("--svg", "svg_path", metavar="FILE",
              help="Draw the route on the plan, with every node and lane id and a grid.")
def route(graph_file, ends, as_json, avoid, method, matrix, by_room, csv_path, show_wkt,
          svg_path):
    """Find the shortest route in GRAPH from FROM to TO (station labels, room names or ids,
    node ids); a room stands for its room node.

    With --matrix, give the route cost in metres between every pair of stations (of rooms
    with --rooms); pairs with no route are marked "unreachable" (null in JSON). Exit code 1
    when FROM and TO are not connected.
    """
    from networkx import NetworkXNoPath

    from clearway.beside import areas_beside
    from clearway.exporters import render_id_sheet
    from clearway.roadmap import display_name, distance_matrix, room_nodes, shortest_route
    from clearway.route_reasons import no_route_reason

    if matrix == bool(ends) or (ends and len(ends) != 2):
        raise InputError("give FROM and TO, or --matrix (not both)")
    if (csv_path or False) and not matrix:
        raise InputError("--csv needs --matrix")
    if by_room and not matrix:
        raise InputError("--rooms needs --matrix")
    if svg_path and matrix:
        raise InputError("--svg draws one route; give FROM and TO, not --matrix")
    graph = read_graph(graph_file)
    if matrix:
        rooms = room_nodes(graph) if by_room else {}
        try:
            labels, costs = distance_matrix(graph, [node for node, _ in rooms.values()]
                                            if by_room else None)
        except ValueError as err:
            raise InputError(f"{graph_file}: {err}") from None
        labels = tuple(rooms) if by_room else labels
        rows = [["room" if by_room else "station", *labels]] + [[label, *map(_number, row)]
                                         for label, row in zip(labels, costs.tolist())]
        table = "".join(",".join(_csv_cell(cell) for cell in row) + "\r\n" for row in rows)
        if csv_path:
            try:
                replace_file(csv_path, table.encode("utf-8"))
            except OSError as err:
                raise InputError(f"{csv_path}: cannot write ({err.strerror})") from None
        if as_json:
            cells = [[value if math.isfinite(value) else None for value in row]
                     for row in costs.tolist()]
            heads = ({"rooms": list(labels), "names": [list(names) for _, names in rooms.values()]}
                     if by_room else {"stations": list(labels)})
            click.echo(json.dumps({**heads, "unit": "m", "matrix": cells}, indent=2))
        elif not csv_path:
            click.echo(table, nl=False)
        return
    try:
        found = shortest_route(graph, ends[0], ends[1], method=method, avoid=avoid)
    except ValueError as err:
        raise InputError(f"{graph_file}: {err}") from None
    except NetworkXNoPath as err:
        reason = no_route_reason(graph_file, graph, ends, avoid)
        if as_json:
            click.echo(json.dumps({"from": ends[0], "to": ends[1], "reachable": False,
                                   "reason": reason or None}))
        click.echo(terminal_text(f"{graph_file}: {err}" + (f": {reason}" if reason else "")),
                   err=True)
        sys.exit(1)
    names = [display_name(graph, node) for node in (found.nodes[0], found.nodes[-1])]
    if svg_path:
        picture = render_id_sheet(graph, areas=areas_beside(graph_file, graph), route=found,
                                  title=f"route {names[0]} -> {names[1]}, {found.length:.1f} m"
                                        f" ({_short_name(graph_file)})")
        try:
            replace_file(svg_path, picture)
        except OSError as err:
            raise InputError(f"{svg_path}: cannot write ({err.strerror})") from None
    clearance = found.clearance_min if math.isfinite(found.clearance_min) else None
    if as_json:
        click.echo(json.dumps({"from": ends[0], "to": ends[1], "reachable": True,
                               "method": method, "nodes": list(found.nodes),
                               "edges": list(found.edges), "length": found.length,
                               "cost": found.cost, "clearance_min": clearance,
                               "wkt": found.geometry.wkt}, indent=2))
        return
    click.echo(terminal_text(f"{names[0]} -> {names[1]}: {found.length:.3f} m, clearance_min "
                             + (f"{clearance:.3f} m" if clearance is not None else "unknown")
                             + f", {len(found.nodes)} nodes"))
    click.echo("nodes: " + " ".join(found.nodes))
    if show_wkt:
        click.echo(found.geometry.wkt)


def _csv_cell(text: str) -> str:
    text = str(text)
    if any(char in text for char in ',"\r\n') or text[:1] in ("=", "+", "-", "@"):
        return '"' + text.replace('"', '""') + '"'
    return text
