"""Tests of ftsource.measure.broadband: LED figures on the density per unit wavelength.

Sources:
- check-values §8 (C): a band Gaussian in λ (λ_p = 525 nm, FWHM 30 nm) has its S_σ peak at
  525.62 nm and 1/(wavenumber centroid) = 524.69 nm. Both are recomputed here from closed
  forms: S_σ ∝ S_λ·λ² (change of variable), whose maximum solves λ² − λ_p λ − 2s² = 0; and
  ⟨1/λ⟩ = (1/λ_p)(1 + s²/λ_p² + 3s⁴/λ_p⁴ + 15s⁶/λ_p⁶ + …) (Gaussian even moments).
- Definitions: CIE 127:2007 (peak, spectral bandwidth at half intensity), IES centroid
  wavelength (first moment), centre = midpoint of the half-maximum points (check-values §8).
- Closed forms for a Gaussian (FWHM = 2√(2 ln 2)·s) and a split normal (half-maximum points
  μ − √(2 ln 2)σ₁ and μ + √(2 ln 2)σ₂; mean μ + √(2/π)(σ₂ − σ₁); 1 %-points
  μ ∓ σ√(2 ln 100)).
- scipy.integrate.quad (PyPI scipy) for the centroid of the split normal over its band, and
  scipy.stats.skewnorm with scipy.optimize for the peak of a smooth skewed band.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, optimize, stats

from ftsource.errors import AnalysisError, FtsourceWarning, OptionError
from ftsource.measure.broadband import (
    broadband_metrics,
    density_per_nm,
    wavenumber_centroid_per_cm,
)

LN2 = math.log(2.0)
FWHM_PER_S = 2.0 * math.sqrt(2.0 * LN2)


def gaussian(lam, centre, fwhm):
    return np.exp(-4.0 * LN2 * ((lam - centre) / fwhm) ** 2)


def split_normal(lam, mu, s1, s2):
    return np.where(lam < mu, np.exp(-0.5 * ((lam - mu) / s1) ** 2),
                    np.exp(-0.5 * ((lam - mu) / s2) ** 2))


# --- check-values §8 -----------------------------------------------------------------------

LAM_P, FWHM = 525.0, 30.0
S = FWHM / FWHM_PER_S


def sigma_grid():
    """An ascending wavenumber grid (as the transform gives) over 400–700 nm."""
    return np.linspace(1e7 / 700.0, 1e7 / 400.0, 20001)


def test_check_value_wavenumber_density_peak():
    sig = sigma_grid()
    lam = 1e7 / sig  # decreasing
    s_sigma = gaussian(lam, LAM_P, FWHM) * lam**2 / 1e7  # S_σ = S_λ·λ²/10⁷
    closed = 0.5 * (LAM_P + math.sqrt(LAM_P**2 + 8 * S**2))  # root of λ² − λ_p λ − 2s² = 0
    assert closed == pytest.approx(525.62, abs=0.005)  # check-values §8
    # the peak of S_σ as a function of λ, found by the module's fit (no noise)
    m = broadband_metrics(lam, s_sigma)
    assert m.peak_nm == pytest.approx(closed, abs=0.01)


def test_check_value_wavenumber_centroid():
    sig = sigma_grid()
    lam = 1e7 / sig
    s_sigma = gaussian(lam, LAM_P, FWHM) * lam**2 / 1e7
    r = (S / LAM_P) ** 2
    closed = LAM_P / (1 + r + 3 * r**2 + 15 * r**3)  # 1/⟨1/λ⟩, series (closed form)
    assert closed == pytest.approx(524.69, abs=0.005)  # check-values §8
    # band_fraction 0: the whole band (±13 s on this grid), as in the check value
    got = 1e7 / wavenumber_centroid_per_cm(sig, s_sigma, band_fraction=0.0)
    assert got == pytest.approx(closed, abs=0.01)


def test_density_per_nm_recovers_the_wavelength_figures():
    # S_λ from S_σ (change of variable): the CIE figures are those of the Gaussian in λ
    sig = sigma_grid()
    lam = 1e7 / sig
    s_lambda = gaussian(lam, LAM_P, FWHM)
    s_sigma = s_lambda * lam**2 / 1e7
    np.testing.assert_allclose(density_per_nm(sig, s_sigma), s_lambda, rtol=1e-13)
    m = broadband_metrics(lam, density_per_nm(sig, s_sigma))
    assert m.peak_nm == pytest.approx(LAM_P, abs=0.01)
    assert m.centroid_nm == pytest.approx(LAM_P, abs=0.01)
    assert m.centre_nm == pytest.approx(LAM_P, abs=0.01)
    assert m.fwhm_nm == pytest.approx(FWHM, abs=0.01)


# --- Gaussian in wavelength ----------------------------------------------------------------


@pytest.mark.parametrize("descending", [False, True])
@pytest.mark.parametrize("step", [0.1, 0.37])
def test_gaussian_figures_exact(descending, step):
    # closed forms: peak = centroid = centre = λ₀, FWHM as given. Tolerance 0.01 nm (brief);
    # linear interpolation at the half-maximum points errs by ~0.04 h²/s = 4e-4 nm at
    # h = 0.37 nm (curvature bound), the Gaussian peak fit is exact for a Gaussian.
    centre, fwhm = 612.345, 24.0
    lam = np.arange(540.0, 690.0, step)
    if descending:
        lam = lam[::-1]
    m = broadband_metrics(lam, 3.7 * gaussian(lam, centre, fwhm))
    assert m.peak_nm == pytest.approx(centre, abs=0.01)
    assert m.centroid_nm == pytest.approx(centre, abs=0.01)
    assert m.centre_nm == pytest.approx(centre, abs=0.01)
    assert m.fwhm_nm == pytest.approx(fwhm, abs=0.01)
    assert m.peak_density == pytest.approx(3.7, rel=1e-6)
    # the band ends at the 1 % points, μ ∓ s√(2 ln 100) (closed form); the edge walk runs on
    # a running mean, which moves it outward by ~0.1 nm here (curvature of the tail)
    s = fwhm / FWHM_PER_S
    half = s * math.sqrt(2 * math.log(100.0))
    assert m.band_nm[0] == pytest.approx(centre - half, abs=0.2)
    assert m.band_nm[1] == pytest.approx(centre + half, abs=0.2)
    assert m.warnings == ()


def test_peak_fit_beats_highest_sample():
    # a coarse 2 nm grid with the peak 0.7 nm off a sample: the highest sample is 0.7 nm off,
    # the fit exact (a Gaussian is a parabola in its logarithm, closed form)
    lam = np.arange(480.0, 580.0, 2.0)
    y = gaussian(lam, 530.7, 20.0)
    assert abs(lam[np.argmax(y)] - 530.7) > 0.5
    m = broadband_metrics(lam, y)
    assert m.peak_nm == pytest.approx(530.7, abs=0.01)


def test_skewed_smooth_band_peak():
    # a smooth skewed band (scipy.stats.skewnorm, shape 4); its maximum from
    # scipy.optimize.minimize_scalar. Tolerance 0.05 nm: the quartic fit's residual bias for
    # this skew is 0.014 nm (a plain Gaussian fit would be ~1 nm off).
    lam = np.arange(450.0, 750.0, 0.2)
    pdf = stats.skewnorm(4, loc=580.0, scale=25.0).pdf
    best = optimize.minimize_scalar(
        lambda x: -pdf(x), bounds=(580, 620), method="bounded", options={"xatol": 1e-10}
    )
    m = broadband_metrics(lam, pdf(lam))
    assert m.peak_nm == pytest.approx(best.x, abs=0.05)


# --- split normal: asymmetric band -----------------------------------------------------------

MU, S1, S2 = 600.0, 10.0, 20.0


def test_split_normal_centroid_against_quad():
    lam = np.arange(540.0, 720.0, 0.2)
    m = broadband_metrics(lam, split_normal(lam, MU, S1, S2))
    lo, hi = m.band_nm
    # the band is near the closed-form 1 % points (walk on a running mean: ~0.1 nm outward)
    k = math.sqrt(2 * math.log(100.0))
    assert lo == pytest.approx(MU - k * S1, abs=0.2)
    assert hi == pytest.approx(MU + k * S2, abs=0.2)

    def f(x):
        return float(split_normal(np.array(x), MU, S1, S2))

    # the centroid over the reported band, by scipy.integrate.quad with the break at μ;
    # trapezoid error on a 0.2 nm grid is ~h²/12·|f''| relative, < 1e-4 nm here
    num = integrate.quad(lambda x: x * f(x), lo, hi, points=[MU], epsabs=0, epsrel=1e-12)[0]
    den = integrate.quad(f, lo, hi, points=[MU], epsabs=0, epsrel=1e-12)[0]
    assert m.centroid_nm == pytest.approx(num / den, abs=0.01)


def test_split_normal_centroid_whole_band_closed_form():
    # band_fraction 0 over ±10σ: the mean μ + √(2/π)(σ₂ − σ₁) (closed form)
    lam = np.arange(450.0, 850.0, 0.2)
    m = broadband_metrics(lam, split_normal(lam, MU, S1, S2), band_fraction=0.0)
    assert m.centroid_nm == pytest.approx(MU + math.sqrt(2 / math.pi) * (S2 - S1), abs=0.01)


def test_split_normal_half_maximum_points():
    # half-maximum points μ − √(2 ln 2)σ₁ and μ + √(2 ln 2)σ₂ (closed form). Tolerance 0.03 nm:
    # the smooth peak fit through the kink at μ overestimates the height by 6e-4 (relative),
    # which moves each half-maximum point outward by 0.85·6e-4·σ = 0.005 and 0.010 nm.
    lam = np.arange(540.0, 720.0, 0.2)
    m = broadband_metrics(lam, split_normal(lam, MU, S1, S2))
    h = math.sqrt(2 * LN2)
    assert m.fwhm_nm == pytest.approx(h * (S1 + S2), abs=0.03)
    assert m.centre_nm == pytest.approx(MU + h * (S2 - S1) / 2, abs=0.03)


# --- noise: Monte Carlo uncertainties ------------------------------------------------------


def test_monte_carlo_u_matches_scatter_of_repeated_draws():
    # 400 independent noisy copies of a Gaussian band give the observed scatter of each
    # figure; the module's Monte Carlo u (200 copies each, averaged over 6 noisy inputs)
    # must match it within 20 % (brief). Statistical error of each side: ~4 % (400 draws) and
    # ~5 % (6 × 200 copies, plus 5–10 % spread between inputs), so 20 % is > 3 standard errors.
    lam = np.arange(430.0, 620.0, 0.5)
    truth = gaussian(lam, 525.3, 30.0)
    noise = 0.002
    rng = np.random.default_rng(2024)
    keys = ("peak_nm", "centroid_nm", "centre_nm", "fwhm_nm")
    obs = np.array(
        [
            [getattr(broadband_metrics(lam, truth + noise * rng.standard_normal(lam.size),
                                       n_monte_carlo=0), k) for k in keys]
            for _ in range(400)
        ]
    )
    scatter = obs.std(axis=0, ddof=1)
    us = np.array(
        [
            [getattr(m, "u_" + k) for k in keys]
            for m in (
                broadband_metrics(lam, truth + noise * rng.standard_normal(lam.size), noise,
                                  n_monte_carlo=200, rng=j)
                for j in range(6)
            )
        ]
    )
    ratio = us.mean(axis=0) / scatter
    assert np.all(np.abs(ratio - 1) < 0.2), dict(zip(keys, ratio, strict=True))
    # and the noisy figures are unbiased: the mean over 400 draws within 4 standard errors
    truth_vals = np.array([525.3, 525.3, 525.3, 30.0])
    assert np.all(np.abs(obs.mean(axis=0) - truth_vals) < 4 * scatter / math.sqrt(400))


def test_monte_carlo_is_reproducible_and_off_without_noise():
    lam = np.arange(480.0, 580.0, 0.5)
    y = gaussian(lam, 530.0, 25.0) + 0.003 * np.random.default_rng(1).standard_normal(lam.size)
    a = broadband_metrics(lam, y, 0.003, rng=5)
    b = broadband_metrics(lam, y, np.full(lam.size, 0.003), rng=5)
    assert a == b
    c = broadband_metrics(lam, y)
    assert math.isnan(c.u_peak_nm) and c.n_monte_carlo == 0
    assert c.peak_nm == a.peak_nm and c.centroid_nm == a.centroid_nm


# --- warnings and errors -------------------------------------------------------------------


def test_band_cut_by_grid_edge_warns():
    lam = np.arange(500.0, 560.0, 0.5)  # the 1 % points (±38 nm) lie outside
    with pytest.warns(FtsourceWarning, match="grid edge"):
        m = broadband_metrics(lam, gaussian(lam, 530.0, 30.0))
    assert any("grid edge" in w for w in m.warnings)
    assert m.band_nm == (500.0, lam[-1])


def test_large_noise_warns():
    lam = np.arange(430.0, 620.0, 0.5)
    y = gaussian(lam, 525.0, 30.0) + 0.01 * np.random.default_rng(3).standard_normal(lam.size)
    with pytest.warns(FtsourceWarning, match="noise"):
        broadband_metrics(lam, y, 0.01, n_monte_carlo=20)


def test_no_half_maximum_crossing_is_an_analysis_error():
    lam = np.arange(500.0, 540.0, 0.5)
    with pytest.raises(AnalysisError, match="half"):
        broadband_metrics(lam, gaussian(lam, 535.0, 30.0))


@pytest.mark.parametrize(
    "args, kwargs",
    [
        (([1.0, 3.0, 2.0, 4.0, 5.0], [0, 1, 2, 1, 0]), {}),  # not monotonic
        (([1.0, 2.0, 3.0], [0, 1, 0]), {}),  # too short
        ((np.arange(5.0) + 1, np.ones(4)), {}),  # lengths differ
        ((np.arange(10.0) + 1, np.ones(10)), {"band_fraction": 0.6}),
        ((np.arange(10.0) + 1, np.ones(10)), {"n_monte_carlo": 1}),
        ((np.arange(10.0) + 1, np.ones(10), -1.0), {}),  # negative noise
    ],
)
def test_bad_input_is_an_option_error(args, kwargs):
    with pytest.raises(OptionError):
        broadband_metrics(*args, **kwargs)


def test_window_selects_one_band():
    # two bands; the window keeps the weaker one (closed-form Gaussian figures)
    lam = np.arange(400.0, 700.0, 0.25)
    y = gaussian(lam, 450.0, 20.0) + 0.5 * gaussian(lam, 600.0, 40.0)
    m = broadband_metrics(lam, y, window_nm=(520.0, 700.0))
    assert m.peak_nm == pytest.approx(600.0, abs=0.01)
    assert m.fwhm_nm == pytest.approx(40.0, abs=0.01)
