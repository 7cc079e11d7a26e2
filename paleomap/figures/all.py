"""Every figure of a build, drawn and saved into the build's ``figures/`` folder.

Files written (``<name>`` is the slice name made file-safe with
:func:`paleomap.io.writers.safe_name`, ``<T>`` the chart's transect id):

- ``slice_<name>.png``: the map of each slice (:func:`~paleomap.figures.slicemap.slice_map`);
- ``shoreline_migration.png``: every shoreline by age and the shifts
  (:func:`~paleomap.figures.migration.migration_map`);
- ``chronostratigraphic_<T>.png``: the Wheeler chart
  (:func:`~paleomap.figures.wheeler.wheeler_chart`);
- ``core_panel_<T>.png``: the core correlation panel
  (:func:`~paleomap.figures.corepanel.core_panel`);
- ``shoreline_positions.png``: position against age per transect
  (:func:`~paleomap.figures.positions.shoreline_positions`);
- ``shoreline_position_<T>.png``: the chart transect's positions with every step's rate
  and P10-P90 range (:func:`~paleomap.figures.positions.position_panel`).

Each in every format asked for (PNG always first). A figure that cannot be drawn for a
build (for example the chart when the build has no transect) is left out with a log
message, never with a placeholder image.

Examples
--------
>>> paths = draw_all(result, "build/figures", formats=("png", "pdf"))   # doctest: +SKIP
"""

from __future__ import annotations

import logging
import time
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from ..results import BuildResult

__all__ = ["FigureSpec", "draw_all", "figure_specs"]

log = logging.getLogger(__name__)


@dataclass(frozen=True)
class FigureSpec:
    """One figure of a build: file stem, title, caption and how to draw it.

    ``draw()`` returns the matplotlib Figure.
    """

    stem: str
    title: str
    caption: str
    draw: Callable[[], object]
    group: str = "maps"


def _fig(obj):
    if hasattr(obj, "figure"):
        return obj.figure
    return obj.flat[0].figure if hasattr(obj, "flat") else obj[0].figure


def figure_specs(result: BuildResult) -> list[FigureSpec]:
    """The figures of a build, in report order.

    Examples
    --------
    >>> [s.stem for s in figure_specs(result)][:2]   # doctest: +SKIP
    ['slice_KS1', 'slice_KS2']
    """
    from ..io.writers import safe_name
    from ..results import chart_transect
    from .corepanel import core_panel
    from .migration import migration_map
    from .positions import position_panel, shoreline_positions
    from .slicemap import age_label, slice_map
    from .wheeler import wheeler_chart

    unit = result.project.age_unit
    specs = []
    for i, m in enumerate(result.slice_maps):
        specs.append(
            FigureSpec(
                f"slice_{safe_name(m.slice.name)}",
                f"Slice {m.slice.name} ({age_label(m.slice.age, unit)})",
                "Facies belts, cores in the colour of the belt logged at this age, the "
                "shoreline and its P10-P90 band.",
                lambda i=i: _fig(slice_map(result, i)),
                "slices",
            )
        )
    specs.append(
        FigureSpec(
            "shoreline_migration",
            "Shoreline migration",
            "Every slice's shoreline coloured by age; arrows from the older to the younger "
            "position on the transects, coloured by rate.",
            lambda: _fig(migration_map(result)),
            "migration",
        )
    )
    if result.chart is not None:
        ct = result.chart.transect
        specs.append(
            FigureSpec(
                f"chronostratigraphic_{safe_name(ct)}",
                f"Chronostratigraphic (Wheeler) chart along {ct}",
                "Belts along the transect at many ages through the age models; grey hatched "
                "where there is no record; the shoreline trajectory in red.",
                lambda: _fig(wheeler_chart(result)),
                "sections",
            )
        )
    if result.transects:
        tr = chart_transect(result.transects).transect
        specs.append(
            FigureSpec(
                f"core_panel_{safe_name(tr)}",
                f"Core correlation panel along {tr}",
                "Cores near the transect as facies columns (widest = most proximal belt), "
                "picked surfaces joined, possible breaks marked.",
                lambda: _fig(core_panel(result)),
                "sections",
            )
        )
        specs.append(
            FigureSpec(
                "shoreline_positions",
                "Shoreline position against age",
                "Position on each transect with its P10-P90 band; steps coloured by sense; "
                "least-squares rate in each panel's title.",
                lambda: _fig(shoreline_positions(result)),
                "migration",
            )
        )
        specs.append(
            FigureSpec(
                f"shoreline_position_{safe_name(tr)}",
                f"Shoreline position and rates on {tr}",
                "Each step labelled with its rate in m/kyr and its P10 to P90 range.",
                lambda: _fig(position_panel(result, tr)),
                "migration",
            )
        )
    else:
        log.info("no transects: the chart, core panel and position figures are left out")
    return specs


def draw_all(
    result: BuildResult, folder: str | Path, *, formats: Sequence[str] = ("png",)
) -> list[Path]:
    """Draw every figure of ``result`` into ``folder``.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    folder : str or Path
        Created if missing.
    formats : sequence of str
        File formats, any of ``png``, ``pdf``, ``svg``; PNG is always written (the
        report embeds it).

    Returns
    -------
    list of Path
        Every file written.

    Examples
    --------
    >>> draw_all(result, tmp_path / "figures")   # doctest: +SKIP
    """
    from .canvas import save_figure

    fmts = ["png", *[f for f in formats if f != "png"]]
    folder = Path(folder)
    out: list[Path] = []
    specs = figure_specs(result)
    for k, spec in enumerate(specs):
        t = time.perf_counter()
        fig = spec.draw()
        out += save_figure(fig, folder / spec.stem, fmts)
        log.info(
            "figure %s (%d of %d) in %.1f s", spec.stem, k + 1, len(specs), time.perf_counter() - t
        )
    return out
