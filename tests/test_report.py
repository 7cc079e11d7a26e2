"""report.html: parses as HTML, is self-contained, every image decodes, and every number of
its rate tables equals the GeoPackage's (to the report's significant digits)."""

from __future__ import annotations

import base64
import hashlib
import io
import math
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
    SIGNIFICANT_DIGITS,
    format_number,
    render_report,
    write_report,
)

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"
# A number written with 6 significant digits is within half a unit of its 6th digit.
REL_TOL = 0.5 * 10 ** (1 - SIGNIFICANT_DIGITS)


class _Page(HTMLParser):
    """Collects tables (by id) with each cell's data-column, images, links and tags."""

    def __init__(self):
        super().__init__(convert_charrefs=True)
        self.tables: dict[str, list[dict]] = {}
        self.images: list[str] = []
        self.hrefs: list[str] = []
        self.tags: set[str] = set()
        self.text: list[str] = []
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
        elif tag == "td" and self._row is not None:
            self._cell = [a.get("data-column"), ""]
        elif tag == "img":
            self.images.append(a.get("src", ""))
        elif tag in ("a", "link"):
            self.hrefs.append(a.get("href", ""))

    def handle_endtag(self, tag):
        assert self._stack and self._stack[-1] == tag, f"unbalanced </{tag}>"
        self._stack.pop()
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


def _same(a: float, b: float) -> bool:
    if math.isnan(a) or math.isnan(b):
        return math.isnan(a) and math.isnan(b)
    return math.isclose(a, b, rel_tol=REL_TOL, abs_tol=1e-12)


def test_format_number_uses_the_stated_digits():
    assert format_number(1234567.89) == "1.23457e+06"
    assert format_number(-0.000123456789) == "-0.000123457"
    assert format_number(float("nan")) == "\u2013" and format_number(None) == "\u2013"
    assert format_number(np.int64(7)) == "7" and format_number(True) == "yes"


def test_report_is_one_self_contained_page(built):
    _result, out, text, page, _ = built
    assert text.startswith("<!DOCTYPE html>")
    assert {"html", "head", "body", "style", "table", "img"} <= page.tags
    assert not {"script", "link", "iframe"} & page.tags
    assert all(h.startswith("#") for h in page.hrefs)  # in-page links only
    assert all(src.startswith("data:image/png;base64,") for src in page.images)
    assert "url(" not in text  # no external resources from the style sheet
    assert {"figures", "paleomap.gpkg", "report.html"} <= {p.name for p in out.iterdir()}


def test_every_figure_is_embedded_and_decodes(built):
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
            if col in (
                "older_slice",
                "younger_slice",
                "sense",
                "core_sense",
                "agreement",
                "net_shift_bound",
            ):
                continue
            assert _same(_number(text), float(ref[col])), (col, text, ref[col])
            checked += 1
    assert checked >= 2 * 8


def test_shift_numbers_equal_the_geopackage(built):
    _result, out, _text, page, _ = built
    gpkg = pyogrio.read_dataframe(
        out / "paleomap.gpkg", layer="shoreline_shifts", read_geometry=False
    )
    rows = page.tables["shoreline-shifts"]
    assert len(rows) == len(gpkg) > 0
    for row, (_, ref) in zip(rows, gpkg.iterrows(), strict=True):
        assert (row["transect"], row["older_slice"]) == (ref["transect"], ref["older_slice"])
        for col in (
            "shift_m",
            "shift_low_m",
            "shift_high_m",
            "rate_m_per_kyr",
            "rate_low_m_per_kyr",
            "rate_high_m_per_kyr",
        ):
            assert _same(_number(row[col]), float(ref[col])), (col, row[col], ref[col])


def test_slice_quality_table_matches_the_geopackage(built):
    _result, out, _text, page, _ = built
    gpkg = pyogrio.read_dataframe(out / "paleomap.gpkg", layer="slice_quality")
    rows = page.tables["slice-quality"]
    assert [r["slice"] for r in rows] == list(gpkg["slice"])
    for row, (_, ref) in zip(rows, gpkg.iterrows(), strict=True):
        assert int(row["cores_used"]) == int(ref["cores_used"])
        assert _same(_number(row["age"]), float(ref["age"]))


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
