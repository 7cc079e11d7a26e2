"""The core reading on logs as a geologist has them: environment schemes, thin beds, cycles.

Checks against the outside world:

- A carbonate shallowing-upward cycle (basin or outer ramp at the base, through the mid
  ramp and the shoal, to lagoon and sabkha or tidal flat at the top) is the normal
  succession of a prograding ramp: every contact joins laterally adjacent environments,
  so Walther's Law (Walther 1894; Middleton 1973) flags none of them, and the cycle
  shallows upward (Burchette & Wright 1992, from memory, for the belts; Catuneanu et al.
  2009 for the terms). No maximum flooding surface lies in its upper half: the most
  distal belt is at its base.
- A maximum flooding surface is the turnaround from deepening-upward below to
  shallowing-upward above (Catuneanu et al. 2009); in a succession of T-R cycles each
  cycle holds one.
"""

from __future__ import annotations

from dataclasses import replace
from pathlib import Path

import numpy as np
import pyproj
import pytest

from paleomap.cores import Core, Interval, Pick
from paleomap.project import GridSettings, Project, ReadingOptions, Surface
from paleomap.scheme import builtin_scheme
from paleomap.stacking import ReadingSettings, read_cores

RAMP = builtin_scheme("carbonate_ramp")


def _project(cores, scheme, surfaces=(), depth_unit="m", reading=None):
    crs = pyproj.CRS.from_user_input("EPSG:32631")
    return Project(
        name="test",
        path=Path("/nonexistent/project.toml"),
        crs=crs,
        working_crs=crs,
        depth_unit=depth_unit,
        age_unit="ka",
        scheme=scheme,
        surfaces=tuple(surfaces),
        slices=(),
        cores=tuple(cores),
        grid=GridSettings(cell_size=100.0),
        reading=reading or ReadingOptions(),
    )


def _logged(core_id, rows, picks=(), easting=0.0, scheme=RAMP):
    """A core from (thickness, facies name) rows, top down; names go through the scheme."""
    ivs, depth = [], 0.0
    for thickness, name in rows:
        rank = scheme.rank(name)
        assert rank is not None, name
        ivs.append(Interval(depth, depth + thickness, rank, name))
        depth += thickness
    pk = tuple(Pick(s, d) for s, d in picks)
    return Core(core_id, easting, 0.0, intervals=tuple(ivs), picks=pk)


# One shallowing-upward ramp cycle per core, top down, logged with lithology words that
# the carbonate_ramp scheme takes as aliases of its environments.
_CYCLES = [
    [
        (1.0, "sabkha"),
        (2.5, "lagoon"),
        (3.0, "ooid grainstone"),
        (4.0, "tempestite"),
        (5.0, "outer ramp"),
    ],
    [
        (0.8, "Tidal Flat"),
        (3.0, "restricted lagoon"),
        (2.0, "oolite"),
        (6.0, "mid-ramp"),
        (3.0, "nodular limestone"),
        (4.0, "pelagic limestone"),
    ],
    [
        (1.5, "sabkha_tidal_flat"),
        (1.5, "lagoonal"),
        (4.5, "shoal"),
        (5.0, "storm bed"),
    ],
]


def test_carbonate_shallowing_upward_cycle_reads_as_one():
    cores = [
        _logged(f"R{i}", rows, picks=[("exposure", 0.0)], easting=1000.0 * i)
        for i, rows in enumerate(_CYCLES)
    ]
    surfaces = [Surface("exposure", 10.0, erosional=True)]
    reading = read_cores(_project(cores, RAMP, surfaces))
    # No contact is a possible break: lagoon on shoal, shoal on mid ramp ... are neighbours.
    assert len(reading.contacts) == sum(len(c) - 1 for c in _CYCLES)
    assert set(reading.contacts["flag"]) == {"conformable"}
    # Each cycle is read shallowing-upward (a regression), not mixed.
    assert reading.cores["trend"].tolist() == ["shallowing-upward"] * 3
    assert reading.cores["sense"].tolist() == ["regression"] * 3
    # No maximum flooding surface in the upper half of any core (none at all here).
    mfs = reading.turnarounds[reading.turnarounds["kind"] == "MFS"]
    for core in cores:
        half = (core.top + core.base) / 2
        assert not (mfs[mfs["core_id"] == core.core_id]["depth"] < half).any()


def test_carbonate_cycle_was_misread_with_the_texture_scheme():
    # The reason for the environment scheme: logged as Dunham textures, the lagoon's lime
    # mudstone ranks as the most distal texture, so a shallowing-upward cycle ends in a
    # "deepening" jump of three ranks over the shoal grainstone (Dunham 1962 orders
    # textures, not water depths).
    texture = builtin_scheme("carbonate_lithology", ("grainstone", "packstone"))
    core = _logged(
        "T1",
        [(2.0, "lime mudstone"), (3.0, "grainstone"), (4.0, "packstone"), (5.0, "wackestone")],
        scheme=texture,
    )
    reading = read_cores(_project([core], texture))
    assert "possible_break" in set(reading.contacts["flag"])


# ------------------------------------------------------------ seven noisy T-R cycles


def _noisy_cycles(seed, n_cycles=7, cycle_ft=12.0, step_ft=0.5, noise=0.15):
    """Ranks every ``step_ft`` of a log of ``n_cycles`` symmetric T-R cycles (shoreface_shelf
    ranks 1 to 5 and back), with thin-bed noise: a share ``noise`` of the steps is logged
    one or two belts off (a storm sand in the offshore, a mud drape on the shoreface).

    Returns the top-down ranks and the true MFS depths (ft, top down)."""
    rng = np.random.default_rng(seed)
    n = int(round(n_cycles * cycle_ft / step_ft))
    depth = (np.arange(n) + 0.5) * step_ft  # sample midpoints, top down
    # height above the base, in cycles; the deepest point of each cycle is its middle
    phase = ((n_cycles * cycle_ft - depth) / cycle_ft) % 1.0
    ranks = np.rint(1 + 4 * (1 - np.abs(2 * phase - 1))).astype(int)
    flip = rng.random(n) < noise
    ranks[flip] += rng.choice([-2, -1, 1, 2], size=int(flip.sum()))
    ranks = np.clip(ranks, 0, 5)
    true_mfs = n_cycles * cycle_ft - (np.arange(n_cycles) + 0.5) * cycle_ft
    return ranks, true_mfs


@pytest.mark.parametrize("seed", [1, 2, 3, 4, 5])
def test_seven_noisy_cycles_at_half_foot_steps(seed):
    scheme = builtin_scheme("shoreface_shelf")
    cycle_ft = 12.0
    cores = []
    truths = {}
    for k in range(3):
        ranks, true_mfs = _noisy_cycles(seed * 10 + k, cycle_ft=cycle_ft)
        ivs = tuple(Interval(0.5 * i, 0.5 * (i + 1), int(r)) for i, r in enumerate(ranks))
        cores.append(Core(f"W{k}", 1000.0 * k, 0.0, intervals=ivs))
        truths[f"W{k}"] = true_mfs
    # depths in ft, so the default noise scale is 0.6 m = 1.97 ft (four 0.5-ft steps)
    reading = read_cores(_project(cores, scheme, depth_unit="ft"))
    t = reading.turnarounds
    for core_id, true_mfs in truths.items():
        found = t[(t["core_id"] == core_id) & (t["kind"] == "MFS")]["depth"].to_numpy()
        # at most cycles + 1 maximum flooding surfaces per core
        assert 1 <= len(found) <= len(true_mfs) + 1, (core_id, len(found))
        # each within one cycle's thickness of a true one
        nearest = np.min(np.abs(found[:, None] - true_mfs[None, :]), axis=1)
        assert np.all(nearest <= cycle_ft), (core_id, nearest)
        # and at most one per T-R cycle
        assert (
            found.size
            == np.unique(t[(t["core_id"] == core_id) & (t["kind"] == "MFS")]["cycle"]).size
        )


def test_without_the_noise_scale_the_thin_beds_make_many_more_turnarounds():
    # The same log read with no noise scale: the check above would fail, so the noise
    # scale is what keeps the reading to one MFS per cycle.
    ranks, true_mfs = _noisy_cycles(7)
    ivs = tuple(Interval(0.5 * i, 0.5 * (i + 1), int(r)) for i, r in enumerate(ranks))
    core = Core("W", 0.0, 0.0, intervals=ivs)
    project = _project([core], builtin_scheme("shoreface_shelf"), depth_unit="ft")
    noisy = read_cores(project, settings=ReadingSettings(noise_thickness=0.0))
    clean = read_cores(project)
    n_noisy = int((noisy.turnarounds["kind"] == "MFS").sum())
    n_clean = int((clean.turnarounds["kind"] == "MFS").sum())
    assert n_clean <= len(true_mfs) + 1 < n_noisy


def test_confidence_is_lower_for_a_thin_small_turnaround():
    scheme = builtin_scheme("shoreface_shelf")
    # upward: coastal plain -> offshore (big, thick legs) -> foreshore -> offshore
    # transition (a two-belt swing over thin beds at the top)
    big = Core(
        "B",
        0.0,
        0.0,
        intervals=(
            Interval(0.0, 1.0, 4),
            Interval(1.0, 2.0, 2),
            Interval(2.0, 8.0, 5),
            Interval(8.0, 14.0, 1),
        ),
    )
    reading = read_cores(_project([big], scheme))
    t = reading.turnarounds.set_index("kind")
    assert t.loc["MFS", "confidence"] == pytest.approx(1.0)
    assert 0.0 < t.loc["MRS", "confidence"] < t.loc["MFS", "confidence"]


def test_reading_scales_are_project_settings_in_depth_units():
    opts = ReadingOptions(noise_thickness=3.0, pick_tolerance=2.5)
    core = Core("C", 0.0, 0.0, intervals=(Interval(0.0, 5.0, 1), Interval(5.0, 9.0, 4)))
    project = _project([core], builtin_scheme("shoreface_shelf"), depth_unit="ft", reading=opts)
    st = read_cores(project).settings
    assert (st.noise_thickness, st.pick_tolerance) == (3.0, 2.5)
    assert st.contact_tolerance == pytest.approx(0.1 / 0.3048)  # the default, in ft


# ------------------------------------------------------------ slices at erosional surfaces


def test_a_slice_at_an_erosional_surface_reads_the_deposit_beneath():

    from paleomap.agemodel import sample_slices
    from paleomap.pipeline import _note_erosional_slices
    from paleomap.project import Slice

    scheme = builtin_scheme("shoreface_shelf")
    # a ravinement at 4 m: transgressive offshore transition on truncated coastal plain
    core = Core(
        "E",
        0.0,
        0.0,
        intervals=(Interval(0.0, 4.0, 4), Interval(4.0, 10.0, 1), Interval(10.0, 14.0, 3)),
        picks=(Pick("young", 1.0), Pick("rav", 4.0), Pick("old", 12.0)),
    )
    surfaces = [Surface("young", 10.0), Surface("rav", 50.0, erosional=True), Surface("old", 90.0)]
    project = _project([core], scheme, surfaces)
    slices = (Slice("rav", 50.0, "rav"), Slice("young", 10.0, "young"))
    project = replace(project, slices=slices)
    table = sample_slices(project).set_index("slice")
    assert table.loc["rav", "belt"] == "coastal_plain"  # beneath, not the lag above
    assert table.loc["young", "belt"] == "offshore_transition"
    assert _note_erosional_slices(project) == {"rav"}
