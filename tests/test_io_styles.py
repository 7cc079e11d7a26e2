"""Tests for paleomap.io.styles: SLD 1.1.0 documents parsed back with xml.etree."""

from __future__ import annotations

import re
import xml.etree.ElementTree as ET

import pytest

from paleomap.io import styles
from paleomap.io.styles import (
    OGC_NS,
    SE_NS,
    SENSE_COLORS,
    SLD_NS,
    belt_categories,
    categorized_fill_sld,
    categorized_line_sld,
    categorized_point_sld,
    fill_sld,
    layer_styles,
    line_sld,
    point_sld,
    sld_layer_name,
)
from paleomap.scheme import builtin_scheme

NS = {"sld": SLD_NS, "se": SE_NS, "ogc": OGC_NS}
BELTS = [("sand", "Sand", "#d9b56e"), ("silt", "Silt", "#6fb7b0"), ("mud", "Mud", "#1d4f7c")]


def _parse(sld: str) -> ET.Element:
    assert sld.startswith('<?xml version="1.0" encoding="UTF-8"?>')
    return ET.fromstring(sld.encode("utf-8"))


def _params(el: ET.Element) -> dict[str, str]:
    return {p.get("name"): p.text for p in el.findall("se:SvgParameter", NS)}


def _rules(root: ET.Element) -> list[ET.Element]:
    return root.findall("sld:NamedLayer/sld:UserStyle/se:FeatureTypeStyle/se:Rule", NS)


def test_document_structure_follows_sld_1_1_0():
    # Element names and namespaces as in OGC 05-078r4 (SLD 1.1.0) and 05-077r4 (SE 1.1.0).
    root = _parse(categorized_fill_sld("facies_belts", "belt", BELTS, title="Facies belts"))
    assert root.tag == f"{{{SLD_NS}}}StyledLayerDescriptor"
    assert root.get("version") == "1.1.0"
    schema = root.get("{http://www.w3.org/2001/XMLSchema-instance}schemaLocation")
    assert schema.split() == [
        SLD_NS,
        "http://schemas.opengis.net/sld/1.1.0/StyledLayerDescriptor.xsd",
    ]
    named = root.findall("sld:NamedLayer", NS)
    assert len(named) == 1
    assert named[0].find("se:Name", NS).text == "facies_belts"
    style = named[0].find("sld:UserStyle", NS)
    assert style.find("se:Name", NS).text == "facies_belts"
    assert style.find("se:Description/se:Title", NS).text == "Facies belts"
    assert len(style.findall("se:FeatureTypeStyle", NS)) == 1


def test_categorized_fill_has_one_rule_per_category_in_order():
    root = _parse(categorized_fill_sld("facies_belts", "belt", BELTS))
    rules = _rules(root)
    assert len(rules) == 3
    for rule, (value, label, color) in zip(rules, BELTS, strict=True):
        # The SE 1.1.0 schema fixes the child order: Name, Description, Filter, symbolizer.
        tags = [child.tag for child in rule]
        assert tags == [
            f"{{{SE_NS}}}Name",
            f"{{{SE_NS}}}Description",
            f"{{{OGC_NS}}}Filter",
            f"{{{SE_NS}}}PolygonSymbolizer",
        ]
        assert rule.find("se:Description/se:Title", NS).text == label
        eq = rule.find("ogc:Filter/ogc:PropertyIsEqualTo", NS)
        assert eq.find("ogc:PropertyName", NS).text == "belt"
        assert eq.find("ogc:Literal", NS).text == value
        fill = _params(rule.find("se:PolygonSymbolizer/se:Fill", NS))
        assert fill == {"fill": color, "fill-opacity": "1"}
        stroke = _params(rule.find("se:PolygonSymbolizer/se:Stroke", NS))
        assert re.fullmatch(r"#[0-9a-f]{6}", stroke["stroke"])


def test_else_rule_comes_last():
    root = _parse(categorized_fill_sld("facies_belts", "belt", BELTS, other_color="#D9D9D9"))
    rules = _rules(root)
    assert len(rules) == 4
    assert rules[-1].find("se:ElseFilter", NS) is not None
    assert rules[-1].find("ogc:Filter", NS) is None
    assert _params(rules[-1].find("se:PolygonSymbolizer/se:Fill", NS))["fill"] == "#d9d9d9"


def test_semi_transparent_fill():
    root = _parse(fill_sld("shoreline_bands", "#c0392b", opacity=0.3, stroke_color="#c0392b"))
    (rule,) = _rules(root)
    assert rule.find("ogc:Filter", NS) is None
    fill = _params(rule.find("se:PolygonSymbolizer/se:Fill", NS))
    assert float(fill["fill-opacity"]) == pytest.approx(0.3)
    assert _params(rule.find("se:PolygonSymbolizer/se:Stroke", NS))["stroke"] == "#c0392b"


def test_fill_without_outline_has_no_stroke():
    root = _parse(fill_sld("shoreline_bands", "#c0392b"))
    assert root.find(".//se:PolygonSymbolizer/se:Stroke", NS) is None


def test_line_with_dashes():
    root = _parse(line_sld("transects", "#404040", width=0.8, dasharray=(6, 3)))
    (rule,) = _rules(root)
    stroke = _params(rule.find("se:LineSymbolizer/se:Stroke", NS))
    assert stroke["stroke"] == "#404040"
    assert float(stroke["stroke-width"]) == pytest.approx(0.8)
    assert stroke["stroke-dasharray"] == "6 3"


def test_solid_line_has_no_dasharray():
    root = _parse(line_sld("shorelines", "#c0392b"))
    assert "stroke-dasharray" not in _params(root.find(".//se:LineSymbolizer/se:Stroke", NS))


def test_categorized_line_by_sense():
    cats = [(s, s.title(), c) for s, c in SENSE_COLORS.items()]
    root = _parse(categorized_line_sld("shoreline_shifts", "sense", cats, width=2))
    got = {
        r.find("ogc:Filter/ogc:PropertyIsEqualTo/ogc:Literal", NS).text: _params(
            r.find("se:LineSymbolizer/se:Stroke", NS)
        )["stroke"]
        for r in _rules(root)
    }
    assert got == SENSE_COLORS


def test_point_symbolizer_mark():
    root = _parse(point_sld("cores", "#ffffff", size=7, shape="circle"))
    graphic = root.find(".//se:PointSymbolizer/se:Graphic", NS)
    assert [c.tag for c in graphic] == [f"{{{SE_NS}}}Mark", f"{{{SE_NS}}}Size"]
    assert graphic.find("se:Mark/se:WellKnownName", NS).text == "circle"
    assert _params(graphic.find("se:Mark/se:Fill", NS)) == {"fill": "#ffffff"}
    assert float(graphic.find("se:Size", NS).text) == 7


def test_categorized_point_by_belt():
    root = _parse(categorized_point_sld("core_slices", "belt", BELTS, shape="square"))
    rules = _rules(root)
    assert [r.find(".//se:WellKnownName", NS).text for r in rules] == ["square"] * 3
    assert [_params(r.find(".//se:Mark/se:Fill", NS))["fill"] for r in rules] == [
        c for _, _, c in BELTS
    ]


def test_numeric_and_boolean_category_values():
    root = _parse(
        categorized_fill_sld(
            "facies_belts", "marine", [(False, "Land", "#aa0000"), (True, "Sea", "#0000aa")]
        )
    )
    literals = [r.find(".//ogc:Literal", NS).text for r in _rules(root)]
    # Booleans are stored as 0/1 in a GeoPackage (GDAL's boolean subtype).
    assert literals == ["0", "1"]
    root = _parse(
        categorized_point_sld("core_slices", "rank", [(0, "a", "#000000"), (1, "b", "#ffffff")])
    )
    assert [r.find(".//ogc:Literal", NS).text for r in _rules(root)] == ["0", "1"]


def test_text_is_escaped():
    sld = categorized_fill_sld("facies_belts", "belt", [("a&b", "Sand <fine>", "#000000")])
    rule = _rules(_parse(sld))[0]
    assert rule.find(".//ogc:Literal", NS).text == "a&b"
    assert rule.find("se:Description/se:Title", NS).text == "Sand <fine>"


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: line_sld("shorelines", "red"), "#rrggbb"),
        (lambda: line_sld("shorelines", "#c0392b", width=0), "positive"),
        (lambda: line_sld("shorelines", "#c0392b", dasharray=()), "at least one"),
        (lambda: fill_sld("shoreline_bands", "#c0392b", opacity=1.5), "between 0 and 1"),
        (lambda: point_sld("cores", "#ffffff", shape="hexagon"), "shape must be one of"),
        (lambda: point_sld("", "#ffffff"), "layer must be"),
        (lambda: categorized_fill_sld("facies_belts", "belt", []), "at least one"),
        (
            lambda: categorized_fill_sld("facies_belts", "belt", [("a", "A", "#000000")] * 2),
            "twice",
        ),
        (lambda: categorized_fill_sld("facies_belts", "belt", [("a", "A")]), "tuple"),
        (lambda: categorized_fill_sld("facies_belts", "", BELTS), "field must be"),
        (
            lambda: categorized_fill_sld("facies_belts", "belt", [(float("nan"), "A", "#000000")]),
            "finite",
        ),
    ],
    ids=[
        "named-colour",
        "zero-width",
        "empty-dashes",
        "opacity",
        "shape",
        "empty-layer",
        "no-categories",
        "duplicate-category",
        "short-category",
        "empty-field",
        "nan-category",
    ],
)
def test_bad_arguments(call, match):
    with pytest.raises(ValueError, match=match):
        call()


def test_layer_styles_cover_our_spatial_layers():
    cats = belt_categories(builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand")))
    got = layer_styles(cats)
    assert set(got) == {
        "cores",
        "core_slices",
        "core_contacts",
        "turnarounds",
        "gaps",
        "control_points",
        "facies_belts",
        "shorelines",
        "shoreline_bands",
        "transects",
        "shoreline_shifts",
    }
    for name, sld in got.items():
        assert sld_layer_name(sld) == name
    belts = _parse(got["facies_belts"])
    assert [r.find(".//ogc:Literal", NS).text for r in _rules(belts)] == list(
        builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand")).ids
    )
    fills = [_params(r.find(".//se:Fill", NS))["fill"] for r in _rules(belts)]
    assert fills == [
        c.lower()
        for c in builtin_scheme("siliciclastic_lithology", ("coarse_sand", "fine_sand")).colors
    ]
    band = _params(_parse(got["shoreline_bands"]).find(".//se:Fill", NS))
    assert 0 < float(band["fill-opacity"]) < 1


def test_sense_colours_are_distinct_in_lightness():
    # Transgression and regression must differ in more than hue, so that readers
    # with a red-green deficiency and greyscale prints still tell them apart.
    # Relative luminance after WCAG 2.1 (W3C 2018), common practice.
    def luminance(color):
        def channel(c):
            c = c / 255
            return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

        r, g, b = (int(color[i : i + 2], 16) for i in (1, 3, 5))
        return 0.2126 * channel(r) + 0.7152 * channel(g) + 0.0722 * channel(b)

    lum_t = luminance(SENSE_COLORS["transgression"])
    lum_r = luminance(SENSE_COLORS["regression"])
    contrast = (max(lum_t, lum_r) + 0.05) / (min(lum_t, lum_r) + 0.05)
    assert contrast > 2.0


def test_sld_layer_name_reads_1_0_and_rejects_junk():
    sld_1_0 = (
        f'<StyledLayerDescriptor xmlns="{SLD_NS}" version="1.0.0">'
        "<NamedLayer><Name>cores</Name></NamedLayer></StyledLayerDescriptor>"
    )
    assert sld_layer_name(sld_1_0) == "cores"
    with pytest.raises(ValueError, match="well-formed"):
        sld_layer_name("<not xml")
    with pytest.raises(ValueError, match="StyledLayerDescriptor"):
        sld_layer_name("<svg/>")
    with pytest.raises(ValueError, match="NamedLayer"):
        sld_layer_name(f'<StyledLayerDescriptor xmlns="{SLD_NS}"/>')


def test_public_names_are_listed():
    for name in styles.__all__:
        assert hasattr(styles, name)
