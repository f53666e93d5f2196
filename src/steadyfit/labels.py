"""Display text: typographic symbols and the labels readers see in place of identifiers.

Tables, figures and verdicts are written in Unicode (α, β, λ, χ², R², sₖ, a true
minus sign); each renderer takes that text as it is, except LaTeX, which
translates these symbols into commands.  Identifiers (equation, sample and
column names) are shown through :func:`display` unless the spec gives a label.
"""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:
    from .findings import TestResult

MINUS = "\u2212"
ALPHA, BETA, LAMBDA, DELTA, GAMMA = "\u03b1", "\u03b2", "\u03bb", "\u03b4", "\u03b3"
CHI2 = "\u03c7\u00b2"
R2 = "R\u00b2"
NGD = f"n + g + {DELTA}"

# the symbol of each model variable (a key of [data.columns]) inside log terms
SYMBOLS = {"income": "y", "income_start": "y\u2080", "invest": "s\u2096",
           "schooling": "s\u2095", "human_stock": "h", "workforce_growth": "n",
           "labour_share": "s\u2097"}

# quantity names (see steadyfit.quantities) as tables print them
QUANTITY_LABELS = {"alpha": ALPHA, "beta": BETA, "alpha+beta": f"{ALPHA} + {BETA}",
                   "lam": LAMBDA, "half_life": "half-life", "gamma": GAMMA}


def display(identifier: str) -> str:
    """An identifier for reading: underscores become spaces."""
    return identifier.replace("_", " ").strip() or identifier


def quantity_label(name: str) -> str:
    return QUANTITY_LABELS.get(name, display(name))


def test_display(t: TestResult) -> str:
    """A test statistic with its distribution: '1.127 (χ², 1 df)', '2.100 (F, 1 and 95 df)'."""
    dfs = " and ".join(f"{d:g}" for d in t.df)
    name = {"chi2": CHI2, "F": "F", "normal": "z"}.get(t.distribution, t.distribution)
    return f"{signed(f'{t.statistic:.3f}')} ({name}" + (f", {dfs} df)" if t.df else ")")


def signed(text: str) -> str:
    """A formatted number with a true minus sign."""
    return MINUS + text[1:] if text.startswith("-") else text


class DisplayLabels:
    """The spec's display labels of equations and samples, with :func:`display` for the rest."""

    __slots__ = ("equations", "samples")

    def __init__(self, equations: dict[str, str] | None = None,
                 samples: dict[str, str] | None = None) -> None:
        self.equations = dict(equations or {})
        self.samples = dict(samples or {})

    def equation(self, name: str) -> str:
        return self.equations.get(name) or display(name)

    def sample(self, name: str) -> str:
        return self.samples.get(name) or display(name)

    def cell(self, equation: str, sample: str) -> str:
        return f"{self.equation(equation)} / {self.sample(sample)}"

    def __repr__(self) -> str:
        return f"DisplayLabels({len(self.equations)} equations, {len(self.samples)} samples)"
