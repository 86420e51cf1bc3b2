"""Laser-safety cautions shown wherever ftsource meets a laser.

ftsource measures wavelength and spectrum. It does not classify lasers or assess hazards; the
text here points to the standards and rules that do.

References
----------
.. [1] IEC 60825-1:2014, "Safety of laser products - Part 1: Equipment classification and
   requirements", International Electrotechnical Commission.
.. [2] ANSI Z136.1-2014, "American National Standard for Safe Use of Lasers", Laser Institute
   of America.
.. [3] J. Galang, A. Restelli, E. W. Hagley and C. W. Clark, "A Green Laser Pointer Hazard",
   NIST Technical Note 1668, National Institute of Standards and Technology (2010).
"""

from __future__ import annotations

import math

from ftsource.errors import OptionError

__all__ = [
    "LASER_NOTICE",
    "GREEN_POINTER_WARNING",
    "GREEN_POINTER_CENTRE_NM",
    "GREEN_POINTER_HALF_WINDOW_NM",
    "green_pointer_warning",
    "safety_notes",
    "LASER_CAUTION",
    "REFERENCE_LASER_CAUTION",
    "INCOHERENT_SOURCE_NOTE",
]

LASER_NOTICE = (
    "Laser safety: never look into a laser beam or its reflections, and never align by eye, "
    "also not through the interferometer's mirrors, beam splitter or lenses. The reference "
    "laser is a laser too. Green 532 nm pointers (diode-pumped, frequency-doubled) can leak "
    "invisible 808 nm and 1064 nm infrared; a visible-only measurement cannot rule that out "
    "(NIST TN 1668, Galang et al. 2010). ftsource measures wavelength, not hazard class: "
    "follow IEC 60825-1 (and ANSI Z136.1 where it applies), the laser's label and your local "
    "laser-safety rules."
)
"""Short laser-safety notice, in full sentences, shown with every result."""

GREEN_POINTER_CENTRE_NM = 532.0
"""Wavelength of a frequency-doubled Nd (1064 nm) laser, nm: 1064 / 2 (closed form)."""

GREEN_POINTER_HALF_WINDOW_NM = 3.0
"""Half-width of the window around 532 nm that triggers the infrared warning, nm."""

GREEN_POINTER_WARNING = (
    "A line near 532 nm was found: this may be a diode-pumped, frequency-doubled green laser, "
    "which can also emit invisible 808 nm (pump) and 1064 nm (fundamental) infrared. This "
    "measurement covers visible light only and cannot rule out such a leak (NIST TN 1668, "
    "Galang et al. 2010). Treat the beam as possibly carrying invisible infrared, do not rely "
    "on its visible brightness, and check with an infrared-capable detector."
)
"""Warning text returned by :func:`green_pointer_warning`."""


def green_pointer_warning(wavelength_nm: float) -> str | None:
    """Warn about possible invisible infrared from a green 532 nm pointer.

    Parameters
    ----------
    wavelength_nm : float
        Wavelength of a line found in the spectrum, nm. Vacuum or air both work: the two
        differ by about 0.15 nm here, far inside the window.

    Returns
    -------
    str or None
        :data:`GREEN_POINTER_WARNING` if ``wavelength_nm`` lies within
        ±:data:`GREEN_POINTER_HALF_WINDOW_NM` (3 nm, inclusive) of 532 nm, else ``None``.

    Raises
    ------
    OptionError
        If ``wavelength_nm`` is not a finite, positive number.

    Notes
    -----
    A green pointer of this kind pumps a neodymium crystal with an 808 nm diode; the crystal
    lases at 1064 nm, and a doubling crystal turns part of that into 532 nm. Without an
    infrared filter, 808 nm and 1064 nm light can leave the aperture, in one case reported
    by [1]_ at a power above that of the green beam. The ±3 nm window is our choice: wide
    enough for the spread of doubled Nd:YVO4 and Nd:YAG lines and for an uncorrected air or
    vacuum scale, narrow enough not to flag 520 nm diode lasers (common practice).

    References
    ----------
    .. [1] J. Galang, A. Restelli, E. W. Hagley and C. W. Clark, "A Green Laser Pointer
       Hazard", NIST Technical Note 1668, National Institute of Standards and Technology
       (2010).
    """
    try:
        value = float(wavelength_nm)
    except (TypeError, ValueError):
        raise OptionError(f"wavelength_nm must be a number in nm, got {wavelength_nm!r}") from None
    if not math.isfinite(value) or value <= 0.0:
        raise OptionError(
            f"wavelength_nm must be a finite positive wavelength in nm, got {wavelength_nm!r}"
        )
    if abs(value - GREEN_POINTER_CENTRE_NM) <= GREEN_POINTER_HALF_WINDOW_NM:
        return GREEN_POINTER_WARNING
    return None


LASER_CAUTION = (
    "Laser safety: never look into a laser beam or its reflections, and never align by eye, "
    "also not through the interferometer's mirrors, beam splitter or lenses. ftsource measures "
    "wavelength, not hazard class: follow IEC 60825-1 (and ANSI Z136.1 where it applies), the "
    "laser's label and your local laser-safety rules."
)
"""The laser caution for a source that is a laser (narrow or multimode lines)."""

REFERENCE_LASER_CAUTION = (
    "The reference laser is a laser too: the same cautions apply to it (IEC 60825-1 and local "
    "laser-safety rules)."
)
"""Shown whenever the record's optical path came from a reference laser."""

INCOHERENT_SOURCE_NOTE = (
    "The source looks like an LED or a lamp (a broad band): do not stare into bright sources; "
    "IEC 62471 covers LED and lamp safety, and IEC 60825-1 and local laser-safety rules apply "
    "to any laser in the set-up."
)
"""A short line for LEDs and lamps."""


def safety_notes(kind: str, line_wavelengths_nm=(), *, reference_laser: bool = True) -> list:
    """The safety texts fitted to the source, each a full sentence.

    Parameters
    ----------
    kind : str
        The source kind of the result: ``narrow`` and ``multimode`` are treated as lasers,
        ``broadband`` as an LED or lamp, anything else (no source found) as a possible laser.
    line_wavelengths_nm : sequence of float
        The source lines found: the green-pointer infrared caution is added only when one lies
        within ±3 nm of 532 nm (:func:`green_pointer_warning`).
    reference_laser : bool, keyword-only
        Whether the optical path came from a reference laser (its caution is then added).

    Returns
    -------
    list of str
        Laser cautions for lasers, the infrared caution near 532 nm, a short line for LEDs and
        lamps; every list defers to IEC 60825-1 and local rules.
    """
    notes = []
    if kind == "broadband":
        notes.append(INCOHERENT_SOURCE_NOTE)
    else:
        notes.append(LASER_CAUTION)
    for wl in line_wavelengths_nm:
        try:
            w = green_pointer_warning(wl)
        except OptionError:
            continue
        if w:
            notes.append(w)
            break
    if reference_laser:
        notes.append(REFERENCE_LASER_CAUTION)
    return notes
