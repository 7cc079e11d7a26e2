"""Text on figures: names made safe to draw, shortened to fit, and labels kept apart.

Names come from the user's files (slices, surfaces, belts, cores, transects) and can be
long or hold characters the figure font has no glyph for (they would show as boxes) or
a ``$`` (which matplotlib would read as the start of mathematical text). Every name a
figure draws goes through :func:`clean_text` or :func:`short_name`; labels that would
run into each other are spread apart along one axis (:func:`spread`) or thinned
(:func:`thin`), and a text that must fit a width is cut with an ellipsis
(:func:`fit_text`).

Examples
--------
>>> short_name("Upper Kaldrith maximum flooding surface, northern shelf", 24)
'Upper Kaldrith maximum…'
>>> clean_text("cost $5")
'cost \\\\$5'
>>> spread([0.0, 0.1, 0.2, 5.0], gap=1.0).round(2).tolist()
[-0.9, 0.1, 1.1, 5.0]
>>> thin([0.0, 0.3, 1.2, 1.5, 3.0], gap=1.0)
[0, 2, 4]
"""

from __future__ import annotations

import functools
import logging
import unicodedata
from typing import TYPE_CHECKING

import numpy as np

if TYPE_CHECKING:
    from matplotlib.text import Text

__all__ = [
    "ELLIPSIS",
    "NAME_CHARS",
    "clean_text",
    "drop_overlapping",
    "fit_text",
    "short_name",
    "spread",
    "surface_labels",
    "thin",
]

log = logging.getLogger(__name__)

ELLIPSIS = "\u2026"
"""Marks a shortened name."""

NAME_CHARS = 24
"""Longest name (characters) drawn in a legend, on a tick or beside a line, unless a
figure allows more."""


@functools.lru_cache(maxsize=4)
def _glyphs(family: str) -> frozenset[int]:
    """Code points the font matplotlib uses for ``family`` can draw."""
    from matplotlib.font_manager import FontProperties, findfont
    from matplotlib.ft2font import FT2Font

    path = findfont(FontProperties(family=[family]), fallback_to_default=True)
    return frozenset(FT2Font(path).get_charmap())


def _drawable(ch: str, glyphs: frozenset[int]) -> str:
    if ch in "\n\t " or ord(ch) in glyphs:
        return ch
    # an accented letter the font lacks as one glyph: its base letter (NFKD)
    base = "".join(c for c in unicodedata.normalize("NFKD", ch) if not unicodedata.combining(c))
    if base and all(ord(c) in glyphs for c in base):
        return base
    return "?"


def clean_text(text) -> str:
    """``text`` as matplotlib draws it literally: no boxes, no mathematical text.

    Characters the figure font cannot draw become their unaccented letter where there
    is one, else ``?`` (logged); ``$`` is escaped so that matplotlib does not read the
    text as mathematics; control characters other than a newline become spaces.

    >>> clean_text("Ørsted \\u2013 Ü"), clean_text("\\u6d77\\u5cb8")
    ('Ørsted \\u2013 Ü', '??')
    """
    import matplotlib as mpl

    s = "" if text is None else str(text)
    s = "".join(" " if (unicodedata.category(c) == "Cc" and c != "\n") else c for c in s)
    family = mpl.rcParams["font.family"][0]
    glyphs = _glyphs(family)
    out = "".join(_drawable(c, glyphs) for c in s)
    if out != s and "?" in out:
        log.info("characters of %r have no glyph in the figure font; drawn as '?'", s)
    return out.replace("$", r"\$")


def short_name(text, max_chars: int = NAME_CHARS) -> str:
    """:func:`clean_text`, cut to ``max_chars`` characters with an ellipsis.

    >>> short_name("KS3"), short_name("a" * 30, 10)
    ('KS3', 'aaaaaaaaa…')
    """
    s = " ".join(clean_text(text).split("\n"))
    if len(s) <= max_chars:
        return s
    return s[: max(max_chars - 1, 1)].rstrip() + ELLIPSIS


def fit_text(artist: Text, width_px: float, renderer=None) -> bool:
    """Shorten ``artist``'s text with an ellipsis until it is at most ``width_px`` wide.

    Returns True when the text was shortened.

    Examples
    --------
    >>> from paleomap.figures.canvas import new_figure
    >>> fig = new_figure(2, 1)
    >>> t = fig.text(0, 0.5, "a long title that cannot fit in one inch of width")
    >>> fit_text(t, 150.0), t.get_text().endswith("\\u2026")
    (True, True)
    """
    renderer = renderer or artist.figure.canvas.get_renderer()
    full = artist.get_text()
    if artist.get_window_extent(renderer).width <= width_px:
        return False
    lo, hi = 0, len(full)  # longest prefix that fits lies in [lo, hi)
    while hi - lo > 1:
        mid = (lo + hi) // 2
        artist.set_text(full[:mid].rstrip() + ELLIPSIS)
        if artist.get_window_extent(renderer).width <= width_px:
            lo = mid
        else:
            hi = mid
    artist.set_text(full[:lo].rstrip() + ELLIPSIS if lo else ELLIPSIS)
    return True


def spread(values, gap: float, lo: float = -np.inf, hi: float = np.inf) -> np.ndarray:
    """Label positions along one axis at least ``gap`` apart, as near as possible to
    ``values`` and in their order.

    Runs of labels that are too close are moved as a block centred on where they
    want to be (least squares), and kept within ``[lo, hi]`` where that is long enough.

    Parameters
    ----------
    values : array_like
        Wanted positions.
    gap : float
        Least distance between neighbouring labels (a label's height).
    lo, hi : float
        Limits of the positions.

    Returns
    -------
    numpy.ndarray
        Positions, in the order of ``values``.

    Examples
    --------
    >>> spread([3.0, 0.0, 0.0], gap=1.0, lo=0.0).tolist()
    [3.0, 0.0, 1.0]
    """
    v = np.asarray(values, dtype=float)
    order = np.argsort(v, kind="stable")
    y = v[order]
    clusters: list[list] = []  # [first index, size, position of the first]
    for i, val in enumerate(y):
        clusters.append([i, 1, float(min(max(val, lo), hi))])
        while True:
            last = clusters[-1]
            start, n = last[0], last[1]
            if len(clusters) > 1:
                prev = clusters[-2]
                if prev[2] + prev[1] * gap > last[2] + 1e-9:
                    start, n = prev[0], prev[1] + last[1]
                    clusters.pop()
                    clusters[-1] = [start, n, 0.0]
                    last = clusters[-1]
                else:
                    break
            first = float(np.mean(y[start : start + n] - gap * np.arange(n)))
            first = min(first, hi - (n - 1) * gap)
            first = max(first, lo)
            last[2] = first
            if len(clusters) == 1:
                break
    out = np.empty_like(y)
    for start, n, first in clusters:
        out[start : start + n] = first + gap * np.arange(n)
    res = np.empty_like(out)
    res[order] = out
    return res


def thin(values, gap: float) -> list[int]:
    """Indices of the values to label so that labelled values are ``gap`` apart.

    Values are taken in the order given (sorted); the first and the last are always
    kept, the last in place of any kept value closer than ``gap`` to it.

    >>> thin([0, 1, 2, 3], 1.5), thin([5.0], 1.0)
    ([0, 3], [0])
    """
    v = np.asarray(values, dtype=float)
    if v.size == 0:
        return []
    keep = [0]
    for i in range(1, v.size):
        if abs(v[i] - v[keep[-1]]) >= gap:
            keep.append(i)
    last = v.size - 1
    if keep[-1] != last:
        while len(keep) > 1 and abs(v[last] - v[keep[-1]]) < gap:
            keep.pop()
        keep.append(last)
    return keep


def drop_overlapping(texts, renderer=None, keep=()) -> int:
    """Hide each text that overlaps one kept before it; return how many were hidden.

    Texts are taken in the order given, so list the most important first. ``keep`` are
    texts that are always kept (checked against, never hidden).

    Examples
    --------
    >>> from paleomap.figures.canvas import new_figure
    >>> fig = new_figure(2, 1)
    >>> a, b = fig.text(0.1, 0.5, "first"), fig.text(0.12, 0.5, "second")
    >>> drop_overlapping([a, b]), b.get_visible()
    (1, False)
    """
    texts = list(texts)
    if not texts:
        return 0
    renderer = renderer or texts[0].figure.canvas.get_renderer()
    kept = [t.get_window_extent(renderer) for t in keep if t.get_visible()]
    hidden = 0
    for t in texts:
        if not t.get_visible() or not t.get_text().strip():
            continue
        box = t.get_window_extent(renderer)
        if any(box.overlaps(k) for k in kept):
            t.set_visible(False)
            hidden += 1
        else:
            kept.append(box)
    return hidden


def surface_labels(
    ax, values, texts, *, colors=None, fontsize: float = 7.0, pad_pt: float = 3.0
) -> list:
    """Labels beside the right edge of ``ax`` at data heights ``values``, spread apart so
    that none touches another, each joined to its height by a thin leader.

    Call it after the axes' limits are set. Values outside the view get no label.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    values : sequence of float
        Heights in data coordinates (for example surface depths or ages).
    texts : sequence of str
        The labels (already shortened).
    colors : sequence of colours, optional
        One per label; default near-black.
    fontsize : float
        Points.
    pad_pt : float
        Gap between the axes' right edge and the labels (room for the leaders), points.
        A label longer than the room left to the figure's edge is cut with an ellipsis.

    Returns
    -------
    list of matplotlib.text.Annotation

    Examples
    --------
    >>> from paleomap.figures.canvas import new_figure
    >>> ax = new_figure(3, 3).add_axes((0.1, 0.1, 0.6, 0.8))
    >>> ax.set_ylim(0, 100)
    (0.0, 100.0)
    >>> labels = surface_labels(ax, [50.0, 50.5], ["a", "b"])
    >>> len(labels)
    2
    """
    from matplotlib.transforms import blended_transform_factory

    from ..palette import EDGE_COLOR, MUTED_COLOR

    fig = ax.figure
    values = np.asarray(values, dtype=float)
    colors = list(colors) if colors is not None else [EDGE_COLOR] * len(values)
    lo_v, hi_v = sorted(ax.get_ylim())
    inside = np.flatnonzero((values >= lo_v) & (values <= hi_v))
    if inside.size == 0:
        return []
    box = ax.get_window_extent(fig.canvas.get_renderer())
    x0 = ax.get_xlim()[0]
    y_px = ax.transData.transform(np.column_stack([np.full(inside.size, x0), values[inside]]))[:, 1]
    gap = fontsize * 1.25 * fig.dpi / 72.0
    placed = spread(y_px, gap, lo=box.y0 - gap, hi=box.y1 + gap)
    w, h = fig.canvas.get_width_height()
    x_px = box.x1 + pad_pt * fig.dpi / 72.0
    renderer = fig.canvas.get_renderer()
    edge = blended_transform_factory(ax.transAxes, ax.transData)
    out = []
    for k, i in enumerate(inside):
        out.append(
            ax.annotate(
                texts[i],
                xy=(1.0, values[i]),
                xycoords=edge,
                xytext=(x_px / w, placed[k] / h),
                textcoords="figure fraction",
                fontsize=fontsize,
                color=colors[i],
                va="center",
                ha="left",
                annotation_clip=False,
                arrowprops=dict(
                    arrowstyle="-", color=MUTED_COLOR, linewidth=0.4, shrinkA=0, shrinkB=1
                ),
            )
        )
        # never past the figure's right edge
        fit_text(out[-1], w - x_px - 2.0, renderer)
    return out
