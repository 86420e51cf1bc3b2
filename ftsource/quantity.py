"""Parse quantities with units from the command line and from record metadata.

A quantity is written as a number followed by a unit, with or without a space between them:
``632.991nm``, ``632.991 nm``, ``48kHz``, ``20 °C``, ``1013 mbar``, ``45%``, ``0.5 mm/s``,
``2 ppm``. Units are understood by :mod:`astropy.units` after a small alias table:

==========================================  ===============================
written                                     understood as
==========================================  ===============================
``degC``, ``°C``, ``ºC``, ``℃``, ``C``,     degree Celsius (``deg_C``)
``celsius``, ``Celsius``, ``deg C``
``mbar``                                    hectopascal (``hPa``, same size)
``%``, ``%RH``, ``% RH``, ``percent``       percent
``ppm``                                     parts per million (1e-6)
``ppb``                                     parts per billion (1e-9)
==========================================  ===============================

A bare ``C`` means degree Celsius, not coulomb: no input of this tool is an electric charge.

A bare number (no unit) is accepted only where the expected quantity is dimensionless (a
ratio), and there it is a plain fraction: ``1.5e-6`` is 1.5 ppm and ``0.45`` is 45 %. Anywhere
else the unit is ambiguous and a bare number is refused.

Relative humidity is the exception (:func:`parse_humidity`): practitioners write ``45`` for
45 %, so a bare humidity **above 1** is read as percent; a bare value **from 0 to 1** could be
either (``0.5`` % or a fraction 0.5) and is refused, with the advice to write ``45%`` or
``0.45 fraction``. A value with a unit (``45%``, ``45 %RH``, ``0.45 fraction``) is taken as
written.
"""

from __future__ import annotations

import math
import re
import unicodedata
import warnings
from numbers import Real

import astropy.units as u
from astropy.units.function.mixin import FunctionMixin

from ftsource._checks import quote
from ftsource.errors import OptionError

__all__ = ["PHYSICAL_TYPES", "parse_quantity", "parse_humidity", "to_float", "ppm", "ppb"]

#: Parts per million and per billion, as dimensionless astropy units.
ppm = u.def_unit("ppm", 1e-6 * u.dimensionless_unscaled)
ppb = u.def_unit("ppb", 1e-9 * u.dimensionless_unscaled)

#: The physical types ``parse_quantity`` can check, each with a unit it must convert to and an
#: example shown in error messages.
PHYSICAL_TYPES: dict[str, tuple[u.UnitBase, str]] = {
    "length": (u.m, "632.991 nm"),
    "frequency": (u.Hz, "48 kHz"),
    "temperature": (u.K, "20 °C"),
    "pressure": (u.Pa, "1013.25 hPa"),
    "dimensionless": (u.dimensionless_unscaled, "2 ppm"),
    "speed": (u.m / u.s, "0.5 mm/s"),
    "time": (u.s, "10 ms"),
    "angle": (u.rad, "0.1 mrad"),
}

_CELSIUS = ("degC", "°C", "ºC", "℃", "C", "celsius", "Celsius", "deg C", "deg_C", "° C")
_ALIASES: dict[str, u.UnitBase] = {name: u.deg_C for name in _CELSIUS}
_ALIASES.update(
    {
        "mbar": u.hPa,
        "%": u.percent,
        "%RH": u.percent,
        "% RH": u.percent,
        "%rh": u.percent,
        "percent": u.percent,
        "ppm": ppm,
        "ppb": ppb,
        "fraction": u.dimensionless_unscaled,
    }
)

_NUMBER = re.compile(
    r"""^\s*
    (?P<number>[+-]?(?:
        (?:\d+\.?\d*|\.\d+)(?:[eE][+-]?\d+)?
        |nan|inf|infinity
    ))
    (?P<unit>.*?)\s*$""",
    re.IGNORECASE | re.VERBOSE,
)


def _normalise(text: str) -> str:
    """Unify Unicode spaces and minus signs so that pasted text parses."""
    text = unicodedata.normalize("NFC", text)
    text = text.replace("\u2212", "-")  # MINUS SIGN
    return "".join(" " if ch.isspace() else ch for ch in text)


def _unit_from_text(unit_text: str, *, name: str, shown: str) -> u.UnitBase:
    unit_text = unit_text.strip()
    if unit_text in _ALIASES:
        return _ALIASES[unit_text]
    if unit_text[:1].isdigit() or unit_text[:1] in "+-.":
        raise OptionError(
            f"{name}: {shown} is not one number followed by a unit (e.g. '632.991 nm')"
        )
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            unit = u.Unit(unit_text, parse_strict="raise")
    except Exception:  # astropy raises ValueError, TypeError or its own parse errors
        raise OptionError(
            f"{name}: the unit {quote(unit_text)} in {shown} is not understood "
            "(units are case-sensitive, e.g. 'nm', 'kHz', 'hPa', '°C', '%', 'ppm', 'mm/s')"
        ) from None
    if not isinstance(unit, u.UnitBase) or isinstance(unit, FunctionMixin):
        raise OptionError(f"{name}: the unit {quote(unit_text)} in {shown} is not a plain unit")
    return unit


def _describe(unit: u.UnitBase) -> str:
    """'a length', 'an angle', 'a quantity in kg m' for messages."""
    kind = str(unit.physical_type)
    kind = kind if kind != "unknown" else f"quantity in {unit}"
    return _a(kind)


def _a(word: str) -> str:
    return ("an " if word[:1] in "aeiou" else "a ") + word


def _check_type(q: u.Quantity, physical_type: str | None, *, name: str, shown: str) -> None:
    if physical_type is None:
        return
    ref, example = PHYSICAL_TYPES[physical_type]
    eq = u.temperature() if physical_type == "temperature" else []
    if not q.unit.is_equivalent(ref, equivalencies=eq):
        raise OptionError(
            f"{name}: {shown} is {_describe(q.unit)}; expected {_a(physical_type)} "
            f"such as '{example}'"
        )


def parse_quantity(
    text: str | u.Quantity | Real, *, physical_type: str | None = None, name: str = "value"
) -> u.Quantity:
    """Parse a number with a unit into an astropy Quantity and check what it measures.

    Parameters
    ----------
    text : str, Quantity or real number
        The quantity as written, e.g. ``"632.991 nm"``, ``"20 °C"``, ``"1013 mbar"``, ``"45%"``.
        A Quantity is checked and returned; a plain number is treated like bare text.
    physical_type : str, optional
        What the value must measure: one of ``'length'``, ``'frequency'``, ``'temperature'``,
        ``'pressure'``, ``'dimensionless'``, ``'speed'``, ``'time'``, ``'angle'``. ``None``
        accepts any unit (but still refuses a bare number).
    name : str
        How the value is named in error messages (e.g. ``'--air-pressure'``).

    Returns
    -------
    astropy.units.Quantity
        A finite scalar in the unit as written (after the alias table: ``mbar`` becomes
        ``hPa``, ``°C`` becomes ``deg_C``, ``%`` becomes ``percent``).

    Raises
    ------
    OptionError
        If the text is not one finite number followed by a known unit, if the unit does not
        measure ``physical_type``, or if a bare number is given where a unit is needed.

    References
    ----------
    .. [1] Astropy Collaboration, "The Astropy Project: sustaining and growing a
       community-oriented open-source project and the latest major release (v5.0) of the core
       package", ApJ 935, 167 (2022) -- the unit system used here.
    .. [2] BIPM, "The International System of Units (SI)", 9th ed. (2019), section 5.4.3: a
       space separates number and unit; the forms without a space are accepted for convenience.
    """
    if physical_type is not None and physical_type not in PHYSICAL_TYPES:
        raise ValueError(
            f"physical_type {physical_type!r} is not one of {', '.join(PHYSICAL_TYPES)}"
        )
    shown = quote(text)
    if isinstance(text, u.Quantity):
        if not text.isscalar:
            raise OptionError(f"{name}: {shown} is not a single value")
        q = text
    elif isinstance(text, Real) and not isinstance(text, bool):
        q = _bare(float(text), physical_type, name=name, shown=shown)
    elif isinstance(text, str):
        q = _from_text(text, physical_type, name=name, shown=shown)
    else:
        raise OptionError(f"{name}: {shown} is not a quantity such as '632.991 nm'")
    if not math.isfinite(float(q.value)):
        raise OptionError(f"{name}: {shown} is not a finite number")
    _check_type(q, physical_type, name=name, shown=shown)
    return q


def _bare(value: float, physical_type: str | None, *, name: str, shown: str) -> u.Quantity:
    if physical_type == "dimensionless":
        return u.Quantity(value, u.dimensionless_unscaled)
    if physical_type is None:
        raise OptionError(f"{name}: {shown} has no unit; write the number with its unit")
    example = PHYSICAL_TYPES[physical_type][1]
    raise OptionError(
        f"{name}: {shown} has no unit; {_a(physical_type)} needs one, e.g. '{example}'"
    )


def _from_text(text: str, physical_type: str | None, *, name: str, shown: str) -> u.Quantity:
    clean = _normalise(text)
    if len(clean) > 200:
        raise OptionError(f"{name}: {shown} is too long to be a quantity")
    m = _NUMBER.match(clean)
    if m is None:
        example = PHYSICAL_TYPES[physical_type][1] if physical_type else "632.991 nm"
        raise OptionError(f"{name}: {shown} is not a number followed by a unit (e.g. '{example}')")
    value = float(m.group("number"))
    if not math.isfinite(value):
        raise OptionError(f"{name}: {shown} is not a finite number")
    unit_text = m.group("unit").strip()
    if not unit_text:
        return _bare(value, physical_type, name=name, shown=shown)
    unit = _unit_from_text(unit_text, name=name, shown=shown)
    return u.Quantity(value, unit)


def parse_humidity(text: str | u.Quantity | Real, *, name: str = "humidity") -> u.Quantity:
    """Parse a relative humidity; return it in percent.

    A value with a unit is taken as written (``45%``, ``45 %RH``, ``0.45 fraction``,
    ``4500 ppm`` of saturation...). A bare number above 1 is percent (``45`` means 45 %); a
    bare number from 0 to 1 is refused as ambiguous (0.45 % or the fraction 0.45?), and so is
    a bare negative number.

    Parameters
    ----------
    text : str, Quantity or real number
    name : str
        How the value is named in error messages (e.g. ``'--air-humidity'``).

    Returns
    -------
    astropy.units.Quantity
        In ``percent``. Its range (0-100 %) is checked where it is used.

    Raises
    ------
    OptionError
        For an unparseable value, a unit that is not a ratio, or an ambiguous bare number.

    References
    ----------
    .. [1] Common practice: relative humidity is quoted in percent (WMO-No. 8, Guide to
       Instruments and Methods of Observation, ch. 4, from memory).
    """
    shown = quote(text)
    bare = (isinstance(text, Real) and not isinstance(text, bool)) or (
        isinstance(text, str) and not _has_unit(text)
    )
    q = parse_quantity(text, physical_type="dimensionless", name=name)
    if not bare:
        return q.to(u.percent)
    value = float(q.value)
    if value > 1.0:
        return u.Quantity(value, u.percent)
    raise OptionError(
        f"{name}: {shown} has no unit and is ambiguous for a relative humidity (a bare number "
        "above 1 is read as percent); write '45%' for 45 percent, or '0.45 fraction' for a "
        "fraction"
    )


def to_float(
    value: str | u.Quantity | Real,
    unit: str | u.UnitBase,
    *,
    name: str = "value",
    equivalencies: list | None = None,
) -> float:
    """Convert a quantity (text or Quantity) to a plain float in ``unit``.

    Parameters
    ----------
    value : str, Quantity or real number
        Text is parsed with :func:`parse_quantity`. A plain Python number is taken to be in
        ``unit`` already (the caller names the unit, so nothing is ambiguous).
    unit : str or astropy unit
        The unit of the result, e.g. ``"nm"``, ``u.Hz``, ``"K"``.
    name : str
        How the value is named in error messages.
    equivalencies : list, optional
        Extra astropy equivalencies. Temperatures always convert with
        :func:`astropy.units.temperature` (so ``20 °C`` gives 293.15 in K).

    Returns
    -------
    float

    Raises
    ------
    OptionError
        If the value cannot be parsed, is not finite, or does not convert to ``unit``.

    References
    ----------
    .. [1] Astropy Collaboration, ApJ 935, 167 (2022): units and equivalencies.
    """
    target = _ALIASES.get(unit) if isinstance(unit, str) else None
    target = target if target is not None else u.Unit(unit)
    eq = list(equivalencies or [])
    if target.physical_type == "temperature":
        eq += u.temperature()
    if isinstance(value, Real) and not isinstance(value, bool):
        result = float(value)
        if not math.isfinite(result):
            raise OptionError(f"{name}: {quote(value)} is not a finite number")
        return result
    if isinstance(value, str) and not _has_unit(value) and target.is_equivalent(u.one):
        q = parse_quantity(value, physical_type="dimensionless", name=name)
    else:
        q = parse_quantity(value, name=name)
    try:
        result = float(q.to_value(target, equivalencies=eq))
    except u.UnitConversionError:
        raise OptionError(
            f"{name}: {quote(value)} is {_describe(q.unit)}; expected "
            f"{_describe(target)} (convertible to {target})"
        ) from None
    if not math.isfinite(result):
        raise OptionError(f"{name}: {quote(value)} is out of range in {target}")
    return result


def _has_unit(text: str) -> bool:
    m = _NUMBER.match(_normalise(text))
    return m is None or bool(m.group("unit").strip())
