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

__all__ = ["VECTOR_FORMATS", "FigureSettings", "FigureSpec", "draw_all", "figure_specs"]

log = logging.getLogger(__name__)


VECTOR_FORMATS = ("svg", "pdf")
"""Vector formats a build can write beside every PNG figure."""


@dataclass(frozen=True)
class FigureSettings:
    """How a build draws its figures (the command line's figure options).

    Parameters
    ----------
    vector : tuple of str
        Vector formats (:data:`VECTOR_FORMATS`) written beside every PNG; empty for
        PNG only.
    panel_datum : str or None
        What the core panel hangs its cores on: a surface name (flattened on it),
        ``"elevation"`` or ``"depth"``; None: elevation when every core has one, else
        depth (:func:`paleomap.figures.corepanel.core_panel`).
    panel_spacing : str
        ``"even"`` or ``"distance"`` (along the transect).

    Examples
    --------
    >>> FigureSettings(vector=("svg",)).formats
    ('png', 'svg')
    >>> FigureSettings(vector=("eps",))
    Traceback (most recent call last):
    ...
    ValueError: vector figure format 'eps' is not one of svg, pdf
    """

    vector: tuple[str, ...] = ()
    panel_datum: str | None = None
    panel_spacing: str = "even"

    def __post_init__(self):
        from .corepanel import PANEL_SPACINGS

        for f in self.vector:
            if f not in VECTOR_FORMATS:
                raise ValueError(
                    f"vector figure format {f!r} is not one of {', '.join(VECTOR_FORMATS)}"
                )
        if self.panel_spacing not in PANEL_SPACINGS:
            raise ValueError(
                f"panel spacing {self.panel_spacing!r} is not one of {', '.join(PANEL_SPACINGS)}"
            )

    @property
    def formats(self) -> tuple[str, ...]:
        """PNG (always: the report embeds it) and the vector formats asked for."""
        return ("png", *dict.fromkeys(f for f in self.vector if f != "png"))


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


def figure_specs(result: BuildResult, settings: FigureSettings | None = None) -> list[FigureSpec]:
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

    settings = settings or FigureSettings()
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
            "Every slice's shoreline in greys by age (older darker, scale at right); arrows "
            "from the older to the younger position on the transects, coloured by sense "
            "(transgression blue, regression orange, stillstand grey).",
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
                "hung on elevation where every core has one (else on depth, or flattened "
                "on a chosen surface), picked surfaces joined, possible breaks marked.",
                lambda: _fig(
                    core_panel(result, datum=settings.panel_datum, spacing=settings.panel_spacing)
                ),
                "sections",
            )
        )
        specs.append(
            FigureSpec(
                "shoreline_positions",
                "Shoreline position against age",
                "Position on each transect with its P10-P90 band; steps coloured by sense; "
                "in each panel's title the least-squares rate where the shoreline moved one "
                "way throughout, else the net rate.",
                lambda: _fig(shoreline_positions(result)),
                "migration",
            )
        )
        specs.append(
            FigureSpec(
                f"shoreline_position_{safe_name(tr)}",
                f"Shoreline position and rates on {tr}",
                "Each step labelled with its rate in m/kyr and its P10 to P90 range; the "
                "whole series' rate in the title (least-squares only where one-directional, "
                "else net).",
                lambda: _fig(position_panel(result, tr)),
                "migration",
            )
        )
    else:
        log.info("no transects: the chart, core panel and position figures are left out")
    return specs


def draw_all(
    result: BuildResult,
    folder: str | Path,
    *,
    formats: Sequence[str] | None = None,
    settings: FigureSettings | None = None,
) -> list[Path]:
    """Draw every figure of ``result`` into ``folder``.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    folder : str or Path
        Created if missing.
    formats : sequence of str, optional
        File formats, any of ``png``, ``pdf``, ``svg``; PNG is always written (the
        report embeds it). Default: those of ``settings``.
    settings : FigureSettings, optional
        Vector formats and the core panel's datum and spacing.

    Returns
    -------
    list of Path
        Every file written.

    Examples
    --------
    >>> draw_all(result, tmp_path / "figures")   # doctest: +SKIP
    """
    from .canvas import save_figure

    settings = settings or FigureSettings()
    formats = settings.formats if formats is None else formats
    fmts = ["png", *[f for f in formats if f != "png"]]
    folder = Path(folder)
    out: list[Path] = []
    specs = figure_specs(result, settings)
    for k, spec in enumerate(specs):
        t = time.perf_counter()
        fig = spec.draw()
        out += save_figure(fig, folder / spec.stem, fmts)
        log.info(
            "figure %s (%d of %d) in %.1f s", spec.stem, k + 1, len(specs), time.perf_counter() - t
        )
    return out
