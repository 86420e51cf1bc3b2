"""Longitudinal modes of a multimode laser: the comb of lines and the revivals of its fringes.

A Fabry–Pérot laser cavity of optical (group) length ``n_g·L`` oscillates on modes equally
spaced in vacuum wavenumber by ``Δσ = 1/(2 n_g L)`` (free spectral range; ``Δν = c·Δσ``,
``Δλ ≈ λ²Δσ``). :func:`find_mode_comb` recognises such a comb among fitted line centres and
measures it.

The interferogram of a comb of narrow modes is periodic in OPD with period ``1/Δσ = 2 n_g L``:
the fringe visibility falls after ZPD and revives whenever the OPD is a whole number of cavity
round trips (the modes are back in phase). :func:`check_revivals` looks for those revivals in
the visibility envelope, a check of the comb that does not go through the transform.

Kernel units: wavenumber in cm⁻¹ (vacuum), OPD and lengths in cm, wavelength in nm where the
name says so, frequency in GHz where the name says so.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource._checks import finite_pair
from ftsource.errors import AnalysisError, OptionError, RecordError
from ftsource.measure.coherence import C_CM_PER_S, analytic_envelope

#: A comb may leave out kept lines carrying at most this fraction of their summed intensity.
OFF_COMB_FRACTION = 0.1
#: ... and none of them may exceed this fraction of the strongest line (common practice).
OFF_COMB_PEAK = 0.2
#: Each mode must be at least this many times narrower than the spacing (FWHM ≤ spacing/4:
#: neighbouring modes overlap by under 1 % of their peak for a Lorentzian, common practice).
MODE_NARROWNESS = 4.0

__all__ = [
    "OFF_COMB_FRACTION",
    "OFF_COMB_PEAK",
    "MODE_NARROWNESS",
    "ModeComb",
    "RevivalCheck",
    "find_mode_comb",
    "revival_opd_cm",
    "check_revivals",
]


@dataclass(frozen=True)
class ModeComb:
    """An equally spaced comb of laser modes.

    Attributes
    ----------
    n_modes : int
        Number of lines that belong to the comb (observed modes).
    n_missing : int
        Modes missing inside the comb (single gaps of twice the spacing).
    mode_numbers : tuple of int
        Integer mode number of each observed line, 0 for the lowest wavenumber.
    centres_per_cm, intensities : tuple of float
        The comb's lines, ascending in wavenumber.
    spacing_per_cm, u_spacing_per_cm : float
        Mode spacing ``Δσ`` from the least-squares line ``σ_m = σ_0 + m·Δσ`` and its standard
        uncertainty, cm⁻¹.
    spacing_nm, u_spacing_nm : float
        ``Δλ = 10⁷·Δσ/σ_c²`` at the centroid ``σ_c`` (first order in Δσ/σ_c), nm.
    spacing_ghz, u_spacing_ghz : float
        Free spectral range ``Δν = c·Δσ`` (c = 299 792 458 m/s exact), GHz.
    centroid_per_cm, centroid_nm : float
        Intensity-weighted mean wavenumber of the comb's lines, and its vacuum wavelength.
    envelope_fwhm_per_cm, envelope_fwhm_nm : float
        FWHM of a Gaussian fitted to the mode intensities against wavenumber (NaN when the
        intensities do not peak inside the comb); nm at the centroid, first order.
    cavity_optical_length_cm, u_cavity_optical_length_cm : float
        ``n_g·L = 1/(2Δσ)`` (= λ²/(2Δλ)), cm.
    residual_rms_per_cm : float
        RMS of the centres about the fitted comb, cm⁻¹.
    off_comb_per_cm : tuple of float
        Kept lines (above ``min_fraction``) that are not on the comb: weak features that the
        comb's modes outweigh (at most :data:`OFF_COMB_FRACTION` of the kept intensity), for
        the caller to flag; empty for a clean comb.
    """

    n_modes: int
    n_missing: int
    mode_numbers: tuple[int, ...]
    centres_per_cm: tuple[float, ...]
    intensities: tuple[float, ...]
    spacing_per_cm: float
    u_spacing_per_cm: float
    spacing_nm: float
    u_spacing_nm: float
    spacing_ghz: float
    u_spacing_ghz: float
    centroid_per_cm: float
    centroid_nm: float
    envelope_fwhm_per_cm: float
    envelope_fwhm_nm: float
    cavity_optical_length_cm: float
    u_cavity_optical_length_cm: float
    residual_rms_per_cm: float
    off_comb_per_cm: tuple[float, ...] = ()

    @property
    def revival_opd_cm(self) -> float:
        """OPD period of the visibility revivals, ``1/Δσ = 2 n_g L``, cm."""
        return revival_opd_cm(self.spacing_per_cm)


@dataclass(frozen=True)
class RevivalCheck:
    """Outcome of :func:`check_revivals`.

    Attributes
    ----------
    confirmed : bool or None
        True when revivals were found at multiples of ``1/Δσ`` (within the tolerance), False
        when the scan reaches a revival but it is missing or elsewhere, None when the scan is
        shorter than one revival period.
    measured_period_cm : float
        Revival period measured from the envelope, cm (NaN when none was found).
    reason : str
        What was found, in words.
    """

    confirmed: bool | None
    measured_period_cm: float
    reason: str


def _comb_numbers(d: np.ndarray, base: float, rtol: float) -> np.ndarray | None:
    """Multiples k ∈ {1, 2} of ``base`` for each consecutive spacing, or None if any fails."""
    k = np.rint(d / base)
    if np.any((k < 1) | (k > 2)):
        return None
    if np.any(np.abs(d - k * base) > rtol * base):
        return None
    return k.astype(int)


def _comb_steps(d: np.ndarray, rtol: float) -> np.ndarray | None:
    """Steps in mode number between neighbouring lines, tried against the median and then the
    smallest gap as the spacing; None when neither fits."""
    for base in (float(np.median(d)), float(np.min(d))):
        k = _comb_numbers(d, base, rtol)
        if k is not None:
            return k
    return None


def _comb_subset(c: np.ndarray, a: np.ndarray, d: np.ndarray, rtol: float):
    """Mask of the lines (sorted ``c``) that form the comb holding the most intensity, or None.

    All lines when they form a comb themselves; otherwise the best comb among them of at least
    3 modes whose left-off lines carry at most :data:`OFF_COMB_FRACTION` of the intensity,
    none above :data:`OFF_COMB_PEAK` of the strongest line.
    """
    for base in (float(np.median(d)), float(np.min(d))):
        if _comb_numbers(d, base, rtol) is not None:
            return np.ones(c.size, bool)
    top = np.argsort(a)[::-1][:6]
    best, best_score = None, 0.0
    for i in top:
        for j in top:
            if j <= i:
                continue
            for div in (1, 2, 3):
                base = abs(c[j] - c[i]) / div
                if base <= 0:
                    continue
                n = (c - c[i]) / base
                on = np.abs(n - np.rint(n)) <= rtol
                if np.count_nonzero(on) < 3:
                    continue
                cc = c[on]
                if _comb_numbers(np.diff(cc), base, rtol) is None:
                    continue
                score = float(np.sum(a[on]))
                # the larger base wins a tie (a half spacing fits too, with every mode "missing")
                if score > best_score * (1 + 1e-9):
                    best, best_score = on, score
    if best is None or best_score < (1.0 - OFF_COMB_FRACTION) * float(np.sum(a)):
        return None
    if np.any(a[~best] > OFF_COMB_PEAK * np.max(a)):
        return None  # a strong line between modes: a second source, not an artefact
    return best


def find_mode_comb(
    centres_per_cm: np.ndarray,
    intensities: np.ndarray,
    *,
    min_fraction: float = 0.05,
    rtol: float = 0.1,
    u_centres_per_cm: np.ndarray | None = None,
    widths_per_cm: np.ndarray | None = None,
) -> ModeComb | None:
    """Recognise and measure an equally spaced comb of modes among fitted lines.

    Lines weaker than ``min_fraction`` of the strongest are set aside. The rest, sorted by
    wavenumber, form a comb when there are at least 3 and every consecutive spacing is 1 or 2
    times a base spacing within ``rtol`` of it (2 = one missing mode); the base is the median
    spacing, or failing that the smallest. When not every kept line fits, the comb is sought
    among them: each spacing between two of the strongest lines (divided by 1–3) is tried as
    the base, and the comb of at least 3 modes that holds the most intensity is kept — provided
    the lines left off it carry at most :data:`OFF_COMB_FRACTION` of the kept intensity and
    none exceeds :data:`OFF_COMB_PEAK` of the strongest (a weak artefact does not hide a comb;
    a strong line between modes, a second source, means no comb). The lines left off are
    returned in ``off_comb_per_cm``. With ``widths_per_cm`` (each line's intrinsic FWHM, or its
    upper bound) a comb needs every mode :data:`MODE_NARROWNESS` times narrower than the
    spacing: broad overlapping "modes" are the structure of one broad line, not a comb. The
    spacing is then the least-squares slope of centre against integer mode number, with its
    standard uncertainty from the residual scatter (``s²/Σ(m − m̄)²``, ``s²`` the residual
    variance on ``n − 2`` degrees of freedom; 0 for a perfect comb). When the centres' own
    standard uncertainties are given, the slope's uncertainty propagated from them,
    ``√(Σ(m − m̄)² u_i²)/Σ(m − m̄)²`` (weak edge modes with large u weigh most), is used when it
    is the larger: a residual scatter on a few degrees of freedom is a poor estimate.

    The envelope FWHM is that of a Gaussian fitted to the intensities against wavenumber by
    weighted least squares of ``ln I`` on a parabola, with weights ``I²`` (Guo 2011), exact for
    Gaussian intensities and insensitive to the weak modes.

    Parameters
    ----------
    centres_per_cm : array_like
        Fitted vacuum line centres, cm⁻¹.
    intensities : array_like
        Their integrated intensities (any scale, >= 0).
    min_fraction : float, optional
        Fraction of the strongest line below which lines are ignored. The default 5 % keeps
        the modes that are well above a typical spectrum's noise and leaves out weak spurious
        lines (ghosts, side modes of a different origin); common practice, not a standard.
    rtol : float, optional
        Allowed deviation of a spacing from its multiple of the base spacing, relative to the
        base spacing.
    u_centres_per_cm : array_like, optional
        Standard uncertainties of the centres (same order as ``centres_per_cm``).
    widths_per_cm : array_like, optional
        Intrinsic FWHM (or its upper bound) of each line, cm⁻¹ (same order).

    Returns
    -------
    ModeComb or None
        None when fewer than 3 lines remain or they are not equally spaced.

    Raises
    ------
    AnalysisError
        If the arrays do not match, are not finite, an intensity is negative or none is
        positive.
    OptionError
        If ``min_fraction`` is not in [0, 1) or ``rtol`` not in (0, 0.5).

    References
    ----------
    .. [1] A. E. Siegman, *Lasers*, University Science Books (1986), §11.3 (axial modes
       spaced by c/(2 n_g L)).
    .. [2] H. Guo, 'A simple algorithm for fitting a Gaussian function', IEEE Signal Process.
       Mag. 28(5) (2011) 134-137.
    .. [3] JCGM 100:2008 (GUM), §H.3 (uncertainty of a least-squares straight line).
    """
    c, a, uc, wd = _comb_inputs(centres_per_cm, intensities, u_centres_per_cm, widths_per_cm,
                                min_fraction, rtol)
    if c.size < 3:
        return None
    d = np.diff(c)
    if np.any(d <= 0):
        return None
    on = _comb_subset(c, a, d, rtol)
    if on is None:
        return None
    off = tuple(float(v) for v in c[~on])
    c, a = c[on], a[on]
    uc, wd = (None if v is None else v[on] for v in (uc, wd))
    k = _comb_steps(np.diff(c), rtol)
    if k is None:
        return None
    m = np.concatenate([[0], np.cumsum(k)])
    n = c.size
    slope, u_slope, resid = _spacing_fit(c, m, uc)
    centroid = float(np.sum(a * c) / np.sum(a))
    nm_per_cm1 = 1e7 / centroid**2  # dλ/dσ at the centroid, nm per cm⁻¹
    ghz = C_CM_PER_S * 1e-9

    fwhm = _envelope_fwhm(c, a, centroid)
    if wd is not None and np.any(np.nan_to_num(wd, nan=np.inf) > slope / MODE_NARROWNESS):
        return None
    return ModeComb(
        n_modes=int(n),
        n_missing=int(np.sum(k == 2)),
        mode_numbers=tuple(int(v) for v in m),
        centres_per_cm=tuple(float(v) for v in c),
        intensities=tuple(float(v) for v in a),
        spacing_per_cm=slope,
        u_spacing_per_cm=u_slope,
        spacing_nm=slope * nm_per_cm1,
        u_spacing_nm=u_slope * nm_per_cm1,
        spacing_ghz=slope * ghz,
        u_spacing_ghz=u_slope * ghz,
        centroid_per_cm=centroid,
        centroid_nm=1e7 / centroid,
        envelope_fwhm_per_cm=fwhm,
        envelope_fwhm_nm=fwhm * nm_per_cm1,
        cavity_optical_length_cm=1.0 / (2.0 * slope),
        u_cavity_optical_length_cm=u_slope / (2.0 * slope**2),
        residual_rms_per_cm=float(np.sqrt(np.mean(resid**2))),
        off_comb_per_cm=off,
    )


def _comb_inputs(centres_per_cm, intensities, u_centres_per_cm, widths_per_cm, min_fraction,
                 rtol):
    """The lines of :func:`find_mode_comb` checked, kept above ``min_fraction`` of the
    strongest and sorted by wavenumber: ``(centres, intensities, u or None, widths or None)``."""
    c, a = finite_pair(centres_per_cm, intensities, "centres_per_cm", "intensities")
    if np.any(a < 0):
        raise AnalysisError("intensities must be >= 0")
    if not (0.0 <= min_fraction < 1.0):
        raise OptionError(f"min_fraction must lie in [0, 1), got {min_fraction!r}")
    if not (0.0 < rtol < 0.5):
        raise OptionError(f"rtol must lie in (0, 0.5), got {rtol!r}")
    if c.size == 0 or not np.max(a) > 0:
        raise AnalysisError("no line has a positive intensity")
    uc = None
    if u_centres_per_cm is not None:
        uc = np.asarray(u_centres_per_cm, dtype=float)
        if uc.shape != c.shape:
            raise AnalysisError("u_centres_per_cm must match centres_per_cm")
        uc = np.where(np.isfinite(uc) & (uc > 0), uc, 0.0)
    wd = None
    if widths_per_cm is not None:
        wd = np.asarray(widths_per_cm, dtype=float)
        if wd.shape != c.shape:
            raise AnalysisError("widths_per_cm must match centres_per_cm")
    keep = a >= min_fraction * np.max(a)
    order = np.argsort(c[keep])
    return (c[keep][order], a[keep][order], None if uc is None else uc[keep][order],
            None if wd is None else wd[keep][order])


def _spacing_fit(c, m, uc):
    """Least-squares line ``c = c̄ + Δσ·(m − m̄)`` through the modes: ``(Δσ, u(Δσ),
    residuals)``; ``u`` is the larger of the scatter's and the centres' own."""
    n = c.size
    mm = m - m.mean()
    sxx = float(np.sum(mm * mm))
    slope = float(np.sum(mm * (c - c.mean())) / sxx)
    resid = c - (c.mean() + slope * mm)
    s2 = float(np.sum(resid**2) / (n - 2)) if n > 2 else 0.0
    u_slope = float(np.sqrt(s2 / sxx))
    if uc is not None:
        u_slope = max(u_slope, float(np.sqrt(np.sum(mm**2 * uc**2)) / sxx))
    return slope, u_slope, resid


def _envelope_fwhm(c, a, centroid) -> float:
    """FWHM (cm⁻¹) of the Gaussian envelope: an intensity-weighted parabola through ln I
    (Guo 2011); NaN when fewer than three modes or the parabola opens upwards."""
    pos = a > 0
    if np.count_nonzero(pos) < 3:
        return float("nan")
    coef = np.polyfit(c[pos] - centroid, np.log(a[pos]), 2, w=a[pos])
    return float(2.0 * np.sqrt(np.log(2.0) / -coef[0])) if coef[0] < 0 else float("nan")


def revival_opd_cm(spacing_per_cm: float) -> float:
    """OPD period of the visibility revivals of a multimode laser, ``1/Δσ = 2 n_g L``, cm.

    Parameters
    ----------
    spacing_per_cm : float
        Mode spacing Δσ, cm⁻¹ (> 0).

    Returns
    -------
    float
        ``1/Δσ``, cm: one cavity round trip of optical path.

    Raises
    ------
    OptionError
        If the spacing is not a positive finite number.

    References
    ----------
    .. [1] A. E. Siegman, *Lasers*, University Science Books (1986), §11.3.
    .. [2] M. Born and E. Wolf, *Principles of Optics*, 7th ed., Cambridge (1999), §7.5.8
       (visibility of fringes of a source of several spectral components).
    """
    s = float(spacing_per_cm)
    if not (np.isfinite(s) and s > 0):
        raise OptionError(
            f"spacing_per_cm must be a positive finite number (cm^-1), got {spacing_per_cm!r}"
        )
    return 1.0 / s


def _peak_centroid(u: np.ndarray, e: np.ndarray, j: int) -> tuple[float, bool]:
    """Sub-sample position of the envelope peak at index j: centroid of e² − (e_j/2)² over the
    contiguous region where e ≥ e_j/2. Returns (position, touches_end)."""
    t = e[j] / 2
    lo = j
    while lo > 0 and e[lo - 1] >= t:
        lo -= 1
    hi = j
    while hi < e.size - 1 and e[hi + 1] >= t:
        hi += 1
    w = np.clip(e[lo : hi + 1] ** 2 - t * t, 0.0, None)
    return float(np.sum(u[lo : hi + 1] * w) / np.sum(w)), (lo == 0 or hi == e.size - 1)


def check_revivals(
    x_cm: np.ndarray,
    y: np.ndarray,
    spacing_per_cm: float,
    *,
    zpd_x_cm: float | None = None,
    tol: float = 0.05,
    min_contrast: float = 2.0,
) -> RevivalCheck:
    """Look for the visibility revivals of a multimode laser at multiples of ``1/Δσ``.

    On the longer side of ZPD, the envelope ``|analytic signal|`` is followed out of the
    central burst (to where it falls below half its ZPD value); the first revival is the
    highest envelope maximum between there and ``1.5/Δσ``, accepted when it stands at least
    ``min_contrast`` times above the lowest envelope before it. Its position (the centroid of
    the peak, as for ZPD in :mod:`ftsource.interferogram.zpd`) and those of further revivals
    near its multiples within the scan give the measured period ``Σk·x_k/Σk²``. Before the centroids
    are taken the envelope is divided by the exponential fitted (least squares in ``ln``)
    through its ZPD value and the revival heights: modes of finite width make revivals
    decay, ``exp(−πw x)`` for Lorentzian modes of FWHM ``w``, and the decay would pull each
    centroid towards ZPD. The comb is confirmed when the period is within ``tol`` of
    ``1/Δσ``.

    Parameters
    ----------
    x_cm : array_like
        Uniform OPD grid, cm (either direction).
    y : array_like
        Interferogram samples.
    spacing_per_cm : float
        Mode spacing Δσ from :func:`find_mode_comb`, cm⁻¹.
    zpd_x_cm : float, optional
        OPD of ZPD, cm; by default the highest point of the envelope.
    tol : float, optional
        Relative tolerance on the period, and the half-width of the search window around the
        further multiples, in units of ``1/Δσ``.
    min_contrast : float, optional
        How many times a revival must stand above the envelope minimum before it.

    Returns
    -------
    RevivalCheck
        ``confirmed=None`` when the scan reaches less than ``1/Δσ`` from ZPD on either side.

    Raises
    ------
    RecordError
        If the grid is not uniform, ``y`` does not match it, or fewer than 16 samples.
    OptionError
        If ``spacing_per_cm``, ``tol``, ``min_contrast`` or ``zpd_x_cm`` is out of range.

    References
    ----------
    .. [1] M. Born and E. Wolf, *Principles of Optics*, 7th ed., Cambridge (1999), §7.5.8.
    .. [2] A. E. Siegman, *Lasers*, University Science Books (1986), §11.3.
    .. [3] D. Gabor, 'Theory of communication', J. IEE 93 (1946) 429-457 (analytic signal).
    """

    P = revival_opd_cm(spacing_per_cm)
    if not (0.0 < tol < 0.5):
        raise OptionError(f"tol must lie in (0, 0.5), got {tol!r}")
    if not (np.isfinite(min_contrast) and min_contrast >= 1.0):
        raise OptionError(f"min_contrast must be a finite number >= 1, got {min_contrast!r}")
    x, env, margin, x0 = _envelope_from_zpd(x_cm, y, zpd_x_cm)
    u, e = _longer_side(x, env, x0, margin)
    reach = float(u[-1]) if u.size else 0.0
    if reach < P:
        return RevivalCheck(
            None,
            float("nan"),
            f"not reached: the scan extends {reach:.4g} cm from ZPD, one revival period "
            f"1/spacing is {P:.4g} cm",
        )
    e0 = float(np.interp(x0, x, env))
    out = np.nonzero(e < 0.5 * e0)[0]
    if out.size == 0 or u[out[0]] >= P:
        return RevivalCheck(
            False,
            float("nan"),
            "the visibility does not fall to half its ZPD value before 1/spacing: no revival "
            "structure",
        )
    i0 = int(out[0])
    seg = np.nonzero((np.arange(u.size) >= i0) & (u <= 1.5 * P))[0]
    j = int(seg[np.argmax(e[seg])])
    dip = float(np.min(e[i0 : j + 1]))
    if j == u.size - 1 or e[j] < min_contrast * dip:
        return RevivalCheck(
            False,
            float("nan"),
            f"no revival of the visibility between the central burst and {min(1.5 * P, reach):.4g}"
            " cm from ZPD",
        )
    peaks, ks = _revival_peaks(u, e, i0, j, P, reach, tol, min_contrast)
    xs, kept = _revival_centroids(u, e, e0, j, peaks, ks)
    ks_a, xs_a = np.array(kept, float), np.array(xs)
    period = float(np.sum(ks_a * xs_a) / np.sum(ks_a * ks_a))
    rel = period / P - 1.0
    found = f"{len(xs)} revival(s) at OPD {', '.join(f'{v:.5g}' for v in xs)} cm from ZPD"
    if abs(rel) <= tol:
        return RevivalCheck(
            True,
            period,
            f"{found}; period {period:.6g} cm matches 1/spacing = {P:.6g} cm ({rel:+.2%})",
        )
    return RevivalCheck(
        False,
        period,
        f"{found}; period {period:.6g} cm differs from 1/spacing = {P:.6g} cm by {rel:+.2%} "
        f"(allowed {tol:.0%})",
    )


def _envelope_from_zpd(x_cm, y, zpd_x_cm):
    """The record on increasing OPD, its envelope, the envelope's untrusted end margin and
    the OPD of ZPD (given, or the envelope's maximum)."""
    from ftsource.interferogram.zpd import interferogram_arrays

    x, yy, step = interferogram_arrays(x_cm, y)
    if x.size < 16:
        raise RecordError(f"an interferogram needs at least 16 samples here, got {x.size}")
    if step < 0:
        x, yy = x[::-1], yy[::-1]
    env, margin = analytic_envelope(yy)
    if zpd_x_cm is None:
        return x, env, margin, float(x[int(np.argmax(env))])
    x0 = float(zpd_x_cm)
    if not (np.isfinite(x0) and x[0] <= x0 <= x[-1]):
        raise OptionError(
            f"zpd_x_cm must lie inside the record [{x[0]:.6g}, {x[-1]:.6g}] cm, got "
            f"{zpd_x_cm!r}"
        )
    return x, env, margin, x0


def _longer_side(x, env, x0: float, margin: int):
    """The envelope on the longer side of ZPD as ``(distance from ZPD, envelope)``, with the
    untrusted far-end margin removed."""
    n = x.size
    if x[-1] - x0 >= x0 - x[0]:
        idx = np.arange(n)[x >= x0][: max(n - margin - int(np.searchsorted(x, x0)), 0)]
    else:
        idx = np.arange(n)[x <= x0][::-1]
        idx = idx[: max(idx.size - margin, 0)]
    return np.abs(x[idx] - x0), env[idx]


def _revival_peaks(u, e, i0: int, j: int, P: float, reach: float, tol: float,
                   min_contrast: float):
    """Indices of the first revival ``j`` and of the envelope maxima near its multiples that
    stand ``min_contrast`` above the lowest envelope before them, with their orders."""
    peaks, ks = [j], [1]
    k = 2
    while k * u[j] + tol * P <= reach:
        win = np.nonzero(np.abs(u - k * u[j]) <= tol * P)[0]
        jk = int(win[np.argmax(e[win])])
        if e[jk] >= min_contrast * float(np.min(e[i0 : jk + 1])):
            peaks.append(jk)
            ks.append(k)
        k += 1
    return peaks, ks


def _revival_centroids(u, e, e0: float, j: int, peaks, ks):
    """The revivals' centroids (cm from ZPD) and orders, peaks touching a window edge left out.

    Modes of finite width make the revivals decay (as exp(−πw x) for Lorentzian modes of FWHM
    w), which pulls each peak's centroid towards ZPD; the envelope is flattened by the
    exponential through the ZPD value and the revival heights before the centroids are taken.
    """
    heights = np.r_[e0, e[peaks]]
    where = np.r_[0.0, u[peaks]]
    rate = -float(np.polyfit(where, np.log(heights), 1)[0])
    ef = e * np.exp(rate * u) if rate > 0 else e
    xs, kept = [], []
    for jk, kk in zip(peaks, ks, strict=True):
        xk, touches = _peak_centroid(u, ef, jk)
        if not touches:
            xs.append(xk)
            kept.append(kk)
    if not xs:
        xs, kept = [float(u[j])], [1]
    return xs, kept
