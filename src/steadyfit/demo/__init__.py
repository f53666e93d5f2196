"""The demonstration scenario: invented economies generated from the augmented model.

Every economy and region name here is invented.  The data follow the
steady-state model with human capital (DOMAIN.md section 2) with known shares
``TRUE_ALPHA`` and ``TRUE_BETA``, technology differences and deviations from the
steady state as noise, and a group of resource exporters whose income owes
more to resource rents than to the model (so excluding them matters).  The
labour share the invented accounts report books part of the self-employed's
income and the exporters' rents as capital income, so the measured capital
share lies above ``TRUE_ALPHA``.

:func:`generate` rebuilds the shipped table exactly (legacy ``RandomState``
streams are stable across numpy versions); :func:`write_demo` copies the
shipped data and spec into a folder.
"""

from __future__ import annotations

from importlib import resources
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import InputError

TRUE_ALPHA = 0.32
TRUE_BETA = 0.27
G_PLUS_DELTA = 0.05
SPAN_YEARS = 25
SEED = 20261201
N_ECONOMIES = 90
DATA_FILE = "demo_economies.csv"
SPEC_FILE = "demo.toml"

_HEADS = ("Ar", "Bel", "Cor", "Dal", "Esk", "Fen", "Gal", "Hol", "Ist", "Jor", "Kel", "Lun",
          "Mar", "Nor", "Ost", "Pel", "Quin", "Ros", "Sel", "Tor", "Ulv", "Vel", "Wes", "Yar",
          "Zan")
_TAILS = ("adorn", "avia", "brisk", "dovel", "emere", "holm", "ilund", "ovar", "uvia", "wick",
          "onde", "ethra")
_REGIONS = ("north", "coast", "highland", "islands")


def _names(rng: np.random.RandomState, n: int) -> list[str]:
    pool = [h + t for h in _HEADS for t in _TAILS]
    picks = rng.choice(len(pool), size=n, replace=False)
    return [pool[i] for i in picks]


def generate(seed: int = SEED, n: int = N_ECONOMIES) -> pd.DataFrame:
    """Build the demo table from the model with known shares (deterministic for a seed)."""
    rng = np.random.RandomState(seed)
    a, b = TRUE_ALPHA, TRUE_BETA
    names = _names(rng, n)
    region = rng.choice(len(_REGIONS), size=n)
    exporter = (rng.uniform(size=n) < 0.18).astype(int)
    invest = np.exp(rng.normal(np.log(16.0), 0.45, size=n)).clip(3.0, 45.0)  # percent of output
    enrol = np.exp(rng.normal(np.log(4.5), 0.7, size=n)).clip(0.4, 14.0)   # percent
    growth = rng.uniform(0.2, 3.6, size=n)                                  # percent a year
    ngd = growth / 100 + G_PLUS_DELTA
    ln_a = 7.9 + rng.normal(0.0, 0.22, size=n)  # technology, independent of the rates
    ln_a += exporter * rng.normal(0.9, 0.5, size=n)  # resource rents the model does not explain
    ln_ystar = (ln_a + a / (1 - a - b) * np.log(invest / 100) + b / (1 - a - b)
                * np.log(enrol / 100) - (a + b) / (1 - a - b) * np.log(ngd))
    # human capital stock per worker in the steady state (up to a common scale)
    ln_hstar = (a * np.log(invest / 100) + (1 - a) * np.log(enrol / 100) - np.log(ngd)) / (
        1 - a - b)
    hstock = np.exp(ln_hstar - ln_hstar.mean() + rng.normal(0.0, 0.04, size=n)) * 6.0
    # economies start off their steady state and close the gap at the model's speed
    lam = ngd * (1 - a - b)
    theta = 1 - np.exp(-lam * SPAN_YEARS)
    ln_y0 = ln_ystar + rng.normal(-0.35, 0.45, size=n)
    g = 0.02
    ln_y_end = ln_y0 + g * SPAN_YEARS + theta * (ln_ystar - ln_y0) + rng.normal(0, 0.12, size=n)
    population = np.exp(rng.normal(np.log(8.0e6), 1.3, size=n)).round(-3)
    # the labour share the accounts report: 1 - alpha, less the income of the self-employed
    # booked as capital income (more of it where income is low) and the resource exporters'
    # rents, plus noise; a few economies publish none
    booked = 0.12 / (1 + np.exp(ln_y_end - ln_y_end.mean()))
    labour = 1 - a - booked - exporter * 0.08 + rng.normal(0.0, 0.025, size=n)
    labour[rng.uniform(size=n) < 0.05] = np.nan
    frame = pd.DataFrame({
        "economy": names,
        "region": [_REGIONS[i] for i in region],
        "resource_exporter": exporter,
        "population_start": population.astype(np.int64),
        "output_per_worker_start": np.exp(ln_y0).round(0),
        "output_per_worker_end": np.exp(ln_y_end).round(0),
        "investment_share": invest.round(2),
        "secondary_enrolment": enrol.round(2),
        "schooling_index": hstock.round(3),
        "workforce_growth": growth.round(3),
        "labour_share": (labour * 100).round(1),
    })
    return frame.sort_values("economy", kind="stable").reset_index(drop=True)


def shipped_file(name: str) -> Path:
    return Path(str(resources.files(__package__).joinpath(name)))


def write_demo(folder: str | Path) -> Path:
    """Copy the demo data and spec into ``folder``; return the spec's path.

    Files already there are left alone when identical and refused when they
    differ, so nothing the user owns is overwritten.
    """
    folder = Path(folder)
    if folder.exists() and not folder.is_dir():
        raise InputError(f"'{folder}' exists and is not a folder", "--out")
    sources = {name: shipped_file(name).read_bytes() for name in (DATA_FILE, SPEC_FILE)}
    for name, content in sources.items():
        target = folder / name
        if target.exists() and target.read_bytes() != content:
            raise InputError(f"'{target}' exists and differs from the demo's {name}; "
                             "choose another folder", "--out")
    folder.mkdir(parents=True, exist_ok=True)
    for name, content in sources.items():
        (folder / name).write_bytes(content)
    return folder / SPEC_FILE


def regenerate() -> Path:
    """Rewrite the shipped table from :func:`generate` (``python -m steadyfit.demo``)."""
    path = shipped_file(DATA_FILE)
    generate().to_csv(path, index=False)
    return path
