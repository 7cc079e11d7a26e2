"""``paleomap demo``: build the bundled demo region."""

from __future__ import annotations

from pathlib import Path

import click

from ..figures.all import FigureSettings
from .build import figure_options, run_build

__all__ = ["command", "demo_project_path"]


def demo_project_path() -> Path:
    """The bundled demo region's project file (in the source tree, beside the package)."""
    package = Path(__file__).resolve().parents[1]
    for here in (
        package.parent / "demo_region" / "project.toml",  # source tree
        package / "_demo_region" / "project.toml",
    ):  # installed wheel
        if here.exists():
            return here
    from ..errors import PaleomapError

    raise PaleomapError(f"the demo region is not installed (no {here})")


@click.command("demo")
@click.option(
    "--out",
    "-o",
    "out",
    default=Path("demo_build"),
    show_default=True,
    type=click.Path(path_type=Path),
    help="Build folder to write.",
)
@click.option(
    "--overwrite",
    is_flag=True,
    help="Replace an earlier build in OUT (as for build: only a folder paleomap wrote).",
)
@figure_options
@click.pass_context
def command(
    ctx: click.Context,
    out: Path,
    overwrite: bool,
    vector: tuple[str, ...],
    panel_datum: str | None,
    panel_spacing: str,
) -> None:
    """Build the bundled demo region (an invented shelf) into OUT.

    Follows the rules of ``build``: an existing OUT is refused unless --overwrite, and
    --overwrite replaces only a folder that holds nothing but an earlier build.

    \b
    Example:
      paleomap demo --out demo_build
    """
    run_build(
        demo_project_path(),
        out,
        overwrite=overwrite,
        quiet=ctx.obj.get("quiet", False),
        figure_settings=FigureSettings(
            vector=tuple(vector), panel_datum=panel_datum, panel_spacing=panel_spacing
        ),
    )
