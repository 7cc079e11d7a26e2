"""report.html: parses as HTML, is self-contained, every image decodes, every column is
headed in words with its unit, no number carries five or more decimals, every number of
its rate tables equals the GeoPackage's to the report's rounding, and the demo report
printed by Chromium to PDF (A4 and Letter) shows every column of every table."""

from __future__ import annotations

import base64
import hashlib
import io
import math
import os
import re
import shutil
import subprocess
import warnings
from html.parser import HTMLParser
from pathlib import Path

import numpy as np
import pyogrio
import pytest
from conftest import write_project

from paleomap import load_project
from paleomap.errors import PaleomapWarning
from paleomap.pipeline import compute, write_build
from paleomap.report import (
    CAUTIONS,
    COLUMNS,
    column_kind,
    format_value,
    render_report,
    write_report,
)

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
DEMO = Path(__file__).resolve().parents[1] / "demo_region" / "project.toml"
# Half a unit of the last digit each kind of column is written to (format_value).
TOLERANCE = {
    "m": 0.5,
    "deg": 0.5,
    "km": 0.05,
    "km2": 0.05,
    "share": 0.005,
    "depth": 0.005,
    "age": 0.0005,
    "int": 0.0,
}


class _Page(HTMLParser):
    """Collects tables (by id) with each cell's data-column, images, links and tags."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, list[dict]] = {}
        self.images: list[str] = []
        self.hrefs: list[str] = []
        self.tags: set[str] = set()
        self.text: list[str] = []
        self.headers: dict[str, list[str]] = {}
        self.outside_pre: list[str] = []
        self._th = None
        self._table = None
        self._row = None
        self._cell = None
        self._stack: list[str] = []

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        self.tags.add(tag)
        if tag not in ("img", "meta", "br"):
            self._stack.append(tag)
        if tag == "table":
            self._table = a.get("id")
            if self._table:
                self.tables[self._table] = []
        elif tag == "tr" and self._table:
            self._row = {}
        elif tag == "th" and self._table:
            self._th = ""
        elif tag == "td" and self._row is not None:
            self._cell = [a.get("data-column"), ""]
        elif tag == "img":
            self.images.append(a.get("src", ""))
        elif tag in ("a", "link"):
            self.hrefs.append(a.get("href", ""))

    def handle_endtag(self, tag):
        assert self._stack and self._stack[-1] == tag, f"unbalanced </{tag}>"
        self._stack.pop()
        if tag == "th" and self._th is not None:
            self.headers.setdefault(self._table, []).append(" ".join(self._th.split()))
            self._th = None
        if tag == "td" and self._cell is not None:
            col, text = self._cell
            if col:
                self._row[col] = text.strip()
            self._cell = None
        elif tag == "tr" and self._row is not None:
            if self._row:
                self.tables[self._table].append(self._row)
            self._row = None
        elif tag == "table":
            self._table = None

    def handle_data(self, data):
        self.text.append(data)
        if self._th is not None:
            self._th += data
        if "pre" not in self._stack and "style" not in self._stack:
            self.outside_pre.append(data)
        if self._cell is not None:
            self._cell[1] += data


def _parse(text: str) -> _Page:
    page = _Page()
    page.feed(text)
    page.close()
    assert not page._stack, f"unclosed tags: {page._stack}"
    return page


def _build(folder: Path, project_path: Path, **kw) -> tuple[object, Path]:
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        result = compute(load_project(project_path))
        out = write_build(result, folder / "build", **kw)
    return result, out


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    """The default test project (3 slices, 4 cores) with the tracked boundary moved so
    that it crosses the area at every slice: sand | silt."""
    folder = tmp_path_factory.mktemp("report")
    path = write_project(
        folder / "project",
        keys={"mapping.deterministic": True, "scheme.track": ["fine_sand", "silt"]},
    )
    result, out = _build(folder, path)
    text = (out / "report.html").read_text(encoding="utf-8")
    return result, out, text, _parse(text), path


def _number(text: str) -> float:
    return float(text.replace("\u2212", "-")) if text != "\u2013" else math.nan


def _same(text: str, ref: float, column: str) -> bool:
    """The report's text equals the GeoPackage's value to the column's rounding."""
    a, b = _number(text), float(ref)
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    kind = column_kind(column)
    if kind == "rate":  # three significant digits, at most two decimals
        return (
            abs(a - b) <= max(0.5 * 10 ** (math.floor(math.log10(abs(b) or 1)) - 2), 0.005) + 1e-9
        )
    if kind == "fit":
        return math.isclose(a, b, rel_tol=5e-3, abs_tol=5e-4)
    return abs(a - b) <= TOLERANCE[kind] + 1e-9


def test_format_value_rounds_to_what_a_number_can_carry():
    assert format_value(-635.383893, "rate") == "\u2212635"
    assert format_value(0.0004, "rate") == "0.00" and format_value(1.23456, "rate") == "1.23"
    assert format_value(1234567.89, "m") == "1234568"  # never in exponent form
    assert format_value(-0.2, "m") == "0"  # no negative zero
    assert format_value(159.4321, "km2") == "159.4" and format_value(0.977273, "share") == "0.98"
    assert format_value(2.55, "age") == "2.55" and format_value(84.0, "age") == "84"
    assert format_value(float("nan")) == "\u2013" and format_value(None) == "\u2013"
    assert format_value(np.int64(7), "int") == "7" and format_value(True, "bool") == "yes"


def test_report_is_one_self_contained_page(built):
    _result, out, text, page, _ = built
    assert text.startswith("<!DOCTYPE html>")
    assert {"html", "head", "body", "style", "table", "img"} <= page.tags
    assert not {"script", "link", "iframe"} & page.tags
    assert all(h.startswith("#") for h in page.hrefs)  # in-page links only
    assert all(src.startswith("data:image/png;base64,") for src in page.images)
    assert "url(" not in text  # no external resources from the style sheet
    assert {"figures", "paleomap.gpkg", "report.html"} <= {p.name for p in out.iterdir()}


def test_first_page_has_the_cautions_the_key_map_and_the_rates(built):
    _result, _out, text, _page, _ = built
    summary = text[text.index('<section class="summary"') : text.index('class="appendix"')]
    assert 'id="cautions"' in summary and CAUTIONS[1][:40] in summary
    assert 'id="fig-shoreline_migration"' in summary and 'id="slice-pairs"' in summary
    letters = re.findall(r"<h2>Appendix ([A-G])\.", text)
    assert letters == list("ABCDEFG")


def test_no_header_is_an_identifier(built):
    _result, _out, _text, page, _ = built
    headers = [h for hs in page.headers.values() for h in hs]
    assert len(headers) > 60
    for h in headers:
        assert "_" not in h and not re.fullmatch(r"[a-z0-9]+", h), h
    # every data column the report shows has its words (and unit) in COLUMNS
    shown = {c for rows in page.tables.values() for r in rows for c in r}
    assert shown and shown <= set(COLUMNS), shown - set(COLUMNS)
    pairs = page.headers["slice-pairs"]
    assert "Median rate over transects (m/kyr)" in pairs and "Area flooded (km\u00b2)" in pairs
    assert "Older age (ka)" in pairs


def test_no_number_has_five_or_more_decimals(built):
    _result, _out, _text, page, _ = built
    words = " ".join(page.outside_pre)  # the project file is quoted as written
    assert not re.findall(r"\d\.\d{5,}", words)
    assert not re.findall(r"\d[eE][+-]\d", words)  # nor in exponent form


def test_every_figure_is_embedded_once_and_decodes(built):
    import matplotlib.image as mpimg

    result, out, _text, page, _ = built
    pngs = sorted((out / "figures").glob("*.png"))
    assert len(page.images) == len(pngs) >= len(result.slice_maps) + 1
    embedded = set()
    for src in page.images:
        data = base64.b64decode(src.split(",", 1)[1], validate=True)
        assert data[:8] == PNG_SIGNATURE
        img = mpimg.imread(io.BytesIO(data), format="png")
        assert img.ndim == 3 and img.shape[0] > 300 and img.shape[1] > 600
        embedded.add(hashlib.sha256(data).hexdigest())
    assert embedded == {hashlib.sha256(p.read_bytes()).hexdigest() for p in pngs}


def test_slice_pair_numbers_equal_the_geopackage(built):
    _result, out, _text, page, _ = built
    gpkg = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="slice_pairs")
    rows = page.tables["slice-pairs"]
    assert len(rows) == len(gpkg) == 2
    checked = 0
    for row, (_, ref) in zip(rows, gpkg.iterrows(), strict=True):
        assert row["older_slice"] == ref["older_slice"]
        assert row["younger_slice"] == ref["younger_slice"]
        assert row["sense"] == (ref["sense"] or "\u2013")
        for col, text in row.items():
            if column_kind(col) in ("text", "bool", "bound"):
                continue
            assert _same(text, ref[col], col), (col, text, ref[col])
            checked += 1
    assert checked >= 2 * 7


def test_shift_numbers_equal_the_geopackage(built):
    _result, out, _text, page, _ = built
    gpkg = pyogrio.read_dataframe(
        out / "paleomap.gpkg", layer="shoreline_shifts", read_geometry=False
    )
    rows = page.tables["shoreline-shifts"]
    assert len(rows) == len(gpkg) > 0
    for row, (_, ref) in zip(rows, gpkg.iterrows(), strict=True):
        assert (row["transect"], row["older_slice"]) == (ref["transect"], ref["older_slice"])
        numeric = [c for c in row if column_kind(c) not in ("text", "bool", "bound")]
        assert len(numeric) >= 6
        for col in numeric:
            assert _same(row[col], ref[col], col), (col, row[col], ref[col])


def test_slice_quality_table_matches_the_geopackage(built):
    _result, out, _text, page, _ = built
    gpkg = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="slice_quality")
    rows = page.tables["slice-quality"]
    assert [r["slice"] for r in rows] == list(gpkg["slice"])
    for row, (_, ref) in zip(rows, gpkg.iterrows(), strict=True):
        assert int(row["cores_used"]) == int(ref["cores_used"])
        assert _same(row["age"], ref["age"], "age")
        assert _same(
            row["loo_share_in_own_belt"], ref["loo_share_in_own_belt"], "loo_share_in_own_belt"
        )


def test_transects_give_the_least_squares_rate_only_for_one_way_series(built):
    from paleomap.figures.positions import series_rate

    result, _out, _text, page, _ = built
    rows = page.tables["transects"]
    assert len(rows) == len(result.transects)
    for row in rows:
        rate, method = series_rate(result, row["transect"])
        assert row["series_rate_method"] == (method or "\u2013")
        assert _same(row["series_rate_m_per_kyr"], rate, "series_rate_m_per_kyr")


def test_core_reading_lists_the_flagged_contact(built):
    result, _out, _text, page, _ = built
    flagged = page.tables["flagged-contacts"]
    expected = result.reading.contacts
    expected = expected[expected["flag"] == "possible_break"]
    assert [(r["core_id"], _number(r["depth"])) for r in flagged] == list(
        zip(expected["core_id"], expected["depth"], strict=True)
    )
    assert ("C3", 28.0) in [(r["core_id"], _number(r["depth"])) for r in flagged]
    stacking = page.tables["stacking"]
    assert [r["interval"] for r in stacking] == list(result.reading.region["interval"])


def test_provenance_lists_every_input_with_its_sha256(built):
    result, _out, text, page, project_path = built
    words = " ".join(page.text)
    for name in ("cores.csv", "intervals.csv", "picks.csv"):
        digest = hashlib.sha256((project_path.parent / name).read_bytes()).hexdigest()
        assert digest in words
    assert result.run_info["paleomap_version"] in words
    assert result.run_info["built_at"] in words


def test_report_states_the_cautions(built):
    _result, _out, _text, page, _ = built
    words = " ".join(" ".join(page.text).split())
    for caution in CAUTIONS:
        assert caution in words
    assert "licensed professional practice" in words and "regulations" in words


def test_report_without_drawn_figures_draws_them(tmp_path):
    path = write_project(
        tmp_path / "p", keys={"slices.at": ["s_old"], "mapping.deterministic": True}
    )
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        result = compute(load_project(path))
    out = write_report(result, tmp_path / "build")
    assert out == tmp_path / "build" / "report.html"
    assert not (tmp_path / "build" / "figures").exists()
    page = _parse(out.read_text(encoding="utf-8"))
    assert len(page.images) >= 2
    assert page.tables["slice-pairs"] == []  # one slice: no pair
    assert "Only one slice was mapped" in render_report(result)


# ------------------------------------------------------------------- printed


CHROMIUM = shutil.which("chromium")
PDFTOTEXT = shutil.which("pdftotext")


def _need_printing():
    missing = [n for n, p in (("chromium", CHROMIUM), ("pdftotext", PDFTOTEXT)) if not p]
    if missing:
        if os.environ.get("CI", "").lower() == "true":
            pytest.fail(f"{', '.join(missing)} missing in CI (.ci/run installs them)")
        pytest.skip(f"{', '.join(missing)} not installed (apt-get install chromium poppler-utils)")


def print_to_pdf(html_path: Path, pdf_path: Path, paper: str, profile: Path) -> Path:
    """Print a report with headless Chromium on ``paper`` (``A4`` or ``letter``)."""
    text = html_path.read_text(encoding="utf-8")
    sized = html_path.with_name(f"{html_path.stem}_{paper}.html")
    sized.write_text(
        text.replace("</head>", f"<style>@page{{size:{paper}}}</style></head>", 1),
        encoding="utf-8",
    )
    subprocess.run(
        [
            CHROMIUM,
            "--headless",
            "--no-sandbox",
            "--disable-gpu",
            "--disable-quic",
            "--no-first-run",
            "--disable-background-networking",
            "--disable-component-update",
            "--disable-sync",
            f"--user-data-dir={profile}",
            "--no-pdf-header-footer",
            f"--print-to-pdf={pdf_path}",
            sized.as_uri(),
        ],
        check=True,
        capture_output=True,
        timeout=180,
    )
    return pdf_path


def pdf_words(pdf_path: Path):
    """Every word of a PDF with its page size and box (pdftotext -bbox)."""
    out = subprocess.run(
        [PDFTOTEXT, "-bbox", str(pdf_path), "-"], check=True, capture_output=True, text=True
    ).stdout
    words = []
    for page in re.finditer(r'<page width="([\d.]+)" height="([\d.]+)">(.*?)</page>', out, re.S):
        w, h = float(page.group(1)), float(page.group(2))
        for m in re.finditer(
            r'<word xMin="([\d.-]+)" yMin="([\d.-]+)" xMax="([\d.-]+)" '
            r'yMax="([\d.-]+)">(.*?)</word>',
            page.group(3),
        ):
            x0, y0, x1, y1 = map(float, m.groups()[:4])
            words.append((m.group(5), x0, y0, x1, y1, w, h))
    return words


@pytest.fixture(scope="session")
def demo_report(tmp_path_factory):
    _need_printing()
    folder = tmp_path_factory.mktemp("demo_report")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", PaleomapWarning)
        result = compute(load_project(DEMO))
        out = write_build(result, folder / "build")
    return result, out / "report.html", folder


@pytest.mark.slow
@pytest.mark.parametrize("paper, width_pt", [("A4", 595.3), ("letter", 612.0)])
def test_printed_demo_report_shows_every_column(demo_report, paper, width_pt):
    import html as _html

    _result, report, folder = demo_report
    pdf = print_to_pdf(report, folder / f"report_{paper}.pdf", paper, folder / f"chr_{paper}")
    words = pdf_words(pdf)
    assert words and abs(words[0][5] - width_pt) < 2
    # nothing cut at the page's edges: every word lies inside its page
    outside = [w for w in words if w[1] < 0 or w[3] > w[5] + 0.5 or w[2] < 0 or w[4] > w[6] + 0.5]
    assert not outside, outside[:5]
    printed = {_html.unescape(w[0]) for w in words}
    page = _parse(report.read_text(encoding="utf-8"))
    missing = {}
    for table, headers in page.headers.items():
        for h in headers:
            # a heading wraps inside its cell, so each of its words must be printed
            lost = [t for t in h.split() if t not in printed]
            if lost:
                missing.setdefault(table, []).append((h, lost))
    assert not missing, missing
    assert len(page.headers) >= 10
    # collapsed details print open: the run information inside a closed <details>
    assert "(WKT)" in printed  # a sentence inside the closed "Run information"
