"""The field engines' one interface, and the registry that picks one by name.

A field engine turns the cores' dated belt records into a model of the latent field
(the continuous variable whose thresholds cut the belts, proximal to distal) that can
be asked for the latent's mean and standard deviation, and the belt probabilities, at
any points and any ages. Everything after it in a build (belts, shorelines, migration,
the chronostratigraphic chart) uses only that prediction, so engines can be swapped.

The interface
-------------
* **In**: :class:`paleomap.records.Records`, one row per dated stretch of a core that
  logs one belt: ``core_id``, ``easting``, ``northing``, ``age_top``, ``age_base``,
  ``rank``; the number of belts; the engine's own settings (made from the project's
  ``[mapping]`` table by :meth:`FieldEngine.settings`); and the ages of the slices the
  build maps (an engine over slices conditions at them; an engine over the whole
  succession may use them only to report per-slice scores).
* **Out**: a :class:`FittedField` whose :meth:`~FittedField.predict` gives a
  :class:`Prediction` at any points and ages, and whose :meth:`~FittedField.quality`
  gives the engine's scores at each slice age (columns of ``slice_quality``).

Optionally, a fitted model over the whole succession may offer
``transect_draws(line, ages, boundary, step_m)``: joint draws, (draws, ages), of a
boundary's position along a transect at several ages. The build then takes each shift
between two slices, its P10-P90 and its rate from those draws (one draw, one possible
history), so the sense never contradicts the rate; without it the two slices' position
ranges are combined as independent.

Adding an engine: write one module with a class that has ``name``, ``settings`` and
``fit`` (a :class:`FieldEngine`) and a fitted model with ``predict`` and ``quality``
(a :class:`FittedField`), and add one line to :data:`ENGINES`. The project then
selects it with ``[mapping] engine = "<name>"``.

The registry holds import paths, not classes, so ``import paleomap`` and reading a
project stay light; the engine's module is imported when a build asks for it.

Examples
--------
>>> sorted(ENGINES)
['per_slice', 'shared_relief', 'space_time']
>>> get_engine("per_slice").name
'per_slice'
"""

from __future__ import annotations

import importlib
from collections.abc import Sequence
from dataclasses import dataclass
from typing import TYPE_CHECKING, Protocol, runtime_checkable

import numpy as np

if TYPE_CHECKING:
    from ..project import MappingSettings
    from ..records import Records

__all__ = [
    "DEFAULT_ENGINE",
    "ENGINES",
    "FieldEngine",
    "FittedField",
    "Prediction",
    "covariance_overrides",
    "get_engine",
    "ranks_by_age",
]

ENGINES: dict[str, str] = {
    "shared_relief": "paleomap.field.shared:SharedReliefEngine",
    "per_slice": "paleomap.field.ordinal:PerSliceEngine",
    "space_time": "paleomap.field.spacetime:SpaceTimeEngine",
}
"""Engine name -> ``"module:class"`` of its :class:`FieldEngine`."""

DEFAULT_ENGINE = "shared_relief"
"""The engine a project gets without ``[mapping] engine``."""


@dataclass(frozen=True, eq=False)
class Prediction:
    """The latent field at points and ages.

    One entry per requested age, each over the points (flat arrays). Where the
    engine averaged the belt probabilities over its samples it stores them; where they
    follow from the mean and sd alone (large maps) ``stored_probabilities`` is None for
    that age and :meth:`probabilities` derives them
    (:func:`paleomap.probability.moment_probabilities`). Ages where too few cores
    record anything to map hold NaN.

    Attributes
    ----------
    ages : numpy.ndarray
        (n_ages,) the ages asked for.
    latent_mean, latent_sd : tuple of numpy.ndarray
        Per age, (n_points,) predictive mean and standard deviation of the latent.
    thresholds : tuple of numpy.ndarray
        Per age, (n_belts - 1,) thresholds between belts on the latent scale.
    stored_probabilities : tuple of (numpy.ndarray or None)
        Per age, (n_points, n_belts) float32 belt probabilities, or None.
    """

    ages: np.ndarray
    latent_mean: tuple
    latent_sd: tuple
    thresholds: tuple
    stored_probabilities: tuple

    def probabilities(self, i: int) -> np.ndarray:
        """Belt probabilities at age ``i``, (n_points, n_belts) float32.

        Examples
        --------
        >>> p = Prediction(np.array([1.0]), (np.zeros(2),), (np.ones(2),),
        ...                (np.array([0.0]),), (None,))
        >>> p.probabilities(0).tolist()
        [[0.5, 0.5], [0.5, 0.5]]
        """
        if self.stored_probabilities[i] is not None:
            return self.stored_probabilities[i]
        from ..probability import moment_probabilities

        return moment_probabilities(self.latent_mean[i], self.latent_sd[i], self.thresholds[i]).T

    def belts(self, i: int) -> np.ndarray:
        """Belt rank of the mean latent at age ``i`` (-1 where it is NaN).

        >>> p = Prediction(np.array([1.0]), (np.array([-1.0, 1.0, np.nan]),), (np.ones(3),),
        ...                (np.array([0.0]),), (None,))
        >>> p.belts(0).tolist()
        [0, 1, -1]
        """
        m = np.asarray(self.latent_mean[i], dtype=float)
        out = np.searchsorted(np.asarray(self.thresholds[i]), m, side="right")
        return np.where(np.isfinite(m), out, -1)


@runtime_checkable
class FittedField(Protocol):
    """A fitted engine: the latent field at any points and ages."""

    ages: np.ndarray
    """(n,) the slice ages the model was fitted for."""

    def predict(self, easting, northing, ages: Sequence[float]) -> Prediction:
        """The latent's mean and sd and the belt probabilities at points and ages.

        At the fitted ages this is the slice maps' own field; at other ages the engine
        conditions on the records it holds at those ages.
        """

    def quality(self, age: float) -> dict:
        """The engine's scores at a fitted age: ``method``, leave-one-out scores and
        covariance parameters (the engine's own columns of ``slice_quality``)."""


@runtime_checkable
class FieldEngine(Protocol):
    """A field engine: settings from ``[mapping]`` and a fit to dated records."""

    name: str

    def settings(self, mapping: MappingSettings):
        """The engine's settings from the project's ``[mapping]`` table."""

    def fit(self, records: Records, n_belts: int, settings, ages: Sequence[float]) -> FittedField:
        """Fit to ``records`` (every core's dated belt records) for the slices at
        ``ages``."""


def get_engine(name: str) -> FieldEngine:
    """The engine registered as ``name``.

    Raises
    ------
    KeyError
        No such engine; the message lists the registered ones.
    """
    if name not in ENGINES:
        raise KeyError(f"no field engine {name!r}; known: {', '.join(sorted(ENGINES))}")
    module, _, cls = ENGINES[name].partition(":")
    return getattr(importlib.import_module(module), cls)()


def ranks_by_age(records: Records, ages: Sequence[float], min_cores: int = 2):
    """The records read at each age, for engines that condition age by age.

    Parameters
    ----------
    records : Records
    ages : sequence of float
    min_cores : int
        Ages with fewer cores recording them are left out.

    Returns
    -------
    core_ids, easting, northing : numpy.ndarray
        The cores with at least one record (:meth:`Records.cores`).
    by_age : dict
        Position of the age in ``ages`` -> (indices into the cores, belt ranks), cores
        in order.

    Examples
    --------
    >>> from paleomap.records import Records
    >>> r = Records(np.array(["A", "B", "B"], object), np.array([0.0, 1.0, 1.0]),
    ...             np.zeros(3), np.array([0.0, 0.0, 5.0]), np.array([10.0, 5.0, 10.0]),
    ...             np.array([0, 1, 2]), np.ones(3, bool))
    >>> ids, e, n, by_age = ranks_by_age(r, [2.0, 7.0, 20.0])
    >>> ids.tolist(), {j: (i.tolist(), k.tolist()) for j, (i, k) in by_age.items()}
    (['A', 'B'], {0: ([0, 1], [0, 1]), 1: ([0, 1], [0, 2])})
    """
    ids, e, n = records.cores()
    index = {c: i for i, c in enumerate(ids)}
    by_age = {}
    for j, age in enumerate(ages):
        idx = records.spanning(age)
        if idx.size < min_cores:
            continue
        by_age[j] = (
            np.array([index[c] for c in records.core_id[idx]], dtype=int),
            records.rank[idx].astype(int),
        )
    return ids, e, n, by_age


def covariance_overrides(mapping: MappingSettings) -> dict | None:
    """The covariance parameters the project fixes (``[mapping]`` ``model``,
    ``range_m``, ``anisotropy``, ``azimuth_deg``, ``nugget``); None when it fixes none.

    >>> from paleomap.project import MappingSettings
    >>> covariance_overrides(MappingSettings(model="spherical", range_m=5000.0))
    {'model': 'spherical', 'range_m': 5000.0}
    """
    values = dict(
        model=None if mapping.model == "auto" else mapping.model,
        range_m=mapping.range_m,
        anisotropy=mapping.anisotropy,
        azimuth_deg=mapping.azimuth_deg,
        nugget=mapping.nugget,
    )
    fixed = {k: v for k, v in values.items() if v is not None}
    return fixed or None
