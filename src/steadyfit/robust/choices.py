"""The robustness analyses' choices by name: the one list the spec, the analyses and the
reports use (no imports, so every layer can read it)."""

from __future__ import annotations

from typing import Literal, get_args

BootstrapMethod = Literal["pairs", "wild"]
WildWeights = Literal["rademacher", "mammen"]
BOOTSTRAP_METHODS: tuple[str, ...] = get_args(BootstrapMethod)
WILD_WEIGHTS: tuple[str, ...] = get_args(WildWeights)
