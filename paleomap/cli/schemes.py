"""``paleomap schemes``: every built-in facies scheme with its belts and aliases."""

from __future__ import annotations

import click

from ..scheme import BUILTIN_SCHEMES, LITHOLOGY_SCHEMES, Scheme, builtin_scheme

__all__ = ["command", "scheme_text"]


def _example_track(name: str) -> tuple[str, str]:
    # only to list a lithology scheme's belts; the user chooses the track in the project
    return (
        ("coarse_sand", "fine_sand")
        if name == "siliciclastic_lithology"
        else (
            "grainstone",
            "packstone",
        )
    )


def scheme_text(scheme: Scheme) -> list[str]:
    """The lines that describe one scheme: kind, boundaries, then every belt.

    Examples
    --------
    >>> from paleomap.scheme import builtin_scheme
    >>> lines = scheme_text(builtin_scheme("shoreface_shelf"))
    >>> lines[0], "tracks the shoreline (coastal_plain|foreshore)" in lines[1]
    ('shoreface_shelf', True)
    """
    if scheme.kind == "lithology":
        kind = (
            "lithology classes, proximal to distal; no boundary is tracked by default: "
            'say which in the project (track = ["a", "b"])'
        )
    else:
        names = [
            f"the {scheme.boundary_label(b)} ({scheme.boundary_name(b)})"
            if scheme.boundary_label(b) == "shoreline"
            else f"the {scheme.boundary_label(b)}"
            for b in scheme.tracked_boundaries
        ]
        kind = "depositional environments, proximal to distal; tracks " + " and ".join(names)
    lines = [scheme.name, "  " + kind]
    for rank, belt in enumerate(scheme.belts):
        what = belt.setting or belt.texture or ""
        if belt.grain_size_mm is not None:
            lo, hi = belt.grain_size_mm
            what = f"grain size {lo:g}-{hi:g} mm"
        marine = "" if scheme.kind == "lithology" else ("marine" if belt.marine else "non-marine")
        lines.append(f"  {rank}  {belt.id:<20} {marine:<11} {what}")
        if belt.aliases:
            lines.append(f"     {'':<20} aliases: {', '.join(belt.aliases)}")
    return lines


@click.command("schemes")
def command() -> None:
    """List every built-in facies scheme with its belts (proximal to distal) and aliases.

    Facies names in intervals.csv match a belt id or alias ignoring case, spaces, hyphens
    and underscores.

    \b
    Example:
      paleomap schemes
    """
    for i, name in enumerate(BUILTIN_SCHEMES):
        track = _example_track(name) if name in LITHOLOGY_SCHEMES else None
        if i:
            click.echo("")
        for line in scheme_text(builtin_scheme(name, track)):
            click.echo(line)
    click.echo("")
    click.echo(
        "Names match ignoring case, spaces, hyphens and underscores. Use one in the project "
        'file as [scheme] builtin = "<name>"; the lithology schemes also need track = '
        '["<proximal belt>", "<distal belt>"].'
    )
