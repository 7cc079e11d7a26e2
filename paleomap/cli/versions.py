"""``paleomap versions``: what to paste into a bug report."""

from __future__ import annotations

import click

from ..versions import show_versions

__all__ = ["command"]


@click.command("versions")
def command() -> None:
    """Print the versions of paleomap, Python, GDAL, PROJ and the libraries used.

    \b
    Example:
      paleomap versions
    """
    click.echo(show_versions())
