"""The bundled demo region: the invented Orvenna Shelf of the Kaldrith Basin.

An imaginary, Quaternary-like wave-dominated shoreface and shelf dipping
east-south-east, with
lobes and embayments along strike and gentle subsidence basinward, through three
rises and two falls of sea level over 96 kyr. Made by the forward model with a
fixed seed; ``demo_region/`` in the repository holds the written files and
:data:`DEMO_COMMAND` remakes them exactly.

Examples
--------
>>> DEMO_COMMAND
'paleomap synth demo_region --demo --overwrite'
>>> DEMO_SETTINGS["n_cores"], len(DEMO_SETTINGS["surfaces"])
(44, 8)
"""

from __future__ import annotations

from .basin import SyntheticBasin, make_basin

__all__ = ["DEMO_COMMAND", "DEMO_SETTINGS", "demo_basin"]

DEMO_COMMAND = "paleomap synth demo_region --demo --overwrite"
"""The command, run from the repository root, that remakes ``demo_region/``."""

DEMO_SETTINGS: dict = {
    "name": "Orvenna Shelf, Kaldrith Basin (invented demo)",
    "n_cores": 44,
    "layout": "random",
    "seed": 11,
    "scheme": "shoreface_shelf",
    "sea_level": [
        (96.0, 2.0),
        (84.0, -10.0),
        (70.0, 6.0),
        (58.0, 12.0),
        (44.0, -8.0),
        (30.0, -14.0),
        (18.0, 4.0),
        (6.0, 10.0),
        (0.0, 8.0),
    ],
    "age_unit": "ka",
    "surfaces": [90.0, 84.0, 74.0, 62.0, 50.0, 40.0, 30.0, 16.0],
    "surface_names": ["KS1", "KS2", "KS3", "KS4", "KS5", "KS6", "KS7", "KS8"],
    "gradient_m_per_km": 1.5,
    "dip_azimuth_deg": 115.0,
    "relief_amplitude_m": 5.0,
    "relief_wavelength_m": 15_000.0,
    "subsidence_m_per_kyr_per_km": 0.002,
    "step_kyr": 0.5,
    "erosion_m_per_kyr": 0.0,
    "truth_cell_m": 200.0,
    "core_prefix": "OR-",
}
"""Arguments of :func:`~paleomap.synthetic.make_basin` for the demo region."""


def demo_basin() -> SyntheticBasin:
    """The demo region as a :class:`~paleomap.synthetic.SyntheticBasin`."""
    return make_basin(**DEMO_SETTINGS)
