"""A forward model of a shelf with known truth: synthetic projects for testing maps.

Facies are laid down on a known depositional surface under a known relative
sea-level history, drilled at chosen places and logged as a geologist logs cores,
so the true belts, shorelines and shoreline rates are known exactly.

The model, one concept a module:

- :mod:`~paleomap.synthetic.surface`: the ramp (gradient, dip azimuth, along-strike
  relief, subsidence) on a square region in a projected CRS;
- :mod:`~paleomap.synthetic.sealevel`: the relative sea-level history;
- :mod:`~paleomap.synthetic.deposition`: facies bands, accumulation, erosion and
  the time steps;
- :mod:`~paleomap.synthetic.drilling`: core layouts and logged cores;
- :mod:`~paleomap.synthetic.truth`: belt maps, boundaries and shifts;
- :mod:`~paleomap.synthetic.basin`: :func:`make_basin` and :class:`SyntheticBasin`;
- :mod:`~paleomap.synthetic.writing`: :func:`write_project`;
- :mod:`~paleomap.synthetic.demo`: the bundled demo region.

Examples
--------
>>> from paleomap.synthetic import make_basin
>>> basin = make_basin(n_cores=10, seed=2, truth_cell_m=500.0)
>>> basin.scheme.name, len(basin.cores)
('shoreface_shelf', 10)
"""

from .basin import SyntheticBasin, make_basin
from .demo import DEMO_COMMAND, DEMO_SETTINGS, demo_basin
from .deposition import DEFAULT_BANDS, FaciesBands
from .drilling import LAYOUTS, core_positions
from .sealevel import DEFAULT_SEA_LEVEL, SeaLevelHistory, read_sea_level
from .surface import DEFAULT_CRS, Ramp
from .truth import STILLSTAND_M_PER_KYR
from .writing import PROJECT_FILES, TRUTH_FILES, project_toml, write_project

__all__ = [
    "DEMO_COMMAND",
    "DEMO_SETTINGS",
    "DEFAULT_BANDS",
    "DEFAULT_CRS",
    "DEFAULT_SEA_LEVEL",
    "LAYOUTS",
    "PROJECT_FILES",
    "STILLSTAND_M_PER_KYR",
    "TRUTH_FILES",
    "FaciesBands",
    "Ramp",
    "SeaLevelHistory",
    "SyntheticBasin",
    "core_positions",
    "demo_basin",
    "make_basin",
    "project_toml",
    "read_sea_level",
    "write_project",
]
