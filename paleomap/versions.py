"""Versions of paleomap and the libraries it stands on, for bug reports.

Examples
--------
>>> "paleomap" in show_versions()
True
"""

from __future__ import annotations

import platform
import sys
from importlib import metadata

from ._version import __version__

__all__ = ["show_versions", "versions"]

_LIBRARIES = (
    "numpy",
    "scipy",
    "pandas",
    "geopandas",
    "pyogrio",
    "shapely",
    "pyproj",
    "rasterio",
    "contourpy",
    "matplotlib",
    "click",
)


def versions() -> dict[str, str]:
    """paleomap's, Python's, GDAL's, PROJ's and every dependency's version."""
    out = {
        "paleomap": __version__,
        "python": sys.version.split()[0],
        "platform": platform.platform(),
    }
    for name in _LIBRARIES:
        try:
            out[name] = metadata.version(name)
        except metadata.PackageNotFoundError:
            out[name] = "not installed"
    try:
        import pyogrio

        out["GDAL (pyogrio)"] = pyogrio.__gdal_version_string__
    except Exception:  # pragma: no cover - reported, never fatal
        out["GDAL (pyogrio)"] = "unknown"
    try:
        import pyproj

        out["PROJ"] = pyproj.proj_version_str
    except Exception:  # pragma: no cover
        out["PROJ"] = "unknown"
    return out


def show_versions() -> str:
    """The versions as text, one ``name: version`` a line, to paste into a bug report."""
    v = versions()
    width = max(len(k) for k in v)
    return "\n".join(f"{k:<{width}}  {val}" for k, val in v.items())
