"""An invented annual scenario: economies observed year by year, moving toward their own
steady states.

Every economy and region name here is invented, from a name pool of its own so
that none is also an economy of the cross-section demo.  Each economy ``i``
has a technology level ``A_i`` (the economy effect, correlated with its
saving rates), saving rates that are persistent but move from year to year,
and a workforce that grows at an economy-specific rate with noise.  With the
shares ``TRUE_ALPHA`` and ``TRUE_BETA`` and ``G_PLUS_DELTA``, the steady state of
year ``t`` (DOMAIN.md section 2) is::

    ln y*_it = ln A_i + g t + a/(1-a-b) ln s_k,it + b/(1-a-b) ln s_h,it
               - (a+b)/(1-a-b) ln(n_it + g + delta)

and log income per worker closes its gap to it at the model's speed
``lambda_it = (n_it + g + delta)(1 - a - b)`` a year (DOMAIN.md section 3), with an
annual shock.  The rates and workforce growth of year ``t`` drive the move from
``t`` to ``t + 1`` (capital installed in a year is financed by that year's
saving), which is the timing of the period panel: the rates are averaged over a
period's first to last-but-one year, and income is read at its end.

Two data problems are planted so the example shows the checks: one economy
(:data:`GAP_ECONOMY`) lacks investment in :data:`GAP_YEAR`, and one
(:data:`LATE_ECONOMY`) is observed only from :data:`LATE_START`.  There are no
duplicate rows and no zero or negative values (steadyfit refuses those).

:func:`generate_annual` rebuilds the shipped table exactly (legacy ``RandomState``
streams are stable across numpy versions); :func:`regenerate_annual` rewrites it.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pandas as pd

from . import shipped_file

TRUE_ALPHA = 0.30
TRUE_BETA = 0.25
G_PLUS_DELTA = 0.05
GROWTH = 0.02  # g, labour-augmenting technology growth (delta is G_PLUS_DELTA - g)
SEED = 19600101
N_ECONOMIES = 60
FIRST_YEAR = 1960
LAST_YEAR = 2000
DATA_FILE = "annual_economies.csv"

# the planted problems (positions in the sorted list of economies, and years)
GAP_POSITION = 11
GAP_YEAR = 1983
LATE_POSITION = 37
LATE_START = 1972

_HEADS = ("Alv", "Brann", "Cael", "Dorv", "Ebr", "Fald", "Grev", "Harn", "Ith", "Jast",
          "Kov", "Lir", "Mell", "Norv", "Orl", "Pasq", "Quell", "Rhun", "Stav", "Tarn",
          "Ursk", "Varr", "Wyn", "Yss", "Zorv")
_TAILS = ("amar", "esk", "idor", "ovel", "undra", "athe", "emis", "orin", "ythe", "allo")
_REGIONS = ("river", "plateau", "delta", "archipelago")


def _names(rng: np.random.RandomState, n: int) -> list[str]:
    pool = [h + t for h in _HEADS for t in _TAILS]
    picks = rng.choice(len(pool), size=n, replace=False)
    return sorted(pool[i] for i in picks)


def _persistent(rng: np.random.RandomState, n: int, years: int, rho: float,
                sd: float) -> np.ndarray:
    """Stationary AR(1) deviations, economies x years, with stationary standard deviation
    ``sd``."""
    out = np.empty((n, years))
    out[:, 0] = rng.normal(0.0, sd, size=n)
    step = sd * np.sqrt(1 - rho ** 2)
    for t in range(1, years):
        out[:, t] = rho * out[:, t - 1] + rng.normal(0.0, step, size=n)
    return out


def generate_annual(seed: int = SEED, n: int = N_ECONOMIES, first: int = FIRST_YEAR,
                    last: int = LAST_YEAR) -> pd.DataFrame:
    """Build the annual table from the model with known shares (deterministic for a seed).

    One row per economy and year, sorted by economy then year, with the columns
    ``economy``, ``year``, ``region``, ``output_per_worker``, ``workers``,
    ``investment_share`` (percent) and ``enrolment`` (percent).
    """
    if last - first < 2:
        raise ValueError("the years must span at least two years")
    rng = np.random.RandomState(seed)
    a, b = TRUE_ALPHA, TRUE_BETA
    years = np.arange(first, last + 1)
    T = len(years)
    names = _names(rng, n)
    region = rng.choice(len(_REGIONS), size=n)
    # economy means of the rates, and their persistent year-to-year movements (kept within
    # 3-60% for investment and 0.4-25% for enrolment; the model sees the kept values)
    mean_sk = rng.normal(np.log(0.17), 0.40, size=n)
    mean_sh = rng.normal(np.log(0.05), 0.55, size=n)
    ln_sk = (mean_sk[:, None] + _persistent(rng, n, T, 0.80, 0.28)).clip(np.log(0.03),
                                                                         np.log(0.60))
    ln_sh = (mean_sh[:, None] + _persistent(rng, n, T, 0.80, 0.18)).clip(np.log(0.004),
                                                                         np.log(0.25))
    # the workforce: an economy's own growth rate, with yearly noise
    trend_n = rng.uniform(0.002, 0.032, size=n)
    n_growth = trend_n[:, None] + rng.normal(0.0, 0.003, size=(n, T))  # from t to t + 1
    workforce0 = np.exp(rng.normal(np.log(4.0e6), 1.2, size=n))
    ln_workers = np.log(workforce0)[:, None] + np.concatenate(
        [np.zeros((n, 1)), np.cumsum(n_growth[:, :-1], axis=1)], axis=1)
    # technology (the economy effect) is higher where saving is higher
    ln_a = (8.9 + 0.5 * (mean_sk - mean_sk.mean()) + 0.3 * (mean_sh - mean_sh.mean())
            + rng.normal(0.0, 0.25, size=n))
    ngd = n_growth + G_PLUS_DELTA
    # the steady state without the trend g t, year by year
    x_star = (ln_a[:, None] + a / (1 - a - b) * ln_sk + b / (1 - a - b) * ln_sh
              - (a + b) / (1 - a - b) * np.log(ngd))
    # log income without the trend closes the share 1 - exp(-lambda) of its gap to the
    # steady state each year, plus a shock; economies start off their steady states, by
    # amounts unrelated to their technology (so changes in income carry no economy effect)
    keep = np.exp(-ngd * (1 - a - b))  # the share of the gap left after a year
    x = np.empty((n, T))
    x[:, 0] = x_star[:, 0] + rng.normal(-0.15, 0.30, size=n)
    shocks = rng.normal(0.0, 0.012, size=(n, T))
    for t in range(1, T):
        x[:, t] = keep[:, t - 1] * x[:, t - 1] + (1 - keep[:, t - 1]) * x_star[:, t - 1] \
            + shocks[:, t]
    ln_y = x + GROWTH * (years - first)[None, :]
    frame = pd.DataFrame({
        "economy": np.repeat(names, T),
        "year": np.tile(years, n),
        "region": np.repeat([_REGIONS[i] for i in region], T),
        "output_per_worker": np.exp(ln_y).ravel().round(0).astype(np.int64),
        "workers": np.exp(ln_workers).ravel().round(-2).astype(np.int64),
        "investment_share": (100 * np.exp(ln_sk)).ravel().round(2),
        "enrolment": (100 * np.exp(ln_sh)).ravel().round(2),
    })
    # the planted problems: a missing year of investment inside the sample, a late starter
    gap = (frame["economy"] == names[GAP_POSITION % n]) & (frame["year"] == GAP_YEAR)
    frame.loc[gap, "investment_share"] = np.nan
    late = (frame["economy"] == names[LATE_POSITION % n]) & (frame["year"] < LATE_START)
    return frame[~late].reset_index(drop=True)


def _planted() -> tuple[str, str]:
    """The economies that carry the planted problems in the shipped table (the names are the
    first draw of the seeded stream)."""
    names = _names(np.random.RandomState(SEED), N_ECONOMIES)
    return names[GAP_POSITION], names[LATE_POSITION]


GAP_ECONOMY, LATE_ECONOMY = _planted()


def shipped_annual() -> Path:
    """The shipped annual table (``annual_economies.csv`` beside this module)."""
    return shipped_file(DATA_FILE)


def regenerate_annual() -> Path:
    """Rewrite the shipped annual table from :func:`generate_annual`
    (``python -m steadyfit.demo.annual``)."""
    path = shipped_annual()
    generate_annual().to_csv(path, index=False)
    return path


if __name__ == "__main__":
    print(regenerate_annual())
