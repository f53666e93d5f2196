"""The panel estimators by name: the one list the spec, the quantities and the reports use,
with what each assumes (no imports, so every layer can read it)."""

from __future__ import annotations

from typing import Literal, get_args

Method = Literal["pooled_ols", "within", "first_difference_iv", "difference_gmm", "system_gmm"]
METHODS: tuple[str, ...] = get_args(Method)

# what each estimator assumes, and its known bias on the lagged dependent variable: said in the
# report beside its numbers
ASSUMES: dict[str, str] = {
    "pooled_ols": ("no economy effect correlated with the regressors; with one, the coefficient "
                   "on lagged income is biased up"),
    "within": ("regressors strictly exogenous given the economy effect; with few periods the "
               "coefficient on lagged income is biased down (Nickell 1981)"),
    "first_difference_iv": ("errors not serially correlated, so income two periods back is a "
                            "valid instrument for the differenced lag; inefficient, and weak "
                            "when income is persistent"),
    "difference_gmm": ("errors not serially correlated (AR(2) should not reject) and the "
                       "instruments valid (over-identification test); weak instruments and a "
                       "downward bias when income is persistent (Blundell and Bond 1998)"),
    "system_gmm": ("what difference GMM assumes, and in addition that changes in income are "
                   "uncorrelated with the economy effect (mean stationarity), which the levels "
                   "equation needs"),
}

TITLES: dict[str, str] = {
    "pooled_ols": "pooled OLS",
    "within": "within (fixed effects)",
    "first_difference_iv": "first-difference 2SLS",
    "difference_gmm": "difference GMM",
    "system_gmm": "system GMM",
}
