"""Tests of the shoreline contour and its uncertainty band."""

import numpy as np
import pytest
import shapely
from scipy.stats import norm

from paleomap.belts import belt_polygons, node_field
from paleomap.grid import make_grid
from paleomap.shoreline import distal_region, shoreline, shoreline_band


def _grid():
    e = np.array([0.0, 10_000, 0, 10_000])
    n = np.array([0.0, 0, 10_000, 10_000])
    return make_grid(e, n, cell_size=100.0, margin=0.0)


def _ramp(g, x0=4000.0, scale=2000.0):
    ee, _ = np.meshgrid(g.easting, g.northing)
    return (ee - x0) / scale


def test_shoreline_of_a_planar_field_is_a_straight_line_at_the_threshold():
    g = _grid()
    line = shoreline(node_field(_ramp(g), g), 0.0, g.area)
    assert line.length == pytest.approx(10_000.0, rel=1e-6)
    xy = shapely.get_coordinates(line)
    assert np.allclose(xy[:, 0], 4000.0)


def test_no_shoreline_when_the_boundary_is_outside_the_area():
    g = _grid()
    line = shoreline(node_field(_ramp(g, x0=-5000.0), g), 0.0, g.area)
    assert line.is_empty


def test_band_brackets_the_shoreline_at_the_probability_levels():
    g = _grid()
    latent = _ramp(g)
    sd = 0.25
    p_distal = norm.sf((0.0 - latent) / sd)
    band = shoreline_band(p_distal, g)
    xmin, _, xmax, _ = band.bounds
    # P(distal) = 0.1 where latent = -1.2816 sd, 0.9 where latent = +1.2816 sd (scipy norm)
    half = norm.ppf(0.9) * sd * 2000.0
    assert xmin == pytest.approx(4000.0 - half, abs=1.0)
    assert xmax == pytest.approx(4000.0 + half, abs=1.0)
    assert band.is_valid


def test_distal_region_is_the_union_of_distal_belts():
    g = _grid()
    polys = belt_polygons(_ramp(g), g, np.array([-1.0, 0.0, 1.0]))
    d = distal_region(polys, 2)
    assert d.area == pytest.approx(6000.0 * 10_000.0, rel=1e-6)
