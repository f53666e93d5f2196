"""The machine-readable record of a run (results.json)."""

from __future__ import annotations

import math
from dataclasses import asdict
from typing import Any

from ..estimators import Fit
from ..findings import EquationFindings, Estimate, Findings, ShareVerdict, TestResult
from ..quantities import quantities, unavailable

FORMAT_VERSION = 2  # 2: "reason" beside every number that is not available


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
        "nobs": f.nobs,
        "df_resid": _num(f.df_resid),
        "r2": _num(f.rsquared),
        "adj_r2": _num(f.rsquared_adj),
        "ser": _num(f.ser),
        "ssr": _num(f.ssr),
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
    }


def _result(r: EquationFindings, confidence: float) -> dict[str, Any]:
    c = r.crosscheck
    return {
        "equation": r.equation,
        "sample": r.sample,
        "form": r.form_key,
        "dependent": r.dependent_label,
        "description": r.description,
        "restriction": r.restriction_text,
        "nobs": r.nobs,
        "n_in_sample": r.n_in_sample,
        "economies": list(r.economies),
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
            "intercept": _num(r.nonlinear.intercept), "ssr": _num(r.nonlinear.ssr),
            "evaluations": r.nonlinear.evaluations},
        "quantities": {k: _num(v) for k, v in quantities(r).items()},
        "unavailable": unavailable(r),
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
            "non_positive": s.non_positive, "digits": s.digits, "stars": s.stars,
            "max_evaluations": s.max_evaluations, "figures": s.figures,
        },
        "samples": [{"name": x.name, "filter": x.filter, "economies": x.n_selected}
                    for x in findings.samples],
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
        "warnings": list(findings.warnings),
        "caveats": list(findings.caveats),
        "provenance": asdict(findings.provenance),
    }
