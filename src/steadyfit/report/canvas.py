"""The drawing surface of steadyfit's figures: one layout pass, then marks placed in it.

A figure is laid out once, before anything is drawn: its panels' margins come
from the measured size of the tick labels, axis labels and titles (the text
metrics the SVG renderer itself uses), and every mark is then placed directly on
the figure in its panel's coordinates (a panel is a transform, not a matplotlib
``Axes``: the few marks a figure shows, without the hundred invisible helpers an
``Axes`` makes).  ``export`` then draws the figure once per format asked for.

Nothing here knows what a figure shows; ``report.figures`` builds the figures.
matplotlib is imported inside functions only.
"""

from __future__ import annotations

import functools
import io
from collections.abc import Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..labels import signed

# resolution of markers drawn as an image: screen quality in the SVG (inlined in the HTML
# report), print quality in the PDF
RASTER_DPI = {"svg": 150, "pdf": 300}

STYLE: dict[Any, Any] = {
    "svg.fonttype": "none",
    "svg.hashsalt": "steadyfit",
    "pdf.fonttype": 42,
    "font.family": "DejaVu Sans",
    "font.size": 9,
    # economy and column names are drawn as plain text: '$' never starts mathematics
    "text.parse_math": False,
}

# geometry, in points (1/72 inch)
FONT = 9.0  # tick labels, axis labels, panel titles
_SUPTITLE = 10.0  # the figure's title
NAME_FONT = 7.0  # names of economies beside their markers
_EDGE = 6.0  # blank border of the figure
_GAP = 14.0  # between two panels of a row
_TICK = 3.5  # tick length
_TICK_PAD = 3.5  # between a tick and its label
_LABEL_PAD = 4.0  # between tick labels and the axis label
_TITLE_PAD = 6.0  # between a panel and its title
_SPINE = 0.8  # line width of the axes and ticks
LINE_SPACING = 1.2  # line spacing
_MARGIN = 0.05  # data limits: this fraction of the data's range added on each side
_NBINS = 4  # at most about this many intervals between ticks
_SPARE = 0.06  # measured text widths are taken this much wider
_ROW_LABEL = 230.0  # widest row label of the share chart before it wraps
_MIN_PANEL = 100.0  # narrowest panel


# --- text metrics, ticks and limits -----------------------------------------------------



def text_size(text: str, size: float) -> tuple[float, float]:
    """Width and height in points of ``text`` (lines split at newlines) at ``size`` points."""
    if not text:
        return 0.0, 0.0
    lines = text.split("\n")
    width = max(_line_width(line, size) for line in lines)
    return width, size * (1.0 + LINE_SPACING * (len(lines) - 1)) + 0.25 * size


@functools.lru_cache(maxsize=4096)
def _line_width(line: str, size: float) -> float:
    """The width of one line of text, from the metrics the SVG renderer lays text out with,
    with ``_SPARE`` added (hinted rendering and a viewer's fallback font run wider)."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import text_to_path

    prop = FontProperties(family=STYLE["font.family"], size=size)
    width = float(text_to_path.get_text_width_height_descent(line, prop, False)[0])
    return width * (1.0 + _SPARE)


def wrap(text: str, size: float, width: float) -> str:
    """``text`` broken at spaces into lines no wider than ``width`` points (where possible)."""
    if text_size(text, size)[0] <= width:
        return text
    out: list[str] = []
    for para in text.split("\n"):
        line = ""
        for word in para.split(" "):
            trial = f"{line} {word}" if line else word
            if line and _line_width(trial, size) > width:
                out.append(line)
                line = word
            else:
                line = trial
        out.append(line)
    return "\n".join(out)


def limits(*arrays: Any) -> tuple[float, float]:
    """The data range of the arrays, widened by ``_MARGIN`` on each side."""
    values = np.concatenate([np.ravel(np.asarray(a, dtype=float)) for a in arrays])
    values = values[np.isfinite(values)]
    if values.size == 0:
        return 0.0, 1.0
    lo, hi = float(values.min()), float(values.max())
    if hi - lo <= 1e-12 * max(1.0, abs(lo), abs(hi)):
        pad = 0.5 if lo == 0 else 0.05 * abs(lo)
        return lo - pad, hi + pad
    pad = _MARGIN * (hi - lo)
    return lo - pad, hi + pad


def _ticks(lo: float, hi: float) -> list[tuple[float, str]]:
    """Round tick values inside [lo, hi] (at most about ``_NBINS`` intervals), each with its
    label: as few decimals as the values need, a true minus sign."""
    from matplotlib.ticker import MaxNLocator

    span = hi - lo
    for nbins in (_NBINS, 2 * _NBINS):  # at least three ticks where the range allows
        locs = [float(v) for v in MaxNLocator(nbins=nbins, steps=[1, 2, 2.5, 5, 10])
                .tick_values(lo, hi) if lo - 1e-9 * span <= v <= hi + 1e-9 * span]
        if len(locs) >= 3:
            break
    scale = max((abs(v) for v in locs), default=1.0) or 1.0
    decimals = next((d for d in range(10)
                     if all(abs(round(v, d) - v) <= 1e-9 * scale for v in locs)), 10)
    out = []
    for v in locs:
        v = 0.0 if abs(v) <= 1e-12 * scale else v
        out.append((v, signed(f"{v:.{decimals}f}")))
    return out


# --- panels: the one layout, then marks placed in it --------------------------------------


@dataclass
class Panel:
    """What one panel shows around its data: limits, ticks, axis labels and title."""

    xlim: tuple[float, float]
    ylim: tuple[float, float]
    xlabel: str = ""
    ylabel: str = ""
    title: str = ""
    yticks: list[tuple[float, str]] | None = None  # None: round values from the limits
    ytick_length: float = _TICK
    xticks: list[tuple[float, str]] = field(default_factory=list)
    # after the layout: the transforms of the data and of the panel's unit square
    data: Any = None
    frame: Any = None
    clip: Any = None

    def __post_init__(self) -> None:
        self.xticks = _ticks(*self.xlim)
        if self.yticks is None:
            self.yticks = _ticks(*self.ylim)


def add_text(fig: Any, x: float, y: float, s: str, transform: Any, **kw: Any) -> Any:
    from matplotlib.text import Text

    return fig.add_artist(Text(x, y, s, transform=transform, fontsize=kw.pop("fontsize", FONT),
                               **kw))


def layout(width: float, panel_height: float, title: str, panels: Sequence[Panel]) -> Any:
    """A matplotlib figure holding a row of panels, every label measured so that it fits.

    ``width`` and ``panel_height`` are inches.  Returns the figure; each panel gets its
    ``data`` transform (data to display), ``frame`` (the panel's unit square) and ``clip``
    box, with which the caller adds the marks."""
    from matplotlib.figure import Figure as MplFigure
    from matplotlib.patches import PathPatch
    from matplotlib.path import Path
    from matplotlib.transforms import (
        Bbox,
        BboxTransformFrom,
        BboxTransformTo,
        TransformedBbox,
        blended_transform_factory,
        offset_copy,
    )

    k = len(panels)
    W, ph = width * 72.0, panel_height * 72.0
    lefts, ylabel_at = [], []
    for p in panels:
        assert p.yticks is not None
        reach = max((text_size(s, FONT)[0] for _, s in p.yticks), default=0.0)
        reach += p.ytick_length + _TICK_PAD
        ylabel_at.append(reach + _LABEL_PAD)
        if p.ylabel:
            p.ylabel = wrap(p.ylabel, FONT, ph)
            reach += _LABEL_PAD + text_size(p.ylabel, FONT)[1]
        lefts.append(reach)
    # the last tick label of the right-most panel may stick out by half its width
    last = panels[-1].xticks
    right = _EDGE + max(8.0, text_size(last[-1][1], FONT)[0] / 2 if last else 0.0)
    pw = (W - _EDGE - sum(lefts) - _GAP * (k - 1) - right) / k
    if pw < _MIN_PANEL:  # labels too wide for the width asked: the figure grows instead
        W += k * (_MIN_PANEL - pw)
        pw = _MIN_PANEL
        width = W / 72.0
    heading = wrap(title, _SUPTITLE, W - 2 * _EDGE)
    tick_h = text_size("0", FONT)[1]
    title_h, bottom, xlabel_at = 0.0, 0.0, tick_h + _TICK + _TICK_PAD + _LABEL_PAD
    for p in panels:
        if p.title:
            p.title = wrap(p.title, FONT, pw)
            title_h = max(title_h, text_size(p.title, FONT)[1] + _TITLE_PAD)
        p.xlabel = wrap(p.xlabel, FONT, pw)
        bottom = max(bottom, tick_h + _TICK + _TICK_PAD
                     + (_LABEL_PAD + text_size(p.xlabel, FONT)[1] if p.xlabel else 0.0))
    top = _EDGE + text_size(heading, _SUPTITLE)[1] + 4.0 + title_h
    bottom += _EDGE
    H = top + ph + bottom

    fig = MplFigure(figsize=(width, H / 72.0))
    fig.patch.set_facecolor("white")
    add_text(fig, 0.5, 1.0, heading, offset_copy(fig.transFigure, fig, y=-_EDGE, units="points"),
          fontsize=_SUPTITLE, ha="center", va="top")
    x = _EDGE
    for p, left, yl in zip(panels, lefts, ylabel_at, strict=True):
        x += left
        box = TransformedBbox(Bbox.from_bounds(x / W, bottom / H, pw / W, ph / H),
                              fig.transFigure)
        x += pw + _GAP
        p.frame = BboxTransformTo(box)
        (x0, x1), (y0, y1) = p.xlim, p.ylim
        p.data = BboxTransformFrom(Bbox([[x0, y0], [x1, y1]])) + p.frame
        p.clip = box
        # the axes and their ticks as one path in the panel's unit square (the panel's size
        # in points is fixed, so a tick's length in points is a fixed fraction of it)
        assert p.yticks is not None
        fx = [(v - x0) / (x1 - x0) for v, _ in p.xticks]
        fy = [(v - y0) / (y1 - y0) for v, _ in p.yticks]
        down, left = _TICK / ph, p.ytick_length / pw
        verts = [(0.0, 1.0), (0.0, 0.0), (1.0, 0.0)]
        verts += [pt for f in fx for pt in ((f, 0.0), (f, -down))]
        if p.ytick_length:
            verts += [pt for f in fy for pt in ((0.0, f), (-left, f))]
        codes = [Path.MOVETO, Path.LINETO, Path.LINETO]
        codes += [Path.MOVETO, Path.LINETO] * ((len(verts) - 3) // 2)
        fig.add_artist(PathPatch(Path(verts, codes), transform=p.frame, fill=False,
                                 edgecolor="black", linewidth=_SPINE, joinstyle="miter",
                                 capstyle="butt", clip_on=False))
        along_x = blended_transform_factory(p.data, p.frame)
        along_y = blended_transform_factory(p.frame, p.data)
        below = offset_copy(along_x, fig, y=-(_TICK + _TICK_PAD), units="points")
        for v, s in p.xticks:
            add_text(fig, v, 0.0, s, below, ha="center", va="top")
        beside = offset_copy(along_y, fig, x=-(p.ytick_length + _TICK_PAD), units="points")
        for v, s in p.yticks:
            add_text(fig, 0.0, v, s, beside, ha="right", va="center_baseline")
        if p.xlabel:
            add_text(fig, 0.5, 0.0, p.xlabel,
                  offset_copy(p.frame, fig, y=-xlabel_at, units="points"),
                  ha="center", va="top")
        if p.ylabel:
            add_text(fig, 0.0, 0.5, p.ylabel, offset_copy(p.frame, fig, x=-yl, units="points"),
                  ha="center", va="bottom", rotation=90, rotation_mode="anchor")
        if p.title:
            add_text(fig, 0.5, 1.0, p.title,
                  offset_copy(p.frame, fig, y=_TITLE_PAD, units="points"),
                  ha="center", va="bottom")
    return fig




def place(fig: Any, p: Panel, artist: Any) -> Any:
    """Add a mark in the panel's data coordinates, clipped to the panel."""
    artist.set_transform(p.data)
    artist.set_clip_box(p.clip)
    return fig.add_artist(artist)


def add_line(fig: Any, p: Panel, x: Any, y: Any, **style: Any) -> Any:
    from matplotlib.lines import Line2D

    return place(fig, p, Line2D(x, y, **style))


def export(fig: Any, formats: Sequence[str], title: str) -> tuple[str, bytes | None]:
    """Draw the laid-out figure once per format: (the <svg> element or "", PDF bytes or None)."""
    svg, pdf = "", None
    if "svg" in formats:
        buf = io.StringIO()
        fig.savefig(buf, format="svg", dpi=RASTER_DPI["svg"],
                    metadata={"Date": None, "Title": title})
        text = buf.getvalue()
        svg = text[text.index("<svg"):]
    if "pdf" in formats:
        raw = io.BytesIO()
        fig.savefig(raw, format="pdf", dpi=RASTER_DPI["pdf"],
                    metadata={"CreationDate": None, "ModDate": None, "Title": title,
                              "Creator": "steadyfit"})
        pdf = raw.getvalue()
    return svg, pdf

