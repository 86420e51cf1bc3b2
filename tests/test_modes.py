"""Tests of ftsource.measure.modes.

Sources of the expected values:
* A Fabry–Pérot comb (Siegman, *Lasers*, 1986, §11.3): modes at σ_k = σ₀ + kΔσ, equally spaced
  in vacuum wavenumber, with Δσ = Δλ/λ² for a spacing Δλ near λ (first order; closed form),
  cavity optical length n_g·L = 1/(2Δσ) = λ²/(2Δλ) and free spectral range Δν = c·Δσ with
  c = 299 792 458 m/s (exact, SI 2019).
* A Gaussian envelope of FWHM W: intensities exp(-4 ln 2 (σ_k − σ₀)²/W²) (closed form).
* The interferogram of narrow modes is Σ a_k [1 + cos(2πσ_k x)] (closed form, written here); it
  is periodic in x with period 1/Δσ, so its visibility revives at multiples of 1/Δσ
  (Born & Wolf, *Principles of Optics*, §7.5.8).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource.errors import AnalysisError, OptionError, RecordError
from ftsource.measure.modes import ModeComb, check_revivals, find_mode_comb, revival_opd_cm
from ftsource.simulate import multimode

LN2 = np.log(2.0)
C_CM_S = 29_979_245_800.0  # exact (SI 2019)
LAM = 650.0  # nm, invented laser
DLAM = 0.1  # nm, invented mode spacing
S0 = 1e7 / LAM
DS = 1e7 * DLAM / LAM**2  # Δσ = Δλ/λ² (closed form, first order)
# Envelope FWHM 4.3 spacings: modes k = ±4 are at exp(-4 ln2 (4/4.3)²) = 0.091 and k = ±5 at
# 0.047 of the peak, so exactly 9 modes lie above the default 5 % (closed form).
ENV = 4.3 * DS
SPACING_TOL = 1e-3  # the task's requirement (0.1 %)


def comb(k=None, env=ENV):
    k = np.arange(-7, 8) if k is None else k
    sig = S0 + k * DS
    return sig, np.exp(-4 * LN2 * ((sig - S0) / env) ** 2)


def comb_interferogram(x, sig, amp, mode_fwhm=0.0):
    """Closed form Σ a_k [1 + exp(-π w |x|) cos(2π σ_k x)] (Lorentzian modes of FWHM w)."""
    return sum(a * (1 + np.exp(-np.pi * mode_fwhm * np.abs(x)) * np.cos(2 * np.pi * s * x))
               for s, a in zip(sig, amp, strict=True))


def test_nine_mode_comb():
    sig, amp = comb()
    c = find_mode_comb(sig, amp)
    assert isinstance(c, ModeComb)
    assert c.n_modes == 9 and c.n_missing == 0 and c.mode_numbers == tuple(range(9))
    assert c.spacing_nm == pytest.approx(DLAM, rel=SPACING_TOL)
    assert c.spacing_per_cm == pytest.approx(DS, rel=SPACING_TOL)
    # n_g L = λ²/(2Δλ), closed form, in cm
    assert c.cavity_optical_length_cm == pytest.approx((LAM * 1e-7) ** 2 / (2 * DLAM * 1e-7),
                                                       rel=SPACING_TOL)
    # Δν = c·Δσ (c exact)
    assert c.spacing_ghz == pytest.approx(C_CM_S * c.spacing_per_cm * 1e-9, rel=1e-14)
    assert c.spacing_ghz == pytest.approx(70.956795, rel=1e-6)  # c·Δλ/λ², by hand
    # symmetric Gaussian intensities: centroid at the centre, Gaussian envelope fitted exactly
    assert c.centroid_nm == pytest.approx(LAM, rel=1e-12)
    assert c.envelope_fwhm_per_cm == pytest.approx(ENV, rel=1e-9)
    assert c.envelope_fwhm_nm == pytest.approx(4.3 * DLAM, rel=1e-9)
    assert c.u_spacing_per_cm == pytest.approx(0.0, abs=1e-9 * DS)
    assert c.revival_opd_cm == pytest.approx(1 / DS, rel=1e-12)


def test_comb_from_simulator_lines():
    # ftsource.simulate.multimode lays modes at Δσ = σ₀Δλ/λ₀ (its docstring); the same closed
    # form as above.
    src = multimode(LAM, DLAM, 4.3 * DLAM)
    sig = np.array([ln.wavenumber_per_cm for ln in src.lines])
    amp = np.array([ln.strength for ln in src.lines])
    c = find_mode_comb(sig, amp)
    assert c.n_modes == 9
    assert c.spacing_nm == pytest.approx(DLAM, rel=SPACING_TOL)


def test_jittered_centres_and_uncertainty():
    # Fixed seed. Centres scattered by 0.005 cm⁻¹ (0.2 % of Δσ): the least-squares slope has
    # standard error 0.005/√Σ(m − m̄)² = 0.005/√60 (closed form, GUM §H.3).
    rng = np.random.default_rng(7)
    sig, amp = comb(np.arange(-4, 5))
    sj = sig + rng.normal(0, 0.005, sig.size)
    c = find_mode_comb(sj, amp)
    expected_u = 0.005 / np.sqrt(60.0)
    assert c.spacing_per_cm == pytest.approx(DS, rel=SPACING_TOL)
    assert abs(c.spacing_per_cm - DS) <= 3 * c.u_spacing_per_cm
    # the residual-based u scatters with 7 degrees of freedom: within a factor ~2 (chi-square)
    assert 0.4 < c.u_spacing_per_cm / expected_u < 1.8
    assert c.u_cavity_optical_length_cm == pytest.approx(
        c.u_spacing_per_cm / (2 * c.spacing_per_cm**2), rel=1e-12
    )


def test_missing_mode_and_order():
    sig, amp = comb()
    keep = np.ones(sig.size, bool)
    keep[8] = False  # mode k = +1 gone
    rng = np.random.default_rng(1)
    perm = rng.permutation(np.count_nonzero(keep))
    c = find_mode_comb(sig[keep][perm], amp[keep][perm])
    assert c.n_modes == 8 and c.n_missing == 1
    assert c.mode_numbers == (0, 1, 2, 3, 4, 6, 7, 8)
    assert c.spacing_per_cm == pytest.approx(DS, rel=1e-12)


def test_not_a_comb():
    sig, amp = comb()
    # a strong line between two modes (a second source): no comb
    assert find_mode_comb(np.r_[sig, S0 + 0.4 * DS], np.r_[amp, 0.5]) is None
    # a weak one below min_fraction is set aside
    assert find_mode_comb(np.r_[sig, S0 + 0.4 * DS], np.r_[amp, 0.01]).n_modes == 9
    # two lines only
    assert find_mode_comb(sig[6:8], amp[6:8]) is None
    # unequal spacings (beyond rtol)
    assert find_mode_comb(S0 + np.array([0.0, 1.0, 2.3, 3.0]), np.ones(4)) is None
    # a single line with weak neighbours
    assert find_mode_comb(sig, np.where(sig == S0, 1.0, 0.01)) is None


@settings(max_examples=50, deadline=None)
@given(
    n=st.integers(3, 30),
    spacing=st.floats(1e-3, 50.0),
    centre=st.floats(2000.0, 40000.0),
    scale=st.floats(1e-6, 1e6),
)
def test_recovers_any_exact_comb(n, spacing, centre, scale):
    # Closed form: equally spaced centres give back their spacing; intensities' scale is
    # irrelevant.
    sig = centre + spacing * np.arange(n)
    c = find_mode_comb(sig, scale * np.ones(n))
    assert c.n_modes == n
    assert c.spacing_per_cm == pytest.approx(spacing, rel=1e-9)
    assert c.cavity_optical_length_cm == pytest.approx(1 / (2 * spacing), rel=1e-9)


def test_find_mode_comb_errors():
    with pytest.raises(AnalysisError, match="shapes"):
        find_mode_comb([1.0, 2.0], [1.0])
    with pytest.raises(AnalysisError, match=">= 0"):
        find_mode_comb([1.0, 2.0, 3.0], [1.0, -1.0, 1.0])
    with pytest.raises(AnalysisError, match="positive"):
        find_mode_comb([1.0, 2.0, 3.0], [0.0, 0.0, 0.0])
    with pytest.raises(OptionError, match="min_fraction"):
        find_mode_comb([1.0, 2.0, 3.0], [1.0, 1.0, 1.0], min_fraction=1.0)
    with pytest.raises(OptionError, match="rtol"):
        find_mode_comb([1.0, 2.0, 3.0], [1.0, 1.0, 1.0], rtol=0.7)


# --------------------------------------------------------------------------------------------
# revivals

DX = 2.5e-5  # cm; invented OPD step (2.6 samples per fringe at 650 nm)
P = 1 / DS  # 0.4225 cm = λ²/Δλ (closed form)


def test_revival_opd():
    # 1/Δσ = 2 n_g L = λ²/Δλ (closed form)
    assert revival_opd_cm(DS) == pytest.approx((LAM * 1e-7) ** 2 / (DLAM * 1e-7), rel=1e-12)
    with pytest.raises(OptionError, match="spacing_per_cm"):
        revival_opd_cm(-1.0)


@pytest.mark.parametrize("mode_fwhm", [0.0, 0.3])
def test_revivals_confirmed(mode_fwhm):
    # Closed-form multimode interferogram (module docstring), ZPD between samples; with modes
    # of 0.3 cm⁻¹ FWHM the revivals shrink by exp(-π·0.3·k/Δσ) (0.67, 0.45) but stay.
    sig, amp = comb(np.arange(-4, 5))
    x = np.arange(-0.3 * P, 2.3 * P, DX) + 0.41 * DX
    y = comb_interferogram(x, sig, amp, mode_fwhm)
    r = check_revivals(x, y, DS)
    assert r.confirmed is True
    assert r.measured_period_cm == pytest.approx(P, rel=SPACING_TOL)
    # decreasing grid: same answer
    r2 = check_revivals(x[::-1], y[::-1], DS, zpd_x_cm=0.0)
    assert r2.confirmed is True
    assert r2.measured_period_cm == pytest.approx(P, rel=SPACING_TOL)


def test_revivals_wrong_spacing_short_scan_single_line():
    sig, amp = comb(np.arange(-4, 5))
    x = np.arange(-0.3 * P, 1.3 * P, DX)
    y = comb_interferogram(x, sig, amp)
    wrong = check_revivals(x, y, 1.3 * DS)
    assert wrong.confirmed is False
    assert wrong.measured_period_cm == pytest.approx(P, rel=SPACING_TOL)
    short = x < 0.9 * P
    r = check_revivals(x[short], y[short], DS)
    assert r.confirmed is None and r.reason.startswith("not reached")
    # one Lorentzian line of 0.5 cm⁻¹ (closed form exp(-π w |x|)): no revival at all
    y1 = 1 + np.exp(-np.pi * 0.5 * np.abs(x)) * np.cos(2 * np.pi * S0 * x)
    assert check_revivals(x, y1, DS).confirmed is False


def test_check_revivals_errors():
    x = np.arange(0.0, 0.01, DX)
    y = np.cos(2 * np.pi * S0 * x)
    with pytest.raises(RecordError):
        check_revivals(x, y[:-1], DS)
    with pytest.raises(OptionError, match="tol"):
        check_revivals(x, y, DS, tol=0.0)
    with pytest.raises(OptionError, match="min_contrast"):
        check_revivals(x, y, DS, min_contrast=0.5)
    with pytest.raises(OptionError, match="zpd_x_cm"):
        check_revivals(x, y, DS, zpd_x_cm=-1.0)
    with pytest.raises(OptionError, match="spacing_per_cm"):
        check_revivals(x, y, 0.0)


def test_spacing_uncertainty_from_unequal_centre_uncertainties():
    # Weak edge modes are located worse than strong central ones. The slope's variance of an
    # ordinary least-squares line with independent errors u_i is the sandwich
    # (XᵀX)⁻¹ Xᵀ diag(u²) X (XᵀX)⁻¹ (JCGM 100 §H.3 generalised), computed here with numpy's
    # linear algebra, and checked by Monte Carlo against the scatter of fitted slopes.
    m = np.arange(7)
    spacing = 23.7
    centres = 15000.0 + spacing * m
    u = np.array([0.4, 0.15, 0.05, 0.03, 0.05, 0.15, 0.4])
    areas = np.exp(-0.5 * ((m - 3) / 1.2) ** 2)
    X = np.column_stack([np.ones(m.size), m])
    xtx_inv = np.linalg.inv(X.T @ X)
    var = xtx_inv @ X.T @ np.diag(u**2) @ X @ xtx_inv
    expected = float(np.sqrt(var[1, 1]))
    comb = find_mode_comb(centres, areas, min_fraction=0.0, u_centres_per_cm=u)
    # a perfect comb: the residual scatter is 0, so the propagated value is used
    assert comb.u_spacing_per_cm == pytest.approx(expected, rel=1e-12)
    rng = np.random.default_rng(7)
    slopes = [
        find_mode_comb(centres + u * rng.normal(size=u.size), areas, min_fraction=0.0)
        .spacing_per_cm for _ in range(4000)
    ]
    # 4000 draws: the scatter is known to ±1.1 % (1σ)
    assert np.std(slopes) == pytest.approx(expected, rel=0.05)
    with pytest.raises(AnalysisError, match="u_centres_per_cm"):
        find_mode_comb(centres, areas, u_centres_per_cm=u[:3])


def test_a_weak_artefact_does_not_hide_the_comb():
    """Issue 11 item 1: a 9 % feature between modes (and one 6 % beyond the comb) left the
    comb unrecognised. The comb holds > 90 % of the kept intensity, so it is found; the
    features are returned as off-comb for the caller to flag (comb truth: closed form above)."""
    sig, amp = comb()
    extra_s = np.r_[S0 + 1.45 * DS, S0 + 9.5 * DS]
    extra_a = np.r_[0.09, 0.06]
    c = find_mode_comb(np.r_[sig, extra_s], np.r_[amp, extra_a])
    assert c is not None and c.n_modes == 9
    assert c.spacing_per_cm == pytest.approx(DS, rel=1e-12)
    assert sorted(c.off_comb_per_cm) == pytest.approx(sorted(extra_s))
    # a clean comb has none
    assert find_mode_comb(sig, amp).off_comb_per_cm == ()


def test_modes_must_be_much_narrower_than_the_spacing():
    """Issue 11 item 7: the wings of one broad line were called a 3-mode comb. A comb needs
    every mode's FWHM at most spacing/4 (MODE_NARROWNESS, common practice)."""
    sig, amp = comb()
    assert find_mode_comb(sig, amp, widths_per_cm=np.full(sig.size, DS / 10)) is not None
    assert find_mode_comb(sig, amp, widths_per_cm=np.full(sig.size, DS / 2)) is None
    w = np.full(sig.size, DS / 10)
    w[7] = np.nan  # a width that is not known does not count as narrow
    assert find_mode_comb(sig, amp, widths_per_cm=w) is None
