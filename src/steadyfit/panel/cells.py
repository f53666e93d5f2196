"""One panel equation on one sample: every estimator asked for, unrestricted and restricted,
and what each implies through the form table's maps.

The panel form is the growth form over one period with an effect per economy,
so the maps, restriction and regressors all come from
:func:`steadyfit.equations.find_form`.  Estimators fit ``ln y(t)`` on
``ln y(t-1)`` (coefficient ``gamma``) and the form's other regressors; the maps
read the growth parameterisation, whose coefficient on initial income is
``gamma - 1`` (the same fit: subtracting the lag from both sides shifts that one
coefficient by one and changes nothing else).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from dataclasses import replace
from typing import cast

import numpy as np
import pandas as pd

from ..anchor import anchored, measured_share
from ..data import EconomyTable, sample_members
from ..equations import ModelForm
from ..errors import EstimationError
from ..estimators import covariance_problem
from ..findings import Settings
from ..inference import implied_from_slopes, normal_estimate, normal_quantile, wald_test
from ..spec import Spec
from .design import DynamicPanel, Treatment
from .diagnostics import BracketCheck, bracket
from .estimators import estimate
from .results import EstimatorFindings, PanelFindings, PanelFit

# model variable -> canonical column of the panel, for the spec's [panel].treatment
_TREATED = {"invest": "ln_sk", "schooling": "ln_sh", "human_stock": "ln_h",
            "workforce_growth": "ln_ngd"}
_ORDER = ("exogenous", "predetermined", "endogenous")


def sample_economies(table: EconomyTable, spec: Spec, sample: str) -> tuple[list[str], int]:
    """Economies of ``sample`` (the filter read on the economy-level columns) and their
    number."""
    keep = sample_members(table, spec.body.samples[sample], f"samples.{sample}")
    return [str(e) for e in table.frame.index[keep]], int(keep.sum())


def _regressor_columns(frame: pd.DataFrame, form: ModelForm
                       ) -> tuple[pd.DataFrame, dict[bool, list[str]], dict[str, str]]:
    """The frame with every regressor of the form (unrestricted and restricted, lagged income
    aside) as a column; each fit's regressor names (by ``restricted``); and each regressor's
    canonical columns (for its treatment)."""
    out = frame.copy()
    names: dict[bool, list[str]] = {}
    parts: dict[str, str] = {}
    for restricted, regs in ((False, form.unrestricted), (True, form.restricted)):
        names[restricted] = [r.name for r in regs if r.name != "ln_y0"]
        for r in regs:
            if r.name != "ln_y0":
                out[r.name] = sum(w * frame[col] for col, w in r.weights.items())
                parts[r.name] = ",".join(r.weights)
    return out, names, parts


def _treatment(parts: Mapping[str, str], asked: Mapping[str, str]) -> dict[str, Treatment]:
    """Each regressor's treatment: the strictest of the variables it combines."""
    by_column = {_TREATED[var]: kind for var, kind in asked.items()}
    out: dict[str, Treatment] = {}
    for name, cols in parts.items():
        kinds = [by_column.get(c, "exogenous") for c in cols.split(",")]
        out[name] = cast(Treatment, max(kinds, key=_ORDER.index))
    return out


def estimate_panel_cell(table: EconomyTable, spec: Spec, equation: str, form: ModelForm,
                        sample: str, settings: Settings) -> PanelFindings:
    """Every estimator of ``[panel]`` on ``equation`` and ``sample``."""
    assert table.panel is not None
    p = spec.body.panel
    where = f"equation '{equation}' on sample '{sample}'"
    economies, n_in_sample = sample_economies(table, spec, sample)
    frame = table.panel.frame
    frame = frame[frame["economy"].isin(economies)]
    if frame.empty:
        raise EstimationError("no economy of the sample has a period of the panel", where)
    data, names, parts = _regressor_columns(frame, form)
    panels = {r: DynamicPanel.from_long(data, "economy", "year", "ln_y", names[r], 1)
              for r in (False, True)}
    treat = _treatment(parts, p.treatment)
    fits: dict[str, tuple[PanelFit, PanelFit]] = {}
    for method in p.estimators:
        try:
            unres, res = (estimate(panels[r], method, steps=p.gmm_steps, max_lag=p.max_lag,
                                   collapse=p.collapse,
                                   treatment={k: v for k, v in treat.items() if k in names[r]},
                                   within_time_effects=p.within_period_effects)
                          for r in (False, True))
        except np.linalg.LinAlgError as exc:
            raise EstimationError(f"the {method} estimate cannot be computed ({exc}): too few "
                                  "economies or periods, or collinear regressors", where) from None
        fits[method] = (unres, res)
    found = [_judge(form, method, u, r, settings) for method, (u, r) in fits.items()]
    if "within" in fits and "pooled_ols" in fits:
        lo, hi = fits["within"][0].coef[0], fits["pooled_ols"][0].coef[0]
        found = [f if not f.method.endswith("gmm") else
                 _with_bracket(f, bracket(f.unrestricted.coef[0], lo, hi)) for f in found]
    gaps = [m for m in table.panel.missing if m.economy in set(economies)]
    notes = [f"{m.economy}, period ending {m.year}: not built ({m.reason})" for m in gaps[:5]]
    if len(gaps) > 5:
        notes.append(f"{len(gaps) - 5} more economy-periods of this sample could not be built "
                     "(steadyfit check lists them)")
    for f in found:
        for fit in (f.unrestricted, f.restricted):
            notes += [f"{f.title}: {w}" for w in fit.warnings]
    used = sorted({panels[False].economies[e] for f in found for e in _economies_used(f)})
    share = table.panel.labour_share
    column = spec.body.data.columns.labour_share
    if share is not None and column is not None:
        years = (int(table.panel.frame["year"].min()), int(table.panel.frame["year"].max()))
        found = [replace(f, shares=anchored(f.shares, measured_share(
            share, [str(panels[False].economies[e]) for e in _economies_used(f)], column,
            years))) for f in found]
    return PanelFindings(
        equation=equation, sample=sample, form_key=form.key, description=form.description,
        restriction_text=form.restriction_text(spec.body.labels.variables),
        period_years=p.period_years, shape=tuple(table.panel.shape_of(economies).lines()),
        economies=tuple(used), n_in_sample=n_in_sample, estimators=tuple(found),
        notes=tuple(dict.fromkeys(notes)),
        data=data[["economy", "year", "ln_y", *dict.fromkeys(names[False] + names[True])]]
        .reset_index(drop=True))


def _economies_used(f: EstimatorFindings) -> tuple[int, ...]:
    codes = f.unrestricted.economy_codes
    return () if codes is None else tuple(int(c) for c in codes)


def _with_bracket(f: EstimatorFindings, check: BracketCheck) -> EstimatorFindings:
    return replace(f, bracket=check)


def _judge(form: ModelForm, method: str, unres: PanelFit, res: PanelFit, settings: Settings
           ) -> EstimatorFindings:
    """Restriction test, gamma, implied shares and speed of one estimator."""
    k_u = unres.slopes
    reason_u = covariance_problem(unres.slope_cov(), unres.n_economies)
    wald = None
    if form.restricts:
        r = np.zeros(len(unres.coef))
        r[:k_u] = form.restriction
        wald = wald_test("Wald test of the restriction (clustered by economy)",
                         form.restriction_text(), r, unres.coef, unres.cov, reason_u)
    c = res.slope_coef().copy()
    c[0] -= 1.0  # the growth parameterisation the maps read
    v = res.slope_cov()
    reason = covariance_problem(v, res.n_economies)
    se = np.sqrt(np.maximum(np.diag(v), 0.0))
    z = normal_quantile(settings.confidence)
    ci = np.column_stack([c - z * se, c + z * se])
    shares, speed, problem = implied_from_slopes(form, c, v, ci, reason, settings.confidence,
                                                 settings.bands, settings.points)
    gamma = normal_estimate("gamma", float(res.coef[0]), float(v[0, 0]) if reason is None
                            else math.nan, settings.confidence, reason=reason)
    return EstimatorFindings(method, unres, res, wald, gamma, shares, speed, problem)
