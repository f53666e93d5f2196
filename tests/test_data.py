"""Reading data, declared units, canonical columns and dropped economies."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from conftest import write_spec
from steadyfit.data import load_data, select
from steadyfit.equations import find_form
from steadyfit.errors import InputError
from steadyfit.spec import load_spec

SPEC = """
[data]
file = "d.csv"
id = "economy"
non_positive = "{policy}"
[data.columns]
income = "y"
invest = "sk"
schooling = "sh"
workforce_growth = "n"
[data.units]
invest = "{unit}"
schooling = "percent"
workforce_growth = "percent"
[samples]
all = ""
north = "region == 'north'"
[[equation]]
name = "e"
capital = ["physical", "human_rate"]
"""


def _frame():
    return pd.DataFrame({
        "economy": ["Aa", "Bb", "Cc", "Dd", "Ee", "Ff"],
        "region": ["north", "north", "south", None, "south", "north"],
        "y": [1000.0, 2000.0, 3000.0, 4000.0, np.nan, 6000.0],
        "sk": [10.0, 20.0, 15.0, 25.0, 12.0, 18.0],
        "sh": [3.0, 5.0, np.nan, 7.0, 4.0, 6.0],
        "n": [1.0, 2.0, 1.5, 0.5, 2.5, 3.0],
    })


def _spec(tmp_path, frame=None, unit="percent", policy="error", suffix=".csv"):
    frame = _frame() if frame is None else frame
    if suffix == ".csv":
        frame.to_csv(tmp_path / "d.csv", index=False)
        text = SPEC
    else:
        frame.to_parquet(tmp_path / "d.parquet", index=False)
        text = SPEC.replace("d.csv", "d.parquet")
    return load_spec(write_spec(tmp_path, text.format(unit=unit, policy=policy)))


def test_canonical_columns(tmp_path):
    table = load_data(_spec(tmp_path))
    f = table.frame
    assert f.loc["Aa", "ln_y"] == pytest.approx(np.log(1000))
    assert f.loc["Aa", "ln_sk"] == pytest.approx(np.log(0.10))
    assert f.loc["Aa", "ln_sh"] == pytest.approx(np.log(0.03))
    assert f.loc["Aa", "ln_ngd"] == pytest.approx(np.log(0.01 + 0.05))
    assert len(table.sha256) == 64


def test_fraction_units_are_not_rescaled(tmp_path):
    frame = _frame().assign(sk=lambda d: d.sk / 100)
    table = load_data(_spec(tmp_path, frame, unit="fraction"))
    assert table.frame.loc["Bb", "ln_sk"] == pytest.approx(np.log(0.20))


def test_parquet_reads_like_csv(tmp_path):
    pytest.importorskip("pyarrow")
    a = load_data(_spec(tmp_path)).frame["ln_sk"]
    b = load_data(_spec(tmp_path, suffix=".parquet")).frame["ln_sk"]
    pd.testing.assert_series_equal(a, b)


def test_dropped_economies_are_listed_with_reasons(tmp_path):
    spec = _spec(tmp_path)
    table = load_data(spec)
    form = find_form("levels", ["physical", "human_rate"])
    sel = select(table, spec, "all", form)
    assert tuple(sel.economies) == ("Aa", "Bb", "Dd", "Ff")
    reasons = {d.economy: d.reason for d in sel.dropped}
    assert reasons == {"Ee": "missing income ('y')", "Cc": "missing schooling ('sh')"}
    north = select(table, spec, "north", form)
    assert tuple(north.economies) == ("Aa", "Bb", "Ff")
    assert {d.economy for d in north.dropped} == {"Dd"}  # its region is missing
    assert "sample filter" in north.dropped[0].reason


@pytest.mark.parametrize("value", [0.0, -3.0])
def test_non_positive_investment_is_an_error_naming_the_economy(tmp_path, value):
    frame = _frame()
    frame.loc[1, "sk"] = value
    spec = _spec(tmp_path, frame)
    with pytest.raises(InputError, match="economy 'Bb'.*invest <= 0"):
        select(load_data(spec), spec, "all", find_form("levels", ["physical"]))


def test_non_positive_can_be_dropped_on_request(tmp_path):
    frame = _frame()
    frame.loc[1, "sk"] = 0.0
    spec = _spec(tmp_path, frame, policy="drop")
    sel = select(load_data(spec), spec, "all", find_form("levels", ["physical"]))
    assert "Bb" not in sel.economies
    assert any(d.economy == "Bb" and "invest <= 0" in d.reason for d in sel.dropped)


def test_workforce_shrinking_faster_than_g_plus_delta(tmp_path):
    frame = _frame()
    frame.loc[0, "n"] = -6.0  # n + g + delta = -0.01
    spec = _spec(tmp_path, frame)
    with pytest.raises(InputError, match=r"economy 'Aa' has n \+ g \+ delta = -0.01 <= 0 \(n = -6"):
        select(load_data(spec), spec, "all", find_form("levels", ["physical"]))


def test_percent_declared_as_fraction_is_refused(tmp_path):
    with pytest.raises(InputError, match="look like percent"):
        load_data(_spec(tmp_path, unit="fraction"))


def test_fraction_declared_as_percent_is_refused(tmp_path):
    frame = _frame().assign(sk=lambda d: d.sk / 100)
    with pytest.raises(InputError, match="look like fractions"):
        load_data(_spec(tmp_path, frame, unit="percent"))


def test_odd_but_possible_values_warn(tmp_path):
    frame = _frame().assign(sk=[1.5, 1.2, 1.8, 1.1, 1.9, 1.6])
    table = load_data(_spec(tmp_path, frame))
    assert any("check the unit" in w for w in table.warnings)


@pytest.mark.parametrize("mutate, fragment", [
    (lambda d: d.drop(columns="sk"), "no column 'sk'"),
    (lambda d: d.assign(economy=["Aa", "Aa", "Cc", "Dd", "Ee", "Ff"]), "'Aa' appears more"),
    (lambda d: d.assign(sk=["10", "x", "15", "25", "12", "18"]), "non-numeric value 'x'"),
])
def test_table_problems(tmp_path, mutate, fragment):
    with pytest.raises(InputError, match=fragment):
        load_data(_spec(tmp_path, mutate(_frame())))


def test_missing_column_gets_a_hint(tmp_path):
    frame = _frame().rename(columns={"sk": "skk"})
    with pytest.raises(InputError, match="did you mean 'skk'"):
        load_data(_spec(tmp_path, frame))
