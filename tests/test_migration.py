"""Tests of transects, boundary positions, shifts, rates and areas."""

import numpy as np
import pytest
import shapely

from paleomap.migration import (
    TransectPosition,
    area_change,
    classify_sense,
    default_transects,
    lsq_rate,
    one_directional,
    regional_dip_azimuth,
    shift_statistics,
    transect_position,
    trend_rate,
)


def test_dip_azimuth_points_where_the_latent_grows():
    from paleomap.grid import make_grid

    g = make_grid(
        np.array([0.0, 1e4, 0, 1e4]), np.array([0.0, 0, 1e4, 1e4]), cell_size=200.0, margin=0.0
    )
    ee, nn = np.meshgrid(g.easting, g.northing)
    # latent grows towards the south-east: basinward azimuth 135 degrees
    assert regional_dip_azimuth([ee - nn], g) == pytest.approx(135.0, abs=1e-6)
    assert regional_dip_azimuth([nn], g) == pytest.approx(0.0, abs=1e-6)


def test_default_transects_run_down_dip_evenly_spaced():
    area = shapely.box(0, 0, 20_000, 10_000)
    lines = default_transects(area, 90.0, spacing_m=2000.0)
    assert [t for t, _ in lines][:2] == ["T01", "T02"]
    assert len(lines) == 5
    for _, line in lines:
        (x0, y0), (x1, y1) = line.coords[0], line.coords[-1]
        assert x1 > x0 and y0 == pytest.approx(y1)
        assert line.length == pytest.approx(20_000.0)
    ys = sorted(line.coords[0][1] for _, line in lines)
    assert np.allclose(np.diff(ys), 2000.0)


def test_position_is_the_distance_to_a_single_crossing():
    line = shapely.LineString([(0, 0), (10_000, 0)])

    def latent(e, n):
        return (e - 3000.0) / 1000.0

    def pdist(e, n):
        return np.clip((e - 2000.0) / 2000.0, 0, 1)

    pos = transect_position(line, latent, 0.0, pdist, step_m=10.0)
    assert pos.position_m == pytest.approx(3000.0, abs=10.0)
    assert pos.crossings == 1
    # P(distal) reaches 0.1 at 2200 m and 0.9 at 3800 m
    assert pos.low_m == pytest.approx(2200.0, abs=10.0)
    assert pos.high_m == pytest.approx(3800.0, abs=10.0)


def test_multiple_crossings_give_the_equal_length_position_and_a_count():
    line = shapely.LineString([(0, 0), (10_000, 0)])

    def latent(e, n):
        # proximal on [0, 3000) and [5000, 6000), distal elsewhere: 4000 m proximal in all
        prox = (e < 3000) | ((e >= 5000) & (e < 6000))
        return np.where(prox, -1.0, 1.0)

    pos = transect_position(line, latent, 0.0, lambda e, n: (latent(e, n) > 0) * 1.0, 5.0)
    assert pos.crossings == 3
    assert pos.position_m == pytest.approx(4000.0, abs=10.0)


def test_boundary_never_reached_gives_no_position():
    line = shapely.LineString([(0, 0), (1000, 0)])
    pos = transect_position(
        line, lambda e, n: -np.ones_like(e), 0.0, lambda e, n: np.zeros_like(e), 10.0
    )
    assert np.isnan(pos.position_m) and pos.crossings == 0


def test_shift_sign_and_rate_units():
    # Older shoreline 5 km from the landward end, younger 3 km: it moved 2 km landward
    # in 10 kyr: +200 m/kyr, which is 200 mm/yr and 200 km/Myr (1 m/kyr = 1 mm/yr).
    older = TransectPosition(5000.0, 4900.0, 5100.0, 1)
    younger = TransectPosition(3000.0, 2900.0, 3100.0, 1)
    s = shift_statistics(older, younger, 110.0, 100.0)
    assert s["shift_m"] == pytest.approx(2000.0)
    assert s["rate_m_per_kyr"] == pytest.approx(200.0)
    assert s["shift_low_m"] < 2000.0 < s["shift_high_m"]
    assert s["rate_low_m_per_kyr"] < 200.0 < s["rate_high_m_per_kyr"]
    # with ages in Ma the caller converts to kyr first: 0.110 Ma -> 110 kyr
    s_ma = shift_statistics(older, younger, 0.110 * 1000, 0.100 * 1000)
    assert s_ma["rate_m_per_kyr"] == pytest.approx(200.0)


def test_age_uncertainty_widens_the_rate_range():
    older = TransectPosition(5000.0, 4990.0, 5010.0, 1)
    younger = TransectPosition(3000.0, 2990.0, 3010.0, 1)
    narrow = shift_statistics(older, younger, 110.0, 100.0)
    wide = shift_statistics(older, younger, 110.0, 100.0, 2.0, 2.0)
    assert (wide["rate_high_m_per_kyr"] - wide["rate_low_m_per_kyr"]) > 5 * (
        narrow["rate_high_m_per_kyr"] - narrow["rate_low_m_per_kyr"]
    )


def test_lsq_rate_is_positive_for_a_transgression():
    ages = np.array([300.0, 200.0, 100.0])
    positions = np.array([9000.0, 6000.0, 3000.0])  # moving landward as age decreases
    assert lsq_rate(ages, positions) == pytest.approx(30.0)


def test_trend_rate_is_least_squares_only_for_a_one_way_series():
    ages = np.array([300.0, 200.0, 100.0, 50.0])
    one_way = np.array([9000.0, 6000.0, 6000.0, 1000.0])  # landward or still throughout
    assert one_directional(ages, one_way)
    assert trend_rate(ages, one_way) == (pytest.approx(lsq_rate(ages, one_way)), "least-squares")
    # back and forth: a line through it means nothing; the net rate oldest to youngest
    swing = np.array([9000.0, 2000.0, 8000.0, 7000.0])
    assert not one_directional(ages, swing)
    rate, method = trend_rate(ages, swing)
    assert method == "net" and rate == pytest.approx((9000.0 - 7000.0) / (300.0 - 50.0))
    assert trend_rate(ages[:1], swing[:1])[1] == ""
    assert trend_rate(ages, [np.nan, 5.0, np.nan, 4.0]) == (
        pytest.approx(1.0 / 150.0),
        "least-squares",
    )


def test_sense_tolerance():
    assert classify_sense([0.5, -0.5, 0.05, np.nan], 0.1) == [
        "transgression",
        "regression",
        "stillstand",
        "",
    ]


def test_area_change_of_a_uniform_landward_shift():
    old = shapely.box(6000, 0, 10_000, 5000)
    new = shapely.box(4000, 0, 10_000, 5000)
    a = area_change(old, new, 5000.0, 5000.0)
    assert a["flooded_km2"] == pytest.approx(10.0)
    assert a["exposed_km2"] == pytest.approx(0.0)
    assert a["net_shift_m"] == pytest.approx(2000.0)
