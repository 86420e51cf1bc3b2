"""The OPD scale: what turns a record's reference into optical path, as one object.

Every wavelength ftsource reports scales with the optical path difference (OPD) it assumed.
That scale comes from one of four places (:class:`OpdKind`): the fringes of a reference laser
(a quadrature pair or a single channel), a position encoder, or an assumed constant mirror
speed. :class:`OpdScale` carries the kind together with the reference laser's **vacuum**
wavelength, its relative standard uncertainty and the rig calibration that rescales it, so
that later stages ask the object instead of comparing strings.

The reference's uncertainty is converted from a length to a ratio in one place
(:func:`relative_uncertainty`), and the rule for its default lives in one place
(:func:`reference_uncertainty`): the 1.5 ppm of an unstabilised He–Ne laser (CIPM 2007) only
for a He–Ne vacuum wavelength, a bundled standard's own uncertainty for its value, and for any
other wavelength the caller must state one.

References
----------
.. [1] CIPM 2007, Recommendation 2 (CI-2007): unstabilised He–Ne laser on the 633 nm
   transition, f = 473.6127 THz, λ = 632.9908 nm, u_r = 1.5×10⁻⁶;
   https://www.bipm.org/en/committees/ci/cipm/96-2007/resolution-2
.. [2] BIPM, mise en pratique of the definition of the metre, recommended radiations
   (the bundled ``reference_spectra/laser_standards.ecsv``).
"""

from __future__ import annotations

import enum
import math
from dataclasses import dataclass

from ftsource.errors import OptionError

__all__ = [
    "HENE_VACUUM_WAVELENGTH_NM",
    "HENE_RELATIVE_UNCERTAINTY",
    "HENE_WINDOW_NM",
    "AIR_MATCH_WINDOW_NM",
    "CALIBRATED_QUANTITIES",
    "OpdKind",
    "OpdScale",
    "relative_uncertainty",
    "reference_uncertainty",
    "air_wavelength_warning",
]

#: Vacuum wavelength (nm) of the He–Ne laser's 633 nm line, to the digits an unstabilised
#: laser supports: CIPM 2007 Rec. 2 gives 632.9908 nm with u_r = 1.5e-6 (±0.00095 nm) [1]_.
#: It is the usual reference value, the simulator's default reference, and the nominal fringe
#: length used to find sweeps when the OPD comes from an encoder or an assumed speed.
HENE_VACUUM_WAVELENGTH_NM = 632.991
#: Relative standard uncertainty of an unstabilised He–Ne laser's wavelength, whatever its
#: isotope mix (CIPM 2007 Rec. 2 [1]_).
HENE_RELATIVE_UNCERTAINTY = 1.5e-6
#: A reference wavelength within this distance (nm) of :data:`HENE_VACUUM_WAVELENGTH_NM` is a
#: He–Ne's vacuum wavelength and gets :data:`HENE_RELATIVE_UNCERTAINTY` by default (five
#: times the CIPM uncertainty: 632.99 still counts; the rounded label 633 nm, 14 ppm away,
#: does not).
HENE_WINDOW_NM = 0.005
#: A value within this relative distance of a bundled standard's vacuum wavelength is that
#: standard's value (the digits a user copies, e.g. 632.991213 for 632.99121258).
STANDARD_MATCH_REL = 1e-9
#: A reference wavelength within this distance (nm) of a bundled standard's wavelength in
#: standard air is taken for that air value (632.8 nm for a He–Ne; laboratory air moves the
#: air value by about 0.005 nm, far less than this).
AIR_MATCH_WINDOW_NM = 0.05
#: Reference wavelengths accepted (vacuum, nm): lasers from the near UV to the near IR.
REFERENCE_WAVELENGTH_RANGE_NM = (200.0, 2000.0)


class OpdKind(enum.StrEnum):
    """Where the OPD scale comes from; the value is the contract's ``input.opd_source``."""

    QUADRATURE = "quadrature"
    SINGLE = "single"
    ENCODER = "encoder"
    CONSTANT_SPEED = "constant-speed"

    @property
    def uses_reference_laser(self) -> bool:
        """True when the OPD counts a reference laser's fringes (its wavelength sets the
        scale, and the index of air at that wavelength cancels in part)."""
        return self in (OpdKind.QUADRATURE, OpdKind.SINGLE)

    @property
    def knows_direction(self) -> bool:
        """True when the record tells the direction of travel across dropouts (a quadrature
        pair or an encoder; a single channel's phase only grows)."""
        return self in (OpdKind.QUADRATURE, OpdKind.ENCODER)

    @property
    def calibrated_quantity(self) -> str:
        """What a rig calibration of this kind rescales, as a calibration file names it:
        ``"reference"`` (the laser's wavelength), ``"encoder"`` or ``"constant-speed"``."""
        return "reference" if self.uses_reference_laser else self.value

    @property
    def description(self) -> str:
        """The kind of scale in words, for messages."""
        return SCALE_WORDS[self.calibrated_quantity]


#: The quantities a rig calibration can rescale (:attr:`OpdKind.calibrated_quantity`), in
#: words.
SCALE_WORDS = {
    "reference": "a reference laser",
    "encoder": "a position encoder",
    "constant-speed": "an assumed constant mirror speed",
}
#: The names of those quantities, as calibration files and the budget write them.
CALIBRATED_QUANTITIES = tuple(SCALE_WORDS)


def relative_uncertainty(u_nm: float, wavelength_nm: float) -> float:
    """A standard uncertainty given as a length, as a ratio of the wavelength: u/λ.

    The one conversion of the reference's uncertainty (the command line gives a length as it
    was written; this turns it into a ratio once the wavelength is known).

    Raises
    ------
    OptionError
        If either is not finite, the uncertainty is negative or the wavelength not positive.
    """
    u, lam = float(u_nm), float(wavelength_nm)
    if not (math.isfinite(u) and u >= 0):
        raise OptionError(f"reference uncertainty = {u!r} nm is not allowed; give a finite "
                          "length ≥ 0")
    if not (math.isfinite(lam) and lam > 0):
        raise OptionError(f"reference wavelength = {lam!r} nm is not allowed; give a finite "
                          "length above zero")
    return u / lam


def _standards():
    from ftsource.linelists import standard_entries

    return standard_entries()


def reference_uncertainty(wavelength_nm: float, *, relative: float | None = None,
                          length_nm: float | None = None) -> tuple[float, str]:
    """The reference wavelength's relative standard uncertainty and where it comes from.

    Parameters
    ----------
    wavelength_nm : float
        The reference laser's vacuum wavelength.
    relative, length_nm : float, optional
        The uncertainty as stated: a ratio, or a length in nm (at most one of the two).

    Returns
    -------
    (float, str)
        u_r and its source: ``"as given"``, the CIPM 2007 He–Ne value, or the bundled
        standard it matches.

    Raises
    ------
    OptionError
        When none is stated and ``wavelength_nm`` is neither a He–Ne's vacuum wavelength
        (within :data:`HENE_WINDOW_NM` of :data:`HENE_VACUUM_WAVELENGTH_NM`) nor a bundled
        standard's value: no default fits another laser. The message also says when the value
        is a standard's wavelength in air (:func:`air_wavelength_warning`).
    """
    if relative is not None and length_nm is not None:
        raise OptionError("give the reference uncertainty as a ratio or as a length, not both")
    if length_nm is not None:
        return relative_uncertainty(length_nm, wavelength_nm), "as given"
    if relative is not None:
        r = float(relative)
        if not (math.isfinite(r) and r >= 0):
            raise OptionError(f"reference uncertainty = {r!r} (ratio) is not allowed; give a "
                              "finite value ≥ 0")
        return r, "as given"
    lam = float(wavelength_nm)
    for e in _standards():
        if abs(e.wavelength_vac_nm - lam) <= STANDARD_MATCH_REL * lam and e.u_r > 0:
            return e.u_r, f"the bundled standard '{e.species}'"
    if abs(lam - HENE_VACUUM_WAVELENGTH_NM) <= HENE_WINDOW_NM:
        return HENE_RELATIVE_UNCERTAINTY, "an unstabilised He-Ne laser (CIPM 2007)"
    how = ("as a ratio or a length (reference_uncertainty, e.g. '2 ppm' or '0.001 nm'), "
           "from the laser's data sheet or a calibration")
    air = air_wavelength_warning(lam)
    if air:
        raise OptionError(
            f"{air}. Give the vacuum wavelength; or, if {lam:g} nm really is your laser's "
            f"vacuum wavelength, state its standard uncertainty {how}"
        )
    raise OptionError(
        f"the reference wavelength {lam:g} nm is not a He-Ne laser's vacuum wavelength (within "
        f"{HENE_WINDOW_NM} nm of {HENE_VACUUM_WAVELENGTH_NM} nm, whose 1.5 ppm default comes "
        "from CIPM 2007) nor a bundled standard's value (see 'ftsource lines'), so its "
        f"uncertainty is not known: state it {how}"
    )


def air_wavelength_warning(wavelength_nm: float) -> str | None:
    """A loud warning when ``wavelength_nm`` is a bundled standard's wavelength in **air**
    (e.g. 632.8 nm for a He–Ne laser), else None.

    The OPD scale needs the reference's vacuum wavelength; an air value makes every result
    low by the ratio computed here (about 300 ppm at 633 nm).
    """
    lam = float(wavelength_nm)
    near = [e for e in _standards() if abs(e.wavelength_air_nm - lam) <= AIR_MATCH_WINDOW_NM]
    if not near:
        return None
    # of a free-running and a stabilised laser of one line, the free-running one: a user
    # who writes an air value does not hold a stabilised laser
    e = max(near, key=lambda e: e.u_r)
    low_ppm = (1.0 - lam / e.wavelength_vac_nm) * 1e6
    return (
        f"REFERENCE WAVELENGTH IN AIR? {lam:g} nm is the wavelength in air of the "
        f"'{e.species}' ({e.wavelength_air_nm:.4f} nm in standard air); the OPD scale needs its "
        f"VACUUM wavelength, {e.wavelength_vac_nm:.10g} nm. With {lam:g} nm every wavelength in "
        f"the result is {low_ppm:.0f} ppm ({low_ppm * 1e-6 * lam:.3f} nm at {lam:.0f} nm) too "
        "low"
    )


@dataclass(frozen=True)
class OpdScale:
    """The OPD scale of one analysis: its kind, the reference and the rig calibration.

    Attributes
    ----------
    kind : OpdKind
    reference_wavelength_nm : float or None
        The reference laser's vacuum wavelength as stated (option or record metadata); None
        without a reference laser.
    u_reference_rel : float
        Its relative standard uncertainty (0 without a reference laser).
    calibration : ftsource.calibrate.calibration.RigCalibration or None
        A rig calibration made with the same kind of scale; it replaces the reference
        wavelength (laser), multiplies the encoder's scale or the assumed mirror speed.
    """

    kind: OpdKind
    reference_wavelength_nm: float | None = None
    u_reference_rel: float = 0.0
    calibration: object | None = None

    def __post_init__(self):
        object.__setattr__(self, "kind", OpdKind(self.kind))
        if self.kind.uses_reference_laser and self.reference_wavelength_nm is None:
            raise OptionError(
                "the reference wavelength is unknown: give the reference laser's vacuum "
                f"wavelength, e.g. {HENE_VACUUM_WAVELENGTH_NM}nm for a He-Ne laser"
            )
        cal = self.calibration
        if cal is not None and cal.opd_scale != self.kind.calibrated_quantity:
            raise OptionError(
                f"the rig calibration was made on a record whose OPD came from "
                f"{SCALE_WORDS[cal.opd_scale]}, but this record's OPD comes from "
                f"{self.kind.description}: calibrate with a record of the same kind"
            )

    @property
    def uses_reference_laser(self) -> bool:
        """See :attr:`OpdKind.uses_reference_laser`."""
        return self.kind.uses_reference_laser

    @property
    def wavelength_nm(self) -> float | None:
        """The vacuum wavelength the OPD is counted in: the rig calibration's effective value
        when there is one, else the stated one (None without a reference laser)."""
        if not self.uses_reference_laser:
            return None
        if self.calibration is not None:
            return float(self.calibration.effective_reference_wavelength_nm)
        return self.reference_wavelength_nm

    @property
    def fringe_wavelength_nm(self) -> float:
        """The length (nm) one reference fringe stands for when counting sweeps and sampling
        limits: the reference's wavelength, or the He–Ne's as a nominal unit without one."""
        return self.wavelength_nm or HENE_VACUUM_WAVELENGTH_NM

    @property
    def factor(self) -> float:
        """What the rig calibration multiplies the encoder's scale or the assumed mirror
        speed by (1 without a calibration, and for a reference laser, whose wavelength it
        replaces instead)."""
        if self.calibration is None or self.uses_reference_laser:
            return 1.0
        return float(self.calibration.scale)

    @property
    def u_rel(self) -> float:
        """Relative standard uncertainty of the scale that the budget carries as the
        reference's (or the calibration's) component: the calibration's when there is one,
        else the reference laser's (0 for an encoder or an assumed speed, whose own
        uncertainties are separate components)."""
        if self.calibration is not None:
            return float(self.calibration.u_effective_rel)
        return float(self.u_reference_rel) if self.uses_reference_laser else 0.0
