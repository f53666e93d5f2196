"""Figures (matplotlib; SVG and PDF) drawn from findings only.

Every figure reads in greyscale: black and grey marks, hollow markers, dashed
reference lines, a light-grey shaded band.  SVG output keeps text as text; PDF
output embeds its fonts as TrueType (Type 42).  Both are deterministic (fixed
ids, no timestamp), so two runs give the same bytes.

Each figure is laid out once on the ``canvas`` and then drawn once per format.
Large samples draw their markers as an image inside the vector figure (see
``RASTER_ABOVE``).  ``all_figures`` draws the figures of a run on two cores or
more when there are enough of them (``workers.run_forked``; the output is
byte-identical to the serial path).

matplotlib is imported inside functions only, so ``steadyfit --help`` stays fast.
"""

from __future__ import annotations

import functools
import math
import re
from collections.abc import Callable, Sequence
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..findings import EquationFindings, Estimate, Findings
from ..labels import quantity_label, signed
from ..panel.results import PanelFindings
from ..workers import cores, run_forked
from .canvas import (
    FONT,
    LINE_SPACING,
    NAME_FONT,
    STYLE,
    Panel,
    add_line,
    add_text,
    export,
    layout,
    limits,
    place,
    text_size,
    wrap,
)

FORMATS = ("svg", "pdf")

# A scatter with more points than this draws its markers as an image inside the vector
# figure; axes, text and lines stay vector.  Common practice: beyond a few thousand markers
# an image is smaller and quicker to display than one vector shape per point.
RASTER_ABOVE = 2000

# draw in parallel (forked processes) from this many figures on, given two cores or more;
# measured on the demo: a fork costs about what one or two figures take to draw
PARALLEL_FROM = 5

_ROW_LABEL = 230.0  # widest row label of the share chart before it wraps


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

def _rings(fig: Any, p: Panel, x: np.ndarray, y: np.ndarray, area: float) -> None:
    """Hollow black circles of ``area`` (points squared) at the points: one line of markers
    (one marker shape reused at each point); drawn as an image beyond ``RASTER_ABOVE``."""
    add_line(fig, p, x, y, linestyle="none", marker="o", markersize=float(np.sqrt(area)),
          markerfacecolor="none", markeredgecolor="black", markeredgewidth=0.7,
          rasterized=len(x) > RASTER_ABOVE)




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


def _name_points(fig: Any, p: Panel, x: np.ndarray, y: np.ndarray, names: Sequence[str],
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
        w, h = text_size(names[i], NAME_FONT)
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
                                  fontsize=NAME_FONT, ha="right" if to_left else "left",
                                  va="bottom", annotation_clip=False))


# --- the figures ----------------------------------------------------------------------------


def fit_figure(r: EquationFindings, n_labels: int = 5,
               formats: Sequence[str] = ("svg",)) -> Figure:
    """Actual against fitted log income (most distant economies named), residuals against fitted."""
    import matplotlib as mpl

    formats = _check_formats(formats)
    title = f"Fit: {r.heading}"
    y = r.observations.y
    fitted, resid = r.unrestricted.fitted(r.observations.x), r.unrestricted.resid
    lo, hi = float(min(fitted.min(), y.min())), float(max(fitted.max(), y.max()))
    left = Panel(limits(fitted, [lo, hi]), limits(y, [lo, hi]),
                  f"fitted {r.dependent_label}", f"actual {r.dependent_label}",
                  "Actual against fitted (dashed: 45° line)")
    right = Panel(limits(fitted), limits(resid, [0.0]), f"fitted {r.dependent_label}",
                   "residual (log points)", "Residuals against fitted")
    with mpl.rc_context(STYLE):
        fig = layout(8.0, 2.75, title, (left, right))
        add_line(fig, left, [lo, hi], [lo, hi], color="grey", linestyle="--", linewidth=0.8)
        _rings(fig, left, fitted, y, 14)
        add_line(fig, right, right.xlim, [0.0, 0.0], color="grey", linestyle="--", linewidth=0.8)
        _rings(fig, right, fitted, resid, 14)
        _name_points(fig, left, fitted, y, r.observations.economies,
                     np.argsort(-np.abs(resid))[:n_labels])
        svg, pdf = export(fig, formats, title)
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
        panels.append(Panel(limits(ex), limits(ey, line),
                             f"{r.unrestricted.labels[j]}, net of the others",
                             f"{r.dependent_label}, net of the others" if j == 1 else "",
                             f"slope {_slope(r.unrestricted.coef[j])}"))
    with mpl.rc_context(STYLE):
        fig = layout(width, 2.3, title, panels)
        for p, (ex, ey, grid, line) in zip(panels, series, strict=True):
            _rings(fig, p, ex, ey, 12)
            add_line(fig, p, grid, line, color="grey", linewidth=1.0)
        svg, pdf = export(fig, formats, title)
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
            panels.append(Panel(limits(gx), limits(gy, line),
                                 f"initial log income per worker, {label}", r.dependent_label,
                                 f"Unconditional: slope {_slope(slope)}"))
        else:
            panels.append(Panel(limits(gx), limits(gy, line),
                                 f"{label}, net of the other regressors",
                                 "growth, net of the other regressors",
                                 f"Conditional: slope {_slope(slope)}"))
    width = 4.0 * len(panels)
    with mpl.rc_context(STYLE):
        fig = layout(width, 2.6, title, panels)
        for p, (gx, gy, grid, line) in zip(panels, series, strict=True):
            _rings(fig, p, gx, gy, 14)
            add_line(fig, p, grid, line, color="grey", linewidth=1.0)
        svg, pdf = export(fig, formats, title)
    return Figure(f"convergence_{_slug(r.equation)}_{_slug(r.sample)}", title,
                  f"{r.heading}, {r.nobs} economies: growth over the span against initial "
                  "income, with the least-squares line; a negative slope is convergence."
                  + (" The conditional panel removes what the other regressors explain from "
                     "both axes." if len(panels) > 1 else ""), svg, pdf)


def _interval_rows(fig: Any, p: Panel,
                   items: Sequence[tuple[float, Estimate | None, tuple[float, float] | None]]
                   ) -> None:
    """One row per item at its height: the shaded band (when given), the interval as a bar
    with end caps and the point; a point alone when there is no interval (said beside it);
    the estimate's word ("none", "no convergence") where there is no number."""
    from matplotlib.collections import LineCollection, PolyCollection
    from matplotlib.text import Annotation

    bands, bars, caps, points = [], [], [], []
    for ypos, e, band in items:
        if band is not None:
            b0, b1 = band
            bands.append([(b0, ypos - 0.4), (b1, ypos - 0.4), (b1, ypos + 0.4), (b0, ypos + 0.4)])
        if e is None:
            continue
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
            add_text(fig, sum(p.xlim) / 2, ypos, e.missing, p.data, ha="center", va="center",
                     fontsize=8)
    if bands:
        place(fig, p, PolyCollection(bands, facecolors="0.88", edgecolors="none", zorder=0))
    if bars:
        place(fig, p, LineCollection(bars, colors="black", linewidths=1.0))
        cx, cy = zip(*caps, strict=True)
        add_line(fig, p, cx, cy, linestyle="none", marker="|", markersize=6, color="black",
                 markeredgewidth=1.0)
    if points:
        px, py = zip(*points, strict=True)
        add_line(fig, p, px, py, linestyle="none", marker="o", color="black", markersize=4)


def shares_figure(findings: Findings, formats: Sequence[str] = ("svg",)) -> Figure | None:
    """Every implied share with its interval, over its shaded plausibility band."""
    import matplotlib as mpl

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
    labels = [wrap(f"{r.heading}: {quantity_label(v.estimate.name)}", FONT, _ROW_LABEL)
              for r, v in rows]
    lines = max(label.count("\n") + 1 for label in labels)
    measured = [(v.anchor.measured.value, float(n - 1 - i)) for i, (_, v) in enumerate(rows)
                if v.anchor is not None and v.anchor.measured.available]
    row = max(0.3, (lines * LINE_SPACING * FONT + 6.0) / 72.0)
    p = Panel((lo - 0.02, min(hi + 0.02, 2.0)), (-0.6, n - 0.4),
               f"implied share of output (point and {pct}% delta-method interval)", "",
               "grey: the plausible band; dotted: share = 1"
               + ("; open diamond: measured capital share" if measured else ""),
               yticks=[(float(n - 1 - i), label) for i, label in enumerate(labels)],
               ytick_length=0.0)
    with mpl.rc_context(STYLE):
        fig = layout(7.0, row * n + 0.2 * row / 0.3, title, (p,))
        add_line(fig, p, [1.0, 1.0], list(p.ylim), color="black", linestyle=":", linewidth=0.8)
        _interval_rows(fig, p, [(float(n - 1 - i), v.estimate, v.band)
                                for i, (_, v) in enumerate(rows)])
        if measured:
            mx, my = zip(*measured, strict=True)
            add_line(fig, p, mx, my, linestyle="none", marker="D", markersize=5,
                     markerfacecolor="white", markeredgecolor="black", markeredgewidth=1.0)
        svg, pdf = export(fig, formats, title)
    return Figure("implied_shares", title,
                  "Each row names its equation and sample. Grey: the plausible band of each "
                  f"share; bars: {pct}% intervals. Beyond the dotted line at 1 no steady state "
                  "exists; the axis stops at 2."
                  + (" Open diamonds: the measured capital share (one minus the mean labour "
                     "share of the economies used)." if measured else ""),
                  svg, pdf)


def panel_figure(findings: Findings, p: PanelFindings, formats: Sequence[str] = ("svg",)
                 ) -> Figure | None:
    """Speed of convergence and capital share by panel estimator, with their intervals, and
    the cross-section growth form on the same sample beside them (the share over its band)."""
    import matplotlib as mpl

    formats = _check_formats(formats)
    rows: list[tuple[str, Estimate | None, Estimate | None]] = [
        (f.title, f.speed_estimate("lam"), f.share_estimate("alpha")) for f in p.estimators]
    twin = p.form_key.replace("panel:", "growth:")
    for r in findings.results:
        if r.form_key == twin and r.sample == p.sample:
            alpha = r.share("alpha")
            rows.append((f"cross-section: {r.heading}", r.speed_estimate("lam"),
                         alpha.estimate if alpha else None))
    if not rows:
        return None
    pct = round(findings.settings.confidence * 100)
    band = findings.settings.bands.get("alpha")
    n = len(rows)

    def reach(kind: int, floor: tuple[float, ...]) -> tuple[float, float]:
        ends = list(floor)
        for row in rows:
            e = row[kind]
            if isinstance(e, Estimate) and e.has_value:
                ends += [e.low, e.high] if e.has_se else [e.value]
        return limits([x for x in ends if math.isfinite(x)])

    labels = [wrap(label, FONT, _ROW_LABEL * 0.8) for label, _, _ in rows]
    ticks = [(float(n - 1 - i), label) for i, label in enumerate(labels)]
    lines = max(label.count("\n") + 1 for label in labels)
    row = max(0.3, (lines * LINE_SPACING * FONT + 6.0) / 72.0)
    title = f"Convergence and capital share by estimator: {p.heading}"
    speed = Panel(reach(1, (0.0,)), (-0.6, n - 0.4),
                  f"{quantity_label('lam')} per year ({pct}% interval)", "", "Speed of convergence",
                  yticks=ticks, ytick_length=0.0)
    share = Panel(reach(2, (0.0, *(band or ()))), (-0.6, n - 0.4),
                  f"{quantity_label('alpha')} ({pct}% interval)", "",
                  "Capital share (grey: plausible band)",
                  yticks=[(y, "") for y, _ in ticks], ytick_length=0.0)
    with mpl.rc_context(STYLE):
        fig = layout(8.0, row * n + 0.2 * row / 0.3, title, (speed, share))
        add_line(fig, speed, [0.0, 0.0], list(speed.ylim), color="black", linestyle=":",
                 linewidth=0.8)
        _interval_rows(fig, speed, [(y, lam, None) for (y, _), (_, lam, _) in
                                    zip(ticks, rows, strict=True)])
        _interval_rows(fig, share, [(y, alpha, band) for (y, _), (_, _, alpha) in
                                    zip(ticks, rows, strict=True)])
        svg, pdf = export(fig, formats, title)
    return Figure(f"panel_{_slug(p.equation)}_{_slug(p.sample)}", title,
                  f"{p.heading}: {quantity_label('lam')} and {quantity_label('alpha')} implied by "
                  f"each panel estimator's restricted fit with {pct}% delta-method intervals"
                  + (", and by the cross-section growth form on the same sample" if n >
                     len(p.estimators) else "")
                  + "; dotted: no convergence. Pooled OLS and within are known to be biased in "
                  "opposite directions.", svg, pdf)


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
    jobs += [(2.0, functools.partial(panel_figure, findings, p, formats))
             for p in findings.panels]
    if findings.sweep is not None:
        from .curve import sweep_figure

        jobs += [(2.0, functools.partial(sweep_figure, findings, eq, formats))
                 for eq in findings.sweep.equations()]
    return jobs




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
    n = (workers or cores()) if len(fns) >= PARALLEL_FROM else 1

    def preload() -> None:  # the backends loaded once, before forking
        import matplotlib.backends.backend_svg  # noqa: F401
        if "pdf" in asked:
            import matplotlib.backends.backend_pdf  # noqa: F401

    drawn = run_forked(fns, [c for c, _ in jobs], n, preload)
    return tuple(f for f in drawn if f is not None)


