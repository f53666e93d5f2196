"""Comparing two run folders: every quantity that moved beyond a tolerance.

Reads the ``results.json`` of each run (nothing else), so runs made by
different versions, data vintages or samples can be compared.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import InputError


@dataclass(frozen=True)
class Change:
    equation: str
    sample: str
    quantity: str
    a: float | None
    b: float | None

    @property
    def difference(self) -> float | None:
        return None if self.a is None or self.b is None else self.b - self.a


@dataclass(frozen=True)
class Comparison:
    """What differs between run A and run B."""

    run_a: str
    run_b: str
    tolerance: float
    settings: tuple[tuple[str, Any, Any], ...]
    inputs: tuple[tuple[str, Any, Any], ...]
    only_in_a: tuple[str, ...]
    only_in_b: tuple[str, ...]
    economies: tuple[tuple[str, tuple[str, ...], tuple[str, ...]], ...]  # cell, added, removed
    changes: tuple[Change, ...]

    @property
    def identical(self) -> bool:
        return not (self.settings or self.inputs or self.only_in_a or self.only_in_b
                    or self.economies or self.changes)


def load_record(path: str | Path) -> tuple[dict[str, Any], str]:
    """The results.json of a run folder (or the file itself), and a short name for it."""
    path = Path(path)
    file = path / "results.json" if path.is_dir() else path
    if not file.exists():
        raise InputError(f"no results.json at '{path}'; give a run folder")
    try:
        record = json.loads(file.read_text(encoding="utf-8"))
    except (json.JSONDecodeError, UnicodeDecodeError) as exc:
        raise InputError(f"'{file}' is not a readable results.json: {exc}") from None
    if not isinstance(record, dict) or record.get("format") != "steadyfit-results":
        raise InputError(f"'{file}' is not a steadyfit results.json")
    name = f"{file.parent.parent.name}/{file.parent.name}"
    return record, name


def _flat(d: dict[str, Any], prefix: str = "") -> dict[str, Any]:
    out: dict[str, Any] = {}
    for k, v in d.items():
        key = f"{prefix}{k}"
        if isinstance(v, dict):
            out.update(_flat(v, key + "."))
        else:
            out[key] = v
    return out


def _cells(record: dict[str, Any]) -> list[dict[str, Any]]:
    """Results, plus each levels-versus-growth comparison as a cell of its own."""
    cells = list(record.get("results", []))
    pairs: dict[tuple[str, str], dict[str, Any]] = {}
    for c in record.get("consistency", []):
        key = (f"{c['levels_equation']} vs {c['growth_equation']}", c["sample"])
        q = pairs.setdefault(key, {"equation": key[0], "sample": key[1], "quantities": {}})
        name = c["quantity"]
        q["quantities"].update({
            f"{name}_from_levels": c["from_levels"]["value"],
            f"{name}_from_growth": c["from_growth"]["value"],
            f"{name}_difference": c["difference"]["value"],
            f"{name}_difference_p": c["test"]["p"]})
    return cells + list(pairs.values())


def _differs(a: float | None, b: float | None, tol: float) -> bool:
    if a is None or b is None:
        return (a is None) != (b is None)
    return not math.isclose(a, b, rel_tol=0.0, abs_tol=tol)


def compare_runs(a: str | Path, b: str | Path, tolerance: float = 1e-9) -> Comparison:
    """Every setting, input and quantity that differs between two runs (absolute tolerance)."""
    if tolerance < 0:
        raise InputError("the tolerance must be zero or positive", "--tolerance")
    rec_a, name_a = load_record(a)
    rec_b, name_b = load_record(b)
    sa, sb = _flat(rec_a.get("settings", {})), _flat(rec_b.get("settings", {}))
    settings = tuple((k, sa.get(k), sb.get(k)) for k in dict.fromkeys([*sa, *sb])
                     if sa.get(k) != sb.get(k))
    pa, pb = rec_a.get("provenance", {}), rec_b.get("provenance", {})
    inputs = tuple((k, pa.get(k), pb.get(k)) for k in ("data_sha256", "data_rows")
                   if pa.get(k) != pb.get(k))
    cells_a = {(r["equation"], r["sample"]): r for r in _cells(rec_a)}
    cells_b = {(r["equation"], r["sample"]): r for r in _cells(rec_b)}
    only_a = tuple(f"{e} / {s}" for e, s in cells_a if (e, s) not in cells_b)
    only_b = tuple(f"{e} / {s}" for e, s in cells_b if (e, s) not in cells_a)
    economies = []
    changes = []
    for key in (k for k in cells_a if k in cells_b):
        ra, rb = cells_a[key], cells_b[key]
        ea, eb = set(ra.get("economies", [])), set(rb.get("economies", []))
        if ea != eb:
            economies.append((f"{key[0]} / {key[1]}", tuple(sorted(eb - ea)),
                              tuple(sorted(ea - eb))))
        qa, qb = ra.get("quantities", {}), rb.get("quantities", {})
        for q in dict.fromkeys([*qa, *qb]):
            if _differs(qa.get(q), qb.get(q), tolerance):
                changes.append(Change(key[0], key[1], q, qa.get(q), qb.get(q)))
    return Comparison(name_a, name_b, tolerance, settings, inputs, only_a, only_b,
                      tuple(economies), tuple(changes))


def comparison_tables(c: Comparison) -> tuple[Any, ...]:
    """The comparison in the shared table model (for text and HTML)."""
    from .report.tables import Cell, Row, Table

    def value_cell(x: Any) -> Cell:
        if isinstance(x, bool) or x is None or isinstance(x, (str, list)):
            return Cell("text", "-" if x is None else str(x))
        return Cell("number", float(x))

    tables = []
    if c.settings or c.inputs:
        rows = tuple(Row(k, (value_cell(a), value_cell(b))) for k, a, b in (*c.settings,
                                                                          *c.inputs))
        tables.append(Table("settings", "Settings and inputs that differ", "",
                            (("A",), ("B",)), rows))
    if c.only_in_a or c.only_in_b or c.economies:
        rows_list = [Row(x, (Cell("text", "only in A"),)) for x in c.only_in_a]
        rows_list += [Row(x, (Cell("text", "only in B"),)) for x in c.only_in_b]
        for cell, added, removed in c.economies:
            text = "; ".join(p for p in (
                f"added in B: {', '.join(added)}" if added else "",
                f"missing in B: {', '.join(removed)}" if removed else "") if p)
            rows_list.append(Row(cell, (Cell("text", text),)))
        tables.append(Table("samples", "Equations and economies that differ",
                            "equation / sample", (("difference",),), tuple(rows_list)))
    rows = tuple(Row(f"{ch.equation} / {ch.sample}", (
        Cell("text", ch.quantity), value_cell(ch.a), value_cell(ch.b),
        value_cell(ch.difference))) for ch in c.changes)
    tables.append(Table("quantities", "Quantities that changed", "equation / sample",
                        (("quantity",), ("A",), ("B",), ("B - A",)), rows,
                        (f"A = {c.run_a}, B = {c.run_b}; absolute tolerance {c.tolerance:g}. "
                         f"{len(c.changes)} quantities changed.",), digits=4))
    return tuple(tables)


def render_comparison_text(c: Comparison) -> str:
    from .report.text import render_table_text

    head = f"Comparing A = {c.run_a} with B = {c.run_b}"
    if c.identical:
        return head + f"\nNo quantity differs by more than {c.tolerance:g}."
    return "\n\n".join([head, *(render_table_text(t) for t in comparison_tables(c))])


def render_comparison_html(c: Comparison) -> str:
    import html

    from .report.html import render_table_html

    e = html.escape
    body = "".join(render_table_html(t) for t in comparison_tables(c))
    if c.identical:
        body = f"<p>No quantity differs by more than {c.tolerance:g}.</p>"
    return ("<!DOCTYPE html><html lang='en'><head><meta charset='utf-8'>"
            f"<title>steadyfit: {e(c.run_a)} against {e(c.run_b)}</title><style>"
            "body{font-family:Georgia,serif;max-width:1000px;margin:2em auto;padding:0 1em}"
            "table{border-collapse:collapse;font-size:.9em}th,td{padding:.15em .6em}"
            "thead th{border-top:2px solid #111;border-bottom:1px solid #111}"
            "td.num{text-align:right;font-variant-numeric:tabular-nums}"
            "caption{text-align:left;font-weight:bold}figure{margin:1.5em 0}"
            ".note{color:#555;font-size:.9em}</style></head><body>"
            f"<h1>Comparing runs</h1><p>A = {e(c.run_a)}, B = {e(c.run_b)}</p>{body}"
            "</body></html>\n")
