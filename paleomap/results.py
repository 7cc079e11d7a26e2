"""The build's result types and the column schema of every deliverable table.

One home for what a build hands on: :class:`BuildResult` (everything computed),
:class:`SliceMap` (one slice's map), :class:`Transect`, :class:`WheelerSection` (the
chronostratigraphic chart's data, computed in the build), and the columns of every
table the writers, figures, report and tests read. The layers, writers, figures and
report import this module, never the pipeline that fills it, so the build flows one
way: pipeline -> results -> (writers, figures, report).

This module holds values only: no model fitting, no file input or output.

Examples
--------
>>> SHIFT_COLUMNS[:3]
('transect', 'boundary', 'older_slice')
>>> LAYER_COLUMNS["facies_belts"]
('slice', 'age', 'belt', 'rank', 'marine', 'area_km2')
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import TYPE_CHECKING

import numpy as np

from .belts import cell_field_at, classify, node_field

if TYPE_CHECKING:
    import pandas as pd

    from .field.engine import FittedField
    from .grid import Grid
    from .project import Project, Slice
    from .records import Records

__all__ = [
    "GEOMETRY_TYPES",
    "LAYER_COLUMNS",
    "LAYER_ORDER",
    "PAIR_COLUMNS",
    "PAIR_CORE_COLUMNS",
    "POSITION_COLUMNS",
    "SHIFT_COLUMNS",
    "BuildResult",
    "SliceMap",
    "Transect",
    "WheelerSection",
    "chart_transect",
]

POSITION_COLUMNS = (
    "transect",
    "boundary",
    "slice",
    "age",
    "position_m",
    "position_low_m",
    "position_high_m",
    "crossings",
    "outside",
)
"""Columns of the ``shoreline_positions`` table (``outside``: ``""``, ``"landward"`` or
``"basinward"``, where the boundary misses the transect)."""

SHIFT_COLUMNS = (
    "transect",
    "boundary",
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "shift_m",
    "shift_low_m",
    "shift_high_m",
    "rate_m_per_kyr",
    "rate_low_m_per_kyr",
    "rate_high_m_per_kyr",
    "shift_bound",
    "older_outside",
    "younger_outside",
    "sense",
    "older_crossings",
    "younger_crossings",
    "geometry",
)
"""Columns of the ``shoreline_shifts`` layer. ``shift_bound`` is ``"at_least"`` where the
boundary lies outside the mapped area at one slice: the shift is then at least
``shift_m`` in its direction."""

PAIR_COLUMNS = (
    "boundary",
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "flooded_km2",
    "exposed_km2",
    "net_shift_m",
    "net_rate_m_per_kyr",
    "net_shift_bound",
    "net_normal_shift_m",
    "median_shift_m",
    "median_shift_low_m",
    "median_shift_high_m",
    "median_rate_m_per_kyr",
    "transects_used",
    "transects_bound",
    "sense",
)
"""Columns of the ``slice_pairs`` table. ``net_shift_m`` is the dip-equivalent net shift
(net area over the boundary's extent along strike), the headline figure;
``net_normal_shift_m`` the same net area over the boundary's length."""

PAIR_CORE_COLUMNS = (
    "interval",
    "n_cores",
    "n_deepening",
    "n_shallowing",
    "n_aggrading",
    "n_mixed",
    "core_sense",
    "mapped_sense",
    "agreement",
)
"""Columns the core reading adds to ``slice_pairs`` (when the build read the cores)."""

LAYER_ORDER = (
    "cores",
    "core_slices",
    "core_contacts",
    "turnarounds",
    "gaps",
    "control_points",
    "facies_belts",
    "shorelines",
    "shoreline_bands",
    "transects",
    "shoreline_shifts",
    "shoreline_positions",
    "slice_pairs",
    "slice_quality",
    "run_info",
)
"""Layers of ``paleomap.gpkg``, in the order written."""

GEOMETRY_TYPES = {
    "cores": "Point",
    "core_slices": "Point",
    "core_contacts": "Point",
    "turnarounds": "Point",
    "gaps": "Point",
    "control_points": "Point",
    "facies_belts": "MultiPolygon",
    "shorelines": "MultiLineString",
    "shoreline_bands": "MultiPolygon",
    "transects": "LineString",
    "shoreline_shifts": "LineString",
}
"""Declared geometry type of each feature layer (needed when a layer is empty)."""

LAYER_COLUMNS: dict[str, tuple[str, ...]] = {
    "core_slices": ("core_id", "slice", "age", "belt", "rank", "depth"),
    "core_contacts": ("core_id", "depth", "lower", "upper", "jump", "flag"),
    "facies_belts": ("slice", "age", "belt", "rank", "marine", "area_km2"),
    "shorelines": ("slice", "age", "boundary", "boundary_label", "length_km"),
    "shoreline_bands": ("slice", "age", "boundary", "boundary_label", "area_km2"),
    "transects": ("transect", "azimuth_deg", "length_km", "source", "lsq_rate_m_per_kyr"),
    "shoreline_shifts": SHIFT_COLUMNS[:-1],
    "shoreline_positions": POSITION_COLUMNS,
    "slice_pairs": PAIR_COLUMNS,
    "run_info": ("key", "value"),
}
"""The fixed leading columns of each table (geometry apart). ``cores`` and
``core_slices`` may gain the core reading's columns, ``slice_pairs`` gains
:data:`PAIR_CORE_COLUMNS`, ``slice_quality`` carries ``slice``, ``age``, ``file_stem`` (the
stem of the slice's rasters and figure) and the engine's own scores; an
empty ``core_contacts`` keeps the columns listed here."""


@dataclass(eq=False)
class SliceMap:
    """The map of one time slice.

    Grids have the grid's shape (rows north to south): ``latent`` and ``latent_sd``
    are the latent's predictive mean and standard deviation (float32 on large maps).
    :attr:`probabilities` (n_belts, rows, cols) float32 and :attr:`distal_probability`
    (the probability of the distal side of the tracked boundary) are either stored
    (where the engine averaged them over its samples) or derived from the mean and sd
    on each access, which is what keeps a build of many large slices in memory.
    ``polygons[k]`` is belt ``k``'s geometry; ``distal`` the union of the belts on the
    distal side; :attr:`nodes` the contouring nodes (adjusted so every core lies in its
    own belt; rebuilt from the latent and the adjustments on each access).
    """

    slice: Slice
    core_ids: tuple[str, ...]
    ranks: np.ndarray
    thresholds: np.ndarray
    latent: np.ndarray
    latent_sd: np.ndarray
    grid: Grid
    tracked_boundary: int
    node_adjustments: tuple
    polygons: list
    shoreline: object
    band: object
    distal: object
    stored_probabilities: np.ndarray | None = None
    quality: dict = field(default_factory=dict)
    others: dict = field(default_factory=dict)
    """Every further tracked boundary ``b`` -> ``{"line", "band", "distal"}``."""
    control: tuple = ()
    """Control points used at this slice: (point_id, easting, northing, rank, weight)."""

    def boundary(self, b: int) -> dict:
        """``{"line", "band", "distal"}`` of tracked boundary ``b``."""
        if b == self.tracked_boundary:
            return {"line": self.shoreline, "band": self.band, "distal": self.distal}
        return self.others[b]

    def mapped_belt(self) -> np.ndarray:
        """Belt rank of each cell from the mean latent (the class the polygons show)."""
        return classify(self.latent, self.thresholds)

    @property
    def probabilities(self) -> np.ndarray:
        """Belt probabilities, (n_belts, rows, cols) float32."""
        if self.stored_probabilities is not None:
            return self.stored_probabilities
        from .probability import moment_probabilities

        return moment_probabilities(self.latent, self.latent_sd, self.thresholds)

    @property
    def distal_probability(self) -> np.ndarray:
        """Probability of the distal side of the tracked boundary, (rows, cols) float32."""
        return self.distal_probability_of(self.tracked_boundary)

    def distal_probability_of(self, b: int) -> np.ndarray:
        """Probability of the distal side of boundary ``b``, (rows, cols) float32."""
        if self.stored_probabilities is not None:
            return self.stored_probabilities[b:].sum(axis=0)
        from .probability import distal_probability

        return distal_probability(self.latent, self.latent_sd, self.thresholds[b - 1])

    def distal_probability_at(self, easting, northing, b: int | None = None) -> np.ndarray:
        """:attr:`distal_probability` (of boundary ``b``, default the tracked one)
        interpolated at points as its contouring nodes would give it, computed at the
        points' surrounding cells only."""
        b = self.tracked_boundary if b is None else b
        if self.stored_probabilities is not None:
            return node_field(self.distal_probability_of(b), self.grid).at(easting, northing)
        from .probability import distal_probability

        t = self.thresholds[b - 1]

        def cells(rows, cols):
            return distal_probability(self.latent[rows, cols], self.latent_sd[rows, cols], t)

        return cell_field_at(self.grid, easting, northing, cells)

    @property
    def nodes(self):
        """The contouring nodes (:class:`paleomap.belts.NodeField`), cores honoured."""
        nodes = node_field(self.latent, self.grid)
        rows, cols, shift = self.node_adjustments
        nodes.values[rows, cols] += shift
        return nodes


@dataclass(frozen=True)
class Transect:
    """A migration transect, landward to basinward."""

    transect: str
    line: object
    azimuth_deg: float
    source: str  # "dip" (default) or "user"
    lsq_rate_m_per_kyr: float = float("nan")


@dataclass(eq=False)
class BuildResult:
    """Everything a build computed, ready for the writers, figures and report.

    ``positions``, ``shifts`` and ``slice_pairs`` have the columns
    :data:`POSITION_COLUMNS`, :data:`SHIFT_COLUMNS` and :data:`PAIR_COLUMNS`
    (+ :data:`PAIR_CORE_COLUMNS`); ``chart`` is the chronostratigraphic chart's
    section (None when the build has no transect); ``records`` the cores' dated belt
    records the field engine was fitted to and ``field`` the fitted engine, whose
    ``predict`` gives the latent at any points and ages.
    """

    project: Project
    grid: Grid
    samples: pd.DataFrame
    slice_maps: list[SliceMap]
    transects: list[Transect]
    positions: pd.DataFrame
    shifts: pd.DataFrame
    slice_pairs: pd.DataFrame
    reading: object
    run_info: dict
    timings: dict
    age_models: dict = field(default_factory=dict)
    other_boundaries: dict = field(default_factory=dict)
    """``positions``, ``shifts`` and ``slice_pairs`` of the further tracked boundaries
    (a carbonate ramp's shoal edge), with the main tables' columns."""
    chart: WheelerSection | None = None
    records: Records | None = None
    field: FittedField | None = None


@dataclass(frozen=True, eq=False)
class WheelerSection:
    """Belts along a transect at many ages (the data of a Wheeler chart).

    Attributes
    ----------
    transect : str
        Transect id.
    distance_m : numpy.ndarray
        (n_points,) distance of each point from the transect's landward end.
    ages : numpy.ndarray
        (n_ages,) ages, increasing (youngest first), in the project's age unit.
    ranks : numpy.ndarray
        (n_ages, n_points) belt rank; -1 where there is no record.
    boundary_m : numpy.ndarray
        (n_ages,) position of the tracked boundary (NaN where undefined).
    cores_recording : numpy.ndarray
        (n_ages,) number of cores that record each age.
    near_cores : tuple of (str, float, float)
        (core id, distance along, distance off the line) of the cores within one core
        spacing of the transect.

    Computed once in the build (:mod:`paleomap.chart`) from the field engine's
    prediction at the chart's ages, which include every slice's age.
    """

    transect: str
    distance_m: np.ndarray
    ages: np.ndarray
    ranks: np.ndarray
    boundary_m: np.ndarray
    cores_recording: np.ndarray
    near_cores: tuple

    @property
    def record_fraction(self) -> float:
        """Share of the chart's cells with a record."""
        return float(np.mean(self.ranks >= 0)) if self.ranks.size else 0.0


def chart_transect(transects: Sequence[Transect], transect: str | None = None) -> Transect:
    """The transect of the chart: ``transect`` by id, else the user's first, else the
    middle default one.

    Examples
    --------
    >>> import shapely
    >>> ts = [Transect(f"T{i}", shapely.LineString([(i, 0), (i, 1)]), 0.0, "dip")
    ...       for i in range(3)]
    >>> chart_transect(ts).transect, chart_transect(ts, "T0").transect
    ('T1', 'T0')

    Raises
    ------
    KeyError
        No transect with that id.
    """
    ts = list(transects)
    if not ts:
        raise KeyError("the build has no transects")
    if transect is not None:
        for t in ts:
            if t.transect == transect:
                return t
        raise KeyError(
            f"no transect {transect!r}; the build has: {', '.join(t.transect for t in ts)}"
        )
    users = [t for t in ts if t.source == "user"]
    return users[0] if users else ts[len(ts) // 2]
