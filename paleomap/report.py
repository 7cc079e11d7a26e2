"""The build report: one self-contained HTML page with the numbers and every figure.

``report.html`` needs nothing beside it: the figures are embedded as PNG data URIs and
the style sheet is inline, with no script and no external link, so it opens offline in
any browser and can be mailed as one file. It holds the project, a table of slices and
their quality, the slice-pair table with rates and senses, the shoreline shifts per
transect, the core reading (flagged contacts, stacking per interval and its agreement
with the maps), every figure, the provenance (version, build time, inputs' sha256) and
the cautions.

Numbers in the tables are written with :data:`SIGNIFICANT_DIGITS` significant digits,
each cell tagged with its column (``data-column``), so that a reader (or a test) can
compare them with the GeoPackage's values; a missing value is an en dash.

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
import json
import logging
import math
from pathlib import Path
from typing import TYPE_CHECKING

import numpy as np
import pandas as pd

if TYPE_CHECKING:
    from .pipeline import BuildResult

__all__ = [
    "CAUTIONS",
    "REPORT_NAME",
    "SIGNIFICANT_DIGITS",
    "format_number",
    "render_report",
    "write_report",
]

log = logging.getLogger(__name__)

REPORT_NAME = "report.html"

SIGNIFICANT_DIGITS = 6
"""Significant digits of every number in the report's tables."""

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

_CSS = """
body{font-family:system-ui,-apple-system,"Segoe UI",Helvetica,Arial,sans-serif;
 max-width:64rem;margin:1.5rem auto;padding:0 1rem;color:#222;line-height:1.45}
h1{font-size:1.6rem;margin-bottom:.2rem}h2{font-size:1.25rem;margin-top:2rem;
 border-bottom:1px solid #ccc;padding-bottom:.2rem}h3{font-size:1.05rem}
table{border-collapse:collapse;margin:.6rem 0;font-size:.85rem;display:block;max-width:100%;
 overflow-x:auto}
th,td{border:1px solid #d0d0d0;padding:.2rem .45rem;text-align:left;vertical-align:top}
th{background:#f2f2f2}td.num{text-align:right;font-variant-numeric:tabular-nums}
.caution{background:#fff6e5;border-left:4px solid #e69f00;padding:.5rem .9rem;margin:1rem 0}
figure{margin:1.2rem 0}figure img{max-width:100%;height:auto;border:1px solid #e0e0e0}
figcaption{font-size:.85rem;color:#444}.swatch{display:inline-block;width:1.1em;
 height:1.1em;border:1px solid #555;vertical-align:middle}
pre{background:#f7f7f7;padding:.6rem;overflow-x:auto;font-size:.8rem}
.muted{color:#666;font-size:.85rem}
"""


def format_number(value) -> str:
    """A table cell's text: numbers to :data:`SIGNIFICANT_DIGITS` significant digits.

    >>> format_number(-635.383893), format_number(44), format_number(float("nan"))
    ('-635.384', '44', '\u2013')
    """
    if value is None:
        return _MISSING
    if isinstance(value, (bool, np.bool_)):
        return "yes" if value else "no"
    if isinstance(value, (int, np.integer)):
        return str(int(value))
    if isinstance(value, (float, np.floating)):
        v = float(value)
        if not math.isfinite(v):
            return _MISSING
        return f"{v:.{SIGNIFICANT_DIGITS}g}"
    if isinstance(value, str):
        return value or _MISSING
    try:
        if pd.isna(value):
            return _MISSING
    except (TypeError, ValueError):
        pass
    return str(value)


def _e(text) -> str:
    return html.escape(str(text), quote=True)


def _table(frame: pd.DataFrame, columns, table_id: str, headers=None) -> str:
    headers = headers or {}
    cols = [c for c in columns if c in frame.columns]
    head = "".join(f"<th>{_e(headers.get(c, c))}</th>" for c in cols)
    rows = []
    for rec in frame[cols].itertuples(index=False):
        cells = []
        for c, v in zip(cols, rec, strict=True):
            numeric = isinstance(v, (int, float, np.integer, np.floating)) and not isinstance(
                v, (bool, np.bool_)
            )
            cls = ' class="num"' if numeric else ""
            cells.append(f'<td data-column="{_e(c)}"{cls}>{_e(format_number(v))}</td>')
        rows.append("<tr>" + "".join(cells) + "</tr>")
    body = "\n".join(rows) if rows else f'<tr><td colspan="{len(cols)}">none</td></tr>'
    return (
        f'<table id="{_e(table_id)}"><thead><tr>{head}</tr></thead>\n<tbody>\n{body}\n'
        "</tbody></table>"
    )


def _kv(pairs) -> str:
    rows = "".join(f"<tr><th>{_e(k)}</th><td>{v}</td></tr>" for k, v in pairs)
    return f"<table>{rows}</table>"


def _png_bytes(spec, folder: Path | None) -> bytes:
    if folder is not None:
        path = folder / "figures" / f"{spec.stem}.png"
        if path.exists():
            return path.read_bytes()
    fig = spec.draw()
    buf = io.BytesIO()
    from .figures.canvas import REPORT_DPI

    fig.savefig(buf, format="png", dpi=REPORT_DPI, metadata={"Software": "paleomap"})
    return buf.getvalue()


def _transect_kind(result) -> str:
    return "user" if any(t.source == "user" for t in result.transects) else "default dip"


def _project_section(result) -> str:
    from .figures.mapframe import crs_label

    p = result.project
    s = p.scheme
    n_intervals = sum(len(c.intervals) for c in p.cores)
    n_picks = sum(len(c.picks) for c in p.cores)
    g = result.grid
    belts = "".join(
        f"<tr><td>{r}</td><td>{_e(b.id)}</td><td>{_e(b.label or b.id)}</td>"
        f"<td>{'marine' if b.marine else 'non-marine'}</td>"
        f'<td><span class="swatch" style="background:{_e(b.color)}"></span> '
        f"{_e(b.color)}</td></tr>"
        for r, b in enumerate(s.belts)
    )
    surfaces = "".join(
        f"<tr><td>{_e(sf.name)}</td><td class='num'>{_e(format_number(sf.age))}</td>"
        f"<td class='num'>{_e(format_number(sf.age_sd))}</td>"
        f"<td>{'yes' if sf.erosional else 'no'}</td></tr>"
        for sf in sorted(p.surfaces, key=lambda x: x.age)
    )
    return f"""
<h2 id="project">Project</h2>
{
        _kv(
            [
                ("Name", _e(p.name)),
                ("Project CRS", _e(crs_label(p.crs))),
                ("Working CRS (maps, lengths, areas)", _e(crs_label(p.working_crs))),
                ("Depth unit / age unit", f"{_e(p.depth_unit)} / {_e(p.age_unit)}"),
                ("Facies scheme", f"{_e(s.name)} ({s.n_belts} belts)"),
                (
                    "Tracked boundary",
                    _e(s.boundary_name(s.tracked_boundary))
                    + (" (the shoreline)" if s.tracks_shoreline else ""),
                ),
                ("Cores / intervals / picks", f"{len(p.cores)} / {n_intervals} / {n_picks}"),
                ("Surfaces / slices", f"{len(p.surfaces)} / {len(result.slice_maps)}"),
                (
                    "Grid",
                    f"{format_number(g.cell_size)} m cells, {g.n_rows} rows x {g.n_cols} columns, "
                    f"{int(g.mask.sum())} cells in the mapped area",
                ),
                (
                    "Transects",
                    f"{len(result.transects)} ({_transect_kind(result)})",
                ),
            ]
        )
    }
<h3>Belts, proximal to distal</h3>
<table id="belts"><thead><tr><th>rank</th><th>id</th><th>label</th><th>setting</th>
<th>colour</th></tr></thead><tbody>{belts}</tbody></table>
<h3>Surfaces</h3>
<table id="surfaces"><thead><tr><th>surface</th><th>age ({_e(p.age_unit)})</th>
<th>age sd</th><th>erosional</th></tr></thead><tbody>{surfaces}</tbody></table>
"""


def _slices_section(result) -> str:
    rows = [
        dict(slice=m.slice.name, age=m.slice.age, surface=m.slice.surface or "", **m.quality)
        for m in result.slice_maps
    ]
    frame = pd.DataFrame(rows)
    cols = list(frame.columns) if len(frame) else ["slice", "age"]
    return f"""
<h2 id="slices">Slices and their quality</h2>
<p class="muted">One row per mapped slice: cores used, how many lie inside their own
mapped belt, whether the belts keep the scheme's order (Walther check), whether the
tracked boundary crosses the mapped area, and the engine's scores (the
<code>slice_quality</code> table of the GeoPackage).</p>
{_table(frame, cols, "slice-quality")}
"""


_PAIR_COLUMNS = [
    "older_slice",
    "younger_slice",
    "older_age",
    "younger_age",
    "median_rate_m_per_kyr",
    "net_rate_m_per_kyr",
    "net_shift_m",
    "net_shift_bound",
    "flooded_km2",
    "exposed_km2",
    "transects_used",
    "sense",
    "core_sense",
    "agreement",
]
_SHIFT_COLUMNS = [
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


def _pairs_section(result) -> str:
    pairs = result.slice_pairs
    shifts = (
        result.shifts.drop(columns=["geometry"], errors="ignore")
        if len(result.shifts)
        else pd.DataFrame(columns=_SHIFT_COLUMNS)
    )
    tr = pd.DataFrame(
        [
            dict(
                transect=t.transect,
                source=t.source,
                azimuth_deg=t.azimuth_deg,
                length_km=t.line.length / 1e3,
                lsq_rate_m_per_kyr=t.lsq_rate_m_per_kyr,
            )
            for t in result.transects
        ]
    )
    note = (
        ""
        if len(pairs)
        else "<p>Only one slice was mapped, so there is no slice pair and no rate.</p>"
    )
    return f"""
<h2 id="slice-pairs-section">Shoreline shifts between slices</h2>
<p class="muted">Consecutive slices, older first. Rates are in m/kyr (1 m/kyr = 1 mm/yr),
positive landward (transgression). The median rate is over the transects; the net shift
is the net area change divided by the boundary's mean extent along strike (the
dip-equivalent shift), and the net rate that over the time between the slices. Where the
boundary leaves the mapped area at a slice, a shift is only a bound (<code>at_least</code>:
at least that far in its direction). Low and high are the P10 and P90 (10 % and 90 % of the
probability below); a sense is <code>uncertain</code> where that range spans zero.
<code>core_sense</code> is what the cores' stacking says for the same interval,
<code>agreement</code> whether it agrees with the map. These are the values of the
GeoPackage's <code>slice_pairs</code> table, to {SIGNIFICANT_DIGITS} significant
digits.</p>
{note}{_table(pairs, _PAIR_COLUMNS, "slice-pairs")}
<details><summary>Shifts per transect ({len(shifts)} rows; the
<code>shoreline_shifts</code> layer)</summary>
{_table(shifts, _SHIFT_COLUMNS, "shoreline-shifts")}
</details>
<h3>Transects</h3>
{_table(tr, list(tr.columns) if len(tr) else ["transect"], "transects")}
"""


def _reading_section(result) -> str:
    reading = result.reading
    if reading is None:
        return '<h2 id="core-reading">Core reading</h2><p>No core reading was made.</p>'
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
    return f"""
<h2 id="core-reading">Core reading</h2>
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
        )
    }
<h3>Stacking per interval and agreement with the maps</h3>
{
        _table(
            region,
            [
                "interval",
                "older_age",
                "younger_age",
                "n_cores",
                "n_deepening",
                "n_shallowing",
                "n_aggrading",
                "n_mixed",
                "core_sense",
                "mapped_sense",
                "agreement",
            ],
            "stacking",
        )
    }
"""


def _figures_section(result, folder) -> str:
    from .figures.all import figure_specs

    parts = ['<h2 id="figures">Figures</h2>']
    for spec in figure_specs(result):
        data = base64.b64encode(_png_bytes(spec, folder)).decode("ascii")
        parts.append(
            f'<figure id="fig-{_e(spec.stem)}"><img alt="{_e(spec.title)}" '
            f'src="data:image/png;base64,{data}"><figcaption><strong>{_e(spec.title)}.'
            f"</strong> {_e(spec.caption)}</figcaption></figure>"
        )
    return "\n".join(parts)


def _provenance_section(result) -> str:
    info = result.run_info
    sums = "".join(
        f"<tr><td>{_e(k)}</td><td><code>{_e(v)}</code></td></tr>"
        for k, v in sorted(dict(info.get("input_sha256", {})).items())
    )
    other = {
        k: v for k, v in info.items() if k not in ("input_sha256", "project_text", "working_crs")
    }
    return f"""
<h2 id="provenance">Provenance</h2>
{
        _kv(
            [
                ("paleomap version", _e(info.get("paleomap_version", ""))),
                ("Built at (UTC)", _e(info.get("built_at", ""))),
                ("Project file", _e(info.get("project_file", ""))),
            ]
        )
    }
<h3>Inputs (sha256)</h3>
<table id="inputs"><thead><tr><th>file</th><th>sha256</th></tr></thead>
<tbody>{sums}</tbody></table>
<details><summary>Run information</summary><pre>{
        _e(json.dumps(other, indent=2, default=str))
    }</pre></details>
<details><summary>Working CRS (WKT)</summary><pre>{_e(info.get("working_crs", ""))}</pre>
</details>
<details><summary>Project file as built</summary><pre>{_e(info.get("project_text", ""))}</pre>
</details>
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
    folder = Path(folder) if folder is not None else None
    p = result.project
    info = result.run_info
    cautions = "".join(f"<p>{_e(t)}</p>" for t in CAUTIONS)
    body = "\n".join(
        [
            f"<h1>{_e(p.name)}</h1>",
            '<p class="muted">Paleogeographic build by paleomap '
            f"{_e(info.get('paleomap_version', ''))}"
            f", {_e(info.get('built_at', ''))}. Contents: "
            '<a href="#project">project</a> · <a href="#slices">slices</a> · '
            '<a href="#slice-pairs-section">shoreline shifts</a> · '
            '<a href="#core-reading">core reading</a> · <a href="#figures">figures</a> · '
            '<a href="#provenance">provenance</a> · <a href="#cautions">cautions</a></p>',
            f'<div class="caution" id="cautions"><strong>Cautions.</strong> {cautions}</div>',
            _project_section(result),
            _slices_section(result),
            _pairs_section(result),
            _reading_section(result),
            _figures_section(result, folder),
            _provenance_section(result),
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
