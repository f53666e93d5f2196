"""One flat vocabulary of named quantities per equation and sample.

Replication targets, run comparison and ``results.json`` all name numbers the
same way:

=====================  ==========================================================
``coef:<regressor>``   unrestricted coefficient (``coef:ln_sk``, ``coef:const``)
``se:<regressor>``     its standard error
``restricted_coef:``   restricted coefficient (``restricted_coef:ln_sk_less_ln_ngd``)
``restricted_se:``     its standard error
``observations``       economies in the estimation
``r_squared``          R² of the unrestricted fit; ``adjusted_r_squared`` adjusted,
                       ``restricted_adjusted_r_squared`` that of the restricted fit
``residual_sd``        standard deviation of the unrestricted fit's residuals
                       (``restricted_residual_sd``)
``restriction_f``      F statistic of the restriction; ``restriction_p`` its p-value
``restriction_wald``   Wald statistic; ``restriction_wald_p`` its p-value
``<share>``            implied share from the restricted fit (``alpha``, ``beta``,
                       ``alpha+beta``); ``<share>_se``, ``<share>_low``,
                       ``<share>_high``
``unrestricted_<s>``   share from the unrestricted investment slopes (and ``_se``)
``crosscheck_gap``     difference of the quantity implied both ways; ``crosscheck_p``
``lam``, ``half_life``  speed of convergence and half-life (growth forms; with
                       ``_se``, ``_low``, ``_high``)
``md_<p>``             minimum-distance estimate (and ``_se``); ``md_overid``,
                       ``md_overid_p`` the over-identification test
``nls_<p>``            nonlinear least squares (``_se`` classical, ``_robust_se``)
``<q>_percentile_low``  with ``[bootstrap]``: each quantity's bootstrap intervals (``_high``;
                       ``_bias_corrected_``, ``_studentised_`` likewise), ``<q>_bootstrap_sd``
                       the draws' standard deviation, ``restriction_bootstrap_p``
``<q>_leave_one_``     with ``[influence]``: the largest shift in ``alpha``, ``beta`` or
``out_max``            ``lam`` from leaving one economy out (signed);
                       ``influential_economies`` how many the analysis names
``measured_capital_``  ``measured_capital_share``: one minus the mean labour share of the
``share``              economies used (``_se`` of that mean), where the data carry one;
                       ``alpha_gap`` implied alpha minus it (``_se``), ``alpha_gap_p`` the
                       test that they are equal
=====================  ==========================================================

Targets may also use the names the tables print (``lambda``, ``λ``, ``half-life``,
``α``, ``β``) and the names of format 2 (``nobs``, ``r2``, ``adj_r2``, ``ser``);
:func:`canonical` maps them.
"""

from __future__ import annotations

import math
from typing import TYPE_CHECKING

import numpy as np

from .equations import ModelForm
from .panel.methods import METHODS

if TYPE_CHECKING:
    from .findings import EquationFindings, Estimate, ShareVerdict
    from .panel.results import PanelFindings

CONSTANT = "const"


# other spellings of quantity names: as tables print them, and the names of results.json
# format 2
ALIASES = {"lambda": "lam", "\u03bb": "lam", "half-life": "half_life",
           "\u03b1": "alpha", "\u03b2": "beta", "\u03b1+\u03b2": "alpha+beta",
           "nobs": "observations", "r2": "r_squared", "adj_r2": "adjusted_r_squared",
           "ser": "residual_sd", "restricted_adj_r2": "restricted_adjusted_r_squared",
           "restricted_ser": "restricted_residual_sd"}


def canonical(name: str) -> str:
    """The quantity name for ``name`` written as the tables print it or in an old spelling
    (``lambda_se`` -> ``lam_se``, ``α + β`` -> ``alpha+beta``, ``nobs`` -> ``observations``)."""
    text = name.strip().replace(" ", "")
    head, sep, rest = text.partition(":")
    if sep and head in METHODS:  # a panel estimator's quantity: 'within:lambda'
        return f"{head}:{canonical(rest)}"
    if text in ALIASES:
        return ALIASES[text]
    for alias, real in sorted(ALIASES.items(), key=lambda kv: -len(kv[0])):
        for sep in ("_", ":"):
            if text.startswith(alias + sep):
                return real + text[len(alias):]
            if sep == "_" and text.endswith(sep + alias):  # unrestricted_lambda
                return text[: -len(alias)] + real
    return text


def _parameter_names(form: ModelForm) -> list[str]:
    params = list(form.parameters.shares)
    if len(params) > 1:
        params.append("+".join(params))
    if form.converges:
        params += ["lam", "half_life"]
    return params


# the national-accounts anchor of alpha (see steadyfit.anchor)
ANCHOR_NAMES = ("measured_capital_share", "measured_capital_share_se", "alpha_gap",
                "alpha_gap_se", "alpha_gap_p")
NO_LABOUR_SHARE = "the data have no labour share (data.columns.labour_share)"


def _anchor_names(form: ModelForm) -> list[str]:
    return list(ANCHOR_NAMES) if "alpha" in form.parameters.shares else []


def anchor_quantities(v: ShareVerdict) -> dict[str, tuple[float, str | None]]:
    """The anchor's quantities of one share verdict, each with why it has no number."""
    a = v.anchor
    if a is None:
        return {}
    m = a.measured
    return {"measured_capital_share": (m.value, m.reason),
            "measured_capital_share_se": (m.se, m.reason),
            "alpha_gap": (a.gap.value, a.gap.reason), "alpha_gap_se": (a.gap.se, a.gap.reason),
            "alpha_gap_p": (a.test.pvalue, a.test.reason)}


# per panel estimator: tests and counts (each name prefixed '<estimator>:')
PANEL_TESTS = ("restriction_wald", "restriction_wald_p", "overid", "overid_p", "ar1", "ar1_p",
               "ar2", "ar2_p", "first_stage_f", "first_stage_p")
PANEL_COUNTS = ("observations", "economies", "instruments")


def panel_quantity_names(form: ModelForm) -> tuple[str, ...]:
    """Every quantity a panel result carries: each named '<estimator>:<quantity>'."""
    per = [f"{k}:{r.name}" for r in form.unrestricted for k in ("coef", "se")]
    per += [f"{k}:{r.name}" for r in form.restricted for k in ("restricted_coef",
                                                                 "restricted_se")]
    per += [f"{s}{suffix}" for s in ["gamma", *_parameter_names(form)]
            for suffix in ("", "_se", "_low", "_high")]
    per += [*PANEL_TESTS, *PANEL_COUNTS, *_anchor_names(form)]
    return tuple(f"{m}:{q}" for m in METHODS for q in per)


def quantity_names(form: ModelForm) -> tuple[str, ...]:
    """Every quantity name a result of ``form`` carries (for validating targets early)."""
    if form.form == "panel":
        return panel_quantity_names(form)
    unres = (CONSTANT, *(r.name for r in form.unrestricted))
    res = (CONSTANT, *(r.name for r in form.restricted))
    params = _parameter_names(form)
    names = [f"{k}:{n}" for n in unres for k in ("coef", "se")]
    names += [f"{k}:{n}" for n in res for k in ("restricted_coef", "restricted_se")]
    names += ["observations", "r_squared", "adjusted_r_squared", "residual_sd",
              "restricted_adjusted_r_squared", "restricted_residual_sd"]
    if form.restricts:
        names += ["restriction_f", "restriction_p", "restriction_wald", "restriction_wald_p"]
    names += [f"{s}{suffix}" for s in params for suffix in ("", "_se", "_low", "_high")]
    if form.crosscheck is not None:
        names += [f"unrestricted_{s}{suffix}" for s in form.crosscheck.shares.names
                  for suffix in ("", "_se")]
        names += ["crosscheck_gap", "crosscheck_gap_se", "crosscheck_p"]
    if form.restricts:
        names += [f"md_{s}{suffix}" for s in form.parameters.names for suffix in ("", "_se")]
        names += ["md_overid", "md_overid_p"]
    names += [f"nls_{s}{suffix}" for s in form.parameters.names
              for suffix in ("", "_se", "_robust_se")]
    return tuple(names + _anchor_names(form))


def quantities(r: EquationFindings) -> dict[str, float | None]:
    """The named quantities of one result (see the module docstring); None where a quantity
    is not available (:func:`unavailable` says why)."""
    return _collect(r)[0]


def unavailable(r: EquationFindings) -> dict[str, str]:
    """Why each quantity of the result's form that has no number has none."""
    return _collect(r)[1]


def _collect(r: EquationFindings) -> tuple[dict[str, float | None], dict[str, str]]:
    q: dict[str, float | None] = {}
    why: dict[str, str] = {}

    def put(name: str, value: float, reason: str | None = None) -> None:
        if value is not None and math.isfinite(value):
            q[name] = float(value)
        else:
            q[name] = None
            why[name] = reason or "not finite"

    def put_estimate(prefix: str, e: Estimate, interval: bool = True) -> None:
        put(prefix, e.value, e.reason)
        put(f"{prefix}_se", e.se, e.reason)
        if interval:
            put(f"{prefix}_low", e.low, e.reason)
            put(f"{prefix}_high", e.high, e.reason)

    u, re = r.unrestricted, r.restricted
    for fit, coef, se in ((u, "coef", "se"), (re, "restricted_coef", "restricted_se")):
        for name, b, s in zip(fit.names, fit.coef, fit.se, strict=True):
            put(f"{coef}:{name}", b)
            put(f"{se}:{name}", s, "the coefficient's variance is not finite")
    put("observations", float(u.nobs))
    for name, value in (("r_squared", u.rsquared), ("adjusted_r_squared", u.rsquared_adj),
                        ("residual_sd", u.ser),
                        ("restricted_adjusted_r_squared", re.rsquared_adj),
                        ("restricted_residual_sd", re.ser)):
        put(name, value)
    for prefix, t in (("restriction_f", r.f_test), ("restriction_wald", r.wald_test)):
        if t is not None:
            put(prefix, t.statistic, t.reason)
            put("restriction_p" if prefix == "restriction_f" else "restriction_wald_p",
                t.pvalue, t.reason)
    for e in (*(v.estimate for v in r.shares), *r.speed):
        put_estimate(e.name, e)
    for v in r.shares:
        for name, (value, reason) in anchor_quantities(v).items():
            put(name, value, reason)
    for e in r.unrestricted_shares:
        put_estimate(f"unrestricted_{e.name}", e, interval=False)
    b = r.bootstrap
    if b is not None:
        for i in b.intervals:
            put(f"{i.name}_bootstrap_sd", i.spread, i.reason)
            for kind, pair in (("percentile", i.percentile), ("bias_corrected", i.bias_corrected),
                               ("studentised", i.studentised)):
                for end, value in zip(("low", "high"), pair or (math.nan, math.nan),
                                      strict=True):
                    put(f"{i.name}_{kind}_{end}", value, i.reason)
        if b.restriction is not None:
            put("restriction_bootstrap_p", b.restriction.pvalue, b.restriction.reason)
    inf = r.influence
    if inf is not None:
        for j, name in enumerate(inf.quantities):
            row = np.abs(inf.shifts[j])
            finite = np.isfinite(row)
            put(f"{name}_leave_one_out_max",
                float(inf.shifts[j][np.nanargmax(row)]) if finite.any() else math.nan,
                "no fit without one economy implies ordinary parameters")
        put("influential_economies", float(len(inf.named)))
    c = r.crosscheck
    if c is not None:
        put("crosscheck_gap", c.gap.value, c.gap.reason)
        put("crosscheck_gap_se", c.gap.se, c.gap.reason)
        put("crosscheck_p", c.test.pvalue, c.test.reason)
    md = r.minimum_distance
    if md is not None:
        for e in md.estimates:
            put_estimate(f"md_{e.name}", e, interval=False)
        put("md_overid", md.overid.statistic, md.overid.reason)
        put("md_overid_p", md.overid.pvalue, md.overid.reason)
    nls = r.nonlinear
    if nls is not None:
        for e, rob in zip(nls.estimates, nls.robust, strict=True):
            put_estimate(f"nls_{e.name}", e, interval=False)
            put(f"nls_{e.name}_robust_se", rob.se, rob.reason)
    from .equations import get_form

    form = get_form(r.form_key, 1.0 if r.form_key.startswith("growth:") else None)
    for name in quantity_names(form):
        if name in q:
            continue
        q[name] = None
        if name.startswith("nls_"):
            why[name] = ("nonlinear least squares was not asked for (structural = false)"
                         if r.problem is None else f"not estimated: {r.problem}")
        elif name.startswith("md_"):
            why[name] = f"not estimated: {r.problem}" if r.problem else "not estimated"
        elif name in ANCHOR_NAMES:
            why[name] = NO_LABOUR_SHARE
        else:
            why[name] = "not computed for this result"
    return q, why


def panel_quantities(p: PanelFindings) -> tuple[dict[str, float | None], dict[str, str]]:
    """The named quantities of a panel result ('<estimator>:<quantity>'), and why each one
    without a number has none."""
    q: dict[str, float | None] = {}
    why: dict[str, str] = {}

    def put(name: str, value: float | None, reason: str | None = None) -> None:
        if value is not None and math.isfinite(value):
            q[name] = float(value)
        else:
            q[name] = None
            why[name] = reason or "not finite"

    tests = {"overid": ("Sargan", "Hansen"), "ar1": ("AR(1)",), "ar2": ("AR(2)",),
             "first_stage_f": ("first-stage",)}
    for f in p.estimators:
        m = f.method
        for fit, coef, se in ((f.unrestricted, "coef", "se"),
                              (f.restricted, "restricted_coef", "restricted_se")):
            names = ["ln_y0", *fit.names[1:fit.slopes]]
            for name, b, s in zip(names, fit.coef, fit.se, strict=False):
                put(f"{m}:{coef}:{name}", b)
                put(f"{m}:{se}:{name}", s, "the coefficient's variance is not finite")
        for e in (f.gamma, *(v.estimate for v in f.shares), *f.speed):
            for suffix, value in (("", e.value), ("_se", e.se), ("_low", e.low),
                                  ("_high", e.high)):
                put(f"{m}:{e.name}{suffix}", value, e.reason)
        for v in f.shares:
            for name, (value, reason) in anchor_quantities(v).items():
                put(f"{m}:{name}", value, reason)
        if f.wald_test is not None:
            put(f"{m}:restriction_wald", f.wald_test.statistic, f.wald_test.reason)
            put(f"{m}:restriction_wald_p", f.wald_test.pvalue, f.wald_test.reason)
        for key, starts in tests.items():
            t = f.unrestricted.test(*starts)
            if t is None:
                continue
            stat, pname = ((key, f"{key}_p") if key != "first_stage_f" else
                           ("first_stage_f", "first_stage_p"))
            put(f"{m}:{stat}", t.statistic, t.reason)
            put(f"{m}:{pname}", t.pvalue, t.reason)
        put(f"{m}:observations", float(f.unrestricted.nobs))
        put(f"{m}:economies", float(f.unrestricted.n_economies))
        if f.unrestricted.n_instruments is not None:
            put(f"{m}:instruments", float(f.unrestricted.n_instruments))
    from .equations import get_form

    for name in panel_quantity_names(get_form(p.form_key, float(p.period_years))):
        if name not in q:
            q[name] = None
            why[name] = ("this estimator was not asked for" if not any(
                name.startswith(f.method + ":") for f in p.estimators)
                else NO_LABOUR_SHARE if name.partition(":")[2] in ANCHOR_NAMES
                else "not computed by this estimator")
    return q, why
