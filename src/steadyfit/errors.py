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


class EstimationError(InputError):
    """The data cannot support the requested estimate (too few economies, collinearity)."""


def did_you_mean(word: str, choices: Iterable[str]) -> str:
    """Return a ``"; did you mean 'x'?"`` hint, or an empty string when nothing is close."""
    close = difflib.get_close_matches(str(word), [str(c) for c in choices], n=1, cutoff=0.6)
    return f"; did you mean '{close[0]}'?" if close else ""


def one_of(value: object, choices: Iterable[str]) -> str:
    """Message for a value outside a fixed set of options, listing the valid ones."""
    options = sorted(str(c) for c in choices)
    return f"'{value}' is not one of {', '.join(options)}{did_you_mean(str(value), options)}"
