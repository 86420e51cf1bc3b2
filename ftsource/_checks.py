"""The one set of input checks and the one way to quote a value in a message.

Every stage checks what it is given the same way: numbers and arrays of numbers are turned
into floats here, and a refusal names the parameter, the bad value and what is allowed
(an :class:`~ftsource.errors.OptionError`, or :class:`~ftsource.errors.AnalysisError` for data
arrays). A value a user wrote is shown through :func:`quote`, a message for a terminal through
:func:`one_line`, so that no control character or terminal escape in a file name or a cell
reaches the screen.
"""

from __future__ import annotations

import math

from ftsource.errors import AnalysisError, OptionError

# numpy is imported inside the array checks: the command line quotes values with this module
# and imports only the standard library at start-up

__all__ = [
    "QUOTE_LIMIT",
    "quote",
    "one_line",
    "printable",
    "finite_float",
    "float_array",
    "positive_array",
    "finite_pair",
]

#: Longest quoted value in a message (characters, with the "..." of a cut).
QUOTE_LIMIT = 60


def printable(text) -> str:
    """``text`` with every control or formatting character (terminal escapes, bidirectional
    overrides, line separators) replaced by '?'."""
    return "".join(ch if ch.isprintable() else "?" for ch in str(text))


def quote(value, limit: int = QUOTE_LIMIT) -> str:
    """A user's value quoted for a one-line message: printable, cut to ``limit`` characters
    (ending in "...") and in quotes, e.g. ``'48 khz'``."""
    s = printable(value)
    return repr(s if len(s) <= limit else s[: limit - 3] + "...")


def one_line(text, limit: int | None = None) -> str:
    """A message as one printable line: whitespace runs become one space, control and
    formatting characters '?', and a ``limit`` (characters) cuts it with "..."."""
    s = printable(" ".join(str(text).split()))
    if limit is not None and len(s) > limit:
        s = s[: limit - 3] + "..."
    return s


def finite_float(name: str, value, *, minimum: float | None = None,
                 strict: bool = False) -> float:
    """``value`` as a finite float, at least ``minimum`` (above it when ``strict``).

    Raises
    ------
    OptionError
        Naming ``name``, the value and what is allowed.
    """
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise OptionError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise OptionError(f"{name} = {v!r} is not allowed; it must be finite")
    if minimum is not None and (v < minimum or (strict and v == minimum)):
        rel = ">" if strict else "≥"
        raise OptionError(f"{name} = {v:g} is not allowed; it must be {rel} {minimum:g}")
    return v


def float_array(name: str, value):
    """``value`` (a number or an array of them) as a float array, not yet range-checked.

    Raises
    ------
    OptionError
        If it is not numeric.
    """
    import numpy as np

    try:
        return np.asarray(value, dtype=float)
    except (TypeError, ValueError):
        raise OptionError(f"{name} must be a number or an array of them, got {value!r}") from None


def positive_array(name: str, value, *, allow_zero: bool = False):
    """``value`` as a float array whose every element is finite and > 0 (≥ 0 with
    ``allow_zero``).

    Raises
    ------
    OptionError
        Naming the first bad element and what is allowed.
    """
    import numpy as np

    a = float_array(name, value)
    ok = ((a >= 0) if allow_zero else (a > 0)) & np.isfinite(a)
    if not np.all(ok):
        v = a[~ok].flat[0] if a.ndim else float(a)
        need = "finite and ≥ 0" if allow_zero else "finite and > 0"
        raise OptionError(f"{name} = {v:g} is not allowed; it must be {need}")
    return a


def finite_pair(a, b, name_a: str, name_b: str, *, finite: bool = True,
                error: type[Exception] = AnalysisError):
    """``a`` and ``b`` as float arrays, checked to be 1-D, of one length and (unless
    ``finite=False``) finite.

    Raises
    ------
    AnalysisError, or ``error``
        Naming both arrays, their shapes, or that a value is not finite (data arrays raise
        :class:`~ftsource.errors.AnalysisError`, a caller's inputs ``OptionError``).
    """
    import numpy as np

    try:
        x = np.asarray(a, dtype=float)
        y = np.asarray(b, dtype=float)
    except (TypeError, ValueError):
        raise error(f"{name_a} and {name_b} must be numeric arrays") from None
    if x.ndim != 1 or y.shape != x.shape:
        raise error(
            f"{name_a} and {name_b} must be 1-D arrays of one length, got shapes {x.shape} "
            f"and {y.shape}"
        )
    if finite and not (np.all(np.isfinite(x)) and np.all(np.isfinite(y))):
        raise error(f"{name_a} and {name_b} must be finite")
    return x, y
