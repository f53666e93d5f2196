"""The model forms: one table, and nothing else in the package knows form details.

Each :class:`ModelForm` says which canonical columns it regresses on
(unrestricted), the linear restriction theory imposes on those slopes, the
regressors of the restricted equation, and the maps from coefficients to the
structural parameters with their analytic Jacobians (and the reverse map, for
simulation and calibration).

Canonical columns (built by :mod:`steadyfit.data`): ``ln_y`` log income per
worker, ``ln_y0`` log initial income, ``ln_sk`` log physical investment share,
``ln_sh`` log human-capital investment share, ``ln_h`` log human-capital stock,
``ln_ngd`` log of n + g + delta.

Notes
-----
Levels form (DOMAIN.md section 2), with human capital as an investment rate::

    ln y = c + a/(1-a-b) ln s_k + b/(1-a-b) ln s_h - (a+b)/(1-a-b) ln(n+g+delta)

Restricted slopes ``c_k, c_h`` on ``ln s_k - ln(n+g+delta)`` and
``ln s_h - ln(n+g+delta)`` give ``a = c_k/D``, ``b = c_h/D`` with
``D = 1 + c_k + c_h``.  With human capital as a stock ``h``::

    ln y = c + a/(1-a) ln s_k - a/(1-a) ln(n+g+delta) + b/(1-a) ln h
"""

from __future__ import annotations

from collections.abc import Callable, Mapping
from dataclasses import dataclass, field

import numpy as np

Vector = np.ndarray
VectorFn = Callable[[Vector], Vector]

CAPITAL_KINDS = ("physical", "human_rate", "human_stock")


@dataclass(frozen=True)
class Regressor:
    """A regressor as a fixed linear combination of canonical columns."""

    name: str
    label: str
    weights: Mapping[str, float]


@dataclass(frozen=True)
class VectorMap:
    """A smooth map from a coefficient vector to named quantities, with its Jacobian.

    ``value(c)`` returns one entry per name; ``jacobian(c)`` has one row per
    name and one column per coefficient.
    """

    names: tuple[str, ...]
    value: VectorFn
    jacobian: VectorFn


@dataclass(frozen=True)
class ParameterMap:
    """Restricted slopes -> structural parameters.

    ``denominator(c)`` is the quantity whose sign decides whether a steady
    state exists (positive: it does).  ``single`` names the parameters that
    are an increasing function of one coefficient alone (by position), so an
    interval for that coefficient maps exactly to one for the parameter.
    ``inverse`` maps parameters back to restricted slopes.
    """

    forward: VectorMap
    inverse: VectorFn
    denominator: Callable[[Vector], float]
    single: Mapping[str, int] = field(default_factory=dict)

    @property
    def names(self) -> tuple[str, ...]:
        return self.forward.names


@dataclass(frozen=True)
class CrossCheck:
    """One quantity implied two ways by the unrestricted slopes (over-identification).

    ``shares`` gives the parameters implied by the investment-rate slopes
    alone; ``quantity`` is the parameter (or sum) that the workforce-growth
    slope also implies; ``from_rates`` and ``from_growth`` give it both ways.
    """

    shares: VectorMap
    quantity: str
    from_rates: VectorMap
    from_growth: VectorMap


@dataclass(frozen=True)
class ModelForm:
    """Everything that is specific to one model form."""

    key: str
    form: str
    capital: tuple[str, ...]
    description: str
    dependent: str
    needs: tuple[str, ...]
    unrestricted: tuple[Regressor, ...]
    restriction: tuple[float, ...]
    restricted: tuple[Regressor, ...]
    parameters: ParameterMap
    crosscheck: CrossCheck
    needs_span: bool = False

    @property
    def restriction_text(self) -> str:
        terms = [f"b[{r.label}]" for r, w in zip(self.unrestricted, self.restriction, strict=True)
                 if w]
        return " + ".join(terms) + " = 0"

    def unrestricted_from_restricted(self, c: Vector) -> Vector:
        """Unrestricted slopes equal to restricted slopes ``c`` (the restriction holds)."""
        names = [r.name for r in self.unrestricted]
        out = np.zeros(len(names))
        for coef, reg in zip(c, self.restricted, strict=True):
            for col, w in reg.weights.items():
                out[names.index(col)] += coef * w
        return out


def _reg(col: str, label: str) -> Regressor:
    return Regressor(col, label, {col: 1.0})


def _minus_ngd(col: str, label: str) -> Regressor:
    return Regressor(f"{col}_less_ln_ngd", f"{label} - ln(n+g+d)", {col: 1.0, "ln_ngd": -1.0})


LN_SK = _reg("ln_sk", "ln(s_k)")
LN_NGD = _reg("ln_ngd", "ln(n+g+d)")
LN_SH = _reg("ln_sh", "ln(s_h)")
LN_H = _reg("ln_h", "ln(h)")


# --- share = c / (1 + c) and friends -------------------------------------------------------

def _ratio_map(name: str) -> VectorMap:
    """a = c/(1+c) for one slope."""
    return VectorMap(
        (name,),
        lambda c: np.array([c[0] / (1 + c[0])]),
        lambda c: np.array([[1 / (1 + c[0]) ** 2]]),
    )


def _negative_ratio_map(name: str, position: int, size: int) -> VectorMap:
    """q = -b/(1-b) for the slope at ``position`` (the n + g + delta slope)."""

    def value(c: Vector) -> Vector:
        b = c[position]
        return np.array([-b / (1 - b)])

    def jac(c: Vector) -> Vector:
        out = np.zeros((1, size))
        out[0, position] = -1 / (1 - c[position]) ** 2
        return out

    return VectorMap((name,), value, jac)


def _two_share_map(k: int, h: int, size: int) -> VectorMap:
    """(a, b) = (c_k, c_h) / (1 + c_k + c_h) for slopes at positions k and h."""

    def value(c: Vector) -> Vector:
        d = 1 + c[k] + c[h]
        return np.array([c[k] / d, c[h] / d])

    def jac(c: Vector) -> Vector:
        ck, ch = c[k], c[h]
        d2 = (1 + ck + ch) ** 2
        out = np.zeros((2, size))
        out[0, k], out[0, h] = (1 + ch) / d2, -ck / d2
        out[1, k], out[1, h] = -ch / d2, (1 + ck) / d2
        return out

    return VectorMap(("alpha", "beta"), value, jac)


def _sum_of(m: VectorMap, name: str) -> VectorMap:
    return VectorMap((name,), lambda c: np.array([m.value(c).sum()]),
                     lambda c: m.jacobian(c).sum(axis=0, keepdims=True))


def _stock_map(k: int, h: int, size: int) -> VectorMap:
    """(a, b) = (c_k/(1+c_k), c_h/(1+c_k)) for the human-capital-stock form."""

    def value(c: Vector) -> Vector:
        d = 1 + c[k]
        return np.array([c[k] / d, c[h] / d])

    def jac(c: Vector) -> Vector:
        d = 1 + c[k]
        out = np.zeros((2, size))
        out[0, k] = 1 / d**2
        out[1, k], out[1, h] = -c[h] / d**2, 1 / d
        return out

    return VectorMap(("alpha", "beta"), value, jac)


def _levels_physical() -> ModelForm:
    forward = _ratio_map("alpha")
    # unrestricted order: ln_sk (0), ln_ngd (1); alpha from the investment slope alone
    from_invest = VectorMap(("alpha",), lambda c: forward.value(c[:1]),
                            lambda c: np.hstack([forward.jacobian(c[:1]), [[0.0]]]))
    return ModelForm(
        key="levels:physical",
        form="levels",
        capital=("physical",),
        description="steady-state income, physical capital only",
        dependent="ln_y",
        needs=("income", "invest", "workforce_growth"),
        unrestricted=(LN_SK, LN_NGD),
        restriction=(1.0, 1.0),
        restricted=(_minus_ngd("ln_sk", "ln(s_k)"),),
        parameters=ParameterMap(
            forward=forward,
            inverse=lambda p: np.array([p[0] / (1 - p[0])]),
            denominator=lambda c: float(1 + c[0]),
            single={"alpha": 0},
        ),
        crosscheck=CrossCheck(
            shares=from_invest,
            quantity="alpha",
            from_rates=from_invest,
            from_growth=_negative_ratio_map("alpha", 1, 2),
        ),
    )


def _levels_human_rate() -> ModelForm:
    restricted_map = _two_share_map(0, 1, 2)
    # unrestricted order: ln_sk (0), ln_ngd (1), ln_sh (2)
    rates = _two_share_map(0, 2, 3)
    return ModelForm(
        key="levels:physical+human_rate",
        form="levels",
        capital=("physical", "human_rate"),
        description="steady-state income, physical capital and human-capital investment",
        dependent="ln_y",
        needs=("income", "invest", "workforce_growth", "schooling"),
        unrestricted=(LN_SK, LN_NGD, LN_SH),
        restriction=(1.0, 1.0, 1.0),
        restricted=(_minus_ngd("ln_sk", "ln(s_k)"), _minus_ngd("ln_sh", "ln(s_h)")),
        parameters=ParameterMap(
            forward=restricted_map,
            inverse=lambda p: np.array([p[0], p[1]]) / (1 - p[0] - p[1]),
            denominator=lambda c: float(1 + c[0] + c[1]),
        ),
        crosscheck=CrossCheck(
            shares=rates,
            quantity="alpha+beta",
            from_rates=_sum_of(rates, "alpha+beta"),
            from_growth=_negative_ratio_map("alpha+beta", 1, 3),
        ),
    )


def _levels_human_stock() -> ModelForm:
    # unrestricted order: ln_sk (0), ln_ngd (1), ln_h (2)
    stock_unres = _stock_map(0, 2, 3)
    alpha_only = VectorMap(("alpha",), lambda c: stock_unres.value(c)[:1],
                           lambda c: stock_unres.jacobian(c)[:1])
    return ModelForm(
        key="levels:physical+human_stock",
        form="levels",
        capital=("physical", "human_stock"),
        description="steady-state income, physical capital and a human-capital stock",
        dependent="ln_y",
        needs=("income", "invest", "workforce_growth", "human_stock"),
        unrestricted=(LN_SK, LN_NGD, LN_H),
        restriction=(1.0, 1.0, 0.0),
        restricted=(_minus_ngd("ln_sk", "ln(s_k)"), LN_H),
        parameters=ParameterMap(
            forward=_stock_map(0, 1, 2),
            inverse=lambda p: np.array([p[0], p[1]]) / (1 - p[0]),
            denominator=lambda c: float(1 + c[0]),
            single={"alpha": 0},
        ),
        crosscheck=CrossCheck(
            shares=stock_unres,
            quantity="alpha",
            from_rates=alpha_only,
            from_growth=_negative_ratio_map("alpha", 1, 3),
        ),
    )


FORMS: dict[str, ModelForm] = {
    f.key: f for f in (_levels_physical(), _levels_human_rate(), _levels_human_stock())
}
FORM_NAMES: tuple[str, ...] = tuple(sorted({f.form for f in FORMS.values()}))


def form_key(form: str, capital: tuple[str, ...] | list[str]) -> str:
    order = {k: i for i, k in enumerate(CAPITAL_KINDS)}
    kinds = sorted(dict.fromkeys(capital), key=lambda k: order.get(k, 99))
    return f"{form}:{'+'.join(kinds)}"


def find_form(form: str, capital: tuple[str, ...] | list[str]) -> ModelForm:
    """Look a form up by its name and capital list; ValueError names the valid choices."""
    from .errors import one_of

    if form not in FORM_NAMES:
        raise ValueError(f"form: {one_of(form, FORM_NAMES)}")
    for kind in capital:
        if kind not in CAPITAL_KINDS:
            raise ValueError(f"capital: {one_of(kind, CAPITAL_KINDS)}")
    key = form_key(form, capital)
    if key not in FORMS:
        valid = sorted("[" + ", ".join(f'"{k}"' for k in f.capital) + "]"
                       for f in FORMS.values() if f.form == form)
        raise ValueError(f"capital: form '{form}' takes capital = {' or '.join(valid)}, "
                         f"not {list(capital)}")
    return FORMS[key]
