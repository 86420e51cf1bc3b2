"""The fast routes taken for speed (issue 14) give the values of the direct ones.

* A Hilbert envelope computed at a fast FFT length (zero-filled) equals
  ``abs(scipy.signal.hilbert(y))`` (scipy, a general-purpose library) for a burst inside the
  record, and for fringes that fill the record it stays within 4/(π·distance) of their true
  constant envelope away from the ends (the Hilbert kernel falls as 1/(π·t); the analytic
  signal of cos θ is e^{iθ}: D. Gabor, "Theory of communication", J. IEE 93, 429–457 (1946)).
* The visibility route's envelope of the even (mirror) extension, brought to a fast length by
  zeros in the middle of the mirror image, equals scipy's envelope of the exact extension.
* The envelope-decay ratio read from a sweep's two ends equals the closed form for an
  exponentially decaying envelope: the mean of e^{−x/ℓ} over [a, a + k] is
  ℓ/k·(e^{−a/ℓ} − e^{−(a+k)/ℓ}) (elementary integral).
* The noise correlation at whole multiples of a lag step (complex rotation) equals the cosine
  quadrature it replaces, for several apodizations and mixed sweep spans.
* The line-shape evaluator (panels summed together) equals ``LineShape.kernel_signed`` and its
  derivatives equal central differences of it, for narrow, broad and signed widths.
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.signal import hilbert

from ftsource.interferogram.zpd import analytic_envelope
from ftsource.measure import coherence as C
from ftsource.spectrum.spectrum import LineShape

PRIME = 131071  # a sweep length with a large prime factor: the slow case for an FFT


@pytest.mark.parametrize("seed", (0, 1, 2))
def test_padded_envelope_equals_scipy_hilbert_for_a_burst(seed):
    rng = np.random.default_rng(seed)
    x = np.arange(PRIME)
    c = rng.uniform(0.3, 0.7) * PRIME
    y = (np.exp(-(((x - c) / 8000.0) ** 2)) * np.cos(2 * np.pi * rng.uniform(0.1, 0.3) * x
                                                    + 1e-6 * (x - c) ** 2)
         + 1e-3 * rng.normal(size=x.size))
    ref = np.abs(hilbert(y))
    np.testing.assert_allclose(analytic_envelope(y)[40:-40], ref[40:-40], rtol=0,
                               atol=1e-3 * ref.max())
    np.testing.assert_allclose(analytic_envelope(y, pad=False), ref, rtol=0, atol=1e-12)


@pytest.mark.parametrize("f", (0.0731, 0.2137, 0.411))
def test_padded_envelope_of_fringes_filling_the_record(f):
    x = np.arange(PRIME)
    env = analytic_envelope(np.cos(2 * np.pi * f * x + 0.4))
    q = PRIME // 4
    # a jump of at most 1 at the record's ends (and at the zeros') disturbs the Hilbert
    # transform by at most about 1/(π·distance): four of them, at least q samples away
    assert np.max(np.abs(env[q:-q] - 1.0)) < 4 / (np.pi * q)


@pytest.mark.parametrize("n", (200003, 150001, 99991))
def test_mirror_envelope_equals_scipy_on_the_exact_extension(n):
    x = np.arange(n)
    y = np.exp(-x / 50000.0) * np.cos(2 * np.pi * 0.17 * x) + 0.3
    env, margin = C.analytic_envelope(y)
    yy = y - y.mean()
    ref = np.abs(hilbert(np.concatenate([yy, yy[-2:0:-1]])))[:n]
    np.testing.assert_allclose(env[margin:-margin], ref[margin:-margin], rtol=0,
                               atol=1e-6 * ref.max())


@pytest.mark.parametrize("ell", (2e4, 5e4, 2e5))
def test_envelope_decay_from_the_ends_matches_the_closed_form(ell):
    n = 200003
    x = np.arange(n)
    y = np.exp(-x / ell) * np.cos(2 * np.pi * 0.17 * x) + 0.3
    _, margin = C.analytic_envelope(y)
    k = int(0.1 * (n - 2 * margin))

    def mean(a):
        return ell / k * (np.exp(-a / ell) - np.exp(-(a + k) / ell))

    assert C.envelope_decay(y) == pytest.approx(mean(margin) / mean(n - margin - k), rel=1e-4)


@pytest.mark.parametrize("apod", ("boxcar", "hann", "happ-genzel"))
@pytest.mark.parametrize("kind", ("real", "magnitude"))
def test_noise_correlation_by_rotation_equals_the_cosine_quadrature(apod, kind):
    shape = LineShape(apod, (0.5, 0.52, 0.49), (0.3, 0.3, 0.4), kind)
    lags = 0.05 * np.arange(-599, 600)
    direct = shape._transform(lags, 0.0, 0.0, power=2)
    direct = direct / shape._transform(np.zeros(1), 0.0, 0.0, power=2)[0]
    np.testing.assert_allclose(shape.noise_correlation(lags), direct, rtol=0, atol=1e-12)


@pytest.mark.parametrize("kind", ("real", "magnitude"))
@pytest.mark.parametrize("widths", ((0.0, 0.0), (4.0, 0.0), (0.0, 3.0), (2.0, 1.5),
                                    (-0.5, 0.0), (0.0, -0.4), (400.0, 0.0)))
def test_evaluator_equals_the_kernel_and_its_derivatives(kind, widths):
    shape = LineShape("happ-genzel", (0.5, 0.45), (0.6, 0.4), kind)
    sigma = 15800.0 + np.linspace(-12.0, 12.0, 97)
    ev = shape.evaluator(sigma)
    q, lor = widths
    c = 15800.3
    k, dc, dq, dl = ev(c, q, lor, derivatives=True)
    ref = shape.kernel_signed(sigma - c, q, lor)
    scale = np.max(np.abs(ref))
    np.testing.assert_allclose(k, ref, rtol=0, atol=1e-9 * scale)
    for got, step, args in ((dc, 1e-4, lambda h: (c + h, q, lor)),
                            (dq, 1e-3, lambda h: (c, q + h, lor)),
                            (dl, 1e-4, lambda h: (c, q, lor + h))):
        num = (shape.kernel_signed(sigma - args(step)[0], *args(step)[1:])
               - shape.kernel_signed(sigma - args(-step)[0], *args(-step)[1:])) / (2 * step)
        if kind == "magnitude":  # |K| is not differentiable where K changes sign
            keep = np.abs(ref) > 1e-3 * scale
            got, num = got[keep], num[keep]
        np.testing.assert_allclose(got, num, rtol=0, atol=1e-5 * np.max(np.abs(num)) + 1e-12)


@pytest.mark.parametrize("base", (0.0, 0.3, 2.0))
def test_half_maximum_is_measured_above_the_baseline(base):
    """A Gaussian peak of FWHM 2√(2 ln 2)·s standing on a level ``base``: its width at half
    its height above that level is the Gaussian's FWHM (closed form), to the grid step."""
    from ftsource.lines.fitting import _observed_fwhm

    sig = np.linspace(-50.0, 50.0, 20001)
    s = 1.7
    y = base + np.exp(-0.5 * (sig / s) ** 2)
    i0 = int(np.argmax(y))
    fwhm = 2 * np.sqrt(2 * np.log(2)) * s
    assert _observed_fwhm(sig, y, i0, base) == pytest.approx(fwhm, abs=2 * (sig[1] - sig[0]))


@settings(max_examples=60, deadline=None)
@given(seed=st.integers(0, 2**31 - 1), n_centres=st.integers(0, 4),
       density=st.floats(0.001, 0.5), margin_res=st.floats(0.01, 3.0))
def test_stored_band_marks_the_same_points_as_interval_by_interval(seed, n_centres, density,
                                                                   margin_res):
    """The stored spectrum band marks every run of source points and every listed line,
    widened by the margin, in one pass; the direct way (one comparison over the grid per
    interval, as before) marks the same points. Invariant of the definition, checked on random
    noisy spectra with thousands of runs."""
    from ftsource.measure import plotdata as P

    rng = np.random.default_rng(seed)
    sig = np.linspace(8000.0, 30000.0, 4001)
    noise = np.full(sig.size, 1.0)
    d = np.where(rng.random(sig.size) < density, 1e3, 0.0) + rng.random(sig.size)
    centres = rng.uniform(7000.0, 31000.0, n_centres)
    res = margin_res * (sig[1] - sig[0])
    got = P.spectrum_band(sig, d, noise, res, line_centres_per_cm=centres).index
    # the direct way
    lo, hi = 1e7 / P.DETECTOR_BAND_NM[1], 1e7 / P.DETECTOR_BAND_NM[0]
    inside = (sig >= lo) & (sig <= hi)
    peak = d[inside].max()
    src = inside & (d > P.SOURCE_THRESHOLD_NOISE * noise) & (d > P.SOURCE_THRESHOLD_PEAK * peak)
    margin = P.MARGIN_RESOLUTIONS * res
    keep = np.zeros(sig.size, bool)
    for c in centres:
        keep |= (sig >= c - margin) & (sig <= c + margin)
    for i in np.flatnonzero(src):
        keep |= (sig >= sig[i] - margin) & (sig <= sig[i] + margin)
    keep &= inside
    want = np.flatnonzero(keep) if keep.any() else np.flatnonzero(inside)
    np.testing.assert_array_equal(got, want)


@pytest.mark.parametrize("kind", ["real", "magnitude"])
@pytest.mark.parametrize("widths", [(40.0, 0.0), (0.0, 25.0), (20.0, 15.0), (6.0, 0.0)])
def test_broad_line_model_by_spline_equals_the_direct_kernel(kind, widths):
    """A broad line's model (profile ∗ line shape) evaluated on a coarse grid and spline-
    interpolated equals ``LineShape.kernel`` at every point to 1e-6 of its peak (the direct
    sum is the reference), for Gaussian, Lorentzian and Voigt widths of 6–40 instrument
    FWHMs and mixed sweep spans."""
    from dataclasses import replace as dc_replace

    from ftsource.lines.fitting import LineFit, _broad_kernel

    shape = LineShape("happ-genzel", (0.5, 0.45), (0.6, 0.4), kind)
    ils = shape.fwhm_per_cm
    g, lor = widths[0] * ils, widths[1] * ils
    w = 0.5346 * lor + np.sqrt(0.2166 * lor**2 + g**2)  # Olivero & Longbothum 1977
    lf = LineFit(0.0, 0.0, 1.0, 1.0, 1.0, 0.0, "voigt", g, lor, w, 0.0, True, None, ils,
                 1e3, 10, 10.0, 5.0, True, "", {})
    delta = np.linspace(-12 * w, 12 * w, 40001) + 0.0137
    direct = shape.kernel(delta, g, lor)
    fast = _broad_kernel(shape, delta, lf)
    assert np.max(np.abs(fast - direct)) < 1e-6 * np.max(np.abs(direct))
    # a narrow line is never interpolated
    narrow = dc_replace(lf, fwhm_per_cm=2 * ils, gauss_fwhm_per_cm=2 * ils, lorentz_fwhm_per_cm=0)
    np.testing.assert_array_equal(_broad_kernel(shape, delta, narrow),
                                  shape.kernel(delta, 2 * ils, 0.0))


@pytest.mark.parametrize("kind", ["real", "magnitude"])
@pytest.mark.parametrize("widths", [(0.0, 0.0), (3.0, 0.0), (0.0, 2.0)])
def test_nearly_equal_spans_share_one_quadrature(kind, widths):
    """Sweeps whose spans differ by ~1e-5 (a few resampling steps) share one line-shape
    quadrature at their weighted mean span: the kernel equals the weighted sum of each span's
    own kernel (the definition, evaluated span by span) to 1e-7 of its peak (second order in
    the spread), a magnitude kernel to 1e-5 (at a sidelobe's zero the sum of moduli differs
    from the modulus of the sum to first order, ~3e-6 measured); spans 1 % apart stay separate
    groups."""
    rng = np.random.default_rng(3)
    Ls = 0.45 * (1 + 2e-5 * rng.integers(0, 5, 12)) * np.r_[np.ones(9), 1.01, 1.01, 1.01]
    ws = rng.uniform(0.5, 1.5, Ls.size)
    ws = ws / ws.sum()
    shape = LineShape("happ-genzel", tuple(Ls), tuple(ws), kind)
    assert len(shape._groups()) == 2
    ils = shape.fwhm_per_cm
    g, lor = widths[0] * ils, widths[1] * ils
    d = np.linspace(-30 * ils, 30 * ils, 2001)
    merged = shape.kernel(d, g, lor)
    each = sum(w * LineShape("happ-genzel", (L,), (1.0,), kind).kernel(d, g, lor)
               for L, w in zip(Ls, ws, strict=True))
    tol = 1e-5 if kind == "magnitude" else 1e-7
    assert np.max(np.abs(merged - each)) < tol * np.max(np.abs(each))
