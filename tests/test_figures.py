"""Figures: each renders for the demo region, a one-slice and a two-belt project, and shows
what it claims (belt colours under the cores, arrows per shift, chart cells per belt)."""

from __future__ import annotations

import warnings
from pathlib import Path

import numpy as np
import pytest
from conftest import PICKS, REMOVE, write_project

from paleomap import load_project
from paleomap.chart import MIN_CORES, wheeler_section
from paleomap.errors import PaleomapWarning
from paleomap.figures import all as figures_all
from paleomap.figures.canvas import new_figure, rgba_at, save_figure
from paleomap.figures.corepanel import column_width, core_panel, panel_cores
from paleomap.figures.mapframe import nice_length
from paleomap.figures.migration import arrow_transects, migration_map, shift_arrow_offsets
from paleomap.figures.positions import position_panel, rate_text, shoreline_positions
from paleomap.figures.slicemap import find_slice_map, slice_map
from paleomap.figures.wheeler import wheeler_chart
from paleomap.io.writers import safe_name
from paleomap.palette import SENSE_COLORS, hex_to_rgb
from paleomap.pipeline import compute
from paleomap.results import chart_transect

DEMO = Path(__file__).resolve().parents[1] / "demo_region" / "project.toml"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"


def _section(result, **kwargs):
    """The chart of a computed build again, with other settings."""
    return wheeler_section(
        result.project, result.grid, result.transects, result.records, result.field, **kwargs
    )


def _compute(path):
    with warnings.catch_warnings():
        # small test projects have slices the shoreline does not cross; that is their point
        warnings.simplefilter("ignore", PaleomapWarning)
        return compute(load_project(path))


def two_belt_project(folder: Path) -> Path:
    """3 x 3 cores, land to the west, sea to the east; the shoreline moves seaward
    (regression) from the older surface (shoreline near 2.5 km) to the younger (7.5 km)."""
    cores, intervals, picks = (
        ["core_id,x,y"],
        ["core_id,top,base,facies"],
        ["core_id,surface,depth"],
    )
    for i, x in enumerate((500000, 505000, 510000)):
        for j, y in enumerate((4000000, 4005000, 4010000)):
            cid = f"K{i}{j}"
            cores.append(f"{cid},{x},{y}")
            young = "land" if i <= 1 else "sea"
            old = "land" if i == 0 else "sea"
            if young == old:
                intervals.append(f"{cid},0,20,{young}")
            else:
                intervals += [f"{cid},0,10,{young}", f"{cid},10,20,{old}"]
            picks += [f"{cid},s1,5", f"{cid},s2,15"]
    config = {
        "surfaces": [{"name": "s1", "age": 10.0}, {"name": "s2", "age": 20.0}],
        "scheme": {
            "builtin": REMOVE,
            "track": REMOVE,
            "name": "coast",
            "belts": [
                {"id": "land", "marine": False},
                {"id": "sea", "marine": True, "color": "#3a8a9c", "label": "open sea"},
            ],
        },
        "mapping": {"deterministic": True},
    }
    return write_project(
        folder,
        config=config,
        cores="\n".join(cores) + "\n",
        intervals="\n".join(intervals) + "\n",
        picks="\n".join(picks) + "\n",
    )


@pytest.fixture(scope="module")
def two_belt(tmp_path_factory):
    return _compute(two_belt_project(tmp_path_factory.mktemp("two_belt")))


@pytest.fixture(scope="module")
def one_slice(tmp_path_factory):
    path = write_project(
        tmp_path_factory.mktemp("one_slice"),
        keys={"slices.at": ["s_old"], "mapping.deterministic": True},
    )
    return _compute(path)


@pytest.fixture(scope="module")
def eroded(tmp_path_factory):
    """The default project with s_mid erosional and s_old 5 m below it in every core, so
    every core misses the time from 200 ka to 250 ka (the borrowed rate is 0.1 m/kyr)."""
    picks = "core_id,surface,depth\n" + "".join(
        f"{c},s_young,{d}\n{c},s_mid,{d + 10}\n{c},s_old,{d + 15}\n"
        for c, d in (("C1", 5), ("C2", 5), ("C3", 6), ("C4", 4))
    )
    path = write_project(
        tmp_path_factory.mktemp("eroded"),
        picks=picks,
        keys={"surfaces[2].erosional": True, "mapping.deterministic": True},
    )
    return _compute(path)


@pytest.fixture(scope="module")
def demo():
    return _compute(DEMO)


SMALL = ["two_belt", "one_slice"]


def _result(request, name):
    return request.getfixturevalue(name)


def _core_colors(result, m):
    s = result.samples[result.samples["slice"] == m.slice.name]
    scheme = result.project.scheme
    expected = np.array([hex_to_rgb(scheme.belts[int(r)].color) for r in s["rank"]])
    return s, expected


# ------------------------------------------------------------------- pieces


def test_nice_length_rounds_down_to_one_two_five():
    assert [nice_length(v) for v in (0.7, 3.7, 19.0, 51000.0)] == [0.5, 2.0, 10.0, 50000.0]


def test_column_width_is_widest_for_the_most_proximal_belt():
    w = [column_width(r, 5) for r in range(5)]
    assert w == sorted(w, reverse=True) and w[0] > w[-1] > 0


def test_arrow_offsets_are_centred_and_evenly_spaced():
    off = shift_arrow_offsets(4, 1000.0)
    assert np.isclose(off.mean(), 0.0) and np.allclose(np.diff(off), 175.0)
    assert arrow_transects(list(range(20)), 8)[0] == 0
    assert arrow_transects(list(range(20)), 8)[-1] == 19


def test_rate_text_keeps_three_digits_without_exponents():
    assert rate_text(-1234.5, -3370.2, 2474.0) == "\u22121234 m/kyr (\u22123370 to 2474)"
    assert rate_text(float("nan")) == "no rate"


def test_save_figure_rejects_unknown_format(tmp_path):
    with pytest.raises(ValueError, match="not one of png, pdf, svg"):
        save_figure(new_figure(1, 1), tmp_path / "x", ["gif"])


# ------------------------------------------------------------------- slice maps


@pytest.mark.parametrize("name", SMALL)
def test_slice_map_cores_show_their_belt_colours(request, name):
    result = _result(request, name)
    for i, m in enumerate(result.slice_maps):
        ax = slice_map(result, i)
        s, expected = _core_colors(result, m)
        got = rgba_at(ax, s["easting"], s["northing"])
        assert np.abs(got[:, :3].astype(int) - expected).max() <= 3
        assert (got[:, 3] == 255).all()


def test_slice_map_uses_the_schemes_colour_override(two_belt):
    m = find_slice_map(two_belt, "s2")
    ax = slice_map(two_belt, "s2")
    s, _ = _core_colors(two_belt, m)
    sea = s[s["belt"] == "sea"]
    got = rgba_at(ax, sea["easting"], sea["northing"])
    assert (np.abs(got[:, :3].astype(int) - hex_to_rgb("#3a8a9c")).max(axis=1) <= 3).all()


def test_slice_map_fills_belts_between_cores(two_belt):
    # a point between a land core column and a sea core column, far from the shoreline:
    # at the older slice the shoreline lies between x = 0 km and 5 km, so 9 km is sea
    ax = slice_map(two_belt, "s2")
    got = rgba_at(ax, [509000.0], [4002500.0])[0, :3].astype(int)
    assert np.abs(got - hex_to_rgb("#3a8a9c")).max() <= 3


@pytest.mark.parametrize("name", SMALL)
def test_slice_map_title_legend_and_furniture(request, name):
    result = _result(request, name)
    m = result.slice_maps[-1]
    ax = slice_map(result, len(result.slice_maps) - 1)
    fig = ax.figure
    fig.canvas.draw()
    unit = result.project.age_unit
    assert m.slice.name in ax.get_title("left") and f"{m.slice.age:g} {unit}" in ax.get_title(
        "left"
    )
    legend = ax.get_legend()
    labels = [t.get_text() for t in legend.get_texts()]
    belts = [b.label or b.id for b in result.project.scheme.belts]
    assert labels[: len(belts)] == belts  # scheme order
    r = fig.canvas.get_renderer()
    assert not legend.get_window_extent(r).overlaps(ax.get_window_extent(r))
    assert "EPSG:32631" in ax.get_xlabel() and "km" in ax.get_xlabel()
    texts = [t.get_text() for t in ax.texts]
    assert "N" in texts  # north arrow
    assert any("km" in t.get_text() for a in ax.artists for t in _texts(a))  # scale bar


def _texts(artist):
    from matplotlib.text import Text

    return [c for c in artist.findobj(Text)]


def test_find_slice_map_names_the_known_slices(two_belt):
    with pytest.raises(KeyError, match="s1"):
        find_slice_map(two_belt, "nope")


# ------------------------------------------------------------------- migration map


@pytest.mark.parametrize("name", SMALL)
def test_migration_map_draws_one_arrow_per_shift(request, name):
    from matplotlib.patches import FancyArrowPatch

    result = _result(request, name)
    ax = migration_map(result)
    arrows = [p for p in ax.patches if isinstance(p, FancyArrowPatch)]
    shifts = result.shifts
    chosen = {t.transect for t in arrow_transects(result.transects)}
    expected = (
        0
        if not len(shifts)
        else int((shifts["geometry"].notna() & shifts["transect"].isin(chosen)).sum())
    )
    assert len(arrows) == expected
    drawn = [ln for ln in ax.collections if len(getattr(ln, "get_segments", list)())]
    assert len(drawn) >= 1 + len(result.transects)  # area edge and transects at least


def test_migration_map_tells_regression_from_transgression(two_belt):
    from matplotlib.patches import FancyArrowPatch

    ax = migration_map(two_belt)
    arrows = [p for p in ax.patches if isinstance(p, FancyArrowPatch)]
    senses = two_belt.shifts.loc[two_belt.shifts["geometry"].notna(), "sense"]
    assert set(senses) == {"regression"}  # the shoreline moved seaward by construction
    for a in arrows:
        r, g, b, _ = a.get_edgecolor()
        assert r > b  # orange side of the scale
        assert a.get_linestyle() != "-"  # dashed for regression
    orange = np.array(hex_to_rgb(SENSE_COLORS["regression"])) / 255
    strongest = max(arrows, key=lambda a: a.get_edgecolor()[0])
    assert np.allclose(strongest.get_edgecolor()[:3], orange, atol=0.15)


# ------------------------------------------------------------------- Wheeler chart


def test_wheeler_section_spans_the_surfaces_with_many_ages(two_belt):
    s = _section(two_belt, n_ages=40)
    assert s.ranks.shape == (40, s.distance_m.size)
    assert s.ages[0] == 10.0 and s.ages[-1] == 20.0 and np.all(np.diff(s.ages) > 0)
    assert s.ranks.max() <= 1 and s.record_fraction == 1.0
    # land at the landward end, sea at the basinward end, at every age
    assert (s.ranks[:, 0] == 0).all() and (s.ranks[:, -1] == 1).all()
    # the boundary is crossed at every age and moves seaward (regression) upward
    assert np.isfinite(s.boundary_m).all()
    assert s.boundary_m[0] > s.boundary_m[-1]


def test_wheeler_section_shows_the_hiatus_as_no_record(eroded):
    s = _section(eroded, n_ages=41)  # ages every 5 ka from 100 to 300
    gap = (s.ages > 200.0) & (s.ages < 250.0)
    assert gap.any() and (s.ranks[gap] == -1).all()
    assert (s.cores_recording[gap] < MIN_CORES).all()
    assert (s.ranks[~gap] >= 0).mean() > 0.9


def test_wheeler_chart_draws_the_section(two_belt, eroded):
    for result in (two_belt, eroded):
        s = _section(result, n_ages=30)
        ax = wheeler_chart(result, section=s)
        img = ax.collections[0].get_array()
        assert np.array_equal(np.ma.filled(img, -1).reshape(s.ranks.shape), s.ranks)
        ymin, ymax = ax.get_ylim()
        assert ymin > ymax  # age increases downward, youngest at the top
        labels = [t.get_text() for t in ax.texts]
        assert {sf.name for sf in result.project.surfaces} <= {t.split()[0] for t in labels}


def _chart_meets_the_maps(result):
    """At every slice age the chart's trajectory is the map's shoreline position on the
    chart's transect, within one grid cell."""
    c = result.chart
    pos = result.positions[result.positions["transect"] == c.transect]
    checked = 0
    for r in pos.itertuples():
        j = np.flatnonzero(c.ages == r.age)
        assert j.size == 1, f"slice age {r.age} is not on the chart"
        chart = c.boundary_m[j[0]]
        if np.isfinite(r.position_m) or np.isfinite(chart):
            assert abs(chart - r.position_m) <= result.grid.cell_size, (r.slice, chart, r)
            checked += 1
    return checked


@pytest.mark.parametrize("name", SMALL)
def test_wheeler_chart_trajectory_meets_the_maps_at_every_slice(request, name):
    result = _result(request, name)
    assert _chart_meets_the_maps(result) >= 1


def test_chart_transect_prefers_the_middle_default(two_belt):
    ts = two_belt.transects
    assert chart_transect(two_belt.transects) is ts[len(ts) // 2]
    with pytest.raises(KeyError, match="no transect"):
        chart_transect(two_belt.transects, "nope")


# ------------------------------------------------------------------- core panel


def test_core_panel_columns_follow_the_transect_and_mark_breaks(one_slice):
    # the default cores: C3 logs fine sand on gravel (a skipped belt) at 28 m
    tr, chosen = panel_cores(one_slice, max_distance_m=1e6)
    along = [a for _c, a, _o in chosen]
    assert along == sorted(along) and len(chosen) == 4
    ax = core_panel(one_slice, max_distance_m=1e6)
    labels = [t.get_text().split("\n")[0] for t in ax.get_xticklabels()]
    assert labels == [c.core_id for c, _a, _o in chosen]
    rects = ax.collections[0]
    assert len(rects.get_paths()) == sum(len(c.intervals) for c, _a, _o in chosen)
    marks = [ln for ln in ax.lines if ln.get_marker() == ">"]
    assert len(marks) == 1
    col = labels.index("C3")
    assert np.allclose(marks[0].get_ydata(), [28.0])
    assert marks[0].get_xdata()[0] < col  # beside the column, on its left
    assert ax.get_ylim()[0] > ax.get_ylim()[1]  # depth down


def test_core_panel_widths_follow_rank(two_belt):
    ax = core_panel(two_belt, max_distance_m=1e6)
    rects = ax.collections[0]
    facecolors = rects.get_facecolors()
    widths = [p.get_extents().width for p in rects.get_paths()]
    land = np.array(hex_to_rgb(two_belt.project.scheme.belts[0].color)) / 255
    for fc, w in zip(facecolors, widths, strict=True):
        expect = column_width(0 if np.allclose(fc[:3], land, atol=0.01) else 1, 2)
        assert np.isclose(w, expect)


# ------------------------------------------------------------------- positions


@pytest.mark.parametrize("name", SMALL)
def test_positions_one_panel_per_transect_with_band(request, name):
    result = _result(request, name)
    axes = shoreline_positions(result)
    assert len(axes) == len(result.transects)
    with_data = [ax for ax in axes if ax.lines and len(ax.lines[-1].get_xdata())]
    assert with_data
    for ax, t in zip(axes, result.transects, strict=True):
        assert ax.get_title("left").startswith(t.transect)
        assert ax.xaxis_inverted() and ax.yaxis_inverted()


def test_position_panel_labels_every_step_with_its_rate(two_belt):
    tr = chart_transect(two_belt.transects).transect
    ax = position_panel(two_belt, tr)
    sh = two_belt.shifts[
        (two_belt.shifts["transect"] == tr) & np.isfinite(two_belt.shifts["rate_m_per_kyr"])
    ]
    labels = [t.get_text() for t in ax.texts]
    assert len(labels) == len(sh)
    for r in sh.itertuples():
        assert (
            rate_text(
                r.rate_m_per_kyr, r.rate_low_m_per_kyr, r.rate_high_m_per_kyr, unit=False, sep="\n"
            )
            in labels
        )


# ------------------------------------------------------------------- all figures


@pytest.mark.parametrize("name", SMALL)
def test_draw_all_writes_every_figure(request, name, tmp_path):
    result = _result(request, name)
    paths = figures_all.draw_all(result, tmp_path / "figures", formats=("png", "pdf"))
    names = {p.name for p in paths}
    for m in result.slice_maps:
        assert f"slice_{safe_name(m.slice.name)}.png" in names
        assert f"slice_{safe_name(m.slice.name)}.pdf" in names
    assert "shoreline_migration.png" in names and "shoreline_positions.png" in names
    tr = safe_name(chart_transect(result.transects).transect)
    assert f"chronostratigraphic_{tr}.png" in names and f"core_panel_{tr}.png" in names
    for p in paths:
        head = p.read_bytes()[:8]
        assert head == PNG_SIGNATURE if p.suffix == ".png" else head.startswith(b"%PDF")
    import matplotlib.image as mpimg

    img = mpimg.imread(tmp_path / "figures" / "shoreline_migration.png")
    assert img.shape[1] >= 1000 and img[..., :3].std() > 0.05  # not blank


# ------------------------------------------------------------------- demo region


@pytest.mark.slow
def test_demo_figures(demo, tmp_path):
    paths = figures_all.draw_all(demo, tmp_path)
    assert len([p for p in paths if p.name.startswith("slice_")]) == len(demo.slice_maps)
    for i, m in enumerate(demo.slice_maps[:3]):
        ax = slice_map(demo, i)
        s, expected = _core_colors(demo, m)
        got = rgba_at(ax, s["easting"], s["northing"])
        assert np.abs(got[:, :3].astype(int) - expected).max() <= 3
    s = demo.chart
    assert s.ranks.shape[0] >= 60 and s.record_fraction > 0.9
    assert {m.slice.age for m in demo.slice_maps} <= set(s.ages.tolist())
    surfaces = sorted(sf.age for sf in demo.project.surfaces)
    assert s.ages[0] == surfaces[0] and s.ages[-1] == surfaces[-1]
    assert _chart_meets_the_maps(demo) == len(demo.slice_maps)


# ------------------------------------------------------------------- one meaning per colour


def test_migration_map_gives_each_colour_one_meaning(two_belt):
    from matplotlib.collections import LineCollection
    from matplotlib.patches import FancyArrowPatch

    ax = migration_map(two_belt)
    sense = {tuple(np.round(np.array(hex_to_rgb(c)) / 255, 3)) for c in SENSE_COLORS.values()}
    arrows = [p for p in ax.patches if isinstance(p, FancyArrowPatch)]
    assert arrows
    # arrows: coloured by sense only
    assert all(tuple(np.round(a.get_edgecolor()[:3], 3)) in sense for a in arrows)
    # shorelines: greys (the age), never a sense colour
    lines = [c for c in ax.collections if isinstance(c, LineCollection)]
    greys = [c for c in lines if np.allclose(c.get_colors()[:, 0], c.get_colors()[:, 2])]
    assert len(greys) >= len(two_belt.slice_maps)
    # a key for each: the legend names the senses, the colour bar the ages
    labels = [t.get_text() for t in ax.get_legend().get_texts()]
    assert any(t.startswith("transgression") for t in labels)
    assert any(t.startswith("regression") for t in labels)
    cbar = ax.child_axes
    assert cbar and "age" in cbar[0].get_ylabel().lower()


# ------------------------------------------------------------------- characters


def test_names_the_font_cannot_draw_do_not_show_as_boxes(tmp_path):
    from paleomap.figures.labels import clean_text

    assert clean_text("\u6d77\u5cb8 $5 $x$") == "?? \\$5 \\$x\\$"
    assert clean_text("Ørsted–Ålesund") == "Ørsted–Ålesund"
    # drawn: no "missing glyph" warning (warnings are errors here) and no mathtext
    path = write_project(
        tmp_path / "p",
        keys={"slices.at": ["s_old"], "mapping.deterministic": True},
        picks=PICKS.replace("s_old", "\u6d77\u5cb8 $old$"),
        config={
            "surfaces": [
                {"name": "s_young", "age": 100.0},
                {"name": "s_mid", "age": 200.0},
                {"name": "\u6d77\u5cb8 $old$", "age": 300.0},
            ]
        },
    )
    path.write_text(path.read_text().replace('"s_old"', '"\u6d77\u5cb8 $old$"'))
    result = _compute(path)
    ax = slice_map(result, 0)
    ax.figure.canvas.draw()
    assert "?? \\$old\\$" in ax.get_title("left")


# ------------------------------------------------------------------- vector figures


def test_vector_figures_on_request(one_slice, tmp_path):
    settings = figures_all.FigureSettings(vector=("svg", "pdf"))
    paths = figures_all.draw_all(one_slice, tmp_path / "figures", settings=settings)
    by_suffix = {s: [p for p in paths if p.suffix == s] for s in (".png", ".svg", ".pdf")}
    assert len(by_suffix[".png"]) == len(by_suffix[".svg"]) == len(by_suffix[".pdf"]) > 2
    assert all(b"<svg" in p.read_bytes()[:2000] for p in by_suffix[".svg"])
    assert all(p.read_bytes()[:5] == b"%PDF-" for p in by_suffix[".pdf"])
    with pytest.raises(ValueError, match="not one of svg, pdf"):
        figures_all.FigureSettings(vector=("eps",))


def test_cli_asks_for_vector_figures_and_a_flattened_distance_panel(tmp_path):
    from click.testing import CliRunner

    from paleomap.cli import main

    path = write_project(tmp_path / "p", keys={"mapping.deterministic": True})
    out = tmp_path / "build"
    args = ["build", str(path), "--out", str(out), "--vector", "svg"]
    bad = CliRunner().invoke(main, [*args, "--panel-datum", "nope"])
    assert bad.exit_code == 2 and "s_mid" in bad.output and not out.exists()
    ok = CliRunner().invoke(main, [*args, "--panel-datum", "s_mid", "--panel-spacing", "distance"])
    assert ok.exit_code == 0, ok.output
    svgs = sorted(p.name for p in (out / "figures").glob("*.svg"))
    pngs = sorted(p.name for p in (out / "figures").glob("*.png"))
    assert [s[:-4] for s in svgs] == [p[:-4] for p in pngs]
    panel = next((out / "figures").glob("core_panel_*.svg")).read_text(encoding="utf-8")
    assert "flattened" in panel and "by distance" in panel
