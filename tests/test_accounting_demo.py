"""The invented accounting example: the shipped table is what its generator makes, and the
accounts recover the productivity it was made with.

The data are simulated by ``steadyfit.demo.accounting`` (invented economies); the check
is against the simulation's own truth, not a published value.  The shipped file rounds
years of schooling to three decimals, so ln h (and ln A) can move by up to 0.134 x 0.0005
(7e-5): the tolerance is 1e-4.
"""

from __future__ import annotations

import io
from pathlib import Path

import numpy as np
import pandas as pd

from steadyfit.calibrate.accounting import development_accounts
from steadyfit.calibrate.inputs import load_accounting
from steadyfit.demo.accounting import generate_accounting, shipped_accounting

SPEC = Path(__file__).resolve().parent.parent / "specs" / "accounting_demo.toml"


def test_shipped_table_is_reproducible():
    made = pd.read_csv(io.StringIO(generate_accounting().to_csv(index=False)))
    pd.testing.assert_frame_equal(made, pd.read_csv(shipped_accounting()))


def test_accounts_recover_the_simulated_productivity():
    spec, path = load_accounting(SPEC)
    frame = pd.read_csv(path)
    c = spec.columns
    acc = development_accounts(frame, id_column=spec.id, year=spec.year, output=c.output,
                               capital=c.capital, workers=c.workers,
                               schooling_years=c.schooling_years, labour_share=c.labour_share,
                               alpha=spec.alpha, years=spec.years)
    for year in acc.years:
        truth = frame[frame.year == year.year].set_index("economy").ln_productivity
        np.testing.assert_allclose(year.ln_a, truth.loc[list(year.economies)], atol=1e-4)
        assert 0 < year.variance_share < 1 and year.capital_share_measured > spec.alpha
