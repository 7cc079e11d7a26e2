"""The chronostratigraphic (Wheeler) chart along one transect.

A Wheeler chart (Wheeler 1958, "Time-stratigraphy", AAPG Bulletin 42) draws a section
with time instead of depth on the vertical axis: distance along a line across the
basin against age, youngest at the top, so that each horizontal row is the
paleogeography along the line at one instant, missing time (hiatus, erosion, no
deposit) shows as blank area, and the shoreline's path through time (its trajectory)
is one line.

How the chart is computed (:func:`wheeler_section`):

* **Ages**: ``n_ages`` ages evenly spread from the youngest to the oldest surface (not
  only the surfaces), each read in every core through its age model
  (:func:`paleomap.agemodel.sample_slices`; at a surface's own age, at its pick).
* **Belts along the line**: every charted age is mapped with the build's own model —
  by default the joint model with a shared relief (:func:`paleomap.field.shared.map_shared`,
  all charted ages at once, 40 samples), else the per-slice ordinal field
  (:func:`paleomap.field.map_slices`, deterministic latent means) — kriged only at
  points along the transect, one cell size apart, which is cheap; each point takes the
  belt of its mean latent.
* **No record**: a point has no record at an age where fewer than :data:`MIN_CORES`
  cores record that age at all, or where fewer than half of its nearby cores record it
  (the cores within one mean core spacing of the point, or the three nearest when none
  is that close), for instance because the age falls in a hiatus below an erosional
  surface there or outside those cores' dated range. No-record areas are grey and
  hatched.
* **Trajectory**: at each age, the tracked boundary's position on the line, measured as
  in :mod:`paleomap.migration` (length on its proximal side, from the landward end);
  left out where the boundary does not cross the line or falls in a no-record area.
  The positions from the slice maps are marked on it.

The transect is the user's first one, or else the middle default dip transect.

Examples
--------
>>> section = wheeler_section(result, n_ages=60)       # doctest: +SKIP
>>> ax = wheeler_chart(result, section=section)        # doctest: +SKIP
"""

from __future__ import annotations

import logging
from dataclasses import dataclass, replace
from typing import TYPE_CHECKING

import numpy as np
import shapely

from .canvas import figure_style, new_figure
from .labels import short_name, surface_labels
from .palette import EDGE_COLOR, MUTED_COLOR, NO_RECORD_COLOR, SHORELINE_COLOR

if TYPE_CHECKING:
    from matplotlib.axes import Axes

    from ..pipeline import BuildResult, Transect

__all__ = [
    "DEFAULT_AGES",
    "MIN_CORES",
    "WheelerSection",
    "chart_transect",
    "wheeler_chart",
    "wheeler_section",
]

log = logging.getLogger(__name__)

DEFAULT_AGES = 60
"""Ages of a chart, evenly spread between the youngest and the oldest surface."""

MIN_CORES = 3
"""Fewest cores that must record an age for it to be mapped along the chart."""


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


def chart_transect(result: BuildResult, transect: str | None = None) -> Transect:
    """The transect of the chart: ``transect`` by id, else the user's first, else the
    middle default one.

    Raises
    ------
    KeyError
        No transect with that id.
    """
    ts = list(result.transects)
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


def _chart_slices(project, n_ages: int):
    from ..project import Slice

    surfaces = sorted(project.surfaces, key=lambda s: s.age)
    young, old = surfaces[0].age, surfaces[-1].age
    ages = np.linspace(young, old, max(int(n_ages), 2)) if old > young else np.array([young])
    by_age = {s.age: s.name for s in surfaces}
    out = []
    for i, a in enumerate(ages):
        name = next(
            (
                n
                for sa, n in by_age.items()
                if np.isclose(sa, a, rtol=0, atol=1e-9 * max(abs(old), 1.0))
            ),
            None,
        )
        out.append(Slice(f"_chart_{i:03d}", float(a), name))
    return out


def _field_settings(mapping):
    from ..field import FieldSettings

    overrides = {}
    if mapping.model not in (None, "auto"):
        overrides["model"] = mapping.model
    for key in ("range_m", "anisotropy", "azimuth_deg", "nugget"):
        v = getattr(mapping, key)
        if v is not None:
            overrides[key] = v
    return FieldSettings(
        covariance=overrides or None,
        deterministic=True,
        seed=mapping.seed,
        cross_validate=False,
        outputs=("latent_mean",),
    )


def wheeler_section(
    result: BuildResult,
    transect: str | None = None,
    *,
    n_ages: int = DEFAULT_AGES,
    step_m: float | None = None,
) -> WheelerSection:
    """Belts along a transect at ``n_ages`` ages, with no-record areas and the trajectory.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    transect : str, optional
        Transect id; default :func:`chart_transect`.
    n_ages : int
        Number of ages between the youngest and the oldest surface.
    step_m : float, optional
        Spacing of the points along the transect; default one grid cell.

    Returns
    -------
    WheelerSection

    Examples
    --------
    >>> s = wheeler_section(result, n_ages=40)   # doctest: +SKIP
    >>> s.ranks.shape                            # doctest: +SKIP
    (40, 180)
    """
    from scipy.spatial import cKDTree

    from ..agemodel import sample_slices
    from ..field import belt_of, map_slices
    from ..grid import mean_core_spacing

    project = result.project
    tr = chart_transect(result, transect)
    line = tr.line
    step = float(step_m or result.grid.cell_size)
    n_pts = max(2, int(np.ceil(line.length / step)) + 1)
    dist = np.linspace(0.0, line.length, n_pts)
    xy = shapely.get_coordinates(shapely.line_interpolate_point(line, dist))

    slices = _chart_slices(project, n_ages)
    ages = np.array([s.age for s in slices])
    samples = sample_slices(project, slices, result.age_models or None)

    ids = [c.core_id for c in project.cores]
    index = {c: i for i, c in enumerate(ids)}
    ce = np.array([c.easting for c in project.cores])
    cn = np.array([c.northing for c in project.cores])
    spacing = mean_core_spacing(ce, cn)
    if not np.isfinite(spacing) or spacing <= 0:
        spacing = line.length
    tree = cKDTree(np.column_stack([ce, cn]))
    near = tree.query_ball_point(xy, r=spacing)
    k = min(3, len(ids))
    _, nearest = tree.query(xy, k=k)
    nearest = np.atleast_2d(nearest).reshape(len(xy), k)
    neighbours = [np.asarray(nb if nb else nearest[i], dtype=int) for i, nb in enumerate(near)]

    n_belts = project.scheme.n_belts
    ranks = np.full((len(slices), n_pts), -1, dtype=int)
    recording = np.zeros(len(slices), dtype=int)
    by_slice, uniform = {}, {}
    groups = samples.groupby("slice", sort=False)
    for j, sl in enumerate(slices):
        if sl.name not in groups.groups:
            continue
        rows = groups.get_group(sl.name)
        recording[j] = len(rows)
        if len(rows) < MIN_CORES:
            continue
        idx = np.array([index[c] for c in rows["core_id"]])
        r = rows["rank"].to_numpy(int)
        if np.unique(r).size == 1:
            uniform[j] = int(r[0])
        else:
            by_slice[j] = (idx, r)
    if project.mapping.joint and (by_slice or uniform):
        # The same joint model as the slice maps, over every charted age at once, so
        # the chart and the maps tell one story.
        from ..field.shared import map_shared
        from ..pipeline import field_settings

        every = dict(by_slice)
        for j in uniform:
            rows = groups.get_group(slices[j].name)
            every[j] = (np.array([index[c] for c in rows["core_id"]]), rows["rank"].to_numpy(int))
        settings = replace(field_settings(project), samples=40, burn_in=60)
        fields, _fit = map_shared(ce, cn, every, xy[:, 0], xy[:, 1], n_belts, settings)
        for j, fr in fields.items():
            ranks[j] = belt_of(fr.latent_mean, fr.thresholds)
        uniform = {}
    elif by_slice:
        fields, _fit = map_slices(
            ce, cn, by_slice, xy[:, 0], xy[:, 1], n_belts, _field_settings(project.mapping)
        )
        for j, fr in fields.items():
            ranks[j] = belt_of(fr.latent_mean, fr.thresholds)
    for j, r in uniform.items():
        ranks[j] = r

    mapped = ranks.copy()
    # no record where most nearby cores do not record the age
    has = np.zeros((len(slices), len(ids)), dtype=bool)
    slice_pos = {s.name: j for j, s in enumerate(slices)}
    if len(samples):
        has[
            samples["slice"].map(slice_pos).to_numpy(int),
            samples["core_id"].map(index).to_numpy(int),
        ] = True
    for i, nb in enumerate(neighbours):
        share = has[:, nb].mean(axis=1)
        ranks[share < 0.5, i] = -1
    ranks[recording < MIN_CORES] = -1

    b = project.scheme.tracked_boundary
    ds = line.length / (n_pts - 1)
    w = np.full(n_pts, ds)
    w[0] = w[-1] = ds / 2
    boundary = np.full(len(slices), np.nan)
    for j in range(len(slices)):
        row = mapped[j]
        if (row < 0).any():
            continue  # not mapped at this age
        proximal = row < b
        if not np.any(np.diff(proximal.astype(int))):
            continue  # the boundary does not cross the line
        pos = float(np.sum(w[proximal]))
        at = min(int(round(pos / ds)), n_pts - 1)
        if ranks[j, at] >= 0:  # the trajectory is drawn only where there is a record
            boundary[j] = pos

    off = shapely.distance(shapely.points(ce, cn), line)
    along = shapely.line_locate_point(line, shapely.points(ce, cn))
    close = [
        (ids[i], float(along[i]), float(off[i]))
        for i in np.argsort(along)
        if off[i] <= spacing and 0.0 < along[i] < line.length
    ]
    log.debug(
        "chart along %s: %d ages x %d points, %.0f%% with a record",
        tr.transect,
        len(slices),
        n_pts,
        100 * np.mean(ranks >= 0),
    )
    return WheelerSection(tr.transect, dist, ages, ranks, boundary, recording, tuple(close))


def wheeler_chart(
    result: BuildResult,
    transect: str | None = None,
    ax: Axes | None = None,
    *,
    section: WheelerSection | None = None,
    n_ages: int = DEFAULT_AGES,
) -> Axes:
    """Draw the chronostratigraphic (Wheeler) chart along a transect.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    transect : str, optional
        Transect id; default the user's first transect or the middle default one.
    ax : matplotlib.axes.Axes, optional
        Axes to draw into; a new report-size figure when None. Surface names go to the
        right of the axes, the legend below.
    section : WheelerSection, optional
        A section already computed by :func:`wheeler_section`.
    n_ages : int
        Ages of the chart when ``section`` is not given.

    Returns
    -------
    matplotlib.axes.Axes

    Examples
    --------
    >>> ax = wheeler_chart(result)   # doctest: +SKIP
    """
    from matplotlib.lines import Line2D
    from matplotlib.patches import Patch, Rectangle

    from .scales import belt_cmap

    project = result.project
    scheme = project.scheme
    unit = project.age_unit
    s = section if section is not None else wheeler_section(result, transect, n_ages=n_ages)
    km = s.distance_m / 1000.0
    a = s.ages
    da = (a[1] - a[0]) / 2 if a.size > 1 else 0.5
    dx = (km[1] - km[0]) / 2 if km.size > 1 else 0.5
    extent = (km[0] - dx, km[-1] + dx, a[-1] + da, a[0] - da)  # youngest at the top
    with figure_style():
        if ax is None:
            ax = new_figure(7.5, 5.6).add_axes((0.09, 0.25, 0.74, 0.67))
        ax.add_patch(
            Rectangle(
                (extent[0], extent[3]),
                extent[1] - extent[0],
                extent[2] - extent[3],
                facecolor=NO_RECORD_COLOR,
                edgecolor=MUTED_COLOR,
                hatch="///",
                linewidth=0.0,
                zorder=0,
            )
        )
        masked = np.ma.masked_less(s.ranks, 0)
        ax.imshow(
            masked,
            cmap=belt_cmap(scheme),
            vmin=-0.5,
            vmax=scheme.n_belts - 0.5,
            extent=extent,
            origin="upper",
            aspect="auto",
            interpolation="nearest",
            zorder=1,
        )
        ax.set_xlim(extent[0], extent[1])
        ax.set_ylim(extent[2], extent[3])

        ordered = sorted(project.surfaces, key=lambda x: x.age)
        for sf in ordered:
            ax.axhline(
                sf.age,
                color=EDGE_COLOR,
                linewidth=1.0 if sf.erosional else 0.6,
                linestyle="-" if sf.erosional else (0, (4, 2)),
                zorder=3,
            )
        surface_labels(
            ax,
            [sf.age for sf in ordered],
            [
                f"{short_name(sf.name, 12)} {sf.age:.4g}" + (" (eros.)" if sf.erosional else "")
                for sf in ordered
            ],
            fontsize=7,
        )

        ok = np.isfinite(s.boundary_m)
        ax.plot(
            np.where(ok, s.boundary_m / 1000.0, np.nan),
            a,
            color=SHORELINE_COLOR,
            linewidth=1.8,
            zorder=4,
            solid_capstyle="round",
        )
        pos = result.positions
        pos = pos[(pos["transect"] == s.transect) & np.isfinite(pos["position_m"])]
        ax.plot(
            pos["position_m"] / 1000.0,
            pos["age"],
            linestyle="none",
            marker="D",
            markersize=4.5,
            markerfacecolor="white",
            markeredgecolor=SHORELINE_COLOR,
            markeredgewidth=1.0,
            zorder=5,
        )
        if s.near_cores:
            ax.plot(
                [c[1] / 1000.0 for c in s.near_cores],
                [extent[3]] * len(s.near_cores),
                linestyle="none",
                marker="v",
                markersize=5,
                color=EDGE_COLOR,
                clip_on=False,
                zorder=6,
            )

        ax.set_xlabel(
            f"Distance along transect {short_name(s.transect, 20)} (km), landward to basinward",
            fontsize=8,
        )
        ax.set_ylabel(f"Age ({unit}), youngest at the top", fontsize=8)
        ax.tick_params(labelsize=7.5)
        boundary = (
            "shoreline"
            if scheme.tracks_shoreline
            else short_name(f"boundary {scheme.boundary_name(scheme.tracked_boundary)}", 20)
        )
        ax.set_title(
            f"Chronostratigraphic (Wheeler) chart along {short_name(s.transect, 20)}, "
            f"{len(a)} ages",
            loc="left",
            fontsize=10,
            pad=14,
        )

        handles = [
            Patch(facecolor=b.color, edgecolor=EDGE_COLOR, linewidth=0.4) for b in scheme.belts
        ]
        labels = [short_name(b.label or b.id, 28) for b in scheme.belts]
        handles += [
            Patch(facecolor=NO_RECORD_COLOR, edgecolor=MUTED_COLOR, hatch="///", linewidth=0.4),
            Line2D([], [], color=SHORELINE_COLOR, linewidth=1.8),
            Line2D(
                [],
                [],
                linestyle="none",
                marker="D",
                markersize=4.5,
                markerfacecolor="white",
                markeredgecolor=SHORELINE_COLOR,
            ),
            Line2D([], [], color=EDGE_COLOR, linewidth=0.6, linestyle=(0, (4, 2))),
            Line2D([], [], linestyle="none", marker="v", markersize=5, color=EDGE_COLOR),
        ]
        labels += [
            "no record (hiatus or too few cores)",
            f"{boundary} trajectory",
            f"{boundary} on the slice maps",
            "dated surface",
            "core within one core spacing",
        ]
        ax.legend(
            handles,
            labels,
            loc="upper left",
            bbox_to_anchor=(0.0, -0.11),
            bbox_transform=ax.transAxes,
            ncol=3,
            frameon=False,
            fontsize=7.5,
            borderaxespad=0.0,
            handlelength=1.8,
            columnspacing=1.2,
        )
    return ax
