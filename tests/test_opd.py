"""Tests of ftsource.interferogram.opd.

Oracles:
* closed-form ellipses ``I = p + a cos φ``, ``Q = q + b sin(φ + α)`` (Heydemann 1981, Appl.
  Opt. 20:3382) for the ellipse fit;
* the true path ``Simulation.opd_cm`` of records made by ``ftsource.simulate``, whose fringe and
  quadrature conventions are checked against closed forms in tests/test_simulate.py;
* OPD = 2 × mirror position and x = 2 v t for the encoder and constant-speed paths (common
  practice for a Michelson interferometer).

"Scale error" of a sweep is the slope of a straight-line fit of the estimated OPD against the
true OPD, minus one (plus one for a reversed sign); for a fixed sampling density its noise
grows as span^(-3/2) (ordinary least squares, closed form), so sweeps cut short by the record's
ends get a tolerance scaled that way from the full-sweep one.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.errors import AnalysisError, FtsourceWarning
from ftsource.interferogram import opd

REF_NM = 632.991
LAM_CM = REF_NM * 1e-7
FS = 48_000.0
AMPLITUDE_CM = 0.1
FULL_SPAN_CM = 2 * AMPLITUDE_CM


@cache
def record(kind, seed=1, noise=0.002, dropouts=(), sample_rate_hz=FS, shape=0.97):
    """Unequal gains and offsets, 85° between I and Q, drifting levels, uneven mirror speed."""
    ref = S.ReferenceChannel(
        kind=kind,
        wavelength_nm=REF_NM,
        offsets=(0.05, -0.03),
        gains=(1.0, 0.8),
        quadrature_deg=85.0,
        noise_rms=noise,
        level_drift=0.1,
        dropouts=dropouts,
    )
    scan = S.Scan(duration_s=2.0, opd_amplitude_cm=AMPLITUDE_CM, speed_jitter=0.1,
                  sample_rate_hz=sample_rate_hz, shape=shape)
    return S.simulate(S.laser(532), scan, ref, S.Detector(), rng=seed)


def analyse(kind, cols, fs=FS):
    if kind == "quadrature":
        return opd.opd_from_quadrature(cols["ref_i"], cols["ref_q"], fs, REF_NM)
    return opd.opd_from_single(cols["ref"], fs, REF_NM)


def sweep_fit(path, sw, truth):
    """Slope, offset and RMS residual (cm) of the estimated OPD against the truth."""
    sl = slice(sw.start, sw.stop)
    x, t = path.opd_cm[sl], truth[sl]
    g = np.isfinite(x)
    slope, offset = np.polyfit(t[g], x[g], 1)
    rms = float(np.std(x[g] - (slope * t[g] + offset)))
    return float(slope), float(offset), rms


def scale_tolerance(sw, full_sweep_tol):
    return full_sweep_tol * max(1.0, (0.9 * FULL_SPAN_CM / sw.opd_span_cm) ** 1.5)


def slope_sigma(rms_cm, sw):
    """Standard error of an OLS slope over the sweep for white residuals (closed form:
    σ_slope = rms / (span·√(n/12)) for n evenly spread points)."""
    return rms_cm * np.sqrt(12.0 / (sw.stop - sw.start)) / sw.opd_span_cm


def true_direction(sw, truth):
    return int(np.sign(truth[sw.stop - 1] - truth[sw.start]))


# --------------------------------------------------------------------------------------------
# Heydemann ellipse fit


ELLIPSES = [
    # p, q, a, b, alpha (rad)
    (0.05, -0.03, 1.0, 0.8, np.deg2rad(-5.0)),
    (-0.2, 0.4, 0.3, 0.5, np.deg2rad(12.0)),
    (0.0, 0.0, 1.0, 1.0, 0.0),
]


def ellipse(p, q, a, b, alpha, phi):
    return p + a * np.cos(phi), q + b * np.sin(phi + alpha)


@pytest.mark.parametrize("params", ELLIPSES)
def test_fit_ellipse_noiseless_is_exact(params):
    # closed form: noiseless points lie exactly on the conic, so the algebraic fit is exact
    p, q, a, b, alpha = params
    phi = np.linspace(0, 1.5 * np.pi, 500)  # three quarters of the ellipse suffice
    fit = opd.fit_ellipse(*ellipse(p, q, a, b, alpha, phi))
    got = np.array([fit.p, fit.q, fit.a, fit.b, fit.alpha])
    np.testing.assert_allclose(got, [p, q, a, b, alpha], rtol=0, atol=1e-10)  # rounding only
    assert fit.residual < 1e-10
    phase = opd.ellipse_phase(*ellipse(p, q, a, b, alpha, phi), fit)
    np.testing.assert_allclose(np.angle(np.exp(1j * (phase - phi))), 0.0, atol=1e-9)


@pytest.mark.parametrize("params", ELLIPSES)
def test_fit_ellipse_with_noise(params):
    p, q, a, b, alpha = params
    rng = np.random.default_rng(11)
    n, noise = 20000, 0.005 * min(a, b)
    phi = rng.uniform(0, 2 * np.pi, n)
    i, qq = ellipse(p, q, a, b, alpha, phi)
    fit = opd.fit_ellipse(i + rng.normal(0, noise, n), qq + rng.normal(0, noise, n))
    # each parameter's statistical error is ~ noise·√(2/n) ≈ 5e-5·min(a,b) and the algebraic
    # fit's bias O(noise²) ≈ 2.5e-5; 10× that sum:
    tol = 10 * (noise * np.sqrt(2 / n) + noise**2 / min(a, b))
    assert abs(fit.p - p) < tol and abs(fit.q - q) < tol
    assert abs(fit.a - a) < tol and abs(fit.b - b) < tol
    assert abs(fit.alpha - alpha) < tol / min(a, b)
    # residual: the radial noise relative to the radius, ~ noise/min(a, b)
    assert fit.residual < 2 * noise / min(a, b)


def test_fit_on_simulated_record_recovers_85_degrees():
    # The simulator's quadrature_deg is the angle between I and Q: α = 85° − 90° = −5°
    # (Heydemann's model, see tests/test_simulate.py). Noise 0.002: tolerances as above.
    sim = record("quadrature")
    c = sim.record.columns
    a, b = 400, 20000  # 0.4 s: short enough that the slow level drift barely moves
    fit = opd.fit_ellipse(c["ref_i"][a:b], c["ref_q"][a:b])
    assert fit.alpha == pytest.approx(np.deg2rad(-5.0), abs=2e-3)
    assert fit.a == pytest.approx(1.0, abs=2e-3)
    assert fit.b == pytest.approx(0.8, abs=2e-3)
    # offsets are scaled by (1 + 0.1·drift): within 0.1·0.05 = 0.005 of nominal
    assert fit.p == pytest.approx(0.05, abs=0.006)
    assert fit.q == pytest.approx(-0.03, abs=0.004)


def test_fit_ellipse_rejects_constant_channels():
    with pytest.raises(AnalysisError):
        opd.fit_ellipse(np.ones(100), np.linspace(0, 1, 100))


# --------------------------------------------------------------------------------------------
# quadrature reference


def test_quadrature_opd_matches_truth():
    sim = record("quadrature")
    path = analyse("quadrature", sim.record.columns)
    truth = sim.opd_cm
    assert path.kind == "quadrature"
    assert path.dropouts == 0 and path.fringe_slips == 0 and path.warnings == ()
    assert len(path.sweeps) == 5  # two turnarounds a second for 2 s, record starts mid-sweep
    offsets = []
    for sw in path.sweeps:
        slope, offset, rms = sweep_fit(path, sw, truth)
        # the requirement: scale error < 2e-8 per sweep (full sweeps; shorter ones
        # scaled as span^(-3/2), see the module docstring)
        assert abs(slope - 1) < scale_tolerance(sw, 2e-8)
        # phase noise 0.002/0.8 rad → 0.2 nm per sample before smoothing; 1 nm is generous
        assert rms < 1e-7
        assert sw.direction == true_direction(sw, truth)
        assert sw.segment == 0
        offsets.append(offset)
    # one segment: the OPD is continuous across turnarounds (same constant to < 1 nm)
    assert np.ptp(offsets) < 1e-7
    assert path.ellipse_residual < 0.01


def test_quadrature_through_dropouts():
    drop = ((0.5, 0.01), (1.3, 0.005))
    sim = record("quadrature", dropouts=drop)
    path = analyse("quadrature", sim.record.columns)
    truth = sim.opd_cm
    assert path.dropouts == 2
    segs = [sw.segment for sw in path.sweeps]
    assert segs == sorted(segs) and sorted(set(segs)) == [0, 1, 2]
    by_seg: dict[int, list[float]] = {}
    for sw in path.sweeps:
        t0, t1 = sw.start / FS, sw.stop / FS
        for start, length in drop:  # no sweep runs through a blocked beam
            assert t1 <= start or t0 >= start + length
        # the segment is the number of dropouts before the sweep
        assert sw.segment == sum(t0 >= start + length for start, length in drop)
        slope, offset, rms = sweep_fit(path, sw, truth)
        assert abs(slope - 1) < scale_tolerance(sw, 2e-8)
        assert rms < 1e-7
        assert sw.direction == true_direction(sw, truth)
        by_seg.setdefault(sw.segment, []).append(offset)
    for offs in by_seg.values():  # continuous within a segment (< 1 nm)
        assert np.ptp(offs) < 1e-7
    assert all(np.isnan(path.opd_cm[int(0.5 * FS) : int(0.51 * FS)]))


def _deleted(sim, k0, m):
    keep = np.ones(sim.opd_cm.size, bool)
    keep[k0 + 1 : k0 + 1 + m] = False
    return {k: v[keep] for k, v in sim.record.columns.items()}, sim.opd_cm[keep]


def test_quadrature_lost_samples_are_split_never_rescaled():
    # Samples 37 201 … are deleted: the OPD jumps by m × the step per sample. A jump whose
    # wrapped value lies within 0.1 fringe of the normal step is indistinguishable from
    # continuous motion (closed form: the wrapped phase is all a quadrature pair sees); all
    # others must be found. Before the fix, jumps wrapping to between −0.3 and −0.5 fringe
    # (m = 4..6 here) were unwrapped the wrong way and the sweep silently lost a fringe.
    sim = record("quadrature")
    k0 = 37_200
    step = (sim.opd_cm[k0 + 1] - sim.opd_cm[k0]) / LAM_CM  # fringes per sample here
    tested = 0
    for m in range(1, 13):
        jump = (sim.opd_cm[k0 + 1 + m] - sim.opd_cm[k0]) / LAM_CM
        excess = (jump - step + 0.5) % 1.0 - 0.5
        if abs(excess) < 0.12:  # blind zone (0.1 fringe) plus a margin
            continue
        tested += 1
        cols, truth = _deleted(sim, k0, m)
        path = analyse("quadrature", cols)
        assert path.fringe_slips >= 1
        assert any("slip" in w for w in path.warnings)
        for sw in path.sweeps:
            assert not sw.start <= k0 < sw.stop - 1  # split at the jump
            slope, _, rms = sweep_fit(path, sw, truth)
            assert abs(slope - 1) < scale_tolerance(sw, 2e-8)
            assert rms < 1e-7
        segs = {sw.segment for sw in path.sweeps}
        assert len(segs) == 2  # before and after the jump
    assert tested >= 8


def test_quadrature_sampled_too_slowly_is_split_not_rescaled():
    # At 16 kHz the fastest stretches move 0.54 fringe per sample (steps beyond ±0.6π and
    # aliasing): those stretches are cut out, what remains is right.
    with pytest.warns(FtsourceWarning, match="samples per reference fringe"):
        sim = record("quadrature", sample_rate_hz=16_000.0)  # simulate says it undersamples
    peak = np.max(np.abs(np.diff(sim.opd_cm))) / LAM_CM
    assert 0.5 < peak < 0.6
    path = analyse("quadrature", sim.record.columns, fs=16_000.0)
    assert path.fringe_slips > 0
    assert any("slip" in w for w in path.warnings)
    assert len(path.sweeps) >= 2
    for sw in path.sweeps:
        slope, _, rms = sweep_fit(path, sw, sim.opd_cm)
        # what remains are short pieces (~50 µm) near the turnarounds, noise-limited: 5σ of
        # the OLS slope; a lost fringe would be 0.06 µm / 50 µm ≈ 1e-2 and an RMS of ~100 nm
        assert abs(slope - 1) < 5 * slope_sigma(rms, sw)
        assert rms < 1e-7


@pytest.mark.parametrize(
    "i,q",
    [
        (np.full(20000, 0.3), np.full(20000, -0.2)),
        (
            0.3 + 0.01 * np.random.default_rng(1).normal(size=20000),
            -0.2 + 0.01 * np.random.default_rng(2).normal(size=20000),
        ),
    ],
    ids=["constant", "noise"],
)
def test_quadrature_without_fringes_raises(i, q):
    with pytest.raises(AnalysisError):
        opd.opd_from_quadrature(i, q, FS, REF_NM)


def test_quadrature_still_mirror_raises():
    sim = S.simulate(S.laser(532), S.Scan(opd_amplitude_cm=1e-6), S.ReferenceChannel(), rng=0)
    with pytest.raises(AnalysisError):
        analyse("quadrature", sim.record.columns)


# --------------------------------------------------------------------------------------------
# single reference channel


def test_single_opd_matches_truth_and_alternates_direction():
    sim = record("single")
    path = analyse("single", sim.record.columns)
    truth = sim.opd_cm
    assert path.kind == "single"
    assert path.dropouts == 0  # turnarounds are not dropouts
    assert len(path.sweeps) == 5
    # a single channel cannot tell the absolute direction: one sign for the whole segment
    sign = path.sweeps[0].direction * true_direction(path.sweeps[0], truth)
    for k, sw in enumerate(path.sweeps):
        assert sw.segment == 0
        assert sw.direction == sign * true_direction(sw, truth)
        if k:
            assert sw.direction == -path.sweeps[k - 1].direction  # flips at each turnaround
        slope, _, rms = sweep_fit(path, sw, truth)
        # the requirement: scale error < 1e-7 per sweep (shorter ones scaled)
        assert abs(abs(slope) - 1) < scale_tolerance(sw, 1e-7)
        assert np.sign(slope) == sign
        # worst near the turnarounds (slow fringes, see opd_from_single); 2 nm RMS overall
        assert rms < 2e-7


def test_single_channel_scale_on_sinusoidal_scan():
    # A sinusoidal scan (shape 0.5) accelerates everywhere: a plain Gaussian smoothing of the
    # phase shifted it by σ²x''/2, a scale error of −3e-7 per sweep (before the fix).
    sim = record("single", shape=0.5)
    path = analyse("single", sim.record.columns)
    full = [sw for sw in path.sweeps if sw.opd_span_cm > 0.9 * FULL_SPAN_CM]
    assert len(full) >= 2
    for sw in path.sweeps:
        slope, _, _ = sweep_fit(path, sw, sim.opd_cm)
        assert abs(abs(slope) - 1) < scale_tolerance(sw, 1e-7)


def test_single_channel_dropouts_are_not_turnarounds():
    drop = ((0.5, 0.01), (1.3, 0.005))  # both at full speed, mid-sweep
    sim = record("single", dropouts=drop)
    path = analyse("single", sim.record.columns)
    truth = sim.opd_cm
    assert path.dropouts == 2
    by_seg: dict[int, list] = {}
    for sw in path.sweeps:
        t0, t1 = sw.start / FS, sw.stop / FS
        for start, length in drop:
            assert t1 <= start or t0 >= start + length
        assert sw.segment == sum(t0 >= start + length for start, length in drop)
        by_seg.setdefault(sw.segment, []).append(sw)
        slope, _, _ = sweep_fit(path, sw, truth)
        assert abs(abs(slope) - 1) < scale_tolerance(sw, 2e-7)  # sweeps cut by a dropout
    assert sorted(by_seg) == [0, 1, 2]
    for sws in by_seg.values():
        sign = sws[0].direction * true_direction(sws[0], truth)
        assert all(sw.direction == sign * true_direction(sw, truth) for sw in sws)
    # one more sweep than turnarounds in each segment: the truth has 4 turnarounds in 2 s and
    # the two dropouts cut two sweeps in two
    assert len(path.sweeps) == 7


@pytest.mark.parametrize(
    "make",
    [
        lambda: np.full(20000, 0.7),
        lambda: 0.7 + 0.01 * np.random.default_rng(3).normal(size=96000),
        # the mirror does not scan: the reference shows only noise around a fixed fringe
        lambda: S.simulate(S.laser(532), S.Scan(opd_amplitude_cm=1e-6),
                           S.ReferenceChannel(kind="single"), rng=0).record.columns["ref"],
    ],
    ids=["constant", "noise", "still-mirror"],
)
def test_single_without_fringes_raises(make):
    # before the fix the still-mirror record gave three sweeps of analytic-signal phase of
    # noise (its envelope varies like a Rayleigh variable, coefficient of variation 0.52)
    with pytest.raises(AnalysisError, match="no fringes"):
        opd.opd_from_single(make(), FS, REF_NM)


# --------------------------------------------------------------------------------------------
# encoder and constant speed


def test_encoder_opd_is_twice_position():
    scan = S.Scan(duration_s=2.0, opd_amplitude_cm=AMPLITUDE_CM, speed_jitter=0.1)
    sim = S.simulate(S.laser(532), scan, S.ReferenceChannel(kind="encoder",
                                                             encoder_resolution_m=1e-9), rng=1)
    path = opd.opd_from_position(sim.record.position_m, FS)
    assert path.kind == "encoder" and len(path.sweeps) == 5
    for sw in path.sweeps:
        slope, _, rms = sweep_fit(path, sw, sim.opd_cm)
        # 1 nm position steps are 2 nm OPD steps: RMS 2/√12 = 0.58 nm before smoothing
        assert rms < 0.58e-7
        assert abs(slope - 1) < 5 * slope_sigma(0.58e-7, sw)  # ≈ 3e-8 for a full sweep
        assert sw.direction == true_direction(sw, sim.opd_cm)
    raw = opd.opd_from_position(sim.record.position_m, FS, smooth=False)
    np.testing.assert_allclose(raw.opd_cm, 2 * sim.record.position_m * 100, rtol=1e-15)


def test_encoder_without_motion_raises():
    with pytest.raises(AnalysisError):
        opd.opd_from_position(np.full(1000, 1e-3), FS)


@pytest.mark.parametrize("speed", [2e-4, -5e-4])
def test_constant_speed(speed):
    n = 4800
    path = opd.opd_from_constant_speed(n, FS, speed)
    t = np.arange(n) / FS
    np.testing.assert_allclose(path.opd_cm, 2 * speed * 100 * t, rtol=1e-15, atol=0)
    assert len(path.sweeps) == 1
    sw = path.sweeps[0]
    assert (sw.start, sw.stop, sw.direction) == (0, n, int(np.sign(speed)))
    assert sw.opd_span_cm == pytest.approx(abs(2 * speed * 100 * t[-1]), rel=1e-12)
    assert len(path.warnings) == 1 and f"{abs(speed) * 1e3:g}" in path.warnings[0]
