"""``paleomap build PROJECT --out DIR``: every map, layer, raster, figure and the report."""

from __future__ import annotations

from pathlib import Path

import click

from ..io.readers import load_project
from ..pipeline import build
from .report_table import pair_table_lines

__all__ = ["command", "run_build"]


def run_build(
    project_path: Path,
    out: Path,
    *,
    overwrite: bool,
    figures: bool = True,
    quiet: bool = False,
    allow_outside_inputs: bool = False,
) -> None:
    """Build ``project_path`` into ``out`` and print what was made (shared with ``demo``)."""
    project = load_project(project_path, allow_outside_inputs=allow_outside_inputs)
    result = build(project, out, overwrite=overwrite, figures=figures, report=figures)
    if quiet:
        return
    click.echo(f"Built {len(result.slice_maps)} slices of {project.name!r} into {out}")
    for line in pair_table_lines(result):
        click.echo(line)
    stages = ", ".join(f"{k} {v:.1f} s" for k, v in result.timings.items())
    click.echo(f"Time: {stages}")


@click.command("build")
@click.argument("project", type=click.Path(path_type=Path, dir_okay=False))
@click.option(
    "--out",
    "-o",
    "out",
    required=True,
    type=click.Path(path_type=Path),
    help="Build folder to write (refused if it exists, unless --overwrite).",
)
@click.option("--overwrite", is_flag=True, help="Replace an existing build folder.")
@click.option("--no-figures", is_flag=True, help="Skip the figures and the report (faster).")
@click.option(
    "--allow-outside-inputs",
    is_flag=True,
    help="Allow the project file to name files outside its own folder.",
)
@click.pass_context
def command(
    ctx: click.Context,
    project: Path,
    out: Path,
    overwrite: bool,
    no_figures: bool,
    allow_outside_inputs: bool,
) -> None:
    """Map every time slice of PROJECT and write the build folder.

    Writes paleomap.gpkg, rasters/, rates.csv, figures/ and report.html into OUT. The
    folder is written beside OUT and moved into place only when complete, so a failed
    or interrupted build never leaves a half-written one.

    \b
    Example:
      paleomap build basin/project.toml --out basin/build
    """
    run_build(
        project,
        out,
        overwrite=overwrite,
        figures=not no_figures,
        quiet=ctx.obj.get("quiet", False),
        allow_outside_inputs=allow_outside_inputs,
    )
