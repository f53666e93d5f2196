"""A small, safe grammar for sample filters.

Filters select economies by comparing columns of the data table with
literals.  They are parsed here into a tree and evaluated column-wise; nothing
is ever passed to ``eval`` or ``DataFrame.query``.

Grammar (keywords are lower case)::

    expr       := term ("or" term)*
    term       := factor ("and" factor)*
    factor     := "not" factor | "(" expr ")" | comparison
    comparison := operand OP operand | NAME ["not"] "in" "[" literal ("," literal)* "]"
    operand    := NAME | literal
    literal    := NUMBER | STRING | "true" | "false"
    OP         := "==" | "!=" | "<" | "<=" | ">" | ">="

A ``NAME`` is a column: letters, digits, ``_`` and ``.``, or any other column
name in braces (``{population 1960}``); backticks are still read the same way
for now, with a notice (see ``spec.Spec.notices``).  Strings use single or
double quotes.  An empty filter selects every economy.
"""

from __future__ import annotations

import re
from dataclasses import dataclass
from typing import Any

import numpy as np
import pandas as pd

from .errors import InputError, did_you_mean, excerpt, quote

_TOKEN = re.compile(
    r"""\s*(?:
        (?P<number>[-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)
      | (?P<string>"[^"]*"|'[^']*')
      | (?P<quoted>\{[^{}]+\}|`[^`]+`)
      | (?P<op>==|!=|<=|>=|<|>)
      | (?P<punct>[()\[\],])
      | (?P<name>[A-Za-z_][A-Za-z0-9_.]*)
    )""",
    re.VERBOSE,
)
_KEYWORDS = {"and", "or", "not", "in", "true", "false"}


@dataclass(frozen=True)
class Column:
    name: str


@dataclass(frozen=True)
class Literal:
    value: Any


@dataclass(frozen=True)
class Compare:
    left: Column | Literal
    op: str
    right: Column | Literal


@dataclass(frozen=True)
class Member:
    column: Column
    values: tuple[Any, ...]
    negate: bool


@dataclass(frozen=True)
class Not:
    operand: Node


@dataclass(frozen=True)
class BoolOp:
    op: str  # "and" | "or"
    operands: tuple[Node, ...]


@dataclass(frozen=True)
class Everything:
    """The empty filter."""


Node = Compare | Member | Not | BoolOp | Everything


class _SyntaxProblem(ValueError):
    """A syntax error at a position (from 1) of the filter text."""

    def __init__(self, message: str, position: int) -> None:
        super().__init__(message)
        self.position = position


def _tokenize(text: str) -> list[tuple[str, str, int]]:
    tokens: list[tuple[str, str, int]] = []
    pos = 0
    while pos < len(text):
        if text[pos:].strip() == "":
            break
        m = _TOKEN.match(text, pos)
        if not m or m.end() == pos:
            skipped = len(text[pos:]) - len(text[pos:].lstrip())
            char = text[pos + skipped:pos + skipped + 1]
            raise _SyntaxProblem(f"unexpected character {char!r}", pos + skipped + 1)
        kind = m.lastgroup or ""
        value, start = m.group(kind), m.start(kind)
        if kind == "name" and value in _KEYWORDS:
            kind = "keyword"
        tokens.append((kind, value, start + 1))
        pos = m.end()
    return tokens


# Filters nested deeper than this (parentheses or "not") are refused: the parser and the
# evaluator recurse once per level.
MAX_DEPTH = 100


class _Parser:
    def __init__(self, text: str) -> None:
        self.tokens = _tokenize(text)
        self.i = 0
        self.depth = 0

    def deeper(self) -> None:
        self.depth += 1
        if self.depth > MAX_DEPTH:
            tok = self.peek()
            raise _SyntaxProblem(f"the filter is nested more than {MAX_DEPTH} levels deep",
                                 tok[2] if tok else 0)

    def peek(self) -> tuple[str, str, int] | None:
        return self.tokens[self.i] if self.i < len(self.tokens) else None

    def take(self) -> tuple[str, str, int]:
        tok = self.peek()
        if tok is None:
            raise ValueError("the filter ends too early")
        self.i += 1
        return tok

    def accept(self, value: str) -> bool:
        tok = self.peek()
        if tok is not None and tok[1] == value and tok[0] in ("keyword", "punct", "op"):
            self.i += 1
            return True
        return False

    def expect(self, value: str) -> None:
        if not self.accept(value):
            tok = self.peek()
            found = f"'{tok[1]}' at position {tok[2]}" if tok else "the end"
            raise ValueError(f"expected '{value}' but found {found}")

    def parse(self) -> Node:
        if not self.tokens:
            return Everything()
        node = self.expr()
        tok = self.peek()
        if tok is not None:
            raise ValueError(f"unexpected '{tok[1]}' at position {tok[2]}")
        return node

    def expr(self) -> Node:
        parts = [self.term()]
        while self.accept("or"):
            parts.append(self.term())
        return parts[0] if len(parts) == 1 else BoolOp("or", tuple(parts))

    def term(self) -> Node:
        parts = [self.factor()]
        while self.accept("and"):
            parts.append(self.factor())
        return parts[0] if len(parts) == 1 else BoolOp("and", tuple(parts))

    def factor(self) -> Node:
        if self.accept("not"):
            self.deeper()
            node: Node = Not(self.factor())
            self.depth -= 1
            return node
        if self.accept("("):
            self.deeper()
            node = self.expr()
            self.expect(")")
            self.depth -= 1
            return node
        return self.comparison()

    def operand(self) -> Column | Literal:
        kind, value, pos = self.take()
        if kind == "number":
            return Literal(float(value))
        if kind == "string":
            return Literal(value[1:-1])
        if kind == "quoted":
            return Column(value[1:-1])
        if kind == "name":
            return Column(value)
        if kind == "keyword" and value in ("true", "false"):
            return Literal(value == "true")
        raise ValueError(f"expected a column or a value but found '{value}' at position {pos}")

    def literal(self) -> Any:
        node = self.operand()
        if isinstance(node, Column):
            raise ValueError(f"a membership list holds values, not the column '{node.name}'")
        return node.value

    def comparison(self) -> Node:
        left = self.operand()
        tok = self.peek()
        negate = False
        if tok is not None and tok[1] == "not" and tok[0] == "keyword":
            self.i += 1
            negate = True
            tok = self.peek()
            if tok is None or tok[1] != "in":
                raise ValueError("'not' after a column must be followed by 'in'")
        if tok is not None and tok[1] == "in" and tok[0] == "keyword":
            self.i += 1
            if not isinstance(left, Column):
                raise ValueError("'in' needs a column on its left")
            self.expect("[")
            values = [self.literal()]
            while self.accept(","):
                values.append(self.literal())
            self.expect("]")
            return Member(left, tuple(values), negate)
        if tok is None or tok[0] != "op":
            found = f"'{tok[1]}' at position {tok[2]}" if tok else "the end"
            raise ValueError(f"expected a comparison (==, !=, <, <=, >, >=, in) but found {found}")
        self.i += 1
        right = self.operand()
        return Compare(left, tok[1], right)


def parse_filter(text: str, where: str = "filter") -> Node:
    """Parse a filter expression; raise :class:`InputError` naming ``where`` on a syntax error.

    The message quotes at most about 80 characters of the filter, around the problem.
    """
    if not isinstance(text, str):
        raise InputError("a filter is text", where)
    parser: _Parser | None = None
    try:
        parser = _Parser(text or "")
        return parser.parse()
    except ValueError as exc:
        position = getattr(exc, "position", None)
        if position is None:
            tok = parser.peek() if parser is not None else None
            position = tok[2] if tok else len(text) + 1
        message = re.sub(r" at position \d+", "", str(exc))
        raise InputError(f"cannot read the filter: {quote(message, 120)}; near "
                         f"{excerpt(text, position)}", where) from None


def referenced_columns(node: Node) -> tuple[str, ...]:
    """Columns the filter reads, in order of first use."""
    seen: dict[str, None] = {}

    def walk(n: Node) -> None:
        if isinstance(n, Compare):
            for side in (n.left, n.right):
                if isinstance(side, Column):
                    seen.setdefault(side.name)
        elif isinstance(n, Member):
            seen.setdefault(n.column.name)
        elif isinstance(n, Not):
            walk(n.operand)
        elif isinstance(n, BoolOp):
            for part in n.operands:
                walk(part)

    walk(node)
    return tuple(seen)


_OPS = {
    "==": lambda a, b: a == b,
    "!=": lambda a, b: a != b,
    "<": lambda a, b: a < b,
    "<=": lambda a, b: a <= b,
    ">": lambda a, b: a > b,
    ">=": lambda a, b: a >= b,
}


def evaluate_filter(node: Node, table: pd.DataFrame, where: str = "filter") -> np.ndarray:
    """Evaluate a parsed filter on ``table``; return a boolean array, one entry per row.

    Rows with a missing value in a column the filter reads should be removed
    (and reported) by the caller before evaluation.
    """
    for name in referenced_columns(node):
        if name not in table.columns:
            hint = did_you_mean(name, [str(c) for c in table.columns])
            raise InputError(f"the filter reads column '{name}', which the data do not "
                             f"have{hint}", where)

    def side(x: Column | Literal) -> Any:
        return table[x.name] if isinstance(x, Column) else x.value

    def walk(n: Node) -> np.ndarray:
        if isinstance(n, Everything):
            return np.ones(len(table), dtype=bool)
        if isinstance(n, Compare):
            _check_types(n.left, n.right, table, where)
            _check_types(n.right, n.left, table, where)
            left, right = side(n.left), side(n.right)
            try:
                out = _OPS[n.op](left, right)
            except TypeError:
                raise InputError(
                    f"cannot compare {_describe(n.left, table)} with {_describe(n.right, table)} "
                    f"using '{n.op}'", where) from None
            return np.broadcast_to(np.asarray(out, dtype=bool), (len(table),)).copy()
        if isinstance(n, Member):
            for value in n.values:
                _check_types(n.column, Literal(value), table, where)
            col = table[n.column.name]
            mask = col.isin(list(n.values)).to_numpy(dtype=bool)
            return ~mask if n.negate else mask
        if isinstance(n, Not):
            return ~walk(n.operand)
        if isinstance(n, BoolOp):
            parts = [walk(p) for p in n.operands]
            combine = np.logical_and if n.op == "and" else np.logical_or
            out = parts[0]
            for p in parts[1:]:
                out = combine(out, p)
            return out
        raise TypeError(n)  # pragma: no cover - exhaustive

    return walk(node)


def _describe(x: Column | Literal, table: pd.DataFrame) -> str:
    if isinstance(x, Column):
        kind = "numbers" if pd.api.types.is_numeric_dtype(table[x.name]) else "text"
        return f"column '{x.name}' (holds {kind})"
    return f"value {x.value!r}"


def _check_types(a: Column | Literal, b: Column | Literal, table: pd.DataFrame,
                 where: str) -> None:
    """Refuse comparisons of a numeric column with text (or text with a number)."""
    if not isinstance(a, Column) or not isinstance(b, Literal):
        return
    numeric = pd.api.types.is_numeric_dtype(table[a.name]) or pd.api.types.is_bool_dtype(
        table[a.name])
    if numeric and isinstance(b.value, str):
        raise InputError(f"column '{a.name}' holds numbers but is compared with the text "
                         f"{b.value!r}; drop the quotes or pick a text column", where)
    if not numeric and not isinstance(b.value, str):
        raise InputError(f"column '{a.name}' holds text but is compared with the number "
                         f"{b.value!r}; quote the value", where)
