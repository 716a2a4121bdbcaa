"""The `clearway` command line: thin wrappers that parse options, call the library, write."""

from __future__ import annotations

import click

from clearway import __version__


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
