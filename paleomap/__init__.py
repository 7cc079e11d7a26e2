"""paleomap: paleogeographic facies-belt and shoreline maps from logged cores.

The public API is exactly the names in ``__all__`` (listed in docs/api.md).

Examples
--------
>>> import paleomap
>>> project = paleomap.load_project("demo_region/project.toml")   # doctest: +SKIP
>>> result = paleomap.build(project, "demo_build", overwrite=True)  # doctest: +SKIP
"""

from ._version import __version__
from .agemodel import AgeModel, build_age_models, sample_slices
from .cores import Core, Interval, Pick
from .errors import InputError, OutputExistsError, PaleomapError, PaleomapWarning, Problem
from .io.readers import load_project
from .pipeline import BuildResult, build, compute, write_build
from .project import Project, Slice, Surface
from .scheme import Belt, Scheme, builtin_scheme
from .stacking import CoreReading, read_cores
from .synthetic import SyntheticBasin, make_basin
from .versions import show_versions

__all__ = [
    "AgeModel",
    "Belt",
    "BuildResult",
    "Core",
    "CoreReading",
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
    "SyntheticBasin",
    "__version__",
    "build",
    "build_age_models",
    "builtin_scheme",
    "compute",
    "load_project",
    "make_basin",
    "read_cores",
    "sample_slices",
    "show_versions",
    "write_build",
]
