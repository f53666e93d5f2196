"""The model forms: one table, and nothing else in the package knows form details.

Each :class:`ModelForm` says which canonical columns it regresses on
(unrestricted), the linear restriction theory imposes on those slopes, the
regressors of the restricted equation, and the maps from coefficients to the
structural parameters with their analytic Jacobians (and the reverse map, for
simulation, structural estimation and calibration).

Canonical columns (built by :mod:`steadyfit.data`): ``ln_y`` log income per
worker, ``ln_y0`` log initial income, ``ln_growth`` = ``ln_y - ln_y0``,
``ln_sk`` log physical investment share, ``ln_sh`` log human-capital investment
share, ``ln_h`` log human-capital stock, ``ln_ngd`` log of n + g + delta.

Notes
-----
Levels form (DOMAIN.md section 2), human capital as an investment rate::

    ln y = c + a/(1-a-b) ln s_k + b/(1-a-b) ln s_h - (a+b)/(1-a-b) ln(n+g+delta)

Restricted slopes ``c_k, c_h`` on ``ln s_k - ln(n+g+delta)`` and
``ln s_h - ln(n+g+delta)`` give ``a = c_k/D``, ``b = c_h/D`` with
``D = theta + c_k + c_h`` and ``theta = 1``.  With a stock ``h``::

    ln y = c + a/(1-a) ln s_k - a/(1-a) ln(n+g+delta) + b/(1-a) ln h

so ``a = c_k/(theta + c_k)`` and ``b = c_h/(theta + c_k)``.

Growth form (section 3) over a span of T years::

    ln y_T - ln y_0 = c + b_0 ln y_0 + theta [levels right-hand side]

with ``theta = -b_0 = 1 - exp(-lambda T)``: the same share maps hold with
``theta`` taken from the coefficient on initial income, and
``lambda = -ln(1 + b_0)/T``.
"""

from __future__ import annotations

import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass, field
from functools import lru_cache

import numpy as np

from .labels import DELTA, MINUS, SYMBOLS

Vector = np.ndarray
VectorFn = Callable[[Vector], Vector]

FORM_NAMES: tuple[str, ...] = ("growth", "levels", "panel")
CAPITAL_KINDS = ("physical", "human_rate", "human_stock")


# canonical log column -> (model variable, how its log is written around the variable's symbol)
TERMS: dict[str, tuple[str, str]] = {
    "ln_y": ("income", "ln({})"),
    "ln_y0": ("income_start", "ln({})"),
    "ln_sk": ("invest", "ln({})"),
    "ln_ngd": ("workforce_growth", f"ln({{}} + g + {DELTA})"),
    "ln_sh": ("schooling", "ln({})"),
    "ln_h": ("human_stock", "ln({})"),
}


def term_label(column: str, symbols: Mapping[str, str] | None = None) -> str:
    """The log term of a canonical column, with the spec's symbol for its variable."""
    var, pattern = TERMS[column]
    return pattern.format((symbols or {}).get(var, SYMBOLS[var]))


@dataclass(frozen=True)
class Regressor:
    """A regressor as a fixed linear combination of canonical columns."""

    name: str
    weights: Mapping[str, float]

    def text(self, symbols: Mapping[str, str] | None = None) -> str:
        """How tables print the regressor ('ln(sₖ) − ln(n + g + δ)'), with the spec's
        symbols for the variables."""
        out = ""
        for col, w in self.weights.items():
            sign = MINUS if w < 0 else "+"
            scale = "" if abs(w) == 1 else f"{abs(w):g}\u00b7"
            out += (f"{MINUS}{scale}" if w < 0 and not out else
                    f" {sign} {scale}" if out else scale) + term_label(col, symbols)
        return out

    @property
    def label(self) -> str:
        return self.text()


@dataclass(frozen=True)
class VectorMap:
    """A smooth map from a coefficient vector to named quantities, with its Jacobian.

    ``value(c)`` returns one entry per name; ``jacobian(c)`` has one row per
    name and one column per coefficient.  Both broadcast over trailing axes: with
    ``c`` of shape ``(k, B)`` (B coefficient vectors, as the batched kernel of
    :mod:`steadyfit.robust` passes them) ``value`` has shape ``(names, B)`` and
    ``jacobian`` ``(names, k, B)``.
    """

    names: tuple[str, ...]
    value: VectorFn
    jacobian: VectorFn


@dataclass(frozen=True)
class ParameterMap:
    """Restricted slopes -> structural parameters (shares, and ``lam`` for growth forms).

    ``problem(c)`` says, in words, why the slopes imply no ordinary parameters
    (no steady state, no convergence), or returns None.  ``domain(c)`` is
    positive exactly where ``problem`` is None; it is used to check the
    endpoints of intervals.  ``single`` names the parameters that depend on one
    coefficient alone (by position), so an interval for that coefficient maps
    exactly to one for the parameter.  ``inverse`` maps parameters back to
    restricted slopes.
    """

    forward: VectorMap
    inverse: VectorFn
    domain: Callable[[Vector], Vector]
    problem: Callable[[Vector], str | None]
    shares: tuple[str, ...]
    single: Mapping[str, int] = field(default_factory=dict)

    @property
    def names(self) -> tuple[str, ...]:
        return self.forward.names


@dataclass(frozen=True)
class CrossCheck:
    """One quantity implied two ways by the unrestricted slopes (over-identification).

    ``shares`` gives the parameters implied by the unrestricted slopes without
    using the n + g + delta slope; ``quantity`` is the share (or sum) that the
    n + g + delta slope also implies; ``from_rates`` and ``from_growth`` give it
    both ways.
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
    dependent_label: str
    needs: tuple[str, ...]
    unrestricted: tuple[Regressor, ...]
    restriction: tuple[float, ...]  # empty: the theory imposes no restriction
    restricted: tuple[Regressor, ...]
    parameters: ParameterMap
    crosscheck: CrossCheck | None
    needs_span: bool = False
    span: float | None = None

    @property
    def restricts(self) -> bool:
        return bool(self.restriction)

    @property
    def converges(self) -> bool:
        """True for forms that estimate a speed of convergence."""
        return "lam" in self.parameters.names

    def restriction_text(self, symbols: Mapping[str, str] | None = None) -> str:
        """The restriction as an equation in the slopes: 'slope on ln(sₖ) + slope on
        ln(n + g + δ) = 0'."""
        if not self.restriction:
            return "none"
        terms = [f"slope on {r.text(symbols)}"
                 for r, w in zip(self.unrestricted, self.restriction, strict=True) if w]
        return " + ".join(terms) + " = 0"

    def unrestricted_from_restricted(self, c: Vector) -> Vector:
        """Unrestricted slopes equal to restricted slopes ``c`` (the restriction holds)."""
        names = [r.name for r in self.unrestricted]
        out = np.zeros(len(names))
        for coef, reg in zip(c, self.restricted, strict=True):
            for col, w in reg.weights.items():
                out[names.index(col)] += coef * w
        return out


def _reg(col: str) -> Regressor:
    return Regressor(col, {col: 1.0})


def _minus_ngd(col: str) -> Regressor:
    return Regressor(f"{col}_less_ln_ngd", {col: 1.0, "ln_ngd": -1.0})


LN_Y0 = _reg("ln_y0")
LN_SK = _reg("ln_sk")
LN_NGD = _reg("ln_ngd")
LN_SH = _reg("ln_sh")
LN_H = _reg("ln_h")


# --- building blocks: theta is 1 in the levels form, -b_0 (at position p) in the growth form --

def _theta(c: Vector, p: int | None) -> Vector | float:
    return 1.0 if p is None else -c[p]


def _zeros(rows: int, size: int, c: Vector) -> Vector:
    """A Jacobian of zeros for ``c`` (with ``c``'s trailing batch axes)."""
    return np.zeros((rows, size) + np.shape(c)[1:])


def _share_map(names: tuple[str, ...], k: int, h: int | None, size: int, p: int | None,
               stock: bool) -> VectorMap:
    """Shares from slopes at k (physical) and h (human), with theta from position p.

    Rate: D = theta + c_k + c_h, a = c_k/D, b = c_h/D.
    Stock: D = theta + c_k, a = c_k/D, b = c_h/D.
    """

    def denom(c: Vector) -> Vector:
        extra = 0.0 if (h is None or stock) else c[h]
        return _theta(c, p) + c[k] + extra

    def value(c: Vector) -> Vector:
        d = denom(c)
        vals = [c[k] / d] + ([c[h] / d] if h is not None else [])
        return np.array(vals[: len(names)])

    def jac(c: Vector) -> Vector:
        d = denom(c)
        out = _zeros(len(names), size, c)
        ck = c[k]
        # d a / d c_k, d a / d c_h, d a / d b_0 (theta = -b_0, so d theta / d b_0 = -1)
        out[0, k] = (d - ck) / d**2
        if h is not None and not stock:
            out[0, h] = -ck / d**2
        if p is not None:
            out[0, p] = ck / d**2
        if h is not None and len(names) > 1:
            ch = c[h]
            out[1, k] = -ch / d**2
            out[1, h] = 1 / d if stock else (d - ch) / d**2
            if p is not None:
                out[1, p] = ch / d**2
        return out

    return VectorMap(names, value, jac)


def _speed_map(p: int, size: int, span: float | None) -> VectorMap:
    """lam = -ln(1 + b_0)/T from the coefficient on initial income (position p)."""
    t = span if span else math.nan

    def value(c: Vector) -> Vector:
        b = np.asarray(c[p], dtype=float)
        with np.errstate(invalid="ignore", divide="ignore"):
            return np.array([np.where(b > -1, -np.log1p(np.maximum(b, -1.0)) / t, math.nan)])

    def jac(c: Vector) -> Vector:
        out = _zeros(1, size, c)
        out[0, p] = -1 / ((1 + c[p]) * t)
        return out

    return VectorMap(("lam",), value, jac)


def _stack(*maps: VectorMap) -> VectorMap:
    return VectorMap(tuple(n for m in maps for n in m.names),
                     lambda c: np.concatenate([m.value(c) for m in maps]),
                     lambda c: np.vstack([np.atleast_2d(m.jacobian(c)) for m in maps]))


def _sum_map(m: VectorMap, name: str) -> VectorMap:
    return VectorMap((name,), lambda c: m.value(c).sum(axis=0, keepdims=True),
                     lambda c: m.jacobian(c).sum(axis=0, keepdims=True))


def _from_growth_slope(name: str, n: int, size: int, p: int | None) -> VectorMap:
    """q = -b_n/(theta - b_n): the share (or sum of shares) the n + g + delta slope implies."""

    def value(c: Vector) -> Vector:
        t, b = _theta(c, p), c[n]
        return np.array([-b / (t - b)])

    def jac(c: Vector) -> Vector:
        t, b = _theta(c, p), c[n]
        out = _zeros(1, size, c)
        out[0, n] = -t / (t - b) ** 2
        if p is not None:
            out[0, p] = -b / (t - b) ** 2
        return out

    return VectorMap((name,), value, jac)


def _take(m: VectorMap, rows: slice) -> VectorMap:
    return VectorMap(m.names[rows], lambda c: m.value(c)[rows],
                     lambda c: np.atleast_2d(m.jacobian(c))[rows])


def _problem(p: int | None, shares_of: VectorFn, domain: Callable[[Vector], Vector]
             ) -> Callable[[Vector], str | None]:
    def problem(c: Vector) -> str | None:
        if p is not None:
            if c[p] >= 0:
                return ("no convergence: the coefficient on initial income is not negative, so "
                        "the estimates imply no convergence to a steady state")
            if c[p] <= -1:
                return ("the coefficient on initial income is -1 or below: the speed of "
                        "convergence is not defined")
        if domain(c) <= 0:
            return ("no steady state: the estimates imply non-diminishing returns to the "
                    "accumulable factors (the share formula's denominator is not positive)")
        total = float(shares_of(c).sum())
        if total >= 1:
            return ("no steady state: the estimates imply non-diminishing returns to the "
                    f"accumulable factors (shares summing to {total:.3g}, 1 or more)")
        return None

    return problem


def _build(form: str, capital: tuple[str, ...], span: float | None) -> ModelForm:
    # a panel equation is the growth form over one period (span = the period's length) with an
    # effect per economy: the same regressors, restriction and maps; only the estimators differ
    growth = form in ("growth", "panel")
    human = next((k for k in capital if k != "physical"), None)
    stock = human == "human_stock"
    p = 0 if growth else None  # position of b_0 among the slopes
    off = 1 if growth else 0
    lead = (LN_Y0,) if growth else ()
    dependent = ("ln_growth", "log change of income per worker" + (
        " over the period" if form == "panel" else "")) if growth else (
        "ln_y", "log income per worker")
    needs = ("income", "income_start") if growth else ("income",)

    if growth and not capital:  # unconditional convergence: initial income alone
        speed = _speed_map(0, 1, span)
        params = ParameterMap(
            forward=speed,
            inverse=lambda q: np.array([-(1 - math.exp(-q[0] * span))]) if span else
            np.array([math.nan]),
            domain=lambda c: np.minimum(-c[0], 1 + c[0]),
            problem=_problem(0, lambda c: np.zeros(1), lambda c: np.ones(np.shape(c)[1:])),
            shares=(),
            single={"lam": 0},
        )
        return ModelForm("growth:unconditional", form, (), "unconditional convergence: growth "
                         "on initial income alone", *dependent, needs, (LN_Y0,), (), (LN_Y0,),
                         params, None, needs_span=True, span=span)

    human_reg = {"human_rate": LN_SH, "human_stock": LN_H}.get(human or "")
    unres = (*lead, LN_SK, LN_NGD, *((human_reg,) if human_reg else ()))
    restricted_human = (() if human is None else
                        (LN_H,) if stock else (_minus_ngd("ln_sh"),))
    res = (*lead, _minus_ngd("ln_sk"), *restricted_human)
    restriction = (*((0.0,) if growth else ()), 1.0, 1.0,
                   *(() if human is None else (0.0 if stock else 1.0,)))
    names = ("alpha",) if human is None else ("alpha", "beta")
    k_r, h_r = off, (off + 1 if human else None)
    share_fwd = _share_map(names, k_r, h_r, len(res), p, stock)
    forward = _stack(share_fwd, _speed_map(0, len(res), span)) if growth else share_fwd

    def domain(c: Vector) -> Vector:
        """Positive where the slopes imply ordinary parameters (per column of a batch)."""
        extra = 0.0 if (h_r is None or stock) else c[h_r]
        d = _theta(c, p) + c[k_r] + extra
        return np.minimum(d, np.minimum(-c[0], 1 + c[0])) if growth else d + 0.0

    def inverse(q: Vector) -> Vector:
        a = q[0]
        b = q[1] if human else 0.0
        theta = (1 - math.exp(-q[-1] * span)) if growth and span else (
            math.nan if growth else 1.0)
        scale = theta / ((1 - a) if stock else (1 - a - b))
        out = [a * scale] + ([b * scale] if human else [])
        return np.array(([-theta] if growth else []) + out)

    single: dict[str, int] = {}
    if growth:
        single["lam"] = 0
    elif human is None or stock:
        single["alpha"] = k_r  # a = c_k/(1 + c_k) alone when theta = 1

    params = ParameterMap(forward, inverse, domain, _problem(p, share_fwd.value, domain),
                          names, single)

    k_u, n_u, h_u = off, off + 1, (off + 2 if human else None)
    rate_shares = _share_map(names, k_u, h_u, len(unres), p, stock)
    quantity = "alpha+beta" if (human and not stock) else "alpha"
    from_rates = _sum_map(rate_shares, quantity) if quantity == "alpha+beta" else _take(
        rate_shares, slice(0, 1))
    shares = _stack(rate_shares, _speed_map(0, len(unres), span)) if growth else rate_shares
    cross = CrossCheck(shares, quantity, from_rates,
                       _from_growth_slope(quantity, n_u, len(unres), p))
    what = {None: "physical capital only", "human_rate": "physical capital and human-capital "
            "investment", "human_stock": "physical capital and a human-capital stock"}[human]
    desc = {"growth": "growth over the span (conditional convergence), ",
            "panel": "growth over each period with an effect per economy (dynamic panel), ",
            "levels": "steady-state income, "}[form] + what
    key = form_key(form, capital)
    needs_all = (*needs, "invest", "workforce_growth",
                 *(() if human is None else ("human_stock" if stock else "schooling",)))
    return ModelForm(key, form, tuple(capital), desc, *dependent, needs_all, unres,
                     restriction, res, params, cross, needs_span=growth, span=span)


_CAPITALS: tuple[tuple[str, tuple[str, ...]], ...] = (
    ("levels", ("physical",)),
    ("levels", ("physical", "human_rate")),
    ("levels", ("physical", "human_stock")),
    ("growth", ()),
    ("growth", ("physical",)),
    ("growth", ("physical", "human_rate")),
    ("growth", ("physical", "human_stock")),
    ("panel", ("physical",)),
    ("panel", ("physical", "human_rate")),
    ("panel", ("physical", "human_stock")),
)


def form_key(form: str, capital: tuple[str, ...] | list[str]) -> str:
    order = {k: i for i, k in enumerate(CAPITAL_KINDS)}
    kinds = sorted(dict.fromkeys(capital), key=lambda k: order.get(k, 99))
    return f"{form}:{'+'.join(kinds) if kinds else 'unconditional'}"


FORM_KEYS: tuple[str, ...] = tuple(form_key(f, c) for f, c in _CAPITALS)


@lru_cache(maxsize=64)
def get_form(key: str, span: float | None = None) -> ModelForm:
    """The form with this key, its convergence maps bound to ``span`` years."""
    for f, c in _CAPITALS:
        if form_key(f, c) == key:
            return _build(f, c, span if f in ("growth", "panel") else None)
    raise KeyError(key)


def find_form(form: str, capital: tuple[str, ...] | list[str],
              span: float | None = None) -> ModelForm:
    """Look a form up by its name and capital list; ValueError names the valid choices."""
    from .errors import one_of

    if form not in FORM_NAMES:
        raise ValueError(f"form: {one_of(form, FORM_NAMES)}")
    for kind in capital:
        if kind not in CAPITAL_KINDS:
            raise ValueError(f"capital: {one_of(kind, CAPITAL_KINDS)}")
    key = form_key(form, capital)
    if key not in FORM_KEYS:
        valid = sorted("[" + ", ".join(f'"{k}"' for k in c) + "]" for f, c in _CAPITALS
                       if f == form)
        raise ValueError(f"capital: form '{form}' takes capital = {' or '.join(valid)}, "
                         f"not {list(capital)}")
    return get_form(key, span)
