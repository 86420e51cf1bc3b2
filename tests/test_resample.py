"""Tests of ftsource.interferogram.resample.

Oracles:
* closed forms: λ_min = v_max/(β f_s) (a fringe frequency v/λ below β f_s), grid steps
  λ_ref/2^m, the transfer function of a box average of w samples at f cycles/sample,
  sin(π f w)/(w sin(π f)) (Dirichlet kernel), cubed for three passes;
* the interpolation error bound of cubic splines at the knots,
  ‖f − s‖∞ ≤ (5/384) h⁴ ‖f⁽⁴⁾‖∞ (C. A. Hall and W. W. Meyer, "Optimal error bounds for cubic
  spline interpolation", J. Approx. Theory 16, 105–122 (1976)); for cos(ω t) sampled at h = 1
  this is (5/384) ω⁴ with ω in rad/sample. It is stated for the interior of the record (the
  spline's end conditions differ);
* noiseless records of ``ftsource.simulate`` with their true path (the simulator is tested
  against closed forms in tests/test_simulate.py), and numpy.fft for the spectrum.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.errors import AnalysisError
from ftsource.interferogram import opd
from ftsource.interferogram import resample as R
from ftsource.interferogram.opd import OpticalPath, Sweep

REF_NM = 632.991
LAM_REF_CM = REF_NM * 1e-7
FS = 48_000.0


def path_with_speed(v_cm_s):
    sw = Sweep(0, 0, 1000, 1, 0, 0.1, 0.8 * v_cm_s, v_cm_s)
    sw2 = Sweep(1, 1000, 2000, -1, 0, 0.1, 0.5 * v_cm_s, 0.7 * v_cm_s)
    return OpticalPath(np.zeros(2000), "quadrature", (sw, sw2), None, 0, 0, ())


# --------------------------------------------------------------------------------------------
# sampling limits and the grid


@pytest.mark.parametrize("beta", [R.BANDWIDTH_FRACTION_ADC, R.BANDWIDTH_FRACTION_SOUND_CARD])
@pytest.mark.parametrize("v_cm_s", [0.05, 0.5, 5.0, 20.0])
def test_sampling_limits_closed_form(beta, v_cm_s):
    lim = R.sampling_limits(path_with_speed(v_cm_s), FS, REF_NM, bandwidth_fraction=beta)
    # closed form: fringes of λ at OPD speed v have frequency v/λ ≤ β f_s
    lam_min_nm = v_cm_s / (beta * FS) * 1e7
    assert lim.min_wavelength_nm == pytest.approx(lam_min_nm, rel=1e-12)
    assert lim.max_opd_speed_cm_s == v_cm_s  # the fastest sweep's speed
    assert lim.bandwidth_fraction == beta
    assert lim.samples_per_reference_fringe == pytest.approx(LAM_REF_CM * FS / v_cm_s, rel=1e-12)
    # grid step: λ_ref/2^m, m ≥ 1, the coarsest whose Nyquist wavelength 2·dx is at most
    # max(λ_min, 250 nm)
    m = np.log2(LAM_REF_CM / lim.dx_cm)
    assert m == round(m) and m >= 1
    target_nm = max(lam_min_nm, R.SHORTEST_GRID_WAVELENGTH_NM)
    assert 2 * lim.dx_cm * 1e7 <= target_nm * (1 + 1e-12)
    if m > 1:
        assert 4 * lim.dx_cm * 1e7 > target_nm  # one step coarser would not do
    assert lim.grid_nyquist_per_cm == pytest.approx(0.5 / lim.dx_cm, rel=1e-15)


def test_sound_card_constants():
    # common practice: the ADC's Nyquist limit, and a codec's anti-alias filter at 0.45 f_s
    assert R.BANDWIDTH_FRACTION_ADC == 0.5
    assert R.BANDWIDTH_FRACTION_SOUND_CARD == 0.45
    lim_adc = R.sampling_limits(path_with_speed(10.0), 44_100.0, REF_NM)
    lim_card = R.sampling_limits(path_with_speed(10.0), 44_100.0, REF_NM,
                                 bandwidth_fraction=R.BANDWIDTH_FRACTION_SOUND_CARD)
    assert lim_card.min_wavelength_nm / lim_adc.min_wavelength_nm == pytest.approx(0.5 / 0.45)


# --------------------------------------------------------------------------------------------
# running mean


@pytest.mark.parametrize("sigma", [1.0, 2.5, 10.0, 31.7])
def test_running_mean_transfer_and_centring(sigma):
    k = np.arange(4000.0)
    w = 2 * int(sigma) + 1  # documented width
    # box variance (w² − 1)/12, three passes (closed form): within half a sample of σ
    assert abs(np.sqrt(3 * (w * w - 1) / 12) - sigma) <= 0.5
    edge = 3 * w
    for f in (0.003, 0.02, 0.05, 0.13):
        y = np.cos(2 * np.pi * f * k + 0.3)
        out = R.running_mean(y, sigma)
        h = (np.sin(np.pi * f * w) / (w * np.sin(np.pi * f))) ** 3  # Dirichlet kernel cubed
        # a centred (symmetric) kernel: output = H·input, no phase shift; rounding only
        np.testing.assert_allclose(out[edge:-edge], h * y[edge:-edge], atol=1e-12)
    # a linear ramp passes unchanged through a symmetric kernel (closed form)
    np.testing.assert_allclose(R.running_mean(0.01 * k - 3, sigma)[edge:-edge],
                               0.01 * k[edge:-edge] - 3, atol=1e-11)


def test_running_mean_does_not_mutate_input():
    y = np.random.default_rng(0).normal(size=500)
    y0 = y.copy()
    R.running_mean(y, 4.0)
    np.testing.assert_array_equal(y, y0)


# --------------------------------------------------------------------------------------------
# resampling a noiseless line with the true path


@cache
def true_path_record(wavelength_nm=532.0, phase=0.4):
    line = S.SpectralLine(1e7 / wavelength_nm, 1.0, phase_rad=phase)
    scan = S.Scan(duration_s=2.0, opd_amplitude_cm=0.1, speed_jitter=0.1)
    sim = S.simulate(S.SourceModel((line,)), scan,
                     S.ReferenceChannel(kind="encoder", encoder_resolution_m=0.0),
                     S.Detector(noise_rms=0.0, offset=0.1), rng=3)
    # OPD = 2 × position, unsmoothed: the true path to rounding (tested in test_opd.py)
    path = opd.opd_from_position(sim.record.position_m, FS, smooth=False)
    return sim, path


def test_resampled_line_is_cosine_on_grid():
    sim, path = true_path_record()
    np.testing.assert_allclose(path.opd_cm, sim.opd_cm, rtol=0, atol=1e-15)
    lim = R.sampling_limits(path, FS, REF_NM)
    ifgs = R.resample_sweeps(sim.record.columns["signal"], path, lim.dx_cm)
    assert len(ifgs) == len(path.sweeps) == 5
    sigma0 = 1e7 / 532.0
    idx = np.arange(sim.opd_cm.size, dtype=float)
    for ig in ifgs:
        sw = ig.sweep
        x = ig.x_cm
        assert ig.dx_cm == lim.dx_cm
        assert np.all(np.diff(x) > 0)  # increasing whatever the direction
        k0 = ig.x0_cm / ig.dx_cm
        assert abs(k0 - round(k0)) < 1e-6  # aligned to multiples of the step
        # DC level: gain·1 + offset 0.1, plus the mean of the fringes over the sweep's span L,
        # |∫cos(2πσx)dx|/L ≤ 1/(πσL) (closed form); twice that for the running mean's ends
        assert ig.dc_level == pytest.approx(1.1, abs=2 / (np.pi * sigma0 * ig.span_cm))
        # sample index of each grid point from the true path
        xs, ids = sim.opd_cm[sw.start : sw.stop], idx[sw.start : sw.stop]
        if sw.direction < 0:
            xs, ids = xs[::-1], ids[::-1]
        t = np.interp(x, xs, ids)
        interior = (t > 8) & (t < sim.opd_cm.size - 9)  # away from the spline's end conditions
        err = ig.y - np.cos(2 * np.pi * sigma0 * x + 0.4)
        # Hall & Meyer: (5/384) ω⁴ at the fastest fringe rate of the sweep (≈ 0.04 here), plus
        # the running-mean transfer (< 4e-6) and the linear inversion of a smooth path
        # (≤ 2πσ|a|/(8 f_s²) ≈ 4e-5): 1e-4 covers both
        omega = 2 * np.pi * sigma0 * sw.max_speed_cm_s / FS
        bound = 5 / 384 * omega**4 + 1e-4
        assert np.max(np.abs(err[interior])) < bound
        assert np.sqrt(np.mean(err[interior] ** 2)) < bound / 3  # the bound is a worst case


def test_resample_rejects_too_coarse_grid():
    sim, path = true_path_record()
    with pytest.raises(AnalysisError):
        R.resample_sweeps(sim.record.columns["signal"], path, 0.01)  # < 64 points per sweep


def test_resample_does_not_mutate_signal():
    sim, path = true_path_record()
    sig = np.array(sim.record.columns["signal"])
    before = sig.copy()
    R.resample_sweeps(sig, path, R.sampling_limits(path, FS, REF_NM).dx_cm)
    np.testing.assert_array_equal(sig, before)


# --------------------------------------------------------------------------------------------
# a source at a shorter wavelength than the reference


def test_source_shorter_than_reference_is_represented():
    # 450 nm with a 632.991 nm quadrature reference: the grid is finer than the reference's
    # fringes, so the 450 nm line is not aliased (a λ_ref/2 grid would fold it to 9378 cm⁻¹)
    ref = S.ReferenceChannel(offsets=(0.05, -0.03), gains=(1.0, 0.8), quadrature_deg=85.0,
                             noise_rms=0.002, level_drift=0.1)
    scan = S.Scan(duration_s=2.0, opd_amplitude_cm=0.1, speed_jitter=0.1)
    sim = S.simulate(S.laser(450.0), scan, ref, S.Detector(), rng=7)
    c = sim.record.columns
    path = opd.opd_from_quadrature(c["ref_i"], c["ref_q"], FS, REF_NM)
    lim = R.sampling_limits(path, FS, REF_NM)
    assert lim.grid_nyquist_per_cm > 1e7 / 450.0
    ifgs = R.resample_sweeps(c["signal"], path, lim.dx_cm)
    sigma0 = 1e7 / 450.0
    for ig in ifgs:
        n = ig.y.size
        nfft = 16 * 2 ** int(np.ceil(np.log2(n)))
        b = np.abs(np.fft.rfft(ig.y * np.hanning(n), nfft))  # numpy.fft
        f = np.fft.rfftfreq(nfft, ig.dx_cm)
        k = int(np.argmax(b))
        lo, mid, hi = np.log(b[k - 1 : k + 2])
        peak = f[k] + 0.5 * (lo - hi) / (lo - 2 * mid + hi) * (f[1] - f[0])
        # OPD scale error < 2e-8 (tests/test_opd.py) → 4e-4 cm⁻¹; the log-parabola peak on a
        # 16× zero-filled Hann main lobe is good to ~1e-3 of a resolution element (≤ 0.013
        # cm⁻¹ here; common practice): 0.02 cm⁻¹ (0.9 ppm)
        assert peak == pytest.approx(sigma0, abs=0.02)
