"""Layer styles as OGC SLD 1.1.0 documents (Symbology Encoding 1.1.0).

Each function returns one complete ``StyledLayerDescriptor`` document (UTF-8
XML text) with a single ``NamedLayer`` whose name is the layer's table name, as
desktop GIS expect when they load an ``.sld`` file or a style stored in a
GeoPackage. The documents follow the SLD profile (OGC 05-078r4) of Symbology
Encoding (OGC 05-077r4): ``sld:`` for the layer and style wrappers, ``se:`` for
rules and symbolizers, ``ogc:`` (Filter Encoding 1.1) for the rule filters.

Generic builders: :func:`fill_sld`, :func:`categorized_fill_sld`, :func:`line_sld`,
:func:`categorized_line_sld`, :func:`point_sld`, :func:`categorized_point_sld`. A
category is a ``(value, label, color)`` tuple: features whose field equals
``value`` are drawn in ``color`` and listed in the legend as ``label``.

:func:`layer_styles` gives the styles of paleomap's own layers. Colours used
besides the belt colours (which come from the facies scheme):

- shoreline shifts by ``sense`` (:data:`SENSE_COLORS`): transgression (landward)
  blue ``#0072b2``, regression (seaward) orange ``#e69f00``, stillstand grey
  ``#8c8c8c``, uncertain (P10-P90 spans zero) pale grey ``#d9d9d9``. Blue and
  orange are taken from the colour-blind-safe set of Okabe & Ito (2008, "Color
  Universal Design"); they differ in lightness and along the blue-yellow axis,
  which deuteranopes and protanopes keep, and the sea-ward /
  land-ward reading (water blue, sand orange) matches the belt palette;
- shorelines in the palette's shoreline red, the shoreline band the same red
  at 30 % opacity, transects dark grey dashed, cores white circles with a dark
  outline, core contacts reddish-purple triangles (``#cc79a7``, Okabe & Ito 2008);
- suggested turnarounds as squares by ``kind`` (:data:`TURNAROUND_COLORS`): maximum
  flooding blue, maximum regressive orange; gaps (no recovery) grey crosses; control
  points (the user's pseudo-cores, interpretations rather than observations) green
  stars (``#009e73``, Okabe & Ito 2008), so they are never read as cores.

Examples
--------
>>> sld = line_sld("shorelines", "#c0392b", width=1.8)
>>> sld_layer_name(sld)
'shorelines'
"""

from __future__ import annotations

import math
import re
import xml.etree.ElementTree as ET
from collections.abc import Sequence

from ..figures.palette import SHORELINE_COLOR

__all__ = [
    "OGC_NS",
    "SENSE_COLORS",
    "TURNAROUND_COLORS",
    "SE_NS",
    "SLD_MIME_TYPE",
    "SLD_NS",
    "belt_categories",
    "categorized_fill_sld",
    "categorized_line_sld",
    "categorized_point_sld",
    "fill_sld",
    "layer_styles",
    "line_sld",
    "point_sld",
    "sld_layer_name",
]

SLD_NS = "http://www.opengis.net/sld"
SE_NS = "http://www.opengis.net/se"
OGC_NS = "http://www.opengis.net/ogc"
_XLINK_NS = "http://www.w3.org/1999/xlink"
_XSI_NS = "http://www.w3.org/2001/XMLSchema-instance"
_SCHEMA_LOCATION = f"{SLD_NS} http://schemas.opengis.net/sld/1.1.0/StyledLayerDescriptor.xsd"

SLD_MIME_TYPE = "application/vnd.ogc.sld+xml"
"""MIME type of an SLD document (OGC 05-078r4)."""

SENSE_COLORS: dict[str, str] = {
    "transgression": "#0072b2",
    "regression": "#e69f00",
    "stillstand": "#8c8c8c",
    "uncertain": "#d9d9d9",
}
"""Colours of shoreline shifts by sense (Okabe & Ito 2008 blue and orange, a grey, and a
pale grey where the P10-P90 range of the shift spans zero)."""

_SENSE_LABELS = {
    "transgression": "Transgression (landward)",
    "regression": "Regression (seaward)",
    "stillstand": "Stillstand",
    "uncertain": "Uncertain (P10-P90 spans zero)",
}

TURNAROUND_COLORS: dict[str, str] = {
    "maximum flooding": "#0072b2",
    "maximum regressive": "#e69f00",
}
"""Colours of suggested turnarounds by kind: the transgression blue at a maximum flooding
surface (the end of a transgression), the regression orange at a maximum regressive one."""

_GAP_COLOR = "#8c8c8c"
_CONTROL_COLOR = "#009e73"

# The marks every SE renderer knows (OGC 05-077r4, 11.3.2).
_WELL_KNOWN_MARKS = ("square", "circle", "triangle", "star", "cross", "x")
_HEX = re.compile(r"^#[0-9a-fA-F]{6}$")

_TRANSECT_COLOR = "#404040"
_BELT_STROKE = "#4d4d4d"
_CORE_STROKE = "#1a1a1a"
_CONTACT_COLOR = "#cc79a7"

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


# ------------------------------------------------------------------ checking input


def _check_name(what: str, name: str) -> None:
    if not isinstance(name, str) or not name.strip():
        raise ValueError(f"{what} must be a non-empty string, got {name!r}")


def _check_color(color: str) -> str:
    if not isinstance(color, str) or not _HEX.match(color):
        raise ValueError(f"colour must be '#rrggbb', got {color!r}")
    return color.lower()


def _check_fraction(what: str, value: float) -> float:
    value = float(value)
    if not 0.0 <= value <= 1.0:
        raise ValueError(f"{what} must be between 0 and 1, got {value!r}")
    return value


def _check_positive(what: str, value: float) -> float:
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{what} must be a positive number, got {value!r}")
    return value


def _check_dasharray(dasharray: Sequence[float] | None) -> str | None:
    if dasharray is None:
        return None
    values = [_check_positive("each dash length", d) for d in dasharray]
    if not values:
        raise ValueError("dasharray must hold at least one length, got an empty sequence")
    return " ".join(_num(v) for v in values)


def _check_categories(categories: Sequence[tuple[object, str, str]]) -> list[tuple[str, str, str]]:
    out = []
    seen: set[str] = set()
    if not categories:
        raise ValueError("categories must hold at least one (value, label, color) tuple")
    for item in categories:
        if len(item) != 3:
            raise ValueError(f"a category is a (value, label, color) tuple, got {item!r}")
        value, label, color = item
        literal = _literal(value)
        if literal in seen:
            raise ValueError(f"category value {value!r} is listed twice")
        seen.add(literal)
        _check_name("category label", label)
        out.append((literal, label, _check_color(color)))
    return out


def _literal(value: object) -> str:
    # Booleans are stored as 0/1 integers in a GeoPackage, so filter on those.
    if isinstance(value, bool):
        return "1" if value else "0"
    if isinstance(value, int | str):
        return str(value)
    if isinstance(value, float) and math.isfinite(value):
        return repr(value)
    raise ValueError(f"a category value must be a string, integer or finite number, got {value!r}")


def _num(value: float) -> str:
    return f"{value:g}"


# ------------------------------------------------------------------ building XML


def _document(layer: str, title: str | None, rules: list[ET.Element]) -> str:
    _check_name("layer", layer)
    root = ET.Element(
        _sld("StyledLayerDescriptor"),
        {"version": "1.1.0", f"{{{_XSI_NS}}}schemaLocation": _SCHEMA_LOCATION},
    )
    named = ET.SubElement(root, _sld("NamedLayer"))
    ET.SubElement(named, _se("Name")).text = layer
    style = ET.SubElement(named, _sld("UserStyle"))
    ET.SubElement(style, _se("Name")).text = layer
    desc = ET.SubElement(style, _se("Description"))
    ET.SubElement(desc, _se("Title")).text = title or layer
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


def _else_filter() -> ET.Element:
    return ET.Element(_se("ElseFilter"))


def _params(parent: ET.Element, tag: str, params: dict[str, str | None]) -> ET.Element:
    el = ET.SubElement(parent, _se(tag))
    for key, value in params.items():
        if value is not None:
            ET.SubElement(el, _se("SvgParameter"), {"name": key}).text = value
    return el


def _polygon_symbolizer(
    color: str, opacity: float, stroke_color: str | None, stroke_width: float
) -> ET.Element:
    sym = ET.Element(_se("PolygonSymbolizer"))
    _params(sym, "Fill", {"fill": color, "fill-opacity": _num(opacity)})
    if stroke_color is not None:
        _params(
            sym,
            "Stroke",
            {
                "stroke": stroke_color,
                "stroke-width": _num(stroke_width),
                "stroke-linejoin": "round",
            },
        )
    return sym


def _line_symbolizer(color: str, width: float, opacity: float, dasharray: str | None) -> ET.Element:
    sym = ET.Element(_se("LineSymbolizer"))
    _params(
        sym,
        "Stroke",
        {
            "stroke": color,
            "stroke-width": _num(width),
            "stroke-opacity": _num(opacity),
            "stroke-linejoin": "round",
            "stroke-linecap": "round",
            "stroke-dasharray": dasharray,
        },
    )
    return sym


def _point_symbolizer(
    color: str, size: float, shape: str, stroke_color: str | None, stroke_width: float
) -> ET.Element:
    sym = ET.Element(_se("PointSymbolizer"))
    graphic = ET.SubElement(sym, _se("Graphic"))
    mark = ET.SubElement(graphic, _se("Mark"))
    ET.SubElement(mark, _se("WellKnownName")).text = shape
    _params(mark, "Fill", {"fill": color})
    if stroke_color is not None:
        _params(mark, "Stroke", {"stroke": stroke_color, "stroke-width": _num(stroke_width)})
    ET.SubElement(graphic, _se("Size")).text = _num(size)
    return sym


def _categorized(layer, field, categories, title, other_color, make_symbolizer) -> str:
    _check_name("field", field)
    cats = _check_categories(categories)
    rules = [
        _rule(literal, label, make_symbolizer(color), _equal_filter(field, literal))
        for literal, label, color in cats
    ]
    if other_color is not None:
        rules.append(
            _rule("other", "Other", make_symbolizer(_check_color(other_color)), _else_filter())
        )
    return _document(layer, title, rules)


def _check_mark(shape: str) -> str:
    if shape not in _WELL_KNOWN_MARKS:
        raise ValueError(f"shape must be one of {', '.join(_WELL_KNOWN_MARKS)}; got {shape!r}")
    return shape


# ------------------------------------------------------------------ public builders


def fill_sld(
    layer: str,
    color: str,
    *,
    opacity: float = 0.3,
    stroke_color: str | None = None,
    stroke_width: float = 0.5,
    title: str | None = None,
) -> str:
    """One fill for every polygon of a layer.

    Parameters
    ----------
    layer : str
        Layer (table) name.
    color : str
        Fill colour ``#rrggbb``.
    opacity : float
        Fill opacity, 0 (clear) to 1 (solid); semi-transparent by default.
    stroke_color : str or None
        Outline colour; None draws no outline.
    stroke_width : float
        Outline width in pixels.
    title : str or None
        Style title shown in the GIS; the layer name if None.

    Returns
    -------
    str
        The SLD document.

    Examples
    --------
    >>> "fill-opacity" in fill_sld("shoreline_bands", "#c0392b", opacity=0.3)
    True
    """
    color = _check_color(color)
    opacity = _check_fraction("opacity", opacity)
    stroke = None if stroke_color is None else _check_color(stroke_color)
    width = _check_positive("stroke_width", stroke_width)
    sym = _polygon_symbolizer(color, opacity, stroke, width)
    return _document(layer, title, [_rule(layer, title or layer, sym, None)])


def categorized_fill_sld(
    layer: str,
    field: str,
    categories: Sequence[tuple[object, str, str]],
    *,
    opacity: float = 1.0,
    stroke_color: str | None = _BELT_STROKE,
    stroke_width: float = 0.26,
    title: str | None = None,
    other_color: str | None = None,
) -> str:
    """Polygons filled by the value of a field, one rule per category.

    Parameters
    ----------
    layer : str
        Layer (table) name.
    field : str
        Attribute whose value picks the category.
    categories : sequence of (value, label, color)
        One tuple per category, in legend order.
    opacity : float
        Fill opacity, 0 to 1.
    stroke_color : str or None
        Outline colour; None draws no outline.
    stroke_width : float
        Outline width in pixels.
    title : str or None
        Style title; the layer name if None.
    other_color : str or None
        If given, a last rule (``ElseFilter``) draws features matching no category.

    Returns
    -------
    str
        The SLD document.

    Examples
    --------
    >>> sld = categorized_fill_sld("facies_belts", "belt",
    ...                            [("sand", "Sand", "#d9b56e"), ("mud", "Mud", "#1d4f7c")])
    >>> sld.count("<se:Rule>")
    2
    """
    opacity = _check_fraction("opacity", opacity)
    stroke = None if stroke_color is None else _check_color(stroke_color)
    width = _check_positive("stroke_width", stroke_width)
    return _categorized(
        layer,
        field,
        categories,
        title,
        other_color,
        lambda c: _polygon_symbolizer(c, opacity, stroke, width),
    )


def line_sld(
    layer: str,
    color: str,
    *,
    width: float = 1.0,
    opacity: float = 1.0,
    dasharray: Sequence[float] | None = None,
    title: str | None = None,
) -> str:
    """One stroke for every line of a layer.

    Parameters
    ----------
    layer : str
        Layer (table) name.
    color : str
        Line colour ``#rrggbb``.
    width : float
        Line width in pixels.
    opacity : float
        Line opacity, 0 to 1.
    dasharray : sequence of float or None
        Dash and gap lengths in pixels (e.g. ``(6, 3)``); None for a solid line.
    title : str or None
        Style title; the layer name if None.

    Returns
    -------
    str
        The SLD document.

    Examples
    --------
    >>> "stroke-dasharray" in line_sld("transects", "#404040", dasharray=(6, 3))
    True
    """
    sym = _line_symbolizer(
        _check_color(color),
        _check_positive("width", width),
        _check_fraction("opacity", opacity),
        _check_dasharray(dasharray),
    )
    return _document(layer, title, [_rule(layer, title or layer, sym, None)])


def categorized_line_sld(
    layer: str,
    field: str,
    categories: Sequence[tuple[object, str, str]],
    *,
    width: float = 1.5,
    opacity: float = 1.0,
    dasharray: Sequence[float] | None = None,
    title: str | None = None,
    other_color: str | None = None,
) -> str:
    """Lines coloured by the value of a field, one rule per category.

    Parameters
    ----------
    layer : str
        Layer (table) name.
    field : str
        Attribute whose value picks the category.
    categories : sequence of (value, label, color)
        One tuple per category, in legend order.
    width : float
        Line width in pixels.
    opacity : float
        Line opacity, 0 to 1.
    dasharray : sequence of float or None
        Dash and gap lengths in pixels; None for solid lines.
    title : str or None
        Style title; the layer name if None.
    other_color : str or None
        If given, a last rule (``ElseFilter``) draws features matching no category.

    Returns
    -------
    str
        The SLD document.

    Examples
    --------
    >>> sld = categorized_line_sld("shoreline_shifts", "sense",
    ...                            [("regression", "Regression", "#e69f00")])
    >>> "PropertyIsEqualTo" in sld
    True
    """
    width = _check_positive("width", width)
    opacity = _check_fraction("opacity", opacity)
    dashes = _check_dasharray(dasharray)
    return _categorized(
        layer,
        field,
        categories,
        title,
        other_color,
        lambda c: _line_symbolizer(c, width, opacity, dashes),
    )


def point_sld(
    layer: str,
    color: str,
    *,
    size: float = 7.0,
    shape: str = "circle",
    stroke_color: str | None = _CORE_STROKE,
    stroke_width: float = 0.8,
    title: str | None = None,
) -> str:
    """One marker for every point of a layer.

    Parameters
    ----------
    layer : str
        Layer (table) name.
    color : str
        Marker fill ``#rrggbb``.
    size : float
        Marker size in pixels.
    shape : str
        A well-known mark: square, circle, triangle, star, cross or x.
    stroke_color : str or None
        Marker outline colour; None for no outline.
    stroke_width : float
        Outline width in pixels.
    title : str or None
        Style title; the layer name if None.

    Returns
    -------
    str
        The SLD document.

    Examples
    --------
    >>> "<se:WellKnownName>circle</se:WellKnownName>" in point_sld("cores", "#ffffff")
    True
    """
    stroke = None if stroke_color is None else _check_color(stroke_color)
    sym = _point_symbolizer(
        _check_color(color),
        _check_positive("size", size),
        _check_mark(shape),
        stroke,
        _check_positive("stroke_width", stroke_width),
    )
    return _document(layer, title, [_rule(layer, title or layer, sym, None)])


def categorized_point_sld(
    layer: str,
    field: str,
    categories: Sequence[tuple[object, str, str]],
    *,
    size: float = 7.0,
    shape: str = "circle",
    stroke_color: str | None = _CORE_STROKE,
    stroke_width: float = 0.8,
    title: str | None = None,
    other_color: str | None = None,
) -> str:
    """Point markers coloured by the value of a field, one rule per category.

    Parameters
    ----------
    layer : str
        Layer (table) name.
    field : str
        Attribute whose value picks the category.
    categories : sequence of (value, label, color)
        One tuple per category, in legend order.
    size : float
        Marker size in pixels.
    shape : str
        A well-known mark: square, circle, triangle, star, cross or x.
    stroke_color : str or None
        Marker outline colour; None for no outline.
    stroke_width : float
        Outline width in pixels.
    title : str or None
        Style title; the layer name if None.
    other_color : str or None
        If given, a last rule (``ElseFilter``) draws features matching no category.

    Returns
    -------
    str
        The SLD document.

    Examples
    --------
    >>> sld = categorized_point_sld("core_slices", "belt", [("silt", "Silt", "#6fb7b0")])
    >>> "PointSymbolizer" in sld
    True
    """
    size = _check_positive("size", size)
    shape = _check_mark(shape)
    stroke = None if stroke_color is None else _check_color(stroke_color)
    width = _check_positive("stroke_width", stroke_width)
    return _categorized(
        layer,
        field,
        categories,
        title,
        other_color,
        lambda c: _point_symbolizer(c, size, shape, stroke, width),
    )


def belt_categories(scheme) -> list[tuple[str, str, str]]:
    """``(id, label, color)`` of every belt of a facies scheme, proximal first.

    Parameters
    ----------
    scheme : paleomap.scheme.Scheme
        The facies scheme.

    Returns
    -------
    list of (str, str, str)
        Categories for the ``belt`` field of belt and core layers.

    Examples
    --------
    >>> from paleomap.scheme import builtin_scheme
    >>> belt_categories(builtin_scheme("shoreface_shelf"))[0][0]
    'alluvial_plain'
    """
    return [(b.id, b.label or b.id, b.color) for b in scheme.belts]


def layer_styles(belts: Sequence[tuple[str, str, str]]) -> dict[str, str]:
    """SLD documents for paleomap's own spatial layers.

    Parameters
    ----------
    belts : sequence of (id, label, color)
        The belts of the facies scheme, proximal first (see :func:`belt_categories`).

    Returns
    -------
    dict of str to str
        Layer name to SLD document, for ``cores``, ``core_slices``, ``core_contacts``,
        ``turnarounds``, ``gaps``, ``control_points``, ``facies_belts``, ``shorelines``,
        ``shoreline_bands``, ``transects`` and ``shoreline_shifts``.

    Examples
    --------
    >>> styles = layer_styles([("sand", "Sand", "#d9b56e"), ("mud", "Mud", "#1d4f7c")])
    >>> sorted(styles)[:3]
    ['control_points', 'core_contacts', 'core_slices']
    """
    senses = [(s, _SENSE_LABELS[s], c) for s, c in SENSE_COLORS.items()]
    turns = [(k, k.capitalize() + " surface (suggested)", c) for k, c in TURNAROUND_COLORS.items()]
    return {
        "cores": point_sld("cores", "#ffffff", size=7, title="Cores"),
        "core_slices": categorized_point_sld(
            "core_slices", "belt", belts, size=7, title="Belt logged at each core and slice"
        ),
        "core_contacts": point_sld(
            "core_contacts",
            _CONTACT_COLOR,
            size=8,
            shape="triangle",
            title="Contacts between logged belts",
        ),
        "turnarounds": categorized_point_sld(
            "turnarounds", "kind", turns, size=8, shape="square", title="Suggested turnarounds"
        ),
        "gaps": point_sld("gaps", _GAP_COLOR, size=6, shape="x", title="Gaps (no recovery)"),
        # control points are interpretations, not cores: a different mark and colour
        "control_points": point_sld(
            "control_points", _CONTROL_COLOR, size=9, shape="star", title="Control points"
        ),
        "facies_belts": categorized_fill_sld("facies_belts", "belt", belts, title="Facies belts"),
        "shorelines": line_sld("shorelines", SHORELINE_COLOR, width=1.8, title="Shorelines"),
        "shoreline_bands": fill_sld(
            "shoreline_bands",
            SHORELINE_COLOR,
            opacity=0.3,
            stroke_color=SHORELINE_COLOR,
            stroke_width=0.4,
            title="Shoreline P10-P90 band",
        ),
        "transects": line_sld(
            "transects", _TRANSECT_COLOR, width=0.8, dasharray=(6, 3), title="Transects"
        ),
        "shoreline_shifts": categorized_line_sld(
            "shoreline_shifts", "sense", senses, width=2.0, title="Shoreline shifts"
        ),
    }


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
    >>> sld_layer_name(point_sld("cores", "#ffffff"))
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
