"""Tests of paleomap.scheme: built-in facies schemes, their order and their rules."""

from __future__ import annotations

import numpy as np
import pytest
from conftest import INTERVALS, REMOVE, write_project

from paleomap.errors import InputError
from paleomap.io.readers import load_project
from paleomap.scheme import (
    BUILTIN_SCHEMES,
    ENVIRONMENT_SCHEMES,
    LITHOLOGY_SCHEMES,
    Belt,
    Scheme,
    builtin_scheme,
    custom_scheme,
    phi,
)

# Wentworth (1922) class limits in mm, as listed in shared/REFERENCES.md.
WENTWORTH_MM = {
    "gravel": (2.0, None),
    "very coarse sand": (1.0, 2.0),
    "coarse sand": (0.5, 1.0),
    "medium sand": (0.25, 0.5),
    "fine sand": (0.125, 0.25),
    "very fine sand": (0.0625, 0.125),
    "silt": (1 / 256, 1 / 16),
    "clay": (None, 1 / 256),
}


@pytest.mark.parametrize(
    ("d_mm", "expected"),
    [(2, -1), (1, 0), (0.25, 2), (0.0625, 4), (1 / 256, 8), (256, -8)],
    ids=["granule", "very-coarse-sand", "medium-sand", "very-fine-sand", "clay", "boulder"],
)
def test_phi_of_class_limits(d_mm, expected):
    # Krumbein (1934): phi = -log2(d in mm); check values from shared/REFERENCES.md.
    assert phi(d_mm) == pytest.approx(expected, abs=1e-12)


def test_phi_is_vectorised_and_rejects_non_positive_sizes():
    np.testing.assert_allclose(phi([4.0, 0.5]), [-2.0, 1.0])
    with pytest.raises(ValueError, match="positive"):
        phi(0.0)


SILICICLASTIC_LITHOLOGY = ("coarse_sand", "fine_sand")


def _grain_size():
    return builtin_scheme("siliciclastic_lithology", SILICICLASTIC_LITHOLOGY)


def test_shoreface_shelf_follows_the_wave_dominated_profile():
    # Wave-dominated shoreface profile (common practice; shared/REFERENCES.md): coastal
    # plain, foreshore (between low and high tide), shoreface (to fair-weather wave base),
    # offshore transition (to storm wave base), offshore; an alluvial plain landward.
    s = builtin_scheme("shoreface_shelf")
    assert s.ids == (
        "alluvial_plain",
        "coastal_plain",
        "foreshore",
        "shoreface",
        "offshore_transition",
        "offshore",
    )
    assert s.marine == (False, False, True, True, True, True)
    assert s.boundary_name(s.shoreline_boundary) == "coastal_plain|foreshore"
    assert s.tracked_boundaries == (2,) and s.tracks_shoreline
    assert s.kind == "environment" and s.family == "siliciclastic"
    assert "fair-weather wave base" in s.belts[3].setting
    assert "storm wave base" in s.belts[4].setting


def test_carbonate_ramp_follows_burchette_and_wright():
    # Burchette & Wright (1992, from memory; shared/REFERENCES.md): inner ramp (tidal
    # flat, lagoon, shoal) above fair-weather wave base, mid ramp between fair-weather and
    # storm wave base, outer ramp below storm wave base, then the basin.
    s = builtin_scheme("carbonate_ramp")
    assert s.ids == ("sabkha_tidal_flat", "lagoon", "shoal", "mid_ramp", "outer_ramp", "basin")
    assert s.marine == (False, True, True, True, True, True)
    assert [b.setting.startswith("inner ramp") for b in s.belts[:3]] == [True] * 3
    assert "fair-weather to storm wave base" in s.belts[3].setting
    assert "below storm wave base" in s.belts[4].setting
    # the shoreline first, then the shoal's seaward edge
    assert [s.boundary_name(b) for b in s.tracked_boundaries] == [
        "sabkha_tidal_flat|lagoon",
        "shoal|mid_ramp",
    ]
    assert s.boundary_label(3) == "shoal|mid_ramp boundary"
    assert s.boundary_label(1) == "shoreline"


def test_environment_aliases_point_to_one_belt_only():
    # A grain size or a Dunham texture occurs in several environments (a lime mudstone
    # in a lagoon and in the basin; Dunham 1962), so none is an alias of an environment.
    for name in ENVIRONMENT_SCHEMES:
        s = builtin_scheme(name)
        for word in ("sand", "fine sand", "medium sand", "mudstone", "grainstone", "clay"):
            assert s.rank(word) is None, (name, word)
    assert builtin_scheme("carbonate_ramp").rank("ooid grainstone") == 2
    assert builtin_scheme("shoreface_shelf").rank("coal") == 1


def test_grain_size_lithology_follows_wentworth():
    # Wentworth (1922): proximal to distal is coarse to fine.
    s = _grain_size()
    assert s.kind == "lithology"
    assert s.ids == ("gravel", "coarse_sand", "fine_sand", "silt", "clay")
    sizes = [b.grain_size_mm for b in s.belts]
    assert all(lo < hi for lo, hi in sizes)
    for (lo_a, _), (_, hi_b) in zip(sizes, sizes[1:], strict=False):
        assert hi_b == pytest.approx(lo_a)  # contiguous classes, each finer than the last
    mids = [phi(np.sqrt(max(lo, 1e-4) * hi)) for lo, hi in sizes]
    assert mids == sorted(mids)  # phi grows distally
    by_id = {b.id: b.grain_size_mm for b in s.belts}
    assert by_id["gravel"][0] == WENTWORTH_MM["gravel"][0]
    assert by_id["coarse_sand"] == (
        WENTWORTH_MM["coarse sand"][0],
        WENTWORTH_MM["very coarse sand"][1],
    )
    assert by_id["fine_sand"] == (WENTWORTH_MM["very fine sand"][0], WENTWORTH_MM["medium sand"][1])
    assert by_id["silt"] == WENTWORTH_MM["silt"]
    assert by_id["clay"][1] == WENTWORTH_MM["clay"][1]
    # phi of the sand-silt and silt-clay limits: 4 and 8 (Krumbein 1934).
    assert phi(by_id["silt"][1]) == 4.0 and phi(by_id["silt"][0]) == 8.0


def test_carbonate_lithology_follows_dunham():
    # Dunham (1962): grain-supported without mud, grain-supported with mud, then
    # mud-supported with more and with less than 10 % grains.
    s = builtin_scheme("carbonate_lithology", ("packstone", "wackestone"))
    assert s.ids == ("grainstone", "packstone", "wackestone", "mudstone")
    textures = [b.texture for b in s.belts]
    assert textures[0].startswith("grain-supported") and "no mud" in textures[0]
    assert textures[1].startswith("grain-supported")
    assert textures[2].startswith("mud-supported") and "more than 10 %" in textures[2]
    assert textures[3].startswith("mud-supported") and "less than 10 %" in textures[3]
    assert s.tracked_boundary == 2 and not s.tracks_shoreline


@pytest.mark.parametrize("name", LITHOLOGY_SCHEMES)
def test_lithology_scheme_asks_which_boundary_to_track(name):
    with pytest.raises(InputError, match="say which boundary to track") as err:
        builtin_scheme(name)
    assert "write track = one of [" in err.value.problems[0].hint


def test_retired_name_says_what_to_write_instead():
    with pytest.raises(InputError, match="shoreface_shelf") as err:
        builtin_scheme("siliciclastic")
    assert "siliciclastic_lithology" in err.value.problems[0].hint


@pytest.mark.parametrize("name", BUILTIN_SCHEMES, ids=list(BUILTIN_SCHEMES))
def test_builtin_colours_are_hex_and_distinct(name):
    s = builtin_scheme(
        name,
        ("gravel", "coarse_sand")
        if name == "siliciclastic_lithology"
        else (("grainstone", "packstone") if name == "carbonate_lithology" else None),
    )
    assert len(set(s.colors)) == s.n_belts
    assert all(c.startswith("#") and len(c) == 7 for c in s.colors)


def test_unknown_builtin_lists_the_names_and_suggests_one():
    with pytest.raises(InputError, match=r"is not a built-in scheme") as err:
        builtin_scheme("carbonate ramp")
    assert "did you mean 'carbonate_ramp'" in err.value.problems[0].hint
    assert "shoreface_shelf" in err.value.problems[0].hint


@pytest.mark.parametrize(
    ("facies", "rank"),
    [
        ("clay", 4),
        ("CLAY", 4),
        ("  Fine Sand ", 2),
        ("shale", 4),
        ("conglomerate", 0),
        ("medium sand", 2),
        ("Medium-Sand", 2),
        ("medium_sand", 2),
        ("very coarse sand", 1),
    ],
    ids=[
        "id",
        "upper",
        "id-spaces",
        "alias",
        "alias-gravel",
        "space",
        "hyphen",
        "underscore",
        "alias-spaces",
    ],
)
def test_names_match_ignoring_case_spaces_hyphens_underscores(facies, rank):
    assert _grain_size().rank(facies) == rank


def test_lime_mudstone_matches_in_every_spelling():
    s = builtin_scheme("carbonate_lithology", ("grainstone", "packstone"))
    assert {s.rank(n) for n in ("lime mudstone", "lime_mudstone", "Lime-Mudstone")} == {3}


def test_rank_of_unknown_facies_is_none_and_suggests_close_names():
    s = _grain_size()
    assert s.rank("marl") is None
    assert s.suggest("silstone") == ["siltstone"]
    assert builtin_scheme("carbonate_ramp").suggest("oolit") == ["oolite"]


def test_custom_scheme_rules():
    belts = [Belt("land", False), Belt("beach", True), Belt("shelf", True)]
    s = custom_scheme("coast", belts, None)
    assert s.shoreline_boundary == 1 and s.tracked_boundary == 1
    assert s.belts[0].color != "#999999"  # filled from the palette
    tracked = custom_scheme("coast", belts, ("beach", "shelf"))
    assert tracked.tracked_boundary == 2 and not tracked.tracks_shoreline


@pytest.mark.parametrize(
    ("belts", "track", "message"),
    [
        ([Belt("a", True), Belt("b", False)], None, "not one contiguous distal run"),
        (
            [Belt("a", False), Belt("b", True), Belt("c", False), Belt("d", True)],
            None,
            "not one contiguous distal run",
        ),
        ([Belt("a", False), Belt("b", True), Belt("c", True)], ("a", "c"), "not adjacent"),
        ([Belt("a", False), Belt("b", True)], ("a", "z"), "names unknown belts"),
        ([Belt("a", True), Belt("b", True)], None, "no shoreline"),
        ([Belt("a", False)], None, "at least two belts"),
        ([Belt("a", False), Belt("A", True)], None, "is used by both"),
        ([Belt("a_b", False), Belt("a-b", True)], None, "is used by both"),
        ([Belt("a", False, color="red"), Belt("b", True)], None, "is not a colour"),
    ],
    ids=[
        "sea-first",
        "interleaved",
        "track-gap",
        "track-unknown",
        "no-shoreline",
        "one-belt",
        "duplicate-name",
        "duplicate-name-separators",
        "bad-colour",
    ],
)
def test_scheme_rules_are_enforced(belts, track, message):
    with pytest.raises(InputError, match=message):
        Scheme("x", tuple(belts), track)


# ------------------------------------------------------------------ paleomap schemes


def test_schemes_command_lists_every_builtin_with_belts_and_aliases():
    from click.testing import CliRunner

    from paleomap.cli import main

    out = CliRunner().invoke(main, ["schemes"])
    assert out.exit_code == 0, out.output
    for name in BUILTIN_SCHEMES:
        assert f"\n{name}\n" in f"\n{out.output}"
    for name in ENVIRONMENT_SCHEMES:
        for belt in builtin_scheme(name).belts:
            assert belt.id in out.output
            assert all(a in out.output for a in belt.aliases)
    assert "shoal|mid_ramp boundary" in out.output
    assert "say which in the project" in out.output


def test_project_with_a_lithology_scheme_and_no_track_is_refused(tmp_path):
    path = write_project(tmp_path, keys={"scheme.track": REMOVE})
    with pytest.raises(InputError, match="say which boundary to track") as err:
        load_project(path)
    assert err.value.problems[0].line is not None


def test_unknown_facies_gets_did_you_mean(tmp_path):
    path = write_project(tmp_path, intervals=INTERVALS.replace("C1,10,20,silt", "C1,10,20,silst"))
    with pytest.raises(InputError, match="is not a facies") as err:
        load_project(path)
    hint = err.value.problems[0].hint
    assert "did you mean 'silt'" in hint and "accepted names: gravel" in hint


def test_facies_with_spaces_and_hyphens_are_accepted(tmp_path):
    text = INTERVALS.replace("C1,20,30,fine_sand", "C1,20,30,Medium Sand").replace(
        "C2,30,40,coarse_sand", "C2,30,40,very-coarse-sand"
    )
    project = load_project(write_project(tmp_path, intervals=text))
    ranks = {c.core_id: [i.rank for i in c.intervals] for c in project.cores}
    assert ranks["C1"][2] == 2 and ranks["C2"][3] == 1
