"""The machine-readable record of a run (results.json).

The layout is described by the JSON Schema shipped beside this module
(``results.schema.json``, :func:`results_schema`); :func:`upgrade_record` reads a
record of an older format version into the current layout.
"""

from __future__ import annotations

import hashlib
import json
import math
from collections.abc import Sequence
from dataclasses import asdict
from importlib import resources
from typing import Any

import numpy as np
import pandas as pd

from ..analysis import listing_limit
from ..data import FILTER_READS
from ..estimators import Fit
from ..findings import (
    AnchorCheck,
    EquationFindings,
    Estimate,
    Findings,
    SampleSummary,
    ShareVerdict,
    TestResult,
)
from ..panel.results import PanelFindings, PanelFit
from ..quantities import canonical, panel_quantities, quantities, unavailable
from ..robust.results import BootstrapFindings, InfluenceFindings, SweepFindings

# 2: "reason" beside every number that is not available.
# 3: keys in steadyfit's own words: a fit's nobs, df_resid, r2, adj_r2, ser and ssr became
#    observations, residual_df, r_squared, adjusted_r_squared, residual_sd and
#    residual_sum_of_squares (a result's nobs and the nonlinear fit's ssr likewise), and
#    settings.stars became settings.significance_marks (with the new report settings
#    figure_formats, latex_max_columns and latex_landscape); the quantities nobs, r2,
#    adj_r2, ser, restricted_adj_r2 and restricted_ser became observations, r_squared,
#    adjusted_r_squared, residual_sd, restricted_adjusted_r_squared and
#    restricted_residual_sd.
# 4: each sample lists its economies once ("members", with "members_sha256"; null above
#    LISTED_ECONOMIES), and a result no longer lists its own: they are the sample's
#    members less the economies it dropped.
FORMAT_VERSION = 4
READABLE_VERSIONS = (2, 3, 4)  # what upgrade_record (and so ``compare``) reads
SCHEMA_FILE = "results.schema.json"


def _num(x: Any) -> Any:
    """JSON has no NaN or infinity: those become null."""
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _fit(f: Fit, confidence: float) -> dict[str, Any]:
    ci = f.conf_int(confidence)
    return {
        "coefficients": [
            {"name": n, "label": lab, "estimate": _num(b), "se": _num(se), "t": _num(t),
             "p": _num(p), "low": _num(lo), "high": _num(hi)}
            for n, lab, b, se, t, p, (lo, hi) in zip(f.names, f.labels, f.coef, f.se, f.tvalues,
                                                    f.pvalues, ci, strict=True)
        ],
        "covariance_matrix": [[_num(v) for v in row] for row in f.cov],
        "covariance": f.covariance,
        "distribution": "t" if f.use_t else "normal",
        "observations": f.nobs,
        "residual_df": _num(f.df_resid),
        "r_squared": _num(f.rsquared),
        "adjusted_r_squared": _num(f.rsquared_adj),
        "residual_sd": _num(f.ser),
        "residual_sum_of_squares": _num(f.ssr),
        "clusters": f.n_clusters,
        "covariance_problem": f.cov_problem,
    }


def _test(t: TestResult) -> dict[str, Any]:
    return {"name": t.name, "available": t.available, "reason": t.reason,
            "statistic": _num(t.statistic), "p": _num(t.pvalue),
            "df": [_num(d) for d in t.df], "distribution": t.distribution, "null": t.null}


_TEXT_FIELDS = ("name", "reason", "missing", "remark")


def _estimate(e: Estimate) -> dict[str, Any]:
    out = {k: (v if k in _TEXT_FIELDS else _num(v)) for k, v in asdict(e).items()}
    # an infinite interval end is unbounded on that side, not missing
    out["unbounded"] = [k for k in ("low", "high", "exact_low", "exact_high")
                        if isinstance(getattr(e, k), float) and math.isinf(getattr(e, k))]
    return out


def _verdict(v: ShareVerdict) -> dict[str, Any]:
    return {
        **_estimate(v.estimate),
        "band": list(v.band) if v.band else None,
        "band_status": v.band_status,
        "point": _num(v.point),
        "point_test": _test(v.point_test) if v.point_test else None,
        "interval_reaches_one": v.interval_reaches_one,
        "anchor": _anchor(v.anchor) if v.anchor is not None else None,
    }


def _anchor(a: AnchorCheck) -> dict[str, Any]:
    m = a.measured
    return {
        "measured": {"column": m.column, "available": m.available, "reason": m.reason,
                     **{k: _num(getattr(m, k)) for k in ("value", "se", "lowest", "highest")},
                     "n": m.n, "n_sample": m.n_sample,
                     "years": list(m.years) if m.years is not None else None},
        "gap": _estimate(a.gap),
        "test": _test(a.test),
        "inside": a.inside,
        "measured_in_band": a.measured_in_band,
        "covariance": _num(a.covariance) if a.covariance is not None else None,
    }


def economy_digest(economies: Sequence[str]) -> str:
    """The SHA-256 of the economy ids sorted and joined by newlines (UTF-8): the same for the
    same set of economies whatever their order in the data."""
    ids = pd.Index(economies, dtype=str).sort_values()
    h = hashlib.sha256()
    for start in range(0, len(ids), _DIGEST_CHUNK):  # never the whole list as Python text
        part = "\n".join(ids[start:start + _DIGEST_CHUNK].tolist())
        h.update((("\n" if start else "") + part).encode("utf-8"))
    return h.hexdigest()


_DIGEST_CHUNK = 50_000


def _sample(x: SampleSummary) -> dict[str, Any]:
    listed = len(x.members) <= listing_limit()
    return {"name": x.name, "filter": x.filter, "economies": x.n_selected,
            "members": [str(e) for e in x.members] if listed else None,
            "members_sha256": economy_digest(x.members),
            "members_reason": None if listed else (
                f"{len(x.members):,} economies, more than the {listing_limit():,} a run "
                "folder lists")}


def _result(r: EquationFindings, confidence: float) -> dict[str, Any]:
    c = r.crosscheck
    return {
        "equation": r.equation,
        "sample": r.sample,
        "form": r.form_key,
        "dependent": r.dependent_label,
        "description": r.description,
        "restriction": r.restriction_text,
        "observations": r.nobs,
        "n_in_sample": r.n_in_sample,
        "dropped": [{"economy": d.economy, "reason": d.reason} for d in r.dropped],
        "unrestricted": _fit(r.unrestricted, confidence),
        "restricted": _fit(r.restricted, confidence),
        "restriction_tests": {"f": _test(r.f_test) if r.f_test else None,
                              "wald": _test(r.wald_test) if r.wald_test else None},
        "steady_state": r.steady_state,
        "problem": r.problem,
        "implied_shares": [_verdict(v) for v in r.shares],
        "convergence": [_estimate(e) for e in r.speed],
        "unrestricted_shares": [_estimate(e) for e in r.unrestricted_shares],
        "crosscheck": None if c is None else {
            "quantity": c.quantity, "from_rates": _estimate(c.from_rates),
            "from_growth": _estimate(c.from_growth), "gap": _estimate(c.gap),
            "test": _test(c.test)},
        "notes": list(r.notes),
        "minimum_distance": None if r.minimum_distance is None else {
            "estimates": [_estimate(e) for e in r.minimum_distance.estimates],
            "overid": _test(r.minimum_distance.overid),
            "reason": r.minimum_distance.reason,
            "weight_covariance": r.minimum_distance.covariance},
        "nonlinear_least_squares": None if r.nonlinear is None else {
            "estimates": [_estimate(e) for e in r.nonlinear.estimates],
            "robust": [_estimate(e) for e in r.nonlinear.robust],
            "robust_covariance": r.nonlinear.robust_covariance,
            "intercept": _num(r.nonlinear.intercept),
            "residual_sum_of_squares": _num(r.nonlinear.ssr),
            "evaluations": r.nonlinear.evaluations},
        "quantities": {k: _num(v) for k, v in quantities(r).items()},
        "unavailable": unavailable(r),
        "bootstrap": None if r.bootstrap is None else _bootstrap(r.bootstrap),
        "influence": None if r.influence is None else _influence(r.influence),
    }


def _sweep(sw: SweepFindings) -> dict[str, Any]:
    return {
        "drop_each": sw.drop_each, "confidence": sw.confidence,
        "specifications": [
            {"equation": r.equation, "sample": r.sample, "g_plus_delta": r.g_plus_delta,
             "covariance": r.covariance, "dropped": r.dropped, "observations": r.nobs,
             "values": {k: _num(v) for k, v in r.values.items()},
             "intervals": {k: [_num(lo), _num(hi)] for k, (lo, hi) in r.intervals.items()},
             "restriction_p": _num(r.restriction_p), "reason": r.reason}
            for r in sw.rows],
    }


def _influence(inf: InfluenceFindings) -> dict[str, Any]:
    """The named economies and each quantity's largest shift (never one entry per economy:
    the folder stays small at any size)."""
    largest = {}
    for j, q in enumerate(inf.quantities):
        row = inf.shifts[j]
        i = int(np.nanargmax(np.abs(row))) if np.isfinite(row).any() else None
        largest[q] = None if i is None else {"economy": inf.economies[i],
                                             "shift": _num(row[i])}
    return {
        "threshold": inf.threshold, "speed_threshold": inf.speed_threshold,
        "cooks_cutoff": _num(inf.cooks_cutoff), "economies_left_out": len(inf.economies),
        "largest_shift": largest,
        "named": [{"economy": e.economy, "shifts": {k: _num(v) for k, v in e.shifts.items()},
                   "restriction_p": _num(e.restriction_p), "cooks_distance": _num(e.cooks_distance),
                   "moves": list(e.moves), "ordinary": e.ordinary} for e in inf.named],
    }


def _pair(pair: tuple[float, float] | None) -> list[float | None] | None:
    return None if pair is None else [_num(pair[0]), _num(pair[1])]


def _bootstrap(b: BootstrapFindings) -> dict[str, Any]:
    return {
        "method": b.method, "weights": b.weights, "by_cluster": b.by_cluster,
        "replications": b.replications, "seed": b.seed, "confidence": b.confidence,
        "ordinary_draws": b.ordinary,
        "intervals": [{"name": i.name, "estimate": _num(i.estimate), "spread": _num(i.spread),
                       "percentile": _pair(i.percentile),
                       "bias_corrected": _pair(i.bias_corrected),
                       "studentised": _pair(i.studentised), "reason": i.reason}
                      for i in b.intervals],
        "restriction": _test(b.restriction) if b.restriction is not None else None,
    }


def _panel_fit(f: PanelFit) -> dict[str, Any]:
    return {
        "coefficients": [{"name": n, "estimate": _num(b), "se": _num(se)}
                         for n, b, se in zip(f.names, f.coef, f.se, strict=True)],
        "covariance_matrix": [[_num(v) for v in row] for row in f.cov],
        "slopes": f.slopes,
        "observations": f.nobs,
        "economies": f.n_economies,
        "periods": f.n_periods,
        "instruments": f.n_instruments,
        "steps": f.steps,
        "tests": [_test(t) for t in f.tests],
        "warnings": list(f.warnings),
    }


def _panel(p: PanelFindings) -> dict[str, Any]:
    values, why = panel_quantities(p)
    return {
        "equation": p.equation,
        "sample": p.sample,
        "form": p.form_key,
        "description": p.description,
        "restriction": p.restriction_text,
        "period_years": p.period_years,
        "shape": list(p.shape),
        "n_in_sample": p.n_in_sample,
        "economies": list(p.economies),
        "estimators": [{
            "method": e.method,
            "title": e.title,
            "assumes": e.assumes,
            "unrestricted": _panel_fit(e.unrestricted),
            "restricted": _panel_fit(e.restricted),
            "restriction_test": _test(e.wald_test) if e.wald_test else None,
            "gamma": _estimate(e.gamma),
            "implied_shares": [_verdict(v) for v in e.shares],
            "convergence": [_estimate(x) for x in e.speed],
            "problem": e.problem,
            "bracket": None if e.bracket is None else {
                "estimate": e.bracket.estimate, "within": e.bracket.within,
                "pooled": e.bracket.pooled, "inside": e.bracket.inside,
                "sentence": e.bracket.sentence},
        } for e in p.estimators],
        "notes": list(p.notes),
        "quantities": {k: _num(v) for k, v in values.items()},
        "unavailable": why,
    }


def to_record(findings: Findings, run: dict[str, Any]) -> dict[str, Any]:
    """Every number of the run as plain JSON-able data, with provenance."""
    s = findings.settings
    return {
        "format": "steadyfit-results",
        "format_version": FORMAT_VERSION,
        "run": run,
        "title": findings.title,
        "settings": {
            "g_plus_delta": s.g_plus_delta, "span_years": s.span_years,
            "covariance": s.covariance, "cluster": s.cluster, "confidence": s.confidence,
            "bands": {k: list(v) for k, v in s.bands.items()}, "points": s.points,
            "non_positive": s.non_positive, "digits": s.digits,
            "significance_marks": s.significance_marks,
            "max_evaluations": s.max_evaluations, "figures": s.figures,
            "figure_formats": list(s.figure_formats), "latex_max_columns": s.latex_max_columns,
            "latex_landscape": s.latex_landscape,
        },
        "samples": [_sample(x) for x in findings.samples],
        "results": [_result(r, s.confidence) for r in findings.results],
        "scorecard": [
            {"equation": t.equation, "sample": t.sample, "quantity": t.quantity,
             "published": t.published, "ours": _num(t.ours), "difference": _num(t.difference),
             "tolerance": t.tolerance, "met": t.met, "reason": t.reason, "source": t.source}
            for t in findings.scorecard],
        "targets_met": findings.targets_met,
        "consistency": [
            {"sample": c.sample, "levels_equation": c.levels_equation,
             "growth_equation": c.growth_equation, "quantity": c.quantity,
             "from_levels": _estimate(c.from_levels), "from_growth": _estimate(c.from_growth),
             "difference": _estimate(c.difference), "test": _test(c.test),
             "joint_covariance": c.joint_covariance, "clusters": c.n_clusters}
            for c in findings.consistency],
        **({"panels": [_panel(p) for p in findings.panels]} if findings.panels else {}),
        **({"sweep": _sweep(findings.sweep)} if findings.sweep is not None else {}),
        "warnings": list(findings.warnings),
        "caveats": list(findings.caveats),
        "provenance": asdict(findings.provenance),
    }


# Version 2 keys and their version-3 names, by where they occur.
_V2_FIT_KEYS = {"nobs": "observations", "df_resid": "residual_df", "r2": "r_squared",
                "adj_r2": "adjusted_r_squared", "ser": "residual_sd",
                "ssr": "residual_sum_of_squares"}
_V2_RESULT_KEYS = {"nobs": "observations"}
_V2_NONLINEAR_KEYS = {"ssr": "residual_sum_of_squares"}
_V2_SETTINGS_KEYS = {"stars": "significance_marks"}
# Settings version 2 did not record, as a version-2 run worked: SVG figures only, LaTeX
# tables neither split nor turned
_V2_SETTINGS_IMPLIED = {"figure_formats": ["svg"], "latex_max_columns": None,
                        "latex_landscape": False}


def _renamed(d: Any, names: dict[str, str]) -> Any:
    return {names.get(k, k): v for k, v in d.items()} if isinstance(d, dict) else d


class UnreadableVersion(ValueError):
    """A results.json of a format version this steadyfit cannot read."""


def _samples_from_results(record: dict[str, Any]) -> list[Any]:
    """Before version 4 each result listed its economies and a sample only counted them: a
    sample's members are the economies its results used or dropped for a missing value
    (not for the filter), in the order the results list them."""
    out: list[Any] = []
    for x in record.get("samples", []):
        if not isinstance(x, dict):
            out.append(x)
            continue
        members: dict[str, None] = {}
        for r in record.get("results", []):
            if isinstance(r, dict) and r.get("sample") == x.get("name"):
                members.update(dict.fromkeys(map(str, r.get("economies", []))))
                members.update(dict.fromkeys(
                    str(d.get("economy")) for d in r.get("dropped", [])
                    if isinstance(d, dict) and FILTER_READS not in str(d.get("reason", ""))))
        out.append(dict(x, members=list(members), members_sha256=economy_digest(list(members)),
                        members_reason=None))
    return out


def upgrade_record(record: dict[str, Any]) -> dict[str, Any]:
    """A parsed results.json in the current layout (a new dict; the argument is unchanged).

    Version 2 is read by renaming its keys; in versions 2 and 3 each result listed its
    economies, which become its sample's members.  Any other version than those in
    :data:`READABLE_VERSIONS` raises :class:`UnreadableVersion`, saying which it is.
    """
    version = record.get("format_version")
    if isinstance(version, bool) or version not in READABLE_VERSIONS:
        readable = (", ".join(str(v) for v in READABLE_VERSIONS[:-1])
                    + f" and {READABLE_VERSIONS[-1]}")
        which = "has no format_version" if version is None else (
            f"has format_version {json.dumps(version)}")
        newer = (" (written by a newer steadyfit)"
                 if type(version) is int and version > FORMAT_VERSION else "")
        raise UnreadableVersion(f"{which}{newer}; this steadyfit reads format versions "
                                f"{readable}")
    if version == FORMAT_VERSION:
        return dict(record)
    out = dict(record, format_version=FORMAT_VERSION)
    out["samples"] = _samples_from_results(record)
    settings = _renamed(record.get("settings", {}), _V2_SETTINGS_KEYS)
    if isinstance(settings, dict):
        settings = {**_V2_SETTINGS_IMPLIED, **settings}
    out["settings"] = settings
    results = []
    for r in record.get("results", []):
        r = _renamed(r, _V2_RESULT_KEYS)
        if isinstance(r, dict):
            r.pop("economies", None)  # from 4 on, listed once by the sample
            for fit in ("unrestricted", "restricted"):
                if fit in r:
                    r[fit] = _renamed(r[fit], _V2_FIT_KEYS)
            if r.get("nonlinear_least_squares") is not None:
                r["nonlinear_least_squares"] = _renamed(r["nonlinear_least_squares"],
                                                        _V2_NONLINEAR_KEYS)
            for names in ("quantities", "unavailable"):
                if isinstance(r.get(names), dict):
                    r[names] = {canonical(k): v for k, v in r[names].items()}
        results.append(r)
    out["results"] = results
    out["scorecard"] = [dict(t, quantity=canonical(t["quantity"]))
                        if isinstance(t, dict) and isinstance(t.get("quantity"), str) else t
                        for t in record.get("scorecard", [])]
    return out


def results_schema() -> dict[str, Any]:
    """The JSON Schema (draft 2020-12) of the current results.json layout, shipped with the
    package as ``steadyfit/report/results.schema.json``."""
    text = resources.files("steadyfit.report").joinpath(SCHEMA_FILE).read_text(encoding="utf-8")
    schema: dict[str, Any] = json.loads(text)
    return schema
