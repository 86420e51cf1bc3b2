"""Tests of ftsource.simulate against closed forms.

The simulator is the oracle of the OPD, resampling and end-to-end tests, so every convention it
encodes is checked here against something outside it:

* one reference fringe per λ/2 of mirror travel, i.e. OPD = 2 × mirror displacement (common
  practice for a Michelson interferometer);
* the quadrature pair ``I = p + a cos φ``, ``Q = q + b sin(φ + α)`` with φ = 2π n d/λ (closed
  form; the imperfect-quadrature model of Heydemann 1981, Appl. Opt. 20:3382, with
  α = quadrature angle − 90°);
* a line's coherence function is the Fourier transform of its normalised profile
  (Wiener–Khinchin theorem), checked by numerical integration with scipy.integrate.quad and by
  numpy.fft of a simulated interferogram;
* the air index at each wavelength from ftsource.physics.air.ciddor_index (Ciddor 1996, Appl. Opt.
  35:1566; that function is tested in tests/test_air.py).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import integrate

from ftsource import simulate as S
from ftsource.physics.air import AirConditions, ciddor_index

REF_NM = 632.991
FS = 48_000.0


def _wrap(phase):
    return np.angle(np.exp(1j * np.asarray(phase)))


def _monotonic_stretch(d):
    """Start/stop of the longest stretch where d(t) moves one way (between two turnarounds)."""
    s = np.sign(np.diff(d))
    edges = np.flatnonzero(np.diff(s) != 0) + 1
    bounds = np.concatenate([[0], edges, [d.size - 1]])
    k = int(np.argmax(np.diff(bounds)))
    return int(bounds[k]), int(bounds[k + 1])


# --------------------------------------------------------------------------------------------
# reference fringes and mirror travel


def test_one_reference_fringe_per_half_wavelength_of_mirror_travel():
    # Same seed, same scan: the encoder and the single reference see the same mirror. The
    # encoder column is the mirror position; the reference fringes are counted by zero
    # crossings (two per fringe). Common practice: a fringe per λ/2 of mirror travel.
    scan = S.Scan(duration_s=1.0, opd_amplitude_cm=0.02, speed_jitter=0.1)
    enc = S.simulate(
        S.laser(532), scan, S.ReferenceChannel(kind="encoder", encoder_resolution_m=0), rng=4
    )
    one = S.simulate(
        S.laser(532),
        scan,
        S.ReferenceChannel(kind="single", wavelength_nm=REF_NM, noise_rms=0.0, level_drift=0.0),
        rng=4,
    )
    np.testing.assert_array_equal(enc.opd_cm, one.opd_cm)
    pos_m = enc.record.position_m
    # Simulation.opd_cm is the geometric OPD d; the mirror moves d/2 (common practice)
    np.testing.assert_allclose(pos_m, one.opd_cm / 2 * 1e-2, rtol=0, atol=1e-18)
    a, b = _monotonic_stretch(one.opd_cm)
    travel_nm = abs(pos_m[b] - pos_m[a]) * 1e9
    assert travel_nm > 150_000  # a full sweep (200 µm of travel, ~630 fringes)
    ref = one.record.columns["ref"][a : b + 1] - 1.0  # level 1, gain 1, no noise
    crossings = np.count_nonzero(np.diff(np.signbit(ref)))
    expected = 2 * travel_nm / (REF_NM / 2)  # two crossings per fringe, a fringe per λ/2
    # the stretch starts and ends at an arbitrary phase: at most one crossing either way
    assert abs(crossings - expected) <= 1.0
    # a fringe per λ (not λ/2) of travel would miss by ~630 crossings
    assert abs(crossings - expected / 2) > 100


@pytest.mark.parametrize("quadrature_deg", [90.0, 85.0])
def test_quadrature_phase_is_two_pi_opd_over_wavelength(quadrature_deg):
    # Closed form (Heydemann model): I = p + a cos φ, Q = q + b sin(φ + α), α = angle − 90°,
    # φ = 2π d/λ in vacuum. Noise-free, so the recovered phase is exact to rounding.
    p, q, a, b = 0.05, -0.03, 1.0, 0.8
    ref = S.ReferenceChannel(
        offsets=(p, q), gains=(a, b), quadrature_deg=quadrature_deg, noise_rms=0.0
    )
    sim = S.simulate(S.laser(532), S.Scan(duration_s=0.5), ref, rng=2)
    i, qq = sim.record.columns["ref_i"], sim.record.columns["ref_q"]
    alpha = np.deg2rad(quadrature_deg - 90.0)
    c = (i - p) / a
    s = ((qq - q) / b - c * np.sin(alpha)) / np.cos(alpha)
    np.testing.assert_allclose(np.hypot(c, s), 1.0, atol=1e-12)
    expected = 2 * np.pi * sim.opd_cm / (REF_NM * 1e-7)
    # 1e-9 rad: rounding of phases up to ~1e4 rad (float64 eps × 1e4 ≈ 2e-12) with margin
    assert np.max(np.abs(_wrap(np.arctan2(s, c) - expected))) < 1e-9


def test_air_medium_uses_ciddor_index_at_each_wavelength():
    # In air the reference sees n(λ_ref) and the source n(λ_source), both from
    # ftsource.physics.air.ciddor_index (Ciddor 1996). Closed form as above with φ = 2π n d/λ.
    air = AirConditions()
    src_nm = 532.0
    ref = S.ReferenceChannel(offsets=(0.0, 0.0), gains=(1.0, 1.0), noise_rms=0.0)
    det = S.Detector(offset=0.0, noise_rms=0.0)
    sim = S.simulate(S.laser(src_nm), S.Scan(duration_s=0.5), ref, det, medium="air", air=air,
                     rng=3)
    args = (air.temperature_c, air.pressure_pa, air.humidity_percent, air.co2_ppm)
    n_ref = float(ciddor_index(REF_NM, *args))
    n_src = float(ciddor_index(src_nm, *args))
    d = sim.opd_cm
    phi = np.arctan2(sim.record.columns["ref_q"], sim.record.columns["ref_i"])
    assert np.max(np.abs(_wrap(phi - 2 * np.pi * n_ref * d / (REF_NM * 1e-7)))) < 1e-9
    # vacuum phase would be off by 2π (n − 1) d/λ ≈ 2π · 2.7e-4 · 0.05 cm / 633 nm ≈ 1.3 rad
    assert np.max(np.abs(_wrap(phi - 2 * np.pi * d / (REF_NM * 1e-7)))) > 0.5
    # source: 1 + cos(2π σ n_src d) for a single line of unit strength, no offset or noise
    sig = sim.record.columns["signal"]
    np.testing.assert_allclose(sig, 1 + np.cos(2 * np.pi * (1e7 / src_nm) * n_src * d),
                               atol=1e-9)
    # and not with the reference's index (dispersion, n_src − n_ref ≈ 3e-6, matters here)
    with_ref_index = 1 + np.cos(2 * np.pi * (1e7 / src_nm) * n_ref * d)
    assert np.max(np.abs(sig - with_ref_index)) > 1e-3


# --------------------------------------------------------------------------------------------
# line shapes


LINES = {
    "gaussian": S.SpectralLine(15000.0, 2.0, gauss_fwhm_per_cm=3.0),
    "lorentzian": S.SpectralLine(15000.0, 2.0, lorentz_fwhm_per_cm=3.0),
    "voigt": S.SpectralLine(15000.0, 2.0, gauss_fwhm_per_cm=2.0, lorentz_fwhm_per_cm=1.5),
}


@pytest.mark.parametrize("name", LINES)
def test_density_integrates_to_strength(name):
    ln = LINES[name]
    def v(s):
        return ln.density(ln.wavenumber_per_cm + s)

    total, _ = integrate.quad(v, -np.inf, np.inf)  # scipy.integrate
    assert total == pytest.approx(ln.strength, rel=1e-9)  # quad's error estimate is < 1e-10


@pytest.mark.parametrize("name", LINES)
@pytest.mark.parametrize("x_cm", [0.01, 0.05, 0.1, 0.2, 0.4])
def test_coherence_is_fourier_transform_of_density(name, x_cm):
    # Wiener–Khinchin: γ(x) = ∫ V(σ − σ0) cos(2π (σ − σ0) x) dσ for a normalised, symmetric
    # profile V, evaluated by scipy.integrate.quad's Fourier-integral rule (QAWF).
    ln = LINES[name]

    def v(s):
        return ln.density(ln.wavenumber_per_cm + s) / ln.strength

    half, _ = integrate.quad(v, 0, np.inf, weight="cos", wvar=2 * np.pi * x_cm, limlst=200)
    # quad's own error estimate here is ~1e-10; 1e-8 leaves room without hiding a wrong
    # convention (a factor 2 in the width changes γ(0.1 cm) by > 0.1)
    assert 2 * half == pytest.approx(float(ln.coherence(x_cm)), abs=1e-8)


def test_gaussian_interferogram_transforms_to_gaussian_line():
    # numpy.fft of the simulated interferogram (minus its mean level) on a uniform grid
    # centred on x = 0 gives B(σ) = ½ V(σ − σ0) on the positive side (closed form: the
    # Fourier pair of a Gaussian); centre and FWHM from the moments of B.
    ln = S.SpectralLine(15000.0, 1.0, gauss_fwhm_per_cm=20.0)
    dx, n = 1e-5, 40000  # Nyquist 50000 cm⁻¹; ±0.2 cm, where γ < 1e-20
    x = (np.arange(n) - n // 2) * dx
    y = S.interferogram(S.SourceModel((ln,)), x) - 1.0
    b = np.fft.rfft(np.fft.ifftshift(y)) * dx
    f = np.fft.rfftfreq(n, dx)
    assert np.max(np.abs(b.imag)) < 1e-12  # even interferogram (φ = 0): real spectrum
    br = b.real
    m = (f > 14800) & (f < 15200)
    centre = np.sum(f[m] * br[m]) / np.sum(br[m])
    sd = np.sqrt(np.sum((f[m] - centre) ** 2 * br[m]) / np.sum(br[m]))
    assert centre == pytest.approx(15000.0, abs=1e-6)
    assert sd * np.sqrt(8 * np.log(2)) == pytest.approx(20.0, rel=1e-6)
    # pointwise against the closed form; rounding of 40000-term sums is ~1e-14
    np.testing.assert_allclose(br, 0.5 * ln.density(f), atol=1e-12)


def test_led_density_integrates_to_strength_and_peaks_at_centre():
    src = S.led(590.0, 15.0, asymmetry=0.2, strength=3.0)
    sig = np.array([ln.wavenumber_per_cm for ln in src.lines])
    w = src.lines[0].gauss_fwhm_per_cm
    lo, hi = sig.min() - 20 * w, sig.max() + 20 * w
    total, _ = integrate.quad(src.density, lo, hi, limit=2000, points=sig[::10])
    assert total == pytest.approx(3.0, rel=1e-9)  # scipy.integrate.quad, error < 1e-11
    # the peak of the density per nm sits at the nominal centre (split normal, by
    # construction); 0.2 nm is a tenth of the component spacing
    s = np.linspace(lo, hi, 200001)
    lam = 1e7 / s
    per_nm = src.density(s) * 1e7 / lam**2
    assert lam[np.argmax(per_nm)] == pytest.approx(590.0, abs=0.2)


def test_multimode_spacing_and_envelope():
    centre, spacing, env = 650.0, 0.2, 2.0
    src = S.multimode(centre, spacing, env, strength=2.0)
    sig = np.array([ln.wavenumber_per_cm for ln in src.lines])
    amp = np.array([ln.strength for ln in src.lines])
    s0 = 1e7 / centre
    ds = s0 * spacing / centre  # Δσ = Δλ/λ² (closed form, to first order in Δλ/λ)
    np.testing.assert_allclose(np.diff(sig), ds, rtol=1e-9)
    assert np.min(np.abs(sig - s0)) < 1e-9 * s0  # a mode on the centre
    assert amp.sum() == pytest.approx(2.0, rel=1e-12)
    # Gaussian envelope of FWHM env (in σ: s0·env/centre)
    e = s0 * env / centre
    expected = np.exp(-4 * np.log(2) * ((sig - s0) / e) ** 2)
    np.testing.assert_allclose(amp / amp.max(), expected / expected.max(), rtol=1e-9)
    # adjacent modes near the centre are spacing_nm apart in wavelength (closed form,
    # λ = 1e7/σ; second-order term Δλ²/λ ≈ 6e-5 nm)
    k = int(np.argmin(np.abs(sig - s0)))
    assert 1e7 / sig[k - 1] - 1e7 / sig[k] == pytest.approx(spacing, abs=1e-4)


# --------------------------------------------------------------------------------------------
# mirror motion and detector


def test_peak_speed_matches_trajectory():
    # Closed form: d = A·arcsin(k sin θ)/arcsin(k), θ = 2π f t, fastest at θ = 0 with
    # dd/dt = A·2πf·k/arcsin(k); compared with the finite-difference speed at 200 kHz.
    for k in (0.3, 0.9, 0.97):
        scan = S.Scan(shape=k, speed_jitter=0.0, sample_rate_hz=200_000, duration_s=1.5)
        t = np.arange(scan.n_samples) / scan.sample_rate_hz
        d = S.mirror_trajectory(scan, t, np.random.default_rng(0))
        v = np.max(np.abs(np.diff(d))) * scan.sample_rate_hz
        # the difference quotient near the maximum is accurate to O((ω Δt)²) ≈ 1e-9 here
        assert v == pytest.approx(scan.peak_opd_speed_cm_s, rel=1e-6)


def test_sweep_speed_factors_set_each_sweeps_duration_and_speed():
    # Closed form: with the θ rate w·f_n in sweep n, a whole sweep (θ from π/2 + nπ to
    # π/2 + (n+1)π) lasts π/(w f_n) and its fastest speed is f_n times the unscaled peak speed.
    scan = S.Scan(shape=0.9, speed_jitter=0.0, sample_rate_hz=200_000, duration_s=3.2,
                  sweep_rate_hz=1.0, start_phase_rad=0.3, sweep_speed_factors=(1.0, 1.5))
    t = np.arange(scan.n_samples) / scan.sample_rate_hz
    d = S.mirror_trajectory(scan, t, np.random.default_rng(0))
    v = np.diff(d) * scan.sample_rate_hz
    turns = np.flatnonzero(np.sign(v[1:]) != np.sign(v[:-1])) + 1
    durations = np.diff(turns) / scan.sample_rate_hz
    w = 2 * np.pi * scan.sweep_rate_hz
    # the first full sweep is the record's second one (factor 1.5), then 1.0, 1.5, ...
    expected = [np.pi / (w * (1.5 if i % 2 == 0 else 1.0)) for i in range(durations.size)]
    np.testing.assert_allclose(durations, expected, atol=2 / scan.sample_rate_hz)
    peaks = [np.max(np.abs(v[a:b])) for a, b in zip(turns[:-1], turns[1:], strict=True)]
    for i, p in enumerate(peaks):
        f = 1.5 if i % 2 == 0 else 1.0
        assert p == pytest.approx(f * scan.peak_opd_speed_cm_s, rel=1e-6)
    # no factors: the plain trajectory θ = θ0 + w t
    plain = S.Scan(shape=0.9, speed_jitter=0.0, duration_s=0.5)
    tp = np.arange(plain.n_samples) / plain.sample_rate_hz
    dp = S.mirror_trajectory(plain, tp, np.random.default_rng(0))
    k = plain.shape
    np.testing.assert_allclose(
        dp, plain.opd_amplitude_cm * np.arcsin(k * np.sin(0.3 + w * tp)) / np.arcsin(k),
        rtol=0, atol=1e-15,
    )
    with pytest.raises(ValueError, match="sweep_speed_factors"):
        S.mirror_trajectory(S.Scan(sweep_speed_factors=(1.0, 0.0)), tp, np.random.default_rng(0))


def test_detector_delay_shifts_signal_by_delay_times_speed():
    src = S.laser(532)
    det0 = S.Detector(noise_rms=0.0)
    scan = S.Scan(duration_s=0.5)
    base = S.simulate(src, scan, detector=det0, rng=5)
    # a delay of whole samples: the signal is the undelayed one, shifted (exact)
    k = 7
    late = S.simulate(src, scan, detector=S.Detector(noise_rms=0.0, delay_s=k / FS), rng=5)
    np.testing.assert_allclose(late.record.columns["signal"][k:],
                               base.record.columns["signal"][:-k], atol=1e-12)
    # a fractional delay τ: the source sees d(t − τ) = d − v τ + ½ a τ² + O(τ³) (Taylor,
    # closed form), v and a by finite differences of the true path
    tau = 37.3e-6
    late = S.simulate(src, scan, detector=S.Detector(noise_rms=0.0, delay_s=tau), rng=5)
    d = base.opd_cm
    v = np.gradient(d) * FS
    a = np.gradient(v) * FS
    sigma = 1e7 / 532
    expected = 1.0 + det0.offset + np.cos(2 * np.pi * sigma * (d - v * tau + 0.5 * a * tau**2))
    sl = slice(100, -100)
    # the simulator interpolates d linearly between samples: error ≤ |a|max Δt²/8 in OPD
    # (closed form), i.e. ≤ 2πσ|a|max/(8 fs²) ≈ 4e-5 in the signal; ×2 for the finite
    # differences of v and a
    tol = 2 * 2 * np.pi * sigma * np.max(np.abs(a)) / (8 * FS**2)
    got = late.record.columns["signal"]
    assert np.max(np.abs(got[sl] - expected[sl])) < tol
    # the shift is real: at 0.25 cm/s it moves the fringes by 2πσ v τ ≈ 1 rad
    assert np.max(np.abs(got - base.record.columns["signal"])) > 0.5


@pytest.mark.parametrize("centre, fwhm, asym", [(590.0, 30.0, 0.0), (450.0, 20.0, 0.0),
                                                (850.0, 60.0, 0.0), (850.0, 60.0, 0.25)])
def test_led_peak_and_fwhm_are_those_of_the_density_per_wavelength(centre, fwhm, asym):
    # issue 12, part 9: led:590nm:30nm must come back with its S_λ peak at 590 nm (analyze
    # reports CIE 127 figures on S_λ = S_σ·σ²/1e7, a change of variable). Closed form: the
    # split normal in λ peaks at its centre and has FWHM w_short + w_long. Tolerances: the
    # Gaussian components blur the shape by 0.08 FWHM (compensated for the width); the peak
    # of a symmetric band stays within 0.03 nm. An asymmetric split normal has a kink at its
    # maximum, which any blur moves toward the broad side (0.8 nm for 850/60, asymmetry
    # 0.25), so only its FWHM is checked.
    src = S.led(centre, fwhm, asymmetry=asym)
    s = np.linspace(1e7 / (centre + 3 * fwhm), 1e7 / (centre - 3 * fwhm), 400_001)
    lam = 1e7 / s
    per_nm = src.density(s) * s**2 / 1e7
    i = int(np.argmax(per_nm))
    if asym == 0.0:
        assert lam[i] == pytest.approx(centre, abs=0.03)
    above = lam[per_nm >= per_nm[i] / 2]
    assert above.max() - above.min() == pytest.approx(fwhm, rel=1e-3)
    # the other convention, named: the shape on S_σ has its S_σ peak at the centre, and S_λ
    # peaks shorter (by ~λ·(FWHM/λ)²/(4 ln 2)·... : 0.57 nm for 590/30)
    old = S.led(centre, fwhm, asymmetry=asym, density="per-wavenumber")
    if asym == 0.0:
        assert lam[int(np.argmax(old.density(s)))] == pytest.approx(centre, abs=0.03)
        assert lam[int(np.argmax(old.density(s) * s**2))] < centre - 0.1
    with pytest.raises(ValueError, match="per-wavelength"):
        S.led(centre, fwhm, density="per-nm")
