"""Figures of a broad emission band (an LED): peak, centroid, centre and FWHM.

Every figure here is taken on the spectral density **per unit wavelength** S_λ, as CIE 127
and the IES define them, never on the density per unit wavenumber S_σ that the transform
gives. The two differ: S_λ = S_σ·σ²/10⁷ (σ in cm⁻¹, λ in nm), so a band that is Gaussian in λ
(peak 525 nm, FWHM 30 nm) has its S_σ peak at 525.62 nm, and 1/(wavenumber centroid) is
524.69 nm (check-values §8).

Definitions (all on S_λ, vacuum wavelengths):

- **peak** λ_p: the maximum of S_λ, located by a smooth fit over the contiguous points around
  the highest sample where S_λ ≥ 80 % of that sample — not the highest sample itself, which
  is quantised to the grid. The fit is a weighted quartic in ln S_λ (a quadratic, i.e. a
  Gaussian, when fewer than 9 points are in the window): exact for a Gaussian band, and the
  cubic and quartic terms follow the skew of a real LED band (a quadratic alone puts the
  peak of a skewed band ~1 nm toward its long tail). A band with a kink at its maximum (a
  split normal) is not smooth there, and any smooth fit is biased toward the broader side;
  the **peak height** from the same fit sets the half-maximum and band levels;
- **centroid** λ_c = ∫λ S_λ dλ / ∫S_λ dλ (IES), integrated by the trapezoid rule over the
  **band**: walking out from the highest sample on each side, the band ends where S_λ first
  falls below ``band_fraction`` (default 1 %) of the fitted peak height, the edge placed by
  linear interpolation. The walk runs on a running mean of S_λ over an odd number of points
  spanning about a tenth of the FWHM, so that one noisy sample near the edge does not end the
  band early; the integral itself uses the unsmoothed S_λ. Only this contiguous region
  enters, so noise far from the band adds nothing, and a second emission region separated by
  a gap below 1 % is excluded. Truncation at 1 % moves the centroid of an asymmetric band
  (by 0.06 nm for a split normal of σ = 10 and 20 nm) and of S_σ (by 0.02 nm in the
  check-values §8 example) — the price of keeping noise out;
- **half-maximum points**: walking out from the highest sample, the first crossings of half
  the fitted peak height, by linear interpolation between the two samples that bracket it;
- **centre** = midpoint of the two half-maximum points; **FWHM** = their distance (CIE 127,
  "spectral bandwidth at half intensity level").

Uncertainties come from the noise by Monte Carlo: the figures are recomputed on
``n_monte_carlo`` copies of the spectrum with independent Gaussian noise of the given standard
deviation added to each point (a parametric bootstrap, seed ``rng``), and the standard
deviation of each figure over the copies is its standard uncertainty. That includes the
jitter of the fit window, the band edges and the half-maximum crossings, which an analytic
propagation would miss. Points are taken as independent. A zero-filled transform correlates
neighbouring points; that correlation is not modelled, and the uncertainty of an integral
such as the centroid is then understated by up to √(zero-fill factor).

References
----------
.. [1] CIE 127:2007, *Measurement of LEDs*, 2nd ed. (peak wavelength, spectral bandwidth at
   half intensity level).
.. [2] Illuminating Engineering Society, definition "centroid wavelength"
   (ies.org/definitions/centroid-wavelength; ANSI/IES RP-16-17 Addendum 1).
.. [3] R. A. Caruana, R. B. Searle, T. Heller and S. I. Shupack, "Fast algorithm for the
   resolution of spectra", Anal. Chem. 58, 1162-1167 (1986) (Gaussian fit as a quadratic in
   the logarithm, weighted by y²).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass

import numpy as np

from ftsource.errors import AnalysisError, FtsourceWarning, OptionError

__all__ = [
    "BroadbandMetrics",
    "EDGE_FRACTIONS",
    "band_edge_uncertainty",
    "broadband_metrics",
    "flank_baseline",
    "density_per_nm",
    "wavenumber_centroid_per_cm",
]

#: The band-edge rule is tested for its own choice: the figures are recomputed with the band
#: ending at these fractions of the peak instead of ``band_fraction`` (half and twice 1 %).
EDGE_FRACTIONS = (0.005, 0.02)

PEAK_FIT_FRACTION = 0.8
PEAK_QUARTIC_MIN = 9
SMOOTH_PER_FWHM = 0.1


@dataclass(frozen=True)
class BroadbandMetrics:
    """Figures of a broad band, all in nm (vacuum). ``u_...`` are standard uncertainties
    (NaN when no noise was given or ``n_monte_carlo`` was 0)."""

    peak_nm: float
    u_peak_nm: float
    centroid_nm: float
    u_centroid_nm: float
    centre_nm: float
    u_centre_nm: float
    fwhm_nm: float
    u_fwhm_nm: float
    band_nm: tuple[float, float]
    peak_density: float
    band_fraction: float
    n_monte_carlo: int
    warnings: tuple[str, ...] = ()


def density_per_nm(sigma_per_cm, density_per_cm) -> np.ndarray:
    """Density per unit wavelength from density per unit wavenumber.

    ``S_λ = S_σ·|dσ/dλ| = S_σ·σ²/10⁷`` with σ in cm⁻¹ and λ = 10⁷/σ in nm, point by point
    (same order as the input). A noise level converts with the same factor.

    References
    ----------
    .. [1] CIE 127:2007 (LED quantities are spectral densities per unit wavelength); change
       of variable of a density, S_λ dλ = S_σ dσ.
    """
    s = np.asarray(sigma_per_cm, dtype=float)
    d = np.asarray(density_per_cm, dtype=float)
    if s.shape != d.shape:
        raise OptionError(
            f"sigma_per_cm {s.shape} and density_per_cm {d.shape} must have the same shape"
        )
    return d * s**2 / 1e7


def wavenumber_centroid_per_cm(sigma_per_cm, density_per_cm, *, band_fraction=0.01) -> float:
    """Centroid of S_σ over σ, ``∫σ S_σ dσ / ∫S_σ dσ``, over the band of the same rule as
    :func:`broadband_metrics` (walk out from the highest sample to ``band_fraction`` of it).

    Not a CIE/IES figure: ``10⁷/σ_c`` is not the wavelength centroid (check-values §8); it is
    the first moment of the spectrum in wavenumber.

    References
    ----------
    .. [1] IES, "centroid wavelength" (the same first-moment definition, here in σ).
    """
    s, d, _ = _prepare(sigma_per_cm, density_per_cm, None, "sigma_per_cm", "density_per_cm")
    return _figures(s, d, _band_fraction(band_fraction), None)[1]


def broadband_metrics(
    wavelength_nm,
    density_per_nm,
    noise_per_nm=None,
    *,
    band_fraction: float = 0.01,
    window_nm: tuple[float, float] | None = None,
    n_monte_carlo: int = 200,
    rng=0,
    warn: bool = True,
) -> BroadbandMetrics:
    """Peak, centroid, centre and FWHM of a band on S_λ, with uncertainties from the noise.

    Parameters
    ----------
    wavelength_nm : array_like
        Vacuum wavelengths, strictly monotonic, increasing or decreasing (a wavenumber grid
        ascending in σ gives decreasing λ). Non-finite or non-positive wavelengths (σ = 0)
        are dropped with their densities.
    density_per_nm : array_like
        S_λ at those wavelengths (see :func:`density_per_nm`), any linear unit.
    noise_per_nm : float or array_like, optional
        Standard uncertainty of each S_λ value (a scalar for all). Without it the
        ``u_...`` fields are NaN.
    band_fraction : float
        Fraction of the peak height that ends the centroid band (module notes), in [0, 0.5).
        ``0`` integrates out to where the density first goes negative, or to the grid (or
        window) ends — only sensible without noise.
    window_nm : (float, float), optional
        Restrict the search to this wavelength range (for example to leave out a pump line).
    n_monte_carlo : int
        Number of noisy copies for the uncertainties (0 to skip).
    rng : int or numpy.random.Generator
        Seed or generator of the Monte Carlo (fixed by default: the same input gives the
        same uncertainties).
    warn : bool
        Issue the notes below as ``FtsourceWarning`` (default); with False they are only
        returned in ``warnings`` of the result (the pipeline's route: each stage returns its
        notes).

    Returns
    -------
    BroadbandMetrics

    Raises
    ------
    OptionError
        Bad shapes, non-monotonic wavelengths, bad options.
    AnalysisError
        No positive maximum, or the density does not fall to half its peak on both sides
        within the grid.

    Warns
    -----
    FtsourceWarning
        When the band reaches the grid edge before falling to ``band_fraction`` of the peak,
        when the noise is not small against the band-edge level, or when the peak fit fails
        and the highest sample is used. The same texts are in ``warnings`` of the result.

    References
    ----------
    .. [1] CIE 127:2007; IES definition of centroid wavelength; Caruana et al. (1986) for the
       Gaussian peak fit (see module references).
    """
    lam, y, noise = _prepare(wavelength_nm, density_per_nm, noise_per_nm,
                             "wavelength_nm", "density_per_nm")
    frac = _band_fraction(band_fraction)
    if window_nm is not None:
        try:
            w0, w1 = sorted(float(v) for v in window_nm)
        except (TypeError, ValueError):
            raise OptionError(
                f"window_nm must be two wavelengths in nm, got {window_nm!r}"
            ) from None
        keep = (lam >= w0) & (lam <= w1)
        if keep.sum() < 5:
            raise OptionError(
                f"window_nm = ({w0:g}, {w1:g}) holds {int(keep.sum())} points; at least 5 needed"
            )
        lam, y = lam[keep], y[keep]
        noise = None if noise is None else noise[keep]
    try:
        n_mc = int(n_monte_carlo)
    except (TypeError, ValueError):
        raise OptionError(f"n_monte_carlo must be an integer, got {n_monte_carlo!r}") from None
    if n_mc < 0 or n_mc == 1:
        raise OptionError(f"n_monte_carlo = {n_mc} is not allowed; use 0 or at least 2")

    notes: list[str] = []
    vals = _figures(lam, y, frac, notes)
    if noise is not None:
        edge_level = frac * vals[5]
        if frac > 0 and float(np.median(noise)) > edge_level / 3.0:
            notes.append(
                f"the noise ({float(np.median(noise)):.3g}) is more than a third of the band-edge "
                f"level ({edge_level:.3g}, {frac:g} of the peak); the centroid band and its "
                "uncertainty are set by the noise"
            )
    u = [math.nan] * 4
    if noise is not None and n_mc >= 2:
        u = _monte_carlo(lam, y, noise, frac, n_mc, rng, notes)
    for msg in dict.fromkeys(notes) if warn else ():
        warnings.warn(msg, FtsourceWarning, stacklevel=2)
    peak, centroid, lo_h, hi_h, (b_lo, b_hi), height = vals
    return BroadbandMetrics(
        peak_nm=peak,
        u_peak_nm=float(u[0]),
        centroid_nm=centroid,
        u_centroid_nm=float(u[1]),
        centre_nm=0.5 * (lo_h + hi_h),
        u_centre_nm=float(u[2]),
        fwhm_nm=hi_h - lo_h,
        u_fwhm_nm=float(u[3]),
        band_nm=(b_lo, b_hi),
        peak_density=height,
        band_fraction=frac,
        n_monte_carlo=n_mc if noise is not None else 0,
        warnings=tuple(dict.fromkeys(notes)),
    )


def _monte_carlo(lam, y, noise, frac: float, n_mc: int, rng, notes: list) -> list:
    """Standard deviations of (peak, centroid, centre, FWHM) over ``n_mc`` copies of the
    density with independent Gaussian noise added (JCGM 101 propagation of distributions);
    copies without a half-maximum crossing are left out, with a note."""
    gen = rng if isinstance(rng, np.random.Generator) else np.random.default_rng(rng)
    draws = np.empty((n_mc, 4))
    for k in range(n_mc):
        yk = y + gen.standard_normal(y.size) * noise
        try:
            pk, cen, lo_k, hi_k = _figures(lam, yk, frac, None)[:4]
            draws[k] = (pk, cen, 0.5 * (lo_k + hi_k), hi_k - lo_k)
        except AnalysisError:
            draws[k] = math.nan
    ok = np.all(np.isfinite(draws), axis=1)
    if ok.sum() < n_mc:
        notes.append(
            f"{n_mc - int(ok.sum())} of {n_mc} Monte Carlo copies had no half-maximum "
            "crossing on one side; the uncertainties use the others"
        )
    return list(np.std(draws[ok], axis=0, ddof=1)) if ok.sum() >= 2 else [math.nan] * 4


# --- kernels ------------------------------------------------------------------------------


def _prepare(x, y, noise, xname, yname):
    xa = np.asarray(x, dtype=float).ravel()
    ya = np.asarray(y, dtype=float).ravel()
    if xa.shape != ya.shape:
        raise OptionError(f"{xname} ({xa.size}) and {yname} ({ya.size}) must have the same length")
    if noise is not None:
        na = np.asarray(noise, dtype=float)
        na = np.broadcast_to(na, xa.shape).copy() if na.ndim == 0 else na.ravel()
        if na.shape != xa.shape:
            raise OptionError(f"noise ({na.size}) must be a scalar or match {yname} ({ya.size})")
    else:
        na = None
    keep = np.isfinite(xa) & (xa > 0)
    xa, ya = xa[keep], ya[keep]
    na = None if na is None else na[keep]
    if xa.size < 5:
        raise OptionError(f"{xname} needs at least 5 finite positive values, got {xa.size}")
    if not np.all(np.isfinite(ya)):
        raise OptionError(f"{yname} must be finite")
    if na is not None and (not np.all(np.isfinite(na)) or np.any(na < 0)):
        raise OptionError("noise must be finite and ≥ 0")
    dx = np.diff(xa)
    if np.all(dx < 0):
        xa, ya = xa[::-1], ya[::-1]
        na = None if na is None else na[::-1]
    elif not np.all(dx > 0):
        raise OptionError(f"{xname} must be strictly increasing or strictly decreasing")
    return xa, ya, na


def _band_fraction(value) -> float:
    try:
        f = float(value)
    except (TypeError, ValueError):
        raise OptionError(f"band_fraction must be a number, got {value!r}") from None
    if not 0.0 <= f < 0.5:
        raise OptionError(f"band_fraction = {f!r} is not allowed; it must lie in [0, 0.5)")
    return f


def _crossing(x, y, i0, level, step):
    """Walk from i0 in direction step (±1) to the first sample below ``level``; return the
    linearly interpolated crossing, or None if the grid ends first."""
    if step > 0:
        below = np.nonzero(y[i0:] < level)[0]
        if below.size == 0:
            return None
        j = i0 + int(below[0])
        i = j - 1
    else:
        below = np.nonzero(y[: i0 + 1][::-1] < level)[0]
        if below.size == 0:
            return None
        j = i0 - int(below[0])
        i = j + 1
    if j == i0:  # already below at the start: the band is empty on this side
        return float(x[i0])
    # y[i] >= level > y[j]
    t = (y[i] - level) / (y[i] - y[j])
    return float(x[i] + t * (x[j] - x[i]))


def _band(x, y, i0, level):
    """Contiguous band around i0 down to ``level``; (lo, hi, reached_both_sides)."""
    lo = _crossing(x, y, i0, level, -1)
    hi = _crossing(x, y, i0, level, +1)
    full = lo is not None and hi is not None
    return (float(x[0]) if lo is None else lo), (float(x[-1]) if hi is None else hi), full


def _boxcar(y, m):
    """Running mean over m points (edges: mean of the points available)."""
    k = np.ones(m)
    return np.convolve(y, k, mode="same") / np.convolve(np.ones_like(y), k, mode="same")


def _centroid(x, y, lo, hi):
    """First moment of y over [lo, hi] by trapezoids; y at the edges by linear
    interpolation."""
    inside = (x > lo) & (x < hi)
    xs = np.concatenate(([lo], x[inside], [hi]))
    ys = np.concatenate(([np.interp(lo, x, y)], y[inside], [np.interp(hi, x, y)]))
    dx = np.diff(xs)
    area = float(np.sum(0.5 * (ys[1:] + ys[:-1]) * dx))
    if not area > 0:
        raise AnalysisError("the band has no positive area; no centroid can be taken")
    m = xs * ys
    first = float(np.sum(0.5 * (m[1:] + m[:-1]) * dx))
    return first / area


def _peak(x, y, i0, notes):
    """Peak of a smooth model of ln y fitted over the contiguous points around i0 with
    y ≥ PEAK_FIT_FRACTION·y[i0] (at least i0 ± 1): a quartic when the window holds at least
    PEAK_QUARTIC_MIN points, else a quadratic (a Gaussian). Weighted by y, since
    var(ln y) ∝ 1/y² for constant noise (Caruana et al.). Returns (position, height)."""
    n = y.size
    thr = PEAK_FIT_FRACTION * y[i0]
    a = i0
    while a > 0 and y[a - 1] >= thr:
        a -= 1
    b = i0
    while b < n - 1 and y[b + 1] >= thr:
        b += 1
    a, b = max(0, min(a, i0 - 1)), min(n - 1, max(b, i0 + 1))
    xs, ys = x[a : b + 1], y[a : b + 1]

    def fallback(why):
        if notes is not None:
            notes.append(f"{why}; the highest sample is used as the peak")
        return float(x[i0]), float(y[i0])

    if i0 == 0 or i0 == n - 1:
        return fallback("the maximum is at the grid edge, so the peak cannot be fitted")
    if np.any(ys <= 0):
        return fallback("the peak could not be fitted (non-positive values near it)")
    xc = x[i0]
    scale = float(xs[-1] - xs[0])
    t = (xs - xc) / scale
    deg = 4 if t.size >= PEAK_QUARTIC_MIN else 2
    P = np.polynomial.polynomial
    c = P.polyfit(t, np.log(ys), deg, w=ys)
    roots = np.roots(P.polyder(c)[::-1])
    roots = roots[np.abs(roots.imag) < 1e-12].real
    roots = roots[(roots > t[0]) & (roots < t[-1]) & (P.polyval(roots, P.polyder(c, 2)) < 0)]
    if roots.size == 0:
        return fallback("the peak fit has no maximum inside the fitted points")
    vals = P.polyval(roots, c)
    k = int(np.argmax(vals))
    return float(xc + roots[k] * scale), float(np.exp(vals[k]))


def _figures(x, y, frac, notes):
    """(peak, centroid, half_lo, half_hi, band, height) on an ascending grid."""
    i0 = int(np.argmax(y))
    if not y[i0] > 0:
        raise AnalysisError("the density has no positive maximum; no band to characterise")
    peak, height = _peak(x, y, i0, notes)
    half = 0.5 * height
    lo_h = _crossing(x, y, i0, half, -1)
    hi_h = _crossing(x, y, i0, half, +1)
    if lo_h is None or hi_h is None:
        side = "short" if lo_h is None else "long"
        raise AnalysisError(
            f"the density does not fall to half its peak on the {side}-wavelength side within "
            f"the grid ({x[0]:.6g} to {x[-1]:.6g} nm); the FWHM and centre cannot be measured"
        )
    level = frac * height
    n_fwhm = int(np.searchsorted(x, hi_h) - np.searchsorted(x, lo_h))  # points across FWHM
    m = 2 * int(SMOOTH_PER_FWHM * n_fwhm / 2) + 1  # odd: no half-sample shift
    ys = _boxcar(y, m) if m > 1 else y
    b_lo, b_hi, full = _band(x, ys, i0, level)
    if not full and frac > 0 and notes is not None:
        notes.append(
            f"the band reaches the grid edge before falling to {frac:g} of the peak; the "
            "centroid is taken over the grid only and is biased toward the band's centre"
        )
    centroid = _centroid(x, y, b_lo, b_hi)
    return peak, centroid, lo_h, hi_h, (b_lo, b_hi), height


# --- band limits: baseline and the choice of the edges --------------------------------------


def flank_baseline(sigma_per_cm, density_per_cm, band_per_cm, noise_per_cm, *,
                   min_points: int = 16, correlation: float = 1.0) -> tuple[float, float]:
    """Constant baseline of a spectrum per unit wavenumber from the points outside its band.

    The baseline is the median of ``density_per_cm`` over the points of the given grid that
    lie outside ``band_per_cm`` (the source's band, e.g. from :func:`broadband_metrics` with
    its edges at 1 % of the peak). White interferogram noise and a constant offset are flat
    in wavenumber, so the baseline is estimated on S_σ, not S_λ. Its standard uncertainty is
    that of a median of Gaussian noise, ``1.2533·u/√n`` (``u`` the median noise level).

    Parameters
    ----------
    sigma_per_cm, density_per_cm : array_like
        The spectrum over a window around the band (both flanks included).
    band_per_cm : (float, float)
        The band, cm⁻¹.
    noise_per_cm : float or array_like
        Standard uncertainty of each point.
    min_points : int
        Fewer flank points than this give ``(0.0, 0.0)``: no estimate.
    correlation : float
        Grid points per independent noise value
        (:func:`ftsource.spectrum.spectrum.noise_correlation`): the median's ``n`` is the
        number of flank points divided by it.

    Returns
    -------
    (float, float)
        Baseline and its standard uncertainty, in the units of the density.

    References
    ----------
    .. [1] A. Stuart and J. K. Ord, *Kendall's Advanced Theory of Statistics*, vol. 1, 6th ed.
       (1994), §10.10: the variance of a sample median is π/2 × σ²/n for Gaussian data
       (from memory).
    """
    s = np.asarray(sigma_per_cm, dtype=float)
    d = np.asarray(density_per_cm, dtype=float)
    noise = np.broadcast_to(np.asarray(noise_per_cm, dtype=float), s.shape)
    lo, hi = sorted(float(b) for b in band_per_cm)
    out = ((s < lo) | (s > hi)) & np.isfinite(d)
    n = int(out.sum())
    if n < min_points:
        return 0.0, 0.0
    n_eff = n / max(float(correlation), 1.0)
    return float(np.median(d[out])), float(1.2533 * np.median(noise[out]) / math.sqrt(n_eff))


def band_edge_uncertainty(wavelength_nm, density_per_nm, *, fractions=EDGE_FRACTIONS
                          ) -> float:
    """Standard uncertainty of the centroid from the choice of the band's edges.

    The centroid is recomputed with the band ending at each of ``fractions`` of the peak
    (default half and twice the 1 % rule); the spread of the results is taken as the full
    width of a rectangular distribution, ``u = (max − min)/(2√3)`` (JCGM 100:2008 §4.3.7).
    It covers both the truncation of the band's tails and any noise or baseline the wider
    band takes in. NaN when a recomputation fails.

    References
    ----------
    .. [1] JCGM 100:2008 (GUM), §4.3.7 (rectangular distribution of half-width a: u = a/√3).
    """
    values = []
    for f in fractions:
        try:
            values.append(broadband_metrics(wavelength_nm, density_per_nm, None,
                                            band_fraction=f, n_monte_carlo=0,
                                            warn=False).centroid_nm)
        except AnalysisError:
            return math.nan
    return (max(values) - min(values)) / (2 * math.sqrt(3))
