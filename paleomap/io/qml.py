"""Styles as QGIS QML documents, written from paleomap's own style description.

QML is QGIS's own open style format (XML). :func:`to_qml` writes one
:class:`~paleomap.io.styles.LayerStyle` (a ``singleSymbol`` or ``categorizedSymbol``
renderer, with the layer's time-slider settings), :class:`~paleomap.io.styles.PaletteStyle`
(the ``paletted`` raster renderer, one named class per value) or
:class:`~paleomap.io.styles.RampStyle` (``singlebandpseudocolor`` with an interpolated
ramp). Sizes are written in millimetres (unit ``MM``). QGIS loads the document as a
layer's default style from a GeoPackage's ``layer_styles`` table, or from a ``.qml`` file
of the same base name beside a raster.

Time. A style with :class:`~paleomap.io.styles.TimeFields` switches on the layer's
temporal properties: an instant read from one date-time field (QGIS mode 1), or a start
and an end field (mode 2); QGIS's temporal controller then shows each slice in turn.

Symbol layer properties are written both as an ``Option`` map (read by QGIS 3.16 and
later) and as legacy ``prop`` elements (read by older 3.x releases).

Examples
--------
>>> from paleomap.io.styles import LayerStyle, Symbol
>>> qml = to_qml(LayerStyle("cores", "Cores", symbol=Symbol("marker", "#ffffff")))
>>> 'type="singleSymbol"' in qml
True
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from ..figures.palette import hex_to_rgb
from .styles import LayerStyle, PaletteStyle, RampStyle, Symbol, _literal

__all__ = ["QML_VERSION", "TEMPORAL_MODES", "to_qml"]

QML_VERSION = "3.22.0"
"""QGIS version written in the document (the oldest the styles were checked with)."""

TEMPORAL_MODES = {"instant": "1", "start_end": "2"}
"""QGIS vector temporal modes: instant from one field, start and end from two fields."""

_MARKER_NAMES = {
    "circle": "circle",
    "square": "square",
    "triangle": "triangle",
    "star": "star",
    "cross": "cross",
    "x": "cross2",
}
_DOCTYPE = "<!DOCTYPE qgis PUBLIC 'http://mrcc.com/qgis.dtd' 'SYSTEM'>\n"


def to_qml(style: LayerStyle | PaletteStyle | RampStyle) -> str:
    """The QML document of a style.

    Parameters
    ----------
    style : LayerStyle, PaletteStyle or RampStyle

    Returns
    -------
    str
        The document, starting with QGIS's DOCTYPE line.

    Examples
    --------
    >>> from paleomap.io.styles import belt_palette
    >>> qml = to_qml(belt_palette([("sand", "Sand", "#d9b56e")]))
    >>> 'type="paletted"' in qml and 'label="Sand"' in qml
    True
    """
    if isinstance(style, LayerStyle):
        root = _vector(style)
    elif isinstance(style, PaletteStyle):
        root = _raster(style, _palette(style))
    elif isinstance(style, RampStyle):
        root = _raster(style, _ramp(style))
    else:
        raise TypeError(f"no QML for a {type(style).__name__}")
    ET.indent(root, space=" ")
    return _DOCTYPE + ET.tostring(root, encoding="unicode") + "\n"


# ------------------------------------------------------------------ vector layers


def _vector(style: LayerStyle) -> ET.Element:
    categories = "Symbology|Temporal" if style.time else "Symbology"
    root = ET.Element("qgis", {"version": QML_VERSION, "styleCategories": categories})
    if style.time is not None:
        mode = TEMPORAL_MODES["instant" if style.time.end is None else "start_end"]
        temporal = ET.SubElement(
            root,
            "temporal",
            {
                "enabled": "1",
                "mode": mode,
                "startField": style.time.start,
                "endField": style.time.end or "",
                "durationField": "",
                "durationUnit": "min",
                "fixedDuration": "0",
                "accumulate": "0",
                "limitMode": "0",
                "startExpression": "",
                "endExpression": "",
            },
        )
        fixed = ET.SubElement(temporal, "fixedRange")
        ET.SubElement(fixed, "start")
        ET.SubElement(fixed, "end")
    attrs = {"symbollevels": "0", "enableorderby": "0", "forceraster": "0"}
    if style.symbol is not None:
        renderer = ET.SubElement(root, "renderer-v2", {"type": "singleSymbol", **attrs})
        symbols = ET.SubElement(renderer, "symbols")
        symbols.append(_symbol("0", style.symbol))
    else:
        renderer = ET.SubElement(
            root, "renderer-v2", {"type": "categorizedSymbol", "attr": style.field, **attrs}
        )
        cats = ET.SubElement(renderer, "categories")
        symbols = ET.SubElement(renderer, "symbols")
        for i, cat in enumerate(style.categories):
            ET.SubElement(
                cats,
                "category",
                {
                    "value": _literal(cat.value),
                    "label": cat.label,
                    "symbol": str(i),
                    "render": "true",
                },
            )
            symbols.append(_symbol(str(i), cat.symbol))
        if style.other is not None:
            # QGIS's catch-all category has an empty value.
            n = str(len(style.categories))
            ET.SubElement(
                cats, "category", {"value": "", "label": "Other", "symbol": n, "render": "true"}
            )
            symbols.append(_symbol(n, style.other))
    ET.SubElement(root, "blendMode").text = "0"
    ET.SubElement(root, "featureBlendMode").text = "0"
    ET.SubElement(root, "layerOpacity").text = "1"
    ET.SubElement(root, "layerGeometryType").text = {"marker": "0", "line": "1", "fill": "2"}[
        style.geometry_kind
    ]
    return root


def _rgba(color: str, opacity: float = 1.0) -> str:
    r, g, b = hex_to_rgb(color)
    return f"{r},{g},{b},{int(opacity * 255 + 0.5)}"


def _mm(value: float) -> str:
    return f"{value:g}"


def _symbol(name: str, sym: Symbol) -> ET.Element:
    el = ET.Element(
        "symbol",
        {"name": name, "type": sym.kind, "alpha": "1", "clip_to_extent": "1", "force_rhr": "0"},
    )
    if sym.kind == "fill":
        cls = "SimpleFill"
        props = {
            "color": _rgba(sym.color, sym.opacity),
            "style": "solid",
            "outline_color": _rgba(sym.stroke_color or sym.color),
            "outline_style": "solid" if sym.stroke_color is not None else "no",
            "outline_width": _mm(sym.stroke_width_mm),
            "outline_width_unit": "MM",
            "joinstyle": "round",
        }
    elif sym.kind == "line":
        cls = "SimpleLine"
        props = {
            "line_color": _rgba(sym.color, sym.opacity),
            "line_style": "solid",
            "line_width": _mm(sym.stroke_width_mm),
            "line_width_unit": "MM",
            "capstyle": "round",
            "joinstyle": "round",
            "use_custom_dash": "0" if sym.dash_mm is None else "1",
            "customdash": ";".join(_mm(d) for d in (sym.dash_mm or (5.0, 2.0))),
            "customdash_unit": "MM",
        }
    else:
        cls = "SimpleMarker"
        props = {
            "name": _MARKER_NAMES[sym.shape],
            "color": _rgba(sym.color, sym.opacity),
            "size": _mm(sym.size_mm),
            "size_unit": "MM",
            "outline_color": _rgba(sym.stroke_color or sym.color),
            "outline_style": "solid" if sym.stroke_color is not None else "no",
            "outline_width": _mm(sym.stroke_width_mm),
            "outline_width_unit": "MM",
            "joinstyle": "round",
        }
    layer = ET.SubElement(el, "layer", {"class": cls, "enabled": "1", "locked": "0", "pass": "0"})
    options = ET.SubElement(layer, "Option", {"type": "Map"})
    for key, value in props.items():
        ET.SubElement(options, "Option", {"name": key, "type": "QString", "value": value})
    for key, value in props.items():
        ET.SubElement(layer, "prop", {"k": key, "v": value})
    return el


# ------------------------------------------------------------------ rasters


def _raster(style: PaletteStyle | RampStyle, renderer: ET.Element) -> ET.Element:
    root = ET.Element("qgis", {"version": QML_VERSION, "styleCategories": "Symbology"})
    pipe = ET.SubElement(root, "pipe")
    pipe.append(renderer)
    ET.SubElement(pipe, "brightnesscontrast", {"brightness": "0", "contrast": "0", "gamma": "1"})
    ET.SubElement(pipe, "huesaturation", {"saturation": "0", "grayscaleMode": "0"})
    ET.SubElement(pipe, "rasterresampler", {"maxOversampling": "2"})
    ET.SubElement(root, "blendMode").text = "0"
    return root


def _palette(style: PaletteStyle) -> ET.Element:
    renderer = ET.Element(
        "rasterrenderer",
        {
            "type": "paletted",
            "band": str(style.band),
            "opacity": "1",
            "alphaBand": "-1",
            "nodataColor": "",
        },
    )
    ET.SubElement(renderer, "rasterTransparency")
    palette = ET.SubElement(renderer, "colorPalette")
    for value, label, color in style.classes:
        ET.SubElement(
            palette,
            "paletteEntry",
            {"value": str(int(value)), "color": color.lower(), "alpha": "255", "label": label},
        )
    return renderer


def _ramp(style: RampStyle) -> ET.Element:
    lo, hi = (f"{float(v):g}" for v in (style.stops[0][0], style.stops[-1][0]))
    renderer = ET.Element(
        "rasterrenderer",
        {
            "type": "singlebandpseudocolor",
            "band": str(style.band),
            "opacity": "1",
            "alphaBand": "-1",
            "nodataColor": "",
            "classificationMin": lo,
            "classificationMax": hi,
        },
    )
    ET.SubElement(renderer, "rasterTransparency")
    origin = ET.SubElement(renderer, "minMaxOrigin")
    # Fixed limits: a probability is drawn on 0-1 whatever the values present.
    ET.SubElement(origin, "limits").text = "None"
    ET.SubElement(origin, "extent").text = "WholeRaster"
    shader = ET.SubElement(renderer, "rastershader")
    ramp = ET.SubElement(
        shader,
        "colorrampshader",
        {
            "colorRampType": "INTERPOLATED",
            "classificationMode": "1",
            "clip": "0",
            "minimumValue": lo,
            "maximumValue": hi,
        },
    )
    labels = style.labels or tuple(f"{float(v):g}" for v, _ in style.stops)
    for (value, color), label in zip(style.stops, labels, strict=True):
        ET.SubElement(
            ramp,
            "item",
            {"value": f"{float(value):g}", "color": color.lower(), "alpha": "255", "label": label},
        )
    return renderer
