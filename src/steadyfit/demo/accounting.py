"""An invented scenario for development accounting: economies with capital stocks, schooling
and measured labour shares in two years.

Every economy name here is invented, from a name pool of its own.  Each economy has
a productivity level ``A`` (log-normal), a capital-output ratio, years of schooling
and employment; output follows ``Y = A (K/Y)^(a/(1-a)) h L`` with ``h`` from the
schooling returns of :mod:`steadyfit.calibrate.accounting` and the share
:data:`TRUE_ALPHA`, so the accounts recover ``A`` exactly.  Labour shares scatter
around ``1 - TRUE_ALPHA`` and are higher where self-employment is lower, the bias
the report's national-accounts sentence describes.

:func:`generate_accounting` rebuilds the shipped table exactly (legacy
``RandomState`` streams are stable across numpy versions); ``python -m
steadyfit.demo.accounting`` rewrites it.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from ..calibrate.accounting import human_capital
from . import shipped_file

TRUE_ALPHA = 1 / 3
SEED = 19902010
N_ECONOMIES = 36
YEARS = (1990, 2010)
DATA_FILE = "accounting_economies.csv"

_HEADS = ("Bry", "Cand", "Drel", "Fomm", "Gisk", "Hurv", "Jell", "Kastr", "Lomb", "Mird",
          "Nasp", "Prell")
_TAILS = ("avar", "enth", "ossa")


def _names(n: int) -> list[str]:
    return sorted(h + t for h in _HEADS for t in _TAILS)[:n]


def generate_accounting(seed: int = SEED, n: int = N_ECONOMIES) -> pd.DataFrame:
    """The table: one row per economy and year with ``economy``, ``year``, ``output``,
    ``employment``, ``capital_stock``, ``years_school`` and ``labour_share``, and the
    true log productivity ``ln_productivity`` (for checks; the accounts never read it)."""
    rng = np.random.RandomState(seed)
    names = _names(n)
    rows = []
    ln_a0 = rng.normal(0.0, 0.45, n)
    ky0 = np.exp(rng.normal(0.9, 0.35, n))
    school0 = np.clip(rng.normal(7.5, 3.0, n), 0.5, 14.0)
    self_employed = np.clip(rng.normal(0.2, 0.12, n), 0.02, 0.6)
    employment0 = np.exp(rng.normal(15.5, 1.2, n))
    for k, year in enumerate(YEARS):
        ln_a = ln_a0 + 0.015 * 20 * k + rng.normal(0.0, 0.1, n)
        ky = ky0 * np.exp(rng.normal(0.05 * k, 0.08, n))
        school = np.clip(school0 + 2.0 * k + rng.normal(0.0, 0.5, n), 0.5, 16.0)
        employment = employment0 * np.exp(0.015 * 20 * k)
        y = np.exp(ln_a) * ky ** (TRUE_ALPHA / (1 - TRUE_ALPHA)) * human_capital(school)
        labour = 1 - TRUE_ALPHA - 0.25 * self_employed + rng.normal(0.0, 0.02, n)
        for i, name in enumerate(names):
            rows.append({"economy": name, "year": year,
                         "output": round(float(y[i] * employment[i]), 6),
                         "employment": round(float(employment[i]), 3),
                         "capital_stock": round(float(ky[i] * y[i] * employment[i]), 6),
                         "years_school": round(float(school[i]), 3),
                         "labour_share": round(float(labour[i]), 4),
                         "ln_productivity": float(ln_a[i])})
    return pd.DataFrame(rows)


def shipped_accounting() -> Path:
    """The shipped table (``accounting_economies.csv`` beside this module)."""
    return shipped_file(DATA_FILE)


def regenerate_accounting() -> Path:
    path = shipped_accounting()
    generate_accounting().to_csv(path, index=False)
    return path


if __name__ == "__main__":
    print(regenerate_accounting())
