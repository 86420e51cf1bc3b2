"""Calibration of the rig's wavelength scale from a source of known wavelength.

Every wavelength the rig reports is proportional to the reference wavelength it assumed: the
optical path difference is counted in reference fringes, so a source line is measured as
``λ_measured = λ_ref,assumed × N`` with ``N`` a pure ratio of fringe counts. Measuring a line of
known wavelength therefore fixes the *effective* reference wavelength

``λ_ref,eff = λ_ref × λ_known / λ_measured  (= λ_known / N)``,

which absorbs both the reference's true wavelength and the cosine error of a reference beam
that is not parallel to the mirror's travel (the reference then counts ``cos θ`` fewer fringes
per unit of travel, so ``λ_ref,eff = λ_ref / cos θ``).

Conventions: wavelengths in nm, vacuum (the source line already corrected for the air of the
rig by :mod:`ftsource.physics.air`). See ``docs/response_and_calibration.md``.
"""

from __future__ import annotations

import json
import math
import os
from dataclasses import dataclass

import numpy as np

from ftsource._checks import quote
from ftsource.errors import AnalysisError, OptionError
from ftsource.interferogram.scale import CALIBRATED_QUANTITIES

__all__ = ["RigCalibration", "calibrate_reference", "save_calibration", "load_calibration"]

FILE_KIND = "ftsource-rig-calibration"
FILE_VERSION = 1
_MAX_FILE_BYTES = 65536
_MAX_TEXT = 200
_WL_RANGE_NM = (100.0, 100000.0)  # far UV to far IR: anything outside is not a rig wavelength
_INPUT_KEYS = (
    "measured_wavelength_vac_nm",
    "u_measured_nm",
    "known_wavelength_vac_nm",
    "u_known_nm",
    "reference_wavelength_nm",
    "u_reference_rel",
)
_DERIVED_KEYS = (
    "effective_reference_wavelength_nm",
    "u_effective_rel",
    "deviation_ppm",
    "u_deviation_ppm",
)
_TEXT_KEYS = ("label", "date")
#: What sets the optical-path scale, and so what a calibration rescales: a reference laser's
#: fringes, a position encoder, or an assumed constant mirror speed (one list, in
#: :mod:`ftsource.interferogram.scale`).
OPD_SCALES = CALIBRATED_QUANTITIES
#: Largest |λ_known/λ_measured − 1| a calibration file may hold, per OPD scale: a cosine error
#: of a laser reference or an encoder stays far below 1 %; an assumed mirror speed is a guess.
MAX_FILE_DEVIATION = {"reference": 0.01, "encoder": 0.01, "constant-speed": 0.5}


@dataclass(frozen=True)
class RigCalibration:
    """The rig's effective reference wavelength, from one known line.

    Attributes
    ----------
    effective_reference_wavelength_nm : float
        ``λ_ref × λ_known / λ_measured``, nm: the reference wavelength that makes the rig read
        the known line right.
    u_effective_rel : float
        Relative standard uncertainty of it: ``√((u_measured/λ_measured)² +
        (u_known/λ_known)²)``.
    deviation_ppm : float
        ``(λ_ref,eff/λ_ref − 1) × 10⁶``: how far the rig is from its nominal reference.
    u_deviation_ppm : float
        Standard uncertainty of ``deviation_ppm`` (the nominal value is a fixed label here).
    known_wavelength_nm, u_known_nm : float
        The known line (vacuum) and its standard uncertainty.
    measured_wavelength_nm, u_measured_nm : float
        What the rig measured for it (vacuum) and the statistical standard uncertainty.
    reference_wavelength_nm : float
        The nominal reference wavelength the measurement assumed.
    u_reference_rel : float
        The nominal reference's stated relative uncertainty — kept for the record and for
        :attr:`normalized_deviation`; it does not enter ``u_effective_rel``.
    label, date : str or None
        Free text given by the caller (what line, when); nothing is invented.
    opd_scale : str
        What the calibration rescales (:data:`OPD_SCALES`): ``"reference"`` (the reference
        laser's wavelength; then ``effective_reference_wavelength_nm`` is meaningful),
        ``"encoder"`` (the position scale) or ``"constant-speed"`` (the assumed mirror speed).
        For the last two, :attr:`scale` multiplies the position or the speed, and
        ``reference_wavelength_nm`` only carries the nominal value the ratio was taken against.
    """

    effective_reference_wavelength_nm: float
    u_effective_rel: float
    deviation_ppm: float
    u_deviation_ppm: float
    known_wavelength_nm: float
    u_known_nm: float
    measured_wavelength_nm: float
    u_measured_nm: float
    reference_wavelength_nm: float
    u_reference_rel: float
    label: str | None = None
    date: str | None = None
    opd_scale: str = "reference"

    @property
    def scale(self) -> float:
        """``λ_ref,eff / λ_ref``: the factor every measured wavelength is multiplied by."""
        return self.effective_reference_wavelength_nm / self.reference_wavelength_nm

    @property
    def normalized_deviation(self) -> float:
        """``deviation / √(u_deviation² + u_reference²)`` (ppm over ppm).

        Values well above 2 say the rig is not at its nominal reference within the nominal
        uncertainty: misalignment (cosine error) or a reference that is not what its label
        says.
        """
        u = math.hypot(self.u_deviation_ppm, 1e6 * self.u_reference_rel)
        return self.deviation_ppm / u if u > 0 else math.copysign(math.inf, self.deviation_ppm)

    def apply(self, measured_wavelength_vac_nm):
        """Correct wavelengths measured with the nominal reference.

        Parameters
        ----------
        measured_wavelength_vac_nm : float or array_like
            Vacuum wavelengths, nm, measured by the rig with ``reference_wavelength_nm``
            assumed.

        Returns
        -------
        float or numpy.ndarray
            ``λ_measured × λ_ref,eff / λ_ref``, evaluated as
            ``(λ_measured / measured_wavelength_nm) × known_wavelength_nm`` (the same ratio), so
            the calibration line itself comes back as exactly the known value.

        References
        ----------
        .. [1] Closed form: the OPD scale is proportional to the assumed reference wavelength.
        """
        w = np.asarray(measured_wavelength_vac_nm, dtype=float)
        out = (w / self.measured_wavelength_nm) * self.known_wavelength_nm
        return float(out) if np.ndim(measured_wavelength_vac_nm) == 0 else out

    def u_applied_nm(self, measured_wavelength_vac_nm, u_measured_nm):
        """Standard uncertainty of :meth:`apply` for a new measurement.

        Parameters
        ----------
        measured_wavelength_vac_nm, u_measured_nm : float or array_like
            The new measurement and its own standard uncertainty, nm.

        Returns
        -------
        float or numpy.ndarray
            ``λ_corrected × √((u_measured/λ_measured)² + u_effective_rel²)``.

        References
        ----------
        .. [1] JCGM 100:2008 (GUM), §5.1, for a product of uncorrelated factors.
        """
        w = np.asarray(measured_wavelength_vac_nm, dtype=float)
        u = np.asarray(u_measured_nm, dtype=float)
        out = np.abs(self.apply(w)) * np.hypot(u / w, self.u_effective_rel)
        return float(out) if np.ndim(out) == 0 else out

    def to_dict(self) -> dict:
        """The inputs, the derived values and the file marker, as plain JSON types."""
        d = {"kind": FILE_KIND, "version": FILE_VERSION}
        d.update(
            {
                "measured_wavelength_vac_nm": self.measured_wavelength_nm,
                "u_measured_nm": self.u_measured_nm,
                "known_wavelength_vac_nm": self.known_wavelength_nm,
                "u_known_nm": self.u_known_nm,
                "reference_wavelength_nm": self.reference_wavelength_nm,
                "u_reference_rel": self.u_reference_rel,
                "effective_reference_wavelength_nm": self.effective_reference_wavelength_nm,
                "u_effective_rel": self.u_effective_rel,
                "deviation_ppm": self.deviation_ppm,
                "u_deviation_ppm": self.u_deviation_ppm,
                "label": self.label,
                "date": self.date,
                "opd_scale": self.opd_scale,
            }
        )
        return d


def _number(name, value, *, positive=False, wavelength=False, rel=False) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float, np.integer, np.floating)):
        raise OptionError(f"{name} = {value!r} is not a number")
    v = float(value)
    if not math.isfinite(v):
        raise OptionError(f"{name} = {v!r} is not allowed; it is finite")
    if wavelength and not (_WL_RANGE_NM[0] <= v <= _WL_RANGE_NM[1]):
        raise OptionError(
            f"{name} = {v!r} nm is not allowed; wavelengths lie in {_WL_RANGE_NM[0]:g} to "
            f"{_WL_RANGE_NM[1]:g} nm"
        )
    if positive and v <= 0:
        raise OptionError(f"{name} = {v!r} is not allowed; it is > 0")
    if v < 0:
        raise OptionError(f"{name} = {v!r} is not allowed; it is >= 0")
    if rel and v >= 0.01:
        raise OptionError(
            f"{name} = {v!r} is not allowed; a relative uncertainty here is below 0.01"
        )
    return v


def _text(name, value) -> str | None:
    if value is None:
        return None
    if not isinstance(value, str) or len(value) > _MAX_TEXT or not value.isprintable():
        raise OptionError(
            f"{name} is not allowed; it is None or printable text of at most {_MAX_TEXT} "
            "characters"
        )
    return value


def calibrate_reference(
    measured_wavelength_vac_nm: float,
    u_measured_nm: float,
    known_wavelength_vac_nm: float,
    u_known_nm: float,
    reference_wavelength_nm: float,
    u_reference_rel: float,
    *,
    label: str | None = None,
    date: str | None = None,
    max_deviation_rel: float = 1e-3,
    opd_scale: str = "reference",
) -> RigCalibration:
    """Effective reference wavelength of the rig from one line of known wavelength.

    Parameters
    ----------
    measured_wavelength_vac_nm : float
        The line's vacuum wavelength as the rig measured it, nm, with
        ``reference_wavelength_nm`` assumed.
    u_measured_nm : float
        Standard uncertainty of that measurement (statistical: fit, noise, repeatability), nm.
    known_wavelength_vac_nm : float
        The line's true vacuum wavelength (a line list, a stabilised laser), nm.
    u_known_nm : float
        Its standard uncertainty, nm.
    reference_wavelength_nm : float
        The nominal reference wavelength the measurement assumed, nm.
    u_reference_rel : float
        The nominal reference's relative standard uncertainty (recorded; see Notes).
    label, date : str, optional
        Free text to record (which line, when).
    max_deviation_rel : float
        Refuse a calibration whose ``|λ_known/λ_measured − 1|`` exceeds this (default 10⁻³,
        1000 ppm — a cosine error that large needs a 2.6° tilt): it most likely matched the
        wrong line. At most :data:`MAX_FILE_DEVIATION` for ``opd_scale`` (0.01, or 0.5 for an
        assumed constant mirror speed; files are checked against that limit).
    opd_scale : str
        What the calibration rescales (:data:`OPD_SCALES`; see :class:`RigCalibration`).

    Returns
    -------
    RigCalibration

    Raises
    ------
    OptionError
        For a value that is not finite, a wavelength outside 100 nm to 100 µm, a negative
        uncertainty or a relative one of 0.01 or more.
    AnalysisError
        If the measured and known wavelengths differ by more than ``max_deviation_rel``.

    Notes
    -----
    ``λ_measured = λ_ref·N`` with ``N`` the ratio of reference fringes to source fringes over
    the same travel, so ``λ_ref,eff = λ_ref·λ_known/λ_measured = λ_known/N`` does not depend
    on the nominal ``λ_ref`` at all: whatever value was assumed cancels, and so does its
    uncertainty. ``u_effective_rel`` holds only the relative uncertainties of ``N`` (the
    measurement) and of ``λ_known``, combined in quadrature. The nominal uncertainty matters
    only when judging whether the rig agrees with its label
    (:attr:`RigCalibration.normalized_deviation`).

    The calibration holds for the alignment it was made with; realigning the reference beam
    changes the cosine error and calls for a new one. It also assumes both wavelengths are
    vacuum values: air dispersion between the reference and the line is then already removed.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §5.1.6: relative uncertainties of a product of powers.
    .. [2] P. R. Griffiths and J. A. de Haseth, Fourier Transform Infrared Spectrometry,
       2nd ed. (Wiley, 2007), ch. 2: wavenumber accuracy and the reference laser.
    """
    lm = _number("measured_wavelength_vac_nm", measured_wavelength_vac_nm, positive=True,
                 wavelength=True)
    um = _number("u_measured_nm", u_measured_nm)
    lk = _number("known_wavelength_vac_nm", known_wavelength_vac_nm, positive=True,
                 wavelength=True)
    uk = _number("u_known_nm", u_known_nm)
    lr = _number("reference_wavelength_nm", reference_wavelength_nm, positive=True,
                 wavelength=True)
    ur = _number("u_reference_rel", u_reference_rel, rel=True)
    mx = _number("max_deviation_rel", max_deviation_rel, positive=True)
    if opd_scale not in OPD_SCALES:
        raise OptionError(f"opd_scale = {quote(opd_scale)} is not one of {', '.join(OPD_SCALES)}")
    if mx > MAX_FILE_DEVIATION[opd_scale]:
        raise OptionError(
            f"max_deviation_rel = {mx!r} is not allowed; at most {MAX_FILE_DEVIATION[opd_scale]}"
        )
    label = _text("label", label)
    date = _text("date", date)
    for name, u, w in (("u_measured_nm", um, lm), ("u_known_nm", uk, lk)):
        if u / w >= 0.01:
            raise OptionError(
                f"{name} = {u!r} nm is not allowed; it is below 1 % of the wavelength ({w!r} nm)"
            )
    ratio = lk / lm
    if abs(ratio - 1.0) > mx:
        raise AnalysisError(
            f"the measured line ({lm!r} nm) is {1e6 * (1 / ratio - 1):.6g} ppm from the known "
            f"one ({lk!r} nm); more than max_deviation_rel = {mx:g} allows - is it the same line?"
        )
    eff = lr * ratio
    u_rel = math.hypot(um / lm, uk / lk)
    return RigCalibration(
        effective_reference_wavelength_nm=eff,
        u_effective_rel=u_rel,
        deviation_ppm=(ratio - 1.0) * 1e6,
        u_deviation_ppm=u_rel * ratio * 1e6,
        known_wavelength_nm=lk,
        u_known_nm=uk,
        measured_wavelength_nm=lm,
        u_measured_nm=um,
        reference_wavelength_nm=lr,
        u_reference_rel=ur,
        label=label,
        date=date,
        opd_scale=opd_scale,
    )


def save_calibration(path, cal: RigCalibration, *, overwrite: bool = False) -> None:
    """Write a calibration as a small JSON file.

    Parameters
    ----------
    path : str or os.PathLike
        Target file.
    cal : RigCalibration
    overwrite : bool
        Replace an existing file; without it an existing file is an error.

    Raises
    ------
    OptionError
        If ``cal`` is not a :class:`RigCalibration`.
    OutputError
        If the file exists (without ``overwrite``), is a directory or cannot be written. The
        write is atomic (a temporary file in the same folder, then a rename).

    Notes
    -----
    The file holds ``"kind": "ftsource-rig-calibration"``, ``"version": 1``, the six inputs of
    :func:`calibrate_reference`, the four derived values, ``label`` and ``date``. Floats are
    written with ``repr`` precision, so a round trip is exact. No timestamp is added.

    References
    ----------
    .. [1] RFC 8259, The JavaScript Object Notation (JSON) Data Interchange Format.
    """
    from ftsource.io.records import atomic_write

    if not isinstance(cal, RigCalibration):
        raise OptionError(f"cal is a RigCalibration, not {type(cal).__name__}")
    text = json.dumps(cal.to_dict(), indent=2, allow_nan=False) + "\n"
    data = text.encode("utf-8")
    atomic_write(path, lambda fh: fh.write(data), overwrite=overwrite)


def _reject_constant(name):
    raise ValueError(f"{name} is not a JSON number")


def _no_duplicates(pairs):
    out = {}
    for k, v in pairs:
        if k in out:
            raise ValueError(f"key {k!r} appears twice")
        out[k] = v
    return out


def load_calibration(path) -> RigCalibration:
    """Read and check a calibration written by :func:`save_calibration`.

    Parameters
    ----------
    path : str or os.PathLike
        The JSON file.

    Returns
    -------
    RigCalibration
        Rebuilt from the file's inputs by :func:`calibrate_reference`; the file's derived
        values must agree with the recomputed ones (relative 10⁻⁹).

    Raises
    ------
    OptionError
        With a one-line message for anything wrong: a missing or unreadable file, a file over
        64 KiB, text that is not UTF-8 JSON (NaN/Infinity and repeated keys refused), another
        ``kind`` or ``version``, missing or unknown keys, a value of the wrong type or out of
        range, or derived values that do not match the inputs.

    Notes
    -----
    The file is parsed as data only (``json``, never evaluated), and nothing in it is used as
    a path.

    References
    ----------
    .. [1] RFC 8259, The JavaScript Object Notation (JSON) Data Interchange Format.
    """
    name = os.fspath(path)
    try:
        with open(name, "rb") as fh:
            raw = fh.read(_MAX_FILE_BYTES + 1)
    except OSError as exc:
        raise OptionError(f"{name}: cannot be read ({exc.strerror or exc})") from None
    if len(raw) > _MAX_FILE_BYTES:
        raise OptionError(f"{name}: larger than {_MAX_FILE_BYTES} bytes; not a rig calibration")
    try:
        doc = json.loads(
            raw.decode("utf-8"),
            parse_constant=_reject_constant,
            object_pairs_hook=_no_duplicates,
        )
    except (UnicodeDecodeError, ValueError, RecursionError) as exc:
        msg = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise OptionError(f"{name}: not a JSON rig calibration ({msg})") from None
    if not isinstance(doc, dict):
        raise OptionError(f"{name}: the top level is {type(doc).__name__}, not an object")
    if doc.get("kind") != FILE_KIND:
        raise OptionError(f"{name}: kind is {quote(doc.get('kind'))}, not {FILE_KIND!r}")
    version = doc.get("version")
    if isinstance(version, bool) or version != FILE_VERSION:
        raise OptionError(
            f"{name}: version {quote(version)} is not supported (allowed: {FILE_VERSION})"
        )
    allowed = {"kind", "version", "opd_scale", *_INPUT_KEYS, *_DERIVED_KEYS, *_TEXT_KEYS}
    unknown = sorted(set(doc) - allowed)
    if unknown:
        raise OptionError(f"{name}: unknown key {quote(unknown[0])}; allowed: "
                          f"{', '.join(sorted(allowed))}")
    missing = [k for k in (*_INPUT_KEYS, *_DERIVED_KEYS) if k not in doc]
    if missing:
        raise OptionError(f"{name}: key {missing[0]!r} is missing")
    for k in (*_INPUT_KEYS, *_DERIVED_KEYS):
        v = doc[k]
        if isinstance(v, bool) or not isinstance(v, (int, float)):
            raise OptionError(f"{name}: {k} = {quote(v)} is not a number")
    scale_kind = doc.get("opd_scale", "reference")  # files from before the key: a laser
    if scale_kind not in OPD_SCALES:
        raise OptionError(
            f"{name}: opd_scale = {quote(scale_kind)} is not one of {', '.join(OPD_SCALES)}"
        )
    try:
        cal = calibrate_reference(
            *(doc[k] for k in _INPUT_KEYS),
            label=doc.get("label"),
            date=doc.get("date"),
            max_deviation_rel=MAX_FILE_DEVIATION[scale_kind],
            opd_scale=scale_kind,
        )
    except (OptionError, AnalysisError) as exc:
        raise OptionError(f"{name}: {exc}") from None
    for k in _DERIVED_KEYS:
        stored, fresh = float(doc[k]), getattr(cal, k)
        tol = 1e-9 * max(abs(fresh), 1.0 if k.endswith("ppm") else abs(fresh))
        if not math.isfinite(stored) or abs(stored - fresh) > tol:
            raise OptionError(
                f"{name}: {k} = {stored!r} does not follow from the stored inputs "
                f"({fresh!r}); the file was changed by hand or is damaged"
            )
    return cal
