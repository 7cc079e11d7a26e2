"""Tests for paleomap.io.styles (the description), io.sld (SLD 1.1.0) and io.qml (QGIS QML).

The encodings are parsed back with xml.etree. QGIS itself reads the QML in
tests/test_gis_client.py.
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

import pytest

from paleomap.io import qml, sld, styles
from paleomap.io.qml import to_qml
from paleomap.io.sld import MM_PER_PIXEL, OGC_NS, SE_NS, SLD_NS, sld_layer_name, to_sld
from paleomap.io.styles import (
    DISTAL_STOPS,
    PROBABILITY_STOPS,
    SENSE_COLORS,
    Category,
    LayerStyle,
    PaletteStyle,
    RampStyle,
    Symbol,
    TimeFields,
    belt_categories,
    belt_palette,
    distal_ramp,
    layer_styles,
    probability_ramp,
)
from paleomap.scheme import builtin_scheme

NS = {"sld": SLD_NS, "se": SE_NS, "ogc": OGC_NS}
BELTS = [("sand", "Sand", "#d9b56e"), ("silt", "Silt", "#6fb7b0"), ("mud", "Mud", "#1d4f7c")]


def _parse_sld(text: str) -> ET.Element:
    assert text.startswith('<?xml version="1.0" encoding="UTF-8"?>')
    return ET.fromstring(text.encode("utf-8"))


def _parse_qml(text: str) -> ET.Element:
    doctype, body = text.split("\n", 1)
    assert doctype == "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>"
    return ET.fromstring(body.encode("utf-8"))


def _params(el: ET.Element) -> dict[str, str]:
    return {p.get("name"): p.text for p in el.findall("se:SvgParameter", NS)}


def _rules(root: ET.Element) -> list[ET.Element]:
    return root.findall("sld:NamedLayer/sld:UserStyle/se:FeatureTypeStyle/se:Rule", NS)


def _props(layer: ET.Element) -> dict[str, str]:
    options = {o.get("name"): o.get("value") for o in layer.findall("Option/Option")}
    legacy = {p.get("k"): p.get("v") for p in layer.findall("prop")}
    assert options == legacy
    return options


def _belts(**kw) -> LayerStyle:
    return layer_styles(BELTS, **kw)["facies_belts"]


# ------------------------------------------------------------------ the description


def test_layer_styles_cover_our_spatial_layers():
    got = layer_styles(belt_categories(builtin_scheme("shoreface_shelf")))
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
    scheme = builtin_scheme("shoreface_shelf")
    belts = got["facies_belts"]
    assert [c.value for c in belts.categories] == list(scheme.ids)
    assert [c.symbol.color for c in belts.categories] == [c.lower() for c in scheme.colors]
    assert 0 < got["shoreline_bands"].symbol.opacity < 1
    for name, style in got.items():
        assert style.layer == name


def test_time_fields_go_to_the_layers_that_vary_by_slice():
    got = layer_styles(BELTS, slice_time=TimeFields("t"), pair_time=TimeFields("t0", "t1"))
    timed = {k: v.time for k, v in got.items() if v.time is not None}
    assert timed == {
        "core_slices": TimeFields("t"),
        "turnarounds": TimeFields("t"),
        "control_points": TimeFields("t"),
        "facies_belts": TimeFields("t"),
        "shorelines": TimeFields("t"),
        "shoreline_bands": TimeFields("t"),
        "shoreline_shifts": TimeFields("t0", "t1"),
    }


def test_sense_colours_are_distinct_in_lightness():
    # Transgression and regression must differ in more than hue, so that readers
    # with a red-green deficiency and greyscale prints still tell them apart.
    # Relative luminance after WCAG 2.1 (W3C 2018), common practice.
    lum_t = _luminance(SENSE_COLORS["transgression"])
    lum_r = _luminance(SENSE_COLORS["regression"])
    contrast = (max(lum_t, lum_r) + 0.05) / (min(lum_t, lum_r) + 0.05)
    assert contrast > 2.0


def _luminance(color):
    def channel(c):
        c = c / 255
        return c / 12.92 if c <= 0.04045 else ((c + 0.055) / 1.055) ** 2.4

    r, g, b = (int(color[i : i + 2], 16) for i in (1, 3, 5))
    return 0.2126 * channel(r) + 0.7152 * channel(g) + 0.0722 * channel(b)


def test_distal_ramp_stays_visible_on_white():
    # WCAG 2.1 (W3C 2018) contrast against white, common practice: no stop of the
    # distal-probability ramp is paler than 1.5:1, so no part of it vanishes on a page.
    for _, color in DISTAL_STOPS:
        assert 1.05 / (_luminance(color) + 0.05) > 1.5, color
    assert distal_ramp("P").stops == DISTAL_STOPS


def test_probability_ramp_is_viridis():
    # matplotlib's viridis (matplotlib, as installed) at the ramp's stops, to 1/255.
    from matplotlib import colormaps

    cmap = colormaps["viridis"]
    for value, color in PROBABILITY_STOPS:
        want = [round(c * 255) for c in cmap(value)[:3]]
        got = [int(color[i : i + 2], 16) for i in (1, 3, 5)]
        assert max(abs(a - b) for a, b in zip(want, got, strict=True)) <= 1, value
    assert probability_ramp("P").stops == PROBABILITY_STOPS


@pytest.mark.parametrize(
    ("call", "match"),
    [
        (lambda: Symbol("line", "red"), "#rrggbb"),
        (lambda: Symbol("line", "#c0392b", stroke_width_mm=0), "positive"),
        (lambda: Symbol("line", "#c0392b", dash_mm=()), "at least one"),
        (lambda: Symbol("fill", "#c0392b", opacity=1.5), "between 0 and 1"),
        (lambda: Symbol("marker", "#ffffff", shape="hexagon"), "shape must be one of"),
        (lambda: Symbol("blob", "#ffffff"), "kind must be one of"),
        (lambda: LayerStyle("", "T", symbol=Symbol("line", "#000000")), "layer must be"),
        (lambda: LayerStyle("a", "T"), "either one symbol or categories"),
        (
            lambda: LayerStyle(
                "a", "T", field="f", categories=[Category("x", "X", Symbol("line", "#000000"))] * 2
            ),
            "twice",
        ),
        (
            lambda: LayerStyle(
                "a", "T", field="", categories=[Category("x", "X", Symbol("line", "#000000"))]
            ),
            "field must be",
        ),
        (lambda: Category(float("nan"), "A", Symbol("line", "#000000")), "finite"),
        (
            lambda: LayerStyle(
                "a",
                "T",
                field="f",
                categories=[Category("x", "X", Symbol("line", "#000000"))],
                other=Symbol("fill", "#000000"),
            ),
            "mixes symbol kinds",
        ),
        (lambda: PaletteStyle("T", ()), "at least one class"),
        (lambda: PaletteStyle("T", ((0, "a", "#000000"), (0, "b", "#000000"))), "repeat"),
        (lambda: RampStyle("T", ((0.0, "#000000"),)), "two stops"),
        (lambda: RampStyle("T", ((1.0, "#000000"), (0.0, "#ffffff"))), "increase"),
    ],
    ids=[
        "named-colour",
        "zero-width",
        "empty-dashes",
        "opacity",
        "shape",
        "kind",
        "empty-layer",
        "no-symbol",
        "duplicate-category",
        "empty-field",
        "nan-category",
        "mixed-kinds",
        "empty-palette",
        "repeated-palette",
        "one-stop",
        "decreasing-stops",
    ],
)
def test_bad_arguments(call, match):
    with pytest.raises(ValueError, match=match):
        call()


# ------------------------------------------------------------------ SLD


def test_sld_document_structure_follows_sld_1_1_0():
    # Element names and namespaces as in OGC 05-078r4 (SLD 1.1.0) and 05-077r4 (SE 1.1.0).
    root = _parse_sld(to_sld(_belts()))
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
    assert style.find("se:Description/se:Title", NS).text == "Facies belts"
    rules = _rules(root)
    assert len(rules) == 3
    for rule, (value, label, color) in zip(rules, BELTS, strict=True):
        # The SE 1.1.0 schema fixes the child order: Name, Description, Filter, symbolizer.
        assert [child.tag for child in rule] == [
            f"{{{SE_NS}}}Name",
            f"{{{SE_NS}}}Description",
            f"{{{OGC_NS}}}Filter",
            f"{{{SE_NS}}}PolygonSymbolizer",
        ]
        assert rule.find("se:Description/se:Title", NS).text == label
        eq = rule.find("ogc:Filter/ogc:PropertyIsEqualTo", NS)
        assert eq.find("ogc:PropertyName", NS).text == "belt"
        assert eq.find("ogc:Literal", NS).text == value
        assert _params(rule.find("se:PolygonSymbolizer/se:Fill", NS)) == {
            "fill": color,
            "fill-opacity": "1",
        }


def test_sld_sizes_are_millimetres_in_standard_pixels():
    # SE 1.1.0's standardized rendering pixel is 0.28 mm (OGC 05-077r4, from memory).
    assert MM_PER_PIXEL == 0.28
    root = _parse_sld(to_sld(_belts()))
    stroke = _params(root.find(".//se:PolygonSymbolizer/se:Stroke", NS))
    assert float(stroke["stroke-width"]) == pytest.approx(0.26 / 0.28, rel=1e-3)
    transects = _parse_sld(to_sld(layer_styles(BELTS)["transects"]))
    stroke = _params(transects.find(".//se:LineSymbolizer/se:Stroke", NS))
    assert [float(d) for d in stroke["stroke-dasharray"].split()] == pytest.approx(
        [2.0 / 0.28, 1.0 / 0.28], rel=1e-3
    )
    cores = _parse_sld(to_sld(layer_styles(BELTS)["cores"]))
    graphic = cores.find(".//se:PointSymbolizer/se:Graphic", NS)
    assert graphic.find("se:Mark/se:WellKnownName", NS).text == "circle"
    assert float(graphic.find("se:Size", NS).text) == pytest.approx(2.4 / 0.28, rel=1e-3)


def test_sld_else_rule_and_literals():
    style = LayerStyle(
        "facies_belts",
        "Belts",
        field="marine",
        categories=[
            Category(False, "Land", Symbol("fill", "#aa0000")),
            Category(True, "Sea", Symbol("fill", "#0000aa")),
        ],
        other=Symbol("fill", "#D9D9D9"),
    )
    rules = _rules(_parse_sld(to_sld(style)))
    # Booleans are stored as 0/1 in a GeoPackage (GDAL's boolean subtype).
    assert [r.find(".//ogc:Literal", NS).text for r in rules[:2]] == ["0", "1"]
    assert rules[-1].find("se:ElseFilter", NS) is not None
    assert _params(rules[-1].find("se:PolygonSymbolizer/se:Fill", NS))["fill"] == "#d9d9d9"


def test_sld_shift_colours_by_sense():
    root = _parse_sld(to_sld(layer_styles(BELTS)["shoreline_shifts"]))
    got = {
        r.find("ogc:Filter/ogc:PropertyIsEqualTo/ogc:Literal", NS).text: _params(
            r.find("se:LineSymbolizer/se:Stroke", NS)
        )["stroke"]
        for r in _rules(root)
        if r.find("ogc:Filter", NS) is not None
    }
    assert got == SENSE_COLORS
    # Values in no category (a sense added later, an empty one) are still drawn.
    assert _rules(root)[-1].find("se:ElseFilter", NS) is not None


def test_sld_text_is_escaped():
    style = LayerStyle(
        "facies_belts",
        "T",
        field="belt",
        categories=[Category("a&b", "Sand <fine>", Symbol("fill", "#000000"))],
    )
    rule = _rules(_parse_sld(to_sld(style)))[0]
    assert rule.find(".//ogc:Literal", NS).text == "a&b"
    assert rule.find("se:Description/se:Title", NS).text == "Sand <fine>"


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


# ------------------------------------------------------------------ QML


def test_qml_categorised_belts_in_millimetres():
    root = _parse_qml(to_qml(_belts()))
    assert root.tag == "qgis"
    renderer = root.find("renderer-v2")
    assert (renderer.get("type"), renderer.get("attr")) == ("categorizedSymbol", "belt")
    cats = renderer.findall("categories/category")
    assert [(c.get("value"), c.get("label")) for c in cats] == [(v, lab) for v, lab, _ in BELTS]
    symbols = {s.get("name"): s for s in renderer.findall("symbols/symbol")}
    for cat, (_, _, color) in zip(cats, BELTS, strict=True):
        symbol = symbols[cat.get("symbol")]
        assert symbol.get("type") == "fill"
        props = _props(symbol.find("layer"))
        r, g, b = (int(color[i : i + 2], 16) for i in (1, 3, 5))
        assert props["color"] == f"{r},{g},{b},255"
        assert (props["outline_width"], props["outline_width_unit"]) == ("0.26", "MM")


def test_qml_single_symbols_and_markers():
    got = layer_styles(BELTS)
    cores = _parse_qml(to_qml(got["cores"])).find("renderer-v2")
    assert cores.get("type") == "singleSymbol"
    props = _props(cores.find("symbols/symbol/layer"))
    assert (props["name"], props["size"], props["size_unit"]) == ("circle", "2.4", "MM")
    band = _props(_parse_qml(to_qml(got["shoreline_bands"])).find(".//symbol/layer"))
    assert band["color"].endswith(",77")  # 30 % of 255
    transects = _props(_parse_qml(to_qml(got["transects"])).find(".//symbol/layer"))
    assert (transects["use_custom_dash"], transects["customdash"]) == ("1", "2;1")
    assert transects["customdash_unit"] == "MM"


def test_qml_temporal_settings():
    got = layer_styles(
        BELTS, slice_time=TimeFields("slider_time"), pair_time=TimeFields("s0", "s1")
    )
    belts = _parse_qml(to_qml(got["facies_belts"]))
    assert "Temporal" in belts.get("styleCategories")
    t = belts.find("temporal")
    assert (t.get("enabled"), t.get("mode"), t.get("startField")) == ("1", "1", "slider_time")
    t = _parse_qml(to_qml(got["shoreline_shifts"])).find("temporal")
    assert (t.get("mode"), t.get("startField"), t.get("endField")) == ("2", "s0", "s1")
    assert _parse_qml(to_qml(got["cores"])).find("temporal") is None


def test_qml_paletted_raster():
    root = _parse_qml(to_qml(belt_palette(BELTS)))
    renderer = root.find("pipe/rasterrenderer")
    assert (renderer.get("type"), renderer.get("band")) == ("paletted", "1")
    entries = renderer.findall("colorPalette/paletteEntry")
    assert [(e.get("value"), e.get("label"), e.get("color")) for e in entries] == [
        (str(i), label, c) for i, (_, label, c) in enumerate(BELTS)
    ]


def test_qml_pseudocolour_raster():
    root = _parse_qml(to_qml(distal_ramp("P(distal)")))
    renderer = root.find("pipe/rasterrenderer")
    assert renderer.get("type") == "singlebandpseudocolor"
    assert (renderer.get("classificationMin"), renderer.get("classificationMax")) == ("0", "1")
    shader = renderer.find("rastershader/colorrampshader")
    assert shader.get("colorRampType") == "INTERPOLATED"
    items = [(float(i.get("value")), i.get("color")) for i in shader.findall("item")]
    assert items == list(DISTAL_STOPS)


def test_qml_refuses_other_objects():
    with pytest.raises(TypeError, match="no QML"):
        to_qml("facies_belts")


def test_public_names_are_listed():
    for module in (styles, sld, qml):
        for name in module.__all__:
            assert hasattr(module, name)
