"""Annual data: messages name the economy and the year, declared codes are the only codes,
and each panel sample reports its own shape (invented economies of the refusal corpus's
annual base case)."""

from __future__ import annotations

import shutil
from pathlib import Path

import pandas as pd
import pytest

import steadyfit
from steadyfit.errors import InputError

BASE = Path(__file__).parent / "refusals" / "_base_annual"


@pytest.fixture
def annual(tmp_path):
    for name in ("annual.csv", "spec.toml"):
        shutil.copy(BASE / name, tmp_path / name)
    return tmp_path


def _set(folder: Path, economy: str, year: int, column: str, value: float) -> None:
    frame = pd.read_csv(folder / "annual.csv")
    frame.loc[(frame.economy == economy) & (frame.year == year), column] = value
    frame.to_csv(folder / "annual.csv", index=False)


def test_a_value_message_names_economy_and_year(annual):
    _set(annual, "Glenharrow", 1968, "invest", 150.0)  # above 100 percent
    with pytest.raises(InputError) as err:
        steadyfit.run(annual / "spec.toml")
    assert "Glenharrow in 1968" in str(err.value)


def test_declared_codes_are_the_only_codes(annual):
    _set(annual, "Jorvale", 1961, "gdp_per_worker", 99999.0)  # a boom year, not a code
    with pytest.raises(InputError, match="looks like a missing-value code"):
        steadyfit.run(annual / "spec.toml")
    spec = annual / "spec.toml"
    spec.write_text(spec.read_text().replace('units = { invest = "percent" }',
                                             'units = { invest = "percent" }\n'
                                             'missing_codes = [-99]'))
    found = steadyfit.run(spec)
    assert found.panels  # 99999 taken as data once the user has said what a code is


def test_each_sample_reports_its_own_panel_shape(annual):
    found = steadyfit.run(annual / "spec.toml")
    shapes = {p.sample: p.shape for p in found.panels}
    assert shapes["all"][1].startswith("12 economies")
    assert shapes["coast"][1].startswith("6 economies")
