"""paleomap's own colour palette: facies belts, shoreline, shift senses, context.

One place for every colour the maps, rasters, GIS styles and report use. The belt ramp runs from
dark earth tones (most proximal, non-marine) through pale sand to teal and deep blue
(most distal, marine). Lightness changes monotonically within the non-marine and
within the marine part, and the two parts differ along the blue-yellow axis, which
the common colour-vision deficiencies (deuteranopia, protanopia) keep; so adjacent
belts stay distinguishable for most readers and in greyscale print.

This module imports no plotting library, so rasters and styles can use it.

Examples
--------
>>> belt_colors([False, False, True, True, True])
('#6b4423', '#d9b56e', '#f0dd93', '#6fb7b0', '#1d4f7c')
"""

from __future__ import annotations

__all__ = [
    "AGE_COLORMAP",
    "EDGE_COLOR",
    "FLAG_COLOR",
    "MUTED_COLOR",
    "NO_RECORD_COLOR",
    "SENSE_COLORS",
    "SHORELINE_COLOR",
    "belt_colors",
    "hex_to_rgb",
]

# Warm ramp, dark to light: used for non-marine belts, most proximal first.
_LAND = ("#4a2c17", "#6b4423", "#8f6234", "#b98a4b", "#d9b56e")
# Cool ramp, light to dark: used for marine belts, most proximal first.
_SEA = ("#f0dd93", "#b5dcc2", "#6fb7b0", "#3a8a9c", "#1d4f7c", "#1b2a55", "#2e1a47")

NO_RECORD_COLOR = "#d9d9d9"
"""Light grey for cells or cores with no record at a slice."""

SHORELINE_COLOR = "#c0392b"
"""Brick red for the tracked boundary (the shoreline by default)."""

EDGE_COLOR = "#222222"
"""Near-black for outlines: the mapped area's edge, core markers, core columns."""

MUTED_COLOR = "#6e6e6e"
"""Mid grey for transects, grid lines and other context drawn behind the data."""

FLAG_COLOR = "#cc79a7"
"""Reddish purple (Okabe & Ito 2008) for flagged contacts (possible breaks); it stands
apart from every belt colour and from the shoreline red for common colour-vision
deficiencies."""

SENSE_COLORS: dict[str, str] = {
    "transgression": "#0072b2",
    "regression": "#e69f00",
    "stillstand": "#8c8c8c",
    "uncertain": "#d9d9d9",
}
"""Colours of shoreline shifts by sense (Okabe & Ito 2008 blue and orange, a grey, and a
pale grey where the P10-P90 range of the shift spans zero)."""

AGE_COLORMAP = "viridis_r"
"""Sequential colormap for ages: matplotlib's ``viridis`` (perceptually uniform, readable
with common colour-vision deficiencies and in greyscale; van der Walt & Smith 2015),
reversed so that larger ages (older) are darker and younger ones lighter."""


def _spread(ramp: tuple[str, ...], n: int) -> list[str]:
    """n colours evenly spaced along a ramp, ends included."""
    if n <= 0:
        return []
    if n == 1:
        return [ramp[len(ramp) // 2]]
    return [ramp[round(i * (len(ramp) - 1) / (n - 1))] for i in range(n)]


def belt_colors(marine: list[bool] | tuple[bool, ...]) -> tuple[str, ...]:
    """Default colours for belts listed proximal to distal.

    Parameters
    ----------
    marine : sequence of bool
        For each belt, proximal first, whether it is marine.

    Returns
    -------
    tuple of str
        ``#rrggbb`` colours, one per belt.
    """
    n_land = sum(1 for m in marine if not m)
    n_sea = len(marine) - n_land
    land = _LAND[1:] if n_land <= len(_LAND) - 1 else _LAND
    sea = _SEA[:5] if n_sea <= 5 else _SEA
    return tuple(_spread(land, n_land) + _spread(sea, n_sea))


def hex_to_rgb(color: str) -> tuple[int, int, int]:
    """``"#rrggbb"`` to an (r, g, b) tuple of 0-255 integers.

    >>> hex_to_rgb("#ff8000")
    (255, 128, 0)
    """
    c = color.lstrip("#")
    return int(c[0:2], 16), int(c[2:4], 16), int(c[4:6], 16)
