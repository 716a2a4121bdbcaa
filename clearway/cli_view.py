"""`clearway view`: open the roadmap.html of a build in the default web browser."""

from __future__ import annotations

from pathlib import Path

import click

from clearway.cli_common import InputError

#: The viewer's file name inside OUTDIR.
PAGE = "roadmap.html"


def html_page(plan, roadmap, date: str, previous_graph=None, band=None, edges=None) -> bytes:
    """roadmap.html for `build`; with the previous revision's graph, its changes as a layer
    (`band`: the clearance band, `edges`: the graph's oriented edges, when the build has them
    already)."""
    from clearway.exporters import render_html
    from clearway.roadmap import compare_graphs
    changes = compare_graphs(previous_graph, roadmap.graph) if previous_graph is not None else None
    return render_html(plan, roadmap, date=date, changes=changes, band=band, edges=edges)


@click.command()
@click.argument("outdir")
def view(outdir):
    """Open OUTDIR/roadmap.html (written by `clearway build`) in the default web browser."""
    from clearway.exporters import finish_interrupted_set
    finish_interrupted_set(outdir)            # a set a killed build left is completed first
    page = Path(outdir) / PAGE
    if not page.is_file():
        raise InputError(f"{page}: no such file; run `clearway build DRAWING -o {outdir}` "
                         "first (without --no-html)")
    uri = page.resolve().as_uri()
    import webbrowser                 # here, not at start-up: it loads subprocess
    if not webbrowser.open(uri):
        raise InputError(f"{page}: no web browser could be started; open {uri} by hand")
    click.echo(f"opened {uri}", err=True)
