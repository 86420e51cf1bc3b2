"""Unequal glass in the two arms: a chirped centre burst and a phase smooth in wavenumber.

A Michelson with a plate beamsplitter and no compensating plate sends one beam through the
plate more often than the other. The extra glass of thickness ``t`` adds the phase
``φ(σ) = 2πσ·t·(n(σ) − 1)``: its linear part only moves the burst (the mirror is set on it),
but its curvature spreads a broad source's centre burst over many coherence lengths and
chirps it. The low-resolution phase of a short segment about ZPD (Mertz) then misses part of
the burst and interpolates a smeared phase, and the corrected spectrum ``Re[B e^{-iφ}]`` loses
amplitude where the phase is wrong: the band narrows and its peak moves.

This module handles that case in separate steps, each a pure function:

* :func:`burst_half_width_cm` — the burst's extent from its envelope (the magnitude of the
  analytic signal), out to where the envelope falls to a fraction of its peak;
* :func:`fit_polynomial_phase` — a weighted least-squares polynomial in ``σ − σ_c`` through
  the phase of the reliable bins (weight: the amplitude, since the phase noise is the noise
  over the amplitude); the phase of glass is smooth in σ, so a quartic follows it across an
  LED band;
* :func:`phase_error_ratio` — how far a corrected spectrum is from real: the energy of the
  imaginary residual over that of the real part, in the band;
* :func:`glass_thickness_cm` — the glass imbalance the curvature implies, as an N-BK7
  equivalent thickness, and :func:`optical_thickness_cm`, its optical thickness ``n·t``.

The group-delay dispersion in optical path, ``D = (1/2π)·d²φ/dσ²`` (cm²), is what the phase
measures; for glass ``D = t·dn_g/dσ`` with ``n_g = d(σn)/dσ`` the group index. Any glass
shows the same ``D`` for some thickness; the thickness is stated for N-BK7, the usual
beamsplitter substrate (a fused-silica plate is ~1.3× thicker for the same ``D``).

References
----------
.. [1] L. Mertz, "Auxiliary computation for Fourier spectrometry", Infrared Phys. 7, 17-23
   (1967) (phase correction from a low-resolution phase).
.. [2] P. R. Griffiths and J. A. de Haseth, *Fourier Transform Infrared Spectrometry*, 2nd
   ed., Wiley (2007), ch. 4 (phase errors from the beamsplitter and compensator; common
   practice to add a compensator plate of the same glass and thickness).
.. [3] SCHOTT AG, optical glass data sheet N-BK7 (517642.251): Sellmeier coefficients
   B1 = 1.03961212, B2 = 0.231792344, B3 = 1.01046945, C1 = 0.00600069867 µm²,
   C2 = 0.0200179144 µm², C3 = 103.560653 µm² (from memory; n_d = 1.5168 at 587.56 nm).
.. [4] D. Gabor, "Theory of communication", J. IEE 93, 429-457 (1946) (analytic signal).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.errors import AnalysisError, OptionError

__all__ = [
    "GlassImbalance",
    "PolynomialPhase",
    "glass_imbalance",
    "burst_half_width_cm",
    "fit_polynomial_phase",
    "phase_error_ratio",
    "glass_thickness_cm",
    "optical_thickness_cm",
    "bk7_index",
    "PHASE_ERROR_RATIO_MAX",
]

#: A corrected spectrum whose imaginary residual holds more than this fraction of the energy
#: of its real part in the band (an r.m.s. phase error above ~0.03 rad) gets the dispersion
#: treatment; it is what noise alone gives at a band signal-to-noise ratio of ~30.
PHASE_ERROR_RATIO_MAX = 1e-3

_BK7_B = (1.03961212, 0.231792344, 1.01046945)
_BK7_C = (0.00600069867, 0.0200179144, 103.560653)


def bk7_index(wavelength_nm):
    """Refractive index of SCHOTT N-BK7 at a vacuum wavelength (Sellmeier, 300-2500 nm).

    References
    ----------
    .. [1] SCHOTT N-BK7 data sheet (module references; coefficients from memory).
    """
    lam2 = (np.asarray(wavelength_nm, dtype=float) / 1e3) ** 2
    n2 = 1.0 + sum(b * lam2 / (lam2 - c) for b, c in zip(_BK7_B, _BK7_C, strict=True))
    return np.sqrt(n2)


def _bk7_group_index_slope(sigma_per_cm: float) -> float:
    """dn_g/dσ of N-BK7 at σ (cm), n_g = d(σn)/dσ, by central differences."""
    h = 1e-3 * sigma_per_cm

    def sn(s):
        return s * float(bk7_index(1e7 / s))

    return (sn(sigma_per_cm + h) - 2 * sn(sigma_per_cm) + sn(sigma_per_cm - h)) / h**2


def glass_thickness_cm(dispersion_cm2: float, centre_per_cm: float) -> float:
    """N-BK7 thickness whose group-delay dispersion at ``centre_per_cm`` is ``|dispersion|``.

    ``t = |D| / (dn_g/dσ)``, ``D`` in cm² (optical path per wavenumber), σ in cm⁻¹; the
    thickness is the total glass path one beam has in excess of the other (all passes).
    """
    return abs(float(dispersion_cm2)) / _bk7_group_index_slope(float(centre_per_cm))


def optical_thickness_cm(thickness_cm: float, centre_per_cm: float) -> float:
    """Optical thickness ``n·t`` of N-BK7 of thickness ``t`` at ``centre_per_cm``."""
    return float(bk7_index(1e7 / float(centre_per_cm))) * float(thickness_cm)


def burst_half_width_cm(x_cm, y, x_zpd_cm: float, *, level: float = 0.05) -> float:
    """Half-width of the centre burst: the largest distance from ZPD at which the envelope
    still exceeds ``level`` of its peak, walking out from ZPD on each side.

    The envelope is the magnitude of the analytic signal of ``y`` (mean removed), smoothed
    over ±2 samples; the walk stops at the first sample below the level (or above it but under
    three times the envelope's median, the noise floor), so fringes far from the burst do not
    count.

    Parameters
    ----------
    x_cm, y : array_like
        The interferogram on a uniform OPD grid.
    x_zpd_cm : float
        ZPD (from :func:`ftsource.interferogram.zpd.find_zpd`).
    level : float
        Fraction of the envelope's peak, in (0, 1).

    Returns
    -------
    float
        cm, at least one grid step.

    References
    ----------
    .. [1] D. Gabor (1946), analytic signal (module references).
    """
    from scipy.signal import hilbert

    if not 0.0 < level < 1.0:
        raise OptionError(f"level must lie in (0, 1), got {level!r}")
    x = np.asarray(x_cm, dtype=float)
    yy = np.asarray(y, dtype=float)
    env = np.abs(hilbert(yy - yy.mean()))
    env = np.convolve(env, np.ones(5) / 5.0, mode="same")
    step = abs(float(x[1] - x[0]))
    j = int(np.clip(np.round((x_zpd_cm - x[0]) / (x[1] - x[0])), 0, x.size - 1))
    peak = float(env[max(j - 2, 0): j + 3].max())
    floor = max(level * peak, 3.0 * float(np.median(env)))
    below = env < floor
    right = np.nonzero(below[j:])[0]
    left = np.nonzero(below[: j + 1][::-1])[0]
    r = int(right[0]) if right.size else x.size - 1 - j
    ell = int(left[0]) if left.size else j
    return max(r, ell, 1) * step


@dataclass(frozen=True)
class PolynomialPhase:
    """A phase ``φ(σ) = Σ c_k (σ − σ_c)^k`` fitted over ``band``, continued beyond it by the
    quadratic with the edge's value, slope and curvature.

    ``coefficients`` ascend in power (rad·cm^k); ``u_coefficients`` are their standard
    uncertainties from the weighted fit, scaled by the residual (Birge ratio ≥ 1).
    """

    centre_per_cm: float
    coefficients: tuple[float, ...]
    u_coefficients: tuple[float, ...]
    band: tuple[float, float]
    residual_rms_rad: float

    def _derivatives(self, sigma_per_cm, order: int) -> np.ndarray:
        """φ (``order`` 0) or φ' (1) inside ``band``; beyond it the quadratic that continues
        the phase at the nearest edge with its value, slope and curvature (glass dispersion
        goes on smoothly where the band's wings are too weak to fit)."""
        c = np.asarray(self.coefficients, dtype=float)
        sig = np.asarray(sigma_per_cm, dtype=float)
        edge = np.clip(sig, *self.band)
        e = edge - self.centre_per_cm
        p = np.polynomial.polynomial
        v0, v1, v2 = (p.polyval(e, p.polyder(c, k)) if c.size > k else np.zeros_like(e)
                      for k in range(3))
        h = sig - edge
        if order == 0:
            return v0 + v1 * h + 0.5 * v2 * h**2
        return v1 + v2 * h

    def __call__(self, sigma_per_cm) -> np.ndarray:
        return self._derivatives(sigma_per_cm, 0)

    def group_delay_cm(self, sigma_per_cm) -> np.ndarray:
        """Group delay in optical path, ``|φ'(σ)|/2π`` (cm), from the window's centre."""
        return np.abs(self._derivatives(sigma_per_cm, 1)) / (2 * np.pi)

    @property
    def dispersion_cm2(self) -> float:
        """Group-delay dispersion in optical path at σ_c, ``D = φ''(σ_c)/2π = c₂/π`` (cm²)."""
        return self.coefficients[2] / np.pi if len(self.coefficients) > 2 else 0.0

    @property
    def u_dispersion_cm2(self) -> float:
        return self.u_coefficients[2] / np.pi if len(self.u_coefficients) > 2 else np.inf


def fit_polynomial_phase(sigma_per_cm, phase_rad, amplitude, *, degree: int = 4
                         ) -> PolynomialPhase:
    """Weighted least-squares polynomial through an unwrapped phase.

    Parameters
    ----------
    sigma_per_cm, phase_rad, amplitude : array_like
        The reliable bins (at least ``degree + 2``), their unwrapped phase and amplitude. The
        weight of each bin is its amplitude (the phase noise is noise/amplitude).
    degree : int
        Highest power, 1-6; lowered to leave at least 2 degrees of freedom.

    Returns
    -------
    PolynomialPhase
        Centred on the amplitude-weighted mean wavenumber.

    References
    ----------
    .. [1] JCGM 100:2008, §5.1 (covariance of a least-squares fit, scaled by the residual).
    """
    s = np.asarray(sigma_per_cm, dtype=float)
    p = np.asarray(phase_rad, dtype=float)
    a = np.asarray(amplitude, dtype=float)
    if not (s.shape == p.shape == a.shape and s.ndim == 1):
        raise OptionError("sigma_per_cm, phase_rad and amplitude must be 1-D of one length")
    if not 1 <= int(degree) <= 6:
        raise OptionError(f"degree must be 1 to 6, got {degree!r}")
    deg = min(int(degree), s.size - 3)
    if deg < 1:
        raise AnalysisError(f"{s.size} reliable phase bins are too few for a phase polynomial")
    w = a / a.max()
    sc = float(np.sum(w**2 * s) / np.sum(w**2))
    half = max(float(np.max(np.abs(s - sc))), 1e-12)
    t = (s - sc) / half
    design = np.vander(t, deg + 1, increasing=True)
    coef, *_ = np.linalg.lstsq(design * w[:, None], p * w, rcond=None)
    resid = (p - design @ coef) * w
    dof = max(s.size - deg - 1, 1)
    chi2 = float(np.sum(resid**2)) / dof
    cov = np.linalg.pinv((design * w[:, None]).T @ (design * w[:, None])) * max(chi2, 1e-30)
    scale = half ** -np.arange(deg + 1)
    rms = float(np.sqrt(np.sum(resid**2) / np.sum(w**2)))
    return PolynomialPhase(
        sc, tuple(float(c) for c in coef * scale),
        tuple(float(u) for u in np.sqrt(np.diag(cov)) * scale),
        (float(s.min()), float(s.max())), rms,
    )


def phase_error_ratio(real, imag, *, band_fraction: float = 0.1) -> float:
    """Energy of the imaginary residual over that of the real part where the real part
    exceeds ``band_fraction`` of its maximum (``Σ imag² / Σ real²``; 0 for an empty band).

    For a right phase it is the noise's share (~1/SNR² per bin); a phase error δ gives
    ``≈ mean(tan² δ)``.
    """
    r = np.asarray(real, dtype=float)
    i = np.asarray(imag, dtype=float)
    top = float(np.max(r)) if r.size else 0.0
    band = r > band_fraction * top
    if top <= 0 or not np.any(band) or not np.any(i[band]):
        return 0.0
    return float(np.sum(i[band] ** 2) / np.sum(r[band] ** 2))


@dataclass(frozen=True)
class GlassImbalance:
    """The glass imbalance implied by the sweeps' phase curvature (see module notes).

    ``dispersion_cm2`` is the mean group-delay dispersion over the sweeps (sign: which arm
    holds the extra glass, as seen from the first sweep's direction); ``u_...`` the standard
    uncertainty of that mean (scatter between sweeps over √n, or the fit's when there is one
    sweep). Thicknesses are N-BK7 equivalents at ``centre_per_cm``.
    """

    dispersion_cm2: float
    u_dispersion_cm2: float
    centre_per_cm: float
    thickness_cm: float
    u_thickness_cm: float
    optical_thickness_cm: float
    n_sweeps: int


def glass_imbalance(dispersions_cm2, u_dispersions_cm2, centre_per_cm: float
                    ) -> GlassImbalance | None:
    """Combine the sweeps' group-delay dispersions into one glass imbalance (None if none).

    The magnitudes are averaged (a backward sweep sees the phase conjugated); the uncertainty
    is the larger of the scatter's standard error and the fits' combined uncertainty.

    References
    ----------
    .. [1] JCGM 100:2008, §4.2 (standard uncertainty of a mean of repeated observations).
    """
    d = np.abs(np.asarray(dispersions_cm2, dtype=float))
    u = np.asarray(u_dispersions_cm2, dtype=float)
    ok = np.isfinite(d)
    if not np.any(ok) or not (np.isfinite(centre_per_cm) and centre_per_cm > 0):
        return None
    d, u = d[ok], u[ok]
    mean = float(np.mean(d))
    u_fit = float(np.sqrt(np.sum(np.where(np.isfinite(u), u, 0.0) ** 2))) / d.size
    u_mean = float(np.std(d, ddof=1) / np.sqrt(d.size)) if d.size >= 2 else u_fit
    u_mean = max(u_mean, u_fit)
    t = glass_thickness_cm(mean, centre_per_cm)
    return GlassImbalance(mean, u_mean, float(centre_per_cm), t,
                          t * u_mean / mean if mean > 0 else float("nan"),
                          optical_thickness_cm(t, centre_per_cm), int(d.size))
