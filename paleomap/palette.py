"""paleomap's own colour palette: facies belts, shoreline, shift senses, context.

One place for every colour the maps, rasters, GIS styles and report use. The belt ramp runs from
dark earth tones (most proximal, non-marine) through pale sand to teal, deep blue and
violet (most distal, marine). Lightness changes monotonically within the non-marine and
within the marine part, and the two parts differ along the blue-yellow axis, which
the common colour-vision deficiencies (deuteranopia, protanopia) keep; so adjacent
belts stay distinguishable for most readers and in greyscale print. Colours are spaced
evenly in CIELAB along each ramp, so a scheme of any size gets distinct neighbours in
the order of its belts (up to 12 belts, neighbours differ by a CIELAB distance of at
least 5 also under simulated protanopia, deuteranopia and tritanopia; the tests
measure it).

This module imports no plotting library, so rasters and styles can use it.

Examples
--------
>>> belt_colors([False, False, True, True, True])
('#8b4e27', '#e3c77f', '#f7f0c4', '#68b3ad', '#245986')
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "AGE_COLORMAP",
    "EDGE_COLOR",
    "FLAG_COLOR",
    "MUTED_COLOR",
    "NO_RECORD_COLOR",
    "SENSE_COLORS",
    "SHORELINE_COLOR",
    "belt_colors",
    "hex_to_lab",
    "hex_to_rgb",
    "linear_rgb_to_lab",
]

# Warm ramp, dark to light: non-marine belts, most proximal first (anchors of a path
# through CIELAB along which the colours are spaced evenly).
_LAND = ("#3b2313", "#55321a", "#7a3f22", "#a8672e", "#c99a45", "#e3c77f")
# Cool ramp, light to dark: marine belts, most proximal first. Lightness falls and the
# hue turns from yellow through teal to blue and violet, so both the lightness and the
# blue-yellow axis (kept by the common colour-vision deficiencies) separate neighbours.
_SEA = ("#f7f0c4", "#cfe3b0", "#8cc9b4", "#4aa3a8", "#2d7897", "#1f4c7e", "#1b2a55", "#2a1440")
# Where a few belts on a side sit on the ramp (fractions of its length): the darkest
# browns and the deepest violets are kept for schemes that need many belts.
_LAND_FEW = (0.38, 1.0)
_SEA_FEW = (0.0, 0.72)
_FEW = 4

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


def _srgb_to_linear(c):
    c = np.asarray(c, dtype=float)
    return np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)


def _linear_to_srgb(c):
    c = np.clip(np.asarray(c, dtype=float), 0.0, 1.0)
    return np.where(c <= 0.0031308, 12.92 * c, 1.055 * c ** (1 / 2.4) - 0.055)


# sRGB (D65) to XYZ, IEC 61966-2-1 (common practice)
_RGB_TO_XYZ = np.array(
    [[0.4124, 0.3576, 0.1805], [0.2126, 0.7152, 0.0722], [0.0193, 0.1192, 0.9505]]
)
_WHITE = _RGB_TO_XYZ.sum(axis=1)


def linear_rgb_to_lab(rgb) -> np.ndarray:
    """CIELAB (D65) of linear-light RGB in [0, 1], shape (..., 3).

    >>> np.round(linear_rgb_to_lab([1.0, 1.0, 1.0]), 6).tolist()
    [100.0, 0.0, 0.0]
    """
    xyz = np.asarray(rgb, dtype=float) @ _RGB_TO_XYZ.T / _WHITE
    d = 6 / 29
    f = np.where(xyz > d**3, np.cbrt(xyz), xyz / (3 * d * d) + 4 / 29)
    return np.stack(
        [116 * f[..., 1] - 16, 500 * (f[..., 0] - f[..., 1]), 200 * (f[..., 1] - f[..., 2])],
        axis=-1,
    )


def _lab_to_linear_rgb(lab) -> np.ndarray:
    lab = np.asarray(lab, dtype=float)
    fy = (lab[..., 0] + 16) / 116
    f = np.stack([fy + lab[..., 1] / 500, fy, fy - lab[..., 2] / 200], axis=-1)
    d = 6 / 29
    xyz = np.where(f > d, f**3, 3 * d * d * (f - 4 / 29)) * _WHITE
    return xyz @ np.linalg.inv(_RGB_TO_XYZ).T


def hex_to_lab(color: str) -> np.ndarray:
    """CIELAB (D65) of a ``#rrggbb`` colour.

    >>> [round(v) for v in hex_to_lab("#808080")]
    [54, 0, 0]
    """
    return linear_rgb_to_lab(_srgb_to_linear(np.array(hex_to_rgb(color)) / 255.0))


def _lab_to_hex(lab) -> str:
    rgb = np.round(_linear_to_srgb(_lab_to_linear_rgb(lab)) * 255).astype(int)
    return "#{:02x}{:02x}{:02x}".format(*rgb)


def _ramp(anchors: tuple[str, ...], n: int, lo: float, hi: float) -> list[str]:
    """n colours evenly spaced (by CIELAB distance) on the path through ``anchors``,
    from fraction ``lo`` to ``hi`` of its length."""
    if n <= 0:
        return []
    lab = np.array([hex_to_lab(c) for c in anchors])
    seg = np.hypot.reduce(np.diff(lab, axis=0), axis=1)
    cum = np.concatenate([[0.0], np.cumsum(seg)]) / seg.sum()
    where = np.array([(lo + hi) / 2]) if n == 1 else np.linspace(lo, hi, n)
    pts = np.stack([np.interp(where, cum, lab[:, k]) for k in range(3)], axis=-1)
    return [_lab_to_hex(p) for p in pts]


def belt_colors(marine: list[bool] | tuple[bool, ...]) -> tuple[str, ...]:
    """Default colours for belts listed proximal to distal, for any number of belts.

    Non-marine belts run from dark brown to light sand, marine belts from pale yellow
    through teal to deep blue and violet, each side evenly spaced in CIELAB so that
    neighbours differ by the same perceived step however many belts a scheme has.
    Up to four belts on a side keep to the middle of their ramp; more use all of it.

    Parameters
    ----------
    marine : sequence of bool
        For each belt, proximal first, whether it is marine.

    Returns
    -------
    tuple of str
        ``#rrggbb`` colours, one per belt, in the order given.

    Examples
    --------
    >>> len(set(belt_colors([False] * 3 + [True] * 12)))
    15
    """
    flags = [bool(m) for m in marine]
    n_land = flags.count(False)
    n_sea = len(flags) - n_land
    land = iter(_ramp(_LAND, n_land, *(_LAND_FEW if n_land <= _FEW else (0.0, 1.0))))
    sea = iter(_ramp(_SEA, n_sea, *(_SEA_FEW if n_sea <= _FEW else (0.0, 1.0))))
    return tuple(next(sea) if m else next(land) for m in flags)


def hex_to_rgb(color: str) -> tuple[int, int, int]:
    """``"#rrggbb"`` to an (r, g, b) tuple of 0-255 integers.

    >>> hex_to_rgb("#ff8000")
    (255, 128, 0)
    """
    c = color.lstrip("#")
    return int(c[0:2], 16), int(c[2:4], 16), int(c[4:6], 16)
