"""A synthetic basin: the forward model run, drilled, and its truth drawn.

:func:`make_basin` lays facies down on a :class:`~paleomap.synthetic.surface.Ramp`
under a :class:`~paleomap.synthetic.sealevel.SeaLevelHistory` with the elevation
bands and accumulation rates of :class:`~paleomap.synthetic.deposition.FaciesBands`,
drills cores, and returns a :class:`SyntheticBasin` holding the project tables,
the truth layers and functions for the truth anywhere and at any age.

The cores and the truth come from one computation: every point evolves on its own
through the same time steps, so a core's facies at a surface is exactly the true
belt at that core's position and age, and the true shoreline at an age is exactly
where the surface, as built by then, meets sea level.

Examples
--------
>>> basin = make_basin(n_cores=12, seed=1, truth_cell_m=400.0)
>>> len(basin.cores), len(basin.surfaces)
(12, 8)
>>> sorted(basin.true_belts.columns.tolist())[:3]
['age', 'area_km2', 'belt']
"""

from __future__ import annotations

import logging
import math
from collections.abc import Sequence
from dataclasses import dataclass, field

import geopandas as gpd
import numpy as np
import pandas as pd
import pyproj
import shapely

from ..errors import InputError, Problem
from ..project import AGE_UNITS, Surface
from ..scheme import Scheme, builtin_scheme
from .deposition import FaciesBands, _evolve, _time_grid
from .drilling import LAYOUTS, _log_cores, core_positions
from .sealevel import DEFAULT_SEA_LEVEL, SeaLevelHistory
from .surface import DEFAULT_CRS, Ramp
from .truth import (
    _belt_geometries,
    _boundary_line,
    _crossings,
    _line_samples,
    _sense,
)

__all__ = ["SyntheticBasin", "make_basin"]

_log = logging.getLogger(__name__)

_SAMPLE_M = 20.0  # spacing of exact samples along lines when finding crossings


@dataclass(frozen=True)
class _Model:
    """Everything needed to evolve any set of points again."""

    ramp: Ramp
    bands: FaciesBands
    ages_kyr: np.ndarray
    levels: np.ndarray
    erosion_m_per_kyr: float

    def run(self, easting, northing, record, keep_column=False):
        return _evolve(
            self.ramp.initial_elevation(easting, northing),
            self.ramp.subsidence_rate(easting, northing),
            self.ages_kyr,
            self.levels,
            self.bands,
            self.erosion_m_per_kyr,
            np.asarray(record, dtype=int),
            keep_column,
        )

    def node(self, age_kyr: float) -> int:
        """Index of a step boundary at exactly this age."""
        hit = np.flatnonzero(self.ages_kyr == age_kyr)
        if hit.size:
            return int(hit[0])
        raise KeyError(age_kyr)

    def bracket(self, ages_kyr: np.ndarray):
        """(older index, younger index, fraction) of ages inside the history."""
        a = self.ages_kyr
        if np.any(ages_kyr > a[0]) or np.any(ages_kyr < a[-1]) or not np.all(np.isfinite(ages_kyr)):
            raise InputError(
                [
                    Problem(
                        None,
                        None,
                        "age",
                        ages_kyr.tolist(),
                        "is outside the sea-level history",
                        f"ages run from {a[0]} to {a[-1]} kyr",
                    )
                ]
            )
        # Ages are decreasing: search on the negated, increasing array.
        j1 = np.clip(np.searchsorted(-a, -ages_kyr, side="left"), 1, len(a) - 1)
        j0 = j1 - 1
        frac = (a[j0] - ages_kyr) / (a[j0] - a[j1])
        return j0, j1, frac

    def elevation(self, easting, northing, ages_kyr):
        """Elevation relative to sea level, shape (n_ages, n_points).

        Within a step everything the model does is linear in time (basement,
        accumulation, sea level), so between step boundaries it interpolates exactly.
        """
        e = np.atleast_1d(np.asarray(easting, dtype=float)).ravel()
        n = np.atleast_1d(np.asarray(northing, dtype=float)).ravel()
        ages_kyr = np.atleast_1d(np.asarray(ages_kyr, dtype=float))
        j0, j1, frac = self.bracket(ages_kyr)
        nodes = np.unique(np.concatenate([j0, j1]))
        ev = self.run(e, n, nodes)
        pos = {int(j): i for i, j in enumerate(nodes)}
        r0 = ev.recorded[[pos[int(j)] for j in j0]]
        r1 = ev.recorded[[pos[int(j)] for j in j1]]
        f = frac[:, None]
        return np.where(f == 0.0, r0, r0 + (r1 - r0) * f)


@dataclass(frozen=True, eq=False)
class SyntheticBasin:
    """A synthetic project with its exactly known truth.

    Attributes
    ----------
    name : str
    scheme : Scheme
    bands : FaciesBands
    ramp : Ramp
    sea_level : SeaLevelHistory
    surfaces : tuple of paleomap.project.Surface
        Oldest first; ages in ``age_unit``. A slice is made at each.
    cores : pandas.DataFrame
        ``core_id, x, y, elevation`` (elevation of the core top, m above the datum).
    intervals : pandas.DataFrame
        ``core_id, top, base, facies``: merged facies intervals, depths in metres
        down from the core top.
    picks : pandas.DataFrame
        ``core_id, surface, depth``.
    true_belts : geopandas.GeoDataFrame
        ``slice, age, belt, rank, marine, area_km2``: one feature per slice and belt.
    true_shorelines : geopandas.GeoDataFrame
        ``slice, age, boundary, level_m, length_km``: the shoreline (if the scheme has
        one) and the tracked boundary (if it is another), per slice.
    true_transects : geopandas.GeoDataFrame
        ``transect, strike_m, azimuth_deg``: the dip transects of ``true_shifts``.
    true_shifts : pandas.DataFrame
        Per boundary, transect and pair of consecutive slices: positions along the
        transect (m from its landward end), ``shift_m`` (positive landward =
        transgression), ``rate_m_per_kyr`` and ``sense``; rows with transect
        ``"mean"`` average dense dip lines over the whole strike extent.
    cell_size_m, margin_m : float
        The project's ``[grid]`` settings.
    settings : dict
        The arguments :func:`make_basin` was called with.
    """

    name: str
    scheme: Scheme
    bands: FaciesBands
    ramp: Ramp
    sea_level: SeaLevelHistory
    surfaces: tuple[Surface, ...]
    cores: pd.DataFrame
    intervals: pd.DataFrame
    picks: pd.DataFrame
    true_belts: gpd.GeoDataFrame
    true_shorelines: gpd.GeoDataFrame
    true_transects: gpd.GeoDataFrame
    true_shifts: pd.DataFrame
    cell_size_m: float
    margin_m: float
    settings: dict = field(default_factory=dict)
    _model: _Model = field(default=None, repr=False)
    _columns: np.ndarray = field(default=None, repr=False)
    _ranks: np.ndarray = field(default=None, repr=False)
    _depths: np.ndarray = field(default=None, repr=False)

    @property
    def crs(self) -> pyproj.CRS:
        return pyproj.CRS.from_user_input(self.ramp.crs)

    @property
    def age_unit(self) -> str:
        return self.sea_level.age_unit

    @property
    def region(self) -> shapely.Polygon:
        return self.ramp.region

    @property
    def slice_names(self) -> tuple[str, ...]:
        return tuple(s.name for s in self.surfaces)

    def _kyr(self, age) -> np.ndarray:
        return np.asarray(age, dtype=float) * AGE_UNITS[self.age_unit]

    def elevation_above_sea_level(self, easting, northing, age) -> np.ndarray:
        """True elevation of the depositional surface relative to sea level.

        Negative values are water depths. This is the continuous quantity the belts
        are cut from, at any points and ages of the history.

        Parameters
        ----------
        easting, northing : array-like
            Points in the basin's CRS.
        age : float or sequence of float
            In ``age_unit``.

        Returns
        -------
        numpy.ndarray
            Shape (n_points,) for one age, (n_ages, n_points) for several.

        Examples
        --------
        >>> b = make_basin(n_cores=5, relief_amplitude_m=0.0, truth_cell_m=1000.0,
        ...                centre_elevation_m=-6.0)  # the default history starts at -6 m
        >>> e, n = b.ramp.centre
        >>> float(b.elevation_above_sea_level([e], [n], b.sea_level.start_age)[0])
        0.0
        """
        out = self._model.elevation(easting, northing, self._kyr(age))
        return out[0] if np.ndim(age) == 0 else out

    def boundary_level(self, boundary: int | None = None) -> float:
        """Elevation (m relative to sea level) of a boundary; default the tracked one."""
        b = self.scheme.tracked_boundary if boundary is None else boundary
        return self.bands.boundary_level(b)

    def true_belt_ranks(self, easting, northing, age) -> np.ndarray:
        """True belt rank at points and an age (in ``age_unit``)."""
        return self.bands.rank_of(self.elevation_above_sea_level(easting, northing, age))

    def shoreline_position(self, line, age, boundary: int | None = None) -> float:
        """Distance (m) along ``line`` from its start to where it crosses the boundary.

        The first crossing from the start (a line's landward end for dip lines); NaN
        if the line starts on the distal side or never reaches it.

        Parameters
        ----------
        line : shapely.LineString
            In the basin's CRS, e.g. :meth:`dip_line`.
        age : float
            In ``age_unit``.
        boundary : int, optional
            Boundary index; default the scheme's tracked boundary.

        Examples
        --------
        >>> b = make_basin(n_cores=5, relief_amplitude_m=0.0, truth_cell_m=1000.0,
        ...                rates_m_per_kyr=(0,) * 6, centre_elevation_m=-6.0)
        >>> line = b.dip_line(0.0)
        >>> round(b.shoreline_position(line, b.sea_level.start_age), 6)
        20000.0
        """
        return float(self.shoreline_positions([line], [age], boundary)[0, 0])

    def shoreline_positions(self, lines, ages, boundary: int | None = None) -> np.ndarray:
        """:meth:`shoreline_position` for many lines and ages, shape (n_ages, n_lines)."""
        level = self.boundary_level(boundary)
        samples = [_line_samples(ln, min(_SAMPLE_M, max(ln.length, 1e-9) / 100.0)) for ln in lines]
        if not samples:
            return np.empty((len(ages), 0))
        xy = np.concatenate([s[0] for s in samples])
        values = self._model.elevation(xy[:, 0], xy[:, 1], self._kyr(ages))
        return _crossings(samples, np.atleast_2d(values), level)

    def dip_line(self, strike_m: float) -> shapely.LineString:
        """The dip line at ``strike_m`` along strike from the centre, landward end first."""
        return self.ramp.dip_line(strike_m)

    def shoreline(self, age, boundary: int | None = None, cell_m: float | None = None):
        """The true boundary line at any age, contoured on a grid of ``cell_m``."""
        cell = cell_m or self.settings.get("truth_cell_m") or self.ramp.size_m / 400.0
        e, n, ge, gn = _nodes(self.ramp, cell)
        field_ = self._model.elevation(ge.ravel(), gn.ravel(), self._kyr([age]))[0]
        return _boundary_line(e, n, field_.reshape(ge.shape), self.boundary_level(boundary))

    def core_record(self, core_id: str) -> pd.DataFrame:
        """The true, unmerged record of one core: every preserved time step.

        Columns ``top, base`` (m below the core top), ``older_age, younger_age`` (in
        ``age_unit``) and ``facies``; youngest first. This is the exact age model
        that picks only sample.
        """
        ids = self.cores["core_id"].tolist()
        if core_id not in ids:
            raise KeyError(core_id)
        c = ids.index(core_id)
        d = self._depths[:, c]
        kept = np.flatnonzero(d[:-1] > d[1:])[::-1]
        ages = self._model.ages_kyr / AGE_UNITS[self.age_unit]
        return pd.DataFrame(
            {
                "top": d[kept + 1],
                "base": d[kept],
                "older_age": ages[kept],
                "younger_age": ages[kept + 1],
                "facies": [self.scheme.ids[int(r)] for r in self._ranks[kept, c]],
            }
        )


def _nodes(ramp: Ramp, cell: float):
    n = max(2, round(ramp.size_m / cell) + 1)
    e = ramp.origin_easting + np.linspace(0.0, ramp.size_m, n)
    nn = ramp.origin_northing + np.linspace(0.0, ramp.size_m, n)
    ge, gn = np.meshgrid(e, nn)
    return e, nn, ge, gn


def _resolve_scheme(scheme) -> Scheme:
    if isinstance(scheme, Scheme):
        return scheme
    return builtin_scheme(str(scheme))


def _default_surface_ages(history: SeaLevelHistory, n: int) -> list[float]:
    span = history.start_age - history.end_age
    ages = [history.start_age - span * (k + 1) / (n + 1) for k in range(n)]
    # Round to a thousandth of the age unit so the ages read well in project.toml.
    return [round(a, 3) for a in ages]


def _fall_ends(history: SeaLevelHistory) -> list[float]:
    """Ages (age unit) at which a fall of sea level ends (the lowstands)."""
    lv = history.levels
    out = []
    for i in range(1, len(lv)):
        falling = lv[i] < lv[i - 1]
        next_not_falling = i == len(lv) - 1 or lv[i + 1] >= lv[i]
        if falling and next_not_falling:
            out.append(float(history.ages[i]))
    return out


def make_basin(
    *,
    n_cores: int = 40,
    layout: str = "random",
    seed: int = 0,
    scheme: str | Scheme = "shoreface_shelf",
    levels_m: Sequence[float] | None = None,
    rates_m_per_kyr: Sequence[float] | None = None,
    sea_level: SeaLevelHistory | Sequence[tuple[float, float]] | None = None,
    age_unit: str = "ka",
    surfaces: int | Sequence[float] = 8,
    surface_names: Sequence[str] | None = None,
    gradient_m_per_km: float = 1.5,
    dip_azimuth_deg: float = 90.0,
    relief_amplitude_m: float = 4.0,
    relief_wavelength_m: float = 16_000.0,
    relief_phase_deg: float = 0.0,
    subsidence_m_per_kyr_per_km: float = 0.0,
    centre_elevation_m: float | None = None,
    step_kyr: float = 0.5,
    erosion_m_per_kyr: float = 0.0,
    size_m: float = 40_000.0,
    origin: tuple[float, float] = (500_000.0, 6_200_000.0),
    crs: str = DEFAULT_CRS,
    cell_size_m: float | None = None,
    margin_m: float | None = None,
    truth_cell_m: float | None = None,
    min_spacing_m: float | None = None,
    transect_spacing_m: float = 4000.0,
    core_prefix: str = "C",
    name: str = "Synthetic basin",
    decimals: int = 3,
) -> SyntheticBasin:
    """Run the forward model, drill it and draw its truth.

    Parameters
    ----------
    n_cores : int
        Cores to drill (``"grid"`` gives the nearest full grid).
    layout : {"random", "grid", "clusters"}
    seed : int
        Seed of the only random choices: core positions.
    scheme : str or Scheme
        ``"shoreface_shelf"``, ``"carbonate_ramp"`` or a :class:`Scheme` (a lithology
        scheme with its track, or a custom one).
    levels_m, rates_m_per_kyr : sequence of float, optional
        Boundary elevations relative to sea level and accumulation rates per belt
        (see :class:`~paleomap.synthetic.deposition.FaciesBands`); defaults for the
        built-in schemes, required for a custom one.
    sea_level : SeaLevelHistory or sequence of (age, level), optional
        Default :data:`~paleomap.synthetic.sealevel.DEFAULT_SEA_LEVEL` (in ka).
    age_unit : {"ka", "Ma"}
        Unit of ages in a sea-level sequence, ``surfaces`` and the project.
    surfaces : int or sequence of float
        How many surfaces to spread evenly through the history (strictly inside
        it), or their ages. With erosion, the end of every fall that cut a core
        becomes an erosional surface too.
    surface_names : sequence of str, optional
        Names, oldest first; default ``S1``, ``S2``, ... (erosional ones ``SB1``, ...).
    gradient_m_per_km, dip_azimuth_deg : float
        Regional gradient and the azimuth it dips towards.
    relief_amplitude_m, relief_wavelength_m, relief_phase_deg : float
        Along-strike sinusoid of elevation (lobes and embayments); 0 m for none.
    subsidence_m_per_kyr_per_km : float
        Subsidence increasing basinward from the most landward corner.
    centre_elevation_m : float, optional
        Initial elevation of the region's centre; default: the middle of the span of
        finite bands (e.g. -7.5 m for +15 to -30 m) below the history's time-mean
        sea level.
    step_kyr : float
        Longest time step; steps are subdivided where Walther's Law needs it.
    erosion_m_per_kyr : float
        Rate at which ground above sea level is cut down during falls (0 for none).
    size_m, origin, crs : float, (float, float), str
        Square region (side, south-west corner) in a projected CRS.
    cell_size_m, margin_m : float, optional
        The project's mapping grid; default ``size_m / 200`` and 10 cells.
    truth_cell_m : float, optional
        Node spacing of the truth maps; default ``size_m / 400``.
    min_spacing_m : float, optional
        Minimum core spacing (random and clustered layouts).
    transect_spacing_m : float
        Spacing along strike of the dip transects in ``true_shifts``.
    core_prefix, name : str
        Core ids are ``prefix`` plus a zero-padded number; ``name`` is the project's.
    decimals : int
        Depths are rounded to this many decimals (of a metre) once.

    Returns
    -------
    SyntheticBasin

    Examples
    --------
    >>> b = make_basin(n_cores=8, layout="grid", seed=3, truth_cell_m=500.0)
    >>> b.cores["core_id"].tolist()[:3]
    ['C1', 'C2', 'C3']
    """
    settings = {k: v for k, v in locals().items() if k != "sea_level"}
    problems = _option_problems(
        n_cores,
        layout,
        step_kyr,
        erosion_m_per_kyr,
        size_m,
        cell_size_m,
        truth_cell_m,
        transect_spacing_m,
        age_unit,
    )
    if problems:
        raise InputError(problems)
    scheme_ = _resolve_scheme(scheme)
    bands = FaciesBands.default(scheme_, levels_m, rates_m_per_kyr)
    if sea_level is None:
        history = SeaLevelHistory(
            [(a / AGE_UNITS[age_unit], lv) for a, lv in DEFAULT_SEA_LEVEL], age_unit
        )
    elif isinstance(sea_level, SeaLevelHistory):
        history = sea_level
        age_unit = history.age_unit
    else:
        history = SeaLevelHistory(sea_level, age_unit)
    settings["sea_level"] = [list(p) for p in history.points]
    kyr = AGE_UNITS[age_unit]

    if isinstance(surfaces, int | np.integer):
        surface_ages = _default_surface_ages(history, int(surfaces))
    else:
        surface_ages = [float(a) for a in surfaces]
    _check_surfaces(surface_ages, surface_names, history)

    if centre_elevation_m is None:
        # At the history's time-mean sea level, the middle of the span of finite bands
        # lies at the centre, so every belt has room in the region.
        t = history.ages_kyr
        mean_level = float(np.trapezoid(history.levels, -t) / (t[0] - t[-1]))
        centre_elevation_m = mean_level + 0.5 * (bands.levels_m[0] + bands.levels_m[-1])
    ramp = Ramp(
        origin_easting=float(origin[0]),
        origin_northing=float(origin[1]),
        size_m=size_m,
        crs=crs,
        dip_azimuth_deg=dip_azimuth_deg,
        gradient_m_per_km=gradient_m_per_km,
        centre_elevation_m=centre_elevation_m,
        relief_amplitude_m=relief_amplitude_m,
        relief_wavelength_m=relief_wavelength_m,
        relief_phase_deg=relief_phase_deg,
        subsidence_m_per_kyr_per_km=subsidence_m_per_kyr_per_km,
    )
    fall_ends = _fall_ends(history) if erosion_m_per_kyr > 0 else []
    max_subsidence = subsidence_m_per_kyr_per_km * 2 * ramp.half_extent_m / 1000.0
    ages_kyr = _time_grid(
        history.start_age * kyr,
        history.end_age * kyr,
        step_kyr,
        np.concatenate(
            [history.ages_kyr, np.asarray(surface_ages) * kyr, np.asarray(fall_ends) * kyr]
        ),
        lambda a: history.level_at(a / kyr),
        max(bands.rates_m_per_kyr) + max_subsidence + erosion_m_per_kyr,
        bands.min_band_width_m,
    )
    model = _Model(ramp, bands, ages_kyr, history.level_at(ages_kyr / kyr), erosion_m_per_kyr)
    _log.info("forward model: %d time steps of at most %g kyr", len(ages_kyr) - 1, step_kyr)

    # Drill.
    rng = np.random.default_rng(seed)
    ce, cn = core_positions(ramp, n_cores, layout, rng, min_spacing_m)
    ce, cn = np.round(ce, 2) + 0.0, np.round(cn, 2) + 0.0
    order = np.lexsort((ce, -cn))  # number cores from the north-west, row by row
    ce, cn = ce[order], cn[order]
    width = max(1, len(str(len(ce))))
    ids = [f"{core_prefix}{i + 1:0{width}d}" for i in range(len(ce))]
    drilled = model.run(ce, cn, [], keep_column=True)

    # Erosional surfaces: the end of each fall during which some core was cut.
    surface_list = _surface_list(surface_ages, surface_names, fall_ends, drilled, model, kyr)
    index = [model.node(s.age * kyr) for s in surface_list]
    intervals, picks, depths = _log_cores(
        ids, drilled.column, drilled.ranks, scheme_, index, [s.name for s in surface_list], decimals
    )
    has_record = set(intervals["core_id"])
    if len(has_record) < len(ids):
        _log.info("%d cores have no record and are left out", len(ids) - len(has_record))
    keep = np.array([i in has_record for i in ids], dtype=bool)
    cores = pd.DataFrame(
        {
            "core_id": [i for i, k in zip(ids, keep, strict=True) if k],
            "x": ce[keep],
            "y": cn[keep],
            "elevation": np.round(drilled.surface[keep], decimals) + 0.0,
        }
    )
    picks = picks[picks["core_id"].isin(has_record)].reset_index(drop=True)

    # Truth.
    cell = truth_cell_m or size_m / 400.0
    true_belts, true_lines = _truth_maps(model, scheme_, bands, surface_list, index, cell, crs)
    transects, shifts = _truth_shifts(
        model, scheme_, bands, surface_list, kyr, transect_spacing_m, crs
    )
    cell_size = cell_size_m or size_m / 200.0
    basin = SyntheticBasin(
        name=name,
        scheme=scheme_,
        bands=bands,
        ramp=ramp,
        sea_level=history,
        surfaces=tuple(surface_list),
        cores=cores,
        intervals=intervals,
        picks=picks,
        true_belts=true_belts,
        true_shorelines=true_lines,
        true_transects=transects,
        true_shifts=shifts,
        cell_size_m=float(cell_size),
        margin_m=float(margin_m if margin_m is not None else 10 * cell_size),
        settings=settings,
        _model=model,
        _columns=drilled.column[:, keep],
        _ranks=drilled.ranks[:, keep],
        _depths=depths[:, keep],
    )
    _log.info(
        "synthetic basin: %d cores, %d intervals, %d picks, %d surfaces",
        len(cores),
        len(intervals),
        len(picks),
        len(surface_list),
    )
    return basin


def _option_problems(
    n_cores,
    layout,
    step_kyr,
    erosion,
    size_m,
    cell_size_m,
    truth_cell_m,
    transect_spacing_m,
    age_unit,
) -> list[Problem]:
    out = []

    def bad(column, value, message, hint=None):
        out.append(Problem(None, None, column, value, message, hint))

    if not isinstance(n_cores, int | np.integer) or n_cores < 1:
        bad("n_cores", n_cores, "must be a whole number >= 1")
    if layout not in LAYOUTS:
        bad("layout", layout, "is not a core layout", f"choose one of {list(LAYOUTS)}")
    if age_unit not in AGE_UNITS:
        bad("age_unit", age_unit, "is not an age unit", f"choose one of {list(AGE_UNITS)}")
    for column, value in (
        ("step_kyr", step_kyr),
        ("size_m", size_m),
        ("transect_spacing_m", transect_spacing_m),
    ):
        if not (isinstance(value, int | float) and math.isfinite(value) and value > 0):
            bad(column, value, "must be a positive number")
    for column, value in (("cell_size_m", cell_size_m), ("truth_cell_m", truth_cell_m)):
        if value is not None and not (math.isfinite(value) and value > 0):
            bad(column, value, "must be a positive length in metres")
    if not (math.isfinite(erosion) and erosion >= 0):
        bad("erosion_m_per_kyr", erosion, "must be >= 0 m/kyr")
    return out


def _check_surfaces(ages, names, history) -> None:
    problems = []
    if not ages:
        problems.append(Problem(None, None, "surfaces", ages, "needs at least one surface"))
    for a in ages:
        if not (math.isfinite(a) and history.end_age < a <= history.start_age):
            problems.append(
                Problem(
                    None,
                    None,
                    "surfaces",
                    a,
                    "is not inside the sea-level history",
                    f"ages must lie in ({history.end_age}, {history.start_age}]",
                )
            )
    if len(set(ages)) != len(ages):
        problems.append(Problem(None, None, "surfaces", list(ages), "repeats an age"))
    if names is not None:
        if len(names) != len(ages):
            problems.append(
                Problem(
                    None,
                    None,
                    "surface_names",
                    list(names),
                    f"needs one name per surface ({len(ages)})",
                )
            )
        elif len(set(names)) != len(names):
            problems.append(Problem(None, None, "surface_names", list(names), "repeats a name"))
    if problems:
        raise InputError(problems)


def _surface_list(ages, names, fall_ends, drilled, model, kyr) -> list[Surface]:
    order = sorted(range(len(ages)), key=lambda i: -ages[i])
    if names is None:
        named = {ages[i]: f"S{k + 1}" for k, i in enumerate(order)}
    else:
        named = {ages[i]: names[i] for i in range(len(ages))}
    erosional = set()
    extra = []
    col = drilled.column
    for end in fall_ends:
        j_end = model.node(end * kyr)
        j_start = j_end
        while j_start > 0 and model.levels[j_start - 1] > model.levels[j_start]:
            j_start -= 1
        if not np.any(col[j_end] < col[j_start : j_end + 1].max(axis=0) - 1e-12):
            continue  # nothing was cut during this fall
        if end in named:
            erosional.add(end)
        else:
            extra.append(end)
    for k, end in enumerate(sorted(extra, reverse=True)):
        named[end] = f"SB{k + 1}"
        erosional.add(end)
    return [Surface(named[a], a, 0.0, a in erosional) for a in sorted(named, reverse=True)]


def _truth_maps(model, scheme, bands, surfaces, index, cell, crs):
    e, n, ge, gn = _nodes(model.ramp, cell)
    ev = model.run(ge.ravel(), gn.ravel(), index)
    region = model.ramp.region
    boundaries = []
    if scheme.shoreline_boundary is not None:
        boundaries.append(scheme.shoreline_boundary)
    if scheme.tracked_boundary not in boundaries:
        boundaries.append(scheme.tracked_boundary)
    belt_rows, line_rows = [], []
    for k, s in enumerate(surfaces):
        fld = ev.recorded[k].reshape(ge.shape)
        for rank, geom in enumerate(_belt_geometries(e, n, fld, bands.levels_m, region)):
            if geom.is_empty:
                continue
            belt = scheme.belts[rank]
            belt_rows.append(
                (s.name, s.age, belt.id, rank, belt.marine, round(geom.area / 1e6, 6), geom)
            )
        for b in boundaries:
            line = _boundary_line(e, n, fld, bands.boundary_level(b))
            line_rows.append(
                (
                    s.name,
                    s.age,
                    scheme.boundary_name(b),
                    bands.boundary_level(b),
                    round(line.length / 1000.0, 6),
                    line,
                )
            )
    belts = gpd.GeoDataFrame(
        pd.DataFrame(
            belt_rows, columns=["slice", "age", "belt", "rank", "marine", "area_km2", "geometry"]
        ),
        geometry="geometry",
        crs=crs,
    )
    lines = gpd.GeoDataFrame(
        pd.DataFrame(
            line_rows, columns=["slice", "age", "boundary", "level_m", "length_km", "geometry"]
        ),
        geometry="geometry",
        crs=crs,
    )
    return belts, lines


def _truth_shifts(model, scheme, bands, surfaces, kyr, spacing, crs):
    ramp = model.ramp
    h = ramp.half_extent_m
    offsets = np.arange(-h + spacing / 2.0, h, spacing)
    named = [(f"T{i + 1:02d}", float(v), ramp.dip_line(float(v))) for i, v in enumerate(offsets)]
    named = [t for t in named if not t[2].is_empty]
    # Dense dip lines for the mean over the whole strike extent.
    dense_step = min(1000.0, spacing / 4.0)
    dense_v = np.arange(-h + dense_step / 2.0, h, dense_step)
    dense = [ramp.dip_line(float(v)) for v in dense_v]
    dense = [ln for ln in dense if not ln.is_empty]
    lines = [t[2] for t in named] + dense
    ages = [s.age for s in surfaces]
    # Dense lines only feed a mean: coarser samples (the error is second order).
    samples = [
        _line_samples(ln, _SAMPLE_M if i < len(named) else 2.5 * _SAMPLE_M)
        for i, ln in enumerate(lines)
    ]
    xy = np.concatenate([s[0] for s in samples])
    values = model.elevation(xy[:, 0], xy[:, 1], np.asarray(ages) * kyr)
    boundaries = []
    if scheme.shoreline_boundary is not None:
        boundaries.append(scheme.shoreline_boundary)
    if scheme.tracked_boundary not in boundaries:
        boundaries.append(scheme.tracked_boundary)
    rows = []
    for b in boundaries:
        level = bands.boundary_level(b)
        pos = _crossings(samples, np.atleast_2d(values), level)
        for k in range(len(ages) - 1):
            older, younger = surfaces[k], surfaces[k + 1]
            dt = (older.age - younger.age) * kyr
            for i, (tid, v, _) in enumerate(named):
                p0, p1 = pos[k, i], pos[k + 1, i]
                if not (np.isfinite(p0) and np.isfinite(p1)):
                    continue
                shift = p0 - p1
                rows.append(
                    (
                        scheme.boundary_name(b),
                        tid,
                        v,
                        older.name,
                        younger.name,
                        older.age,
                        younger.age,
                        p0,
                        p1,
                        shift,
                        shift / dt,
                        _sense(shift / dt),
                    )
                )
            d0, d1 = pos[k, len(named) :], pos[k + 1, len(named) :]
            ok = np.isfinite(d0) & np.isfinite(d1)
            if ok.any():
                shift = float(np.mean(d0[ok] - d1[ok]))
                rows.append(
                    (
                        scheme.boundary_name(b),
                        "mean",
                        float("nan"),
                        older.name,
                        younger.name,
                        older.age,
                        younger.age,
                        float(np.mean(d0[ok])),
                        float(np.mean(d1[ok])),
                        shift,
                        shift / dt,
                        _sense(shift / dt),
                    )
                )
    shifts = pd.DataFrame(
        rows,
        columns=[
            "boundary",
            "transect",
            "strike_m",
            "older_slice",
            "younger_slice",
            "older_age",
            "younger_age",
            "older_position_m",
            "younger_position_m",
            "shift_m",
            "rate_m_per_kyr",
            "sense",
        ],
    )
    transects = gpd.GeoDataFrame(
        pd.DataFrame(
            {
                "transect": [t[0] for t in named],
                "strike_m": [t[1] for t in named],
                "azimuth_deg": [float(ramp.dip_azimuth_deg % 360.0)] * len(named),
                "geometry": [t[2] for t in named],
            }
        ),
        geometry="geometry",
        crs=crs,
    )
    return transects, shifts
