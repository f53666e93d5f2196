"""Property tests: bad specs and filters raise InputError, and nothing else, with short messages.

Covers ``parse_filter``, ``load_spec`` and ``spec_from_dict`` on arbitrary text, token soup,
nesting far deeper than any real spec (built iteratively, up to thousands of levels) and
very long bad input.
"""

from __future__ import annotations

import tomllib

import pytest
from hypothesis import HealthCheck, example, given, settings
from hypothesis import strategies as st

from conftest import small_data_section
from steadyfit.errors import InputError
from steadyfit.filters import parse_filter
from steadyfit.spec import Spec, load_spec, spec_from_dict

MAX_MESSAGE = 400  # an error message quotes at most about 80 characters of the bad text
FUZZ = settings(deadline=None, max_examples=60, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])
DEEP = settings(deadline=None, max_examples=15, database=None,
                suppress_health_check=[HealthCheck.too_slow, HealthCheck.data_too_large])

GOOD_SPEC = """\
title = "fuzz base"

""" + small_data_section("economies.csv") + """
[samples]
all = ""

[[equation]]
name = "levels_human"
capital = ["physical", "human_rate"]
"""


def _filter_outcome(text: str, where: str = "samples.fuzz") -> InputError | None:
    """Parse; return the InputError raised, or None on success.  Anything else propagates."""
    try:
        parse_filter(text, where)
    except InputError as exc:
        return exc
    return None


def _spec_outcome(call) -> InputError | None:  # type: ignore[no-untyped-def]
    try:
        result = call()
    except InputError as exc:
        return exc
    assert isinstance(result, Spec)
    return None


# ---------------------------------------------------------------------------- filters

FILTER_TOKENS = st.sampled_from([
    "(", ")", "[", "]", ",", "not", "and", "or", "in", "true", "false", "==", "!=", "<", "<=",
    ">", ">=", "=", "!", "x", "region", "a.b", "_c", "`oil exporter`", "`", "'north'", '"coast"',
    "'", '"', "1", "-2.5", "1e6", ".5", "+", "e", "\\", "\n", "\t", "$", "#", ";", "{", "}",
    "NaN", "None", "é", "\x00",
])
filter_soup = st.lists(FILTER_TOKENS, max_size=60).flatmap(
    lambda toks: st.sampled_from([" ", ""]).map(lambda sep: sep.join(toks)))


@FUZZ
@given(st.text(max_size=300))
def test_arbitrary_text_as_filter(text):
    _filter_outcome(text)


@FUZZ
@given(filter_soup)
@example("region in ['north', 'coast'] and not (x >= 1e6 or `oil exporter` == true)")
@example("x in [")
@example("not")
@example("(")
def test_token_soup_as_filter(text):
    exc = _filter_outcome(text)
    if exc is not None:
        assert len(str(exc)) < MAX_MESSAGE, str(exc)


def _nested_filter(kind: str, depth: int) -> str:
    leaf = "x == 1"
    if kind == "parens":
        return "(" * depth + leaf + ")" * depth
    if kind == "parens-unclosed":
        return "(" * depth + leaf
    if kind == "parens-extra-close":
        return "(" * depth + leaf + ")" * (depth + 1)
    if kind == "not":
        return "not " * depth + leaf
    if kind == "not-dangling":
        return "not " * depth
    if kind == "not-parens":
        return "not (" * depth + leaf + ")" * depth
    if kind == "and-parens":
        return "(x == 1 and " * depth + leaf + ")" * depth
    raise AssertionError(kind)


NEST_KINDS = ["parens", "parens-unclosed", "parens-extra-close", "not", "not-dangling",
              "not-parens", "and-parens"]


@DEEP
@given(st.sampled_from(NEST_KINDS), st.integers(50, 3000))
@example("parens", 3000)
@example("not", 3000)
@example("not-parens", 3000)
@example("parens-unclosed", 3000)
def test_deeply_nested_filter_parses_or_raises_input_error(kind, depth):
    exc = _filter_outcome(_nested_filter(kind, depth))
    if exc is not None:
        assert len(str(exc)) < MAX_MESSAGE, str(exc)[:500]


LONG = 200_000


@pytest.mark.parametrize("text", [
    ("x == 1 and " * (LONG // 11 + 1))[:LONG] + ")",               # error at the very end
    ") " + ("x == 1 and " * (LONG // 11 + 1))[:LONG] + "x == 1",     # error at the start
    "x == 1 and y == " + "'" + "a" * LONG,                         # unterminated quote
    "`" + "b" * LONG,                                              # unterminated backtick
    "region in [" + "'north', " * (LONG // 9) + "]",               # trailing comma in a list
    "x " + "=" * LONG,                                             # runaway operator
], ids=["end", "start", "quote", "backtick", "list", "operator"])
def test_long_bad_filter_gives_a_short_message(text):
    assert len(text) >= LONG
    exc = _filter_outcome(text, "samples.long")
    assert exc is not None, "a filter with a syntax error must not parse"
    assert len(str(exc)) < MAX_MESSAGE, f"{len(str(exc))} characters: {str(exc)[:300]}..."


# ---------------------------------------------------------------------------- TOML files

TOML_TOKENS = st.sampled_from([
    "[", "]", "[[", "]]", "{", "}", "=", ",", ".", "\n", " ", "#", '"', "'", '"""', "'''",
    "\\", "title", "data", "equation", "samples", "report", "figures", "file", "id", "columns",
    "income", "capital", "name", "[data]", "[[equation]]", "[data.columns]", "[samples]",
    '"all"', '""', "''", '"x"', "1", "-0.5", "1e400", "nan", "inf", "true", "false",
    "1979-05-27", "07:32:00", "1979-05-27T07:32:00Z", "0x1f", "é", "\t", "\r\n", "\x00",
    "physical", '["physical", "human_rate"]', "levels", "growth",
])
toml_soup = st.lists(TOML_TOKENS, max_size=80).map("".join)
toml_mutation = st.tuples(st.integers(0, len(GOOD_SPEC)), st.integers(0, 40), toml_soup).map(
    lambda t: GOOD_SPEC[:t[0]] + t[2] + GOOD_SPEC[t[0] + t[1]:])
safe_text = st.text(st.characters(blacklist_categories=("Cs",)), max_size=400)


@pytest.fixture(scope="module")
def scratch(tmp_path_factory):
    return tmp_path_factory.mktemp("fuzz")


@FUZZ
@given(st.one_of(safe_text, toml_soup, toml_mutation))
def test_arbitrary_text_as_spec_file(scratch, text):
    path = scratch / "spec.toml"
    path.write_text(text, encoding="utf-8")
    _spec_outcome(lambda: load_spec(path))


@FUZZ
@given(st.binary(max_size=300))
def test_arbitrary_bytes_as_spec_file(scratch, raw):
    path = scratch / "spec.toml"
    path.write_bytes(raw)
    _spec_outcome(lambda: load_spec(path))


# ---------------------------------------------------------------------------- deep nesting


def _nested_value(kind: str, depth: int):  # type: ignore[no-untyped-def]
    value: object = 1
    for _ in range(depth):  # iteratively: the test itself must not recurse
        value = [value] if kind == "list" else {"k": value}
    return value


def _nested_toml(kind: str, depth: int) -> str:
    if kind == "list":
        return "[" * depth + "1" + "]" * depth
    return "{k = " * depth + "1" + "}" * depth


def _base_dict() -> dict:
    return tomllib.loads(GOOD_SPEC)


PLACES = ["title", "unknown_key", "data", "data.columns.income", "samples.all",
          "equation.0.capital", "equation.0.name", "report.figures", "equation"]


def _place(raw: dict, where: str, value: object) -> dict:
    parts = where.split(".")
    node: object = raw
    for part in parts[:-1]:
        if isinstance(node, list):
            node = node[int(part)]
        else:
            node = node.setdefault(part, {})  # type: ignore[attr-defined]
    last = parts[-1]
    if isinstance(node, list):
        node[int(last)] = value
    else:
        node[last] = value  # type: ignore[index]
    return raw


@DEEP
@given(st.sampled_from(["list", "dict"]), st.integers(1, 2000), st.sampled_from(PLACES))
@example("list", 2000, "title")
@example("dict", 2000, "unknown_key")
@example("list", 2000, "report.figures")
@example("dict", 2000, "samples.all")
def test_deeply_nested_dict_raises_input_error(kind, depth, where):
    raw = _place(_base_dict(), where, _nested_value(kind, depth))
    assert _spec_outcome(lambda: spec_from_dict(raw)) is not None


def _toml_with_deep_value(kind: str, depth: int, where: str) -> str:
    value = _nested_toml(kind, depth)
    if where == "title":
        return GOOD_SPEC.replace('title = "fuzz base"', f"title = {value}")
    if where == "unknown_key":
        return f"unknown_key = {value}\n" + GOOD_SPEC
    if where == "samples.all":
        return GOOD_SPEC.replace('all = ""', f"all = {value}")
    if where == "equation.capital":
        return GOOD_SPEC.replace('capital = ["physical", "human_rate"]', f"capital = {value}")
    if where == "report.figures":
        return GOOD_SPEC + f"\n[report]\nfigures = {value}\n"
    if where == "dotted-table":
        return GOOD_SPEC + "\n[" + ".".join(["extra"] * depth) + "]\nk = 1\n"
    raise AssertionError(where)


@DEEP
@given(st.sampled_from(["list", "table"]), st.integers(1, 2000),
       st.sampled_from(["title", "unknown_key", "samples.all", "equation.capital",
                        "report.figures", "dotted-table"]))
@example("list", 2000, "title")
@example("table", 2000, "title")
@example("list", 101, "samples.all")
@example("table", 101, "report.figures")
@example("list", 2000, "dotted-table")
def test_deeply_nested_toml_raises_input_error(scratch, kind, depth, where):
    path = scratch / "deep.toml"
    path.write_text(_toml_with_deep_value(kind, depth, where), encoding="utf-8")
    assert _spec_outcome(lambda: load_spec(path)) is not None


@pytest.mark.parametrize("depth", [101, 1000, 5000])
@pytest.mark.parametrize("kind", ["list", "table"])
def test_unclosed_deep_toml_raises_input_error(tmp_path, kind, depth):
    opener = "[" if kind == "list" else "{k = "
    path = tmp_path / "deep.toml"
    path.write_text(f"title = {opener * depth}1\n", encoding="utf-8")
    with pytest.raises(InputError):
        load_spec(path)


# ---------------------------------------------------------------------------- random dicts

scalars = st.one_of(st.none(), st.booleans(), st.integers(), st.floats(),
                    st.text(max_size=20), st.sampled_from(["levels", "physical", "all", ""]))
spec_keys = st.sampled_from(["title", "data", "file", "id", "columns", "units", "income",
                             "invest", "workforce_growth", "schooling", "equation", "name",
                             "form", "capital", "samples", "all", "report", "figures",
                             "inference", "covariance", "target", "quantity", "plausible",
                             "alpha", "output", "folder"]) | st.text(max_size=8)
json_like = st.recursive(scalars, lambda inner: st.lists(inner, max_size=4)
                         | st.dictionaries(spec_keys, inner, max_size=4), max_leaves=25)


@FUZZ
@given(st.dictionaries(spec_keys, json_like, max_size=6))
def test_random_dict_as_spec(raw):
    _spec_outcome(lambda: spec_from_dict(raw))


@FUZZ
@given(st.sampled_from(PLACES), json_like)
def test_random_value_in_a_good_spec(where, value):
    raw = _place(_base_dict(), where, value)
    _spec_outcome(lambda: spec_from_dict(raw))


# ---------------------------------------------------------------------------- long bad specs


@pytest.mark.parametrize("where,value", [
    ("report.figures", "z" * LONG),
    ("equation.0.form", "q" * LONG),
    ("equation.0.name", "9" + "n" * LONG),
    ("title", ["t" * LONG]),
], ids=["literal", "form", "name", "title-type"])
def test_long_bad_spec_value_gives_a_short_message(where, value):
    raw = _place(_base_dict(), where, value)
    exc = _spec_outcome(lambda: spec_from_dict(raw))
    assert exc is not None
    assert len(str(exc)) < MAX_MESSAGE, f"{len(str(exc))} characters: {str(exc)[:300]}..."


def test_long_unknown_key_gives_a_short_message(tmp_path):
    path = tmp_path / "long.toml"
    path.write_text(GOOD_SPEC + "\n[report]\n" + "k" * LONG + " = 1\n", encoding="utf-8")
    with pytest.raises(InputError) as exc:
        load_spec(path)
    assert len(str(exc.value)) < MAX_MESSAGE + len(str(path)), str(exc.value)[:300]
