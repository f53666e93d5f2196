"""Pages of the calibrators: what given shares predict and what a printed table implies.

Each calculator's result becomes a :class:`Page` (title, sentences, tables, figures,
caveats and a JSON-ready record); the page renders to the terminal, HTML and
Markdown and is written as a run folder like an estimation run.  Only this module
knows how a calibration looks; the calculators in :mod:`steadyfit.calibrate`
know nothing of it.
"""

from __future__ import annotations

import dataclasses
import io
import math
from collections.abc import Sequence
from datetime import UTC, datetime
from pathlib import Path
from typing import Any

import numpy as np

from ..calibrate.accounting import DevelopmentAccounts, YearAccounts
from ..calibrate.printed import PrintedFindings
from ..calibrate.steady import RequiredShare, SteadyStateRatios
from ..calibrate.transition import TransitionPath
from ..labels import MINUS
from .figures import Figure
from .model import Cell, Row, Table

SYMBOL = {"alpha": "α", "beta": "β", "alpha+beta": "α + β", "lam": "λ"}


@dataclasses.dataclass(frozen=True)
class Page:
    """One calculator's output, ready for any renderer."""

    kind: str  # file-name stem of the run folder ("printed-table", "ratios", ...)
    title: str
    sentences: tuple[str, ...]
    tables: tuple[Table, ...]
    caveats: tuple[str, ...]
    record: dict[str, Any]  # the calculator's result, JSON-ready
    figures: tuple[Figure, ...] = ()


def json_ready(value: Any) -> Any:
    """A result as JSON: dataclasses as objects, arrays as lists, NaN and infinity as null."""
    if dataclasses.is_dataclass(value) and not isinstance(value, type):
        return {f.name: json_ready(getattr(value, f.name)) for f in dataclasses.fields(value)}
    if isinstance(value, dict):
        return {("/".join(k) if isinstance(k, tuple) else str(k)): json_ready(v)
                for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [json_ready(v) for v in value]
    if isinstance(value, np.ndarray):
        return [json_ready(v) for v in value.tolist()]
    if isinstance(value, float | np.floating):
        return float(value) if math.isfinite(value) else None
    if isinstance(value, np.integer):
        return int(value)
    return value


def _num(x: float, extra: int = 0) -> Cell:
    return Cell("number", x, extra_digits=extra)


def _text(s: str) -> Cell:
    return Cell("text", s)


# --- the printed table ---------------------------------------------------------------------


def printed_page(f: PrintedFindings) -> Page:
    t = f.table
    rows = []
    for v in f.values:
        if not math.isfinite(v.value):
            rows.append(Row(SYMBOL.get(v.name, v.name),
                            (_text("not available"), Cell.empty(), Cell.empty(), Cell.empty(),
                             _text(v.reason or ""))))
            continue
        judged = (f"{v.band_status} [{v.band[0]:g}, {v.band[1]:g}]" if v.band and v.band_status
                  else "")
        if v.band and v.band_status_narrow and v.band_status_narrow != v.band_status:
            judged += f"; {v.band_status_narrow} at the small end"
        rows.append(Row(SYMBOL.get(v.name, v.name), (
            _num(v.value, 1 if v.name == "lam" else 0),
            _num(v.se.low, 1 if v.name == "lam" else 0),
            _num(v.se.high, 1 if v.name == "lam" else 0),
            Cell("interval", (v.low, v.high), extra_digits=1 if v.name == "lam" else 0),
            _text(judged))))
    notes = [f"{round(t.confidence * 100):d}% intervals at the larger standard error (the "
             "conservative end); the two standard-error columns are equal when the table "
             "prints everything they need."]
    tables = [Table("implied", "Implied parameters from the printed table", "parameter",
                    (("value",), ("s.e., small end",), ("s.e., large end",),
                     ("interval",), ("against the band",)), tuple(rows), tuple(notes))]
    if f.restriction is not None:
        r = f.restriction
        tables.append(Table("restriction", "The theory's restriction", "", (
            ("sum of slopes",), ("s.e., small end",), ("s.e., large end",),
            ("p, small end",), ("p, large end",)),
            (Row(r.text, (_num(r.total), _num(r.se.low), _num(r.se.high),
                          Cell("pvalue", r.p_low), Cell("pvalue", r.p_high))),),
            (f"verdict: {r.verdict}",)))
    slopes = tuple(Row(name, (_num(t.coefficients[name]), _num(t.standard_errors[name])))
                   for name in t.coefficients)
    tables.append(Table("printed", "As printed", "slope", (("coefficient",), ("s.e.",)),
                        slopes))
    lead = [f"{t.title or 'A printed table'}: {f.form_description}, "
            + ("restricted" if t.restricted else "unrestricted") + " slopes."]
    return Page("printed-table", "Implied shares from a printed table",
                (*lead, *f.checks), tuple(tables), f.caveats, json_ready(f))


# --- steady-state ratios and required shares ---------------------------------------------


def ratios_page(r: SteadyStateRatios) -> Page:
    rows = tuple(Row(x.economy, (_num(x.ratio), _num(x.from_s_k), _num(x.from_s_h),
                                 _num(x.from_ngd), _num(x.log_ratio), _num(x.capital_output, -1)))
                 for x in r.rows)
    table = Table("ratios", f"Predicted steady-state income relative to {r.reference}", "economy",
                  (("income ratio",), ("log, from sₖ",), ("log, from sₕ",),
                   ("log, from n + g + δ",), ("log ratio",), ("K/Y",)), rows,
                  (f"α = {r.alpha:.3g}, β = {r.beta:.3g}, g + δ = {r.g_delta:g}; the three log "
                   "contributions add up to the log ratio. K/Y = sₖ/(n + g + δ).",))
    widest = max(r.rows, key=lambda x: abs(x.log_ratio))
    lead = (f"With α = {r.alpha:.3g} and β = {r.beta:.3g}, the widest predicted gap from "
            f"{r.reference}: {widest.economy}'s steady-state income per worker is "
            f"{widest.ratio:.3g} times {r.reference}'s.",)
    return Page("ratios", "Steady-state income ratios", lead, (table,),
                (_SAME_TECHNOLOGY,), json_ready(r))


_SAME_TECHNOLOGY = ("the ratios compare steady states of economies with the same technology "
                    "and the same g + δ; observed incomes also reflect productivity "
                    "differences and distance from the steady state")


def required_page(single: Sequence[RequiredShare], income: Sequence[float],
                  saving: Sequence[float], grid: np.ndarray, ngd_ratio: float) -> Page:
    rows = tuple(Row(f"{r:g}", tuple(_num(grid[i, j]) if math.isfinite(grid[i, j]) else
                                     _text("none") for j in range(len(saving))))
                 for i, r in enumerate(income))
    table = Table("required_share", "Share required to turn an investment ratio into an "
                  "income ratio", "income ratio", tuple((f"investment ratio {s:g}",)
                                                        for s in saving), rows,
                  ("a/(1 − a) = ln(income ratio) / ln(investment ratio"
                   + (f" × {ngd_ratio:g}" if ngd_ratio != 1 else "") + "). With physical "
                   "capital only a is α; with human capital investment differing by the same "
                   "ratio it is α + β. 'none': no share in (0, 1) explains the pair.",))
    lead = []
    for s in single:
        if math.isfinite(s.share):
            lead.append(f"An income ratio of {s.income_ratio:g} from an investment ratio of "
                        f"{s.saving_ratio:g}"
                        + (f" (n + g + δ ratio {s.ngd_ratio:g})" if s.ngd_ratio != 1 else "")
                        + f" needs a share of {s.share:.3f}.")
        else:
            lead.append(f"An income ratio of {s.income_ratio:g} from an investment ratio of "
                        f"{s.saving_ratio:g}: no share, {s.reason}.")
    if any(math.isfinite(s.share) and s.share > 0.4 for s in single):
        lead.append("National accounts put the capital share near one third (common practice, "
                    "no source): a required share well above it points to a broader notion of "
                    "capital than machines and buildings, human capital among it.")
    return Page("required-share", "Required capital shares", tuple(lead), (table,),
                (_SAME_TECHNOLOGY,), json_ready({"pairs": list(single), "income_ratios":
                                                 list(income), "investment_ratios":
                                                 list(saving), "grid": grid,
                                                 "ngd_ratio": ngd_ratio}))


# --- transition ------------------------------------------------------------------------------


def transition_page(p: TransitionPath, formats: Sequence[str] = ("svg",)) -> Page:
    marks = [y for y in (0, 10, 25, 50, 100, 200) if y <= p.years[-1]]
    idx = [int(np.argmin(np.abs(p.years - y))) for y in marks]
    rows = tuple(Row(f"{p.years[i]:g}", (_num(p.income[i]), _num(p.capital[i]),
                                         _num(p.growth[i] * 100, 0)))
                 for i in idx)
    table = Table("transition", "Transition after the change", "years after",
                  (("income per worker",), ("capital per worker",), ("growth, % a year",)),
                  rows, ("Technology is 1 at the change; income and capital per worker "
                         "include its growth at g.",))
    half = (f"the numerical half-life is {p.half_life:.1f} years against "
            f"{p.log_linear_half_life:.1f} from the log-linear approximation"
            if math.isfinite(p.half_life)
            else f"the numerical half-life is not available: {p.half_life_reason}")
    change = f"{(math.exp(p.log_gap) - 1) * 100:+.1f}%".replace("-", MINUS)
    lead = (f"The change moves steady-state income per effective worker by {change}; "
            f"{half}.",)
    figures = (transition_figure(p, formats),)
    return Page("transition", "Transition path", lead, (table,),
                ("the log-linear half-life is exact only for small changes; the path holds "
                 "technology, g and δ fixed",), json_ready(p), figures)


def transition_figure(p: TransitionPath, formats: Sequence[str] = ("svg",)) -> Figure:
    """Log income per worker over time against its old and new steady-state paths, and the
    growth rate."""
    import matplotlib as mpl

    from .canvas import STYLE, Panel, add_line, export, layout, limits

    t = p.years
    ly = np.log(p.income)
    old = p.ln_start + p.g * t
    new = p.ln_end + p.g * t
    growth = p.growth * 100
    panels = [Panel(limits(t), limits(ly, old, new), "years after the change",
                    "log income per worker", "Income against the two steady-state paths"),
              Panel(limits(t), limits(growth, np.array([p.g * 100])), "years after the change",
                    "% a year", "Growth of income per worker")]
    title = "Transition after the change"
    with mpl.rc_context(STYLE):
        fig = layout(8.0, 2.6, title, panels)
        add_line(fig, panels[0], t, old, color="grey", linewidth=0.8, linestyle=":")
        add_line(fig, panels[0], t, new, color="grey", linewidth=0.8, linestyle="--")
        add_line(fig, panels[0], t, ly, color="black", linewidth=1.4)
        add_line(fig, panels[1], t, np.full_like(t, p.g * 100), color="grey", linewidth=0.8,
                 linestyle="--")
        add_line(fig, panels[1], t, growth, color="black", linewidth=1.4)
        svg, pdf = export(fig, formats, title)
    return Figure("transition", title, "Log income per worker (solid) with the old (dotted) "
                  "and new (dashed) steady-state paths; growth of income per worker with the "
                  "long-run rate g (dashed).", svg, pdf)


# --- development accounting ----------------------------------------------------------------


def accounting_page(acc: DevelopmentAccounts, title: str = "",
                    formats: Sequence[str] = ("svg",)) -> Page:
    share = f"{acc.alpha / (1 - acc.alpha):.3g}"
    success = tuple(Row(str(y.year), (
        Cell("integer", len(y.economies)),
        _num(y.variance_share) if y.reason is None else _text("n/a"),
        _num(y.percentile_share) if y.reason is None else _text("n/a"),
        _num(y.capital_share_measured) if math.isfinite(y.capital_share_measured)
        else _text("not in the data"))) for y in acc.years)
    tables = [Table("success", "How much measured factors account for", "year",
                    (("economies",), ("variance share",), ("90/10 share",),
                     ("measured capital share",)), success,
                    ("variance share: var(ln y_KH)/var(ln y); 90/10 share: the 90/10 "
                     "percentile ratio of y_KH over that of y; y_KH = (K/Y)^(α/(1 − α)) h is "
                     "income per worker from measured capital and schooling alone. Measured "
                     "capital share: the mean of 1 − labour share.",))]
    lead = []
    for y in acc.years:
        order = np.argsort(-y.ln_y)
        rows = tuple(Row(y.economies[i], (_num(y.ln_y[i]), _num(y.capital_term[i]),
                                          _num(y.ln_h[i]), _num(y.ln_a[i]))) for i in order)
        notes = [f"log income per worker = {share} × ln(K/Y) + ln h + ln A (α = "
                 f"{acc.alpha:.3g}); the three terms add up to the first column."]
        if y.dropped:
            notes.append("left out: " + "; ".join(f"{e} ({why})" for e, why in y.dropped))
        tables.append(Table(f"accounts_{y.year}", f"Development accounts, {y.year}", "economy",
                            (("ln y",), ("capital term",), ("ln h",), ("ln A",)), rows,
                            tuple(notes)))
        if y.reason is not None:
            lead.append(f"{y.year}: the success measures are not available: {y.reason}.")
            continue
        lead.append(f"{y.year}, {len(y.economies)} economies: income per worker from "
                    "measured capital and schooling alone has "
                    f"{y.variance_share:.0%} of the variance of log income per worker, and "
                    f"its 90/10 ratio is {y.percentile_share:.0%} of income's; the rest of the "
                    "dispersion goes with productivity (and, in the variance, with its "
                    "covariance with the factors).")
        if math.isfinite(y.capital_share_measured):
            gap = acc.alpha - y.capital_share_measured
            lead.append(f"{y.year}: national accounts put the capital share at "
                        f"{y.capital_share_measured:.3f} on average (1 − labour share), "
                        f"{abs(gap):.3f} {'below' if gap > 0 else 'above'} the α of "
                        f"{acc.alpha:.3f} used here. The measured share counts the income of "
                        "the self-employed as capital income unless the data split it, which "
                        "puts it above the true share in economies with many self-employed.")
    figures = tuple(accounting_figure(y, formats) for y in acc.years if y.reason is None)
    caveats = ("ln A is a residual: it holds measurement error in output, capital and "
               "schooling as well as productivity",
               "the split takes α as given and the same in every economy; K/Y enters instead "
               "of K so that capital that productivity induces is credited to productivity",
               "the schooling returns (0.134, 0.101, 0.068 by segment) are the usual choice, "
               "recalled from memory" if acc.human == "schooling" else
               "the human-capital index is taken as given")
    return Page("accounting", title or "Development accounting", tuple(lead), tuple(tables),
                caveats, json_ready(acc), figures)


def accounting_figure(y: YearAccounts, formats: Sequence[str] = ("svg",)) -> Figure:
    """Productivity against income per worker, both relative to the richest economy."""
    import matplotlib as mpl
    from matplotlib.lines import Line2D

    from .canvas import STYLE, Panel, add_line, export, layout, limits, place

    top = int(np.argmax(y.ln_y))
    x = y.ln_y - y.ln_y[top]
    a = y.ln_a - y.ln_a[top]
    grid = np.array([min(x.min(), a.min()), 0.0])
    panel = Panel(limits(x), limits(a, grid), "log income per worker, relative to the richest",
                  "log productivity, relative", f"{y.year}: productivity against income")
    title = f"Productivity and income, {y.year}"
    with mpl.rc_context(STYLE):
        fig = layout(4.6, 3.2, title, [panel])
        add_line(fig, panel, grid, grid, color="grey", linewidth=0.8, linestyle="--")
        place(fig, panel, Line2D(x, a, linestyle="none", marker="o", markersize=4,
                                 markerfacecolor="none", markeredgecolor="black"))
        svg, pdf = export(fig, formats, title)
    return Figure(f"productivity_{y.year}", title,
                  f"{y.year}, {len(y.economies)} economies: log productivity against log income "
                  "per worker, both relative to the richest economy; on the dashed line "
                  "productivity accounts for the whole gap.", svg, pdf)


# --- renderers -----------------------------------------------------------------------------


def render_page_text(page: Page, width: int = 100, colour: bool = False) -> str:
    from .text import _wrap, render_table_text

    parts = [*_wrap(page.title, width)]
    for s in page.sentences:
        parts += _wrap(s, width)
    for table in page.tables:
        parts += ["", render_table_text(table, 3, width, colour)]
    if page.caveats:
        parts.append("")
        for c in page.caveats:
            parts += _wrap(c, width, "caveat: ")
    return "\n".join(parts)


def render_page_markdown(page: Page) -> str:
    from .markdown import render_table_md

    out = io.StringIO()
    out.write(f"# {page.title}\n\n")
    for s in page.sentences:
        out.write(f"- {s}\n")
    for table in page.tables:
        out.write("\n" + render_table_md(table, 3) + "\n")
    if page.caveats:
        out.write("\n## Caveats\n\n" + "".join(f"- {c}\n" for c in page.caveats))
    return out.getvalue()


def render_page_html(page: Page, run: dict[str, Any]) -> str:
    import markupsafe

    from .html import _environment, render_table_html

    return str(_environment().get_template("calibration.html.j2").render(
        page=page, run=run,
        tables=[markupsafe.Markup(render_table_html(t, 3)) for t in page.tables],
        figures=[(f, markupsafe.Markup(f.svg)) for f in page.figures if f.svg]))


def write_page(page: Page, out_root: str | Path, command: list[str],
               inputs: Sequence[Path] = (), formats: Sequence[str] = ("svg",)) -> Path:
    """The page as a run folder ``<out_root>/<kind>/<run id>/``: report.html, summary.md,
    tables (Markdown and LaTeX), figures, the inputs and results.json."""
    from ..pipeline import versions
    from .latex import render_table_latex
    from .markdown import render_table_md
    from .runfolder import MAX_DATA_COPY, new_run_id, write_folder

    now = datetime.now(UTC)
    run: dict[str, Any] = {"id": new_run_id(now), "created": now.isoformat(timespec="seconds"),
                           "command": command}
    files: dict[str, str | bytes] = {"report.html": render_page_html(page, run),
                                     "summary.md": render_page_markdown(page)}
    for t in page.tables:
        files[f"tables/{t.key}.md"] = render_table_md(t, 3) + "\n"
        files[f"tables/{t.key}.tex"] = render_table_latex(t, 3, False, None, False)
    for f in page.figures:
        if "svg" in formats and f.svg:
            files[f"figures/{f.key}.svg"] = f.svg + "\n"
        if f.pdf is not None:
            files[f"figures/{f.key}.pdf"] = f.pdf

    def record(r: dict[str, Any]) -> dict[str, Any]:
        return {"kind": page.kind, "title": page.title, "run": r, "versions": versions(),
                "sentences": list(page.sentences), "caveats": list(page.caveats),
                "result": page.record}

    copies = [Path(p) for p in inputs if Path(p).stat().st_size <= MAX_DATA_COPY]
    return write_folder(out_root, page.kind, run, files, copies, record)
