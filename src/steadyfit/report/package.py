"""The replication package of a run folder, rendered from findings only.

``data/analysis.csv`` (every economy of every sample with the columns as
estimated; up to :data:`~steadyfit.analysis.LISTED_ECONOMIES` rows),
``data/codebook.csv`` and ``data/codebook.md`` (one row per column of the CSV), the
descriptive statistics and correlations as tables, the folder's ``README.md`` and the
references of the methods the run used (``references.txt``, ``references.bib``).
Nothing here reads files: the run folder writer hands over what it will copy.
"""

from __future__ import annotations

import hashlib
import shlex
from collections.abc import Iterable, Mapping
from dataclasses import dataclass
from pathlib import PurePath
from typing import Any

import pandas as pd

from ..analysis import AnalysisData, listing_limit
from ..findings import Findings
from .markdown import render_table_md
from .tables import Cell, Row, Table

ANALYSIS_CSV = "data/analysis.csv"
PANEL_CSV = "data/panel_"  # + <equation>_<sample>.csv
CODEBOOK_CSV = "data/codebook.csv"
CODEBOOK_MD = "data/codebook.md"
CODEBOOK_FIELDS = ("column", "meaning", "unit", "source_column", "transformation", "role",
                   "equation", "sample", "dependent", "unrestricted_regressors",
                   "restricted_regressors")
# the codebook separates the regressor columns of an estimation with this
REGRESSOR_SEPARATOR = "; "
MEMORY_NOTE = "recalled from memory; check against the publication before citing"


def _analysis(findings: Findings) -> AnalysisData:
    if findings.analysis is None:
        raise ValueError("these findings carry no analysis data (made without steadyfit.run)")
    return findings.analysis


def analysis_csv(findings: Findings) -> str:
    """data/analysis.csv: numbers with full precision (they read back to the same floats)."""
    return _analysis(findings).frame.to_csv(index=False, lineterminator="\n")


def codebook_frame(findings: Findings) -> pd.DataFrame:
    """One row per column of the analysis CSV; the estimation columns are filled on the rows
    of the used-in-estimation columns."""
    data = _analysis(findings)
    by_used = {e.used: e for e in data.estimations}
    rows = []
    for c in data.columns:
        e = by_used.get(c.column)
        rows.append((c.column, c.meaning, c.unit, c.source, c.transformation, c.role,
                     c.equation or "", c.sample or "", e.dependent if e else "",
                     REGRESSOR_SEPARATOR.join(e.unrestricted) if e else "",
                     REGRESSOR_SEPARATOR.join(e.restricted) if e else ""))
    return pd.DataFrame(rows, columns=list(CODEBOOK_FIELDS))


def codebook_csv(findings: Findings) -> str:
    return codebook_frame(findings).to_csv(index=False, lineterminator="\n")


def _text_table(key: str, title: str, stub: str, heads: Iterable[str],
                rows: Iterable[tuple[str, ...]]) -> Table:
    return Table(key, title, stub, tuple((h,) for h in heads),
                 tuple(Row(r[0], tuple(Cell("text", v) for v in r[1:])) for r in rows))


def codebook_md(findings: Findings) -> str:
    data = _analysis(findings)
    columns = _text_table("codebook", "Columns of analysis.csv", "column",
                          ("meaning", "unit", "source column", "transformation"),
                          ((c.column, c.meaning, c.unit, c.source or "\u2013",
                            c.transformation) for c in data.columns))
    fits = _text_table("estimations", "Estimations: the rows and columns of each fit",
                       "equation / sample",
                       ("rows used (= 1)", "dependent", "unrestricted regressors",
                        "restricted regressors"),
                       ((f"{e.equation} / {e.sample}", e.used, e.dependent,
                         ", ".join(e.unrestricted), ", ".join(e.restricted))
                        for e in data.estimations))
    return "\n".join([
        f"# Codebook of {PurePath(ANALYSIS_CSV).name}", "",
        f"One row per economy that belongs to at least one sample; the id column is "
        f"'{data.id_column}'. Empty cells are missing values. Every fit has a constant as "
        "well as the regressors listed.", "",
        render_table_md(columns), "", render_table_md(fits), ""])


# --- descriptive statistics -------------------------------------------------------------

_STATISTICS = ("mean", "standard deviation", "minimum", "maximum", "N")


def _statistic_cells(values: pd.Series) -> tuple[Cell, ...]:
    v = values.astype(float).dropna()
    n = len(v)
    if n == 0:
        return (*(Cell.empty() for _ in range(4)), Cell("integer", 0))
    sd = Cell("number", float(v.std())) if n > 1 else Cell.empty()
    return (Cell("number", float(v.mean())), sd, Cell("number", float(v.min())),
            Cell("number", float(v.max())), Cell("integer", n))


def descriptive_tables(findings: Findings) -> tuple[Table, ...]:
    """Per sample: statistics of each model variable in natural units and in logs, and the
    correlations of the regressors ('descriptives' and 'correlations'; the latter only when
    some sample has two regressors or more).  Empty without analysis data."""
    data = findings.analysis
    if data is None:
        return ()
    variables = data.with_role("variable", "log")
    stats_rows: list[Row] = []
    corr_rows: list[Row] = []
    # every sample's regressors, in the order of the analysis data's columns
    used = {c for s in data.samples for c in data.regressors(s)}
    regressors = [c for c in data.with_role("log", "derived") if c.column in used]
    for s in data.samples:
        mask = data.frame[data.sample_column(s)].to_numpy() == 1
        section = f"{findings.labels.sample(s)} ({int(mask.sum())} economies)"
        for i, c in enumerate(variables):  # one column at a time: no copy of the sample
            stats_rows.append(Row(c.label, _statistic_cells(data.frame[c.column].loc[mask]),
                                  section=section if i == 0 else None))
        regs = [c.column for c in regressors if c.column in data.regressors(s)]
        if len(regs) < 2:
            continue
        corr = data.members(s, regs).astype(float).corr()
        for i, a in enumerate(regs):
            cells = tuple(Cell("number", float(corr.loc[a, b.column]))
                          if b.column in regs[: i + 1] else Cell.empty() for b in regressors)
            corr_rows.append(Row(data.column(a).label, cells,
                                 section=section if i == 0 else None))
    out = [Table("descriptives", "Descriptive statistics by sample", "variable",
                 tuple((h,) for h in _STATISTICS), tuple(stats_rows),
                 ("Every economy in the sample (its filter), with a value: N counts them; for "
                  "a log, economies whose argument is positive. Natural units as in the data "
                  "file, logs as estimated. Standard deviation with N \u2212 1 in the "
                  "denominator.",))]
    if corr_rows:
        out.append(Table("correlations", "Correlations of the regressors by sample",
                         "regressor", tuple((c.label,) for c in regressors),
                         tuple(corr_rows),
                         ("Pearson correlations of the unrestricted regressors of the "
                          "equations estimated on each sample, over the economies in the "
                          "sample with both values.",)))
    return tuple(out)


# --- references ---------------------------------------------------------------------------

@dataclass(frozen=True)
class Reference:
    """A publication (recalled from memory: fields not known for sure are left out)."""

    key: str
    authors: tuple[str, ...]  # "Family, Given"
    year: int
    title: str
    venue: str  # journal, or the book of a chapter
    volume: str | None = None
    number: str | None = None
    pages: str | None = None  # "65--94"
    editors: tuple[str, ...] = ()
    publisher: str | None = None
    chapter: str | None = None

    @property
    def kind(self) -> str:
        return "incollection" if self.editors else "article"


_REFERENCES = {r.key: r for r in (
    Reference("solow_1956", ("Solow, Robert M.",), 1956,
              "A Contribution to the Theory of Economic Growth",
              "Quarterly Journal of Economics", "70", "1", "65--94"),
    Reference("mankiw_romer_weil_1992", ("Mankiw, N. Gregory", "Romer, David", "Weil, David N."),
              1992, "A Contribution to the Empirics of Economic Growth",
              "Quarterly Journal of Economics", "107", "2", "407--437"),
    Reference("barro_salaimartin_1992", ("Barro, Robert J.", "Sala-i-Martin, Xavier"), 1992,
              "Convergence", "Journal of Political Economy", "100", "2", "223--251"),
    Reference("white_1980", ("White, Halbert",), 1980,
              "A Heteroskedasticity-Consistent Covariance Matrix Estimator and a Direct Test "
              "for Heteroskedasticity", "Econometrica", "48", "4", "817--838"),
    Reference("mackinnon_white_1985", ("MacKinnon, James G.", "White, Halbert"), 1985,
              "Some Heteroskedasticity-Consistent Covariance Matrix Estimators with Improved "
              "Finite Sample Properties", "Journal of Econometrics", "29", "3", "305--325"),
    Reference("cameron_miller_2015", ("Cameron, A. Colin", "Miller, Douglas L."), 2015,
              "A Practitioner's Guide to Cluster-Robust Inference",
              "Journal of Human Resources", "50", "2", "317--372"),
    Reference("oehlert_1992", ("Oehlert, Gary W.",), 1992, "A Note on the Delta Method",
              "The American Statistician", "46", "1", "27--29"),
    Reference("newey_mcfadden_1994", ("Newey, Whitney K.", "McFadden, Daniel"), 1994,
              "Large Sample Estimation and Hypothesis Testing", "Handbook of Econometrics",
              "4", editors=("Engle, Robert F.", "McFadden, Daniel L."),
              publisher="Elsevier", chapter="36"),
    Reference("jennrich_1969", ("Jennrich, Robert I.",), 1969,
              "Asymptotic Properties of Non-Linear Least Squares Estimators",
              "Annals of Mathematical Statistics", "40", "2", "633--643"),
)}
_HC = ("HC0", "HC1", "HC2", "HC3")


def references(findings: Findings) -> tuple[tuple[Reference, str], ...]:
    """The references of the methods the run used, each with what it was used for."""
    s = findings.settings
    res = findings.results
    nls = [r.nonlinear for r in res if r.nonlinear is not None]
    hc = {s.covariance} | {n.robust_covariance for n in nls}
    human = any("human" in r.form_key for r in res)
    used = [
        ("solow_1956", "the growth model behind every equation"),
        ("mankiw_romer_weil_1992", "the steady-state income regressions, the restriction of "
         "constant returns and the implied shares"
         + ("; the augmentation with human capital" if human else "")),
    ]
    if any(r.form_key.startswith("growth") for r in res):
        used.append(("barro_salaimartin_1992", "the growth form: the speed of convergence and "
                                               "the half-life"))
    if any(r.shares or r.speed for r in res):
        used.append(("oehlert_1992", "delta-method standard errors and intervals of the "
                                     "implied parameters"))
    if hc & set(_HC):
        used.append(("white_1980", "heteroskedasticity-robust covariance"))
    small = sorted(hc & set(_HC[1:]))
    if small:
        used.append(("mackinnon_white_1985", "the small-sample versions of the "
                     f"heteroskedasticity-robust covariance ({', '.join(small)})"))
    if s.covariance == "cluster":
        used.append(("cameron_miller_2015", f"cluster-robust covariance (clusters: "
                                            f"'{s.cluster}')"))
    if any(r.minimum_distance is not None and r.minimum_distance.reason is None for r in res):
        used.append(("newey_mcfadden_1994", "minimum-distance estimation of the parameters "
                                            "from the unrestricted slopes and its "
                                            "over-identification test"))
    if nls:
        used.append(("jennrich_1969", "nonlinear least squares in the structural parameters"))
    return tuple((_REFERENCES[k], why) for k, why in used)


def _names(people: tuple[str, ...]) -> str:
    """'Family, Given' -> 'Given Family', joined with commas and 'and'."""
    shown = [" ".join(reversed(p.split(", ", 1))) for p in people]
    return shown[0] if len(shown) == 1 else ", ".join(shown[:-1]) + " and " + shown[-1]


def _citation(r: Reference) -> str:
    first, rest = r.authors[0], r.authors[1:]
    authors = first + ("" if not rest else f" and {_names(rest)}" if len(rest) == 1 else
                       f", {_names(rest)}")
    where = r.venue
    if r.editors:
        where = (f"In {_names(r.editors)} (eds.), {r.venue}"
                 + (f", volume {r.volume}" if r.volume else "")
                 + (f", chapter {r.chapter}" if r.chapter else "")
                 + (f". {r.publisher}" if r.publisher else ""))
    else:
        where += (f" {r.volume}" if r.volume else "") + (f"({r.number})" if r.number else "")
        where += f", {r.pages.replace('--', '-')}" if r.pages else ""
    return f"{authors} ({r.year}). {r.title}. {where}."


def references_text(findings: Findings) -> str:
    lines = [f"# References of the methods this run used; {MEMORY_NOTE}.", ""]
    for ref, why in references(findings):
        lines += [_citation(ref), f"    Used for: {why}.", ""]
    return "\n".join(lines)


def references_bibtex(findings: Findings) -> str:
    lines = [f"% References of the methods this run used; {MEMORY_NOTE}.", ""]
    for r, why in references(findings):
        fields = [("author", " and ".join(r.authors)), ("title", r.title),
                  ("booktitle" if r.editors else "journal", r.venue),
                  ("editor", " and ".join(r.editors) if r.editors else None),
                  ("year", str(r.year)), ("volume", r.volume), ("number", r.number),
                  ("chapter", r.chapter), ("pages", r.pages), ("publisher", r.publisher)]
        lines += [f"% used for: {why}", f"@{r.kind}{{{r.key},"]
        lines += [f"  {name} = {{{value}}}," for name, value in fields if value]
        lines += ["}", ""]
    return "\n".join(lines)


# --- the folder's README -----------------------------------------------------------------------

_WHAT = (
    ("README.md", "this file"),
    ("report.html", "the report: verdicts, tables and figures on one self-contained page"),
    ("summary.md", "the verdicts and every table in Markdown"),
    ("results.json", "every number of the run with its settings and provenance, for programs"),
    (ANALYSIS_CSV, "the analysis data: every economy of every sample with the model variables "
                   "as in the data file, the logs and derived regressors exactly as estimated, "
                   "one 0/1 column per sample and one per estimation (rows used)"),
    (CODEBOOK_CSV, "one row per column of analysis.csv: meaning, unit, source column, "
                   "transformation; the rows of the estimation columns name each fit's "
                   "dependent and regressor columns"),
    (CODEBOOK_MD, "the codebook for reading"),
    ("references.txt", "the references of the methods the run used"),
    ("references.bib", "the same references in BibTeX"),
    ("tables/", "every table as Markdown (.md) and booktabs LaTeX (.tex), the descriptive "
                "statistics by sample (descriptives) and the correlations of the regressors "
                "(correlations) among them"),
    (PANEL_CSV, "the period panel of each panel equation and sample as estimated "
                "(`panel_<equation>_<sample>.csv`): economy, the period's end year, log income "
                "per worker (`ln_y`; the previous row of an economy is its initial income) "
                "and each regressor's column; a row of a period that could not be built has "
                "missing values, gaps are never closed up"),
    ("figures/", "the figures"),
    ("inputs/", "the spec and, when at most 20 MB, the data file, as the run read them"),
)


def render_readme(findings: Findings, run: Mapping[str, Any], paths: Iterable[str],
                  analysis_text: str | None = None) -> str:
    """README.md of the run folder.  ``paths`` are the folder's files (relative paths),
    ``run`` the run record (id, created, command); ``analysis_text`` the analysis CSV, whose
    SHA-256 is listed."""
    paths = list(paths)
    prov = findings.provenance
    versions = prov.versions
    spec = PurePath(prov.spec_path).name if prov.spec_path else None
    data = PurePath(prov.data_path).name
    command = run.get("command") or []
    out = [f"# Run {run.get('id', '')}: {findings.title}", "",
           f"Made {run.get('created', '')} by steadyfit {versions.get('steadyfit', '')}.", "",
           "## Files", ""]
    for name, what in _WHAT:
        if any(p == name or (name.endswith(("/", "_")) and p.startswith(name)) for p in paths):
            out.append(f"- `{name}`: {what}")
    out += ["", "## How it was made", "", "Command:", "",
            f"    {shlex.join(str(c) for c in command)}", "",
            "Versions: " + ", ".join(f"{k} {v}" for k, v in versions.items()) + ".", "",
            "Inputs (SHA-256):", ""]
    if spec:
        out.append(f"- spec `{spec}`: `{prov.spec_sha256}`")
    out.append(f"- data `{data}`: `{prov.data_sha256}` ({prov.data_rows} rows)")
    if analysis_text is not None:
        digest = hashlib.sha256(analysis_text.encode("utf-8")).hexdigest()
        out.append(f"- made here, `{ANALYSIS_CSV}`: `{digest}`")
    elif findings.analysis is not None:
        out += ["", f"`{ANALYSIS_CSV}` is not written: its {len(findings.analysis.frame):,} "
                f"rows are more than the {listing_limit():,} economies a run folder lists one "
                "by one (results.json keeps each sample's count and the SHA-256 of its sorted "
                "economy ids instead). The same table comes from the library: "
                "`steadyfit.build_analysis(steadyfit.plan(SPEC)).frame`."]
    pins = " ".join(f'"{k}=={v}"' for k, v in versions.items()
                    if k != "python" and v != "not installed")
    copied = f"inputs/{data}" in paths
    beside = PurePath(prov.spec_path or "").parent == PurePath(prov.data_path).parent
    out += ["", "## How to reproduce it", "",
            f"1. With Python {versions.get('python', '')}, install the same versions:", "",
            f"       python -m pip install {pins}", ""]
    if spec:
        out += ["2. Run the spec kept in `inputs/`:", "",
                f"       steadyfit run inputs/{shlex.quote(spec)} --out reproduced", ""]
    if not copied:
        out.append(f"   The data file `{data}` was too large to copy: put a file with the "
                   "SHA-256 above where the spec's `data.file` names it.")
    elif not beside:
        out.append(f"   The spec read its data from another folder: set its `data.file` to "
                   f"`{data}` (the copy in `inputs/`).")
    out += ["3. Compare the two runs; only the run id and time should differ:", "",
            f"       steadyfit compare . reproduced/{findings.spec_stem}/<run id>", ""]
    return "\n".join(out)


def package_files(findings: Findings, run: Mapping[str, Any], paths: Iterable[str]
                  ) -> dict[str, str]:
    """The replication package's files (relative path -> text), the tables aside.

    ``paths`` are the folder's other files, the copies in ``inputs/`` included; the README
    lists them with the package's own files."""
    files = {CODEBOOK_CSV: codebook_csv(findings), CODEBOOK_MD: codebook_md(findings),
             "references.txt": references_text(findings),
             "references.bib": references_bibtex(findings)}
    if len(_analysis(findings).frame) <= listing_limit():
        files[ANALYSIS_CSV] = analysis_csv(findings)
    for p in findings.panels:
        if p.data is not None:
            files[f"{PANEL_CSV}{p.equation}_{p.sample}.csv"] = p.data.to_csv(
                index=False, float_format="%.17g", lineterminator="\n")
    files["README.md"] = render_readme(findings, run, [*paths, *files, "README.md"],
                                       files.get(ANALYSIS_CSV))
    return files
