"""Leave-one-out cross-validation of the ordinal field at the cores.

Each core in turn is held out and its belt predicted from the others. The
universal-kriging leave-one-out estimate needs no refit: with the projected
precision ``Q`` (drift filtered out) the residual is ``y_i - yhat_{-i} = (Q y)_i /
Q_ii`` and the variance ``1 / Q_ii``. For each latent sample the held-out core gets
belt probabilities from ``N(yhat_{-i}, 1/Q_ii)`` cut at the thresholds; they are
averaged over samples and the most likely belt is the prediction.

Folds are spatial by construction: the unit held out is a core, a position.

The latent values at the other cores are the ones sampled with every core in the
data (the held-out core's own constraint still shaped its neighbours' samples), so
the scores lean slightly optimistic where cores are dense; they measure how well
the field between cores is pinned down, core by core.

Examples
--------
>>> import numpy as np
>>> from paleomap.field.covariance import Covariance
>>> from paleomap.field.kriging import KrigingSystem
>>> e = np.array([0.0, 1.0, 2.0, 3.0, 4.0, 5.0]) * 100; n = np.array([0, 50, 0, 50, 0, 50.0])
>>> sys = KrigingSystem(Covariance("exponential", 1.0, 300.0), e, n, drift="constant")
>>> y = np.array([[-1.0, -0.5, -0.2, 0.3, 0.6, 1.1]])  # one sample
>>> cv = leave_one_out(sys, y, [0.0], [0, 0, 0, 1, 1, 1])
>>> cv.predicted_rank.tolist()
[1, 0, 0, 1, 1, 1]
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from numpy.typing import ArrayLike
from scipy import special

from .kriging import KrigingSystem

__all__ = ["CrossValidation", "leave_one_out"]


@dataclass(frozen=True, eq=False)
class CrossValidation:
    """Leave-one-out scores of one slice.

    Attributes
    ----------
    share_in_own_belt : float
        Share of cores whose most likely held-out belt is their logged belt.
    mean_abs_rank_error : float
        Mean absolute difference between predicted and logged rank.
    predicted_rank : numpy.ndarray
        (n,) most likely belt of each held-out core.
    probabilities : numpy.ndarray
        (n, n_belts) held-out belt probabilities.
    latent_prediction : numpy.ndarray
        (n,) held-out latent estimate, averaged over samples.
    latent_sd : numpy.ndarray
        (n,) leave-one-out kriging standard deviation.
    """

    share_in_own_belt: float
    mean_abs_rank_error: float
    predicted_rank: np.ndarray
    probabilities: np.ndarray
    latent_prediction: np.ndarray
    latent_sd: np.ndarray


def leave_one_out(
    system: KrigingSystem,
    samples: ArrayLike,
    threshold: ArrayLike,
    ranks: ArrayLike,
    projected_precision_diagonal: np.ndarray | None = None,
) -> CrossValidation:
    """Leave-one-out belt prediction at every core of one slice.

    Parameters
    ----------
    system : KrigingSystem
        Kriging system of the slice's cores.
    samples : array_like
        Latent samples at the cores, (n_samples, n) (one row in deterministic mode).
    threshold : array_like
        (K-1,) thresholds.
    ranks : array_like
        (n,) logged ranks.
    projected_precision_diagonal : numpy.ndarray, optional
        ``diag(Q)``, to reuse across slices sharing ``system``.

    Returns
    -------
    CrossValidation
    """
    y = np.atleast_2d(np.asarray(samples, dtype=float))
    r = np.asarray(ranks, dtype=int)
    if y.shape[1] != system.n or r.size != system.n:
        raise ValueError(
            f"samples {y.shape} and ranks ({r.size},) must match the system's {system.n} cores"
        )
    qd = projected_precision_diagonal
    if qd is None:
        qd = np.diag(system.projected_precision())
    alpha, _ = system.weights(y.T)  # (n, n_samples)
    pred = y.T - alpha / qd[:, None]  # (n, n_samples)
    sd = 1.0 / np.sqrt(qd)
    t = np.asarray(threshold, dtype=float)
    cdf = special.ndtr((t[None, None, :] - pred[:, :, None]) / sd[:, None, None]).mean(axis=1)
    n = system.n
    cdf = np.concatenate([np.zeros((n, 1)), cdf, np.ones((n, 1))], axis=1)
    prob = np.diff(cdf, axis=1)
    best = np.argmax(prob, axis=1)
    return CrossValidation(
        share_in_own_belt=float(np.mean(best == r)),
        mean_abs_rank_error=float(np.mean(np.abs(best - r))),
        predicted_rank=best,
        probabilities=prob,
        latent_prediction=pred.mean(axis=1),
        latent_sd=sd,
    )
