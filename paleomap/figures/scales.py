"""Colour scales of the figures: belts, ages and shoreline rates.

* **Belts**: the scheme's own colours (:attr:`paleomap.scheme.Scheme.colors`, the
  palette's defaults unless the project overrides a belt's colour).
* **Ages**: :data:`~paleomap.figures.palette.AGE_COLORMAP`, cut at 85 % of its range so
  the youngest lines stay visible on white; older is darker.
* **Rates**: diverging, regression orange through stillstand grey to transgression
  blue (:data:`paleomap.io.styles.SENSE_COLORS`, the GIS styles' colours), symmetric
  about zero so the hue tells the sense and the depth of colour the speed.

Examples
--------
>>> age_cmap().N, rate_cmap().N
(256, 256)
"""

from __future__ import annotations

import numpy as np

from .palette import AGE_COLORMAP

__all__ = ["age_cmap", "age_norm", "belt_cmap", "rate_cmap", "rate_norm"]


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

    from ..io.styles import SENSE_COLORS

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
