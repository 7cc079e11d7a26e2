"""Accuracy of paleomap's maps against known truth, beside the quick alternative.

Builds the demo region and two other synthetic basins (about 40 cores, relief
wavelength two to three core spacings), and prints per basin:

* the mean shoreline error inside the core hull as a share of the mean core spacing,
  for paleomap, for a thin-plate spline of the belt ranks, and for the information
  limit (the spline of the true continuous elevation at the cores);
* the median-transect rate's relative error against the true rate (median pair and
  worst pair) and whether every pair's sense is right.

Run from the repository root: ``python benchmarks/accuracy.py``. docs/accuracy.md
records its output.
"""

from __future__ import annotations

import sys
import tempfile
import time
import warnings
from pathlib import Path

from paleomap.accuracy import rate_scores, shoreline_scores
from paleomap.io.readers import load_project
from paleomap.pipeline import compute
from paleomap.scheme import builtin_scheme
from paleomap.synthetic import make_basin, write_project
from paleomap.synthetic.demo import demo_basin

# The seeded basins keep the five grain-size classes their figures in docs/accuracy.md were
# measured with (a wide sand belt at the shoreline); the demo uses shoreface_shelf.
GRAIN_SIZE = builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand"))


def _basins(seeds):
    yield "demo region", demo_basin()
    for s in seeds:
        yield (
            f"seed {s}",
            make_basin(
                n_cores=40,
                seed=s,
                relief_amplitude_m=5.0,
                relief_wavelength_m=15_000.0,
                scheme=GRAIN_SIZE,
            ),
        )


def main(argv: list[str]) -> int:
    seeds = [int(a) for a in argv] or [1, 2]
    warnings.simplefilter("ignore")
    print(
        "| basin | cores | spacing km | paleomap | rank spline | information limit | "
        "ratio | rate error median | rate error worst | senses right |"
    )
    print("|---|---|---|---|---|---|---|---|---|---|")
    for label, basin in _basins(seeds):
        with tempfile.TemporaryDirectory() as tmp:
            folder = Path(tmp) / "project"
            write_project(basin, folder)
            t = time.perf_counter()
            result = compute(load_project(folder / "project.toml"))
            t = time.perf_counter() - t
        shore = shoreline_scores(result, basin)
        rates = rate_scores(result, basin)
        m, s, lim = (shore[c].mean() for c in ("mapped_share", "spline_share", "limit_share"))
        print(
            f"| {label} | {len(result.project.cores)} | {shore['spacing_m'].iloc[0] / 1e3:.2f} "
            f"| {m:.1%} | {s:.1%} | {lim:.1%} | {m / s:.2f} "
            f"| {rates['relative_error'].median():.1%} | {rates['relative_error'].max():.1%} "
            f"| {int(rates['sense_ok'].sum())}/{len(rates)} |",
            flush=True,
        )
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
