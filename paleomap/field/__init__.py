"""The field engines and their numerics: covariance, kriging, the truncated-Gaussian
latent model, the per-slice (:mod:`.ordinal`) and shared-relief (:mod:`.shared`)
engines behind one interface (:mod:`.engine`).

Pure numpy/scipy: no file input or output. A build picks its engine from the registry
(:func:`paleomap.field.engine.get_engine`) by the project's ``[mapping] engine``.
The names below are imported from their modules when first used, so importing one
module of the package (e.g. :mod:`.engine`) does not load the others.

Examples
--------
>>> from paleomap.field import Covariance, thresholds
>>> thresholds([0.25, 0.25, 0.25, 0.25]).round(6).tolist()
[-0.67449, 0.0, 0.67449]
"""

import importlib

_HOME = {
    "Covariance": "covariance",
    "CrossValidation": "crossval",
    "ExperimentalVariogram": "variogram",
    "FieldResult": "ordinal",
    "FieldSettings": "ordinal",
    "KrigingSystem": "kriging",
    "LatentPrior": "truncgauss",
    "MODELS": "covariance",
    "OrdinalField": "ordinal",
    "OrdinaryKriging": "kriging",
    "SliceModel": "ordinal",
    "SlicesFit": "ordinal",
    "UniversalKriging": "kriging",
    "VariogramFit": "variogram",
    "belt_intervals": "truncgauss",
    "belt_of": "truncgauss",
    "belt_probabilities": "truncgauss",
    "correlation": "covariance",
    "experimental_variogram": "variogram",
    "fit_covariance": "variogram",
    "fit_slices": "ordinal",
    "gibbs_conditional": "truncgauss",
    "gibbs_mean_field": "truncgauss",
    "gibbs_sample": "truncgauss",
    "indicator_variogram": "truncgauss",
    "leave_one_out": "crossval",
    "map_slices": "ordinal",
    "predict_slices": "ordinal",
    "proportions_of": "truncgauss",
    "strike_azimuth": "variogram",
    "thresholds": "truncgauss",
    "truncated_normal": "truncgauss",
}
"""Public name -> the module of this package that defines it."""

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


def __getattr__(name: str):
    if name in _HOME:
        value = getattr(importlib.import_module(f".{_HOME[name]}", __name__), name)
        globals()[name] = value
        return value
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


def __dir__():
    return sorted(set(globals()) | set(__all__))
