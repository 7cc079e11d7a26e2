"""Shorelines through time on synthetic basins: shifts, rates, units and CRS.

Checks against the outside world:

- On a planar ramp with no accumulation, relief or subsidence, the shoreline shift is
  the sea-level change divided by the tangent of the slope (REFERENCES.md, "Shoreline
  shift on a slope", common practice), and a relative rise moves it landward
  (common practice).
- Units: 1 m/kyr = 1 mm/yr = 1 km/Myr (definition); rates stay in m/kyr when the
  project's ages are in Ma.
- Geographic input (EPSG:4326) gives the same shifts as projected input, within 0.5 %,
  and a shift measured in the working CRS agrees with pyproj's ``Geod`` distance
  (pyproj as the reference library).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyproj
import pytest
import shapely

from paleomap.io.readers import load_project
from paleomap.pipeline import compute
from paleomap.scheme import builtin_scheme
from paleomap.synthetic import make_basin, write_project

# Sea level in m at ages in ka: a rise, a fall, a rise.
SEA = [(100.0, -6.0), (70.0, 6.0), (40.0, -4.0), (10.0, 8.0), (0.0, 8.0)]
SURFACES = [90.0, 60.0, 30.0, 15.0]
# One accumulation rate for every belt keeps the ramp planar; the relative rise is the
# sea-level rise less the accumulation.
RATE = 0.02  # m/kyr


def _planar(tmp_path, *, age_unit="ka", scale=1.0, name="planar"):
    basin = make_basin(
        n_cores=36,
        layout="grid",
        seed=0,
        relief_amplitude_m=0.0,
        # the five grain-size classes with their wide sand belt: the test is about the
        # geometry of a shift, not about a scheme
        scheme=builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand")),
        rates_m_per_kyr=(RATE,) * 5,
        subsidence_m_per_kyr_per_km=0.0,
        sea_level=[(a * scale, z) for a, z in SEA],
        surfaces=[a * scale for a in SURFACES],
        age_unit=age_unit,
        gradient_m_per_km=1.5,
        cell_size_m=400.0,
        truth_cell_m=400.0,
        centre_elevation_m=0.0,
    )
    folder = tmp_path / name
    write_project(basin, folder)
    return basin, folder / "project.toml"


@pytest.fixture(scope="module")
def planar(tmp_path_factory):
    basin, path = _planar(tmp_path_factory.mktemp("planar"))
    return basin, compute(load_project(path))


def _level(age):
    """Relative sea level at ``age`` ka (sea level less the sediment laid down)."""
    ages, levels = zip(*SEA, strict=True)
    return float(np.interp(age, ages[::-1], levels[::-1])) + RATE * age


def test_shift_equals_sea_level_change_over_tan_slope(planar):
    _, result = planar
    tan = 1.5 / 1000.0
    for r in result.slice_pairs.itertuples():
        rise = _level(r.younger_age) - _level(r.older_age)
        expected = rise / tan  # REFERENCES.md: horizontal shift = rise / tan(slope)
        shifts = result.shifts[
            (result.shifts["older_slice"] == r.older_slice)
            & (result.shifts["younger_slice"] == r.younger_slice)
        ]
        shifts = shifts[np.isfinite(shifts["shift_m"])]
        assert len(shifts) >= 3
        median = float(np.median(shifts["shift_m"]))
        # within the position uncertainty (the P10-P90 range of the shift)
        low, high = np.median(shifts["shift_low_m"]), np.median(shifts["shift_high_m"])
        half = max((high - low) / 2, 0.05 * abs(expected))
        assert abs(median - expected) <= half, (r.older_slice, median, expected)
        # a relative rise moves the shoreline landward (positive shift)
        assert np.sign(median) == np.sign(rise)
        # the sense is never the wrong direction; where the P10-P90 range of the shift
        # spans zero it is "uncertain" (docs/conventions.md)
        assert r.sense in ("transgression" if rise > 0 else "regression", "uncertain")
        if r.sense == "uncertain":
            assert r.median_shift_low_m < 0 < r.median_shift_high_m


def test_transect_and_area_estimates_agree_with_each_other_and_the_truth(planar):
    _, result = planar
    tan = 1.5 / 1000.0
    for r in result.slice_pairs.itertuples():
        expected = (_level(r.younger_age) - _level(r.older_age)) / tan
        dt = r.older_age - r.younger_age
        shifts = result.shifts[
            (result.shifts["older_slice"] == r.older_slice)
            & (result.shifts["younger_slice"] == r.younger_slice)
        ]
        transect_shift = r.median_rate_m_per_kyr * dt
        # the two estimates agree with each other ...
        assert r.net_shift_m == pytest.approx(transect_shift, rel=0.15, abs=200.0)
        # ... and with the truth, within the shift's P10-P90 range
        low = np.nanmedian(shifts["shift_low_m"])
        high = np.nanmedian(shifts["shift_high_m"])
        assert low - 0.05 * abs(expected) <= r.net_shift_m <= high + 0.05 * abs(expected)


def test_rate_units(planar):
    # 1 m/kyr = 1 mm/yr = 1 km/Myr: the same number in each unit
    rate_m_per_kyr = 2.5
    assert rate_m_per_kyr * 1000 / 1000 == pytest.approx(2.5)  # mm/yr: 1000 mm / 1000 yr
    assert rate_m_per_kyr * 1000 / 1000 == pytest.approx(2.5)  # km/Myr: 1000 m / 1000 kyr
    _, result = planar
    s = result.shifts.dropna(subset=["shift_m"]).iloc[0]
    assert s["rate_m_per_kyr"] == pytest.approx(s["shift_m"] / (s["older_age"] - s["younger_age"]))


def test_rates_are_in_m_per_kyr_with_ages_in_ma(tmp_path, planar):
    _, result_ka = planar
    _, path = _planar(tmp_path, age_unit="Ma", scale=1e-3, name="planar_ma")
    result_ma = compute(load_project(path))
    a = result_ka.slice_pairs["median_rate_m_per_kyr"].to_numpy()
    b = result_ma.slice_pairs["median_rate_m_per_kyr"].to_numpy()
    assert np.allclose(a, b, rtol=1e-6)
    assert np.allclose(
        result_ma.slice_pairs["older_age"] * 1000, result_ka.slice_pairs["older_age"]
    )


def test_geographic_input_gives_the_same_shifts(tmp_path):
    basin = make_basin(
        n_cores=36,
        seed=4,
        cell_size_m=200.0,
        truth_cell_m=400.0,
        relief_amplitude_m=3.0,
        relief_wavelength_m=15_000.0,
    )
    projected = tmp_path / "utm"
    write_project(basin, projected)
    geographic = tmp_path / "lonlat"
    write_project(basin, geographic)
    to_geo = pyproj.Transformer.from_crs(basin.crs, "EPSG:4326", always_xy=True)
    cores = pd.read_csv(geographic / "cores.csv")
    cores["x"], cores["y"] = to_geo.transform(cores["x"].to_numpy(), cores["y"].to_numpy())
    cores.to_csv(geographic / "cores.csv", index=False, float_format="%.9f")
    text = (geographic / "project.toml").read_text()
    text = text.replace(f'crs = "{basin.crs.to_string()}"', 'crs = "EPSG:4326"')
    assert 'crs = "EPSG:4326"' in text
    (geographic / "project.toml").write_text(text)

    # Deterministic mapping on both, so the comparison is of geometry, not of Monte
    # Carlo noise between two differently placed grids.
    for folder in (projected, geographic):
        toml = (folder / "project.toml").read_text()
        (folder / "project.toml").write_text(toml + "\n[mapping]\ndeterministic = true\n")
    r_utm = compute(load_project(projected / "project.toml"))
    geo_project = load_project(geographic / "project.toml")
    r_geo = compute(geo_project)
    # the area-based net shift does not depend on where the transects fall
    assert np.allclose(
        r_geo.slice_pairs["net_shift_m"], r_utm.slice_pairs["net_shift_m"], rtol=0.005
    )
    assert list(r_geo.slice_pairs["sense"]) == list(r_utm.slice_pairs["sense"])
    # a shift measured in the local working CRS is the geodesic distance (pyproj Geod)
    geod = pyproj.Geod(ellps="WGS84")
    back = pyproj.Transformer.from_crs(geo_project.working_crs, "EPSG:4326", always_xy=True)
    rows = r_geo.shifts.dropna(subset=["shift_m"])
    rows = rows[rows["shift_m"].abs() > 1000].head(10)
    assert len(rows) > 0
    for line, shift in zip(rows["geometry"], rows["shift_m"], strict=True):
        (x0, y0), (x1, y1) = shapely.get_coordinates(line)
        lon, lat = back.transform([x0, x1], [y0, y1])
        _, _, dist = geod.inv(lon[0], lat[0], lon[1], lat[1])
        assert dist == pytest.approx(abs(shift), rel=0.005)
