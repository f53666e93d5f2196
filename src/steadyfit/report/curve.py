"""The specification curve of a sweep: one equation's implied alpha over every specification,
sorted, with its interval over the plausible band, and beneath it which settings each
specification used.

Reads findings only; drawn with the report's canvas like every other figure.
"""

from __future__ import annotations

from collections.abc import Sequence

from ..findings import Findings
from ..labels import quantity_label
from .canvas import STYLE, Panel, add_line, export, layout, limits, place
from .figures import Figure, _check_formats


def _settings(rows: list, findings: Findings) -> list[tuple[str, list[bool]]]:
    """Indicator rows: each setting that varies among ``rows``, with which rows use it."""
    out: list[tuple[str, list[bool]]] = []
    axes = (("sample", lambda r: r.sample, lambda v: findings.labels.sample(v)),
            ("g + \u03b4", lambda r: r.g_plus_delta, lambda v: f"g + \u03b4 = {v:g}"),
            ("covariance", lambda r: r.covariance, lambda v: f"{v} covariance"),
            ("dropped", lambda r: r.dropped, lambda v: "nothing left out" if v is None
             else f"without {v}"))
    for _, key, label in axes:
        values = list(dict.fromkeys(key(r) for r in rows))
        if len(values) < 2:
            continue
        out += [(label(v), [key(r) == v for r in rows]) for v in values]
    return out


def sweep_figure(findings: Findings, equation: str, formats: Sequence[str] = ("svg",),
                 name: str = "alpha") -> Figure | None:
    """The curve of ``name`` for ``equation`` (None when no specification has one)."""
    import matplotlib as mpl
    from matplotlib.collections import LineCollection, PolyCollection

    formats = _check_formats(formats)
    s = findings.sweep
    if s is None:
        return None
    rows = sorted((r for r in s.rows if r.equation == equation and r.reason is None
                   and name in r.values), key=lambda r: r.values[name])
    if not rows:
        return None
    n = len(rows)
    band = s.bands.get(name)
    lo, hi = limits([r.intervals[name][0] for r in rows], [r.intervals[name][1] for r in rows],
                    list(band or ()))
    indicators = _settings(rows, findings)
    step = (hi - lo) / 10
    base = lo - step  # the indicator rows sit below the curve, one step apart
    ys = [base - j * step for j in range(len(indicators))]
    numeric = Panel((lo, hi), (lo, hi)).yticks or []
    label = quantity_label(name)
    p = Panel((-0.5, n - 0.5), (ys[-1] - step if ys else lo, hi),
              f"specifications, sorted by {label}",
              f"{label} ({round(s.confidence * 100)}% interval)",
              "grey: the plausible band" if band else "",
              yticks=[*numeric, *((y, text) for y, (text, _) in zip(ys, indicators,
                                                                    strict=True))])
    p.xticks = []
    title = f"Specification curve: {findings.labels.equation(equation)}"
    with mpl.rc_context(STYLE):
        fig = layout(7.0, 2.4 + 0.16 * len(indicators), title, (p,))
        if band is not None:
            place(fig, p, PolyCollection([[(-0.5, band[0]), (n - 0.5, band[0]),
                                           (n - 0.5, band[1]), (-0.5, band[1])]],
                                         facecolors="0.88", edgecolors="none", zorder=0))
        place(fig, p, LineCollection([[(i, r.intervals[name][0]), (i, r.intervals[name][1])]
                                      for i, r in enumerate(rows)], colors="0.35",
                                     linewidths=0.8))
        add_line(fig, p, list(range(n)), [r.values[name] for r in rows], linestyle="none",
                 marker="o", markersize=2.5, color="black")
        for y, (_, used) in zip(ys, indicators, strict=True):
            xs = [i for i, u in enumerate(used) if u]
            add_line(fig, p, xs, [y] * len(xs), linestyle="none", marker="s", markersize=2.0,
                     color="black")
        svg, pdf = export(fig, formats, title)
    return Figure(f"sweep_{equation}", title,
                  f"Every fitted specification of the sweep for this equation, sorted by "
                  f"{label}: points and bars, the estimate and its interval; grey, the "
                  "plausible band. Below, a square marks the settings each specification used.",
                  svg, pdf)
