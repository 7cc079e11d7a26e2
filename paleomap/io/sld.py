"""Styles as OGC SLD 1.1.0 documents (Symbology Encoding 1.1.0).

:func:`to_sld` writes one :class:`~paleomap.io.styles.LayerStyle` as a complete
``StyledLayerDescriptor`` (UTF-8 XML text) with a single ``NamedLayer`` named after the
layer, as desktop GIS expect when they load an ``.sld`` file. The documents follow the SLD
profile (OGC 05-078r4) of Symbology Encoding (OGC 05-077r4): ``sld:`` for the layer and
style wrappers, ``se:`` for rules and symbolizers, ``ogc:`` (Filter Encoding 1.1) for the
rule filters.

Sizes. paleomap describes sizes in millimetres. SE 1.1.0 knows pixels, metres and feet;
its pixel is the "standardized rendering pixel" of 0.28 mm x 0.28 mm (OGC 05-077r4, from
memory), so a size of ``d`` mm is written as ``d / 0.28`` pixels (:data:`MM_PER_PIXEL`),
which renderers that honour the standard pixel draw at ``d`` mm.

Examples
--------
>>> from paleomap.io.styles import LayerStyle, Symbol
>>> sld = to_sld(LayerStyle("shorelines", "Shorelines", symbol=Symbol("line", "#c0392b")))
>>> sld_layer_name(sld)
'shorelines'
"""

from __future__ import annotations

import xml.etree.ElementTree as ET

from .styles import LayerStyle, Symbol, _literal

__all__ = [
    "MM_PER_PIXEL",
    "OGC_NS",
    "SE_NS",
    "SLD_MIME_TYPE",
    "SLD_NS",
    "sld_layer_name",
    "to_sld",
]

SLD_NS = "http://www.opengis.net/sld"
SE_NS = "http://www.opengis.net/se"
OGC_NS = "http://www.opengis.net/ogc"
_XLINK_NS = "http://www.w3.org/1999/xlink"
_XSI_NS = "http://www.w3.org/2001/XMLSchema-instance"
_SCHEMA_LOCATION = f"{SLD_NS} http://schemas.opengis.net/sld/1.1.0/StyledLayerDescriptor.xsd"

SLD_MIME_TYPE = "application/vnd.ogc.sld+xml"
"""MIME type of an SLD document (OGC 05-078r4)."""

MM_PER_PIXEL = 0.28
"""Size of the SE 1.1.0 standardized rendering pixel, in millimetres."""

for _prefix, _uri in (
    ("sld", SLD_NS),
    ("se", SE_NS),
    ("ogc", OGC_NS),
    ("xlink", _XLINK_NS),
    ("xsi", _XSI_NS),
):
    ET.register_namespace(_prefix, _uri)


def _sld(tag: str) -> str:
    return f"{{{SLD_NS}}}{tag}"


def _se(tag: str) -> str:
    return f"{{{SE_NS}}}{tag}"


def _ogc(tag: str) -> str:
    return f"{{{OGC_NS}}}{tag}"


def _px(mm: float) -> str:
    return f"{mm / MM_PER_PIXEL:.4g}"


def _num(value: float) -> str:
    return f"{value:g}"


def to_sld(style: LayerStyle) -> str:
    """The SLD 1.1.0 document of a layer style.

    Parameters
    ----------
    style : LayerStyle

    Returns
    -------
    str
        The document, with one rule per category (``PropertyIsEqualTo`` filters, an
        ``ElseFilter`` rule last for the ``other`` symbol) or one rule for a single symbol.

    Examples
    --------
    >>> from paleomap.io.styles import layer_styles
    >>> sld = to_sld(layer_styles([("sand", "Sand", "#d9b56e")])["facies_belts"])
    >>> sld.count("<se:Rule>")
    1
    """
    if style.symbol is not None:
        rules = [_rule(style.layer, style.title, _symbolizer(style.symbol), None)]
    else:
        rules = [
            _rule(
                _literal(c.value),
                c.label,
                _symbolizer(c.symbol),
                _equal_filter(style.field, _literal(c.value)),
            )
            for c in style.categories
        ]
        if style.other is not None:
            rules.append(
                _rule("other", "Other", _symbolizer(style.other), ET.Element(_se("ElseFilter")))
            )
    return _document(style.layer, style.title, rules)


def _document(layer: str, title: str, rules: list[ET.Element]) -> str:
    root = ET.Element(
        _sld("StyledLayerDescriptor"),
        {"version": "1.1.0", f"{{{_XSI_NS}}}schemaLocation": _SCHEMA_LOCATION},
    )
    named = ET.SubElement(root, _sld("NamedLayer"))
    ET.SubElement(named, _se("Name")).text = layer
    style = ET.SubElement(named, _sld("UserStyle"))
    ET.SubElement(style, _se("Name")).text = layer
    desc = ET.SubElement(style, _se("Description"))
    ET.SubElement(desc, _se("Title")).text = title
    fts = ET.SubElement(style, _se("FeatureTypeStyle"))
    fts.extend(rules)
    ET.indent(root, space="  ")
    body = ET.tostring(root, encoding="unicode")
    return '<?xml version="1.0" encoding="UTF-8"?>\n' + body + "\n"


def _rule(name: str, title: str, symbolizer: ET.Element, filt: ET.Element | None) -> ET.Element:
    rule = ET.Element(_se("Rule"))
    ET.SubElement(rule, _se("Name")).text = name
    desc = ET.SubElement(rule, _se("Description"))
    ET.SubElement(desc, _se("Title")).text = title
    if filt is not None:
        rule.append(filt)
    rule.append(symbolizer)
    return rule


def _equal_filter(field: str, literal: str) -> ET.Element:
    filt = ET.Element(_ogc("Filter"))
    eq = ET.SubElement(filt, _ogc("PropertyIsEqualTo"))
    ET.SubElement(eq, _ogc("PropertyName")).text = field
    ET.SubElement(eq, _ogc("Literal")).text = literal
    return filt


def _params(parent: ET.Element, tag: str, params: dict[str, str | None]) -> ET.Element:
    el = ET.SubElement(parent, _se(tag))
    for key, value in params.items():
        if value is not None:
            ET.SubElement(el, _se("SvgParameter"), {"name": key}).text = value
    return el


def _symbolizer(sym: Symbol) -> ET.Element:
    if sym.kind == "fill":
        el = ET.Element(_se("PolygonSymbolizer"))
        _params(el, "Fill", {"fill": sym.color, "fill-opacity": _num(sym.opacity)})
        if sym.stroke_color is not None:
            _params(
                el,
                "Stroke",
                {
                    "stroke": sym.stroke_color,
                    "stroke-width": _px(sym.stroke_width_mm),
                    "stroke-linejoin": "round",
                },
            )
        return el
    if sym.kind == "line":
        el = ET.Element(_se("LineSymbolizer"))
        dashes = None if sym.dash_mm is None else " ".join(_px(d) for d in sym.dash_mm)
        _params(
            el,
            "Stroke",
            {
                "stroke": sym.color,
                "stroke-width": _px(sym.stroke_width_mm),
                "stroke-opacity": _num(sym.opacity),
                "stroke-linejoin": "round",
                "stroke-linecap": "round",
                "stroke-dasharray": dashes,
            },
        )
        return el
    el = ET.Element(_se("PointSymbolizer"))
    graphic = ET.SubElement(el, _se("Graphic"))
    mark = ET.SubElement(graphic, _se("Mark"))
    ET.SubElement(mark, _se("WellKnownName")).text = sym.shape
    _params(mark, "Fill", {"fill": sym.color, "fill-opacity": _num(sym.opacity)})
    if sym.stroke_color is not None:
        _params(
            mark, "Stroke", {"stroke": sym.stroke_color, "stroke-width": _px(sym.stroke_width_mm)}
        )
    ET.SubElement(graphic, _se("Size")).text = _px(sym.size_mm)
    return el


def sld_layer_name(sld: str) -> str:
    """The name of the layer an SLD document styles.

    Parameters
    ----------
    sld : str
        An SLD 1.1.0 (or 1.0.0) document.

    Returns
    -------
    str
        The ``Name`` of its first ``NamedLayer``.

    Raises
    ------
    ValueError
        The text is not well-formed XML, not an SLD document, or names no layer.

    Examples
    --------
    >>> sld_layer_name('<StyledLayerDescriptor xmlns="http://www.opengis.net/sld">'
    ...                '<NamedLayer><Name>cores</Name></NamedLayer></StyledLayerDescriptor>')
    'cores'
    """
    try:
        root = ET.fromstring(sld.encode("utf-8") if isinstance(sld, str) else sld)
    except ET.ParseError as exc:
        raise ValueError(f"the style is not well-formed XML: {exc}") from exc
    if root.tag != _sld("StyledLayerDescriptor"):
        raise ValueError(
            f"the style's root element is {root.tag!r}, not an SLD StyledLayerDescriptor"
        )
    named = root.find(_sld("NamedLayer"))
    if named is None:
        raise ValueError("the SLD document has no NamedLayer")
    # SLD 1.1.0 puts the name in the se namespace, SLD 1.0.0 in the sld one.
    name = named.find(_se("Name"))
    if name is None:
        name = named.find(_sld("Name"))
    if name is None or not (name.text or "").strip():
        raise ValueError("the SLD NamedLayer has no Name")
    return name.text.strip()
