"""Tests of paleomap.scheme: built-in facies schemes, their order and their rules."""

from __future__ import annotations

import numpy as np
import pytest

from paleomap.errors import InputError
from paleomap.scheme import BUILTIN_SCHEMES, Belt, Scheme, builtin_scheme, custom_scheme, phi

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


def test_siliciclastic_order_is_decreasing_grain_size():
    # Wentworth (1922): proximal to distal is coarse to fine.
    s = builtin_scheme("siliciclastic")
    assert s.ids == ("gravel", "coarse_sand", "fine_sand", "silt", "clay")
    sizes = [b.grain_size_mm for b in s.belts]
    assert all(lo < hi for lo, hi in sizes)
    for (lo_a, _), (_, hi_b) in zip(sizes, sizes[1:], strict=False):
        assert hi_b == pytest.approx(lo_a)  # contiguous classes, each finer than the last
    mids = [phi(np.sqrt(max(lo, 1e-4) * hi)) for lo, hi in sizes]
    assert mids == sorted(mids)  # phi grows distally


def test_siliciclastic_grain_sizes_match_wentworth_class_limits():
    # Wentworth (1922) limits as in shared/REFERENCES.md.
    s = builtin_scheme("siliciclastic")
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


def test_siliciclastic_marine_split_and_shoreline():
    s = builtin_scheme("siliciclastic")
    assert s.marine == (False, False, True, True, True)
    assert s.shoreline_boundary == 2
    assert s.tracked_boundary == 2 and s.tracks_shoreline
    assert s.boundary_name(2) == "coarse_sand|fine_sand"
    assert s.family == "siliciclastic"


def test_carbonate_order_follows_dunham():
    # Dunham (1962): grain-supported without mud, grain-supported with mud, then
    # mud-supported with more and with less than 10 % grains.
    s = builtin_scheme("carbonate_ramp")
    assert s.ids == ("grainstone", "packstone", "wackestone", "mudstone")
    assert all(s.marine)
    textures = [b.texture for b in s.belts]
    assert textures[0].startswith("grain-supported") and "no mud" in textures[0]
    assert textures[1].startswith("grain-supported")
    assert textures[2].startswith("mud-supported") and "more than 10 %" in textures[2]
    assert textures[3].startswith("mud-supported") and "less than 10 %" in textures[3]
    assert s.shoreline_boundary is None
    assert s.tracked_boundary == 1 and s.boundary_name(1) == "grainstone|packstone"
    assert not s.tracks_shoreline


@pytest.mark.parametrize("name", BUILTIN_SCHEMES, ids=list(BUILTIN_SCHEMES))
def test_builtin_colours_are_hex_and_distinct(name):
    s = builtin_scheme(name)
    assert len(set(s.colors)) == s.n_belts
    assert all(c.startswith("#") and len(c) == 7 for c in s.colors)


def test_unknown_builtin_lists_the_names():
    with pytest.raises(InputError, match=r"is not a built-in scheme.*siliciclastic"):
        builtin_scheme("evaporite")


@pytest.mark.parametrize(
    ("facies", "rank"),
    [("clay", 4), ("CLAY", 4), ("  Fine Sand ", 2), ("shale", 4), ("conglomerate", 0)],
    ids=["id", "upper", "alias-spaces", "alias", "alias-gravel"],
)
def test_rank_is_case_insensitive_over_ids_and_aliases(facies, rank):
    assert builtin_scheme("siliciclastic").rank(facies) == rank


def test_rank_of_unknown_facies_is_none():
    assert builtin_scheme("siliciclastic").rank("marl") is None


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
        "bad-colour",
    ],
)
def test_scheme_rules_are_enforced(belts, track, message):
    with pytest.raises(InputError, match=message):
        Scheme("x", tuple(belts), track)
