"""Figures without pyplot: a matplotlib ``Figure`` on its own Agg canvas, and saving.

No global pyplot state is touched, so drawing is safe in threads, in servers and in
tests, and never opens a window. Figures are sized for a report page: 7.5 inches wide
at 150 dpi (about 1100 pixels), with fonts of 8-10 points.

Examples
--------
>>> fig = new_figure(4.0, 3.0)
>>> fig.get_size_inches().tolist(), fig.dpi
([4.0, 3.0], 150.0)
"""

from __future__ import annotations

from collections.abc import Sequence
from pathlib import Path
from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from matplotlib.axes import Axes
    from matplotlib.figure import Figure

__all__ = [
    "FIGURE_FORMATS",
    "REPORT_DPI",
    "REPORT_WIDTH_IN",
    "axes_or_new",
    "figure_style",
    "new_figure",
    "plain_text",
    "plain_texts",
    "rgba_at",
    "save_figure",
]

REPORT_DPI = 150.0
"""Resolution of saved raster figures (dots per inch)."""

REPORT_WIDTH_IN = 7.5
"""Width of a full-page figure (inches)."""

FIGURE_FORMATS = ("png", "pdf", "svg")
"""Formats :func:`save_figure` accepts."""

_RC = {
    "font.size": 8.5,
    "axes.titlesize": 10,
    "axes.labelsize": 8.5,
    "xtick.labelsize": 7.5,
    "ytick.labelsize": 7.5,
    "legend.fontsize": 7.5,
    "legend.title_fontsize": 8,
    "axes.linewidth": 0.6,
    "svg.fonttype": "none",
    "pdf.fonttype": 42,
    # Names come from the user: "$" in a label is a dollar sign, never mathtext
    # (an unknown "\\cmd" between two "$" would stop the drawing).
    "text.parse_math": False,
    "text.usetex": False,
}

_LONGEST_TEXT_LINE = 200
"""Characters of one line of figure text kept before an ellipsis: a guard against a
runaway line (the figures shorten names themselves; an axis label that names a
transect and its spacing runs to about 120 characters)."""


def figure_style():
    """Context manager with paleomap's figure settings (font sizes, line widths).

    Every drawing function runs inside it, so text made there has report sizes without
    changing matplotlib's global settings.

    Examples
    --------
    >>> with figure_style():
    ...     fig = new_figure(3, 2)
    """
    import matplotlib as mpl

    return mpl.rc_context(_RC)


def new_figure(width_in: float = REPORT_WIDTH_IN, height_in: float = 5.5) -> Figure:
    """A new figure with its own Agg canvas (no pyplot).

    Parameters
    ----------
    width_in, height_in : float
        Size in inches.

    Returns
    -------
    matplotlib.figure.Figure

    Examples
    --------
    >>> new_figure(6, 4).canvas.get_width_height()
    (900, 600)
    """
    from matplotlib.backends.backend_agg import FigureCanvasAgg
    from matplotlib.figure import Figure

    with figure_style():
        fig = Figure(figsize=(width_in, height_in), dpi=REPORT_DPI)
    FigureCanvasAgg(fig)
    return fig


def axes_or_new(ax: Axes | None, width_in: float, height_in: float) -> Axes:
    """``ax`` itself, or the single axes of a new figure of the given size.

    Examples
    --------
    >>> axes_or_new(None, 3, 2).figure.get_size_inches().tolist()
    [3.0, 2.0]
    """
    if ax is not None:
        return ax
    with figure_style():
        return new_figure(width_in, height_in).add_subplot()


def plain_text(text: str, limit: int = _LONGEST_TEXT_LINE) -> str:
    """``text`` as a figure shows it: control characters dropped, long lines shortened.

    Examples
    --------
    >>> plain_text("mfs\\x07 1")
    'mfs 1'
    >>> plain_text("S" * 200, limit=10)
    'SSSSSSSSS…'
    """
    lines = []
    for line in str(text).split("\n"):
        line = "".join(c for c in line if c.isprintable())
        lines.append(line if len(line) <= limit else line[: limit - 1] + "…")
    return "\n".join(lines)


def plain_texts(fig: Figure) -> None:
    """Make every text of ``fig`` plain: no mathtext, no control characters, no runaway line.

    Called by :func:`save_figure`, so a user's name never breaks a figure, whichever
    drawing function placed it.

    Examples
    --------
    >>> fig = new_figure(2, 2)
    >>> t = fig.text(0.1, 0.5, r"$\\cmd$")
    >>> plain_texts(fig)
    >>> t.get_parse_math()
    False
    """
    from matplotlib.text import Text

    for t in fig.findobj(Text):
        t.set_parse_math(False)
        text = t.get_text()
        if text:
            clean = plain_text(text)
            if clean != text:
                t.set_text(clean)


def save_figure(fig: Figure, stem: str | Path, formats: Sequence[str] = ("png",)) -> list[Path]:
    """Save ``fig`` as ``stem.<format>`` for each format and return the paths.

    Parameters
    ----------
    fig : matplotlib.figure.Figure
    stem : str or Path
        Path without suffix; its folder is created.
    formats : sequence of str
        Any of ``png``, ``pdf``, ``svg``.

    Returns
    -------
    list of Path

    Raises
    ------
    ValueError
        For a format not in :data:`FIGURE_FORMATS`.

    Examples
    --------
    >>> save_figure(new_figure(2, 2), tmp_path / "blank", ["png"])  # doctest: +SKIP
    [PosixPath('.../blank.png')]
    """
    bad = [f for f in formats if f not in FIGURE_FORMATS]
    if bad:
        raise ValueError(f"figure format {bad[0]!r} is not one of {', '.join(FIGURE_FORMATS)}")
    stem = Path(stem)
    stem.parent.mkdir(parents=True, exist_ok=True)
    plain_texts(fig)
    out = []
    for fmt in formats:
        path = stem.with_name(f"{stem.name}.{fmt}")
        # Metadata without a date keeps repeated builds byte-comparable where the
        # format allows it.
        meta = {"Software": "paleomap"} if fmt == "png" else {"Creator": "paleomap"}
        if fmt == "svg":
            meta = {"Creator": "paleomap", "Date": None}
        elif fmt == "pdf":
            meta = {"Creator": "paleomap", "CreationDate": None}
        # zlib level 3 encodes in about half the time of the default 6, a few per cent
        # larger
        extra = {"pil_kwargs": {"compress_level": 3}} if fmt == "png" else {}
        fig.savefig(path, format=fmt, dpi=REPORT_DPI, metadata=meta, **extra)
        out.append(path)
    return out


def rgba_at(ax: Axes, easting, northing):
    """Rendered RGBA (0-255) of the pixels under data points of ``ax``.

    Draws the figure first. Used to check that a figure shows what it claims.

    Parameters
    ----------
    ax : matplotlib.axes.Axes
    easting, northing : array_like
        Data coordinates.

    Returns
    -------
    numpy.ndarray
        (n, 4) uint8.

    Examples
    --------
    >>> ax = new_figure(2, 2).add_subplot()
    >>> ax.set_facecolor("#ff0000")
    >>> rgba_at(ax, [0.5], [0.5]).tolist()
    [[255, 0, 0, 255]]
    """
    import numpy as np

    canvas = ax.figure.canvas
    canvas.draw()
    buf = np.asarray(canvas.buffer_rgba())
    xy = ax.transData.transform(np.column_stack([np.ravel(easting), np.ravel(northing)]))
    height = buf.shape[0]
    cols = np.clip(np.round(xy[:, 0] - 0.5).astype(int), 0, buf.shape[1] - 1)
    rows = np.clip(np.round(height - xy[:, 1] - 0.5).astype(int), 0, height - 1)
    return buf[rows, cols].copy()
