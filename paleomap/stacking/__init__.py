"""Reading the cores: Walther check, stacking trends and turnaround surfaces.

Before any map a geologist reads each core: which contacts skip belts outside an
erosional surface (Walther 1894; Middleton 1973), which intervals deepen or shallow
upward, and where the turnarounds lie (maximum flooding and maximum regressive surfaces,
Catuneanu et al. 2009). This package does that reading for every core and sums it up
across the region. The rules, with their numbers, are in ``docs/stacking.md`` and in the
docstrings of the parts:

* :mod:`~paleomap.stacking.contacts`: contacts, gaps, the Walther check.
* :mod:`~paleomap.stacking.profile`: the rank profile and its cleaning (runs, thin spikes).
* :mod:`~paleomap.stacking.trends`: deepening-upward, shallowing-upward, aggrading, mixed.
* :mod:`~paleomap.stacking.turnarounds`: suggested MFS and MRS.
* :mod:`~paleomap.stacking.region`: counts per surface pair, the cross-check with the
  mapped shoreline shifts, turnaround ties to the picked surfaces.
* :mod:`~paleomap.stacking.reading`: :func:`read_cores` and :func:`summary_lines`.

Depth is positive down; "upward" means towards smaller depth. Ranks grow distal, so a
rank that grows upward deepens upward.

Examples
--------
>>> from paleomap.stacking import RankProfile, classify_trend
>>> classify_trend(RankProfile.from_arrays([0, 5], [5, 10], [3, 1])).trend
'deepening-upward'
"""

from .contacts import CONTACT_FLAGS, Contact, Gap, core_contacts, core_gaps
from .profile import RankProfile
from .reading import CoreReading, ReadingSettings, read_cores, summary_lines
from .region import (
    AGREEMENT_FLAGS,
    MAPPED_SENSES,
    cross_check,
    region_summary,
    surface_alignment,
    surface_pairs,
)
from .trends import (
    TREND_CLASSES,
    Trend,
    classify_trend,
    grain_word,
    sense_word,
    weighted_theil_sen,
)
from .turnarounds import TURNAROUND_KINDS, Turnaround, find_turnarounds

__all__ = [
    "AGREEMENT_FLAGS",
    "CONTACT_FLAGS",
    "MAPPED_SENSES",
    "TREND_CLASSES",
    "TURNAROUND_KINDS",
    "Contact",
    "CoreReading",
    "Gap",
    "RankProfile",
    "ReadingSettings",
    "Trend",
    "Turnaround",
    "classify_trend",
    "core_contacts",
    "core_gaps",
    "cross_check",
    "find_turnarounds",
    "grain_word",
    "read_cores",
    "region_summary",
    "sense_word",
    "summary_lines",
    "surface_alignment",
    "surface_pairs",
    "weighted_theil_sen",
]
