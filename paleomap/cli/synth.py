"""``paleomap synth DIR``: write a synthetic project with its known truth."""

from __future__ import annotations

import math
from pathlib import Path

import click

from ..errors import InputError, Problem
from ..scheme import ENVIRONMENT_SCHEMES

__all__ = ["command"]

_LAYOUTS = ("random", "grid", "clusters")
_SCHEMES = ENVIRONMENT_SCHEMES
_AGE_UNITS = ("ka", "Ma")

# (option, parameter of make_basin, default)
_MODEL_OPTIONS = (
    ("--cores", "n_cores", 40),
    ("--layout", "layout", "random"),
    ("--seed", "seed", 0),
    ("--scheme", "scheme", "shoreface_shelf"),
    ("--surfaces", "surfaces", 8),
    ("--gradient", "gradient_m_per_km", 1.5),
    ("--dip-azimuth", "dip_azimuth_deg", 90.0),
    ("--relief", "relief_amplitude_m", 4.0),
    ("--relief-wavelength", "relief_wavelength_m", 16_000.0),
    ("--subsidence", "subsidence_m_per_kyr_per_km", 0.0),
    ("--erosion", "erosion_m_per_kyr", 0.0),
    ("--step", "step_kyr", 0.5),
)


def _number(raw, option, log, *, integer=False, minimum=None, positive=False):
    """Parse an option value; record a problem naming the option if it is bad."""
    try:
        value = int(raw) if integer else float(raw)
    except (TypeError, ValueError):
        log.append(
            Problem(
                None, None, option, raw, "is not a whole number" if integer else "is not a number"
            )
        )
        return None
    if not integer and not math.isfinite(value):
        log.append(Problem(None, None, option, raw, "is not a finite number"))
        return None
    if positive and value <= 0:
        log.append(Problem(None, None, option, raw, "must be greater than 0"))
        return None
    if minimum is not None and value < minimum:
        log.append(Problem(None, None, option, raw, f"must be at least {minimum}"))
        return None
    return value


def _choice(raw, option, allowed, log):
    if raw not in allowed:
        log.append(
            Problem(None, None, option, raw, "is not allowed", f"choose one of {list(allowed)}")
        )
        return None
    return raw


@click.command("synth")
@click.argument("directory", type=click.Path(file_okay=False, path_type=Path))
@click.option("--cores", default="40", show_default=True, help="Number of cores.")
@click.option(
    "--layout",
    default="random",
    show_default=True,
    help="Core layout: random (minimum spacing), grid or clusters.",
)
@click.option("--seed", default="0", show_default=True, help="Seed of the core positions.")
@click.option(
    "--scheme",
    default="shoreface_shelf",
    show_default=True,
    help="Facies scheme (an environment scheme): shoreface_shelf or carbonate_ramp.",
)
@click.option(
    "--sea-level",
    "sea_level",
    type=click.Path(dir_okay=False, path_type=Path),
    default=None,
    help="CSV of the sea-level history, columns age, level (m).",
)
@click.option(
    "--age-unit",
    default="ka",
    show_default=True,
    help="Unit of ages in --sea-level and in the project: ka or Ma.",
)
@click.option(
    "--surfaces",
    default="8",
    show_default=True,
    help="Number of dated surfaces, spread evenly through the history.",
)
@click.option("--gradient", default="1.5", show_default=True, help="Ramp gradient, m/km.")
@click.option(
    "--dip-azimuth",
    default="90",
    show_default=True,
    help="Azimuth the ramp dips towards, degrees from north.",
)
@click.option(
    "--relief",
    default="4",
    show_default=True,
    help="Amplitude of the along-strike relief (lobes, embayments), m.",
)
@click.option(
    "--relief-wavelength",
    default="16000",
    show_default=True,
    help="Wavelength of the along-strike relief, m.",
)
@click.option(
    "--subsidence",
    default="0",
    show_default=True,
    help="Subsidence increase basinward, m/kyr per km.",
)
@click.option(
    "--erosion",
    default="0",
    show_default=True,
    help="Erosion rate of exposed ground during falls, m/kyr (0 for none).",
)
@click.option("--step", default="0.5", show_default=True, help="Longest time step, kyr.")
@click.option("--demo", is_flag=True, help="Write the bundled demo region's scenario.")
@click.option("--overwrite", is_flag=True, help="Replace the project and truth files.")
@click.pass_context
def command(
    ctx: click.Context, directory: Path, sea_level: Path | None, demo: bool, overwrite: bool, **raw
) -> None:
    """Write a synthetic project (project.toml, cores.csv, intervals.csv, picks.csv)
    made by the forward model, with its truth (truth.gpkg, true_shifts.csv).

    \b
    Examples:
      paleomap synth basin
      paleomap synth basin --cores 60 --layout clusters --seed 3 --relief 6
      paleomap synth demo_region --demo --overwrite
    """
    from ..errors import OutputExistsError
    from ..synthetic import (
        PROJECT_FILES,
        TRUTH_FILES,
        demo_basin,
        make_basin,
        read_sea_level,
        write_project,
    )

    existing = [n for n in PROJECT_FILES + TRUTH_FILES if (directory / n).exists()]
    if existing and not overwrite:
        # Say so before the model runs; write_project checks again.
        raise OutputExistsError(
            f"{directory} already holds {', '.join(existing)}; pass --overwrite to replace them"
        )
    problems: list[Problem] = []
    if demo:
        given = [
            f"--{name.replace('_', '-')}"
            for name in list(raw) + ["sea_level"]
            if ctx.get_parameter_source(name) != click.core.ParameterSource.DEFAULT
        ]
        if given:
            problems.append(
                Problem(
                    None,
                    None,
                    "--demo",
                    given,
                    "fixes every model setting, so these options cannot be given with it",
                    "drop them, or drop --demo",
                )
            )
            raise InputError(problems)
        basin = demo_basin()
    else:
        kwargs = {
            "n_cores": _number(raw["cores"], "--cores", problems, integer=True, minimum=1),
            "layout": _choice(raw["layout"], "--layout", _LAYOUTS, problems),
            "seed": _number(raw["seed"], "--seed", problems, integer=True, minimum=0),
            "scheme": _choice(raw["scheme"], "--scheme", _SCHEMES, problems),
            "age_unit": _choice(raw["age_unit"], "--age-unit", _AGE_UNITS, problems),
            "surfaces": _number(raw["surfaces"], "--surfaces", problems, integer=True, minimum=1),
            "gradient_m_per_km": _number(raw["gradient"], "--gradient", problems, positive=True),
            "dip_azimuth_deg": _number(raw["dip_azimuth"], "--dip-azimuth", problems),
            "relief_amplitude_m": _number(raw["relief"], "--relief", problems, minimum=0),
            "relief_wavelength_m": _number(
                raw["relief_wavelength"], "--relief-wavelength", problems, positive=True
            ),
            "subsidence_m_per_kyr_per_km": _number(
                raw["subsidence"], "--subsidence", problems, minimum=0
            ),
            "erosion_m_per_kyr": _number(raw["erosion"], "--erosion", problems, minimum=0),
            "step_kyr": _number(raw["step"], "--step", problems, positive=True),
        }
        history = None
        if sea_level is not None and kwargs["age_unit"] is not None:
            try:
                history = read_sea_level(sea_level, kwargs["age_unit"])
            except InputError as exc:
                problems.extend(exc.problems)
        if problems:
            raise InputError(problems)
        basin = make_basin(sea_level=history, **kwargs)
    path = write_project(basin, directory, overwrite=overwrite)
    if ctx.obj and ctx.obj.get("quiet"):
        return
    _report(basin, path)


def _report(basin, path: Path) -> None:
    unit = basin.age_unit
    folder = path.parent
    click.echo(f"Wrote synthetic project {path}")
    click.echo(
        f"  {len(basin.cores)} cores in cores.csv, {len(basin.intervals)} intervals "
        f"in intervals.csv, {len(basin.picks)} picks in picks.csv"
    )
    surfaces = ", ".join(
        f"{s.name} {s.age:g} {unit}" + (" (erosional)" if s.erosional else "")
        for s in basin.surfaces
    )
    click.echo(f"  {len(basin.surfaces)} surfaces: {surfaces}")
    click.echo(
        f"  scheme {basin.scheme.name}; CRS {basin.ramp.crs}; grid cell {basin.cell_size_m:g} m"
    )
    click.echo(
        f"Truth: {folder / 'truth.gpkg'} (true_belts, true_shorelines, true_transects), "
        f"{folder / 'true_shifts.csv'}"
    )
    mean = basin.true_shifts[basin.true_shifts["transect"] == "mean"]
    mean = mean[mean["boundary"] == basin.scheme.boundary_name(basin.scheme.tracked_boundary)]
    if not mean.empty:
        click.echo("True mean shift of the tracked boundary (positive landward):")
        for r in mean.itertuples(index=False):
            click.echo(
                f"  {r.older_slice:>6} -> {r.younger_slice:<6} {r.shift_m:>10.0f} m "
                f"{r.rate_m_per_kyr:>9.1f} m/kyr  {r.sense}"
            )
