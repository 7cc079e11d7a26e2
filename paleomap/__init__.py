"""paleomap: paleogeographic facies-belt and shoreline maps from logged cores.

The public API is exactly the names in ``__all__``.
"""

from ._version import __version__
from .errors import InputError, OutputExistsError, PaleomapError, PaleomapWarning, Problem
from .scheme import Belt, Scheme, builtin_scheme

__all__ = [
    "Belt",
    "InputError",
    "OutputExistsError",
    "PaleomapError",
    "PaleomapWarning",
    "Problem",
    "Scheme",
    "__version__",
    "builtin_scheme",
]
