"""One flat vocabulary of named quantities per equation and sample.

Replication targets, run comparison and ``results.json`` all name numbers the
same way:

=====================  ==========================================================
``coef:<regressor>``   unrestricted coefficient (``coef:ln_sk``, ``coef:const``)
``se:<regressor>``     its standard error
``restricted_coef:``   restricted coefficient (``restricted_coef:ln_sk_less_ln_ngd``)
``restricted_se:``     its standard error
``nobs``               observations
``r2``, ``adj_r2``     (adjusted) R^2 of the unrestricted fit; ``restricted_adj_r2``
``ser``                standard error of the unrestricted regression
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
=====================  ==========================================================
"""

from __future__ import annotations

from typing import TYPE_CHECKING

from .equations import ModelForm

if TYPE_CHECKING:
    from .findings import EquationFindings

CONSTANT = "const"


def quantity_names(form: ModelForm) -> tuple[str, ...]:
    """Every quantity name a result of ``form`` carries (for validating targets early)."""
    unres = (CONSTANT, *(r.name for r in form.unrestricted))
    res = (CONSTANT, *(r.name for r in form.restricted))
    params = list(form.parameters.shares)
    if len(params) > 1:
        params.append("+".join(params))
    if form.converges:
        params += ["lam", "half_life"]
    names = [f"{k}:{n}" for n in unres for k in ("coef", "se")]
    names += [f"{k}:{n}" for n in res for k in ("restricted_coef", "restricted_se")]
    names += ["nobs", "r2", "adj_r2", "ser", "restricted_adj_r2", "restricted_ser"]
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
    return tuple(names)


def quantities(r: EquationFindings) -> dict[str, float]:
    """The named quantities of one result (see the module docstring)."""
    q: dict[str, float] = {}
    u, re = r.unrestricted, r.restricted
    for name, b, se in zip(u.names, u.coef, u.se, strict=True):
        q[f"coef:{name}"], q[f"se:{name}"] = float(b), float(se)
    for name, b, se in zip(re.names, re.coef, re.se, strict=True):
        q[f"restricted_coef:{name}"], q[f"restricted_se:{name}"] = float(b), float(se)
    q.update(nobs=float(u.nobs), r2=u.rsquared, adj_r2=u.rsquared_adj, ser=u.ser,
             restricted_adj_r2=re.rsquared_adj, restricted_ser=re.ser)
    if r.f_test is not None and r.wald_test is not None:
        q.update(restriction_f=r.f_test.statistic, restriction_p=r.f_test.pvalue,
                 restriction_wald=r.wald_test.statistic, restriction_wald_p=r.wald_test.pvalue)
    for e in (*(v.estimate for v in r.shares), *r.speed):
        q[e.name], q[f"{e.name}_se"] = e.value, e.se
        q[f"{e.name}_low"], q[f"{e.name}_high"] = e.low, e.high
    for e in r.unrestricted_shares:
        q[f"unrestricted_{e.name}"], q[f"unrestricted_{e.name}_se"] = e.value, e.se
    c = r.crosscheck
    if c is not None:
        q.update(crosscheck_gap=c.gap.value, crosscheck_gap_se=c.gap.se,
                 crosscheck_p=c.test.pvalue)
    md = r.minimum_distance
    if md is not None:
        for e in md.estimates:
            q[f"md_{e.name}"], q[f"md_{e.name}_se"] = e.value, e.se
        q.update(md_overid=md.overid.statistic, md_overid_p=md.overid.pvalue)
    nls = r.nonlinear
    if nls is not None:
        for e, rob in zip(nls.estimates, nls.robust, strict=True):
            q[f"nls_{e.name}"], q[f"nls_{e.name}_se"] = e.value, e.se
            q[f"nls_{e.name}_robust_se"] = rob.se
    return q
