"""Speed and memory of a paleomap build at three sizes, beside the scripted alternatives.

Run from the repository root (not part of the test suite)::

    python benchmarks/run.py --quick                  # about 200 cores, under 2 minutes
    python benchmarks/run.py                          # small, medium, large + comparison
    python benchmarks/run.py --sizes small,medium --compare none
    python benchmarks/run.py --engines shared_relief,space_time   # engines side by side

Every size is built with each engine of ``--engines`` (default: the default engine and
``space_time``), side by side in one run. Each size is a synthetic project made by
paleomap's forward model
(:func:`paleomap.synthetic.make_basin`) and written to a temporary folder (not timed).
The build then runs in a fresh Python process, so its wall time is the whole process
(imports included) and its peak memory is that process's own. Per stage, the table
gives the stage's wall time and the process's peak resident memory at the end of the
stage (``resource.getrusage`` maxrss, which only grows, so the stage that raised it is
the one whose figure jumps).

The comparison maps the same slices of one project the way a user would script them
without paleomap, in separate processes, from the same belt ranks at the cores (read
by paleomap's age models, not timed for either side):

* a loop over slices of gstools' ordinary kriging of the ranks (exponential model
  fitted to each slice's experimental variogram, field and kriging variance on the
  grid), then filled contours of the belts and the shoreline line (contourpy);
* a loop over slices of scipy's ``RBFInterpolator`` (thin-plate spline) of the ranks,
  then the same contouring; it computes no uncertainty at all.

A loop too slow to run whole is timed on its first slices (at least two) and scaled
to all slices; the output says so. paleomap's time in the ratio is its whole
``compute`` (age models, field with probabilities, belts, shorelines, core reading),
measured in the same run.
"""

from __future__ import annotations

import argparse
import json
import logging
import os
import resource
import subprocess
import sys
import tempfile
import time
import warnings
from pathlib import Path

__all__ = ["SIZES", "main"]

SIZES: dict[str, dict] = {
    "small": dict(n_cores=40, surfaces=8, cells=250, figures=True),
    "quick": dict(n_cores=200, surfaces=10, cells=500, figures=False),
    "medium": dict(n_cores=500, surfaces=20, cells=1000, figures=False),
    "large": dict(n_cores=5000, surfaces=50, cells=2000, figures=False),
}
"""Benchmark projects: cores, surfaces (one slice each) and grid cells along a side."""

_REGION_M = 40_000.0
_STAGES = ("load", "age models", "grid", "field", "belts", "shorelines", "chart", "core reading")


def _maxrss_mb() -> float:
    # Linux reports kilobytes.
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0


# ------------------------------------------------------------------ project making


def _make_project(size: str, folder: Path, seed: int) -> Path:
    """Forward-model the size's basin and write it as a project; returns project.toml."""
    from paleomap.synthetic import make_basin, write_project

    spec = SIZES[size]
    cell = _REGION_M / spec["cells"]
    basin = make_basin(
        n_cores=spec["n_cores"],
        surfaces=spec["surfaces"],
        seed=seed,
        size_m=_REGION_M,
        cell_size_m=cell,
        margin_m=1200.0,
        relief_amplitude_m=5.0,
        relief_wavelength_m=15_000.0,
        truth_cell_m=max(cell, 100.0),
    )
    return write_project(basin, folder / size, overwrite=True)


def _with_engine(project: str, engine: str) -> str:
    """A copy of the project file beside it that selects ``engine``."""
    path = Path(project)
    copy = path.with_name(f"project-{engine}.toml")
    copy.write_text(
        path.read_text(encoding="utf-8") + f'\n[mapping]\nengine = "{engine}"\n', encoding="utf-8"
    )
    return str(copy)


# ------------------------------------------------------------------ the build


class _StageClock(logging.Handler):
    """Notes the time and peak memory when the pipeline announces each stage."""

    def __init__(self):
        super().__init__(logging.INFO)
        self.marks: list[tuple[str, float, float]] = []

    def emit(self, record):
        msg = record.getMessage()
        if msg.endswith(" ...") and msg[:-4] in _STAGES:
            self.marks.append((msg[:-4], time.perf_counter(), _maxrss_mb()))


def _worker_build(project_file: str, out: str, figures: bool) -> dict:
    t_start = time.perf_counter()
    warnings.simplefilter("ignore")
    import paleomap
    from paleomap.pipeline import compute, write_build

    clock = _StageClock()
    log = logging.getLogger("paleomap.pipeline")
    log.addHandler(clock)
    log.setLevel(logging.INFO)
    t_import = time.perf_counter()
    rss_import = _maxrss_mb()
    project = paleomap.load_project(project_file)
    t_load = time.perf_counter()
    rss_load = _maxrss_mb()
    result = compute(project)
    t_compute = time.perf_counter()
    rss_compute = _maxrss_mb()
    # Every slice's belt probabilities: the engine's float32 path keeps the latent's
    # mean and sd and derives them on access (the writers ask again); timed here so
    # the mapping figure includes them.
    for m in result.slice_maps:
        m.probabilities.sum()
    t_prob = time.perf_counter()
    rss_prob = _maxrss_mb()
    write_build(result, out, overwrite=True, figures=figures, report=figures)
    t_write = time.perf_counter()
    rss_write = _maxrss_mb()
    stages = [("imports", t_import - t_start, rss_import), ("load", t_load - t_import, rss_load)]
    marks = clock.marks + [("end", t_compute, rss_compute)]
    for (name, t0, _), (_, t1, rss1) in zip(marks[:-1], marks[1:], strict=True):
        stages.append((name, t1 - t0, rss1))
    stages.append(("probabilities", t_prob - t_compute, rss_prob))
    stages.append(("writing", t_write - t_prob, rss_write))
    g = result.grid
    return dict(
        stages=stages,
        compute_s=t_compute - t_load,
        probabilities_s=t_prob - t_compute,
        cells=g.n_rows * g.n_cols,
        shape=[g.n_rows, g.n_cols],
        cores=len(project.cores),
        slices=len(result.slice_maps),
        peak_mb=rss_write,
        process_s=t_write - t_start,
    )


def _worker_field(project_file: str, fraction: float) -> dict:
    """The field stage alone on two bands of the grid's rows (for sizes whose whole build
    does not fit in memory): the fixed and the per-row cost from the two."""
    warnings.simplefilter("ignore")
    import numpy as np

    import paleomap
    from paleomap.agemodel import build_age_models
    from paleomap.grid import Grid, make_grid
    from paleomap.pipeline import _map_fields
    from paleomap.records import build_records

    project = paleomap.load_project(project_file)
    t0 = time.perf_counter()
    records = build_records(project, build_age_models(project))
    t_age = time.perf_counter() - t0
    e = np.array([c.easting for c in project.cores])
    n = np.array([c.northing for c in project.cores])
    grid = make_grid(e, n, cell_size=project.grid.cell_size, margin=project.grid.margin)
    out = dict(
        age_models_s=t_age,
        shape=[grid.n_rows, grid.n_cols],
        slices=len(project.slices),
        belts=project.scheme.n_belts,
    )
    big = max(2, int(round(grid.n_rows * fraction)))
    for label, rows in (("first", max(1, big // 4)), ("band", big)):
        band = Grid(
            grid.west,
            grid.north,
            grid.cell_size,
            rows,
            grid.n_cols,
            grid.area,
            grid.mask[:rows],
            grid.crs,
        )
        t0 = time.perf_counter()
        fields = _map_fields(project, records, band)
        out[label + "_s"] = time.perf_counter() - t0
        out[label + "_rows"] = rows
        del fields
    out["peak_mb"] = _maxrss_mb()
    return out


# ------------------------------------------------------------------ the alternatives


def _slice_ranks(project_file: str):
    """Per slice: (easting, northing, rank) of the cores with a record, and the grid."""
    import numpy as np

    import paleomap
    from paleomap.agemodel import sample_slices
    from paleomap.grid import make_grid

    project = paleomap.load_project(project_file)
    samples = sample_slices(project)
    e = np.array([c.easting for c in project.cores])
    n = np.array([c.northing for c in project.cores])
    grid = make_grid(e, n, cell_size=project.grid.cell_size, margin=project.grid.margin)
    out = []
    for sl in project.slices:
        rows = samples[samples["slice"] == sl.name]
        out.append(
            (
                rows["easting"].to_numpy(float),
                rows["northing"].to_numpy(float),
                rows["rank"].to_numpy(float),
            )
        )
    return out, grid, project.scheme.n_belts, project.scheme.tracked_boundary


def _contour(z, grid, n_belts: int, boundary: int):
    """What the user contours: filled belts at the half ranks, and the shoreline line."""
    import contourpy
    import numpy as np
    import shapely

    gen = contourpy.contour_generator(grid.easting, grid.northing, z, fill_type="OuterOffset")
    levels = np.concatenate([[-np.inf], np.arange(n_belts - 1) + 0.5, [np.inf]])
    belts = []
    for k in range(n_belts):
        points, offsets = gen.filled(levels[k], levels[k + 1])
        polys = [
            shapely.Polygon(p[o[0] : o[1]], [p[o[i] : o[i + 1]] for i in range(1, len(o) - 1)])
            for p, o in zip(points, offsets, strict=True)
        ]
        belts.append(shapely.union_all(polys) if polys else shapely.Polygon())
    lines = contourpy.contour_generator(grid.easting, grid.northing, z).lines(boundary - 0.5)
    return belts, [shapely.LineString(p) for p in lines if len(p) > 1]


def _worker_alternative(project_file: str, method: str, max_slices: int) -> dict:
    warnings.simplefilter("ignore")
    import numpy as np

    data, grid, n_belts, boundary = _slice_ranks(project_file)
    if method == "gstools":
        import gstools as gs
    else:
        from scipy.interpolate import RBFInterpolator
    times = []
    for e, n, r in data[:max_slices]:
        t0 = time.perf_counter()
        if method == "gstools":
            bins = np.linspace(0.0, 0.5 * max(np.ptp(e), np.ptp(n)), 16)
            centres, gamma = gs.vario_estimate((e, n), r, bins)
            model = gs.Exponential(dim=2)
            model.fit_variogram(centres, gamma, nugget=False)
            krige = gs.krige.Ordinary(model, (e, n), r)
            z, var = krige.structured([grid.easting, grid.northing])
            z = np.asarray(z).T  # gstools gives (easting, northing); maps are rows x cols
        else:
            rbf = RBFInterpolator(np.column_stack([e, n]), r, kernel="thin_plate_spline")
            ce, cn = grid.cell_centres()
            z = rbf(np.column_stack([ce, cn])).reshape(grid.shape)
        _contour(z, grid, n_belts, boundary)
        times.append(time.perf_counter() - t0)
    return dict(times=times, slices=len(data))


# ------------------------------------------------------------------ driver


def _run_worker(args: list[str]) -> tuple[dict, float]:
    t0 = time.perf_counter()
    proc = subprocess.run(
        [sys.executable, __file__, *args], capture_output=True, text=True, check=False
    )
    wall = time.perf_counter() - t0
    if proc.returncode != 0:
        sys.stderr.write(proc.stderr)
        raise SystemExit(f"benchmark worker failed: {' '.join(args)}")
    return json.loads(proc.stdout.strip().splitlines()[-1]), wall


def _print_build(size: str, res: dict, wall: float) -> None:
    r, c = res["shape"]
    print(
        f"\n== {size}: {res['cores']} cores, {res['slices']} slices, {r} x {c} cells "
        f"({res['cells'] * res['slices'] / 1e6:.1f} M cell-slices)"
    )
    print(f"  {'stage':<14}{'wall s':>9}{'peak RSS MiB':>15}")
    for name, dt, rss in res["stages"]:
        print(f"  {name:<14}{dt:>9.2f}{rss:>15.0f}")
    print(f"  {'compute':<14}{res['compute_s']:>9.2f}   (age models .. core reading)")
    print(
        f"  {'process':<14}{wall:>9.2f}{res['peak_mb']:>15.0f}   (whole process, imports included)"
    )


def _print_alternative(label: str, res: dict) -> float:
    times = res["times"]
    per = sum(times) / len(times)
    total = per * res["slices"]
    if len(times) < res["slices"]:
        note = f"timed on {len(times)} of {res['slices']} slices and scaled"
    else:
        note = f"all {res['slices']} slices run"
    print(f"  {label:<26}{total:>9.1f} s   ({per:.2f} s per slice; {note})")
    return total


def _large_field(project: str, band: float) -> None:
    res, wall = _run_worker(["--_worker", "field", project, str(band)])
    r, c = res["shape"]
    r1, r2 = res["first_rows"], res["band_rows"]
    per_row = max(res["band_s"] - res["first_s"], 0.0) / max(r2 - r1, 1)
    fixed = res["first_s"] - per_row * r1
    full = fixed + per_row * r
    print(f"\n== large: field stage only, {res['slices']} slices, {r} x {c} cells")
    print(f"  age models              {res['age_models_s']:>9.2f} s")
    print(f"  field, {r1} rows         {res['first_s']:>9.2f} s")
    print(f"  field, {r2} rows         {res['band_s']:>9.2f} s")
    print(f"  field, fixed part       {fixed:>9.2f} s   (sampler, fits, set-up)")
    print(
        f"  field, all {r} rows   {full:>9.2f} s   (scaled from the two bands: "
        f"{per_row:.3f} s per row)"
    )
    print(f"  peak RSS of the band    {res['peak_mb']:>9.0f} MiB")


def main(argv: list[str] | None = None) -> int:
    p = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    p.add_argument(
        "--sizes", default="small,medium,large", help="comma-separated: " + ", ".join(SIZES)
    )
    p.add_argument("--quick", action="store_true", help="only the quick comparison size")
    p.add_argument(
        "--compare",
        default=None,
        help="size of the comparison (default medium, or quick with --quick); 'none' to skip",
    )
    p.add_argument(
        "--gstools-slices",
        type=int,
        default=2,
        help="slices the gstools loop is timed on (then scaled; at least 2)",
    )
    p.add_argument(
        "--tps-slices", type=int, default=0, help="slices the spline loop is timed on (0: all)"
    )
    p.add_argument("--seed", type=int, default=1)
    p.add_argument(
        "--large-field-only",
        action="store_true",
        help="time only the large project's field stage, on two bands of the grid's "
        "rows, scaled to the whole grid (a few minutes less than the whole build)",
    )
    p.add_argument(
        "--band",
        type=float,
        default=0.25,
        help="share of the grid's rows the large field stage is timed on",
    )
    p.add_argument(
        "--engines",
        default="shared_relief,space_time",
        help="comma-separated field engines, each size built with each",
    )
    p.add_argument("--keep", type=Path, default=None, help="keep projects and builds here")
    p.add_argument("--_worker", nargs="+", help=argparse.SUPPRESS)
    a = p.parse_args(argv)

    if a._worker:
        kind, *rest = a._worker
        if kind == "make":
            out = _make_project(rest[0], Path(rest[1]), int(rest[2]))
            print(json.dumps(dict(project=str(out))))
        elif kind == "build":
            print(json.dumps(_worker_build(rest[0], rest[1], rest[2] == "1")))
        elif kind == "field":
            print(json.dumps(_worker_field(rest[0], float(rest[1]))))
        else:
            print(json.dumps(_worker_alternative(rest[0], kind, int(rest[1]))))
        return 0

    sizes = ["quick"] if a.quick else [s.strip() for s in a.sizes.split(",") if s.strip()]
    compare = a.compare or ("quick" if a.quick else "medium")
    unknown = [s for s in [*sizes, compare] if s not in SIZES and s != "none"]
    if unknown:
        p.error(f"unknown size(s) {unknown}; allowed: {', '.join(SIZES)}")
    if compare != "none" and compare not in sizes:
        sizes.append(compare)
    gs_slices = max(2, a.gstools_slices)
    engines = [e.strip() for e in a.engines.split(",") if e.strip()]

    tmp = tempfile.TemporaryDirectory(prefix="paleomap-bench-")
    root = a.keep or Path(tmp.name)
    root.mkdir(parents=True, exist_ok=True)
    load = os.getloadavg()[0]
    print(f"paleomap benchmark: {os.cpu_count()} CPUs, load average {load:.2f}")
    if load > 0.5 * (os.cpu_count() or 1):
        print("  (the machine is busy: figures will be slower and noisier than on an idle one)")
    builds = {}
    for size in sizes:
        made, t_make = _run_worker(["--_worker", "make", size, str(root), str(a.seed)])
        print(f"\n[{size}] project made by the forward model in {t_make:.1f} s (not timed)")
        spec = SIZES[size]
        if size == "large" and a.large_field_only:
            _large_field(made["project"], a.band)
            continue
        for engine in engines:
            project = _with_engine(made["project"], engine)
            res, wall = _run_worker(
                [
                    "--_worker",
                    "build",
                    project,
                    str(root / f"{size}-{engine}-build"),
                    "1" if spec["figures"] else "0",
                ]
            )
            builds[(size, engine)] = (project, res)
            _print_build(f"{size}, {engine}", res, wall)
            if size == "small":
                print(f"  small, whole process (figures and report on): {wall:.2f} s")
                bare, bare_wall = _run_worker(
                    ["--_worker", "build", project, str(root / f"small-{engine}-bare"), "0"]
                )
                print(
                    f"  small, whole process without figures and report: {bare_wall:.2f} s, "
                    f"peak {bare['peak_mb']:.0f} MiB "
                    f"({'within' if bare_wall < 3 else 'outside'} the 3 s target)"
                )
            if size == "large":
                verdict = "within" if wall < 300 and res["peak_mb"] < 4096 else "outside"
                print(
                    f"  large, whole process {wall:.0f} s, peak {res['peak_mb'] / 1024:.2f} GiB: "
                    f"{verdict} the 5 min / 4 GiB target"
                )

    if compare != "none":
        print(f"\n== comparison at size {compare}: the same maps scripted without paleomap")
        mapping = ("age models", "grid", "field", "belts", "shorelines", "probabilities")
        ours = {}
        for engine in engines:
            project, res = builds[(compare, engine)]
            ours[engine] = sum(dt for name, dt, _ in res["stages"] if name in mapping)
            print(
                f"  {'paleomap, ' + engine:<26}{ours[engine]:>9.1f} s   (age models, field, "
                f"belts, shorelines, every belt's probability grid; "
                f"{res['compute_s'] + res['probabilities_s']:.1f} s with the core reading)"
            )
        gs_res, _ = _run_worker(["--_worker", "gstools", project, str(gs_slices)])
        t_gs = _print_alternative("gstools ordinary kriging", gs_res)
        tps_n = a.tps_slices or res["slices"]
        tps_res, _ = _run_worker(["--_worker", "tps", project, str(max(2, tps_n))])
        t_tps = _print_alternative("thin-plate spline (scipy)", tps_res)
        for engine in engines:
            print(f"  {engine}: speedup vs thin-plate spline loop: {t_tps / ours[engine]:.1f}x")
        for engine in engines:
            print(f"{engine}: speedup vs scripted loop: {t_gs / ours[engine]:.1f}x")
    tmp.cleanup()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
