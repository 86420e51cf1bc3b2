"""Exceptions and warnings raised by ftsource.

Every error a user can cause derives from :class:`FtsourceError`, so the command line can turn
it into one ``error: ...`` line. Subclasses also derive from the matching built-in
(``ValueError`` or ``OSError``) so callers of the Python API can catch what they expect.
Messages name the parameter, the bad value and what is allowed.
"""

from __future__ import annotations

__all__ = [
    "FtsourceError",
    "RecordError",
    "OptionError",
    "AnalysisError",
    "OutputError",
    "FtsourceWarning",
    "AnalysisWarning",
]


class FtsourceError(Exception):
    """Base class of every error ftsource raises on purpose."""


class RecordError(FtsourceError, ValueError):
    """A record file cannot be read or does not hold what the analysis needs."""


class OptionError(FtsourceError, ValueError):
    """An option or a quantity given by the user is not valid."""


class AnalysisError(FtsourceError, ValueError):
    """The data cannot support the requested analysis (no fringes, scan too short, ...)."""


class OutputError(FtsourceError, OSError):
    """An output cannot be written (exists already, not a directory, ...)."""


class FtsourceWarning(UserWarning):
    """A result is usable but limited; the same text is copied into the result's warnings."""


class AnalysisWarning(FtsourceWarning):
    """A note of :func:`ftsource.analyze` on what the data could not support and what to
    change; every one is also in ``Result.warnings``, in the order the stages found them."""
