"""Tests of the mapping grid and the mapped area."""

import numpy as np
import pytest
import shapely

from paleomap.errors import InputError
from paleomap.grid import make_grid, mean_core_spacing


def _square_cores(n=5, size=10_000.0):
    e, nn = np.meshgrid(np.linspace(0, size, n), np.linspace(0, size, n))
    return e.ravel(), nn.ravel()


def test_grid_covers_hull_plus_margin_and_snaps_to_cell_size():
    e, n = _square_cores()
    g = make_grid(e, n, cell_size=250.0, margin=1000.0)
    assert g.west == -1000.0 and g.north == 11_000.0
    assert g.shape == (48, 48)
    assert g.west % 250.0 == 0 and g.north % 250.0 == 0
    # every core lies in a cell inside the mapped area
    row, col = g.index_of(e, n)
    assert g.mask[row, col].all()
    # corners of the box lie outside a buffered hull (rounded corners)
    assert not g.mask[0, 0] and not g.mask[-1, -1]


def test_transform_and_cell_centres_agree():
    e, n = _square_cores()
    g = make_grid(e, n, cell_size=500.0, margin=0.0)
    ce, cn = g.cell_centres()
    t = g.transform
    x0, y0 = t @ (0.5, 0.5)
    assert (ce[0], cn[0]) == pytest.approx((x0, y0))
    assert len(ce) == g.n_rows * g.n_cols


def test_area_polygon_replaces_hull():
    e, n = _square_cores()
    area = shapely.box(2000, 2000, 6000, 5000)
    g = make_grid(e, n, cell_size=100.0, area=area)
    assert g.shape == (30, 40)
    assert g.mask.all()


def test_mean_core_spacing_is_sqrt_hull_area_per_core():
    e, n = _square_cores(n=5, size=10_000.0)
    assert mean_core_spacing(e, n) == pytest.approx(np.sqrt(1e8 / 25))


@pytest.mark.parametrize(
    "e, n",
    [
        (np.array([500.0]), np.array([500.0])),
        (np.array([0.0, 1000.0, 2000.0]), np.array([0.0, 1000.0, 2000.0])),
    ],
    ids=["one-core", "collinear"],
)
def test_degenerate_core_layouts_still_give_an_area(e, n):
    g = make_grid(e, n, cell_size=100.0, margin=0.0)
    assert g.mask.sum() > 0


def test_too_large_grid_is_refused_with_a_cell_size_that_fits():
    e, n = _square_cores(size=100_000.0)
    with pytest.raises(InputError, match=r"grid\.cell_size.*[Uu]se cell_size = 100 or larger"):
        make_grid(e, n, cell_size=1.0, margin=0.0, max_cells=1_000_000)
