"""Tests of belt polygons: nesting (Walther's Law on the map) and honouring cores."""

import numpy as np
import pytest
import shapely

from paleomap.belts import belt_polygons, classify, honour_cores, node_field, walther_contacts
from paleomap.grid import make_grid


def _grid():
    e = np.array([0.0, 10_000, 0, 10_000])
    n = np.array([0.0, 0, 10_000, 10_000])
    return make_grid(e, n, cell_size=200.0, margin=0.0)


def _wavy_field(g):
    ee, nn = np.meshgrid(g.easting, g.northing)
    return (ee - 5000) / 2500 + 0.8 * np.sin(nn / 1500.0) + 0.3 * np.cos(ee / 900.0)


def test_polygons_partition_the_area():
    g = _grid()
    polys = belt_polygons(_wavy_field(g), g, np.array([-1.0, 0.0, 0.6, 1.2]))
    total = sum(p.area for p in polys)
    assert total == pytest.approx(g.area.area, rel=1e-9)
    for i, a in enumerate(polys):
        assert a.is_valid
        for b in polys[i + 1 :]:
            assert shapely.intersection(a, b).area == pytest.approx(0.0, abs=1e-6)


def test_belts_keep_walthers_order():
    # Walther (1894), restated by Middleton (1973): belts that are not neighbours in the
    # scheme never touch on a map made from a continuous field.
    g = _grid()
    polys = belt_polygons(_wavy_field(g), g, np.array([-1.0, -0.2, 0.1, 1.2]))
    assert all(not p.is_empty for p in polys)
    assert walther_contacts(polys) == []


def test_walther_contacts_finds_touching_non_neighbours():
    a = shapely.box(0, 0, 1, 1)
    b = shapely.box(1, 0, 2, 1)
    c = shapely.box(2, 0, 3, 1)
    assert walther_contacts([a, c, b]) == [(0, 2)]
    assert walther_contacts([a, b, c]) == []


def test_polygon_class_matches_cell_classification():
    g = _grid()
    latent = _wavy_field(g)
    t = np.array([-0.5, 0.4])
    polys = belt_polygons(latent, g, t)
    ranks = classify(latent, t)
    ce, cn = g.cell_centres()
    # cell centres well away from boundaries fall in the polygon of their class
    far = np.abs(latent.ravel()[:, None] - t[None, :]).min(axis=1) > 0.05
    for k, p in enumerate(polys):
        sel = far & (ranks.ravel() == k)
        assert shapely.contains_xy(p, ce[sel], cn[sel]).all()


def test_honour_cores_puts_each_core_in_its_own_belt():
    g = _grid()
    latent = _wavy_field(g)
    t = np.array([-0.5, 0.4])
    rng = np.random.default_rng(3)
    ce = rng.uniform(500, 9500, 60)
    cn = rng.uniform(500, 9500, 60)
    nodes = node_field(latent, g)
    value = nodes.at(ce, cn)
    # Pretend the cores log the belt next door where they are near a boundary.
    ranks = classify(value, t)
    near = np.abs(value[:, None] - t[None, :]).min(axis=1) < 0.2
    ranks = np.where(near & (ranks < 2), ranks + 1, ranks)
    honour_cores(nodes, ce, cn, ranks, t)
    polys = belt_polygons(None, g, t, nodes=nodes)
    for k, p in enumerate(polys):
        sel = ranks == k
        assert shapely.contains_xy(p, ce[sel], cn[sel]).all()
    assert walther_contacts(polys) == []


def test_cell_field_at_equals_the_node_field_interpolation():
    from paleomap.belts import cell_field_at

    g = _grid()
    values = _wavy_field(g)
    rng = np.random.default_rng(7)
    e = np.concatenate([rng.uniform(g.west, g.east, 500), [g.west, g.east]])
    n = np.concatenate([rng.uniform(g.south, g.north, 500), [g.north, g.south]])
    expected = node_field(values, g).at(e, n)
    got = cell_field_at(g, e, n, lambda r, c: values[r, c])
    np.testing.assert_allclose(got, expected, rtol=0, atol=1e-12)


def test_contours_follow_the_honoured_values():
    # The contouring generator is kept between calls; honouring must drop it.
    g = _grid()
    latent = _wavy_field(g)
    t = np.array([0.0])
    nodes = node_field(latent, g)
    before = belt_polygons(None, g, t, nodes=nodes)
    ce, cn = np.array([5000.0]), np.array([5000.0])
    rank = 1 - classify(nodes.at(ce, cn), t)  # the other side
    honour_cores(nodes, ce, cn, rank, t)
    after = belt_polygons(None, g, t, nodes=nodes)
    assert shapely.contains_xy(after[rank[0]], ce, cn).all()
    assert not shapely.contains_xy(before[rank[0]], ce, cn).all()


def test_float32_latent_keeps_float32_nodes():
    g = _grid()
    nodes = node_field(_wavy_field(g).astype(np.float32), g)
    assert nodes.values.dtype == np.float32
    assert node_field(_wavy_field(g), g).values.dtype == np.float64
