"""Planning a scan and its optics before recording: pure functions over plain floats.

Units: wavenumber σ in cm⁻¹, optical path difference (OPD) in cm, lengths of optics in any
one unit (the formulas are scale-free), speeds in cm/s, rates in Hz.

* The mirror moves half the OPD: one reference fringe per λ/2 of mirror travel (common
  practice), so the OPD speed is twice the mirror speed.
* A scan to a maximum OPD ``L`` has an instrument line shape of FWHM ``fwhm_factor/(2L)``
  (:func:`ftsource.spectrum.apodization.ils_fwhm_per_cm`).
* Fringes of wavenumber σ arrive at ``f = v_opd·σ``; the record holds them without aliasing
  while ``f ≤ β·f_s`` with ``β`` the usable fraction of the sample rate (the same limit as
  :func:`ftsource.interferogram.resample.sampling_limits`).
* The largest field of view keeps the spread of path differences across the field below
  the resolution: ``Ω_max = 2π·Δσ/σ_max`` (Jacquinot criterion).
* Ray-transfer (ABCD) matrices for the collimator and the thin-lens equation for a lens of
  unknown focal length.

References
----------
.. [1] P. Jacquinot, "The luminosity of spectrometers with prisms, gratings, or Fabry-Perot
   etalons", J. Opt. Soc. Am. 44, 761-765 (1954).
.. [2] P. R. Griffiths and J. A. de Haseth, *Fourier Transform Infrared Spectrometry*, 2nd
   ed., Wiley (2007), ch. 2 and 5.
.. [3] B. E. A. Saleh and M. C. Teich, *Fundamentals of Photonics*, 2nd ed., Wiley (2007),
   §1.4 (matrix optics).
.. [4] E. Hecht, *Optics*, 5th ed., Pearson (2017), §5.2 (thin lenses) and §6.2 (matrix
   methods).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

from ftsource._checks import quote
from ftsource.errors import OptionError

__all__ = [
    "ScanPlan",
    "plan_scan",
    "Resolvability",
    "resolvability",
    "thin_lens_matrix",
    "propagation_matrix",
    "two_lens_matrix",
    "collimator_spacing",
    "residual_divergence",
    "focal_length_from_distances",
    "jacquinot_solid_angle",
    "jacquinot_aperture_diameter",
    "plan_report",
]


def _positive(name: str, value: float) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise OptionError(f"{name} must be a number, got {value!r}") from None
    if not (math.isfinite(v) and v > 0):
        raise OptionError(f"{name} = {value!r} is not allowed; it must be finite and above zero")
    return v


def jacquinot_solid_angle(resolution_per_cm: float, sigma_max_per_cm: float) -> float:
    """Largest solid angle of the field, sr: ``Ω = 2π·Δσ/σ_max`` (Jacquinot [1]_).

    A ray at angle θ sees the OPD shortened by ``cos θ``; across a field of solid angle Ω the
    wavenumber scale spreads by ``σΩ/2π`` (:func:`ftsource.physics.instrument.
    field_of_view_broadening`). Keeping that spread at the resolution ``Δσ`` for the
    largest wavenumber gives the criterion.

    References
    ----------
    .. [1] P. Jacquinot, J. Opt. Soc. Am. 44, 761-765 (1954).
    """
    d = _positive("resolution_per_cm", resolution_per_cm)
    s = _positive("sigma_max_per_cm", sigma_max_per_cm)
    return 2.0 * math.pi * d / s


def jacquinot_aperture_diameter(omega_sr: float, focal_length: float) -> float:
    """Diameter of the field stop at the collimator's focus for a field of solid angle Ω.

    Exact for a cone: ``Ω = 2π(1 − cos θ)``, ``d = 2f·tan θ`` (≈ ``2f·√(Ω/π)`` for small
    fields). Same unit as ``focal_length``.
    """
    om = _positive("omega_sr", omega_sr)
    f = _positive("focal_length", focal_length)
    if om >= 2 * math.pi:
        raise OptionError(f"omega_sr = {om:g} sr is not allowed; a cone holds less than 2π sr")
    theta = math.acos(1.0 - om / (2.0 * math.pi))
    return 2.0 * f * math.tan(theta)


@dataclass(frozen=True)
class ScanPlan:
    """What a scan needs for a wanted resolution and band.

    Attributes
    ----------
    max_opd_cm : float
        Largest OPD on each side of zero path difference, cm: ``fwhm_factor/(2Δσ)``.
    mirror_travel_cm : float
        Mirror travel for a double-sided scan from −L to +L: the mirror moves ``L`` in all
        (``L/2`` each side).
    opd_speed_cm_s, mirror_speed_cm_s : float
        Largest OPD speed and mirror speed the sample rate allows: ``v_opd = β·f_s/σ_max``,
        the mirror at half of it.
    sample_rate_hz : float
        The sample rate the plan is for.
    source_fringe_rate_hz : float
        Fringe frequency of the shortest wavelength at that speed (``= β·f_s``).
    reference_fringe_rate_hz : float
        Fringe frequency of the reference laser at that speed: ``v_opd/λ_ref``.
    sweep_time_s : float
        Time for one sweep from −L to +L at that speed.
    solid_angle_sr : float
        Largest field (Jacquinot): ``2π·Δσ/σ_max``.
    aperture_diameter : float or None
        Field-stop diameter for that field with the given collimator focal length (its unit),
        None without one.
    """

    resolution_per_cm: float
    shortest_wavelength_nm: float
    longest_wavelength_nm: float
    apodization: str
    max_opd_cm: float
    mirror_travel_cm: float
    opd_speed_cm_s: float
    mirror_speed_cm_s: float
    sample_rate_hz: float
    bandwidth_fraction: float
    source_fringe_rate_hz: float
    reference_fringe_rate_hz: float
    reference_wavelength_nm: float
    sweep_time_s: float
    solid_angle_sr: float
    aperture_diameter: float | None


def plan_scan(
    resolution_per_cm: float,
    shortest_wavelength_nm: float,
    *,
    longest_wavelength_nm: float = 1100.0,
    sample_rate_hz: float = 48_000.0,
    bandwidth_fraction: float = 0.45,
    reference_wavelength_nm: float = 632.991,
    apodization: str = "happ-genzel",
    focal_length: float | None = None,
) -> ScanPlan:
    """Mirror travel, speed and rates for a wanted resolution over a wanted band.

    Parameters
    ----------
    resolution_per_cm : float
        Wanted FWHM of the instrument line shape, cm⁻¹.
    shortest_wavelength_nm, longest_wavelength_nm : float
        The band to be measured (vacuum), nm.
    sample_rate_hz : float, keyword-only
        Sample rate of the recorder.
    bandwidth_fraction : float, keyword-only
        Usable fraction β of the sample rate (0.45 for a sound card, 0.5 for an ADC with a
        sharp anti-alias filter: :mod:`ftsource.interferogram.resample`).
    reference_wavelength_nm : float, keyword-only
        Vacuum wavelength of the reference laser.
    apodization : str, keyword-only
        The apodization the analysis will use (sets ``fwhm_factor``).
    focal_length : float, optional
        Collimator focal length for the field-stop diameter (any unit).

    Raises
    ------
    OptionError
        A value that is not finite and positive, or a band whose short end is not below its
        long end.
    """
    from ftsource.spectrum.apodization import get_apodization

    d_sigma = _positive("resolution_per_cm", resolution_per_cm)
    lo_nm = _positive("shortest_wavelength_nm", shortest_wavelength_nm)
    hi_nm = _positive("longest_wavelength_nm", longest_wavelength_nm)
    if not lo_nm < hi_nm:
        raise OptionError(
            f"the band {lo_nm:g}–{hi_nm:g} nm is empty; the shortest wavelength must be below "
            "the longest"
        )
    fs = _positive("sample_rate_hz", sample_rate_hz)
    beta = _positive("bandwidth_fraction", bandwidth_fraction)
    if beta > 0.5:
        raise OptionError(
            f"bandwidth_fraction = {beta:g} is not allowed; fringes are held below the Nyquist "
            "frequency, so at most 0.5"
        )
    lam_ref = _positive("reference_wavelength_nm", reference_wavelength_nm)
    apo = get_apodization(apodization)
    sigma_max = 1e7 / lo_nm
    L = apo.fwhm_factor / (2.0 * d_sigma)
    v_opd = beta * fs / sigma_max
    omega = jacquinot_solid_angle(d_sigma, sigma_max)
    return ScanPlan(
        resolution_per_cm=d_sigma,
        shortest_wavelength_nm=lo_nm,
        longest_wavelength_nm=hi_nm,
        apodization=apo.name,
        max_opd_cm=L,
        mirror_travel_cm=L,
        opd_speed_cm_s=v_opd,
        mirror_speed_cm_s=v_opd / 2.0,
        sample_rate_hz=fs,
        bandwidth_fraction=beta,
        source_fringe_rate_hz=v_opd * sigma_max,
        reference_fringe_rate_hz=v_opd / (lam_ref * 1e-7),
        reference_wavelength_nm=lam_ref,
        sweep_time_s=2.0 * L / v_opd,
        solid_angle_sr=omega,
        aperture_diameter=None if focal_length is None
        else jacquinot_aperture_diameter(omega, focal_length),
    )


@dataclass(frozen=True)
class Resolvability:
    """Whether a scan resolves a line of a given width.

    ``resolved`` is True when the line's FWHM exceeds the instrument line shape's FWHM
    (``ils_fwhm_per_cm``); ``needed_max_opd_cm`` is the OPD at which the two are equal
    (the line is then just resolved; twice it measures the width well, common practice).
    """

    line_fwhm_per_cm: float
    ils_fwhm_per_cm: float
    resolved: bool
    ratio: float
    needed_max_opd_cm: float


def resolvability(
    linewidth_nm: float, wavelength_nm: float, max_opd_cm: float, *,
    apodization: str = "happ-genzel",
) -> Resolvability:
    """Whether a line of FWHM ``linewidth_nm`` at ``wavelength_nm`` is resolved by a scan to
    ``max_opd_cm``: ``Δσ_line = Δλ/λ²`` against ``fwhm_factor/(2L)``."""
    from ftsource.spectrum.apodization import get_apodization

    w = _positive("linewidth_nm", linewidth_nm)
    lam = _positive("wavelength_nm", wavelength_nm)
    L = _positive("max_opd_cm", max_opd_cm)
    apo = get_apodization(apodization)
    line = 1e7 * w / lam**2
    ils = apo.fwhm_factor / (2.0 * L)
    return Resolvability(
        line_fwhm_per_cm=line,
        ils_fwhm_per_cm=ils,
        resolved=line > ils,
        ratio=line / ils,
        needed_max_opd_cm=apo.fwhm_factor / (2.0 * line),
    )


# ---- ray-transfer matrices: rays (height y, slope u), matrices act as [y, u]ᵀ → M·[y, u]ᵀ

def thin_lens_matrix(focal_length: float) -> tuple[tuple[float, float], tuple[float, float]]:
    """``[[1, 0], [−1/f, 1]]`` (Saleh & Teich §1.4)."""
    f = float(focal_length)
    if not math.isfinite(f) or f == 0:
        raise OptionError(f"focal_length = {focal_length!r} is not allowed; it must be finite "
                          "and non-zero (negative for a diverging lens)")
    return ((1.0, 0.0), (-1.0 / f, 1.0))


def propagation_matrix(distance: float) -> tuple[tuple[float, float], tuple[float, float]]:
    """``[[1, d], [0, 1]]``: free propagation over ``d`` (Saleh & Teich §1.4)."""
    d = float(distance)
    if not math.isfinite(d):
        raise OptionError(f"distance = {distance!r} is not allowed; it must be finite")
    return ((1.0, d), (0.0, 1.0))


def _matmul(a, b):
    return tuple(
        tuple(sum(a[i][k] * b[k][j] for k in range(2)) for j in range(2)) for i in range(2)
    )


def two_lens_matrix(f1: float, f2: float, spacing: float):
    """System matrix of lens ``f1``, a gap ``spacing``, then lens ``f2``:
    ``L(f2)·T(d)·L(f1)`` (the first element acts first, so it stands rightmost)."""
    return _matmul(thin_lens_matrix(f2), _matmul(propagation_matrix(spacing), thin_lens_matrix(f1)))


def collimator_spacing(f1: float, f2: float) -> float:
    """Lens spacing that makes two thin lenses afocal (parallel rays stay parallel):
    ``d = f1 + f2``.

    The system's ``C`` element is ``−1/f1 − 1/f2 + d/(f1·f2)``; an afocal system has
    ``C = 0`` (Saleh & Teich §1.4; Hecht §6.2). With a negative ``f1`` this is a Galilean
    expander. Raises OptionError when ``f1 + f2 ≤ 0`` (no real spacing collimates).
    """
    for n, v in (("f1", f1), ("f2", f2)):
        if not (math.isfinite(float(v)) and float(v) != 0):
            raise OptionError(f"{n} = {v!r} is not allowed; give a finite, non-zero focal length")
    d = float(f1) + float(f2)
    if not d > 0:
        raise OptionError(
            f"f1 + f2 = {d:g}: no positive spacing makes these lenses afocal; use lenses whose "
            "focal lengths sum to a positive length"
        )
    return d


def residual_divergence(f1: float, f2: float, spacing_error: float, beam_radius: float) -> float:
    """Slope (rad) of the marginal ray leaving the pair when the spacing is ``f1+f2+δ``.

    A ray entering parallel at height ``r`` leaves with slope ``C·r`` where
    ``C = δ/(f1·f2)`` (the ``C`` element at ``d = f1 + f2 + δ``): the half-angle divergence
    (positive) or convergence (negative) of a beam of radius ``r``. Same length unit for
    all four arguments.
    """
    collimator_spacing(f1, f2)
    _positive("beam_radius", beam_radius)
    if not math.isfinite(float(spacing_error)):
        raise OptionError(f"spacing_error = {spacing_error!r} is not allowed; it must be finite")
    return float(spacing_error) * float(beam_radius) / (float(f1) * float(f2))


def focal_length_from_distances(
    object_distance: float, image_distance: float,
    u_object: float = 0.0, u_image: float = 0.0,
) -> tuple[float, float]:
    """Focal length of a thin lens from a sharp image: ``1/f = 1/s_o + 1/s_i`` (Hecht §5.2).

    Returns ``(f, u_f)`` with ``u_f`` from the distances' standard uncertainties by first-order
    propagation (JCGM 100 eq. 10): ``∂f/∂s_o = s_i²/(s_o+s_i)²``, ``∂f/∂s_i =
    s_o²/(s_o+s_i)²``. Both distances are positive for a real object and a real image.
    """
    so = _positive("object_distance", object_distance)
    si = _positive("image_distance", image_distance)
    for n, v in (("u_object", u_object), ("u_image", u_image)):
        if not (math.isfinite(float(v)) and float(v) >= 0):
            raise OptionError(f"{n} = {v!r} is not allowed; give a finite value ≥ 0")
    s = so + si
    f = so * si / s
    u = math.hypot(si**2 / s**2 * float(u_object), so**2 / s**2 * float(u_image))
    return f, u


def plan_report(args) -> tuple[dict, list[str]]:
    """The ``ftsource plan`` command: each part whose options are given, as a JSON-ready
    dict and as text lines.

    ``args`` carries the command's options as text with units, by their flags' names
    (``resolution``, ``band``, ``sample_rate``, ``linewidth``, ``lens1``, ...).

    Raises
    ------
    OptionError
        A bad or missing option, or nothing to plan.
    """
    from dataclasses import asdict

    from ftsource.parameters import positive_value
    from ftsource.quantity import parse_quantity, to_float


    lo_text, sep, hi_text = args.band.partition(":")
    if not sep:
        raise OptionError(f"--band {quote(args.band)} is not QTY:QTY; write e.g. 400nm:1100nm")
    lo = positive_value(lo_text, "nm", "--band")
    hi = positive_value(hi_text, "nm", "--band")
    report: dict = {}
    lines: list[str] = []
    scan = None
    if args.resolution is not None:
        q = parse_quantity(args.resolution, name="--resolution")
        if q.unit.physical_type == "length":
            res = positive_value(args.resolution, "nm", "--resolution") * 1e7 / lo**2
        else:
            res = positive_value(args.resolution, "1/cm", "--resolution")
        f_coll = None if args.focal_length is None else positive_value(args.focal_length, "mm",
                                                              "--focal-length")
        scan = plan_scan(
            res, lo, longest_wavelength_nm=hi,
            sample_rate_hz=positive_value(args.sample_rate, "Hz", "--sample-rate"),
            bandwidth_fraction=args.bandwidth_fraction,
            reference_wavelength_nm=positive_value(args.reference_wavelength, "nm",
                                         "--reference-wavelength"),
            apodization=args.apodization, focal_length=f_coll,
        )
        report["scan"] = {**asdict(scan), "aperture_diameter_mm": scan.aperture_diameter}
        report["scan"].pop("aperture_diameter")
        lines += [
            f"scan for {res:.4g} cm⁻¹ ({res * lo**2 / 1e7:.3g} nm at {lo:g} nm) over "
            f"{lo:g}–{hi:g} nm, {scan.apodization} apodization:",
            f"  maximum OPD ±{scan.max_opd_cm * 10:.4g} mm: mirror travel "
            f"{scan.mirror_travel_cm * 10:.4g} mm (±{scan.mirror_travel_cm * 5:.4g} mm about "
            "zero path difference)",
            f"  mirror speed at most {scan.mirror_speed_cm_s * 1e4:.4g} µm/s (OPD speed "
            f"{scan.opd_speed_cm_s * 1e4:.4g} µm/s) at {scan.sample_rate_hz:g} Hz sampling",
            f"  fringe rates: {scan.source_fringe_rate_hz:.4g} Hz at {lo:g} nm, reference "
            f"{scan.reference_fringe_rate_hz:.4g} Hz; one sweep takes {scan.sweep_time_s:.3g} s",
            f"  largest field (Jacquinot): {scan.solid_angle_sr:.3g} sr"
            + ("" if scan.aperture_diameter is None else
               f", a field stop of {scan.aperture_diameter:.3g} mm diameter at "
               f"{f_coll:g} mm focal length"),
        ]
    if args.linewidth is not None:
        lam = (lo if args.wavelength is None
               else positive_value(args.wavelength, "nm", "--wavelength"))
        if args.max_opd is not None:
            L = positive_value(args.max_opd, "cm", "--max-opd")
        elif scan is not None:
            L = scan.max_opd_cm
        else:
            raise OptionError("--linewidth needs --max-opd or --resolution (the scan to check)")
        r = resolvability(positive_value(args.linewidth, "nm", "--linewidth"), lam, L,
                             apodization=args.apodization)
        report["resolvability"] = {**asdict(r), "max_opd_cm": L, "wavelength_nm": lam}
        lines.append(
            f"a line {r.line_fwhm_per_cm:.3g} cm⁻¹ wide at {lam:g} nm is "
            + ("resolved" if r.resolved else "NOT resolved")
            + f" by a scan to ±{L * 10:.4g} mm (line shape {r.ils_fwhm_per_cm:.3g} cm⁻¹); "
            f"it is just resolved from ±{r.needed_max_opd_cm * 10:.4g} mm, measured well from "
            f"about ±{2 * r.needed_max_opd_cm * 10:.4g} mm"
        )
    if (args.lens1 is None) != (args.lens2 is None):
        raise OptionError("--lens1 and --lens2 go together: give both focal lengths")
    if args.lens1 is not None:
        f1 = to_float(args.lens1, "mm", name="--lens1")
        f2 = to_float(args.lens2, "mm", name="--lens2")
        d = collimator_spacing(f1, f2)
        err_mm = to_float(args.spacing_error, "mm", name="--spacing-error")
        radius = positive_value(args.beam_diameter, "mm", "--beam-diameter") / 2
        theta = residual_divergence(f1, f2, err_mm, radius)
        report["collimator"] = {"f1_mm": f1, "f2_mm": f2, "spacing_mm": d,
                                "magnification": -f2 / f1, "spacing_error_mm": err_mm,
                                "beam_diameter_mm": 2 * radius, "residual_divergence_rad": theta}
        lines.append(
            f"collimator: lenses {f1:g} mm and {f2:g} mm spaced {d:.4g} mm (d = f1 + f2) expand "
            f"the beam {abs(f2 / f1):.3g}×; a spacing error of {err_mm:g} mm leaves a "
            f"{2 * radius:g} mm beam with a half-angle of {abs(theta) * 1e3:.3g} mrad"
        )
    if (args.object_distance is None) != (args.image_distance is None):
        raise OptionError("--object-distance and --image-distance go together: give both")
    if args.object_distance is not None:
        u_d = to_float(args.distance_uncertainty, "mm", name="--distance-uncertainty")
        f, u_f = focal_length_from_distances(
            positive_value(args.object_distance, "mm", "--object-distance"),
            positive_value(args.image_distance, "mm", "--image-distance"), u_d, u_d)
        report["lens"] = {"focal_length_mm": f, "u_focal_length_mm": u_f}
        lines.append(f"lens: focal length {f:.4g} mm (u = {u_f:.2g} mm, thin-lens equation)")
    if not report:
        raise OptionError(
            "nothing to plan: give --resolution (a scan), --linewidth with --max-opd, --lens1 "
            "with --lens2, or --object-distance with --image-distance"
        )
    return report, lines
