"""Belt colours: distinct neighbours for any number of belts, also under simulated colour
-vision deficiencies, ordered proximal to distal (lightness monotone on each side)."""

from __future__ import annotations

import numpy as np
import pytest

from paleomap.palette import belt_colors, hex_to_lab, hex_to_rgb, linear_rgb_to_lab

# Machado, Oliveira & Fernandes 2009, "A physiologically-based model for simulation of
# color vision deficiency", IEEE TVCG 15(6), severity 1.0 matrices on linear RGB
# (from memory).
CVD = {
    "protanopia": [
        [0.152286, 1.052583, -0.204868],
        [0.114503, 0.786281, 0.099216],
        [-0.003882, -0.048116, 1.051998],
    ],
    "deuteranopia": [
        [0.367322, 0.860646, -0.227968],
        [0.280085, 0.672501, 0.047413],
        [-0.011820, 0.042940, 0.968881],
    ],
    "tritanopia": [
        [1.255528, -0.076749, -0.178779],
        [-0.078411, 0.930809, 0.147602],
        [0.004733, 0.691367, 0.303900],
    ],
    "normal vision": np.eye(3).tolist(),
}
# A CIELAB distance of about 2.3 is a just-noticeable difference (Sharma 2003, Digital
# Color Imaging Handbook, from memory); neighbours must differ by more than twice that.
MIN_DELTA_E = 5.0


def _lab(color: str, matrix) -> np.ndarray:
    c = np.array(hex_to_rgb(color)) / 255.0
    lin = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    return linear_rgb_to_lab(np.clip(lin @ np.array(matrix).T, 0.0, 1.0))


def test_lab_of_known_colours():
    # sRGB white and black (common practice); mid grey #808080 has L* 53.6 (from memory)
    assert np.allclose(hex_to_lab("#ffffff"), [100, 0, 0], atol=0.05)
    assert np.allclose(hex_to_lab("#000000"), [0, 0, 0], atol=0.05)
    assert abs(hex_to_lab("#808080")[0] - 53.59) < 0.1


@pytest.mark.parametrize("vision", list(CVD))
def test_neighbouring_belts_differ_for_every_scheme_up_to_twelve_belts(vision):
    worst = np.inf
    for n_land in range(13):
        for n_sea in range(13 - n_land):
            if n_land + n_sea < 2:
                continue
            colors = belt_colors([False] * n_land + [True] * n_sea)
            lab = np.array([_lab(c, CVD[vision]) for c in colors])
            worst = min(worst, np.hypot.reduce(np.diff(lab, axis=0), axis=1).min())
    assert worst >= MIN_DELTA_E, worst


@pytest.mark.parametrize(
    "n_land, n_sea", [(1, 1), (3, 2), (2, 9), (5, 7), (12, 0), (0, 12), (15, 25)]
)
def test_belts_are_ordered_and_distinct_for_any_number(n_land, n_sea):
    colors = belt_colors([False] * n_land + [True] * n_sea)
    assert len(colors) == n_land + n_sea == len(set(colors))
    light = np.array([hex_to_lab(c)[0] for c in colors])
    # non-marine lighter basinward, marine darker basinward
    assert np.all(np.diff(light[:n_land]) > 0) and np.all(np.diff(light[n_land:]) < 0)


def test_marine_and_non_marine_sides_keep_their_hue():
    colors = belt_colors([False] * 4 + [True] * 8)
    b = np.array([hex_to_lab(c)[2] for c in colors])  # blue (-) to yellow (+)
    assert (b[:4] > 10).all()  # earth tones
    assert (b[-4:] < 0).all()  # the distal marine belts are blue to violet
