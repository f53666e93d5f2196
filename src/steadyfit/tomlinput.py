"""Reading a TOML input and validating it against a pydantic model, with one clear message
that names the key path (positions counted from 1) and, for a file, its line.

Every TOML input of steadyfit goes through here: the run spec and the calibrators' small
inputs alike.
"""

from __future__ import annotations

import re
import tomllib
from collections.abc import Mapping
from pathlib import Path
from typing import Any, TypeVar, get_args

from pydantic import BaseModel, ValidationError

from .errors import InputError, did_you_mean, one_of, quote

M = TypeVar("M", bound=BaseModel)


def read_toml(path: str | Path, what: str = "spec file") -> tuple[dict[str, Any], str]:
    """The parsed table and the text of a TOML file; InputError for anything unreadable."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except FileNotFoundError:
        raise InputError(f"{what} '{path}' does not exist") from None
    except (OSError, UnicodeDecodeError) as exc:
        raise InputError(f"cannot read {what} '{path}': {exc}") from None
    try:
        raw = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise InputError(f"malformed TOML: {quote(exc, 160)}", path.name) from None
    except RecursionError:
        raise InputError(f"values are nested too deeply (at most {MAX_DEPTH} levels)",
                         path.name) from None
    return raw, text


def validate(model: type[M], raw: Mapping[str, Any], path: Path | None, text: str,
             name: str = "spec") -> M:
    """``raw`` validated as ``model``; the first problem as an InputError naming its key
    (and its line in ``text`` when the input came from the file ``path``)."""
    deep = too_deep(raw)
    if deep is not None:
        where = f"{path.name}" if path is not None else name
        raise InputError(f"values are nested more than {MAX_DEPTH} levels deep", f"{where}: {deep}")
    try:
        return model.model_validate(raw)
    except ValidationError as exc:
        # an unknown (often misspelled) key explains a "required" error beside it: say it first
        errors = sorted(exc.errors(), key=lambda e: e["type"] != "extra_forbidden")
        err = errors[0]
        loc = tuple(err["loc"])
        message, loc = _message(model, err, loc)
        where = _loc_text(loc)
        line = _locate(text, loc) if path is not None else None
        prefix = f"{path.name}" if path is not None else name
        if line:
            prefix += f" line {line}"
        raise InputError(message, f"{prefix}: {where}" if where else prefix) from None


# Specs are small and flat; anything nested deeper than this is refused before validation
# (the validator and the error messages walk values recursively).
MAX_DEPTH = 100


def too_deep(raw: Any) -> str | None:
    """The key path of the first value nested deeper than MAX_DEPTH, or None (no recursion)."""
    stack: list[tuple[Any, int, str]] = [(raw, 0, "")]
    while stack:
        value, depth, where = stack.pop()
        if depth > MAX_DEPTH:
            return quote(where.split(".")[0].split("[")[0] or "spec")
        if isinstance(value, Mapping):
            stack += [(v, depth + 1, f"{where}.{k}" if where else str(k))
                      for k, v in value.items()]
        elif isinstance(value, list | tuple):
            stack += [(v, depth + 1, f"{where}[{i + 1}]") for i, v in enumerate(value)]
    return None


def _message(model: type[BaseModel], err: Mapping[str, Any], loc: tuple[Any, ...]
             ) -> tuple[str, tuple[Any, ...]]:
    kind = err["type"]
    if kind == "extra_forbidden":
        key = loc[-1]
        allowed = _fields_at(model, loc[:-1])
        return (f"unknown key '{quote(key)}'{did_you_mean(str(key), allowed)}",
                (*loc[:-1], quote(key, 40)))
    if kind == "missing":
        return "this key is required", loc
    if kind == "literal_error":
        expected = re.findall(r"'([^']*)'", str(err.get("ctx", {}).get("expected", "")))
        return one_of(err.get("input"), expected), loc
    if kind == "finite_number":
        return f"{quote(err.get('input'))} is not a finite number", loc
    msg = str(err["msg"])
    if "input" in err and kind not in ("value_error",):
        value = err.get("input")
        if isinstance(value, str | int | float | bool):
            msg += f" (got {quote(repr(value))})"
    msg = re.sub(r"^(Value|Assertion) error, ", "", msg)
    # validators that know a deeper key say so as "key.path: message"
    m = re.match(r"^([A-Za-z_][\w.\[\]]*): (.*)$", msg)
    if m and kind == "value_error":
        inner = tuple(_split_loc(m.group(1)))
        return m.group(2), tuple(loc) + inner if not inner or inner[0] != "equation" else inner
    return msg, loc


def _split_loc(text: str) -> list[Any]:
    out: list[Any] = []
    for part in text.split("."):
        m = re.match(r"^(\w+)\[(\d+)\]$", part)
        if m:
            out += [m.group(1), int(m.group(2)) - 1]
        else:
            out.append(part)
    return out


def _fields_at(model: type[BaseModel], loc: tuple[Any, ...]) -> list[str]:
    current: Any = model
    for part in loc:
        if isinstance(part, int):
            continue
        field = getattr(current, "model_fields", {}).get(part)
        if field is None:
            return []
        ann = field.annotation
        candidates = [ann, *get_args(ann)]
        for arg in list(candidates):
            candidates += list(get_args(arg))
        current = next((c for c in candidates if isinstance(c, type) and issubclass(c, BaseModel)),
                       None)
        if current is None:
            return []
    return list(getattr(current, "model_fields", {}))


def _loc_text(loc: tuple[Any, ...]) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part + 1}]"
        else:
            out += ("." if out else "") + str(part)
    return out


def _locate(text: str, loc: tuple[Any, ...]) -> int | None:
    """Best-effort line number (from 1) of a key path in TOML text."""
    lines = text.splitlines()
    names = [p for p in loc if not isinstance(p, int)]
    index = next((p for p in loc if isinstance(p, int)), None)
    # longest table header that is a prefix of the path
    for depth in range(len(names), 0, -1):
        header = ".".join(names[:depth])
        pattern = re.compile(rf"^\s*\[\[?\s*{re.escape(header)}\s*\]\]?\s*(#.*)?$")
        hits = [i for i, ln in enumerate(lines) if pattern.match(ln)]
        if not hits:
            continue
        array = lines[hits[0]].lstrip().startswith("[[")
        start = hits[index] if array and index is not None and index < len(hits) else hits[0]
        rest = names[depth:]
        if not rest:
            return start + 1
        key = re.compile(rf"^\s*{re.escape(str(rest[0]))}\s*=")
        for j in range(start + 1, len(lines)):
            if lines[j].lstrip().startswith("["):
                break
            if key.match(lines[j]):
                return j + 1
        return start + 1
    if names:
        key = re.compile(rf"^\s*{re.escape(str(names[0]))}\s*=")
        for j, ln in enumerate(lines):
            if ln.lstrip().startswith("["):
                break
            if key.match(ln):
                return j + 1
    return None
