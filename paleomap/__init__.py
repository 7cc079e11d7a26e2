"""paleomap: paleogeographic facies-belt and shoreline maps from logged cores.

The public API is exactly the names in ``__all__``.
"""

from ._version import __version__
from .agemodel import AgeModel, sample_slices
from .cores import Core, Interval, Pick
from .errors import InputError, OutputExistsError, PaleomapError, PaleomapWarning, Problem
from .io.readers import load_project
from .project import Project, Slice, Surface
from .scheme import Belt, Scheme, builtin_scheme

__all__ = [
    "AgeModel",
    "Belt",
    "Core",
    "InputError",
    "Interval",
    "OutputExistsError",
    "PaleomapError",
    "PaleomapWarning",
    "Pick",
    "Problem",
    "Project",
    "Scheme",
    "Slice",
    "Surface",
    "__version__",
    "builtin_scheme",
    "load_project",
    "sample_slices",
]
