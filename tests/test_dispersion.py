"""Tests of ftsource.spectrum.dispersion (unequal glass in the arms) and of the band helpers of
broad sources (issue 12, parts 1-3): closed forms, and published glass data.

Sources: the Gaussian burst's envelope and a polynomial phase are closed forms; the group-
velocity dispersion of N-BK7 at 800 nm, 44.65 fs²/mm (refractiveindex.info, SCHOTT data;
from memory); the variance of a sample median of Gaussian data, πσ²/2n (Kendall & Stuart;
from memory); JCGM 100:2008 §4.3.7 for the rectangular distribution.
"""

from __future__ import annotations

import math

import numpy as np
import pytest

from ftsource.measure.broadband import band_edge_uncertainty, flank_baseline
from ftsource.measure.coherence import CoherenceEstimate, line_shape_corrected
from ftsource.spectrum import dispersion as D

C_CM_S = 2.99792458e10


def test_polynomial_phase_recovers_its_coefficients():
    # closed form: a quartic through noiseless points is recovered exactly, whatever weights
    rng = np.random.default_rng(1)
    s = np.linspace(15_000, 17_000, 81)
    sc = 16_000.0
    c = (0.3, 1e-4, 2e-6, -3e-10, 4e-14)
    phi = sum(ck * (s - sc) ** k for k, ck in enumerate(c))
    amp = rng.uniform(0.2, 1.0, s.size)
    p = D.fit_polynomial_phase(s, phi, amp)
    np.testing.assert_allclose(p(s), phi, atol=1e-9)
    # D = φ''(σ_c)/2π at the fit's centre (its weighted mean)
    t = p.centre_per_cm - sc
    phi2 = 2 * c[2] + 6 * c[3] * t + 12 * c[4] * t**2
    assert p.dispersion_cm2 == pytest.approx(phi2 / (2 * math.pi), rel=1e-7)
    # continued beyond the fitted band by the quadratic with the edge's value, slope and
    # curvature (closed-form derivatives of the quartic at the edge)
    e, h = s[0] - sc, 14_000.0 - s[0]
    v0 = sum(ck * e**k for k, ck in enumerate(c))
    v1 = sum(k * ck * e ** (k - 1) for k, ck in enumerate(c) if k >= 1)
    v2 = sum(k * (k - 1) * ck * e ** (k - 2) for k, ck in enumerate(c) if k >= 2)
    assert p(14_000.0) == pytest.approx(v0 + v1 * h + 0.5 * v2 * h**2, rel=1e-7)


def test_glass_thickness_from_published_bk7_group_velocity_dispersion():
    # β2 = (1/2πc²)·dn_g/dσ; N-BK7 at 800 nm: 44.65 fs²/mm (from memory) → dn_g/dσ
    beta2_s2_per_cm = 44.65e-30 / 0.1
    slope = 2 * math.pi * C_CM_S**2 * beta2_s2_per_cm
    t_cm = 0.6
    assert D.glass_thickness_cm(t_cm * slope, 1e7 / 800.0) == pytest.approx(t_cm, rel=0.01)
    assert D.glass_thickness_cm(-t_cm * slope, 1e7 / 800.0) == pytest.approx(t_cm, rel=0.01)
    # optical thickness n·t with n_d-like index near 800 nm (N-BK7: 1.5108, from memory)
    assert D.optical_thickness_cm(t_cm, 1e7 / 800.0) == pytest.approx(1.5108 * t_cm, rel=2e-4)


@pytest.mark.parametrize("width_cm", [5e-4, 2e-3])
def test_burst_half_width_of_a_gaussian_envelope(width_cm):
    # closed form: envelope exp(-x²/2s²) falls to 5 % at s·√(2 ln 20)
    x = np.arange(-4000, 4001) * 1e-5
    y = np.exp(-(x**2) / (2 * width_cm**2)) * np.cos(2 * np.pi * 16_000 * x)
    hw = D.burst_half_width_cm(x, y, 0.0)
    assert hw == pytest.approx(width_cm * math.sqrt(2 * math.log(20)), abs=3e-5)


def test_phase_error_ratio_is_tan_squared_of_a_constant_error():
    # closed form: real = A cos δ, imag = A sin δ → Σimag²/Σreal² = tan²δ
    a = np.exp(-np.linspace(-3, 3, 301) ** 2)
    d = 0.05
    assert D.phase_error_ratio(a * np.cos(d), a * np.sin(d)) == pytest.approx(math.tan(d) ** 2)
    assert D.phase_error_ratio(a, np.zeros_like(a)) == 0.0


def test_glass_imbalance_combines_sweeps():
    # JCGM 100 §4.2: the mean and its standard error; backward sweeps see the sign flipped
    g = D.glass_imbalance([1e-6, -1.1e-6, np.nan, 0.9e-6], [1e-9, 1e-9, 1e-9, 1e-9], 12_500.0)
    assert g.n_sweeps == 3
    assert g.dispersion_cm2 == pytest.approx(1e-6)
    assert g.u_dispersion_cm2 == pytest.approx(np.std([1, 1.1, 0.9], ddof=1) * 1e-6 / math.sqrt(3))
    assert D.glass_imbalance([np.nan], [np.nan], 12_500.0) is None


def test_flank_baseline_finds_an_offset_with_the_median_uncertainty():
    rng = np.random.default_rng(3)
    s = np.linspace(10_000, 14_000, 4001)
    dens = np.exp(-0.5 * ((s - 12_000) / 200) ** 2) + 0.02 + rng.normal(0, 0.01, s.size)
    base, u = flank_baseline(s, dens, (11_000, 13_000), 0.01)
    n = int(np.sum((s < 11_000) | (s > 13_000)))
    assert u == pytest.approx(math.sqrt(math.pi / 2) * 0.01 / math.sqrt(n), rel=1e-3)
    assert abs(base - 0.02) < 4 * u
    assert flank_baseline(s[:10], dens[:10], (11_000, 13_000), 0.01) == (0.0, 0.0)


def test_band_edge_uncertainty_is_a_rectangular_spread():
    # a symmetric Gaussian: every edge rule gives the same centroid, u = 0; a skewed band's u is
    # (max − min)/(2√3) of the centroids at 0.5 % and 2 % (computed here by numpy)
    lam = np.linspace(500, 700, 20_001)
    g = np.exp(-4 * np.log(2) * ((lam - 600) / 20) ** 2)
    assert band_edge_uncertainty(lam, g) == pytest.approx(0.0, abs=1e-6)
    skew = g + 0.3 * np.exp(-4 * np.log(2) * ((lam - 615) / 40) ** 2)

    def centroid(frac):
        peak = skew.max()
        i = int(np.argmax(skew))
        lo = i - np.argmax(skew[:i + 1][::-1] < frac * peak)
        hi = i + np.argmax(skew[i:] < frac * peak)
        sl = slice(lo, hi + 1)
        return np.sum(lam[sl] * skew[sl]) / np.sum(skew[sl])

    expected = abs(centroid(0.005) - centroid(0.02)) / (2 * math.sqrt(3))
    assert expected > 0.01
    assert band_edge_uncertainty(lam, skew) == pytest.approx(expected, rel=0.02)


def test_coherence_line_shape_correction_is_second_order():
    # closed form: Gaussians add in quadrature, L_c = 0.66428/Δσ (Goodman). The true width w,
    # measured through a Gaussian line shape k: M has √(w²+k²), M∗K √(w²+2k²).
    w, k = 400.0, 60.0
    lc = 0.6642824702 / w

    def est(width):
        return CoherenceEstimate(0.6642824702 / width, math.nan, "d", "m", 1e-9)

    m = est(math.hypot(w, k))
    mk = est(math.sqrt(w**2 + 2 * k**2))
    out = line_shape_corrected(m, mk)
    assert abs(m.length_cm / lc - 1) > 0.01  # the bias: 1.1 %
    assert abs(out.length_cm / lc - 1) < (k / w) ** 4  # second order: (k/w)⁴ = 5e-4
    assert out.u_length_cm == pytest.approx(0.25 * abs(out.length_cm - m.length_cm), rel=1e-3)


def test_line_set_figures_of_a_doublet():
    # IES centroid (first moment) and JCGM 100 §5.1.2, closed form for two lines: the Na D
    # doublet 588.9950/589.5924 nm (standard air; NIST ASD, from memory) with intensities 2:1
    from ftsource.measure.lineset import line_set_figures

    f = line_set_figures([588.9950, 589.5924], [0.001, 0.002], [2.0, 1.0], [0.1, 0.1])
    assert f.peak_nm == 588.9950 and f.u_peak_nm == 0.001  # the stronger line
    c = (2 * 588.9950 + 589.5924) / 3
    assert f.centroid_nm == pytest.approx(c, abs=1e-12)
    u2 = (2 / 3 * 0.001) ** 2 + (1 / 3 * 0.002) ** 2 + ((588.9950 - c) / 3 * 0.1) ** 2 \
        + ((589.5924 - c) / 3 * 0.1) ** 2
    assert f.u_centroid_nm == pytest.approx(math.sqrt(u2), rel=1e-12)
    one = line_set_figures([632.8], [0.01], [1.0])
    assert (one.peak_nm, one.centroid_nm, one.u_centroid_nm) == (632.8, 632.8, 0.01)


def test_delay_weight_is_the_window_at_the_group_delay():
    # Happ-Genzel window A(ξ) = 0.54 + 0.46 cos(πξ) (Happ & Genzel; Harris, Proc. IEEE 66,
    # 1978, the Hamming coefficients): the weight of a component delayed by τ is A(τ/L)
    # (convolution and shift theorems, Bracewell ch. 6)
    from ftsource.spectrum.apodization import get_apodization
    from ftsource.spectrum.phase import MIN_DELAY_WEIGHT, delay_weight

    hg = get_apodization("happ-genzel")
    L = 0.02
    tau = np.array([0.0, 0.002, 0.005, 0.01])
    want = 0.54 + 0.46 * np.cos(np.pi * tau / L)
    np.testing.assert_allclose(delay_weight(tau, L, hg), want, rtol=1e-12)
    # beyond the smallest weight divided out (and beyond the window) nothing is divided
    far = np.array([0.0125, 0.03])
    assert np.all(0.54 + 0.46 * np.cos(np.pi * np.minimum(far / L, 1)) < MIN_DELAY_WEIGHT)
    np.testing.assert_array_equal(delay_weight(far, L, hg), [1.0, 1.0])


def test_polynomial_group_delay_is_the_derivative_of_the_phase():
    # φ(σ) = c0 + c1 s + c2 s² + c3 s³ (s = σ − σ_c): φ and φ'/2π in closed form inside the
    # band; beyond it the Taylor quadratic at the edge (value, slope, curvature)
    c = (0.3, 2 * np.pi * 1e-3, 2.0e-4, -1.0e-8)
    p = D.PolynomialPhase(17000.0, c, (0.0,) * 4, (16000.0, 18000.0), 0.0)

    def phi(d):
        return c[0] + c[1] * d + c[2] * d**2 + c[3] * d**3

    def dphi(d):
        return c[1] + 2 * c[2] * d + 3 * c[3] * d**2

    s = np.array([16500.0, 17000.0, 17800.0])
    d = s - 17000.0
    np.testing.assert_allclose(p(s), phi(d), rtol=1e-12)
    np.testing.assert_allclose(p.group_delay_cm(s), np.abs(dphi(d)) / (2 * np.pi), rtol=1e-12)
    e, h = 1000.0, 500.0  # 18500 cm⁻¹: 500 beyond the upper edge
    curv = 2 * c[2] + 6 * c[3] * e
    np.testing.assert_allclose(p([18500.0]), phi(e) + dphi(e) * h + 0.5 * curv * h**2,
                               rtol=1e-12)
    np.testing.assert_allclose(p.group_delay_cm([18500.0]),
                               abs(dphi(e) + curv * h) / (2 * np.pi), rtol=1e-12)


@pytest.mark.parametrize("name, zero_fill", [("boxcar", 1), ("boxcar", 4), ("happ-genzel", 4)])
def test_noise_correlation_is_the_windows_correlation_sum(name, zero_fill):
    # Discrete closed form: for white noise n_i windowed by w_i and zero-filled to N_fft
    # points, the covariances of the spectrum points sum (over all points) to N_fft·w₀²·σ²
    # while one point's variance is σ²·Σw_i² (DFT orthogonality), so Σρ = N_fft·w₀²/Σw_i²;
    # the windows are written out here (boxcar 1; Happ-Genzel 0.54 + 0.46 cos πξ, Harris 1978)
    from types import SimpleNamespace

    from ftsource.spectrum.spectrum import noise_correlation

    m, dx = 2000, 1e-5
    xi = np.abs(np.arange(-m, m + 1)) / m
    w = np.ones_like(xi) if name == "boxcar" else 0.54 + 0.46 * np.cos(np.pi * xi)
    n_fft = zero_fill * (2 * m + 1)
    want = n_fft * w[m] ** 2 / np.sum(w**2)
    sigma = np.arange(n_fft // 2 + 1) / (n_fft * dx)
    spec = SimpleNamespace(sigma_per_cm=sigma, max_opd_cm=m * dx,
                           line_shape=SimpleNamespace(apodization=name))
    assert noise_correlation(spec) == pytest.approx(want, rel=2e-3)
