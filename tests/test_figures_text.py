"""Every figure stays legible at the sizes a large project reaches: no text runs into other
text or off the figure at 30 slices, 12 belts and 60-character names (measured on the
rendered text's bounding boxes, ``Text.get_window_extent`` after the figure is drawn)."""

from __future__ import annotations

import contextlib
import math
import warnings
from pathlib import Path

import numpy as np
import pytest
from conftest import REMOVE, write_project

from paleomap import load_project
from paleomap.errors import PaleomapWarning
from paleomap.figures import all as figures_all
from paleomap.figures.corepanel import column_positions, core_panel, panel_cores
from paleomap.figures.labels import ELLIPSIS
from paleomap.figures.positions import position_panel, series_rate, shoreline_positions
from paleomap.pipeline import compute
from paleomap.results import chart_transect

N_SLICES = 30
N_BELTS = 12
NAME = 60  # characters in every user-given name


def _long(prefix: str) -> str:
    """A 60-character name whose distinguishing part comes first."""
    filler = " of the northern Kaldrith shelf, upper member, east block"
    name = (prefix + filler * 2)[:NAME]
    return name if not name.endswith(" ") else name[:-1] + "x"


def stress_project(folder: Path) -> Path:
    """30 surfaces, a custom 12-belt scheme (5 non-marine, 7 marine), 20 cores on a 5 x 4
    grid logged in feet between about 4000 and 6000 ft, every name 60 characters long.

    The belt at a core and age is the core's place across the basin plus a sea-level
    swing (one cycle per 250 ka), so the shoreline crosses the area back and forth."""
    belts = [
        {
            "id": f"b{k:02d}",
            "marine": k >= 5,
            "label": _long(f"belt {k:02d} {'marine' if k >= 5 else 'coastal plain'}"),
        }
        for k in range(N_BELTS)
    ]
    ages = [10.0 * (i + 1) for i in range(N_SLICES)]
    surfaces = [{"name": _long(f"S{i + 1:02d} surface"), "age": a} for i, a in enumerate(ages)]
    cores, intervals, picks = (
        ["core_id,x,y,elevation"],
        ["core_id,top,base,facies"],
        ["core_id,surface,depth"],
    )
    for i in range(5):
        for j in range(4):
            cid = _long(f"C{i}{j} well")
            cores.append(
                f'"{cid}",{500000 + 4000 * i},{4000000 + 4000 * j},{120 + 15 * i - 10 * j}'
            )
            top = 4000.0 + 40.0 * i + 25.0 * j
            step = 62.0 + 3.0 * j  # feet per 10 ka
            depth = [top + step * k for k in range(N_SLICES + 1)]
            for k in range(N_SLICES):
                age = ages[k] + 5.0
                rank = int(np.clip(round(2.6 * i + 3.0 * math.sin(age / 40.0) + 0.5), 0, 11))
                intervals.append(f'"{cid}",{depth[k]:.1f},{depth[k + 1]:.1f},b{rank:02d}')
            for k in range(N_SLICES):
                picks.append(f'"{cid}","{surfaces[k]["name"]}",{depth[k]:.1f}')
    config = {
        "project": {"name": _long("Stress test basin")},
        "inputs": {"depth_unit": "ft"},
        "surfaces": surfaces,
        "scheme": {
            "builtin": REMOVE,
            "track": REMOVE,
            "name": _long("custom twelve-belt scheme"),
            "belts": belts,
        },
        "grid": {"cell_size": 1000.0, "margin": 1000.0},
        "mapping": {"deterministic": True},
    }
    return write_project(
        folder,
        config=config,
        cores="\n".join(cores) + "\n",
        intervals="\n".join(intervals) + "\n",
        picks="\n".join(picks) + "\n",
    )


@pytest.fixture(scope="session")
def stress(tmp_path_factory):
    path = stress_project(tmp_path_factory.mktemp("stress"))
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        return compute(load_project(path))


@contextlib.contextmanager
def _recording_texts():
    """Collect every Text drawn (not only those that exist: ticks outside the view are
    kept by matplotlib but not drawn)."""
    from matplotlib.text import Text

    drawn: list = []
    original = Text.draw

    def draw(self, renderer):
        original(self, renderer)
        if self.get_visible() and self.get_text().strip():
            drawn.append((self, self.get_window_extent(renderer)))

    Text.draw = draw
    try:
        yield drawn
    finally:
        Text.draw = original


def drawn_texts(fig):
    with _recording_texts() as drawn:
        fig.canvas.draw()
    return drawn


def overlaps(fig, tol: float = 0.5):
    """Pairs of drawn texts whose boxes intersect by more than ``tol`` pixels, and texts
    running off the figure."""
    drawn = drawn_texts(fig)
    w, h = fig.canvas.get_width_height()
    pairs, off = [], []
    for k, (t, b) in enumerate(drawn):
        if b.x0 < -tol or b.y0 < -tol or b.x1 > w + tol or b.y1 > h + tol:
            off.append(t.get_text())
        for t2, b2 in drawn[k + 1 :]:
            if (
                min(b.x1, b2.x1) - max(b.x0, b2.x0) > tol
                and min(b.y1, b2.y1) - max(b.y0, b2.y0) > tol
            ):
                pairs.append((t.get_text(), t2.get_text()))
    return pairs, off, drawn


def test_the_stress_project_has_the_sizes(stress):
    assert len(stress.slice_maps) == N_SLICES
    assert stress.project.scheme.n_belts == N_BELTS
    assert all(len(s.name) == NAME for s in stress.project.surfaces)
    assert all(len(c.core_id) == NAME for c in stress.project.cores)


def _specs(result):
    specs = figures_all.figure_specs(result)
    # every kind of figure once (the slice maps differ only in their data)
    seen, out = set(), []
    for s in specs:
        kind = s.stem.split("_")[0] + s.group
        if s.group == "slices" and kind in seen:
            continue
        seen.add(kind)
        out.append(s)
    return out


@pytest.mark.slow
def test_no_text_overlaps_in_any_figure(stress):
    specs = _specs(stress)
    assert {"slices", "migration", "sections"} <= {s.group for s in specs}
    problems = {}
    for spec in specs:
        fig = spec.draw()
        pairs, off, drawn = overlaps(fig)
        assert len(drawn) > 10, spec.stem
        if pairs or off:
            problems[spec.stem] = (pairs[:5], off[:5])
    assert not problems, problems


@pytest.mark.slow
def test_long_names_are_shortened_with_an_ellipsis(stress):
    spec = next(s for s in figures_all.figure_specs(stress) if s.group == "slices")
    texts = [t.get_text() for t, _b in drawn_texts(spec.draw())]
    assert any(ELLIPSIS in t for t in texts)
    assert not any(len(t) > 2 * NAME for t in texts)


# ------------------------------------------------------------------- core panel


def _column_boxes(ax):
    """Pixel boxes of the drawn interval rectangles."""
    coll = ax.collections[0]
    return [p.get_extents(coll.get_transform()) for p in coll.get_paths()]


def test_core_panel_spans_only_the_logged_depths(stress):
    # logged between about 4000 and 6000 ft below the core tops: no empty band above
    ax = core_panel(stress, datum="depth", max_distance_m=1e6)
    _tr, chosen = panel_cores(stress, max_distance_m=1e6)
    top = min(c.top for c, _a, _o in chosen)
    base = max(c.base for c, _a, _o in chosen)
    assert top > 3900 and base > 5800
    lo, hi = sorted(ax.get_ylim())
    assert lo <= top and hi >= base and (hi - lo) <= 1.1 * (base - top)
    ax.figure.canvas.draw()
    frame = ax.get_window_extent()
    boxes = _column_boxes(ax)
    covered = (max(b.y1 for b in boxes) - min(b.y0 for b in boxes)) / frame.height
    assert covered > 0.9
    # and every column is at least half the panel tall (no slivers)
    per_core = {}
    for b in boxes:
        key = round(b.x0)  # the intervals of a core share its left edge
        lo_, hi_ = per_core.get(key, (np.inf, -np.inf))
        per_core[key] = (min(lo_, b.y0), max(hi_, b.y1))
    assert min(h - lo_ for lo_, h in per_core.values()) > 0.5 * frame.height


def test_core_panel_hangs_on_elevation_when_every_core_has_one(stress):
    ax = core_panel(stress, max_distance_m=1e6)
    assert ax.get_ylabel().startswith("Elevation (ft)")
    _tr, chosen = panel_cores(stress, max_distance_m=1e6)
    core = chosen[0][0]
    first = ax.collections[0].get_paths()[0].get_extents()
    assert np.isclose(first.y0, core.intervals[0].top - core.elevation)


def test_core_panel_flattened_on_a_surface(stress):
    name = stress.project.surfaces[12].name
    ax = core_panel(stress, datum=name, max_distance_m=1e6)
    assert "flattened" in ax.get_ylabel()
    _tr, chosen = panel_cores(stress, max_distance_m=1e6)
    # the chosen surface is the horizontal line y = 0 across every column
    flat = [ln for ln in ax.lines if len(ln.get_ydata()) == 2 and np.allclose(ln.get_ydata(), 0.0)]
    assert len(flat) >= 2 * len(chosen) - 1
    with pytest.raises(ValueError, match="not one of depth, elevation nor a surface"):
        core_panel(stress, datum="nope")


def test_core_panel_spaced_by_distance(stress):
    _tr, chosen = panel_cores(stress, max_distance_m=1e6)
    along = np.array([a for _c, a, _o in chosen])
    even = core_panel(stress, max_distance_m=1e6).get_xticks()
    by_distance = core_panel(stress, max_distance_m=1e6, spacing="distance").get_xticks()
    assert np.allclose(even, np.arange(len(chosen)))
    assert np.allclose(by_distance, column_positions(along, "distance"))


def test_column_positions_follow_distance_with_room_for_each_column():
    along = np.array([0.0, 300.0, 2000.0, 2100.0, 2200.0, 6000.0, 9000.0, 9050.0])
    x = column_positions(along, "distance")
    steps, gaps = np.diff(x), np.diff(along)
    assert np.all(steps >= 1.0 - 1e-9)  # room for each column and its name
    # the far-apart cores are far apart on the panel, the close ones one column apart
    assert np.argmax(steps) == np.argmax(gaps) and steps.max() > 2.0
    assert np.allclose(steps[gaps < 200], 1.0)
    assert x[-1] <= 3 * (len(along) - 1) + 1
    assert np.allclose(column_positions(along, "even"), np.arange(len(along)))
    with pytest.raises(ValueError, match="not one of even, distance"):
        column_positions(along, "log")


# ------------------------------------------------------------------- positions


def test_an_oscillating_series_gets_its_net_rate_not_a_least_squares_line(stress):
    from paleomap.migration import one_directional

    tr = chart_transect(stress.transects).transect
    p = stress.positions[stress.positions["transect"] == tr]
    assert not one_directional(p["age"], p["position_m"])  # the swing goes back and forth
    rate, method = series_rate(stress, tr)
    assert method == "net"
    old, young = p.loc[p["age"].idxmax()], p.loc[p["age"].idxmin()]
    expected = (old["position_m"] - young["position_m"]) / (old["age"] - young["age"])
    assert np.isclose(rate, expected)
    axes = shoreline_positions(stress)
    assert all(": net " in ax.get_title("left") for ax in axes)
    assert "net" in position_panel(stress, tr).get_title("left")


def test_position_panel_has_a_key_and_labels_every_step_it_can(stress):
    tr = chart_transect(stress.transects).transect
    ax = position_panel(stress, tr)
    legend = ax.get_legend()
    labels = [t.get_text() for t in legend.get_texts()]
    assert {"transgression step", "regression step", "stillstand step"} <= set(labels)
    n_steps = int(
        np.isfinite(stress.shifts.loc[stress.shifts["transect"] == tr, "rate_m_per_kyr"]).sum()
    )
    assert len(ax.texts) >= 0.9 * n_steps
    title = ax.get_title("left")
    assert len(ax.texts) == n_steps or "without room for a label" in title
