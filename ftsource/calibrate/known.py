"""The known line a rig is calibrated against, checked: the policy, for every caller.

A calibration is only as good as the wavelength it is told is true. :func:`known_line` takes
either a wavelength with its standard uncertainty, or a bundled list entry named ``LIST:QTY``
(e.g. ``laser_standards:632.99121258nm``, see ``ftsource lines``), and refuses what would make
a calibration silently wrong: a nominal laser label (``532 nm laser``: a name, never a
measured wavelength), an uncertainty taken as 0 without being asked for, or one smaller than
the standard's own. The command line only translates its options into these parameters.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from types import MappingProxyType

from ftsource._checks import quote
from ftsource.errors import OptionError

__all__ = ["KnownLine", "PARAMETER_NAMES", "known_line", "parse_list_entry"]

#: How :func:`known_line` names its inputs in messages (the command line passes its option
#: names instead).
PARAMETER_NAMES = MappingProxyType({
    "wavelength": "known_wavelength_nm",
    "line": "line",
    "uncertainty": "u_known_nm",
})


@dataclass(frozen=True)
class KnownLine:
    """A checked known line: vacuum wavelength (nm), its standard uncertainty (nm) and a
    description of where both come from (for the user's record of the calibration)."""

    wavelength_nm: float
    u_nm: float
    description: str


def parse_list_entry(text: str, *, name: str = "line") -> tuple[str, float]:
    """``LIST:QTY`` (e.g. ``lamp_ne:640.2248nm``) as ``(list name, wavelength in nm)``.

    Raises
    ------
    OptionError
        If ``text`` is not ``LIST:QTY`` or the wavelength is not a length above zero.
    """
    from ftsource.linelists import line_list_names
    from ftsource.quantity import to_float

    list_name, sep, wl_text = str(text).partition(":")
    if not (sep and list_name.strip() and wl_text.strip()):
        raise OptionError(
            f"{name} {quote(text)} is not LIST:QTY; write e.g. "
            f"laser_standards:632.99121258nm (lists: {', '.join(line_list_names())})"
        )
    wl = to_float(wl_text.strip(), "nm", name=name)
    if not wl > 0:
        raise OptionError(f"{name}: {quote(wl_text.strip())} is not allowed; it must be above "
                          "zero (e.g. '632.991nm')")
    return list_name.strip(), wl


def known_line(*, wavelength_nm: float | None = None, line: str | None = None,
               u_nm: float | None = None, names=PARAMETER_NAMES) -> KnownLine:
    """The known line of a calibration, from a wavelength or a bundled entry, checked.

    Parameters
    ----------
    wavelength_nm : float, optional
        Vacuum wavelength of the known line. It needs ``u_nm`` unless it is a bundled
        standard's value.
    line : str, optional
        A bundled entry as ``LIST:QTY``, by its vacuum or standard-air wavelength (exactly one
        of ``wavelength_nm`` and ``line``).
    u_nm : float, optional
        Standard uncertainty of the known wavelength; required unless the entry states one
        (laser standards do, lamp lines do not), and never below what the entry states.
    names : mapping, optional
        How messages name ``wavelength``, ``line`` and ``uncertainty``.

    Returns
    -------
    KnownLine

    Raises
    ------
    OptionError
        For a nominal laser label, a missing or negative uncertainty, one below the
        standard's, an unknown or ambiguous entry.
    """
    from ftsource.linelists import entries_with_value, pick_entry

    if (wavelength_nm is None) == (line is None):
        raise OptionError(f"give exactly one of {names['wavelength']} and {names['line']}")
    if u_nm is not None and not u_nm >= 0:
        raise OptionError(
            f"{names['uncertainty']} = {u_nm!r} nm is not allowed; give a standard uncertainty "
            "≥ 0 as a length, e.g. '0.0001nm'"
        )
    if line is not None:
        opt = names["line"]
        list_name, wl = parse_list_entry(line, name=opt)
        try:
            entry = pick_entry(list_name, wl)
        except OptionError as exc:
            raise OptionError(f"{opt} {quote(line)}: {exc}") from None
    else:
        opt = names["wavelength"]
        wl = float(wavelength_nm)
        if not (math.isfinite(wl) and wl > 0):
            raise OptionError(f"{opt} = {wl!r} nm is not allowed; it must be above zero")
        same = entries_with_value(wl)
        entry = (next((e for e in same if e.is_nominal), None)
                 or next((e for e in same if e.is_standard), None))
        if entry is None:
            if u_nm is None:
                raise OptionError(
                    f"{opt} needs {names['uncertainty']} (its standard uncertainty; it is not "
                    f"taken as 0), or name a bundled entry with {names['line']} LIST:QTY"
                )
            return KnownLine(wl, float(u_nm),
                             f"{wl:.12g} nm vacuum, u = {u_nm:.2g} nm (as given)")
    if entry.is_nominal:
        raise OptionError(
            f"{opt}: {entry.wavelength_vac_nm:g} nm is the nominal label "
            f"'{entry.species}' ({entry.list_name}), not a measured wavelength, and nominal "
            "values are never standards; calibrate with a laser standard or a lamp line "
            "(see 'ftsource lines')"
        )
    stated = entry.u_vac_nm
    if u_nm is None:
        if not math.isfinite(stated):
            raise OptionError(
                f"{opt}: {entry.species} at {entry.wavelength_vac_nm:.12g} nm "
                f"({entry.list_name}) has no stated uncertainty; give {names['uncertainty']}, "
                "including lamp effects such as pressure shifts"
            )
        u, src = stated, f"as stated in {entry.list_name}"
    else:
        if math.isfinite(stated) and u_nm < stated:
            raise OptionError(
                f"{names['uncertainty']} {u_nm:.2g} nm is smaller than the {stated:.2g} nm "
                f"that {entry.list_name} states for {entry.species}; a calibration cannot be "
                "better than its standard"
            )
        u, src = float(u_nm), "as given"
    return KnownLine(entry.wavelength_vac_nm, u, (
        f"{entry.species} ({entry.list_name}, {entry.kind}), "
        f"{entry.wavelength_vac_nm:.12g} nm vacuum, u = {u:.2g} nm ({src}); list status "
        f"'{entry.status}' (V verified, V2 secondary, C computed, M from memory)"
    ))
