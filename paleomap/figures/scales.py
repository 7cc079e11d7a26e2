"""Colour scales of the figures: belts, ages and shoreline rates.

* **Belts**: the scheme's own colours (:attr:`paleomap.scheme.Scheme.colors`, the
  palette's defaults unless the project overrides a belt's colour).
* **Ages**: :data:`~paleomap.palette.AGE_COLORMAP`, cut at 85 % of its range so
  the youngest lines stay visible on white; older is darker. On the migration map,
  where the shift arrows carry colour, shorelines use greys instead
  (:func:`shoreline_age_cmap`).
* **Rates**: diverging, regression orange through stillstand grey to transgression
  blue (:data:`paleomap.palette.SENSE_COLORS`, the GIS styles' colours), symmetric
  about zero so the hue tells the sense and the depth of colour the speed.

Examples
--------
>>> age_cmap().N, rate_cmap().N
(256, 256)
"""

from __future__ import annotations

import numpy as np

from ..palette import AGE_COLORMAP

__all__ = [
    "age_cmap",
    "age_norm",
    "belt_cmap",
    "rate_cmap",
    "rate_norm",
    "shoreline_age_cmap",
]


def belt_cmap(scheme):
    """A listed colormap with one colour per belt (rank ``k`` is colour ``k``).

    >>> from paleomap.scheme import builtin_scheme
    >>> belt_cmap(builtin_scheme("shoreface_shelf")).N
    6
    """
    from matplotlib.colors import ListedColormap

    return ListedColormap(list(scheme.colors), name="belts")


def age_cmap():
    """Sequential age colormap (older darker)."""
    import matplotlib as mpl
    from matplotlib.colors import ListedColormap

    base = mpl.colormaps[AGE_COLORMAP]
    # viridis_r starts at yellow: skip its lightest 15 % (hard to see on white).
    return ListedColormap(base(np.linspace(0.15, 1.0, 256)), name="paleomap_age")


def shoreline_age_cmap():
    """Greys for ages on the migration map (older darker), from light grey to black.

    Grey leaves colour to the shift arrows' senses, so each colour on that map means one
    thing.

    >>> [round(float(v), 2) for v in shoreline_age_cmap()(1.0)[:3]]
    [0.0, 0.0, 0.0]
    """
    from matplotlib.colors import LinearSegmentedColormap

    return LinearSegmentedColormap.from_list("paleomap_shoreline_age", ["#c4c4c4", "#000000"])


def age_norm(ages):
    """Normalisation over the given ages (a one-age range is widened by one unit)."""
    from matplotlib.colors import Normalize

    a = np.asarray(list(ages), dtype=float)
    a = a[np.isfinite(a)]
    lo, hi = (float(a.min()), float(a.max())) if a.size else (0.0, 1.0)
    if hi <= lo:
        lo, hi = lo - 0.5, hi + 0.5
    return Normalize(lo, hi)


def rate_cmap():
    """Diverging rate colormap: regression orange, stillstand grey, transgression blue."""
    from matplotlib.colors import LinearSegmentedColormap

    from ..palette import SENSE_COLORS

    return LinearSegmentedColormap.from_list(
        "paleomap_rate",
        [SENSE_COLORS["regression"], SENSE_COLORS["stillstand"], SENSE_COLORS["transgression"]],
    )


def rate_norm(rates):
    """Symmetric normalisation about zero over the given rates (m/kyr)."""
    from matplotlib.colors import Normalize

    r = np.abs(np.asarray(list(rates), dtype=float))
    r = r[np.isfinite(r)]
    top = float(r.max()) if r.size and r.max() > 0 else 1.0
    return Normalize(-top, top)
