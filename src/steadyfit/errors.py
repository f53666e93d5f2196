"""Exception types raised for problems the user can fix.

Every user mistake becomes one :class:`InputError` whose message names what is
wrong and where (spec key path, column, economy).  The command line turns it
into a single line on standard error and exit status 2.
"""

from __future__ import annotations

import difflib
from collections.abc import Iterable


class SteadyfitError(Exception):
    """Base class of the package's own exceptions."""


class InputError(SteadyfitError):
    """A problem in the spec or the data that the user can fix.

    Parameters
    ----------
    message
        One sentence saying what is wrong and how to fix it.
    where
        Where it is: a spec key path (``equation[2].form``), a column or an
        economy.  Prefixed to the message when given.
    """

    def __init__(self, message: str, where: str | None = None) -> None:
        self.where = where
        self.detail = message
        super().__init__(f"{where}: {message}" if where else message)


class Terminated(BaseException):
    """Raised when the process receives SIGTERM, so clean-up runs before it ends."""


class EstimationError(InputError):
    """The data cannot support the requested estimate (too few economies, collinearity)."""


# Messages quote at most this many characters of what the user wrote.
QUOTE_LIMIT = 80


def quote(text: object, limit: int = QUOTE_LIMIT) -> str:
    """``text`` shortened for a message: at most ``limit`` characters, control characters
    shown as escapes, the cut marked with '...'."""
    s = str(text)
    s = "".join(c if c.isprintable() else repr(c)[1:-1] for c in s[: limit * 4])
    return s if len(s) <= limit else s[: limit - 3] + "..."


def excerpt(text: str, position: int, limit: int = QUOTE_LIMIT) -> str:
    """A window of ``text`` around ``position`` (from 1) with a caret line under it, for
    syntax errors in long input."""
    i = max(0, min(position - 1, len(text)))
    start = max(0, i - limit // 2)
    window = text[start:start + limit]
    lead = "..." if start > 0 else ""
    tail = "..." if start + limit < len(text) else ""
    shown = "".join(c if c.isprintable() else " " for c in window)
    return f"{lead}{shown}{tail} (position {position}, at '{quote(text[i:i + 10], 10)}')"


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """Return a ``"; did you mean 'x'?"`` hint, or an empty string when nothing is close.

    A choice equal to the word up to case is always the hint.
    """
    word = str(word)[:200]
    options = [str(c) for c in choices]
    same = [c for c in options if c.casefold() == word.casefold()]
    close = same or difflib.get_close_matches(word, options, n=1, cutoff=0.6)
    return f"; did you mean '{close[0]}'?" if close else ""


def one_of(value: object, choices: Iterable[str]) -> str:
    """Message for a value outside a fixed set of options, listing the valid ones."""
    options = sorted(str(c) for c in choices)
    return (f"'{quote(value)}' is not one of {', '.join(options)}"
            f"{did_you_mean(str(value), options)}")
