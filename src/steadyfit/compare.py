"""Comparing two run folders: the verdicts that changed, then the settings and inputs,
then every quantity that moved beyond a tolerance.

Reads the ``results.json`` of each run (nothing else), so runs made by
different versions, data vintages or samples can be compared; a record of an
older format version is read through :func:`steadyfit.report.record.upgrade_record`.
"""

from __future__ import annotations

import json
import math
from dataclasses import dataclass
from pathlib import Path
from typing import Any

from .errors import InputError
from .report.record import UnreadableVersion, upgrade_record


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
class VerdictChange:
    """A verdict of one equation and sample (or levels-versus-growth pair) that differs."""

    equation: str
    sample: str
    what: str  # which verdict: "restriction (F test)", "alpha against its band" ...
    a: str
    b: str

    def __str__(self) -> str:
        return f"{self.equation} / {self.sample}: {self.what}: {self.a} -> {self.b}"


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
    verdicts: tuple[VerdictChange, ...] = ()

    @property
    def n_settings_inputs(self) -> int:
        """Settings, inputs, equations and economies that differ (one each)."""
        return (len(self.settings) + len(self.inputs) + len(self.only_in_a)
                + len(self.only_in_b) + len(self.economies))

    @property
    def identical(self) -> bool:
        return not (self.verdicts or self.n_settings_inputs or self.changes)

    def count_line(self) -> str:
        """'N verdicts changed, M settings/inputs, K quantities'."""
        n, m, k = len(self.verdicts), self.n_settings_inputs, len(self.changes)
        return (f"{n} {'verdict' if n == 1 else 'verdicts'} changed, "
                f"{m} {'setting/input' if m == 1 else 'settings/inputs'}, "
                f"{k} {'quantity' if k == 1 else 'quantities'}")


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
    try:
        record = upgrade_record(record)
    except UnreadableVersion as exc:
        raise InputError(f"'{file}' {exc}") from None
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
    """Results and panel results, plus each levels-versus-growth comparison as a cell of its
    own."""
    cells = list(record.get("results", [])) + list(record.get("panels", []))
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


NOT_AVAILABLE = "not available"
ABSENT = "(none)"


def _level_words(record: dict[str, Any]) -> tuple[float, str]:
    """The run's test level (one minus its confidence) and how verdicts name it."""
    level = 1 - float(record.get("settings", {}).get("confidence", 0.95))
    return level, f"{round(level * 100, 6):g}%"


# A verdict: its outcome ("rejected", "inside", "met" ...), and the outcome as shown, with
# the level it was reached at. Only a change of outcome is a changed verdict: the same
# outcome at another level follows from the confidence, listed among the settings.
Verdict = tuple[str, str]


def _test_verdict(test: dict[str, Any] | None, level: float, words: tuple[str, str],
                  at: str) -> Verdict | None:
    """words[0] when the test rejects at ``level``, else words[1]; 'not available'."""
    if test is None:
        return None
    p = test.get("p")
    if not test.get("available", True) or p is None:
        return NOT_AVAILABLE, NOT_AVAILABLE
    word = words[0] if p < level else words[1]
    return word, f"{word} at {at}"


def _anchor_verdict(share: dict[str, Any], cell: tuple[str, str], prefix: str, level: float,
                    at: str) -> dict[tuple[str, str, str], Verdict]:
    """A share's test against the measured capital share, where the record has one."""
    anchor = share.get("anchor")
    if not anchor:
        return {}
    verdict = _test_verdict(anchor.get("test"), level, ("differ", "do not differ"), at)
    return {(*cell, f"{prefix}{share['name']} against the measured capital share"):
            verdict or (NOT_AVAILABLE, NOT_AVAILABLE)}


def record_verdicts(record: dict[str, Any]) -> dict[tuple[str, str, str], Verdict]:
    """Every verdict of a (current-layout) record, keyed by (equation, sample, what): the
    restriction's F test at the run's level, each share against its band and against the
    measured capital share, each levels-versus-growth comparison, each replication target."""
    level, at = _level_words(record)
    out: dict[tuple[str, str, str], Verdict] = {}
    for r in record.get("results", []):
        cell = (r["equation"], r["sample"])
        f = _test_verdict((r.get("restriction_tests") or {}).get("f"), level,
                          ("rejected", "not rejected"), at)
        if f is not None:
            out[(*cell, "restriction (F test)")] = f
        boot = _test_verdict((r.get("bootstrap") or {}).get("restriction"), level,
                             ("rejected", "not rejected"), at)
        if boot is not None:
            out[(*cell, "restriction (bootstrap)")] = boot
        for share in r.get("implied_shares", []):
            if share.get("band") is not None:
                status = share.get("band_status") or NOT_AVAILABLE
                out[(*cell, f"{share['name']} against its band")] = status, status
            out.update(_anchor_verdict(share, cell, "", level, at))
    for p in record.get("panels", []):
        cell = (p["equation"], p["sample"])
        for e in p.get("estimators", []):
            title = e.get("title", e.get("method", ""))
            w = _test_verdict(e.get("restriction_test"), level, ("rejected", "not rejected"),
                              at)
            if w is not None:
                out[(*cell, f"{title}: restriction (Wald test)")] = w
            for share in e.get("implied_shares", []):
                if share.get("band") is not None:
                    status = share.get("band_status") or NOT_AVAILABLE
                    out[(*cell, f"{title}: {share['name']} against its band")] = status, status
                out.update(_anchor_verdict(share, cell, f"{title}: ", level, at))
            tests = {t.get("name", ""): t for t in e.get("unrestricted", {}).get("tests", [])}
            ar2 = next((t for n, t in tests.items() if n.startswith("AR(2)")), None)
            w = _test_verdict(ar2, level, ("second-order correlation",
                                           "no second-order correlation"), at)
            if w is not None:
                out[(*cell, f"{title}: AR(2)")] = w
            if e.get("bracket") is not None:
                inside = "inside" if e["bracket"]["inside"] else "outside"
                out[(*cell, f"{title}: within-to-pooled bracket")] = inside, inside
    for c in record.get("consistency", []):
        pair = f"{c['levels_equation']} vs {c['growth_equation']}"
        out[(pair, c["sample"], f"{c['quantity']}, levels against growth")] = (
            _test_verdict(c.get("test"), level, ("differ", "do not differ"), at)
            or (NOT_AVAILABLE, NOT_AVAILABLE))
    for t in record.get("scorecard", []):
        met = "met" if t.get("met") else "missed"
        out[(t["equation"], t["sample"], f"target {t['quantity']}")] = met, met
    return out


def _verdict_changes(rec_a: dict[str, Any], rec_b: dict[str, Any],
                     cells: set[tuple[str, str]]) -> tuple[VerdictChange, ...]:
    """Verdicts whose outcome differs, on the cells both runs have (the others are listed
    apart)."""
    va, vb = record_verdicts(rec_a), record_verdicts(rec_b)
    absent = (ABSENT, ABSENT)
    out = []
    for key in dict.fromkeys([*va, *vb]):
        equation, sample, what = key
        a, b = va.get(key, absent), vb.get(key, absent)
        if (equation, sample) in cells and a[0] != b[0]:
            out.append(VerdictChange(equation, sample, what, a[1], b[1]))
    order = {cell: i for i, cell in enumerate(dict.fromkeys((v.equation, v.sample)
                                                            for v in out))}
    return tuple(sorted(out, key=lambda v: order[(v.equation, v.sample)]))  # by cell


def _economies_of(record: dict[str, Any], cell: dict[str, Any]) -> set[str] | tuple[Any, ...]:
    """The economies one result used: its sample's members less the economies it dropped;
    where the sample was too large to list, the sample's digest and the dropped economies
    stand for them."""
    dropped = {d.get("economy") for d in cell.get("dropped", []) if isinstance(d, dict)}
    sample = next((x for x in record.get("samples", [])
                   if isinstance(x, dict) and x.get("name") == cell.get("sample")), {})
    if sample.get("members") is not None:
        return set(sample["members"]) - dropped
    return (sample.get("members_sha256"), tuple(sorted(map(str, dropped))))


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
        ea, eb = _economies_of(rec_a, ra), _economies_of(rec_b, rb)
        if isinstance(ea, set) and isinstance(eb, set):
            if ea != eb:
                economies.append((f"{key[0]} / {key[1]}", tuple(sorted(eb - ea)),
                                  tuple(sorted(ea - eb))))
        elif ea != eb:  # a digest on one side at least: the lists are not in the records
            economies.append((f"{key[0]} / {key[1]}", (), ()))
        qa, qb = ra.get("quantities", {}), rb.get("quantities", {})
        for q in dict.fromkeys([*qa, *qb]):
            if _differs(qa.get(q), qb.get(q), tolerance):
                changes.append(Change(key[0], key[1], q, qa.get(q), qb.get(q)))
    common = {k for k in cells_a if k in cells_b}
    return Comparison(name_a, name_b, tolerance, settings, inputs, only_a, only_b,
                      tuple(economies), tuple(changes),
                      _verdict_changes(rec_a, rec_b, common))


def comparison_tables(c: Comparison, verdicts_only: bool = False) -> tuple[Any, ...]:
    """The comparison in the shared table model (for text and HTML): verdicts first, then
    settings and inputs, equations and economies, quantities."""
    from .report.tables import Cell, Row, Table

    def value_cell(x: Any) -> Cell:
        if isinstance(x, bool) or x is None or isinstance(x, (str, list)):
            return Cell("text", "-" if x is None else str(x))
        return Cell("number", float(x))

    tables = []
    if c.verdicts:
        tables.append(Table("verdicts", "Verdicts that changed", "equation / sample",
                            (("verdict",), ("A",), ("B",)),
                            tuple(Row(f"{v.equation} / {v.sample}", (
                                Cell("text", v.what), Cell("text", v.a), Cell("text", v.b)))
                                  for v in c.verdicts)))
    if verdicts_only:
        return tuple(tables)
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
                f"missing in B: {', '.join(removed)}" if removed else "") if p) or (
                "the economies differ (too many to list: told apart by their SHA-256 digest "
                "and the economies dropped)")
            rows_list.append(Row(cell, (Cell("text", text),)))
        tables.append(Table("samples", "Equations and economies that differ",
                            "equation / sample", (("difference",),), tuple(rows_list)))
    rows = tuple(Row(f"{ch.equation} / {ch.sample}", (
        Cell("text", ch.quantity), value_cell(ch.a), value_cell(ch.b),
        value_cell(ch.difference))) for ch in c.changes)
    tables.append(Table("quantities", "Quantities that changed", "equation / sample",
                        (("quantity",), ("A",), ("B",), ("B − A",)), rows,
                        (f"A = {c.run_a}, B = {c.run_b}; absolute tolerance {c.tolerance:g}. "
                         f"{len(c.changes)} quantities changed.",), digits=4))
    return tuple(tables)


def _summary(c: Comparison, verdicts_only: bool) -> str:
    if c.identical:
        return (f"Nothing changed: no verdict, setting or input, and no quantity differs by "
                f"more than {c.tolerance:g}.")
    if verdicts_only and not c.verdicts:
        return f"No verdict changed ({c.count_line()})."
    return f"{c.count_line()} (absolute tolerance {c.tolerance:g})."


def render_comparison_text(c: Comparison, verdicts_only: bool = False, width: int = 100,
                           colour: bool = False) -> str:
    """The comparison for a terminal, no line wider than ``width``: a count line, each changed
    verdict on a line of its own, then the tables of settings, inputs and quantities (unless
    ``verdicts_only``)."""
    import textwrap

    from .report.text import render_table_text

    def wrap(text: str, indent: str = "") -> str:
        return "\n".join(textwrap.wrap(text, width, initial_indent=indent,
                                       subsequent_indent=indent + "  ",
                                       break_on_hyphens=False))

    parts = [wrap(f"Comparing A = {c.run_a} with B = {c.run_b}"), wrap(_summary(c, verdicts_only))]
    if c.verdicts:
        parts.append("\n".join(["Verdicts that changed", *(wrap(str(v), "  ")
                                                           for v in c.verdicts)]))
    if not c.identical and not verdicts_only:
        parts += [render_table_text(t, width=width, colour=colour)
                  for t in comparison_tables(c) if t.key != "verdicts"]
    return "\n\n".join(parts)


def render_comparison_html(c: Comparison, verdicts_only: bool = False) -> str:
    """The comparison as one HTML page, the verdicts that changed first."""
    import html

    from .report.html import render_table_html

    e = html.escape
    body = f"<p>{e(_summary(c, verdicts_only))}</p>"
    if not c.identical:
        body += "".join(render_table_html(t) for t in comparison_tables(c, verdicts_only))
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
