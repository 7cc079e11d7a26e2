"""The build report: one self-contained HTML page a reviewer reads on screen or on paper.

``report.html`` needs nothing beside it: the figures are embedded as PNG data URIs and
the style sheet is inline, with no script and no external link, so it opens offline in
any browser and can be mailed as one file.

The first page holds what a reviewer signs off: the cautions, the key map (every
shoreline and the shifts between them) and the table of rates between slices. The rest
follows as appendices: the slice maps; shifts per transect with the position figures;
the sections (chronostratigraphic chart and core panel); slice quality and the field
model; the core reading; the project; the provenance.

Every column is headed in words with its unit (:data:`COLUMNS`, the one place that maps
the deliverables' column names to headings), and every number is rounded to what it can
carry (a rate to three significant digits, a shift to the metre, an area to 0.1 km2, a
share to 0.01; :func:`format_value`). Each cell is tagged with its column
(``data-column``), so that a reader (or a test) can compare it with the GeoPackage; a
missing value is an en dash.

Printed (A4 or Letter, from any browser), every table fits the page width or wraps
inside its cells, table headers repeat on each page, collapsed details print open, and
each appendix starts on a new page.

Examples
--------
>>> path = write_report(result, "build")   # doctest: +SKIP
>>> path.name                              # doctest: +SKIP
'report.html'
"""

from __future__ import annotations

import base64
import html
import io
import logging
import math
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

from .results import PAIR_CORE_COLUMNS, SHIFT_COLUMNS

if TYPE_CHECKING:
    from .results import BuildResult

__all__ = [
    "CAUTIONS",
    "COLUMNS",
    "REPORT_NAME",
    "column_heading",
    "column_kind",
    "format_value",
    "render_report",
    "write_report",
]

log = logging.getLogger(__name__)

REPORT_NAME = "report.html"

CAUTIONS = (
    "Maps made from sparse cores are interpretations with stated uncertainty, not "
    "observations. Belt boundaries between cores, shoreline positions and migration rates "
    "are model estimates whose reliability depends on core spacing, on the correlation of "
    "the time surfaces and on the facies scheme; the uncertainty bands and "
    "cross-validation scores say how well the cores constrain each map, not that the map "
    "is right.",
    "Where these maps inform drilling, CO2 or gas storage-site selection, groundwater "
    "abstraction or protection, or any other decision with safety, environmental or "
    "financial consequences, use them only alongside the primary data, follow the "
    "regulations that apply where you work, and have the interpretation reviewed under "
    "licensed professional practice.",
)
"""The report's cautions (the README's Cautions, in the same words)."""

_MISSING = "\u2013"
_MINUS = "\u2212"

COLUMNS: dict[str, tuple[str, str]] = {
    # slices and pairs
    "slice": ("Slice", "text"),
    "surface": ("Surface", "text"),
    "age": ("Age ({age})", "age"),
    "older_slice": ("Older slice", "text"),
    "younger_slice": ("Younger slice", "text"),
    "older_age": ("Older age ({age})", "age"),
    "younger_age": ("Younger age ({age})", "age"),
    "sense": ("Sense on the maps", "text"),
    "mapped_sense": ("Sense on the maps", "text"),
    "core_sense": ("Sense in the cores", "text"),
    "agreement": ("Maps and cores", "text"),
    "median_rate_m_per_kyr": ("Median rate over transects (m/kyr)", "rate"),
    "net_rate_m_per_kyr": ("Net rate from areas (m/kyr)", "rate"),
    "net_shift_m": ("Net shift from areas (m)", "m"),
    "net_dip_rate_m_per_kyr": ("Net rate along dip (m/kyr)", "rate"),
    "net_dip_shift_m": ("Net shift along dip (m)", "m"),
    "flooded_km2": ("Area flooded (km\u00b2)", "km2"),
    "exposed_km2": ("Area exposed (km\u00b2)", "km2"),
    "transects_used": ("Transects used", "int"),
    # shifts per transect
    "transect": ("Transect", "text"),
    "shift_m": ("Shift (m)", "m"),
    "shift_low_m": ("Shift P10 (m)", "m"),
    "shift_high_m": ("Shift P90 (m)", "m"),
    "rate_m_per_kyr": ("Rate (m/kyr)", "rate"),
    "rate_low_m_per_kyr": ("Rate P10 (m/kyr)", "rate"),
    "rate_high_m_per_kyr": ("Rate P90 (m/kyr)", "rate"),
    "shift_bound": ("Shift is a bound", "bound"),
    "net_shift_bound": ("Net shift is a bound", "bound"),
    "older_crossings": ("Crossings, older slice", "int"),
    "younger_crossings": ("Crossings, younger slice", "int"),
    # transects
    "source": ("Drawn by", "text"),
    "azimuth_deg": ("Azimuth (\u00b0 from north)", "deg"),
    "length_km": ("Length (km)", "km"),
    "series_rate_m_per_kyr": ("Rate over all slices (m/kyr)", "rate"),
    "series_rate_method": ("How that rate is found", "text"),
    # slice quality
    "cores_used": ("Cores used", "int"),
    "cores_in_own_belt": ("Cores inside their own belt", "int"),
    "walther_ok": ("Belts keep the scheme's order", "bool"),
    "has_boundary": ("Tracked boundary crosses the area", "bool"),
    "method": ("Field engine", "text"),
    "loo_share_in_own_belt": ("Left-out cores predicted in their belt (share)", "share"),
    "loo_mean_abs_rank_error": ("Left-out cores: mean belt error (belts)", "share"),
    "relief_model": ("Relief covariance model", "text"),
    "relief_sill": ("Relief sill (latent units\u00b2)", "fit"),
    "relief_range_m": ("Relief range (m)", "fit"),
    "relief_anisotropy": ("Relief anisotropy (minor / major range)", "share"),
    "relief_azimuth_deg": ("Relief major axis (\u00b0 from north)", "deg"),
    "relief_nugget": ("Relief nugget (share of sill)", "share"),
    "slice_residual_variance": ("Per-slice residual variance (latent units\u00b2)", "fit"),
    "slice_residual_range_m": ("Per-slice residual range (m)", "fit"),
    "smooth_share_in_own_belt": ("Cores in their belt without the local residual (share)", "share"),
    "relief_strike_to_dip": ("Relief range along strike / along dip", "fit"),
    "sea_level_latent": ("Basin-wide term at this age (latent units)", "fit"),
    "sd_scale": ("Predictive sd scale from held-out cores", "fit"),
    # core reading
    "core_id": ("Core", "text"),
    "depth": ("Depth ({depth})", "depth"),
    "lower": ("Belt below", "text"),
    "upper": ("Belt above", "text"),
    "jump": ("Belt step upward (ranks)", "int"),
    "nearest_surface": ("Nearest surface", "text"),
    "surface_distance": ("Distance to it ({depth})", "depth"),
    "interval": ("Interval between surfaces", "text"),
    "n_cores": ("Cores", "int"),
    "n_deepening": ("Deepening upward", "int"),
    "n_shallowing": ("Shallowing upward", "int"),
    "n_aggrading": ("Aggrading", "int"),
    "n_mixed": ("Mixed", "int"),
}
"""Every column the report shows: its heading in words with units (``{age}`` and
``{depth}`` stand for the project's units) and how its numbers are written (see
:func:`format_value`)."""

# Units named in column names, for a column not (yet) in COLUMNS.
_SUFFIXES = (
    ("_m_per_kyr", "m/kyr", "rate"),
    ("_km2", "km\u00b2", "km2"),
    ("_km", "km", "km"),
    ("_deg", "\u00b0", "deg"),
    ("_m", "m", "m"),
)


def column_heading(name: str, age_unit: str = "ka", depth_unit: str = "m") -> str:
    """The heading of a column: words with its unit.

    A column not in :data:`COLUMNS` is headed by its words with the unit its name
    ends in, so no heading is ever an identifier.

    >>> column_heading("net_rate_m_per_kyr"), column_heading("older_age", "Ma")
    ('Net rate from areas (m/kyr)', 'Older age (Ma)')
    >>> column_heading("retreat_width_km2")
    'Retreat width (km²)'
    """
    if name in COLUMNS:
        return COLUMNS[name][0].format(age=age_unit, depth=depth_unit)
    words, unit = name, ""
    for suffix, u, _kind in _SUFFIXES:
        if name.endswith(suffix):
            words, unit = name[: -len(suffix)], u
            break
    text = words.replace("_", " ").strip().capitalize()
    log.debug("column %r has no heading in COLUMNS; headed %r", name, text)
    return f"{text} ({unit})" if unit else text


def column_kind(name: str) -> str:
    """How a column's numbers are written (a key of :func:`format_value`).

    >>> column_kind("shift_m"), column_kind("sea_level_m")
    ('m', 'm')
    """
    if name in COLUMNS:
        return COLUMNS[name][1]
    for suffix, _u, kind in _SUFFIXES:
        if name.endswith(suffix):
            return kind
    return "fit"


def _fixed(v: float, decimals: int) -> str:
    text = f"{v:.{decimals}f}"
    if float(text) == 0.0:
        text = text.lstrip("-")
    return text.replace("-", _MINUS)


def _significant(v: float, digits: int, max_decimals: int) -> str:
    if v == 0:
        return "0"
    exponent = math.floor(math.log10(abs(v)))
    decimals = min(max(digits - 1 - exponent, 0), max_decimals)
    return _fixed(round(v, decimals), decimals)


def format_value(value, kind: str = "fit") -> str:
    """A table cell's text, rounded to what the number can carry.

    ``kind``: ``rate`` (m/kyr: three significant digits, at most two decimals), ``m``
    (whole metres), ``km`` and ``km2`` (one decimal), ``deg`` (whole degrees),
    ``share`` (two decimals), ``depth`` (two decimals, the logged precision), ``age``
    (as given, at most three decimals), ``fit`` (a fitted value: three significant
    digits, at most three decimals), ``int``, ``bool`` (yes / no), ``text``. Never in
    exponent form; negative numbers with a true minus sign; missing values an en dash.

    >>> format_value(-599.637, "rate"), format_value(0.0123456, "rate")
    ('−600', '0.01')
    >>> format_value(-2996.4, "m"), format_value(0.977273, "share"), format_value(74.0, "age")
    ('−2996', '0.98', '74')
    >>> format_value(float("nan"), "m"), format_value(None), format_value(True, "bool")
    ('–', '–', 'yes')
    """
    if value is None:
        return _MISSING
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, str):
        if kind == "bound":
            return value.replace("_", " ") or _MISSING
        return value or _MISSING
    try:
        if pd.isna(value):
            return _MISSING
    except (TypeError, ValueError):
        return str(value)
    if not isinstance(value, (int, float, np.integer, np.floating)):
        return str(value)
    v = float(value)
    if not math.isfinite(v):
        return _MISSING
    if kind == "int" or (isinstance(value, (int, np.integer)) and kind in ("text", "fit")):
        return _fixed(v, 0)
    if kind == "rate":
        return _significant(v, 3, 2)
    if kind == "m" or kind == "deg":
        return _fixed(v, 0)
    if kind in ("km", "km2"):
        return _fixed(v, 1)
    if kind in ("share", "depth"):
        return _fixed(v, 2)
    if kind == "age":
        return _fixed(v, 3).rstrip("0").rstrip(".") if "." in _fixed(v, 3) else _fixed(v, 3)
    return _significant(v, 3, 3)


def _e(text) -> str:
    return html.escape(str(text), quote=True)


class _Units:
    def __init__(self, project):
        self.age = project.age_unit
        self.depth = project.depth_unit

    def heading(self, name: str) -> str:
        return column_heading(name, self.age, self.depth)


def _table(frame: pd.DataFrame, columns, table_id: str, units: _Units, *, note: str = "") -> str:
    cols = [c for c in columns if c in frame.columns]
    head = "".join(f'<th scope="col">{_e(units.heading(c))}</th>' for c in cols)
    rows = []
    for rec in frame[cols].itertuples(index=False):
        cells = []
        for c, v in zip(cols, rec, strict=True):
            kind = column_kind(c)
            numeric = isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(
                v, (bool, np.bool_)
            )
            cls = ' class="num"' if numeric else ""
            cells.append(f'<td data-column="{_e(c)}"{cls}>{_e(format_value(v, kind))}</td>')
        rows.append("<tr>" + "".join(cells) + "</tr>")
    body = "\n".join(rows) if rows else f'<tr><td colspan="{max(len(cols), 1)}">none</td></tr>'
    caption = f"<caption>{note}</caption>" if note else ""
    return (
        f'<div class="table"><table id="{_e(table_id)}">{caption}<thead><tr>{head}</tr>'
        f"</thead>\n<tbody>\n{body}\n</tbody></table></div>"
    )


def _kv(pairs, table_id: str | None = None) -> str:
    rows = "".join(f'<tr><th scope="row">{_e(k)}</th><td>{v}</td></tr>' for k, v in pairs)
    ident = f' id="{_e(table_id)}"' if table_id else ""
    return f'<div class="table"><table class="kv"{ident}>{rows}</table></div>'


# ---------------------------------------------------------------------- figures


def _png_bytes(spec, folder: Path | None) -> bytes:
    if folder is not None:
        path = folder / "figures" / f"{spec.stem}.png"
        if path.exists():
            return path.read_bytes()
    fig = spec.draw()
    buf = io.BytesIO()
    from .figures.canvas import REPORT_DPI, plain_texts

    plain_texts(fig)  # as save_figure does: user names are never mathtext

    fig.savefig(buf, format="png", dpi=REPORT_DPI, metadata={"Software": "paleomap"})
    return buf.getvalue()


def _figure(spec, folder, cls: str = "") -> str:
    data = base64.b64encode(_png_bytes(spec, folder)).decode("ascii")
    c = f' class="{cls}"' if cls else ""
    return (
        f'<figure id="fig-{_e(spec.stem)}"{c}><img alt="{_e(spec.title)}" '
        f'src="data:image/png;base64,{data}"><figcaption><strong>{_e(spec.title)}.'
        f"</strong> {_e(spec.caption)}</figcaption></figure>"
    )


# ---------------------------------------------------------------------- first page

_RATE_SHOWN = [  # of results.PAIR_COLUMNS + PAIR_CORE_COLUMNS, in the order shown
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "sense",
    "median_rate_m_per_kyr",
    "net_rate_m_per_kyr",
    "net_shift_m",
    "net_shift_bound",
    "flooded_km2",
    "exposed_km2",
    "transects_used",
    "core_sense",
    "agreement",
]


def _summary(result, specs, folder, units: _Units) -> str:
    p = result.project
    info = result.run_info
    maps = result.slice_maps
    ages = sorted(m.slice.age for m in maps)
    span = (
        f"{len(maps)} slices from {format_value(ages[-1], 'age')} to "
        f"{format_value(ages[0], 'age')} {_e(p.age_unit)}"
        if ages
        else "no slice"
    )
    cautions = "".join(f"<p>{_e(t)}</p>" for t in CAUTIONS)
    key = next((s for s in specs if s.stem == "shoreline_migration"), None)
    pairs = result.slice_pairs
    note = (
        ""
        if len(pairs)
        else "<p>Only one slice was mapped, so there is no slice pair and no rate.</p>"
    )
    tracked = p.scheme.boundary_name(p.scheme.tracked_boundary)
    what = "shoreline" if p.scheme.tracks_shoreline else f"boundary {_e(tracked)}"
    return f"""
<section class="summary" id="summary">
<h1>{_e(p.name)}</h1>
<p class="muted">Paleogeographic build by paleomap {_e(info.get("paleomap_version", ""))},
{_e(info.get("built_at", ""))}: {span}, {len(p.cores)} cores, facies scheme
{_e(p.scheme.name)}. Appendices: <a href="#appendix-a">A slice maps</a> ·
<a href="#appendix-b">B shifts per transect</a> · <a href="#appendix-c">C sections</a> ·
<a href="#appendix-d">D slice quality</a> · <a href="#appendix-e">E core reading</a> ·
<a href="#appendix-f">F project</a> · <a href="#appendix-g">G provenance</a>.</p>
<div class="caution" id="cautions"><strong>Cautions.</strong> {cautions}</div>
{_figure(key, folder, "key") if key is not None else ""}
<h2 id="rates">Shoreline shifts between slices</h2>
<p class="muted">Consecutive slices, older first; rates in m/kyr (1 m/kyr = 1 mm/yr),
positive landward (transgression). The median rate is over the transects; the net shift
is the net area change divided by the {what}'s mean extent along strike (the
dip-equivalent shift), and the net rate that over the time between the slices. Where the
{what} leaves the mapped area at a slice, a shift is only a bound ("at least": at least
that far in its direction). P10 and P90: 10 % and 90 % of the probability below; a sense
is "uncertain" where that range spans zero. The cores' sense is what their stacking says
for the same interval. These are the values of the GeoPackage's <code>slice_pairs</code>
table, rounded.</p>
{note}{_table(pairs, _RATE_SHOWN, "slice-pairs", units)}
</section>
"""


# ---------------------------------------------------------------------- appendices

_SHIFT_SHOWN = [  # of results.SHIFT_COLUMNS, in the order shown
    "transect",
    "older_slice",
    "younger_slice",
    "shift_m",
    "shift_low_m",
    "shift_high_m",
    "rate_m_per_kyr",
    "rate_low_m_per_kyr",
    "rate_high_m_per_kyr",
    "shift_bound",
    "sense",
]

_QUALITY_COLUMNS = [
    "slice",
    "age",
    "surface",
    "cores_used",
    "cores_in_own_belt",
    "walther_ok",
    "has_boundary",
    "loo_share_in_own_belt",
    "loo_mean_abs_rank_error",
]


def _appendix(letter: str, title: str, body: str) -> str:
    return (
        f'<section class="appendix" id="appendix-{letter.lower()}">'
        f"<h2>Appendix {letter}. {_e(title)}</h2>\n{body}\n</section>"
    )


def _slice_maps(specs, folder) -> str:
    figs = [_figure(s, folder) for s in specs if s.group == "slices"]
    return _appendix("A", "Slice maps", "\n".join(figs) or "<p>No slice was mapped.</p>")


def _transect_frame(result) -> pd.DataFrame:
    from .figures.positions import series_rate

    rows = []
    for t in result.transects:
        rate, method = series_rate(result, t.transect)
        rows.append(
            dict(
                transect=t.transect,
                source=t.source,
                azimuth_deg=t.azimuth_deg,
                length_km=t.line.length / 1e3,
                series_rate_m_per_kyr=rate,
                series_rate_method=method or _MISSING,
            )
        )
    return pd.DataFrame(rows)


def _shifts(result, specs, folder, units: _Units) -> str:
    shifts = (
        result.shifts.drop(columns=["geometry"], errors="ignore")
        if len(result.shifts)
        else pd.DataFrame(columns=list(SHIFT_COLUMNS[:-1]))
    )
    tr = _transect_frame(result)
    figs = [
        _figure(s, folder)
        for s in specs
        if s.group == "migration" and s.stem != "shoreline_migration"
    ]
    dip = ["older_slice", "younger_slice", "net_dip_shift_m", "net_dip_rate_m_per_kyr"]
    body = f"""
<h3>Transects</h3>
<p class="muted">The rate over all slices is the least-squares rate where the {
        ""
    }shoreline moved one way throughout; where it went back and forth a fitted line
describes none of its steps, so the net rate (oldest to youngest slice) is given and
named so.</p>
{_table(tr, list(tr.columns) if len(tr) else ["transect"], "transects", units)}
<h3>Net shifts along the regional dip</h3>
{_table(result.slice_pairs, dip, "dip-shifts", units)}
<details open><summary>Shifts per transect ({len(shifts)} rows; the
<code>shoreline_shifts</code> layer)</summary>
{_table(shifts, _SHIFT_SHOWN, "shoreline-shifts", units)}
</details>
{"".join(figs)}
"""
    return _appendix("B", "Shoreline shifts per transect", body)


def _sections(specs, folder) -> str:
    figs = [_figure(s, folder) for s in specs if s.group == "sections"]
    return _appendix(
        "C",
        "Sections along the chart transect",
        "\n".join(figs) or "<p>No transect: no section was drawn.</p>",
    )


def _quality(result, units: _Units) -> str:
    rows = [
        dict(slice=m.slice.name, age=m.slice.age, surface=m.slice.surface or "", **m.quality)
        for m in result.slice_maps
    ]
    frame = pd.DataFrame(rows)
    model_cols = [c for c in frame.columns if c not in _QUALITY_COLUMNS]
    model = frame[model_cols].drop_duplicates() if model_cols and len(frame) else frame
    if model_cols and len(model) == 1:
        # one field model for every slice (the joint engine): one column of values
        r = model.iloc[0]
        field = _kv(
            [(units.heading(c), _e(format_value(r[c], column_kind(c)))) for c in model_cols],
            "field-model",
        )
    else:
        field = _table(frame, ["slice", *model_cols], "field-model", units)
    body = f"""
<p class="muted">One row per mapped slice: cores used, how many lie inside their own
mapped belt, whether the belts keep the scheme's order (Walther check), whether the
tracked boundary crosses the mapped area, and the leave-one-out scores (each core left
out in turn and predicted from the others); the <code>slice_quality</code> table of the
GeoPackage.</p>
{_table(frame, _QUALITY_COLUMNS, "slice-quality", units) if len(frame) else ""}
<h3>Field model</h3>
{field}
"""
    return _appendix("D", "Slices and their quality", body)


def _reading(result, units: _Units) -> str:
    reading = result.reading
    if reading is None:
        return _appendix("E", "Core reading", "<p>No core reading was made.</p>")
    c = reading.contacts
    flagged = c[c["flag"] == "possible_break"] if len(c) else c
    n_eros = int((c["flag"] == "at_erosional_surface").sum()) if len(c) else 0
    region = reading.region.copy()
    if len(result.slice_pairs) and "agreement" in result.slice_pairs.columns:
        agree = result.slice_pairs[["older_slice", "younger_slice", "sense", "agreement"]]
        agree = agree.rename(
            columns={
                "older_slice": "older_surface",
                "younger_slice": "younger_surface",
                "sense": "mapped_sense",
            }
        )
        region = region.merge(agree, how="left", on=["older_surface", "younger_surface"])
    trends = reading.cores["trend"].value_counts() if "trend" in reading.cores else {}
    trend_text = ", ".join(f"{k}: {v}" for k, v in dict(trends).items()) or _MISSING
    body = f"""
<p>{len(reading.cores)} cores, {len(c)} contacts between logged belts, <strong>{len(flagged)}
possible breaks</strong> (belts skipped with no erosional surface picked; Walther's Law),
{n_eros} belt jumps at erosional surfaces, {len(reading.gaps)} gaps without recovery.
Whole-core trends: {_e(trend_text)}.</p>
<h3>Flagged contacts (possible breaks)</h3>
{
        _table(
            flagged,
            ["core_id", "depth", "lower", "upper", "jump", "nearest_surface", "surface_distance"],
            "flagged-contacts",
            units,
        )
    }
<h3>Stacking per interval and agreement with the maps</h3>
{
        _table(
            region,
            ["interval", "older_age", "younger_age", *PAIR_CORE_COLUMNS[1:]],
            "stacking",
            units,
        )
    }
"""
    return _appendix("E", "Core reading", body)


def _project(result) -> str:
    from .figures.mapframe import crs_label

    p = result.project
    s = p.scheme
    n_intervals = sum(len(c.intervals) for c in p.cores)
    n_picks = sum(len(c.picks) for c in p.cores)
    g = result.grid
    belts = "".join(
        f"<tr><td class='num'>{r}</td><td>{_e(b.id)}</td><td>{_e(b.label or b.id)}</td>"
        f"<td>{'marine' if b.marine else 'non-marine'}</td>"
        f'<td><span class="swatch" style="background:{_e(b.color)}"></span> '
        f"{_e(b.color)}</td></tr>"
        for r, b in enumerate(s.belts)
    )
    surfaces = "".join(
        f"<tr><td>{_e(sf.name)}</td><td class='num'>{_e(format_value(sf.age, 'age'))}</td>"
        f"<td class='num'>{_e(format_value(sf.age_sd, 'age'))}</td>"
        f"<td>{'yes' if sf.erosional else 'no'}</td></tr>"
        for sf in sorted(p.surfaces, key=lambda x: x.age)
    )
    tracked = s.boundary_name(s.tracked_boundary)
    kv = _kv(
        [
            ("Name", _e(p.name)),
            ("Project CRS", _e(crs_label(p.crs))),
            ("Working CRS (maps, lengths, areas)", _e(crs_label(p.working_crs))),
            ("Depth unit / age unit", f"{_e(p.depth_unit)} / {_e(p.age_unit)}"),
            ("Facies scheme", f"{_e(s.name)} ({s.n_belts} belts)"),
            ("Field engine", _e(p.mapping.engine)),
            ("Tracked boundary", _e(tracked) + (" (the shoreline)" if s.tracks_shoreline else "")),
            ("Cores / intervals / picks", f"{len(p.cores)} / {n_intervals} / {n_picks}"),
            ("Surfaces / slices", f"{len(p.surfaces)} / {len(result.slice_maps)}"),
            (
                "Grid",
                f"{format_value(g.cell_size, 'm')} m cells, {g.n_rows} rows \u00d7 "
                f"{g.n_cols} columns, {int(g.mask.sum())} cells in the mapped area",
            ),
            ("Transects", f"{len(result.transects)}"),
        ],
        "project",
    )
    body = f"""
{kv}
<h3>Belts, proximal to distal</h3>
<div class="table"><table id="belts"><thead><tr><th scope="col">Rank (0 = most proximal)</th>
<th scope="col">Belt</th><th scope="col">Label</th><th scope="col">Setting</th>
<th scope="col">Colour</th></tr></thead><tbody>{belts}</tbody></table></div>
<h3>Surfaces</h3>
<div class="table"><table id="surfaces"><thead><tr><th scope="col">Surface</th>
<th scope="col">Age ({_e(p.age_unit)})</th><th scope="col">Age uncertainty, one standard
deviation ({_e(p.age_unit)})</th><th scope="col">Erosional</th></tr></thead>
<tbody>{surfaces}</tbody></table></div>
"""
    return _appendix("F", "Project", body)


def _info_value(key: str, value) -> str:
    if isinstance(value, dict):
        return ", ".join(f"{_e(column_heading(k))} {_info_value(k, v)}" for k, v in value.items())
    if isinstance(value, (list, tuple)):
        return ", ".join(_info_value(key, v) for v in value)
    if isinstance(value, (float, np.floating)):
        return _e(format_value(value, "age"))  # as given, at most three decimals
    return _e(value)


def _provenance(result) -> str:
    info = result.run_info
    sums = "".join(
        f"<tr><td>{_e(k)}</td><td><code>{_e(v)}</code></td></tr>"
        for k, v in sorted(dict(info.get("input_sha256", {})).items())
    )
    shown = ("paleomap_version", "built_at", "project_file")
    skip = {"input_sha256", "project_text", "working_crs", *shown}
    names = {"crs": "Project CRS", "project_name": "Project name"}
    other = [
        (names.get(k, k.replace("_", " ").capitalize()), _info_value(k, v))
        for k, v in info.items()
        if k not in skip
    ]
    body = f"""
{
        _kv(
            [
                ("paleomap version", _e(info.get("paleomap_version", ""))),
                ("Built at (UTC)", _e(info.get("built_at", ""))),
                ("Project file", _e(info.get("project_file", ""))),
            ],
            "provenance",
        )
    }
<h3>Inputs (sha256)</h3>
<div class="table"><table id="inputs"><thead><tr><th scope="col">File</th>
<th scope="col">sha256 digest</th></tr></thead><tbody>{sums}</tbody></table></div>
<details><summary>Run information</summary>{_kv(other, "run-info")}
<p class="muted">The working CRS in full (WKT) is in the GeoPackage's
<code>run_info</code> table.</p></details>
<details><summary>Project file as built</summary><pre>{_e(info.get("project_text", ""))}</pre>
</details>
"""
    return _appendix("G", "Provenance", body)


_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Helvetica,Arial,sans-serif;
 max-width:64rem;margin:1.5rem auto;padding:0 1rem;color:#222;line-height:1.45}
h1{font-size:1.6rem;margin-bottom:.2rem}h2{font-size:1.25rem;margin-top:2rem;
 border-bottom:1px solid #ccc;padding-bottom:.2rem}h3{font-size:1.05rem}
div.table{max-width:100%;overflow-x:auto;margin:.6rem 0}
table{border-collapse:collapse;font-size:.85rem}
caption{text-align:left;font-size:.85rem;color:#444}
th,td{border:1px solid #d0d0d0;padding:.2rem .45rem;text-align:left;vertical-align:top}
thead th{background:#f2f2f2;vertical-align:bottom}table.kv th{background:#f7f7f7;
 font-weight:normal}td.num{text-align:right;font-variant-numeric:tabular-nums;
 white-space:nowrap}
.caution{background:#fff6e5;border-left:4px solid #e69f00;padding:.5rem .9rem;margin:1rem 0}
figure{margin:1.2rem 0}figure img{max-width:100%;height:auto;border:1px solid #e0e0e0}
figcaption{font-size:.85rem;color:#444}.swatch{display:inline-block;width:1.1em;
 height:1.1em;border:1px solid #555;vertical-align:middle}
pre{background:#f7f7f7;padding:.6rem;overflow-x:auto;font-size:.8rem;white-space:pre-wrap;
 overflow-wrap:anywhere}
code{overflow-wrap:anywhere}.muted{color:#666;font-size:.85rem}
summary{cursor:pointer;font-weight:600;margin:.6rem 0}
section.appendix{margin-top:2.5rem}
@page{margin:14mm 12mm}
@media print{
 body{max-width:none;margin:0;padding:0;font-size:9pt;line-height:1.3}
 h1{font-size:15pt;margin:0 0 2pt}h2{font-size:12pt;margin:8pt 0 4pt}h3{font-size:10pt}
 a{color:inherit;text-decoration:none}
 div.table{overflow:visible;margin:4pt 0}
 table{width:100%;font-size:7pt;table-layout:auto}
 th,td{padding:1pt 2.5pt;overflow-wrap:break-word}
 td code{overflow-wrap:anywhere}
 td.num{white-space:normal}
 thead{display:table-header-group}
 tr,figure,.caution{break-inside:avoid}
 h2,h3{break-after:avoid}
 section.appendix{break-before:page;margin-top:0}
 figure{margin:4pt 0}figure img{max-height:215mm;width:auto;max-width:100%;border:0}
 figure.key img{max-height:128mm}
 figcaption{font-size:7.5pt}
 .caution{padding:3pt 6pt;margin:4pt 0;font-size:8pt}.caution p{margin:2pt 0}
 .muted{font-size:7.5pt}
 details::details-content{content-visibility:visible;display:contents}
 details>summary{list-style:none}
 details>summary::-webkit-details-marker{display:none}
 pre{font-size:7pt}
}
"""


def render_report(result: BuildResult, folder: str | Path | None = None) -> str:
    """The report's HTML text.

    Figures already drawn in ``folder/figures`` are embedded as they are; any other is
    drawn in memory.

    Examples
    --------
    >>> text = render_report(result)   # doctest: +SKIP
    >>> text.startswith("<!DOCTYPE html>")   # doctest: +SKIP
    True
    """
    from .figures.all import figure_specs

    folder = Path(folder) if folder is not None else None
    p = result.project
    units = _Units(p)
    specs = figure_specs(result)
    body = "\n".join(
        [
            _summary(result, specs, folder, units),
            _slice_maps(specs, folder),
            _shifts(result, specs, folder, units),
            _sections(specs, folder),
            _quality(result, units),
            _reading(result, units),
            _project(result),
            _provenance(result),
        ]
    )
    return (
        f'<!DOCTYPE html>\n<html lang="en">\n<head>\n<meta charset="utf-8">\n'
        f'<meta name="viewport" content="width=device-width, initial-scale=1">\n'
        f"<title>{_e(p.name)}: paleomap report</title>\n<style>{_CSS}</style>\n</head>\n"
        f"<body>\n{body}\n</body>\n</html>\n"
    )


def write_report(result: BuildResult, folder: str | Path) -> Path:
    """Write ``folder/report.html`` for a build.

    Parameters
    ----------
    result : BuildResult
        A computed build.
    folder : str or Path
        The build folder (figures already drawn in ``folder/figures`` are reused).

    Returns
    -------
    Path
        The report's path.

    Examples
    --------
    >>> write_report(result, "build")   # doctest: +SKIP
    PosixPath('build/report.html')
    """
    from .io.atomic import atomic_write_text

    folder = Path(folder)
    path = folder / REPORT_NAME
    atomic_write_text(path, render_report(result, folder))
    log.info("wrote %s", path.name)
    return path
