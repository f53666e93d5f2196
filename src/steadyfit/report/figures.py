"""Figures (matplotlib, SVG) drawn from findings only.

Every figure reads in greyscale: black and grey marks, hollow markers, dashed
reference lines, a light-grey shaded band.  SVG output keeps text as text and
is deterministic (fixed ids, no timestamp), so two runs give the same files.
"""

from __future__ import annotations

import io
import re
from dataclasses import dataclass
from typing import Any

import numpy as np

from ..findings import EquationFindings, Findings

_STYLE: dict[Any, Any] = {
    "svg.fonttype": "none",
    "svg.hashsalt": "steadyfit",
    "font.size": 9,
    "axes.spines.top": False,
    "axes.spines.right": False,
    "axes.titlesize": 10,
    # economy and column names are drawn as plain text: '$' never starts mathematics
    "text.parse_math": False,
}


@dataclass(frozen=True)
class Figure:
    key: str  # file stem under figures/
    title: str
    caption: str
    svg: str  # the <svg> element alone, ready to inline


def _svg(fig) -> str:  # type: ignore[no-untyped-def]
    buf = io.StringIO()
    fig.savefig(buf, format="svg", bbox_inches="tight", metadata={"Date": None})
    import matplotlib.pyplot as plt

    plt.close(fig)
    text = buf.getvalue()
    return text[text.index("<svg"):]


def _net_of_others(x: np.ndarray, y: np.ndarray, j: int) -> tuple[np.ndarray, np.ndarray]:
    """Column j of x and y, each minus its least-squares fit on the other columns."""
    others = np.delete(x, j, axis=1)
    proj = others @ np.linalg.lstsq(others, np.column_stack([y, x[:, j]]), rcond=None)[0]
    return x[:, j] - proj[:, 1], y - proj[:, 0]


def _finish(fig) -> str:  # type: ignore[no-untyped-def]
    fig.tight_layout()
    return _svg(fig)


def _slug(text: str) -> str:
    return re.sub(r"[^A-Za-z0-9_-]+", "_", text).strip("_")


def fit_figure(r: EquationFindings, n_labels: int = 5) -> Figure:
    """Actual against fitted log income (most distant economies named), residuals against fitted."""
    import matplotlib.pyplot as plt

    with plt.rc_context(_STYLE):
        fig, (ax1, ax2) = plt.subplots(1, 2, figsize=(8.0, 3.6))
        y = r.observations.y
        fitted, resid = r.unrestricted.fitted, r.unrestricted.resid
        ax1.scatter(fitted, y, s=14, facecolors="none", edgecolors="black", linewidths=0.7)
        lo, hi = float(min(fitted.min(), y.min())), float(max(fitted.max(), y.max()))
        ax1.plot([lo, hi], [lo, hi], color="grey", linestyle="--", linewidth=0.8)
        for i in np.argsort(-np.abs(resid))[:n_labels]:
            ax1.annotate(r.observations.economies[i], (fitted[i], y[i]), fontsize=7,
                         xytext=(3, 3), textcoords="offset points")
        ax1.set_xlabel(f"fitted {r.dependent_label}")
        ax1.set_ylabel(f"actual {r.dependent_label}")
        ax1.set_title("Actual against fitted (dashed: 45-degree line)")
        ax2.scatter(fitted, resid, s=14, facecolors="none", edgecolors="black", linewidths=0.7)
        ax2.axhline(0, color="grey", linestyle="--", linewidth=0.8)
        ax2.set_xlabel(f"fitted {r.dependent_label}")
        ax2.set_ylabel("residual (log points)")
        ax2.set_title("Residuals against fitted")
        svg = _finish(fig)
    return Figure(f"fit_{_slug(r.equation)}_{_slug(r.sample)}",
                  f"Fit: {r.column}",
                  f"Unrestricted regression, {r.nobs} economies; the {n_labels} economies with "
                  "the largest residuals are named.", svg)


def partial_figure(r: EquationFindings) -> Figure:
    """Partial-regression plots: each regressor against log income, both net of the others."""
    import matplotlib.pyplot as plt

    x, y = r.observations.x, r.observations.y
    k = x.shape[1] - 1
    with plt.rc_context(_STYLE):
        fig, axes = plt.subplots(1, k, figsize=(3.0 * k, 3.0), squeeze=False)
        for j in range(1, k + 1):
            ex, ey = _net_of_others(x, y, j)
            ax = axes[0, j - 1]
            ax.scatter(ex, ey, s=12, facecolors="none", edgecolors="black", linewidths=0.7)
            grid = np.linspace(ex.min(), ex.max(), 2)
            ax.plot(grid, r.unrestricted.coef[j] * grid, color="grey", linewidth=1.0)
            label = r.unrestricted.labels[j]
            ax.set_xlabel(f"{label}, net of the others")
            ax.set_ylabel("dependent variable, net of the others")
            ax.set_title(f"slope {r.unrestricted.coef[j]:.3f}")
        svg = _finish(fig)
    return Figure(f"partial_{_slug(r.equation)}_{_slug(r.sample)}",
                  f"Partial regressions: {r.column}",
                  "Each panel: log income and one regressor, both after removing what the other "
                  "regressors explain; the line has the estimated slope.", svg)


def convergence_figure(r: EquationFindings) -> Figure | None:
    """Growth against initial income: raw, and net of the other regressors (conditional)."""
    import matplotlib.pyplot as plt

    names = r.unrestricted.names
    if "ln_y0" not in names:
        return None
    j = names.index("ln_y0")
    x, y = r.observations.x, r.observations.y
    panels = [("raw", x[:, j], y)]
    if x.shape[1] > 2:
        panels.append(("conditional", *_net_of_others(x, y, j)))
    with plt.rc_context(_STYLE):
        fig, axes = plt.subplots(1, len(panels), figsize=(4.0 * len(panels), 3.4), squeeze=False)
        for ax, (kind, gx, gy) in zip(axes[0], panels, strict=True):
            ax.scatter(gx, gy, s=14, facecolors="none", edgecolors="black", linewidths=0.7)
            slope, intercept = np.polyfit(gx, gy, 1)
            grid = np.linspace(gx.min(), gx.max(), 2)
            ax.plot(grid, intercept + slope * grid, color="grey", linewidth=1.0)
            if kind == "raw":
                ax.set_xlabel("log initial income per worker")
                ax.set_ylabel("log change of income per worker")
                ax.set_title(f"Unconditional: slope {slope:.3f}")
            else:
                ax.set_xlabel("log initial income, net of the other regressors")
                ax.set_ylabel("growth, net of the other regressors")
                ax.set_title(f"Conditional: slope {slope:.3f}")
        svg = _finish(fig)
    return Figure(f"convergence_{_slug(r.equation)}_{_slug(r.sample)}",
                  f"Convergence: {r.column}",
                  "Growth over the span against initial income, with the least-squares line; "
                  "a negative slope is convergence. The conditional panel removes what the "
                  "other regressors explain from both axes.", svg)


def shares_figure(findings: Findings) -> Figure | None:
    """Every implied share with its interval, over its shaded plausibility band."""
    import matplotlib.pyplot as plt
    from matplotlib.patches import Rectangle

    rows = [(r, v) for r in findings.results for v in r.shares if v.band is not None]
    if not rows:
        return None
    pct = round(findings.settings.confidence * 100)
    with plt.rc_context(_STYLE):
        fig, ax = plt.subplots(figsize=(7.0, 0.42 * len(rows) + 1.2))
        labels = []
        for i, (r, v) in enumerate(rows):
            ypos = len(rows) - 1 - i
            assert v.band is not None
            ax.add_patch(Rectangle((v.band[0], ypos - 0.4), v.band[1] - v.band[0], 0.8,
                                   facecolor="0.88", edgecolor="none", zorder=0))
            e = v.estimate
            if e.has_se:
                ax.errorbar(e.value, ypos, xerr=[[e.value - e.low], [e.high - e.value]],
                            fmt="o", color="black", markersize=4, capsize=3, linewidth=1)
            elif e.has_value:
                ax.plot([e.value], [ypos], "o", color="black", markersize=4)
                ax.annotate("no interval (see the notes)", (e.value, ypos), fontsize=7,
                            xytext=(5, 4), textcoords="offset points")
            else:
                ax.text(0.5, ypos, e.missing, ha="center", va="center", fontsize=8)
            labels.append(f"{r.column}: {e.name}")
        ax.axvline(1.0, color="black", linestyle=":", linewidth=0.8)
        ax.set_yticks(range(len(rows)))
        ax.set_yticklabels(list(reversed(labels)))
        ax.set_ylim(-0.6, len(rows) - 0.4)
        shown = [v.estimate for _, v in rows if v.estimate.has_se]
        lo = min(0.0, *(e.low for e in shown))
        hi = max(1.05, *(e.high for e in shown))
        ax.set_xlim(lo - 0.02, min(hi + 0.02, 2.0))
        ax.set_xlabel(f"implied share of output (point and {pct}% delta-method interval)")
        ax.set_title("Implied shares against their plausible bands (grey); dotted: share = 1")
        svg = _finish(fig)
    return Figure("implied_shares", "Implied shares and plausible bands",
                  "Grey: the plausible band of each share. Beyond the dotted line at 1 no "
                  "steady state exists.", svg)


def all_figures(findings: Findings) -> tuple[Figure, ...]:
    """The run's figures: the share chart first, then per equation and sample.

    ``settings.figures`` chooses: ``all``; ``key`` (the share chart and the
    convergence plots); ``none``.
    """
    import matplotlib

    matplotlib.use("Agg", force=False)
    out: list[Figure] = []
    choice = findings.settings.figures
    if choice == "none":
        return ()
    chart = shares_figure(findings)
    if chart is not None:
        out.append(chart)
    for r in findings.results:
        if choice == "all":
            out += [fit_figure(r), partial_figure(r)]
        conv = convergence_figure(r)
        if conv is not None:
            out.append(conv)
    return tuple(out)
