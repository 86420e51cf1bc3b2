"""Tests of ftsource.spectrum.spectrum: the line shape, densities per wavenumber and per wavelength,
one sweep's transform and co-adding with its noise estimate.

Oracles (named again beside each check):
* closed forms written here, independently of the module: the transform of a truncated
  exponential (elementary), of a truncated Gaussian (via the complex error function,
  Abramowitz & Stegun 7.4.6 / DLMF 7.7), of cosine sums ([sinc(u − k) + sinc(u + k)]/2,
  elementary), the sine integral for the partial area of the boxcar line shape (DLMF 6.2.5),
  Poisson's summation formula for the area of a sampled kernel, the Rayleigh distribution of
  the modulus of circular Gaussian noise (median s·√(2 ln 2));
* scipy.integrate.quad with weight='cos' (QUADPACK QAWO) as an independent numerical integral;
* /work/shared/reference/check-values.md §1 (FWHM and largest sidelobe of the continuous ILS)
  and §8 (a spectrum Gaussian in wavelength peaks at 525.62 nm per unit wavenumber).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate, special

from ftsource.interferogram.opd import Sweep
from ftsource.interferogram.resample import Interferogram
from ftsource.spectrum.apodization import get_apodization, instrument_line_shape
from ftsource.spectrum.spectrum import LineShape, Spectrum, coadd, sweep_spectrum

LN2 = np.log(2.0)
DX = 632.991e-7 / 8  # OPD step, cm: a He–Ne reference wavelength over 8 (any uniform step works)

# check-values.md §1, continuous ILS: FWHM in units of 1/(2L) (status C, and V where MathWorld
# is named there).
FWHM_FACTOR = {
    "boxcar": 1.20671,
    "triangular": 1.77179,
    "happ-genzel": 1.81522,
    "hann": 2.00000,
    "blackman-harris-4": 2.66643,
    "norton-beer-medium": 1.68939,
}


def _fake_sweep(n: int, index: int = 0) -> Sweep:
    return Sweep(index, 0, n, 1, 0, DX * (n - 1), 1.0, 1.0)


def _interferogram(y: np.ndarray, x0_cm: float, index: int = 0) -> Interferogram:
    return Interferogram(float(x0_cm), DX, np.asarray(y, float), _fake_sweep(y.size, index), 0.0)


def _n_fft(n: int) -> int:
    from scipy.fft import next_fast_len

    return int(next_fast_len(4 * n, real=True))


def _quad_kernel(name, L, delta, envelope=lambda x: 1.0):
    """2∫₀ᴸ A(x/L)·env(x)·cos(2πδx) dx by QUADPACK (QAWO), independent of the module."""
    apo = get_apodization(name)
    f = lambda x: float(apo(x / L)) * envelope(x)  # noqa: E731
    out = []
    for d in np.atleast_1d(delta):
        if d == 0:
            v = integrate.quad(f, 0.0, L, limit=400, epsabs=1e-13)[0]
        else:
            v = integrate.quad(f, 0.0, L, weight="cos", wvar=2 * np.pi * d, limit=400,
                               epsabs=1e-13)[0]
        out.append(2 * v)
    return np.array(out)


# ------------------------------------------------------------------------------------------
# LineShape.kernel


@pytest.mark.parametrize("name", sorted(FWHM_FACTOR))
def test_kernel_is_the_normalised_ils(name):
    L = 0.7
    shape = LineShape(name, (L,), (1.0,))
    delta = np.linspace(-12 / L, 12 / L, 97)
    k = shape.kernel(delta)
    # normalisation K(0) = 2∫₀ᴸ A(x/L) dx, by quad (independent of both modules)
    k0 = _quad_kernel(name, L, [0.0])[0]
    ils = instrument_line_shape(delta, L, name)
    # both are Gauss–Legendre sums of smooth integrands: agreement to rounding (1e-9 of peak)
    np.testing.assert_allclose(k, ils * k0, rtol=0, atol=1e-9 * k0)
    # and an independent numerical integral (QUADPACK QAWO, absolute error ≤ 1e-12)
    sel = delta[::8]
    np.testing.assert_allclose(shape.kernel(sel), _quad_kernel(name, L, sel), rtol=0,
                               atol=1e-9 * k0)


@pytest.mark.parametrize("name", sorted(FWHM_FACTOR))
def test_kernel_fwhm_is_the_tabulated_factor(name):
    L = 0.37
    shape = LineShape(name, (L,), (1.0,))
    expected = FWHM_FACTOR[name] / (2 * L)  # check-values §1
    # the table carries 6 significant figures
    assert shape.fwhm_per_cm == pytest.approx(expected, rel=2e-5)
    # and independently of the module's root finder: half height at ±FWHM/2 (the slope there
    # is about 1/FWHM of the peak per cm⁻¹, so 6 figures of FWHM give ~1e-5 of the peak)
    k = shape.kernel(np.array([0.0, expected / 2, -expected / 2]))
    assert k[1] / k[0] == pytest.approx(0.5, abs=2e-5)
    assert k[2] == pytest.approx(k[1], rel=1e-12)  # even in δ


def test_kernel_area_is_one():
    L = 0.7
    h = 0.05 / (2 * L)  # step ≪ 1/L: Poisson summation, h·Σ K(kh) = f(0) exactly when 1/h > L
    D = 200 / (2 * L)
    d = np.arange(-D, D + h / 2, h)
    # Hann: A and A' vanish at ξ = 1, so its tails fall as u⁻³ and the area outside
    # |u| = 2LD = 200 is O(1/(π³u²)) ~ 1e-6 at most (measured 1.3e-8); a Gaussian-broadened
    # kernel has Gaussian tails (γ(L) = e^{-32}): the truncated sum is 1 to rounding
    for name, g, tol in (("hann", 0.0, 1e-6), ("happ-genzel", 3 / L, 1e-9),
                         ("boxcar", 3 / L, 1e-9)):
        area = h * LineShape(name, (L,), (1.0,)).kernel(d, g, 0.0).sum()
        assert area == pytest.approx(1.0, abs=tol), name
    # boxcar: 2L sinc has slow tails; the area inside ±D is (2/π) Si(2πLD) (DLMF 6.2.5); the
    # Riemann sum and the integral differ by O(h²K''), ~1e-5 here
    area = h * LineShape("boxcar", (L,), (1.0,)).kernel(d).sum()
    assert area == pytest.approx(2 / np.pi * special.sici(2 * np.pi * L * D)[0], abs=5e-6)
    # Lorentzian-broadened: the wings outside ±D hold 1 − (2/π) atan(2D/l) of the area
    lor = 3 / L
    area = h * LineShape("hann", (L,), (1.0,)).kernel(d, 0.0, lor).sum()
    assert area == pytest.approx(2 / np.pi * np.arctan(2 * D / lor), abs=2e-5)


def test_broadened_kernels_against_closed_forms():
    """Boxcar: K is the transform of the truncated coherence function, in closed form."""
    L = 0.5
    shape = LineShape("boxcar", (L,), (1.0,))
    d = np.linspace(-20, 20, 81)
    b = 2 * np.pi * d
    # Lorentzian: 2∫₀ᴸ e^{−ax} cos(bx) dx = 2 Re[(1 − e^{−(a−ib)L})/(a − ib)], a = πl
    lor = 7.0
    z = np.pi * lor - 1j * b
    closed = 2 * np.real((1 - np.exp(-z * L)) / z)
    np.testing.assert_allclose(shape.kernel(d, 0.0, lor), closed, rtol=0, atol=1e-10)
    # Gaussian: 2∫₀ᴸ e^{−cx²} cos(bx) dx = √(π/c) e^{−b²/4c} Re erf(√c L + i b/(2√c)),
    # c = π²g²/(4 ln 2) (A&S 7.4.6 with the error function of complex argument, DLMF 7.7)
    g = 3.0
    c = np.pi**2 * g**2 / (4 * LN2)
    closed = np.sqrt(np.pi / c) * np.exp(-(b**2) / (4 * c)) * np.real(
        special.erf(np.sqrt(c) * L + 1j * b / (2 * np.sqrt(c)))
    )
    np.testing.assert_allclose(shape.kernel(d, g, 0.0), closed, rtol=0, atol=1e-10)


def test_gaussian_broadened_kernel_tends_to_the_gaussian_profile():
    g = 2.0  # cm⁻¹
    d = np.linspace(-3 * g, 3 * g, 121)
    # the Gaussian of FWHM g and unit area (closed form)
    gauss = 2 * np.sqrt(LN2 / np.pi) / g * np.exp(-4 * LN2 * d**2 / g**2)
    errs = []
    for gL in (5.0, 10.0, 20.0):
        k = LineShape("happ-genzel", (gL / g,), (1.0,)).kernel(d, g, 0.0)
        errs.append(np.max(np.abs(k - gauss)) / gauss.max())
    # the apodization weighs γ(x) by A(x/L) ≈ 1 − 2.27 (x/L)² near ZPD (Taylor expansion of
    # 0.54 + 0.46 cos πξ), and ⟨x²⟩ under γ is 2 ln 2/(π² g²): a relative error ≈ 0.32/(gL)²,
    # 1.3e-2, 3.2e-3 and 8e-4 for gL = 5, 10, 20; allow 1.5× that
    for gL, e in zip((5.0, 10.0, 20.0), errs, strict=True):
        assert e < 1.5 * 0.32 / gL**2, (gL, e)
    assert errs[0] > errs[1] > errs[2]
    # boxcar: no apodization, only the truncation at L (γ(L) = e^{-356} for gL = 10)
    k = LineShape("boxcar", (10.0 / g,), (1.0,)).kernel(d, g, 0.0)
    np.testing.assert_allclose(k, gauss, rtol=0, atol=1e-10 * gauss.max())


def test_signed_widths_continue_smoothly_through_zero():
    L = 0.4
    shape = LineShape("happ-genzel", (L,), (1.0,))
    d = np.linspace(-10 / L, 10 / L, 41)
    eps = 0.02 / L**2  # a small q = FWHM², well below the resolution's square
    c = np.pi**2 * eps / (4 * LN2)  # the envelope is exp(−c x²); c L² = 0.071
    for q in (eps, -eps):
        # independent integral with the signed envelope exp(−π² q x²/(4 ln 2)) (quad, QAWO)
        ref = _quad_kernel("happ-genzel", L, d, lambda x, q=q: np.exp(-np.pi**2 * q * x**2
                                                                      / (4 * LN2)))
        np.testing.assert_allclose(shape.kernel_signed(d, q, 0.0), ref, rtol=0, atol=1e-10)
    # smooth through zero: K(±ε) = K₀ ± εK₁ + ε²K₂ (Taylor in q), so the mean of ±ε differs
    # from K₀ by ε²K₂, about ½cL² of the first-order change εK₁ (x ≤ L bounds ⟨x⁴⟩/⟨x²⟩ by L²);
    # a kink at q = 0 would leave a first-order difference
    k_plus, k_minus = shape.kernel_signed(d, eps, 0.0), shape.kernel_signed(d, -eps, 0.0)
    k_zero = shape.kernel(d)
    first = np.max(np.abs(k_plus - k_zero))
    assert first > 1e-3 * k_zero.max()  # the width parameter does act
    assert np.max(np.abs(0.5 * (k_plus + k_minus) - k_zero)) < 0.5 * c * L**2 * first
    # the Lorentzian width: signed, e^{+π|l|x} for l < 0 (elementary closed form as above)
    lor = -2.0
    z = np.pi * lor - 2j * np.pi * d
    closed = 2 * np.real((1 - np.exp(-z * L)) / z)
    np.testing.assert_allclose(LineShape("boxcar", (L,), (1.0,)).kernel_signed(d, 0.0, lor),
                               closed, rtol=0, atol=1e-10)


def test_magnitude_kind_folds_sidelobes():
    L = 0.5
    real = LineShape("boxcar", (L,), (1.0,), "real")
    mag = LineShape("boxcar", (L,), (1.0,), "magnitude")
    d = np.linspace(-15 / L, 15 / L, 301)
    np.testing.assert_allclose(mag.kernel(d), np.abs(real.kernel(d)), rtol=1e-13, atol=0)
    # the largest boxcar sidelobe, −21.72 % of the peak (check-values §1), turns positive
    from scipy.optimize import minimize_scalar

    u = minimize_scalar(lambda u: np.sinc(u), bounds=(1.0, 2.0), method="bounded").x
    dmin = np.array([u / (2 * L)])
    k0 = real.kernel(np.zeros(1))[0]
    assert real.kernel(dmin)[0] / k0 == pytest.approx(-0.2172, abs=1e-4)
    assert mag.kernel(dmin)[0] / k0 == pytest.approx(+0.2172, abs=1e-4)
    # sweeps of different span fold separately: Σ w|K_L|, not |Σ w K_L|
    two = LineShape("boxcar", (0.5, 0.3), (0.5, 0.5), "magnitude")
    each = 0.5 * np.abs(real.kernel(d)) + 0.5 * np.abs(
        LineShape("boxcar", (0.3,), (1.0,)).kernel(d))
    np.testing.assert_allclose(two.kernel(d), each, rtol=1e-13, atol=0)
    assert np.all(mag.kernel(d) >= 0)


def test_noise_correlation_is_the_transform_of_a_squared():
    L = 0.6
    d = np.linspace(-8 / L, 8 / L, 161)
    box = LineShape("boxcar", (L,), (1.0,))
    assert box.noise_correlation(np.zeros(1))[0] == 1.0
    # boxcar: A² = 1, so R(δ) = sinc(2Lδ) (numpy's normalised sinc; closed form)
    np.testing.assert_allclose(box.noise_correlation(d), np.sinc(2 * L * d), rtol=0, atol=1e-12)
    # Hann: A² = 3/8 + ½ cos πξ + ⅛ cos 2πξ, each term [sinc(u−k) + sinc(u+k)]/2 with u = 2Lδ
    u = 2 * L * d
    terms = {0: 3 / 8, 1: 1 / 2, 2: 1 / 8}
    tr = sum(c * (np.sinc(u - k) + np.sinc(u + k)) / 2 for k, c in terms.items())
    hann = LineShape("hann", (L,), (1.0,))
    np.testing.assert_allclose(hann.noise_correlation(d), tr / tr[d.size // 2], rtol=0,
                               atol=1e-12)
    # the magnitude kind has the same correlation (it folds only the line shape)
    mag = LineShape("hann", (L,), (1.0,), "magnitude")
    np.testing.assert_allclose(mag.noise_correlation(d), hann.noise_correlation(d), atol=1e-15)


def test_noise_correlation_matches_transformed_white_noise():
    """Real part of the transform of apodized white noise, correlation between bins."""
    rng = np.random.default_rng(20240611)
    m = 200
    k = np.arange(-m, m + 1)
    L = m * DX
    w = get_apodization("happ-genzel")(np.abs(k) / m)
    nfft = 4 * (2 * m + 1)
    y = rng.normal(size=(300, k.size)) * w
    buf = np.zeros((300, nfft))
    buf[:, np.mod(k, nfft)] = y
    re = np.fft.rfft(buf, axis=1).real[:, nfft // 16 : nfft // 2 - nfft // 16]
    lags = np.arange(0, 13)
    emp = np.array([np.mean(re[:, : re.shape[1] - j] * re[:, j:]) for j in lags])
    emp /= emp[0]
    model = LineShape("happ-genzel", (L,), (1.0,)).noise_correlation(lags / (nfft * DX))
    # 300 × ~1200 bin pairs, ~300 × 150 of them independent: standard error ≈ 1/√45000 ≈ 5e-3
    np.testing.assert_allclose(emp, model, rtol=0, atol=0.02)


@pytest.mark.parametrize("name", sorted(FWHM_FACTOR))
def test_sidelobe_envelope_bounds_the_kernel(name):
    L = 0.5
    shape = LineShape(name, (L,), (1.0,), "magnitude")
    fw = shape.fwhm_per_cm
    d = np.linspace(0, 150 * fw, 6001)  # beyond the 100 widths the module tabulates
    ratio = np.abs(shape.kernel(d)) / shape.kernel(np.zeros(1))[0]
    env = shape.sidelobe_envelope(d)
    # an upper envelope: tabulated every fw/12 with parabolic lobe tops, it can miss a top by
    # a few % where lobes are only ~4 steps apart (Blackman–Harris 4-term: measured 4.8 %, the
    # others ≤ 1.2 %); find_lines doubles the envelope, so 6 % slack is what matters (the log
    # grid it replaced missed tops by up to 24 %)
    assert np.all(env >= 0.94 * ratio)
    # 1 in the main lobe (up to the last tabulated point inside it, within fw/12 of its edge)
    assert np.all(env[d <= fw * (1 - 1 / 12)] == 1.0) and np.all(env <= 1.0)
    # and not a loose bound: within the tabulated range it touches the lobes' tops
    top = d <= 100 * fw
    assert np.max(ratio[top & (d > 2 * fw)] / env[top & (d > 2 * fw)]) > 0.95


def test_sidelobe_envelope_boxcar_first_lobe():
    # just beyond the main lobe the envelope is the first sidelobe, 21.72 % (check-values §1)
    box = LineShape("boxcar", (0.5,), (1.0,))
    assert box.sidelobe_envelope(np.array([1.45 / (2 * 0.5)]))[0] == pytest.approx(0.2172,
                                                                                   abs=1e-3)


# ------------------------------------------------------------------------------------------
# Spectrum: densities per wavelength


def _spectrum(sigma, density, noise=None):
    noise = np.full_like(density, 1.0) if noise is None else noise
    return Spectrum(np.asarray(sigma, float), np.asarray(density, float), noise,
                    LineShape("happ-genzel", (0.1,), (1.0,)), "mertz", ())


def test_density_per_nm_is_the_change_of_variable():
    sigma = np.linspace(15000.0, 23000.0, 40001)
    # a spectrum Gaussian in wavelength, λp = 525 nm, FWHM 30 nm, written per cm⁻¹ with the
    # Jacobian |dλ/dσ| = 10⁷/σ² (closed form; check-values §8)
    lam = 1e7 / sigma
    g_lam = np.exp(-4 * LN2 * (lam - 525.0) ** 2 / 30.0**2)
    s_sigma = g_lam * 1e7 / sigma**2
    spec = _spectrum(sigma, s_sigma, noise=0.01 * s_sigma)
    # per nm: S_λ = S_σ σ²/10⁷ gives back the Gaussian in λ (rounding only)
    np.testing.assert_allclose(spec.density_per_nm, g_lam, rtol=1e-12, atol=0)
    np.testing.assert_allclose(spec.noise_per_nm, 0.01 * g_lam, rtol=1e-12, atol=0)
    # areas agree: ∫S_σ dσ = ∫S_λ dλ (trapezoid rules on 40001 points, both ≪ 1e-6 off)
    a_sigma = integrate.trapezoid(spec.density, spec.sigma_per_cm)
    a_lam = -integrate.trapezoid(spec.density_per_nm, spec.wavelength_nm)
    assert a_lam == pytest.approx(a_sigma, rel=1e-6)
    assert a_lam == pytest.approx(30.0 * np.sqrt(np.pi / (4 * LN2)), rel=1e-4)  # closed form
    # per unit wavenumber the same spectrum peaks at 525.62 nm (check-values §8, C); the grid
    # step is 0.2 cm⁻¹ ≈ 0.006 nm
    peak_nm = spec.wavelength_nm[np.argmax(spec.density)]
    assert peak_nm == pytest.approx(525.62, abs=0.01)


def test_spectrum_axis_properties():
    sigma = np.array([0.0, 10000.0, 20000.0])
    spec = _spectrum(sigma, np.ones(3))
    assert spec.wavelength_nm[1] == pytest.approx(1000.0)
    assert np.isinf(spec.wavelength_nm[0])
    # resolution = fwhm_factor/(2L), Happ–Genzel 1.81522 (check-values §1)
    assert spec.resolution_per_cm == pytest.approx(1.81522 / 0.2, rel=1e-5)
    # sweeps of different span: the resolution is the FWHM of the co-added line shape (half
    # height at ±resolution/2), not fwhm_factor/(2·mean L)
    mixed = Spectrum(sigma, np.ones(3), np.ones(3),
                     LineShape("happ-genzel", (0.02, 0.05, 0.035), (1 / 3,) * 3), "mertz", ())
    res = mixed.resolution_per_cm
    k = mixed.line_shape.kernel(np.array([0.0, res / 2]))
    assert k[1] / k[0] == pytest.approx(0.5, abs=1e-6)
    assert abs(res - 1.81522 / (2 * mixed.max_opd_cm)) > 0.05 * res
    moved = spec.with_axis(sigma * 1.001)
    assert moved.sigma_per_cm[2] == pytest.approx(20020.0)
    assert spec.sigma_per_cm[2] == 20000.0  # not mutated


# ------------------------------------------------------------------------------------------
# sweep_spectrum and coadd


def test_sweep_without_zpd_gives_the_magnitude_about_its_centre():
    n = 2001
    x = DX * np.arange(n) + 0.3  # far from ZPD
    s0 = 1e7 / 700.0
    a = 0.8
    ss = sweep_spectrum(_interferogram(a * np.cos(2 * np.pi * s0 * x), x[0]), _n_fft(n))
    assert ss.method == "magnitude" and not ss.zpd_found
    assert ss.L_cm == pytest.approx(DX * (n - 1) / 2, rel=1e-12)  # half the span
    sigma = np.arange(ss.values.size) / (_n_fft(n) * DX)
    spec = coadd([ss], sigma, "happ-genzel")
    assert spec.line_shape.kind == "magnitude" and spec.phase_method == "magnitude"
    # I(x) = ∫B cos(2πσx)dσ with B = a δ(σ − σ0): the spectrum is a·K(σ − σ0) (the phase
    # module's normalisation). The sampled window differs from the continuous integral by the
    # Euler–Maclaurin end term, A(1)·dx/(2L∫A) ≈ 0.08/(2000 × 0.54) ≈ 7e-5 of the peak, and
    # the image at −σ0 adds a Happ–Genzel far sidelobe (∝ 1/u, ~1e-4 of the peak at u ≈ 450):
    # 3e-4 of the peak
    near = np.abs(sigma - s0) < 3 * spec.line_shape.fwhm_per_cm
    expected = a * spec.line_shape.kernel(sigma[near] - s0)
    np.testing.assert_allclose(spec.density[near], expected, rtol=0, atol=3e-4 * expected.max())


def test_sweep_through_zpd_is_phase_corrected():
    n = 4001
    x = DX * (np.arange(n) - 1200.3)  # ZPD between samples, one-sided
    s0, g = 1e7 / 600.0, 600.0
    y = np.exp(-((np.pi * g * x) ** 2) / (4 * LN2)) * np.cos(2 * np.pi * s0 * x + 0.4)
    nfft = _n_fft(n)
    ss = sweep_spectrum(_interferogram(y, x[0]), nfft)
    assert ss.method == "mertz" and ss.zpd_found
    assert ss.x_zpd_cm == pytest.approx(0.0, abs=0.05 * DX)
    sigma = np.arange(ss.values.size) / (nfft * DX)
    spec = coadd([ss], sigma, "happ-genzel")
    # the spectrum is the Gaussian of FWHM g seen through the line shape: K(σ − σ0; g)
    # (closed form of the forward model; the Mertz phase of a constant 0.4 rad is exact)
    near = np.abs(sigma - s0) < 2 * g
    expected = spec.line_shape.kernel(sigma[near] - s0, g, 0.0)
    np.testing.assert_allclose(spec.density[near], expected, rtol=0, atol=2e-3 * expected.max())


def _component_noise(n_samples, noise_rms, weights):
    """Standard deviation of one component (real or imaginary) of dx·Σ wₖ yₖ e^{−2πiσxₖ} for
    white yₖ: dx σ_y √(Σw²/2) (closed form, away from σ = 0 and the folding wavenumber)."""
    return DX * noise_rms * np.sqrt(np.sum(weights**2) / 2)


def test_coadd_noise_on_pure_noise_magnitude():
    rng = np.random.default_rng(7)
    n, noise_rms, n_sweeps = 4001, 0.3, 4
    nfft = _n_fft(n)
    sweeps = [sweep_spectrum(_interferogram(noise_rms * rng.normal(size=n), 0.0, i), nfft)
              for i in range(n_sweeps)]
    assert {s.method for s in sweeps} == {"magnitude"}
    sigma = np.arange(sweeps[0].values.size) / (nfft * DX)
    spec = coadd(sweeps, sigma, "happ-genzel")
    half = (n - 1) // 2
    w = 2 * get_apodization("happ-genzel")(np.abs(np.arange(-half, half + 1)) / half)
    s_comp = _component_noise(n, noise_rms, w)
    # the Rayleigh median is s·√(2 ln 2): the noise per component is recovered from each
    # sweep; the median of ~1000 correlated points (≈ 250 independent) is good to ~4 %, and
    # 8 blocks × 4 sweeps bring it to ~1 %: 4 % tolerance
    assert np.median(spec.noise) * np.sqrt(n_sweeps) == pytest.approx(s_comp, rel=0.04)
    # the mean of 4 sweeps: √(Σ floor²)/4
    assert np.allclose(spec.noise, spec.noise[0])
    # the modulus of pure noise: mean s√(π/2) per sweep (Rayleigh), not zero
    mid = slice(sigma.size // 8, -sigma.size // 8)
    assert np.mean(spec.density[mid]) == pytest.approx(s_comp * np.sqrt(np.pi / 2), rel=0.03)


@pytest.mark.parametrize("zpd_fraction", [0.5, 0.12])
def test_coadd_noise_of_phase_corrected_sweeps(zpd_fraction):
    """Double-sided and one-sided sweeps: the stated noise is the scatter of the real part."""
    rng = np.random.default_rng(11)
    n, noise_rms = 4001, 0.02
    x = DX * (np.arange(n) - zpd_fraction * (n - 1))
    s0, g = 1e7 / 600.0, 400.0
    burst = np.exp(-((np.pi * g * x) ** 2) / (4 * LN2)) * np.cos(2 * np.pi * s0 * x)
    nfft = _n_fft(n)
    sweeps = [sweep_spectrum(_interferogram(burst + noise_rms * rng.normal(size=n), x[0], i),
                             nfft) for i in range(3)]
    assert {s.method for s in sweeps} == {"mertz"}
    sigma = np.arange(sweeps[0].values.size) / (nfft * DX)
    spec = coadd(sweeps, sigma, "happ-genzel")
    empty = (sigma > 25000) & (sigma < 55000)  # no source there
    scatter = np.std(spec.density[empty])
    # ~30000 correlated points, ≈ 7500 independent: the scatter is good to ~1 %; the stated
    # noise is a median of block spreads, ~2 %: 6 % tolerance
    assert np.median(spec.noise) == pytest.approx(scatter, rel=0.06)
    if zpd_fraction == 0.5:
        # double-sided: w = 2A over ±L, closed form as above
        half = min(int(round(zpd_fraction * (n - 1))), n - 1 - int(round(zpd_fraction * (n - 1))))
        w = 2 * get_apodization("happ-genzel")(np.abs(np.arange(-half, half + 1)) / half)
        assert np.median(spec.noise) == pytest.approx(
            _component_noise(n, noise_rms, w) / np.sqrt(3), rel=0.06)


# --------------------------------------------------------------------------------------------
# reconvolve: the measured line convolved with the line shape once more


@pytest.mark.parametrize("name", ["happ-genzel", "norton-beer-medium"])
def test_reconvolve_of_a_monochromatic_line_is_the_transform_of_the_squared_apodization(name):
    # Convolution theorem: the line shape K is the transform of A(|x|/L) over [−L, L], so
    # K∗K is the transform of A², 2∫₀ᴸ A(x/L)² cos(2πδx) dx, evaluated here by adaptive
    # quadrature (scipy.integrate.quad), independently of LineShape.
    from ftsource.spectrum.spectrum import reconvolve

    L = 0.05
    shape = LineShape(name, (L,), (1.0,))
    step = 1.0 / (8 * 2 * L)  # a zero-filled grid: 8 points per 1/(2L)
    sigma = 15000.0 + step * np.arange(-4000, 4001)
    s0 = 15000.0 + 0.3 * step  # off-grid line
    spec = Spectrum(sigma, shape.kernel(sigma - s0), np.zeros_like(sigma), shape, "mertz", ())
    twice = reconvolve(spec, (s0 - 40 / L, s0 + 40 / L))
    apo = get_apodization(name)
    offsets = np.array([0.0, 3.0, 10.0, 25.0, 60.0]) * step
    for d in offsets:
        i = int(np.argmin(np.abs(sigma - (s0 + d))))
        dd = sigma[i] - s0
        k2 = 2 * integrate.quad(lambda x, dd=dd: apo(x / L) ** 2 * np.cos(2 * np.pi * dd * x),
                                0, L, limit=200)[0]
        # the kernel is cut at 30 resolution elements and renormalised: 1e-3 of the peak
        assert twice[i] == pytest.approx(k2, abs=1e-3 * 2 * L)
    assert np.isnan(twice[0]) and np.isnan(twice[-1])  # outside the band asked for


@pytest.mark.parametrize("kind", ["real", "magnitude"])
def test_kernel_shifted_equals_direct_quadrature(kind):
    """The tabled line shape at a moving centre (cos/sin tables of the window) against the
    direct quadrature of :meth:`LineShape.kernel_signed` (the slow oracle, itself checked
    against closed forms above), over narrow, broad, growing and mixed widths; the tables are
    reused between calls as in a fit."""
    shape = LineShape("happ-genzel", (0.5, 0.48, 0.3), (0.4, 0.4, 0.2), kind)
    s = 15800 + np.arange(-60, 61) * 0.25
    for c, q, lor in [(15800.1, 0.0, 0.0), (15800.3, 4.0, 0.5), (15799.9, -1.0, -0.3),
                      (15800.0, 400.0, 10.0), (15800.0, 100.0, 2.0), (15800.0, 900.0, 0.0),
                      (15800.2, 0.0, 0.0)]:
        want = shape.kernel_signed(s - c, q, lor)
        got = shape.kernel_shifted(s, c, q, lor)
        # two quadratures of the same integral: rounding-level agreement (1e-11 of the peak)
        assert np.max(np.abs(got - want)) < 1e-11 * np.max(np.abs(want))
