"""The ordinal field engine: covariance, kriging and the truncated-Gaussian latent model.

Pure numpy/scipy: no file input or output. The pipeline calls :func:`map_slices`
(many slices, shared kriging work) or uses :class:`OrdinalField` for one slice.

Examples
--------
>>> from paleomap.field import Covariance, thresholds
>>> thresholds([0.25, 0.25, 0.25, 0.25]).round(6).tolist()
[-0.67449, 0.0, 0.67449]
"""

from .covariance import MODELS, Covariance, correlation
from .crossval import CrossValidation, leave_one_out
from .kriging import KrigingSystem, OrdinaryKriging, UniversalKriging
from .ordinal import (
    FieldResult,
    FieldSettings,
    OrdinalField,
    SliceModel,
    SlicesFit,
    fit_slices,
    map_slices,
    predict_slices,
)
from .truncgauss import (
    LatentPrior,
    belt_intervals,
    belt_of,
    belt_probabilities,
    gibbs_conditional,
    gibbs_mean_field,
    gibbs_sample,
    indicator_variogram,
    proportions_of,
    thresholds,
    truncated_normal,
)
from .variogram import (
    ExperimentalVariogram,
    VariogramFit,
    experimental_variogram,
    fit_covariance,
    strike_azimuth,
)

__all__ = [
    "MODELS",
    "Covariance",
    "CrossValidation",
    "ExperimentalVariogram",
    "FieldResult",
    "FieldSettings",
    "KrigingSystem",
    "LatentPrior",
    "OrdinalField",
    "OrdinaryKriging",
    "SliceModel",
    "SlicesFit",
    "UniversalKriging",
    "VariogramFit",
    "belt_intervals",
    "belt_of",
    "belt_probabilities",
    "correlation",
    "experimental_variogram",
    "fit_covariance",
    "fit_slices",
    "gibbs_conditional",
    "gibbs_mean_field",
    "gibbs_sample",
    "indicator_variogram",
    "leave_one_out",
    "map_slices",
    "predict_slices",
    "proportions_of",
    "strike_azimuth",
    "thresholds",
    "truncated_normal",
]
