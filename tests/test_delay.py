"""Tests of ftsource.interferogram.delay (the source channel's delay from forward and backward
sweeps) and of ftsource.interferogram.opd.sweep_speed_at.

Oracles:
* closed forms written here: a Gaussian centre burst displaced by ``d·|v|·τ`` (the first-order
  effect of a delay, see the module docstring), a sinusoid moved in time, the weighted mean;
* the simulator (``ftsource.simulate``), itself tested against closed forms in
  ``tests/test_simulate.py``: ``Detector(delay_s=τ)`` evaluates the source at the mirror
  position of ``t − τ``, so the true delay is known exactly; point sampling makes content above
  half the sample rate fold as on a real ADC.
All randomness has fixed seeds.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.errors import OptionError
from ftsource.interferogram import delay as D
from ftsource.interferogram import opd, resample
from ftsource.interferogram.opd import Sweep
from ftsource.interferogram.resample import Interferogram
from ftsource.interferogram.zpd import find_zpd
from ftsource.lines import sweeps as W

REF_NM = 632.991
FS = 48_000.0


# --------------------------------------------------------------------------------------------
# records


def _through_resampling(sim):
    """The stages before the transform: OPD from the quadrature reference, sampling limits,
    sweeps on the uniform OPD grid."""
    p = opd.opd_from_quadrature(
        sim.record.columns["ref_i"], sim.record.columns["ref_q"], FS, REF_NM
    )
    lim = resample.sampling_limits(p, FS, REF_NM)
    ifgs = resample.resample_sweeps(sim.record.columns["signal"], p, lim.dx_cm)
    return sim, p, lim, ifgs


@cache
def led_record(delay_s: float, seed: int = 1):
    """Broad LED through ZPD (centre burst in every full sweep), quadrature reference."""
    sim = S.simulate(
        S.led(600, 25),
        S.Scan(opd_centre_cm=0.0, opd_amplitude_cm=0.02, duration_s=4.0),
        S.ReferenceChannel(),
        S.Detector(delay_s=delay_s),
        rng=seed,
    )
    return _through_resampling(sim)


@cache
def laser_record(delay_s: float, jitter: float = 0.05, seed: int = 1):
    """Narrow line far from ZPD (no centre burst), quadrature reference."""
    sim = S.simulate(
        S.laser(532.0),
        S.Scan(opd_centre_cm=0.5, opd_amplitude_cm=0.02, duration_s=4.0, speed_jitter=jitter),
        S.ReferenceChannel(),
        S.Detector(delay_s=delay_s),
        rng=seed,
    )
    return _through_resampling(sim)


def zpds(ifgs):
    out = [(g.sweep.direction, find_zpd(g.x_cm, g.y)) for g in ifgs]
    return [(d, z.x_zpd_cm) for d, z in out if z.found]


# --------------------------------------------------------------------------------------------
# closed form


def _burst_sweep(index, direction, speed, tau, x_true_zpd=1e-3, dx=2e-5, n=801):
    """Closed form: a Gaussian burst (Fourier pair of a Gaussian band) whose centre sits at
    ``x_true_zpd + direction·speed·tau`` on the grid, as a first-order delay puts it."""
    x0 = -n // 2 * dx
    x = x0 + dx * np.arange(n)
    c = x_true_zpd + direction * speed * tau
    y = np.exp(-((x - c) ** 2) / (2 * (8 * dx) ** 2)) * np.cos(2 * np.pi * 15000 * (x - c))
    sw = Sweep(index, 0, n, direction, 0, n * dx, speed, speed)
    return Interferogram(x0, dx, y, sw, 0.0)


def test_zpd_fit_sign_and_value_closed_form():
    # Closed form: x_zpd(fwd) − x_zpd(bwd) = (|v_f| + |v_b|)·τ for a late signal (τ > 0).
    tau = 37e-6
    speeds = [0.09, 0.11, 0.10, 0.12, 0.095, 0.105]
    sweeps = [_burst_sweep(i, 1 if i % 2 == 0 else -1, v, tau) for i, v in enumerate(speeds)]
    est = D.estimate_channel_delay(sweeps)
    assert est.ok and est.method == "zpd" and est.speed == "mean"
    assert (est.n_forward, est.n_backward) == (3, 3)
    # find_zpd is right to a few thousandths of a sample on closed forms (docs/processing.md):
    # 0.005·dx / (2·0.1 cm/s) = 5e-7 s
    assert est.delay_s == pytest.approx(tau, abs=5e-7)
    fwd = find_zpd(sweeps[0].x_cm, sweeps[0].y).x_zpd_cm
    bwd = find_zpd(sweeps[1].x_cm, sweeps[1].y).x_zpd_cm
    assert fwd - bwd == pytest.approx((0.09 + 0.11) * tau, abs=0.01 * 2e-5)  # closed form


def test_no_sweeps_of_both_directions():
    sweeps = [_burst_sweep(i, 1, 0.1, 1e-5) for i in range(3)]
    for method in ("zpd", "phase"):
        est = D.estimate_channel_delay(sweeps, method=method)
        assert not est.ok and np.isnan(est.delay_s)
        assert "both directions" in est.reason and est.n_forward == 3 and est.n_backward == 0


def test_one_sweep_each_way_has_no_uncertainty():
    sweeps = [_burst_sweep(0, 1, 0.1, 2e-5), _burst_sweep(1, -1, 0.1, 2e-5)]
    est = D.estimate_channel_delay(sweeps)
    assert est.ok and np.isnan(est.u_delay_s) and "uncertainty" in est.reason
    assert est.delay_s == pytest.approx(2e-5, abs=5e-7)  # closed form, as above


def test_bad_options():
    sw = [_burst_sweep(0, 1, 0.1, 0.0)]
    with pytest.raises(OptionError, match="method"):
        D.estimate_channel_delay(sw, method="fast")
    with pytest.raises(OptionError, match="direction"):
        D.estimate_channel_delay([(sw[0], 0, 0.1)])
    with pytest.raises(OptionError, match="sample_rate_hz"):
        D.estimate_channel_delay(sw, path=object())


def test_shift_time_for_delay_closed_form():
    # Closed form: cos(2πf(t + τ)). Cubic B-spline interpolation of a sinusoid at 0.05 f_s errs
    # by about (πf/f_s)⁴/… < 1e-4 of the amplitude (Unser 1999, the spline's frequency
    # response); the mirrored ends are excluded.
    f, tau = 0.05 * FS, 13.7e-6
    t = np.arange(4000) / FS
    out = D.shift_time_for_delay(np.cos(2 * np.pi * f * t), tau, FS)
    np.testing.assert_allclose(out[50:-50], np.cos(2 * np.pi * f * (t[50:-50] + tau)), atol=1e-4)


def test_sweep_speed_at_constant_speed():
    # Closed form: x = 2·v_m·t has the OPD speed 2·v_m everywhere.
    p = opd.opd_from_constant_speed(20_000, FS, 1e-3)
    v = opd.sweep_speed_at(p, p.sweeps[0], FS, np.array([0.01, 0.05, 0.08]))
    np.testing.assert_allclose(v, 0.2, rtol=1e-9)


# --------------------------------------------------------------------------------------------
# simulator: ZPD method


@pytest.mark.parametrize("tau", [50e-6, -30e-6])
def test_zpd_delay_recovered_from_led(tau):
    sim, p, lim, ifgs = led_record(tau)
    est = D.estimate_channel_delay(ifgs, path=p, sample_rate_hz=FS)
    assert est.ok and est.speed == "local"
    assert est.n_forward >= 3 and est.n_backward >= 3
    # Task requirement 5 %: the ZPD scatter between sweeps (about 3 nm of OPD) gives
    # u ≈ 1 µs over 8 sweeps, so 5 % of 30–50 µs is 1.5–2.5 u.
    assert est.delay_s == pytest.approx(tau, rel=0.05)
    assert est.u_delay_s < 0.05 * abs(tau)
    assert abs(est.delay_s - tau) < 3 * est.u_delay_s


def test_zpd_delay_zero_is_consistent_with_zero():
    sim, p, lim, ifgs = led_record(0.0)
    est = D.estimate_channel_delay(ifgs, path=p, sample_rate_hz=FS)
    assert est.ok and abs(est.delay_s) < 3 * est.u_delay_s  # 3σ, common practice


def test_mean_speed_overestimates_delay():
    # The mean speed includes the slow ends of the sweep, so it is below the speed at ZPD and
    # the delay comes out larger by the ratio (a few to 15 % for the default rounded triangle).
    sim, p, lim, ifgs = led_record(50e-6)
    local = D.estimate_channel_delay(ifgs, path=p, sample_rate_hz=FS)
    mean = D.estimate_channel_delay([(g, g.sweep.direction, g.sweep.mean_speed_cm_s) for g in ifgs])
    assert mean.speed == "mean" and mean.delay_s > local.delay_s


def test_correction_makes_forward_and_backward_zpd_agree():
    tau = 50e-6
    sim, p, lim, ifgs = led_record(tau)
    est = D.estimate_channel_delay(ifgs, path=p, sample_rate_hz=FS)
    before = zpds(ifgs)
    d = np.array([b[0] for b in before])
    x = np.array([b[1] for b in before])
    cmp0 = W.compare_sweeps(x, None, d, label="ZPD")
    # closed form: the uncorrected difference is (|v_f| + |v_b|)·τ ≈ 2·0.09 cm/s · 50 µs
    assert cmp0.difference == pytest.approx(2 * 0.09 * tau, rel=0.15)
    assert abs(cmp0.difference) > 10 * cmp0.u_difference
    # (a) one OPD shift per sweep, exact at ZPD
    fixed = D.correct_channel_delay(
        ifgs, est.delay_s, path=p, sample_rate_hz=FS, at_opd_cm=float(np.median(x))
    )
    after = zpds(fixed)
    cmp1 = W.compare_sweeps([a[1] for a in after], None, [a[0] for a in after], label="ZPD")
    assert cmp1.keep.all()
    assert abs(cmp1.difference) < 3 * cmp1.u_difference  # 3σ, common practice
    # (b) the signal moved in time, then resampled again
    sig = D.shift_time_for_delay(sim.record.columns["signal"], est.delay_s, FS)
    again = resample.resample_sweeps(sig, p, lim.dx_cm)
    est2 = D.estimate_channel_delay(again, path=p, sample_rate_hz=FS)
    assert abs(est2.delay_s) < 3 * max(est2.u_delay_s, est.u_delay_s)
    assert abs(est2.delay_s) < 0.05 * tau


def test_correct_channel_delay_keeps_inputs():
    ifgs = led_record(50e-6)[3]
    x0 = [g.x0_cm for g in ifgs]
    out = D.correct_channel_delay(ifgs, 50e-6)
    assert [g.x0_cm for g in ifgs] == x0
    for g, h in zip(ifgs, out, strict=True):
        # closed form: shift −d·|v|·τ with the sweep's mean speed
        assert h.x0_cm - g.x0_cm == pytest.approx(
            -g.sweep.direction * g.sweep.mean_speed_cm_s * 50e-6, rel=1e-12
        )
        assert h.y is g.y


# --------------------------------------------------------------------------------------------
# simulator: phase method


@pytest.mark.parametrize("tau", [50e-6, -30e-6])
def test_phase_delay_recovered_from_narrow_line(tau):
    sim, p, lim, ifgs = laser_record(tau)
    assert not any(find_zpd(g.x_cm, g.y).found for g in ifgs)  # no centre burst to use
    est = D.estimate_channel_delay(
        ifgs, method="phase", path=p, sample_rate_hz=FS, max_delay_s=100e-6
    )
    assert est.ok and est.method == "phase"
    # closed form for the ambiguity period: T = 1/(σ₀(|v_f| + |v_b|)) with v ≈ 0.09 cm/s
    assert est.ambiguity_period_s == pytest.approx(1 / (1e7 / 532 * 2 * 0.0855), rel=0.1)
    # the line phase is measured to ~1e-3 rad, i.e. u ≈ 5e-8 s; 1 % is > 5 u
    assert est.delay_s == pytest.approx(tau, rel=0.01)
    assert abs(est.delay_s - tau) < 4 * est.u_delay_s + 1e-3 * abs(tau)


def test_phase_correction_makes_line_phases_agree():
    tau = 50e-6
    sim, p, lim, ifgs = laser_record(tau)
    est = D.estimate_channel_delay(
        ifgs, method="phase", path=p, sample_rate_hz=FS, max_delay_s=100e-6
    )
    sig = D.shift_time_for_delay(sim.record.columns["signal"], est.delay_s, FS)
    again = resample.resample_sweeps(sig, p, lim.dx_cm)
    res = D.estimate_channel_delay(
        again, method="phase", path=p, sample_rate_hz=FS, max_delay_s=100e-6
    )
    # forward and backward phases agree: the remaining delay is zero within 3σ (plus the
    # 0.1 % of τ that the first estimate may be off)
    assert res.ok and abs(res.delay_s) < 3 * res.u_delay_s + 1e-3 * tau
    # one OPD shift per sweep (mean speed over the sweep) leaves only the speed variation
    fixed = D.correct_channel_delay(ifgs, est.delay_s, path=p, sample_rate_hz=FS)
    res2 = D.estimate_channel_delay(
        fixed, method="phase", path=p, sample_rate_hz=FS, max_delay_s=100e-6
    )
    assert res2.ok and abs(res2.delay_s) < 0.02 * tau


def test_phase_ambiguity_reported_without_speed_diversity():
    # No speed wobble: every sweep has the same speed, so τ and τ + kT fit equally well.
    sim, p, lim, ifgs = laser_record(50e-6, jitter=0.0)
    est = D.estimate_channel_delay(ifgs, method="phase", path=p, sample_rate_hz=FS)
    assert not est.ok and "modulo" in est.reason and "max_delay_s" in est.reason
    assert est.ambiguity_period_s > 0
    bounded = D.estimate_channel_delay(
        ifgs, method="phase", path=p, sample_rate_hz=FS, max_delay_s=0.45 * est.ambiguity_period_s
    )
    assert bounded.ok and bounded.delay_s == pytest.approx(50e-6, rel=0.01)
