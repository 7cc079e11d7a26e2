"""paleomap's own description of how each deliverable is drawn.

A style here is plain data: :class:`LayerStyle` for a feature layer (one symbol, or one
symbol per value of a field, with the fields a GIS time slider uses), :class:`PaletteStyle`
for a class raster and :class:`RampStyle` for a continuous raster. Every size is in
millimetres on the page, so a map looks the same at any screen resolution and in print.
:mod:`paleomap.io.qml` writes them as QGIS's QML, :mod:`paleomap.io.sld` as OGC SLD 1.1.0;
both encodings come from the same description, so they cannot drift apart.

Colours besides the belt colours (which come from the facies scheme):

- shoreline shifts by ``sense`` (:data:`SENSE_COLORS`): transgression (landward) blue
  ``#0072b2``, regression (seaward) orange ``#e69f00``, stillstand grey ``#8c8c8c``. Blue and
  orange are from the colour-blind-safe set of Okabe & Ito (2008, "Color Universal
  Design"); they differ in lightness and along the blue-yellow axis, which deuteranopes and
  protanopes keep, and the reading (water blue, sand orange) matches the belt palette;
- shorelines in the palette's shoreline red, the shoreline band the same red at 30 %
  opacity, transects dark grey dashed, cores white circles with a dark outline, core
  contacts reddish-purple triangles (``#cc79a7``, Okabe & Ito 2008); shifts whose P10-P90
  range spans zero (``uncertain``) pale grey;
- suggested turnarounds as squares by ``kind`` (:data:`TURNAROUND_COLORS`): maximum
  flooding blue, maximum regressive orange; gaps (no recovery) grey crosses; control
  points (the user's pseudo-cores, interpretations rather than observations) bluish-green
  stars (``#009e73``, Okabe & Ito 2008), so they are never read as cores;
- belt probabilities on viridis (:data:`PROBABILITY_STOPS`; perceptually uniform and
  readable with common colour-vision deficiencies, van der Walt & Smith 2015), the same
  ramp for every belt so that probabilities compare across files;
- the probability of the distal side of the tracked boundary (:data:`DISTAL_STOPS`) from
  the regression orange (proximal side certain) through mid grey (even odds) to the
  transgression blue (distal side certain): no stop is near white, so the ramp stays
  visible on a white page.

Examples
--------
>>> style = layer_styles([("sand", "Sand", "#d9b56e"), ("mud", "Mud", "#1d4f7c")])["facies_belts"]
>>> style.field, [c.value for c in style.categories]
('belt', ['sand', 'mud'])
>>> style.categories[0].symbol.stroke_width_mm
0.26
"""

from __future__ import annotations

import math
import re
from collections.abc import Sequence
from dataclasses import dataclass, field

from ..figures.palette import SHORELINE_COLOR

__all__ = [
    "DISTAL_STOPS",
    "PROBABILITY_STOPS",
    "SENSE_COLORS",
    "SHAPES",
    "TURNAROUND_COLORS",
    "Category",
    "LayerStyle",
    "PaletteStyle",
    "RampStyle",
    "Symbol",
    "TimeFields",
    "belt_categories",
    "belt_palette",
    "distal_ramp",
    "layer_styles",
    "probability_ramp",
]

SENSE_COLORS: dict[str, str] = {
    "transgression": "#0072b2",
    "regression": "#e69f00",
    "stillstand": "#8c8c8c",
    "uncertain": "#d9d9d9",
}
"""Colours of shoreline shifts by sense (Okabe & Ito 2008 blue and orange, and greys)."""

TURNAROUND_COLORS: dict[str, str] = {
    "maximum flooding": "#0072b2",
    "maximum regressive": "#e69f00",
}
"""Colours of suggested turnarounds by kind: the transgression blue at a maximum flooding
surface (the end of a transgression), the regression orange at a maximum regressive one."""

SHAPES = ("circle", "square", "triangle", "star", "cross", "x")
"""Marker shapes every style encoding knows (the SE 1.1.0 well-known marks)."""

PROBABILITY_STOPS: tuple[tuple[float, str], ...] = (
    (0.0, "#440154"),
    (0.25, "#3b528b"),
    (0.5, "#21918c"),
    (0.75, "#5ec962"),
    (1.0, "#fde725"),
)
"""(probability, colour) stops of the belt-probability ramp: matplotlib's viridis."""

DISTAL_STOPS: tuple[tuple[float, str], ...] = (
    (0.0, SENSE_COLORS["regression"]),
    (0.5, "#8c8c8c"),
    (1.0, SENSE_COLORS["transgression"]),
)
"""(probability, colour) stops of the distal-probability ramp: orange, grey, blue."""

_SENSE_LABELS = {
    "transgression": "Transgression (landward)",
    "regression": "Regression (seaward)",
    "stillstand": "Stillstand",
    "uncertain": "Uncertain (P10-P90 spans zero)",
}
_GAP_COLOR = "#8c8c8c"
# Control points are interpretations, not cores: a different mark and colour (Okabe & Ito
# 2008 bluish green).
_CONTROL_COLOR = "#009e73"
_KINDS = ("fill", "line", "marker")
_HEX = re.compile(r"^#[0-9a-fA-F]{6}$")

_TRANSECT_COLOR = "#404040"
_BELT_STROKE = "#4d4d4d"
_CORE_STROKE = "#1a1a1a"
_CONTACT_COLOR = "#cc79a7"


def _check_color(what: str, color: str) -> str:
    if not isinstance(color, str) or not _HEX.match(color):
        raise ValueError(f"{what} must be '#rrggbb', got {color!r}")
    return color.lower()


def _check_fraction(what: str, value: float) -> float:
    value = float(value)
    if not 0.0 <= value <= 1.0:
        raise ValueError(f"{what} must be between 0 and 1, got {value!r}")
    return value


def _check_positive(what: str, value: float) -> float:
    value = float(value)
    if not (math.isfinite(value) and value > 0):
        raise ValueError(f"{what} must be a positive number of millimetres, got {value!r}")
    return value


def _check_name(what: str, name: str) -> str:
    if not isinstance(name, str) or not name.strip():
        raise ValueError(f"{what} must be a non-empty string, got {name!r}")
    return name


@dataclass(frozen=True)
class Symbol:
    """How a feature is drawn; sizes in millimetres.

    Parameters
    ----------
    kind : {"fill", "line", "marker"}
        Polygon fill, line stroke or point marker.
    color : str
        ``#rrggbb`` of the fill, the line or the marker.
    opacity : float
        0 (clear) to 1 (solid), of the fill, line or marker.
    stroke_color : str or None
        Outline of a fill or marker; None draws none. Unused for lines.
    stroke_width_mm : float
        Width of a line, or of the outline of a fill or marker.
    size_mm : float
        Marker diameter.
    shape : str
        Marker shape, one of :data:`SHAPES`.
    dash_mm : tuple of float or None
        Dash and gap lengths of a line; None for a solid line.

    Examples
    --------
    >>> Symbol("line", "#404040", stroke_width_mm=0.3, dash_mm=(2.0, 1.0)).dash_mm
    (2.0, 1.0)
    """

    kind: str
    color: str
    opacity: float = 1.0
    stroke_color: str | None = None
    stroke_width_mm: float = 0.26
    size_mm: float = 2.0
    shape: str = "circle"
    dash_mm: tuple[float, ...] | None = None

    def __post_init__(self) -> None:
        if self.kind not in _KINDS:
            raise ValueError(f"symbol kind must be one of {', '.join(_KINDS)}; got {self.kind!r}")
        object.__setattr__(self, "color", _check_color("colour", self.color))
        object.__setattr__(self, "opacity", _check_fraction("opacity", self.opacity))
        if self.stroke_color is not None:
            object.__setattr__(
                self, "stroke_color", _check_color("stroke colour", self.stroke_color)
            )
        _check_positive("stroke width", self.stroke_width_mm)
        _check_positive("marker size", self.size_mm)
        if self.shape not in SHAPES:
            raise ValueError(f"shape must be one of {', '.join(SHAPES)}; got {self.shape!r}")
        if self.dash_mm is not None:
            dashes = tuple(_check_positive("each dash length", d) for d in self.dash_mm)
            if not dashes:
                raise ValueError("dash_mm must hold at least one length, got an empty sequence")
            object.__setattr__(self, "dash_mm", dashes)


@dataclass(frozen=True)
class Category:
    """Features whose field equals ``value`` are drawn with ``symbol``, listed as ``label``."""

    value: object
    label: str
    symbol: Symbol

    def __post_init__(self) -> None:
        _literal(self.value)
        _check_name("category label", self.label)


@dataclass(frozen=True)
class TimeFields:
    """Date-time fields a GIS time slider reads: an instant, or a start and an end.

    Examples
    --------
    >>> TimeFields("slider_start", "slider_end").end
    'slider_end'
    """

    start: str
    end: str | None = None

    def __post_init__(self) -> None:
        _check_name("time field", self.start)
        if self.end is not None:
            _check_name("time end field", self.end)


@dataclass(frozen=True)
class LayerStyle:
    """The default style of one feature layer.

    Either one ``symbol`` for every feature, or a ``field`` with ``categories`` (and
    optionally an ``other`` symbol for values in no category).

    Parameters
    ----------
    layer : str
        Layer (table) name.
    title : str
        Style title shown in the GIS.
    symbol : Symbol or None
        The one symbol of a single-symbol style.
    field : str or None
        Attribute whose value picks the category.
    categories : tuple of Category
        One per value, in legend order.
    other : Symbol or None
        Symbol for features matching no category.
    time : TimeFields or None
        Date-time fields for a time slider, for layers that vary by slice.

    Examples
    --------
    >>> s = LayerStyle("cores", "Cores", symbol=Symbol("marker", "#ffffff"))
    >>> s.geometry_kind
    'marker'
    """

    layer: str
    title: str
    symbol: Symbol | None = None
    field: str | None = None
    categories: tuple[Category, ...] = ()
    other: Symbol | None = None
    time: TimeFields | None = None

    def __post_init__(self) -> None:
        _check_name("layer", self.layer)
        _check_name("title", self.title)
        object.__setattr__(self, "categories", tuple(self.categories))
        if (self.symbol is None) == (not self.categories):
            raise ValueError(
                f"style of {self.layer!r} needs either one symbol or categories, not both"
            )
        if self.categories:
            _check_name("field", self.field)
            seen = set()
            for cat in self.categories:
                literal = _literal(cat.value)
                if literal in seen:
                    raise ValueError(f"category value {cat.value!r} is listed twice")
                seen.add(literal)
        kinds = {s.kind for s in self.symbols}
        if len(kinds) != 1:
            raise ValueError(f"style of {self.layer!r} mixes symbol kinds {sorted(kinds)}")

    @property
    def symbols(self) -> list[Symbol]:
        """Every symbol of the style, in legend order (the ``other`` one last)."""
        if self.symbol is not None:
            return [self.symbol]
        out = [c.symbol for c in self.categories]
        return out + ([self.other] if self.other is not None else [])

    @property
    def geometry_kind(self) -> str:
        """``"fill"``, ``"line"`` or ``"marker"``."""
        return self.symbols[0].kind


@dataclass(frozen=True)
class PaletteStyle:
    """A class raster drawn one colour per value, each class with its name.

    ``classes`` holds ``(value, label, color)``; values not listed (nodata) are not drawn.

    Examples
    --------
    >>> PaletteStyle("Belt", ((0, "Sand", "#d9b56e"),)).classes[0][1]
    'Sand'
    """

    title: str
    classes: tuple[tuple[int, str, str], ...]
    band: int = 1

    def __post_init__(self) -> None:
        _check_name("title", self.title)
        if not self.classes:
            raise ValueError("a palette needs at least one class")
        values = [int(v) for v, _, _ in self.classes]
        if len(set(values)) != len(values):
            raise ValueError(f"palette values repeat: {values}")
        for _, label, color in self.classes:
            _check_name("class label", label)
            _check_color("class colour", color)


@dataclass(frozen=True)
class RampStyle:
    """One band of a continuous raster drawn on a colour ramp.

    ``stops`` holds ``(value, color)`` in increasing value; colours are interpolated
    between them, and values below the first or above the last take the end colours.

    Examples
    --------
    >>> probability_ramp("P(sand)").stops[0]
    (0.0, '#440154')
    """

    title: str
    stops: tuple[tuple[float, str], ...]
    band: int = 1
    labels: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        _check_name("title", self.title)
        if len(self.stops) < 2:
            raise ValueError("a ramp needs at least two stops")
        values = [float(v) for v, _ in self.stops]
        if any(b <= a for a, b in zip(values, values[1:], strict=False)):
            raise ValueError(f"ramp stops must increase, got {values}")
        for _, color in self.stops:
            _check_color("stop colour", color)
        if self.labels and len(self.labels) != len(self.stops):
            raise ValueError(f"got {len(self.labels)} labels for {len(self.stops)} stops")


def _literal(value: object) -> str:
    """A category value as the text both encodings compare the field against."""
    # Booleans are stored as 0/1 integers in a GeoPackage, so compare with those.
    if isinstance(value, bool):
        return "1" if value else "0"
    if isinstance(value, int | str):
        return str(value)
    if isinstance(value, float) and math.isfinite(value):
        return repr(value)
    raise ValueError(f"a category value must be a string, integer or finite number, got {value!r}")


def belt_categories(scheme) -> list[tuple[str, str, str]]:
    """``(id, label, color)`` of every belt of a facies scheme, proximal first.

    Examples
    --------
    >>> from paleomap.scheme import builtin_scheme
    >>> belt_categories(builtin_scheme("shoreface_shelf"))[0][0]
    'alluvial_plain'
    """
    return [(b.id, b.label or b.id, b.color) for b in scheme.belts]


def belt_palette(belts: Sequence[tuple[str, str, str]], title: str = "Belt") -> PaletteStyle:
    """The class-raster style of belt ranks: value = rank, one named class per belt.

    Examples
    --------
    >>> belt_palette([("sand", "Sand", "#d9b56e"), ("mud", "Mud", "#1d4f7c")]).classes[1]
    (1, 'Mud', '#1d4f7c')
    """
    return PaletteStyle(title, tuple((i, label, c) for i, (_, label, c) in enumerate(belts)))


def probability_ramp(title: str) -> RampStyle:
    """Single-band pseudocolour of a belt probability, 0 to 1 on viridis.

    Examples
    --------
    >>> probability_ramp("P(sand)").stops[-1]
    (1.0, '#fde725')
    """
    labels = tuple(f"{v:g}" for v, _ in PROBABILITY_STOPS)
    return RampStyle(title, PROBABILITY_STOPS, labels=labels)


def distal_ramp(title: str) -> RampStyle:
    """Single-band pseudocolour of the distal-side probability: orange, grey, blue.

    Examples
    --------
    >>> distal_ramp("P(distal)").labels
    ('0 (proximal side)', '0.5', '1 (distal side)')
    """
    return RampStyle(title, DISTAL_STOPS, labels=("0 (proximal side)", "0.5", "1 (distal side)"))


def layer_styles(
    belts: Sequence[tuple[str, str, str]],
    *,
    slice_time: TimeFields | None = None,
    pair_time: TimeFields | None = None,
) -> dict[str, LayerStyle]:
    """The default style of every spatial layer of paleomap's GeoPackage.

    Parameters
    ----------
    belts : sequence of (id, label, color)
        The belts of the facies scheme, proximal first (see :func:`belt_categories`).
    slice_time : TimeFields or None
        Time-slider field of the layers drawn per slice.
    pair_time : TimeFields or None
        Time-slider fields of the layers drawn per pair of slices (start = older slice).

    Returns
    -------
    dict of str to LayerStyle
        For ``cores``, ``core_slices``, ``core_contacts``, ``turnarounds``, ``gaps``,
        ``control_points``, ``facies_belts``, ``shorelines``, ``shoreline_bands``,
        ``transects`` and ``shoreline_shifts``; a build uses those of the layers it has.

    Examples
    --------
    >>> styles = layer_styles([("sand", "Sand", "#d9b56e"), ("mud", "Mud", "#1d4f7c")])
    >>> sorted(styles)[:3]
    ['control_points', 'core_contacts', 'core_slices']
    """

    def cats(kind: str, items, **symbol) -> tuple[Category, ...]:
        return tuple(Category(v, label, Symbol(kind, c, **symbol)) for v, label, c in items)

    def _stroke(width: float) -> dict:
        return {"stroke_color": _CORE_STROKE, "stroke_width_mm": width}

    senses = [(s, _SENSE_LABELS[s], c) for s, c in SENSE_COLORS.items()]
    turns = [(k, f"{k.capitalize()} surface (suggested)", c) for k, c in TURNAROUND_COLORS.items()]
    marker = {"size_mm": 2.4, "stroke_color": _CORE_STROKE, "stroke_width_mm": 0.2}
    styles = [
        LayerStyle("cores", "Cores", symbol=Symbol("marker", "#ffffff", **marker)),
        LayerStyle(
            "core_slices",
            "Belt logged at each core and slice",
            field="belt",
            categories=cats("marker", belts, **marker),
            time=slice_time,
        ),
        LayerStyle(
            "core_contacts",
            "Contacts between logged belts",
            symbol=Symbol(
                "marker",
                _CONTACT_COLOR,
                size_mm=2.8,
                shape="triangle",
                stroke_color=_CORE_STROKE,
                stroke_width_mm=0.2,
            ),
        ),
        LayerStyle(
            "turnarounds",
            "Suggested turnarounds",
            field="kind",
            categories=cats("marker", turns, size_mm=2.6, shape="square", **_stroke(0.15)),
            other=Symbol("marker", "#bdbdbd", size_mm=2.6, shape="square"),
            time=slice_time,
        ),
        LayerStyle(
            "gaps",
            "Gaps (no recovery)",
            symbol=Symbol("marker", _GAP_COLOR, size_mm=2.0, shape="x", stroke_color=_GAP_COLOR),
        ),
        LayerStyle(
            "control_points",
            "Control points",
            symbol=Symbol("marker", _CONTROL_COLOR, size_mm=3.0, shape="star", **_stroke(0.2)),
            time=slice_time,
        ),
        LayerStyle(
            "facies_belts",
            "Facies belts",
            field="belt",
            categories=cats("fill", belts, stroke_color=_BELT_STROKE, stroke_width_mm=0.26),
            time=slice_time,
        ),
        LayerStyle(
            "shorelines",
            "Shorelines",
            symbol=Symbol("line", SHORELINE_COLOR, stroke_width_mm=0.6),
            time=slice_time,
        ),
        LayerStyle(
            "shoreline_bands",
            "Shoreline P10-P90 band",
            symbol=Symbol(
                "fill",
                SHORELINE_COLOR,
                opacity=0.3,
                stroke_color=SHORELINE_COLOR,
                stroke_width_mm=0.15,
            ),
            time=slice_time,
        ),
        LayerStyle(
            "transects",
            "Transects",
            symbol=Symbol("line", _TRANSECT_COLOR, stroke_width_mm=0.3, dash_mm=(2.0, 1.0)),
        ),
        LayerStyle(
            "shoreline_shifts",
            "Shoreline shifts",
            field="sense",
            categories=cats("line", senses, stroke_width_mm=0.7),
            other=Symbol("line", "#bdbdbd", stroke_width_mm=0.4, dash_mm=(1.5, 1.0)),
            time=pair_time,
        ),
    ]
    return {s.layer: s for s in styles}
