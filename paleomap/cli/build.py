"""``paleomap build PROJECT --out DIR``: every map, layer, raster, figure and the report."""

from __future__ import annotations

from pathlib import Path

import click

from ..figures.all import VECTOR_FORMATS, FigureSettings
from ..figures.corepanel import PANEL_DATUMS, PANEL_SPACINGS
from ..io.readers import load_project
from ..pipeline import build
from .report_table import pair_table_lines

__all__ = ["check_panel_datum", "command", "figure_options", "run_build"]


def check_panel_datum(project, datum: str) -> None:
    """Refuse (exit status 2) a ``--panel-datum`` that is neither a datum nor a surface."""
    names = [s.name for s in project.surfaces]
    if datum not in PANEL_DATUMS and datum not in names:
        raise click.BadParameter(
            f"{datum!r} is not one of {', '.join(PANEL_DATUMS)} nor a surface of the "
            f"project; its surfaces are: {', '.join(names)}",
            param_hint="--panel-datum",
        )


def figure_options(command):
    """The figure options shared by ``build`` and ``demo``."""
    command = click.option(
        "--panel-spacing",
        type=click.Choice(PANEL_SPACINGS),
        default="even",
        show_default=True,
        help="Space the core panel's columns evenly or by distance along the transect.",
    )(command)
    command = click.option(
        "--panel-datum",
        metavar="SURFACE|elevation|depth",
        default=None,
        help="Hang the core panel's cores on a surface (flattened on it), on elevation or "
        "on depth below each core top. Default: elevation when every core has one.",
    )(command)
    command = click.option(
        "--vector",
        "vector",
        type=click.Choice(VECTOR_FORMATS),
        multiple=True,
        help="Also write every figure as SVG or PDF (vector) beside its PNG; repeat for both.",
    )(command)
    return command


def run_build(
    project_path: Path,
    out: Path,
    *,
    overwrite: bool,
    figures: bool = True,
    quiet: bool = False,
    figure_settings: FigureSettings | None = None,
    allow_outside_inputs: bool = False,
) -> None:
    """Build ``project_path`` into ``out`` and print what was made (shared with ``demo``)."""
    project = load_project(project_path, allow_outside_inputs=allow_outside_inputs)
    settings = figure_settings or FigureSettings()
    if settings.panel_datum is not None:
        check_panel_datum(project, settings.panel_datum)
    result = build(
        project,
        out,
        overwrite=overwrite,
        figures=figures,
        report=figures,
        figure_settings=settings,
    )
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
@figure_options
@click.pass_context
def command(
    ctx: click.Context,
    project: Path,
    out: Path,
    overwrite: bool,
    no_figures: bool,
    allow_outside_inputs: bool,
    vector: tuple[str, ...],
    panel_datum: str | None,
    panel_spacing: str,
) -> None:
    """Map every time slice of PROJECT and write the build folder.

    Writes paleomap.gpkg, rasters/, rates.csv, figures/ and report.html into OUT. The
    folder is written beside OUT and moved into place only when complete, so a failed
    or interrupted build never leaves a half-written one.

    \b
    Examples:
      paleomap build basin/project.toml --out basin/build
      paleomap build basin/project.toml --out basin/build --vector svg \\
          --panel-datum MFS2 --panel-spacing distance
    """
    run_build(
        project,
        out,
        overwrite=overwrite,
        figures=not no_figures,
        quiet=ctx.obj.get("quiet", False),
        allow_outside_inputs=allow_outside_inputs,
        figure_settings=FigureSettings(
            vector=tuple(vector), panel_datum=panel_datum, panel_spacing=panel_spacing
        ),
    )
