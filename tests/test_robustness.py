"""Property tests: arbitrary user input gives an InputError or a result, never a crash."""

from __future__ import annotations

import pandas as pd
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from steadyfit.errors import InputError
from steadyfit.filters import evaluate_filter, parse_filter
from steadyfit.spec import spec_from_dict

TABLE = pd.DataFrame({"pop": [1.0, 2.0, 3.0], "region": ["a", "b", "c"]})
ALPHABET = st.sampled_from(list("pop region and or not in == != < <= > >= ( ) [ ] , ' \" 1 e . `"))


@given(st.text(alphabet=ALPHABET, max_size=40) | st.text(max_size=30))
@settings(max_examples=400, deadline=None)
def test_any_filter_text_parses_or_says_why(text):
    try:
        node = parse_filter(text, "samples.x")
    except InputError as exc:
        assert str(exc).startswith("samples.x: ")
        return
    try:
        mask = evaluate_filter(node, TABLE, "samples.x")
    except InputError:
        return
    assert mask.shape == (3,) and mask.dtype == bool


SCALARS = st.one_of(st.none(), st.booleans(), st.integers(-5, 5), st.floats(-2, 2),
                    st.text(max_size=8))
KEYS = st.sampled_from(["data", "file", "id", "columns", "units", "income", "invest",
                        "workforce_growth", "equation", "name", "form", "capital", "samples",
                        "inference", "covariance", "plausible", "alpha", "target", "title",
                        "assumptions", "g_plus_delta", "percent", "levels", "growth", "x"])
VALUES = st.recursive(SCALARS | KEYS, lambda inner: st.lists(inner, max_size=3)
                      | st.dictionaries(KEYS, inner, max_size=4), max_leaves=12)


@given(st.dictionaries(KEYS, VALUES, max_size=6))
@settings(max_examples=300, deadline=None, suppress_health_check=[HealthCheck.too_slow])
def test_any_spec_dictionary_validates_or_says_why(raw):
    try:
        spec_from_dict(raw)
    except InputError as exc:
        assert str(exc).strip()


GOOD = {
    "data": {"file": "d.csv", "id": "e",
             "columns": {"income": "y", "income_start": "y0", "invest": "s", "schooling": "h",
                         "workforce_growth": "n"},
             "units": {"invest": "percent", "schooling": "percent", "workforce_growth": "percent"}},
    "assumptions": {"g_plus_delta": 0.05, "span_years": 25},
    "samples": {"all": "", "some": "x > 1"},
    "equation": [{"name": "a", "form": "levels", "capital": ["physical", "human_rate"]},
                 {"name": "b", "form": "growth", "capital": ["physical"], "structural": True}],
    "inference": {"covariance": "cluster", "cluster": "region", "confidence": 0.9},
    "plausible": {"alpha": [0.2, 0.4]},
    "report": {"digits": 2, "stars": True},
    "target": [{"equation": "a", "sample": "all", "quantity": "alpha", "value": 0.3,
                "tolerance": 0.01}],
}


def _paths(d, prefix=()):
    if isinstance(d, dict):
        for k, v in d.items():
            yield from _paths(v, (*prefix, k))
    elif isinstance(d, list):
        for i, v in enumerate(d):
            yield from _paths(v, (*prefix, i))
    yield prefix


PATHS = [p for p in _paths(GOOD) if p]


def _replace(d, path, value):
    import copy

    out = copy.deepcopy(d)
    node = out
    for part in path[:-1]:
        node = node[part]
    node[path[-1]] = value
    return out


def test_the_base_spec_is_valid():
    spec_from_dict(GOOD)


@given(st.sampled_from(PATHS), VALUES)
@settings(max_examples=400, deadline=None, suppress_health_check=[HealthCheck.too_slow])
def test_one_bad_value_anywhere_names_a_key(path, value):
    try:
        spec_from_dict(_replace(GOOD, path, value))
    except InputError as exc:
        assert str(exc).startswith("spec")
