"""Numbers as text, with as many digits as their uncertainty supports.

One rule for every printed measurement (JCGM 100:2008, §7.2.6): the uncertainty is given to
two significant digits and the value is rounded to the same decimal place, so
``10.057 62 Ω`` with ``u = 27 mΩ`` is written ``10.058 Ω``. A value without an uncertainty
(a bound, an instrument figure) is given to a stated number of significant digits.
Rounding is to the nearest digit; §7.2.6 also allows rounding an uncertainty up, which is not
done here. Only the standard library is used, so the command line can format without numpy.

Examples
--------
>>> round_to_uncertainty(10.05762, 0.027)
('10.058', '0.027')
>>> format_with_uncertainty(532.17999, 0.0016, "nm")
'532.1800 nm ± 0.0016 nm'
>>> format_significant(0.44009, 2, "nm")
'0.44 nm'

References
----------
.. [1] JCGM 100:2008, *Evaluation of measurement data — Guide to the expression of
   uncertainty in measurement*, BIPM, §7.2.2 and §7.2.6.
"""

from __future__ import annotations

import math

__all__ = ["round_to_uncertainty", "format_with_uncertainty", "format_significant"]

#: Significant digits of an uncertainty (JCGM 100:2008 §7.2.6: "at most two").
U_DIGITS = 2


def _decimals(x: float, digits: int) -> int:
    """Decimal places that show ``|x| > 0`` to ``digits`` significant digits after rounding
    (0.0996 to two digits is 0.10, not 0.100)."""
    d = digits - 1 - math.floor(math.log10(abs(x)))
    if abs(round(x, d)) >= 10.0 ** (digits - d):
        d -= 1
    return d


def _fixed(x: float, d: int, *, sign: bool = False) -> str:
    """``x`` rounded to ``d`` decimal places (``d`` < 0 rounds to tens, hundreds, ...); a
    value that rounds to zero is written without a minus sign."""
    text = f"{round(x, d) if d < 0 else x:.{max(d, 0)}f}"
    if float(text) == 0.0:
        text = text.lstrip("-")
    return "+" + text if sign and not text.startswith("-") else text


def format_significant(value, digits: int = 4, unit: str = "", *, sign: bool = False) -> str:
    """``value`` to ``digits`` significant digits in fixed-point notation, with ``unit``.

    Parameters
    ----------
    value : float or None
        ``None`` or a non-finite value gives ``"—"`` (not measured).
    digits : int
        Significant digits, at least 1.
    unit : str
        Appended after a space when given.
    sign : bool
        Show a ``+`` before a positive value.

    Returns
    -------
    str
    """
    if value is None or not math.isfinite(float(value)):
        return "—"
    v = float(value)
    text = _fixed(v, _decimals(v, digits) if v != 0.0 else 0, sign=sign)
    return f"{text} {unit}" if unit else text


def round_to_uncertainty(value, u, *, digits: int = U_DIGITS,
                         sign: bool = False) -> tuple[str, str]:
    """A value and its uncertainty as text: ``u`` to ``digits`` significant digits and the
    value to the same decimal place (JCGM 100:2008 §7.2.6).

    Parameters
    ----------
    value : float
        The estimate.
    u : float or None
        Its (standard or expanded) uncertainty, in the unit of ``value``. ``None``, zero or a
        non-finite ``u`` leaves the value at 6 significant digits and ``u`` as ``"—"``.
    digits : int
        Significant digits of the uncertainty (default 2).
    sign : bool
        Show a ``+`` before a positive value.

    Returns
    -------
    (str, str)
        The value and the uncertainty.

    Examples
    --------
    JCGM 100:2008 §7.2.2 and §7.2.6 give these two:

    >>> round_to_uncertainty(100.02147, 0.00035)
    ('100.02147', '0.00035')
    >>> round_to_uncertainty(10.05762, 0.027)
    ('10.058', '0.027')
    """
    if value is None or not math.isfinite(float(value)):
        return "—", "—" if u is None else format_significant(u, digits)
    if u is None or not math.isfinite(float(u)) or float(u) <= 0.0:
        return format_significant(value, 6, sign=sign), "—"
    d = _decimals(float(u), digits)
    return _fixed(float(value), d, sign=sign), _fixed(float(u), d)


def format_with_uncertainty(value, u, unit: str = "", *, digits: int = U_DIGITS,
                            sign: bool = False) -> str:
    """``"value unit ± u unit"`` rounded as :func:`round_to_uncertainty` does.

    >>> format_with_uncertainty(-4.4978, 0.93911, "ppm", sign=True)
    '-4.50 ppm ± 0.94 ppm'
    """
    v, uu = round_to_uncertainty(value, u, digits=digits, sign=sign)
    tail = f" {unit}" if unit else ""
    if uu == "—":
        return f"{v}{tail}"
    return f"{v}{tail} ± {uu}{tail}"
