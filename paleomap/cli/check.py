"""``paleomap check PROJECT``: validate a project and summarise what it holds."""

from __future__ import annotations

import warnings
from pathlib import Path

import click
import pandas as pd

from ..agemodel import build_age_models, sample_slices
from ..errors import PaleomapWarning
from ..io.readers import load_project
from ..project import Project
from ..stacking import read_cores
from ..stacking import summary_lines as reading_lines

__all__ = ["command", "summary_lines"]


def _crs_label(crs) -> str:
    authority = crs.to_authority()
    return f"{crs.name} ({authority[0]}:{authority[1]})" if authority else crs.name


def _age(value: float, unit: str) -> str:
    return f"{value:g} {unit}"


def summary_lines(project: Project, samples: pd.DataFrame | None = None) -> list[str]:
    """The lines ``paleomap check`` prints for a valid project.

    Parameters
    ----------
    project : Project
    samples : pandas.DataFrame, optional
        The table of :func:`paleomap.agemodel.sample_slices` (computed when not given).

    Returns
    -------
    list of str

    Examples
    --------
    >>> print("\\n".join(summary_lines(load_project("basin/project.toml"))))  # doctest: +SKIP
    """
    if samples is None:
        samples = sample_slices(project, age_models=build_age_models(project))
    unit = project.age_unit
    scheme = project.scheme
    lines = [f"Project: {project.name} ({project.path})"]
    lines.append(f"CRS: {_crs_label(project.crs)}")
    if project.working_crs != project.crs:
        lines.append(f"Working CRS: {_crs_label(project.working_crs)}")
    lines.append(f"Units: depth in {project.depth_unit}, ages in {unit} (positive into the past)")

    belts = []
    for b in scheme.belts:
        belts.append(f"{b.id} ({'marine' if b.marine else 'non-marine'})")
    lines.append(f"Scheme: {scheme.name}, {scheme.n_belts} belts, proximal to distal:")
    lines.append("  " + ", ".join(belts))
    for b in scheme.tracked_boundaries:
        label = scheme.boundary_label(b)
        label = "the shoreline" if label == "shoreline" else label
        lines.append(f"  tracked boundary: {scheme.boundary_name(b)} ({label})")

    n_iv = sum(len(c.intervals) for c in project.cores)
    n_picks = sum(len(c.picks) for c in project.cores)
    lines.append(f"Cores: {len(project.cores)}; intervals: {n_iv}; picks: {n_picks}")

    lines.append(f"Surfaces: {len(project.surfaces)}")
    width = max((len(s.name) for s in project.surfaces), default=0)
    picked = {}
    for c in project.cores:
        for p in c.picks:
            picked[p.surface] = picked.get(p.surface, 0) + 1
    for s in sorted(project.surfaces, key=lambda s: s.age):
        sd = f" ± {s.age_sd:g}" if s.age_sd else ""
        mark = ", erosional" if s.erosional else ""
        lines.append(
            f"  {s.name:<{width}}  {_age(s.age, unit)}{sd}{mark}; "
            f"picked in {picked.get(s.name, 0)} cores"
        )

    counts = samples.groupby("slice").size().to_dict() if len(samples) else {}
    lines.append(f"Slices: {len(project.slices)}, oldest first")
    width = max((len(s.name) for s in project.slices), default=0)
    for sl in project.slices:
        where = "at a surface" if sl.surface else "free age"
        lines.append(
            f"  {sl.name:<{width}}  {_age(sl.age, unit)} ({where}): "
            f"{counts.get(sl.name, 0)} of {len(project.cores)} cores have a record"
        )

    lines += coverage_lines(project, samples)

    if project.warnings:
        lines.append(f"Warnings: {len(project.warnings)}")
        lines += [f"  - {w}" for w in project.warnings]
    else:
        lines.append("Warnings: none")
    return lines


def coverage_lines(project: Project, samples: pd.DataFrame) -> list[str]:
    """Slices at which the tracked boundary crosses no core, with free ages to add.

    Examples
    --------
    >>> coverage_lines(project, samples)  # doctest: +SKIP
    """
    from ..coverage import boundary_coverage, suggest_free_ages

    scheme = project.scheme
    b = scheme.tracked_boundary
    label = scheme.boundary_label(b)
    cover = boundary_coverage(samples, b).set_index("slice") if len(samples) else None
    if cover is None or cover["crosses"].all():
        return []
    advice = suggest_free_ages(project, samples=samples)
    current = [f'"{s.surface}"' if s.surface else f"{s.age:g}" for s in project.slices]
    added = [f"{a:g}" for ages in advice.values() for a in ages]
    out = [
        f"The {label} ({scheme.boundary_name(b)}) crosses no core at "
        f"{len(advice)} slice(s); its position there is only a bound:"
    ]
    for name, ages in advice.items():
        row = cover.loc[name]
        side = "distal (basinward)" if row["n_distal"] else "proximal (landward)"
        text = f"  {name}: every core with a record is on the {side} side"
        if ages:
            listed = ", ".join(f"{a:g}" for a in ages)
            text += f"; it crosses the cores at {listed} {project.age_unit}"
        else:
            text += "; no age between the surfaces has cores on both sides"
        out.append(text)
    if added:
        out.append(
            "  Add free-age slices where it crosses the cores, e.g. [slices] at = "
            f"[{', '.join(current + added)}]"
        )
    return out


@click.command("check")
@click.argument("project", type=click.Path(path_type=Path))
@click.option(
    "--allow-outside-inputs",
    is_flag=True,
    help="Allow the project file to name files outside its own folder.",
)
def command(project: Path, allow_outside_inputs: bool) -> None:
    """Validate PROJECT (a project TOML file) and summarise it.

    Every problem in every input file is listed with its file, line, column and value;
    the exit status is 0 when the project is valid and 2 when it is not. Nothing is
    written.

    \b
    Example:
      paleomap check basin/project.toml
    """
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always", PaleomapWarning)
        loaded = load_project(project, allow_outside_inputs=allow_outside_inputs)
    # The summary lists paleomap's warnings; any other warning is passed on.
    for w in caught:
        if not issubclass(w.category, PaleomapWarning):
            warnings.warn_explicit(w.message, w.category, w.filename, w.lineno)
    for line in summary_lines(loaded) + reading_lines(read_cores(loaded), loaded.scheme):
        click.echo(line)
    click.echo("The project is valid.")
