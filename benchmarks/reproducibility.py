"""How far a build moves when only the sampler's seed changes, and with more samples.

The same bench basin (``benchmarks/basins``) is built with ``[mapping] seed`` 0, 1, 2
and 3 for each engine and each sample count; per build the shoreline positions on the
transects and the slice pairs' median rates are read. For each setting the table gives

* **positions**: the mean and the largest distance of a transect position from its
  mean over the seeds, in % of the mean core spacing;
* **rates**: the median and the largest difference of a pair's median rate from its
  mean over the seeds, relative to that mean (pairs slower than 5 % of the median
  pair's speed are left out: their relative difference says nothing);
* the build time per seed.

Run from the repository root (nice it on a shared machine)::

    python benchmarks/reproducibility.py
    python benchmarks/reproducibility.py --families planar_ramp --engines space_time \\
        --samples 200,800
"""

from __future__ import annotations

import argparse
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))

from basins.basin import make_basin  # noqa: E402
from basins.writing import write_project  # noqa: E402

__all__ = ["main", "spread"]


from paleomap.spacing import mean_core_spacing  # noqa: E402


def _build(basin, folder: Path, mapping: dict):
    from paleomap import compute, load_project

    return compute(load_project(write_project(basin, folder, mapping=mapping)))


def spread(positions: list[pd.DataFrame], rates: list[pd.Series], spacing_m: float) -> dict:
    """Position and rate spread over builds that differ only in the sampler's seed.

    Examples
    --------
    >>> p = [pd.DataFrame({"key": ["a"], "position_m": [100.0]}),
    ...      pd.DataFrame({"key": ["a"], "position_m": [110.0]})]
    >>> r = [pd.Series([10.0]), pd.Series([11.0])]
    >>> d = spread(p, r, 1000.0)
    >>> round(d["position_mean_pct"], 3), round(d["rate_median_pct"], 3)
    (0.5, 4.762)
    """
    pos = pd.concat([p.set_index("key")["position_m"] for p in positions], axis=1)
    pos = pos.dropna()
    dev = pos.sub(pos.mean(axis=1), axis=0).abs().to_numpy() / spacing_m * 100.0
    rt = pd.concat(rates, axis=1).dropna()
    mean = rt.mean(axis=1)
    keep = mean.abs() >= 0.05 * mean.abs().median()
    rel = rt[keep].sub(mean[keep], axis=0).abs().div(mean[keep].abs(), axis=0).to_numpy() * 100
    return dict(
        position_mean_pct=float(dev.mean()) if dev.size else np.nan,
        position_max_pct=float(dev.max()) if dev.size else np.nan,
        rate_median_pct=float(np.median(rel)) if rel.size else np.nan,
        rate_max_pct=float(rel.max()) if rel.size else np.nan,
    )


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    p.add_argument("--families", default="planar_ramp,embayed_coast")
    p.add_argument("--basin-seed", type=int, default=1)
    p.add_argument("--engines", default="shared_relief,space_time")
    p.add_argument("--samples", default="default,800", help="'default' or whole numbers")
    p.add_argument("--seeds", default="0,1,2,3")
    a = p.parse_args(argv)
    warnings.simplefilter("ignore")
    seeds = [int(s) for s in a.seeds.split(",")]
    print(
        "| family | engine | samples | positions mean | positions max | rates median | "
        "rates max | build s |"
    )
    print("|---|---|---|---|---|---|---|---|")
    for family in a.families.split(","):
        basin = make_basin(family, a.basin_seed, size="bench")
        for engine in a.engines.split(","):
            for samples in a.samples.split(","):
                positions, rates, times = [], [], []
                spacing = np.nan
                for seed in seeds:
                    mapping = {"engine": engine, "seed": seed}
                    if samples != "default":
                        mapping["samples"] = int(samples)
                    with tempfile.TemporaryDirectory() as tmp:
                        t = time.perf_counter()
                        r = _build(basin, Path(tmp), mapping)
                        times.append(time.perf_counter() - t)
                    pos = r.positions.assign(
                        key=r.positions["transect"] + "/" + r.positions["slice"]
                    )
                    positions.append(pos[["key", "position_m"]])
                    pairs = r.slice_pairs
                    rates.append(
                        pd.Series(
                            pairs["median_rate_m_per_kyr"].to_numpy(),
                            index=pairs["older_slice"] + "/" + pairs["younger_slice"],
                        )
                    )
                    e = np.array([c.easting for c in r.project.cores])
                    n = np.array([c.northing for c in r.project.cores])
                    spacing = mean_core_spacing(e, n)
                d = spread(positions, rates, spacing)
                print(
                    f"| {family} | {engine} | {samples} | {d['position_mean_pct']:.2f} % | "
                    f"{d['position_max_pct']:.2f} % | {d['rate_median_pct']:.2f} % | "
                    f"{d['rate_max_pct']:.2f} % | {np.mean(times):.1f} |",
                    flush=True,
                )
    return 0


if __name__ == "__main__":
    sys.exit(main())
