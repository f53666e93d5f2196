"""The sample-filter grammar: parsing, evaluation, and refusals."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from steadyfit.errors import InputError
from steadyfit.filters import evaluate_filter, parse_filter, referenced_columns

TABLE = pd.DataFrame({
    "pop": [1e5, 2e6, 3e7, 4e8],
    "region": ["north", "coast", "north", "islands"],
    "oil": ["no", "yes", "no", "no"],
    "flag": [0, 1, 0, 1],
    "odd name": [1.0, 2.0, 3.0, 4.0],
})


@pytest.mark.parametrize("text, expected", [
    ("", [True, True, True, True]),
    ("pop >= 1e6", [False, True, True, True]),
    ("pop < 2e6 or pop > 1e8", [True, False, False, True]),
    ("region in ['north', 'coast']", [True, True, True, False]),
    ("region not in [\"north\"]", [False, True, False, True]),
    ("oil == 'no' and flag == 0", [True, False, True, False]),
    ("not (oil == 'no' and flag == 0)", [False, True, False, True]),
    ("not flag == 1 or region == 'islands'", [True, False, True, True]),
    ("`odd name` != 3", [True, True, False, True]),
    ("flag in [1]", [False, True, False, True]),
    ("2e6 <= pop", [False, True, True, True]),
])
def test_filters_select_the_right_rows(text, expected):
    node = parse_filter(text)
    assert evaluate_filter(node, TABLE).tolist() == expected


def test_and_binds_tighter_than_or():
    a = evaluate_filter(parse_filter("flag == 1 or oil == 'no' and pop > 1e7"), TABLE)
    b = evaluate_filter(parse_filter("flag == 1 or (oil == 'no' and pop > 1e7)"), TABLE)
    np.testing.assert_array_equal(a, b)


def test_referenced_columns():
    assert referenced_columns(parse_filter("a == 1 and (b > 2 or c in [1, 2])")) == ("a", "b", "c")


@pytest.mark.parametrize("text, fragment", [
    ("pop >", "ends too early"),
    ("pop >= 1 and", "ends too early"),
    ("(pop > 1", "expected ')'"),
    ("pop = 1", "unexpected character"),
    ("pop > 1 pop", "unexpected 'pop'"),
    ("region in 'north'", "expected '['"),
    ("__import__('os')", "expected a comparison"),
    ("pop > 1; drop", "unexpected character"),
])
def test_syntax_errors_are_input_errors(text, fragment):
    with pytest.raises(InputError, match="samples.x") as exc:
        parse_filter(text, "samples.x")
    assert fragment in str(exc.value)


def test_unknown_column_gets_a_hint():
    with pytest.raises(InputError, match="did you mean 'region'"):
        evaluate_filter(parse_filter("regoin == 'north'"), TABLE)


@pytest.mark.parametrize("text", ["pop == 'big'", "region == 3", "oil in [1, 2]"])
def test_type_mismatch_is_refused(text):
    with pytest.raises(InputError, match="holds"):
        evaluate_filter(parse_filter(text), TABLE)
