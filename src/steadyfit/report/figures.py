"""Figures (matplotlib; SVG and PDF) drawn from findings only.

Every figure reads in greyscale: black and grey marks, hollow markers, dashed
reference lines, a light-grey shaded band.  SVG output keeps text as text; PDF
output embeds its fonts as TrueType (Type 42).  Both are deterministic (fixed
ids, no timestamp), so two runs give the same bytes.

Each figure is laid out once, before anything is drawn: its panels' margins
come from the measured size of the tick labels, axis labels and titles (the
text metrics the SVG renderer itself uses), and every mark is then placed
directly on the figure in its panel's coordinates (a panel is a transform, not
a matplotlib ``Axes``: the few marks a figure shows, without the hundred
invisible helpers an ``Axes`` makes).  A figure is then only drawn, once per
format asked for.  Large samples draw their markers as an image inside the
vector figure (see ``RASTER_ABOVE``).  ``all_figures`` draws the figures of a
run on two cores or more when there are enough of them (forked processes; the
output is byte-identical to the serial path, which remains for few figures, one
core, or where fork is unavailable).

matplotlib is imported inside functions only, so ``steadyfit --help`` stays fast.
"""

from __future__ import annotations

import contextlib
import functools
import io
import os
import pickle
import re
import sys
import threading
import warnings
from collections.abc import Callable, Iterator, Sequence
from dataclasses import dataclass, field
from typing import Any

import numpy as np

from ..findings import EquationFindings, Findings
from ..labels import quantity_label, signed

FORMATS = ("svg", "pdf")

# A scatter with more points than this draws its markers as an image inside the vector
# figure; axes, text and lines stay vector.  Common practice: beyond a few thousand markers
# an image is smaller and quicker to display than one vector shape per point.  The image's
# resolution: screen quality in the SVG (inlined in the HTML report), print quality in the PDF.
RASTER_ABOVE = 2000
RASTER_DPI = {"svg": 150, "pdf": 300}

# draw in parallel (forked processes) from this many figures on, given two cores or more;
# measured on the demo: a fork costs about what one or two figures take to draw
PARALLEL_FROM = 5

_STYLE: dict[Any, Any] = {
    "svg.fonttype": "none",
    "svg.hashsalt": "steadyfit",
    "pdf.fonttype": 42,
    "font.family": "DejaVu Sans",
    "font.size": 9,
    # economy and column names are drawn as plain text: '$' never starts mathematics
    "text.parse_math": False,
}

# geometry, in points (1/72 inch)
_FONT = 9.0  # tick labels, axis labels, panel titles
_SUPTITLE = 10.0  # the figure's title
_NAME = 7.0  # names of economies beside their markers
_EDGE = 6.0  # blank border of the figure
_GAP = 14.0  # between two panels of a row
_TICK = 3.5  # tick length
_TICK_PAD = 3.5  # between a tick and its label
_LABEL_PAD = 4.0  # between tick labels and the axis label
_TITLE_PAD = 6.0  # between a panel and its title
_SPINE = 0.8  # line width of the axes and ticks
_LINE = 1.2  # line spacing
_MARGIN = 0.05  # data limits: this fraction of the data's range added on each side
_NBINS = 4  # at most about this many intervals between ticks
_SPARE = 0.06  # measured text widths are taken this much wider
_ROW_LABEL = 230.0  # widest row label of the share chart before it wraps
_MIN_PANEL = 100.0  # narrowest panel


@dataclass(frozen=True)
class Figure:
    key: str  # file stem under figures/
    title: str
    caption: str
    svg: str  # the <svg> element alone, ready to inline ("" when SVG was not asked for)
    pdf: bytes | None = None  # the PDF file, when asked for

    def __repr__(self) -> str:
        kinds = [k for k, v in (("svg", self.svg), ("pdf", self.pdf)) if v]
        return f"Figure({self.key}: {self.title}; {', '.join(kinds) or 'nothing drawn'})"


# --- text metrics, ticks and limits -----------------------------------------------------


def _size(text: str, size: float) -> tuple[float, float]:
    """Width and height in points of ``text`` (lines split at newlines) at ``size`` points."""
    if not text:
        return 0.0, 0.0
    lines = text.split("\n")
    width = max(_line_width(line, size) for line in lines)
    return width, size * (1.0 + _LINE * (len(lines) - 1)) + 0.25 * size


@functools.lru_cache(maxsize=4096)
def _line_width(line: str, size: float) -> float:
    """The width of one line of text, from the metrics the SVG renderer lays text out with,
    with ``_SPARE`` added (hinted rendering and a viewer's fallback font run wider)."""
    from matplotlib.font_manager import FontProperties
    from matplotlib.textpath import text_to_path

    prop = FontProperties(family=_STYLE["font.family"], size=size)
    width = float(text_to_path.get_text_width_height_descent(line, prop, False)[0])
    return width * (1.0 + _SPARE)


def _wrap(text: str, size: float, width: float) -> str:
    """``text`` broken at spaces into lines no wider than ``width`` points (where possible)."""
    if _size(text, size)[0] <= width:
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


def _limits(*arrays: Any) -> tuple[float, float]:
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
class _Panel:
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


def _text(fig: Any, x: float, y: float, s: str, transform: Any, **kw: Any) -> Any:
    from matplotlib.text import Text

    return fig.add_artist(Text(x, y, s, transform=transform, fontsize=kw.pop("fontsize", _FONT),
                               **kw))


def _layout(width: float, panel_height: float, title: str, panels: Sequence[_Panel]) -> Any:
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
        reach = max((_size(s, _FONT)[0] for _, s in p.yticks), default=0.0)
        reach += p.ytick_length + _TICK_PAD
        ylabel_at.append(reach + _LABEL_PAD)
        if p.ylabel:
            p.ylabel = _wrap(p.ylabel, _FONT, ph)
            reach += _LABEL_PAD + _size(p.ylabel, _FONT)[1]
        lefts.append(reach)
    # the last tick label of the right-most panel may stick out by half its width
    last = panels[-1].xticks
    right = _EDGE + max(8.0, _size(last[-1][1], _FONT)[0] / 2 if last else 0.0)
    pw = (W - _EDGE - sum(lefts) - _GAP * (k - 1) - right) / k
    if pw < _MIN_PANEL:  # labels too wide for the width asked: the figure grows instead
        W += k * (_MIN_PANEL - pw)
        pw = _MIN_PANEL
        width = W / 72.0
    heading = _wrap(title, _SUPTITLE, W - 2 * _EDGE)
    tick_h = _size("0", _FONT)[1]
    title_h, bottom, xlabel_at = 0.0, 0.0, tick_h + _TICK + _TICK_PAD + _LABEL_PAD
    for p in panels:
        if p.title:
            p.title = _wrap(p.title, _FONT, pw)
            title_h = max(title_h, _size(p.title, _FONT)[1] + _TITLE_PAD)
        p.xlabel = _wrap(p.xlabel, _FONT, pw)
        bottom = max(bottom, tick_h + _TICK + _TICK_PAD
                     + (_LABEL_PAD + _size(p.xlabel, _FONT)[1] if p.xlabel else 0.0))
    top = _EDGE + _size(heading, _SUPTITLE)[1] + 4.0 + title_h
    bottom += _EDGE
    H = top + ph + bottom

    fig = MplFigure(figsize=(width, H / 72.0))
    fig.patch.set_facecolor("white")
    _text(fig, 0.5, 1.0, heading, offset_copy(fig.transFigure, fig, y=-_EDGE, units="points"),
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
            _text(fig, v, 0.0, s, below, ha="center", va="top")
        beside = offset_copy(along_y, fig, x=-(p.ytick_length + _TICK_PAD), units="points")
        for v, s in p.yticks:
            _text(fig, 0.0, v, s, beside, ha="right", va="center_baseline")
        if p.xlabel:
            _text(fig, 0.5, 0.0, p.xlabel,
                  offset_copy(p.frame, fig, y=-xlabel_at, units="points"),
                  ha="center", va="top")
        if p.ylabel:
            _text(fig, 0.0, 0.5, p.ylabel, offset_copy(p.frame, fig, x=-yl, units="points"),
                  ha="center", va="bottom", rotation=90, rotation_mode="anchor")
        if p.title:
            _text(fig, 0.5, 1.0, p.title,
                  offset_copy(p.frame, fig, y=_TITLE_PAD, units="points"),
                  ha="center", va="bottom")
    return fig


def _rings(fig: Any, p: _Panel, x: np.ndarray, y: np.ndarray, area: float) -> None:
    """Hollow black circles of ``area`` (points squared) at the points: one line of markers
    (one marker shape reused at each point); drawn as an image beyond ``RASTER_ABOVE``."""
    _line(fig, p, x, y, linestyle="none", marker="o", markersize=float(np.sqrt(area)),
          markerfacecolor="none", markeredgecolor="black", markeredgewidth=0.7,
          rasterized=len(x) > RASTER_ABOVE)


def _place(fig: Any, p: _Panel, artist: Any) -> Any:
    """Add a mark in the panel's data coordinates, clipped to the panel."""
    artist.set_transform(p.data)
    artist.set_clip_box(p.clip)
    return fig.add_artist(artist)


def _line(fig: Any, p: _Panel, x: Any, y: Any, **style: Any) -> Any:
    from matplotlib.lines import Line2D

    return _place(fig, p, Line2D(x, y, **style))


def _export(fig: Any, formats: Sequence[str], title: str) -> tuple[str, bytes | None]:
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


def _net_of_others(x: np.ndarray, y: np.ndarray, j: int) -> tuple[np.ndarray, np.ndarray]:
    """Column j of x and y, each minus its least-squares fit on the other columns."""
    others = np.delete(x, j, axis=1)
    proj = others @ np.linalg.lstsq(others, np.column_stack([y, x[:, j]]), rcond=None)[0]
    return x[:, j] - proj[:, 1], y - proj[:, 0]


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_-]+", "_", text).strip("_")


def _slope(value: float) -> str:
    return signed(f"{value:.3f}")


def _check_formats(formats: Sequence[str]) -> tuple[str, ...]:
    asked = tuple(dict.fromkeys(formats))
    unknown = [f for f in asked if f not in FORMATS]
    if unknown or not asked:
        raise ValueError(f"figure formats must be among {FORMATS}, got {tuple(formats)}")
    return asked


def _name_points(fig: Any, p: _Panel, x: np.ndarray, y: np.ndarray, names: Sequence[str],
                 chosen: Any) -> None:
    """Name the chosen points beside their markers: on the inward side first (so none runs
    off the figure), else on the other side or a line up or down, past the names already
    placed (so none covers another) and inside the panel."""
    from matplotlib.text import Annotation

    (x0, x1), (y0, y1) = p.xlim, p.ylim
    fw, fh = fig.get_size_inches() * 72.0
    box = p.clip.transformed(fig.transFigure.inverted())  # panel in figure fractions
    inside = (box.x0 * fw, box.y0 * fh, box.x1 * fw, box.y1 * fh)
    placed: list[tuple[float, float, float, float]] = []
    for i in chosen:
        px = inside[0] + (x[i] - x0) / (x1 - x0) * (inside[2] - inside[0])
        py = inside[1] + (y[i] - y0) / (y1 - y0) * (inside[3] - inside[1])
        w, h = _size(names[i], _NAME)
        inward_left = (x[i] - x0) / (x1 - x0) > 0.6
        high = (y[i] - y0) / (y1 - y0) > 0.88
        tried = []
        for step in (0, 1, -1, 2, -2, 3, -3):
            for to_left in (inward_left, not inward_left):
                dx = -3.0 if to_left else 3.0
                dy = (-3.0 - h if high else 3.0) + step * (h + 1.0)
                left = px + dx - w if to_left else px + dx
                tried.append((to_left, dx, dy, (left, py + dy, left + w, py + dy + h)))
        good = [t for t in tried
                if inside[0] <= t[3][0] and t[3][2] <= inside[2] and inside[1] <= t[3][1]
                and t[3][3] <= inside[3] and not any(
                    t[3][0] < b[2] and b[0] < t[3][2] and t[3][1] < b[3] and b[1] < t[3][3]
                    for b in placed)]
        to_left, dx, dy, spot = (good or tried)[0]
        placed.append(spot)
        fig.add_artist(Annotation(names[i], (float(x[i]), float(y[i])), xycoords=p.data,
                                  xytext=(dx, dy), textcoords="offset points",
                                  fontsize=_NAME, ha="right" if to_left else "left",
                                  va="bottom", annotation_clip=False))


# --- the figures ----------------------------------------------------------------------------


def fit_figure(r: EquationFindings, n_labels: int = 5,
               formats: Sequence[str] = ("svg",)) -> Figure:
    """Actual against fitted log income (most distant economies named), residuals against fitted."""
    import matplotlib as mpl

    formats = _check_formats(formats)
    title = f"Fit: {r.heading}"
    y = r.observations.y
    fitted, resid = r.unrestricted.fitted, r.unrestricted.resid
    lo, hi = float(min(fitted.min(), y.min())), float(max(fitted.max(), y.max()))
    left = _Panel(_limits(fitted, [lo, hi]), _limits(y, [lo, hi]),
                  f"fitted {r.dependent_label}", f"actual {r.dependent_label}",
                  "Actual against fitted (dashed: 45° line)")
    right = _Panel(_limits(fitted), _limits(resid, [0.0]), f"fitted {r.dependent_label}",
                   "residual (log points)", "Residuals against fitted")
    with mpl.rc_context(_STYLE):
        fig = _layout(8.0, 2.75, title, (left, right))
        _line(fig, left, [lo, hi], [lo, hi], color="grey", linestyle="--", linewidth=0.8)
        _rings(fig, left, fitted, y, 14)
        _line(fig, right, right.xlim, [0.0, 0.0], color="grey", linestyle="--", linewidth=0.8)
        _rings(fig, right, fitted, resid, 14)
        _name_points(fig, left, fitted, y, r.observations.economies,
                     np.argsort(-np.abs(resid))[:n_labels])
        svg, pdf = _export(fig, formats, title)
    return Figure(f"fit_{_slug(r.equation)}_{_slug(r.sample)}", title,
                  f"{r.heading}: the unrestricted regression, {r.nobs} economies; the "
                  f"{min(n_labels, r.nobs)} economies with the largest residuals are named.",
                  svg, pdf)


def partial_figure(r: EquationFindings, formats: Sequence[str] = ("svg",)) -> Figure | None:
    """Partial-regression plots of the unrestricted fit: each regressor against the dependent
    variable, both net of the others.  None for a fit with one slope (nothing to net out)."""
    import matplotlib as mpl

    formats = _check_formats(formats)
    x, y = r.observations.x, r.observations.y
    k = x.shape[1] - 1
    if k < 2:
        return None
    title = f"Partial regressions: {r.heading}"
    width = min(2.9 * k + 0.6, 10.0)
    series = []
    panels = []
    for j in range(1, k + 1):
        ex, ey = _net_of_others(x, y, j)
        grid = np.array([ex.min(), ex.max()])
        line = r.unrestricted.coef[j] * grid
        series.append((ex, ey, grid, line))
        panels.append(_Panel(_limits(ex), _limits(ey, line),
                             f"{r.unrestricted.labels[j]}, net of the others",
                             f"{r.dependent_label}, net of the others" if j == 1 else "",
                             f"slope {_slope(r.unrestricted.coef[j])}"))
    with mpl.rc_context(_STYLE):
        fig = _layout(width, 2.3, title, panels)
        for p, (ex, ey, grid, line) in zip(panels, series, strict=True):
            _rings(fig, p, ex, ey, 12)
            _line(fig, p, grid, line, color="grey", linewidth=1.0)
        svg, pdf = _export(fig, formats, title)
    return Figure(f"partial_{_slug(r.equation)}_{_slug(r.sample)}", title,
                  f"{r.heading}, {r.nobs} economies. Each panel: the dependent variable and "
                  "one regressor of the unrestricted regression, both after removing what the "
                  "other regressors explain; the line has the estimated slope.", svg, pdf)


def convergence_figure(r: EquationFindings, formats: Sequence[str] = ("svg",)) -> Figure | None:
    """Growth against initial income: raw, and net of the other regressors (conditional)."""
    import matplotlib as mpl

    formats = _check_formats(formats)
    names = r.unrestricted.names
    if "ln_y0" not in names:
        return None
    j = names.index("ln_y0")
    label = r.unrestricted.labels[j]
    x, y = r.observations.x, r.observations.y
    data = [("raw", x[:, j], y)]
    if x.shape[1] > 2:
        data.append(("conditional", *_net_of_others(x, y, j)))
    title = f"Convergence: {r.heading}"
    series, panels = [], []
    for kind, gx, gy in data:
        slope, intercept = np.polyfit(gx, gy, 1)
        grid = np.array([gx.min(), gx.max()])
        line = intercept + slope * grid
        series.append((gx, gy, grid, line))
        if kind == "raw":
            panels.append(_Panel(_limits(gx), _limits(gy, line),
                                 f"initial log income per worker, {label}", r.dependent_label,
                                 f"Unconditional: slope {_slope(slope)}"))
        else:
            panels.append(_Panel(_limits(gx), _limits(gy, line),
                                 f"{label}, net of the other regressors",
                                 "growth, net of the other regressors",
                                 f"Conditional: slope {_slope(slope)}"))
    width = 4.0 * len(panels)
    with mpl.rc_context(_STYLE):
        fig = _layout(width, 2.6, title, panels)
        for p, (gx, gy, grid, line) in zip(panels, series, strict=True):
            _rings(fig, p, gx, gy, 14)
            _line(fig, p, grid, line, color="grey", linewidth=1.0)
        svg, pdf = _export(fig, formats, title)
    return Figure(f"convergence_{_slug(r.equation)}_{_slug(r.sample)}", title,
                  f"{r.heading}, {r.nobs} economies: growth over the span against initial "
                  "income, with the least-squares line; a negative slope is convergence."
                  + (" The conditional panel removes what the other regressors explain from "
                     "both axes." if len(panels) > 1 else ""), svg, pdf)


def shares_figure(findings: Findings, formats: Sequence[str] = ("svg",)) -> Figure | None:
    """Every implied share with its interval, over its shaded plausibility band."""
    import matplotlib as mpl
    from matplotlib.collections import LineCollection, PolyCollection
    from matplotlib.text import Annotation

    formats = _check_formats(formats)
    rows = [(r, v) for r in findings.results for v in r.shares if v.band is not None]
    if not rows:
        return None
    pct = round(findings.settings.confidence * 100)
    title = "Implied shares and plausible bands"
    n = len(rows)
    shown = [v.estimate for _, v in rows if v.estimate.has_se]
    lo = min(0.0, *(e.low for e in shown))
    hi = max(1.05, *(e.high for e in shown))
    # long labels wrap onto lines, the rows growing with them
    labels = [_wrap(f"{r.heading}: {quantity_label(v.estimate.name)}", _FONT, _ROW_LABEL)
              for r, v in rows]
    lines = max(label.count("\n") + 1 for label in labels)
    row = max(0.3, (lines * _LINE * _FONT + 6.0) / 72.0)
    p = _Panel((lo - 0.02, min(hi + 0.02, 2.0)), (-0.6, n - 0.4),
               f"implied share of output (point and {pct}% delta-method interval)", "",
               "grey: the plausible band; dotted: share = 1",
               yticks=[(float(n - 1 - i), label) for i, label in enumerate(labels)],
               ytick_length=0.0)
    with mpl.rc_context(_STYLE):
        fig = _layout(7.0, row * n + 0.2 * row / 0.3, title, (p,))
        bands, bars, caps, points = [], [], [], []
        for i, (_, v) in enumerate(rows):
            ypos = float(n - 1 - i)
            assert v.band is not None
            b0, b1 = v.band
            bands.append([(b0, ypos - 0.4), (b1, ypos - 0.4), (b1, ypos + 0.4), (b0, ypos + 0.4)])
            e = v.estimate
            if e.has_se:
                bars.append([(e.low, ypos), (e.high, ypos)])
                caps += [(e.low, ypos), (e.high, ypos)]
                points.append((e.value, ypos))
            elif e.has_value:
                points.append((e.value, ypos))
                fig.add_artist(Annotation("no interval (see the notes)", (e.value, ypos),
                                          xycoords=p.data, xytext=(5, 4),
                                          textcoords="offset points", fontsize=7))
            else:
                _text(fig, 0.5, ypos, e.missing, p.data, ha="center", va="center", fontsize=8)
        _place(fig, p, PolyCollection(bands, facecolors="0.88", edgecolors="none", zorder=0))
        _line(fig, p, [1.0, 1.0], list(p.ylim), color="black", linestyle=":", linewidth=0.8)
        if bars:
            _place(fig, p, LineCollection(bars, colors="black", linewidths=1.0))
            cx, cy = zip(*caps, strict=True)
            _line(fig, p, cx, cy, linestyle="none", marker="|", markersize=6, color="black",
                  markeredgewidth=1.0)
        if points:
            px, py = zip(*points, strict=True)
            _line(fig, p, px, py, linestyle="none", marker="o", color="black", markersize=4)
        svg, pdf = _export(fig, formats, title)
    return Figure("implied_shares", title,
                  "Each row names its equation and sample. Grey: the plausible band of each "
                  f"share; bars: {pct}% intervals. Beyond the dotted line at 1 no steady state "
                  "exists; the axis stops at 2.",
                  svg, pdf)


# --- all figures of a run, on one core or more ----------------------------------------------


def _jobs(findings: Findings, formats: tuple[str, ...]
          ) -> list[tuple[float, Callable[[], Figure | None]]]:
    """The figures of a run in report order, each with a rough cost (panels x points)."""
    choice = findings.settings.figures
    if choice == "none":
        return []

    def points(r: EquationFindings) -> float:
        return 1.0 + len(r.observations.y) / 500.0

    jobs: list[tuple[float, Callable[[], Figure | None]]] = [
        (1.5, functools.partial(shares_figure, findings, formats))]
    for r in findings.results:
        if choice == "all":
            k = r.observations.x.shape[1] - 1
            jobs.append((2 * points(r), functools.partial(fit_figure, r, formats=formats)))
            if k >= 2:
                jobs.append((k * points(r), functools.partial(partial_figure, r, formats)))
        if "ln_y0" in r.unrestricted.names:
            jobs.append((2 * points(r), functools.partial(convergence_figure, r, formats)))
    return jobs


def _cores() -> int:
    try:
        return len(os.sched_getaffinity(0))
    except (AttributeError, OSError):
        return os.cpu_count() or 1


def _can_fork() -> bool:
    """Forking is safe here: a POSIX fork (not macOS, where system libraries may not survive
    one) from a process with no other Python threads."""
    return (hasattr(os, "fork") and sys.platform.startswith(("linux", "freebsd"))
            and threading.active_count() == 1)


def _balance(costs: Sequence[float], n: int) -> list[list[int]]:
    """Split job indices into n groups of similar total cost (largest first, to the lightest)."""
    groups: list[list[int]] = [[] for _ in range(n)]
    load = [0.0] * n
    for i in sorted(range(len(costs)), key=lambda i: -costs[i]):
        g = load.index(min(load))
        groups[g].append(i)
        load[g] += costs[i]
    return groups


def _child(fns: list[Callable[[], Figure | None]], group: list[int], fd: int) -> None:
    """In a forked process: draw the group's figures, send them (and any warnings) down the
    pipe, and leave without running the parent's exit handlers."""
    import signal

    status = 1
    try:
        signal.signal(signal.SIGINT, signal.SIG_DFL)
        signal.signal(signal.SIGTERM, signal.SIG_DFL)
        with warnings.catch_warnings(record=True) as caught:
            drawn = [(i, fns[i]()) for i in group]
        said = [(str(w.message), w.category, w.filename, w.lineno) for w in caught]
        with os.fdopen(fd, "wb") as pipe:
            pipe.write(pickle.dumps((drawn, said), protocol=pickle.HIGHEST_PROTOCOL))
        status = 0
    finally:
        os._exit(status)


def _draw_parallel(fns: list[Callable[[], Figure | None]], groups: list[list[int]]
                   ) -> list[Figure | None]:
    """Draw groups[1:] in forked processes and groups[0] here; a group whose process fails is
    drawn here afterwards, so the result never depends on the children."""
    out: list[Figure | None] = [None] * len(fns)
    children: list[tuple[int, int, list[int]]] = []
    try:
        for group in groups[1:]:
            r, w = os.pipe()
            pid = os.fork()
            if pid == 0:
                os.close(r)
                _child(fns, group, w)
            os.close(w)
            children.append((pid, r, group))
        for i in groups[0]:
            out[i] = fns[i]()
        while children:
            pid, r, group = children[0]
            with os.fdopen(r, "rb", closefd=False) as pipe:
                payload = pipe.read()
            _, status = os.waitpid(pid, 0)
            os.close(r)
            children.pop(0)
            try:
                drawn, said = pickle.loads(payload) if status == 0 else (None, ())
            except Exception:
                drawn, said = None, ()
            if drawn is None:
                for i in group:
                    out[i] = fns[i]()
                continue
            for message, category, filename, lineno in said:
                warnings.warn_explicit(message, category, filename, lineno)
            for i, fig in drawn:
                out[i] = fig
    except BaseException:
        import signal

        for pid, r, _ in children:
            for step, arg in ((lambda a: os.kill(a, signal.SIGKILL), pid),
                              (lambda a: os.waitpid(a, 0), pid), (os.close, r)):
                try:
                    step(arg)
                except OSError:
                    pass
        raise
    return out


def all_figures(findings: Findings, formats: Sequence[str] = ("svg",),
                workers: int | None = None) -> tuple[Figure, ...]:
    """The run's figures: the share chart first, then per equation and sample.

    ``settings.figures`` chooses: ``all``; ``key`` (the share chart and the
    convergence plots); ``none``.  ``formats`` is a tuple out of ``("svg", "pdf")``:
    each figure is laid out once and saved in each.  ``workers`` caps the processes
    (default: the usable cores); 1 draws serially.  Parallel and serial output are
    byte-identical.
    """
    asked = _check_formats(formats)
    jobs = _jobs(findings, asked)
    if not jobs:
        return ()
    fns = [fn for _, fn in jobs]
    n = min(workers or _cores(), len(fns))
    with _collector_spares_the_heap():
        if n >= 2 and len(fns) >= PARALLEL_FROM and _can_fork():
            import matplotlib.backends.backend_svg  # noqa: F401  loaded once, before forking
            if "pdf" in asked:
                import matplotlib.backends.backend_pdf  # noqa: F401
            drawn = _draw_parallel(fns, _balance([c for c, _ in jobs], n))
        else:
            drawn = [fn() for fn in fns]
    return tuple(f for f in drawn if f is not None)


@contextlib.contextmanager
def _collector_spares_the_heap() -> Iterator[None]:
    """While drawing, the garbage collector looks at the figures' objects only, not at the
    rest of the heap (the findings, pandas, statsmodels): no full pass over it mid-drawing,
    and a forked process shares those pages instead of copying them.  Left alone when the
    caller froze objects itself."""
    import gc

    if gc.get_freeze_count():
        yield
        return
    gc.freeze()
    try:
        yield
    finally:
        gc.unfreeze()
