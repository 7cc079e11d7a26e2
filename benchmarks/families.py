"""The bench of independent basin families: every family x seed x engine, scored.

Each basin comes from ``benchmarks/basins`` (written for the bench, sharing no code
with paleomap's field engine or ``paleomap.synthetic``), is written as a project, built
by paleomap with each engine and scored against its exact truth beside the rank
spline and the information limit (``basins.scoring``). The same basin is built again
from geographic coordinates (EPSG:4326) to measure what the change of CRS does to the
rates.

Run from the repository root (nice it: it is long on a shared machine)::

    nice -n 15 python benchmarks/families.py                       # everything
    python benchmarks/families.py --families planar_ramp --seeds 1 --engine shared_relief
    python benchmarks/families.py --size tiny --no-geographic --out /tmp/bench.md

``--engine`` takes the names of paleomap's engine registry
(:data:`paleomap.field.engine.ENGINES`), written as ``[mapping] engine = "NAME"``. The table is printed as it grows and written as Markdown to ``--out``
(default ``benchmarks/families.md``); ``--csv`` writes every slice's and pair's scores.
docs/accuracy.md records the results.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import os
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

import numpy as np
import pandas as pd

sys.path.insert(0, str(Path(__file__).resolve().parent))

from basins.basin import make_basin  # noqa: E402
from basins.families import FAMILIES  # noqa: E402
from basins.scoring import build_outputs, pair_scores, slice_scores, summarise  # noqa: E402
from basins.writing import write_project  # noqa: E402

__all__ = ["ENGINES", "TARGETS", "main", "run_one"]

ENGINES = ("shared_relief", "space_time")
"""The engines the bench runs by default (``per_slice`` on request)."""

TARGETS = {
    "ratio_limit": ("<=", 1.25),
    "ratio_spline": ("<=", 0.6),
    "rate_error_median": ("<=", 0.10),
    "rate_error_worst": ("<=", 0.25),
    "band_coverage": ("in", (0.70, 0.90)),
    "geo_rate_difference": ("<=", 0.02),
}
"""The targets of issue 14 for every family (besides every sense right)."""


def mapping_for(engine: str) -> dict:
    """The ``[mapping]`` keys that select ``engine``."""
    return {"engine": engine}


def _build(path):
    from paleomap import compute, load_project

    return compute(load_project(path))


def run_one(basin, engine: str, folder: Path, *, geographic: bool = True):
    """Build ``basin`` with ``engine`` (and from geographic input); return the summary
    row, the slice scores and the pair scores."""
    mapping = mapping_for(engine)
    t = time.perf_counter()
    result = _build(write_project(basin, folder / "projected", mapping=mapping))
    seconds = time.perf_counter() - t
    outputs = build_outputs(result)
    slices = slice_scores(basin, outputs)
    pairs = pair_scores(basin, outputs)
    geo = None
    if geographic:
        geo = build_outputs(
            _build(write_project(basin, folder / "geographic", crs="geographic", mapping=mapping))
        )
    row = dict(
        family=basin.model.family,
        seed=basin.model.seed,
        engine=engine,
        cores=len(basin.logged.cores),
        **summarise(slices, pairs, geo),
        build_s=seconds,
    )
    return row, slices, pairs


def _meets(row) -> str:
    misses = []
    for key, (op, bound) in TARGETS.items():
        v = row[key]
        if not np.isfinite(v):
            continue
        ok = v <= bound if op == "<=" else bound[0] <= v <= bound[1]
        if not ok:
            misses.append(key)
    if row["senses_right"] < row["pairs"]:
        misses.append("senses")
    return "all" if not misses else "misses " + ", ".join(misses)


_HEADER = (
    "| family | seed | engine | cores | spacing km | shoreline error | rank spline | "
    "information limit | / limit | / spline | rate error median | rate error worst | "
    "senses | band coverage | band width | geo vs projected | targets |"
)


def _line(r) -> str:
    geo = f"{r['geo_rate_difference']:.1%}" if np.isfinite(r["geo_rate_difference"]) else "-"
    return (
        f"| {r['family']} | {r['seed']} | {r['engine']} | {r['cores']} | {r['spacing_km']:.2f} "
        f"| {r['shoreline_error']:.1%} | {r['spline_error']:.1%} | {r['limit_error']:.1%} "
        f"| {r['ratio_limit']:.2f} | {r['ratio_spline']:.2f} | {r['rate_error_median']:.1%} "
        f"| {r['rate_error_worst']:.1%} | {r['senses_right']}/{r['pairs']} "
        f"| {r['band_coverage']:.2f} | {r['band_width']:.2f} | {geo} | {_meets(r)} |"
    )


def summary_table(rows: pd.DataFrame) -> str:
    """Per family and engine over the seeds: means of the errors, ratios, coverage and
    width; the median pair's error as a median; the worst pair and the geographic
    difference as maxima; senses summed."""
    out = [
        "| family | engine | seeds | shoreline error | rank spline | information limit "
        "| / limit | / spline | rate error median | rate error worst | senses "
        "| band coverage | band width | geo vs projected |",
        "|---|---|---|---|---|---|---|---|---|---|---|---|---|---|",
    ]
    for (family, engine), g in rows.groupby(["family", "engine"], sort=False):
        geo = g["geo_rate_difference"].max()
        out.append(
            f"| {family} | {engine} | {len(g)} | {g['shoreline_error'].mean():.1%} "
            f"| {g['spline_error'].mean():.1%} | {g['limit_error'].mean():.1%} "
            f"| {g['ratio_limit'].mean():.2f} | {g['ratio_spline'].mean():.2f} "
            f"| {g['rate_error_median'].median():.1%} | {g['rate_error_worst'].max():.1%} "
            f"| {g['senses_right'].sum()}/{g['pairs'].sum()} | {g['band_coverage'].mean():.2f} "
            f"| {g['band_width'].mean():.2f} | {f'{geo:.1%}' if np.isfinite(geo) else '-'} |"
        )
    return "\n".join(out)


def _revision() -> str:
    try:
        return subprocess.run(
            ["git", "rev-parse", "--short", "HEAD"], capture_output=True, text=True, check=True
        ).stdout.strip()
    except (OSError, subprocess.CalledProcessError):
        return "unknown"


def main(argv: list[str] | None = None) -> int:
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--families", default=",".join(FAMILIES), help="comma-separated names")
    parser.add_argument("--seeds", default="1,2,3,4,5", help="comma-separated seeds")
    parser.add_argument("--engine", default=",".join(ENGINES), help="comma-separated engines")
    parser.add_argument("--size", default="bench", choices=["bench", "tiny"])
    parser.add_argument("--no-geographic", action="store_true", help="skip the EPSG:4326 builds")
    parser.add_argument("--out", default=str(Path(__file__).parent / "families.md"))
    parser.add_argument("--csv", default=None, help="folder for per-slice and per-pair CSVs")
    args = parser.parse_args(argv)
    families = [f for f in args.families.split(",") if f]
    unknown = [f for f in families if f not in FAMILIES]
    if unknown:
        parser.error(f"unknown families {unknown}; known: {sorted(FAMILIES)}")
    seeds = [int(s) for s in args.seeds.split(",") if s]
    engines = [e for e in args.engine.split(",") if e]
    warnings.simplefilter("ignore")
    started = time.perf_counter()
    print(f"load average {os.getloadavg()[0]:.2f}; revision {_revision()}", flush=True)
    print(_HEADER, flush=True)
    rows, slice_rows, pair_rows = [], [], []
    for family in families:
        for seed in seeds:
            basin = make_basin(family, seed, size=args.size)
            for engine in engines:
                with tempfile.TemporaryDirectory() as tmp:
                    try:
                        row, sl, pr = run_one(
                            basin, engine, Path(tmp), geographic=not args.no_geographic
                        )
                    except Exception as exc:  # report and go on: one failure is a result
                        print(f"| {family} | {seed} | {engine} | failed: {exc!r} |", flush=True)
                        continue
                rows.append(row)
                print(_line(row), flush=True)
                for frame, store in ((sl, slice_rows), (pr, pair_rows)):
                    store.append(frame.assign(family=family, seed=seed, engine=engine))
    if not rows:
        return 1
    table = pd.DataFrame(rows)
    text = "\n".join(
        [
            f"Bench of independent basin families ({_dt.date.today().isoformat()}, revision "
            f"{_revision()}, size {args.size}, "
            f"{time.perf_counter() - started:.0f} s).",
            "",
            "Per family and engine, over the seeds:",
            "",
            summary_table(table),
            "",
            "Every family, seed and engine:",
            "",
            _HEADER,
            "|" + "---|" * 17,
            *(_line(r) for r in rows),
            "",
        ]
    )
    Path(args.out).write_text(text, encoding="utf-8")
    print()
    print(summary_table(table))
    if args.csv:
        folder = Path(args.csv)
        folder.mkdir(parents=True, exist_ok=True)
        table.to_csv(folder / "runs.csv", index=False)
        pd.concat(slice_rows).to_csv(folder / "slices.csv", index=False)
        pd.concat(pair_rows).to_csv(folder / "pairs.csv", index=False)
    return 0


if __name__ == "__main__":
    sys.exit(main())
