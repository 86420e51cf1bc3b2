"""Tests of ftsource.interferogram.zpd.

Oracles are closed-form interferograms made here, not the project's simulator:
* A Gaussian spectrum B(s) = exp(-(s - s0)^2 / (2 w^2)) has the interferogram
  w sqrt(2 pi) exp(-2 pi^2 w^2 (x - x0)^2) cos(2 pi s0 (x - x0) + a)  (closed form: the Fourier
  transform of a Gaussian); its centre burst is centred on x0 exactly.
* With a dispersion phase phi(s) = a + b (s - s0) + c (s - s0)^2 the interferogram
  integral B(s) cos(2 pi s (x - x0) + phi(s)) ds is computed here by direct numerical
  integration over s. Its |analytic signal|^2 has its centroid at x0 - <dphi/ds> / (2 pi)
  = x0 - b / (2 pi) for a spectrum symmetric about s0 (Parseval: the centroid of |z(x)|^2 is the
  |B|^2-weighted mean group delay; closed form).
"""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource.errors import OptionError, RecordError
from ftsource.interferogram.zpd import ZpdInfo, find_zpd, uniform_step_cm

DX = 2.5e-5  # cm; invented sampling step (250 nm of OPD), folding wavenumber 20000 cm^-1
S0 = 15000.0  # cm^-1
FWHM = 500.0  # cm^-1
W = FWHM / np.sqrt(8 * np.log(2))  # Gaussian r.m.s. width
ZPD_TOL_SAMPLES = 0.05  # the task's requirement


def gaussian_interferogram(x, x0, a=0.0):
    """Closed form, see module docstring."""
    return (
        W
        * np.sqrt(2 * np.pi)
        * np.exp(-2 * np.pi**2 * W**2 * (x - x0) ** 2)
        * np.cos(2 * np.pi * S0 * (x - x0) + a)
    )


def dispersed_interferogram(x, x0, a, b, c, ds=1.0):
    """Direct numerical integration over s (trapezoid on a fine grid; the integrand is a
    Gaussian, so the rule converges geometrically; its alias period 1/ds = 1 cm exceeds any
    |x - x0| used here)."""
    s = np.arange(S0 - 9 * W, S0 + 9 * W, ds)
    B = np.exp(-((s - S0) ** 2) / (2 * W**2))
    phi = a + b * (s - S0) + c * (s - S0) ** 2
    return np.cos(2 * np.pi * np.outer(x - x0, s) + phi) @ B * ds


def test_numerical_integration_matches_closed_form():
    # Closed form (Gaussian Fourier pair) checks the integration used by the other tests.
    x = np.arange(-300, 301) * DX
    np.testing.assert_allclose(
        dispersed_interferogram(x, 0.3 * DX, 0.7, 0.0, 0.0),
        gaussian_interferogram(x, 0.3 * DX, 0.7),
        atol=1e-9 * W,
    )


@pytest.mark.parametrize("frac", np.linspace(-0.5, 0.5, 11))
def test_fractional_zpd_gaussian(frac):
    # Closed-form interferogram, ZPD at a fractional sample; error < 0.05 sample (task).
    x = np.arange(-2000, 2001) * DX
    x0 = frac * DX
    z = find_zpd(x, gaussian_interferogram(x, x0, a=0.9))
    assert z.found and z.reason == ""
    assert abs(z.x_zpd_cm - x0) / DX < ZPD_TOL_SAMPLES
    assert z.index == int(np.round((z.x_zpd_cm - x[0]) / DX))
    assert z.kind == "double-sided"


def test_zpd_with_dispersion_phase():
    # Quadratic and constant phase do not move the burst centre; a linear phase b moves it to
    # x0 - b / (2 pi) (group delay; closed form, see module docstring). Tolerance 0.05 sample.
    x = np.arange(-1500, 1501) * DX
    x0 = 0.37 * DX
    b = 2 * np.pi * 1e-5  # group delay 1e-5 cm = 0.4 sample
    z = find_zpd(x, dispersed_interferogram(x, x0, 0.7, 0.0, 2e-6))
    assert abs(z.x_zpd_cm - x0) / DX < ZPD_TOL_SAMPLES
    z = find_zpd(x, dispersed_interferogram(x, x0, 0.7, b, 2e-6))
    assert abs(z.x_zpd_cm - (x0 - b / (2 * np.pi))) / DX < ZPD_TOL_SAMPLES


@settings(max_examples=40, deadline=None)
@given(frac=st.floats(-0.5, 0.5), start=st.integers(-1800, -200), a=st.floats(-3.1, 3.1))
def test_zpd_follows_a_shift(frac, start, a):
    # Property (closed form): the burst at x0 is found at x0 wherever the record starts,
    # within 0.05 sample.
    x = np.arange(start, 2001) * DX
    x0 = frac * DX
    z = find_zpd(x, gaussian_interferogram(x, x0, a))
    assert z.found
    assert abs(z.x_zpd_cm - x0) / DX < ZPD_TOL_SAMPLES


def test_one_sided_classification():
    # Short side 1/8 of the long side: one-sided (definition: double-sided needs >= 0.8).
    x = np.arange(-250, 2001) * DX
    z = find_zpd(x, gaussian_interferogram(x, 0.0))
    assert z.found and z.kind == "one-sided"
    assert z.short_side_cm == pytest.approx(250 * DX, abs=0.05 * DX)
    assert z.long_side_cm == pytest.approx(2000 * DX, abs=0.05 * DX)
    # 0.8 is the boundary (task definition): short 1700, long 2000 -> 0.85, double-sided.
    x = np.arange(-1700, 2001) * DX
    assert find_zpd(x, gaussian_interferogram(x, 0.0)).kind == "double-sided"
    x = np.arange(-1500, 2001) * DX
    assert find_zpd(x, gaussian_interferogram(x, 0.0)).kind == "one-sided"


def test_decreasing_grid():
    # The same record scanned the other way: same ZPD (definition).
    x = np.arange(-600, 2001) * DX
    y = gaussian_interferogram(x, 0.21 * DX)
    z1, z2 = find_zpd(x, y), find_zpd(x[::-1], y[::-1])
    assert z2.x_zpd_cm == pytest.approx(z1.x_zpd_cm, abs=1e-6 * DX)
    assert z2.index == x.size - 1 - z1.index
    assert z2.short_side_cm == pytest.approx(z1.short_side_cm)


def test_dc_offset_is_removed():
    x = np.arange(-1000, 1001) * DX
    y = gaussian_interferogram(x, 0.3 * DX)
    z = find_zpd(x, y + 123.0 * y.max())
    assert abs(z.x_zpd_cm - 0.3 * DX) / DX < ZPD_TOL_SAMPLES


def test_narrow_line_has_no_burst():
    # A laser line narrower than the resolution: a cosine with a nearly flat envelope
    # (common practice: no centre burst to find).
    x = np.arange(-3000, 3001) * DX
    y = np.cos(2 * np.pi * 15798.0 * x) * np.exp(-((x / 10.0) ** 2))
    z = find_zpd(x, y)
    assert not z.found and z.kind == "none"
    assert "prominent" in z.reason
    assert z.prominence < 2.0
    assert np.isnan(z.x_zpd_cm) and z.index == -1


def test_noise_only_has_no_burst():
    # White Gaussian noise, fixed seed: max/median envelope ~ sqrt(ln n / ln 2) ~ 3.7 for
    # n = 20001 (Rayleigh order statistics, closed form), below the default 6.
    rng = np.random.default_rng(20261202)
    x = np.arange(20001) * DX
    z = find_zpd(x, rng.normal(size=x.size))
    assert not z.found
    assert 2.5 < z.prominence < 6.0


def test_burst_at_the_edge():
    # Burst centred 3 samples from the end: it touches the end of the record.
    x = np.arange(0, 2001) * DX
    z = find_zpd(x, gaussian_interferogram(x, x[-1] - 3 * DX))
    assert not z.found and "end" in z.reason
    # ZPD outside the scan altogether.
    z = find_zpd(x, gaussian_interferogram(x, x[-1] + 20 * DX))
    assert not z.found


def test_constant_record():
    x = np.arange(100) * DX
    z = find_zpd(x, np.full(100, 3.0))
    assert not z.found and "constant" in z.reason


def test_bad_inputs():
    x = np.arange(100) * DX
    y = np.zeros(100)
    with pytest.raises(RecordError, match="uniform"):
        find_zpd(x**1.5, y)
    with pytest.raises(RecordError, match="shape"):
        find_zpd(x, y[:-1])
    y2 = y.copy()
    y2[5] = np.nan
    with pytest.raises(RecordError, match="finite"):
        find_zpd(x, y2)
    with pytest.raises(RecordError):
        find_zpd(x[:4], y[:4])
    with pytest.raises(OptionError, match="min_prominence"):
        find_zpd(x, y, min_prominence=0.5)
    with pytest.raises(OptionError, match="threshold"):
        find_zpd(x, y, threshold=1.5)


def test_uniform_step():
    assert uniform_step_cm(np.arange(5) * 0.5) == 0.5
    assert uniform_step_cm(np.arange(5)[::-1] * 0.5) == -0.5
    with pytest.raises(RecordError, match="monotonic"):
        uniform_step_cm(np.zeros(3))


def test_zpdinfo_is_frozen():
    z = ZpdInfo(True, 0.0, 0, 1.0, 1.0, 10.0, "")
    with pytest.raises(AttributeError):
        z.found = False  # type: ignore[misc]
