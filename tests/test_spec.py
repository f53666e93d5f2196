"""Spec loading and validation: every mistake names its key, with a hint."""

from __future__ import annotations

import pytest

from conftest import write_spec
from steadyfit.errors import InputError
from steadyfit.spec import load_spec, spec_from_dict

GOOD = """
title = "t"
[data]
file = "d.csv"
id = "economy"
[data.columns]
income = "y"
invest = "sk"
workforce_growth = "n"
[data.units]
invest = "percent"
workforce_growth = "percent"
[[equation]]
name = "basic"
"""


def test_defaults_follow_the_domain_reference(tmp_path):
    spec = load_spec(write_spec(tmp_path, GOOD))
    b = spec.body
    assert b.assumptions.g_plus_delta == 0.05  # MRW (1992) choice, DOMAIN.md section 1
    assert b.plausible.alpha == (0.25, 0.40)  # DOMAIN.md section 6 defaults
    assert b.plausible.beta == (0.20, 0.45)
    assert b.plausible.alpha_point == pytest.approx(1 / 3)
    assert b.inference.covariance == "classical" and b.inference.confidence == 0.95
    assert dict(b.samples) == {"all": ""}
    assert spec.data_path == (tmp_path / "d.csv").resolve()
    assert spec.equation_samples(b.equation[0]) == ("all",)


@pytest.mark.parametrize("change, fragments", [
    (("[[equation]]\nname = \"basic\"", "[[equation]]\nname = \"basic\"\nfomr = \"levels\""),
     ["equation[1].fomr", "unknown key 'fomr'", "did you mean 'form'", "line"]),
    (("[data]", "[data]\nidd = 1"), ["data.idd", "did you mean 'id'"]),
    (("title = \"t\"", "title = \"t\"\nsampels = {}"), ["did you mean 'samples'"]),
    (("name = \"basic\"", "name = \"basic\"\nform = \"level\""),
     ["equation[1].form", "did you mean 'levels'"]),
    (("name = \"basic\"", "name = \"basic\"\ncapital = [\"physical\", \"humanrate\"]"),
     ["equation[1].capital", "did you mean 'human_rate'"]),
    (("name = \"basic\"", "name = \"basic\"\ncapital = [\"human_rate\"]"),
     ["equation[1].capital", "takes capital"]),
    (("invest = \"percent\"\n", ""), ["data.units.invest", "must be declared"]),
    (("invest = \"percent\"", "invest = \"percnt\""),
     ["data.units.invest", "did you mean 'percent'"]),
    (("name = \"basic\"", "name = \"basic\"\nsamples = [\"al\"]"),
     ["equation[1].samples", "did you mean 'all'"]),
    (("title = \"t\"", "title = \"t\"\n[inference]\ncovariance = \"cluster\""),
     ["inference.cluster", "needs cluster"]),
    (("title = \"t\"", "title = \"t\"\n[plausible]\nalpha = [0.5, 0.2]"), ["plausible.alpha"]),
    (("title = \"t\"", "title = \"t\"\n[assumptions]\ng_plus_delta = -0.1"),
     ["assumptions.g_plus_delta"]),
    (("name = \"basic\"", "name = \"basic\"\ncapital = [\"physical\", \"human_rate\"]"),
     ["data.columns.schooling"]),
    (("income = \"y\"\n", ""), ["data.columns.income", "required"]),
])
def test_mistakes_name_the_key(tmp_path, change, fragments):
    old, new = change
    assert old in GOOD
    with pytest.raises(InputError) as exc:
        load_spec(write_spec(tmp_path, GOOD.replace(old, new, 1)))
    for fragment in fragments:
        assert fragment in str(exc.value)


def test_unknown_key_reports_its_line(tmp_path):
    text = GOOD.replace("[[equation]]\nname = \"basic\"",
                        "[[equation]]\nname = \"basic\"\nfomr = 1")
    line = text.splitlines().index("fomr = 1") + 1
    with pytest.raises(InputError, match=f"line {line}:"):
        load_spec(write_spec(tmp_path, text))


def test_malformed_toml(tmp_path):
    with pytest.raises(InputError, match="malformed TOML"):
        load_spec(write_spec(tmp_path, GOOD + "\n[data\n"))


def test_missing_spec_file(tmp_path):
    with pytest.raises(InputError, match="does not exist"):
        load_spec(tmp_path / "nope.toml")


def test_duplicate_equation_names(tmp_path):
    text = GOOD + "\n[[equation]]\nname = \"basic\"\n"
    with pytest.raises(InputError, match="used twice"):
        load_spec(write_spec(tmp_path, text))


def test_spec_from_dict_for_notebooks(tmp_path):
    spec = spec_from_dict({
        "data": {"file": "d.csv", "id": "e",
                 "columns": {"income": "y", "invest": "s", "workforce_growth": "n"},
                 "units": {"invest": "fraction", "workforce_growth": "fraction"}},
        "equation": [{"name": "a"}],
    }, base_dir=tmp_path)
    assert spec.path is None and spec.data_path == (tmp_path / "d.csv").resolve()
