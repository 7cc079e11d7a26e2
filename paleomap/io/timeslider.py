"""Ages on a date-time axis, so a GIS time slider can step through the slices.

GIS time sliders (QGIS's temporal controller among them) move along calendar date-times,
while paleomap's ages are counted back from the present in ka or Ma. Every layer that
varies by slice therefore carries, beside its numeric ``age``, the same age as a date-time
on a stand-in clock (:func:`slider_times`):

    slider time = 1950-01-01T00:00:00Z - age x 1 day

one day per age unit (1 ka in a project counted in ka, 1 Ma in one counted in Ma), with
the present at 1950-01-01, the zero of "before present" ages (common practice). Older
slices are earlier on the clock, so the slider runs forward in geological time; a slider
step of one day is one age unit. Layers of a single slice carry ``slider_time``
(:data:`SLICE_TIME`); layers between two slices carry ``slider_start`` (the older slice)
and ``slider_end`` (the younger one) (:data:`PAIR_TIME`). The fields are DATETIME columns
in UTC, which GeoPackage readers take as date-times.

Ages up to about 700 000 units fit the clock (back to the first century AD, the earliest
date QGIS's temporal controller accepts).

Examples
--------
>>> str(slider_times([16.0, 90.5])[1])
'1949-10-02 12:00:00+00:00'
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd

from .styles import TimeFields

__all__ = ["PAIR_TIME", "PRESENT", "SLICE_TIME", "slider_times", "with_slider_times"]

PRESENT = np.datetime64("1950-01-01T00:00:00", "ms")
"""Date-time of age 0 on the stand-in clock."""

SLICE_TIME = TimeFields("slider_time")
"""Time-slider field of layers drawn per slice."""

PAIR_TIME = TimeFields("slider_start", "slider_end")
"""Time-slider fields of layers drawn per pair of slices (start = older slice)."""

# Ages per layer: (age field, slider field) pairs.
_FIELDS = {
    "core_slices": (("age", "slider_time"),),
    "facies_belts": (("age", "slider_time"),),
    "shorelines": (("age", "slider_time"),),
    "shoreline_bands": (("age", "slider_time"),),
    "shoreline_positions": (("age", "slider_time"),),
    "slice_quality": (("age", "slider_time"),),
    "turnarounds": (("age", "slider_time"),),
    "control_points": (("age", "slider_time"),),
    "shoreline_shifts": (("older_age", "slider_start"), ("younger_age", "slider_end")),
    "slice_pairs": (("older_age", "slider_start"), ("younger_age", "slider_end")),
}
_MAX_AGE = 700_000.0


def slider_times(ages: Sequence[float]) -> pd.Series:
    """Ages as UTC date-times on the stand-in clock (one day per age unit before 1950).

    Parameters
    ----------
    ages : sequence of float
        Ages in the project's age unit, positive into the past; NaN gives NaT.

    Returns
    -------
    pandas.Series
        ``datetime64[ms, UTC]`` values.

    Raises
    ------
    ValueError
        An age too large for the clock (over 700 000 units).

    Examples
    --------
    >>> slider_times([0.0]).dt.strftime("%Y-%m-%d").tolist()
    ['1950-01-01']
    """
    a = np.asarray(ages, dtype=float)
    big = np.abs(a) > _MAX_AGE
    if big.any():
        raise ValueError(
            f"age {a[big][0]!r} is too large for the time-slider clock "
            f"(at most {_MAX_AGE:.0f} age units)"
        )
    ms = np.round(np.nan_to_num(a) * 86_400_000).astype("int64").astype("timedelta64[ms]")
    times = PRESENT - ms
    times = np.where(np.isnan(a), np.datetime64("NaT", "ms"), times)
    return pd.Series(times, dtype="datetime64[ms]").dt.tz_localize("UTC")


def with_slider_times(layers: dict[str, pd.DataFrame]) -> dict[str, pd.DataFrame]:
    """The layers with their time-slider fields added after their age fields.

    Examples
    --------
    >>> out = with_slider_times({"shorelines": pd.DataFrame({"age": [16.0]})})
    >>> list(out["shorelines"].columns)
    ['age', 'slider_time']
    """
    out = dict(layers)
    for name, pairs in _FIELDS.items():
        frame = layers.get(name)
        if frame is None or not all(age in frame.columns for age, _ in pairs):
            continue
        frame = frame.copy()
        for age, slider in pairs:
            values = slider_times(frame[age].to_numpy(dtype=float))
            values.index = frame.index
            frame.insert(frame.columns.get_loc(age) + 1, slider, values)
        out[name] = frame
    return out
