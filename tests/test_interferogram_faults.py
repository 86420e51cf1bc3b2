"""Rig faults on the interferogram side (issue 11, items 2-6, 11, 12), on records made by the
independent forward model in ``tests/rig_model.py`` (harmonic distortion, quantisation, speed
wobble, abrupt and rounded turnarounds), several seeds each. Every truth is a closed form:
the trajectory (turnaround times, spans), the interferogram of a Gaussian line or a comb
(its bursts at multiples of 1/Δσ, Dirichlet kernel), and the sampling figure
samples-per-fringe = f_s·λ_ref / v_OPD (a fringe per λ of OPD; common practice).
"""

from __future__ import annotations

import numpy as np
import pytest
import rig_model as rm
from cli_helpers import assert_clean_error, run

from ftsource.analysis import analyze
from ftsource.errors import AnalysisError, FtsourceWarning
from ftsource.interferogram import opd, resample
from ftsource.interferogram.channels import (
    MIN_SAMPLES_PER_FRINGE,
    reference_samples_per_fringe,
)
from ftsource.interferogram.turnarounds import phase_steps, suspect_spans
from ftsource.interferogram.zpd import conflicting_zpd, find_zpd

SEEDS = (0, 1, 2)
FS = 100e3


def scan(seed, *, rounding, seconds=4.0, period_s=2.0, amplitude_cm=0.3, centre_cm=0.0,
         wobble=0.0, wobble_hz=3.0, fs=FS):
    t = np.arange(int(seconds * fs)) / fs
    tau = rm.wobbled_time(t, depth=wobble, freq_hz=wobble_hz, phase=seed) if wobble else t
    phase = 0.1 + 0.07 * seed
    x = rm.triangle_opd(tau, amplitude_cm=amplitude_cm, period_s=period_s, rounding=rounding,
                        phase=phase, centre_cm=centre_cm)
    return t, x


def turn_times(seed, *, period_s=2.0, seconds=4.0, wobble=0.0, wobble_hz=3.0):
    """Reversals of rm.triangle_opd: where (τ/period + phase) mod 1 is 0 or 1/2, τ the
    wobbled time (inverted numerically: τ(t) is monotonic for a wobble below 100 %)."""
    phase = 0.1 + 0.07 * seed
    k = np.arange(-2, 2 * seconds / period_s + 2)
    tau = (k / 2 - phase) * period_s
    t = np.linspace(0, seconds, 400_001)
    warped = rm.wobbled_time(t, depth=wobble, freq_hz=wobble_hz, phase=seed) if wobble else t
    tau = tau[(tau > warped[0]) & (tau < warped[-1])]
    return np.interp(tau, warped, t)


# ---------------------------------------------------------------- item 4: turnarounds


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("rounding", [0.0, 0.1])
def test_single_channel_finds_every_turnaround(seed, rounding):
    """A triangle scan seen by one reference channel: abrupt corners (no slowing at all) and
    rounded ones (speed ramps through zero over 5 % of the period) both end the sweeps at
    the true reversals, with 30 % speed wobble, 3 % harmonic distortion and 10-bit
    quantisation. Truth: the reversal times of the closed-form triangle."""
    rng = np.random.default_rng(seed)
    _, x = scan(seed, rounding=rounding, wobble=0.3)
    path = opd.opd_from_single(rm.single_channel(x, rng), FS, rm.HENE_NM)
    turns = turn_times(seed, wobble=0.3)
    full_span = 2 * 0.3
    # each sweep lies between two consecutive reversals: it never straddles one
    for sw in path.sweeps:
        t0, t1 = sw.start / FS, sw.stop / FS
        assert not np.any((turns > t0 + 1e-3) & (turns < t1 - 1e-3)), (t0, t1, turns)
        assert sw.opd_span_cm <= full_span * 1.001
    # and the long stretches between reversals are all used, each nearly its whole span
    inner = [(a, b) for a, b in zip(turns[:-1], turns[1:], strict=True)]
    assert len(inner) >= 3
    for a, b in inner:
        covered = [sw for sw in path.sweeps
                   if sw.start / FS >= a - 1e-3 and sw.stop / FS <= b + 1e-3]
        assert covered, (a, b)
        assert max(sw.opd_span_cm for sw in covered) > 0.8 * full_span


@pytest.mark.parametrize("seed", SEEDS)
def test_abrupt_turnarounds_leave_phase_steps(seed):
    """The analytic-signal phase of cos θ steps by −2θ_r (wrapped) at an abrupt reversal: the
    detector fires at the reversals, and nowhere else, on a wobbling scan. Truth: the closed
    form reversal times; reversals within 0.2 rad of a fringe extremum leave no step (see
    ftsource.interferogram.turnarounds) and are skipped here."""
    from scipy.signal import hilbert

    rng = np.random.default_rng(seed)
    t, x = scan(seed, rounding=0.0, wobble=0.3)
    c = rm.single_channel(x, rng)
    psi = np.unwrap(np.angle(hilbert(c - c.mean())))
    period = FS * rm.HENE_NM * 1e-7 / (4 * 0.3 / 2.0)  # samples per fringe at the mean speed
    found = phase_steps(psi, period) / FS
    turns = turn_times(seed, wobble=0.3)
    theta_r = np.array([2 * np.pi * x[int(round(tt * FS))] / (rm.HENE_NM * 1e-7) for tt in turns])
    visible = np.abs(np.angle(np.exp(2j * theta_r))) > 0.4
    for tt, vis in zip(turns, visible, strict=True):
        near = np.abs(found - tt) < 2e-3
        if vis:
            assert near.any(), (tt, found)
    for f in found:
        assert np.min(np.abs(turns - f)) < 2e-3, (f, turns)


def test_unseen_turnaround_is_not_used():
    """A sweep twice as long as the others (a reversal the channel could not see) is left out;
    partial sweeps (shorter) are not suspect. Truth: the spans given."""
    assert list(suspect_spans(np.array([0.6, 0.6, 1.2, 0.6, 0.2]))) == [0, 0, 1, 0, 0]
    assert not suspect_spans(np.array([0.6, 1.2])).any()  # two sweeps: nothing to compare


@pytest.mark.parametrize("rounding", [0.0, 0.1])
def test_abrupt_scan_of_a_laser_is_not_a_multimode_laser(rounding):
    """The issue's record: a triangle scan of a 0.05 nm line at 650 nm on a single reference
    channel. Before the fix the four sweeps were one 'sweep' and the line a 6-mode laser.
    Truth: one line at 650 nm (closed-form source)."""
    rng = np.random.default_rng(1)
    _, x = scan(1, rounding=rounding)
    sig = rm.gaussian_line(x, 650.0, 0.05) + 0.002 * rng.normal(size=x.size)
    d = analyze(rm.record(sig, FS, ref=rm.single_channel(x, rng))).to_dict()
    assert d["processing"]["n_sweeps_used"] >= 3
    source = [ln for ln in d["lines"] if ln["flag"] is None]
    main = max(source, key=lambda ln: ln["relative_intensity"])
    assert main["wavelength_nm"] == pytest.approx(650.0, abs=2e-3)
    assert d["summary"]["kind"] != "multimode" and d["summary"].get("modes") is None
    assert all(ln["relative_intensity"] < 1e-3 for ln in source if ln is not main)


# ---------------------------------------------------------------- item 5: undersampling


@pytest.mark.parametrize("kind", ["quadrature", "single"])
@pytest.mark.parametrize("seed", SEEDS)
def test_undersampled_reference_is_refused_at_once(kind, seed):
    """3.4 samples per fringe at the mean speed (the issue's record): one error that gives the
    samples per fringe and the speed and rate to use. Truth: spf = f_s λ / v."""
    rng = np.random.default_rng(seed)
    v = 4 * 0.1 / 0.8  # cm/s of OPD for amplitude 0.1 cm, period 0.8 s
    fs = 3.4 * v / (rm.HENE_NM * 1e-7)
    _, x = scan(seed, rounding=0.2, seconds=1.0, period_s=0.8, amplitude_cm=0.1, fs=fs)
    sig = rm.gaussian_line(x, 650.0) + 0.002 * rng.normal(size=x.size)
    if kind == "single":
        rec = rm.record(sig, fs, ref=rm.single_channel(x, rng))
    else:
        i, q = rm.quadrature_channels(x, rng)
        rec = rm.record(sig, fs, ref_i=i, ref_q=q)
    med, fast = reference_samples_per_fringe(rec.columns, kind)
    # the rounded corners join the straight parts tangentially: they keep the speed 4A/T
    assert fast == pytest.approx(3.4, rel=0.05)
    with pytest.raises(AnalysisError) as e:
        analyze(rec)
    msg = str(e.value)
    assert "undersampled" in msg and f"{fast:.2f} samples per reference fringe" in msg
    assert "mm/s" in msg and "Hz or faster" in msg


def test_undersampling_limit_is_the_documented_one():
    """4 samples per fringe (common practice, docs/processing.md)."""
    assert MIN_SAMPLES_PER_FRINGE == 4.0


def test_simulate_warns_when_its_settings_undersample(tmp_path, capsys):
    """ftsource.simulate warns, the simulate command refuses and writes nothing. Truth:
    spf = f_s λ / v_max with v_max from the scan's closed form."""
    import ftsource.simulate as S

    scan_ = S.Scan(sample_rate_hz=8000.0, duration_s=0.2, opd_amplitude_cm=0.05)
    spf = scan_.reference_samples_per_fringe(632.991)
    v = scan_.peak_opd_speed_cm_s * (1 + 2 * scan_.speed_jitter)
    assert spf == pytest.approx(8000.0 * 632.991e-7 / v, rel=1e-12)
    assert spf < 4
    with pytest.warns(FtsourceWarning, match="samples per reference fringe"):
        S.simulate(S.laser(650.0), scan_)
    out = tmp_path / "u.npz"
    status, _, err = run(capsys, ["simulate", out, "--sample-rate", "8000Hz",
                                  "--duration", "0.2s"])
    assert_clean_error(status, err, "samples per reference fringe")
    assert "--sample-rate" in err and not out.exists()


# ---------------------------------------------------------------- item 6: speed wobble


def _side_structure(kind, seed, *, order_path="estimated"):
    """Largest departure of the co-added spectrum from the instrument line shape beyond four
    resolution elements of a monochromatic 650 nm line, relative to the line's peak."""
    from ftsource.spectrum import spectrum
    from ftsource.spectrum.transform import next_fft_length

    rng = np.random.default_rng(seed)
    fs = 42e3  # about 5 samples per fringe at the fastest speed
    t, x = scan(seed, rounding=0.2, amplitude_cm=0.4, period_s=4.0, centre_cm=0.5,
                wobble=0.3, wobble_hz=3.0, fs=fs)
    sig = rm.gaussian_line(x, 650.0) + 0.001 * rng.normal(size=x.size)
    if kind == "single":
        path = opd.opd_from_single(rm.single_channel(x, rng), fs, rm.HENE_NM)
    else:
        i, q = rm.quadrature_channels(x, rng)
        path = opd.opd_from_quadrature(i, q, fs, rm.HENE_NM)
    if order_path == "truth":
        path = opd.OpticalPath(np.where(np.isfinite(path.opd_cm), x, np.nan), path.kind,
                               path.sweeps, None, 0, 0, ())
    lim = resample.sampling_limits(path, fs, rm.HENE_NM)
    ifgs = resample.resample_sweeps(sig, path, lim.dx_cm)
    ifgs = [g for g in ifgs if g.span_cm > 0.5 * max(h.span_cm for h in ifgs)]
    n_fft = next_fft_length(4 * max(g.y.size for g in ifgs))
    sp = spectrum.coadd([spectrum.sweep_spectrum(g, n_fft) for g in ifgs],
                        np.arange(n_fft // 2 + 1) / (n_fft * lim.dx_cm), "happ-genzel")
    s, d = sp.sigma_per_cm, np.abs(sp.density)
    j = int(np.argmax(d))
    a, b, c = d[j - 1], d[j], d[j + 1]
    s0 = s[j] + 0.5 * (a - c) / (a - 2 * b + c) * (s[1] - s[0])
    win = np.abs(s - s0) < 40
    k = sp.line_shape.kernel(s[win] - s0)
    amp = np.sum(d[win] * k) / np.sum(k * k)
    resid = np.abs(d[win] - amp * k)
    side = np.abs(s[win] - s0) > 4 * sp.resolution_per_cm
    return float(resid[side].max() / d[j])


@pytest.mark.parametrize("kind", ["quadrature", "single"])
@pytest.mark.parametrize("seed", (0, 1))
def test_speed_wobble_leaves_no_side_lines(kind, seed):
    """30 % speed wobble at 3 Hz puts its sidebands at ±f/v ≈ 7.5 cm⁻¹ (±0.32 nm) and twice
    that. The issue saw 7e-4 (single) and 6.6e-3 (quadrature); with quintic resampling the
    departure from the instrument line shape stays below 2e-4 of the peak, and below 3e-5
    with the true path (interpolation alone). Truth: the instrument line shape of a
    monochromatic line (closed-form kernel) and the closed-form trajectory."""
    assert _side_structure(kind, seed) < 2e-4
    assert _side_structure(kind, seed, order_path="truth") < 3e-5


def test_cubic_resampling_was_the_cause(monkeypatch):
    """With the former cubic spline the same record shows several times more side structure
    (from the true path, so the OPD estimate plays no part)."""
    quintic = _side_structure("quadrature", 0, order_path="truth")
    monkeypatch.setattr(resample, "SPLINE_ORDER", 3)
    cubic = _side_structure("quadrature", 0, order_path="truth")
    assert cubic > 3 * quintic


@pytest.mark.parametrize("seed", (0, 1))
def test_speed_wobble_is_measured(seed):
    """Depth and OPD period of a 30 % wobble at 3 Hz on a scan of 0.4 cm/s of OPD: period
    v/f = 0.1333 cm (closed form of rm.wobbled_time and rm.triangle_opd)."""
    from ftsource.interferogram.wobble import speed_wobble

    rng = np.random.default_rng(seed)
    fs = 42e3
    _, x = scan(seed, rounding=0.2, amplitude_cm=0.4, period_s=4.0, centre_cm=0.5,
                wobble=0.3, wobble_hz=3.0, fs=fs)
    i, q = rm.quadrature_channels(x, rng)
    path = opd.opd_from_quadrature(i, q, fs, rm.HENE_NM)
    w = speed_wobble(path.opd_cm, path.sweeps, fs)
    assert w.depth == pytest.approx(0.3, abs=0.03)
    assert w.period_cm == pytest.approx(0.4 * 4 / 4.0 / 3.0, rel=0.03)


def test_weak_line_at_a_wobble_offset_is_named():
    """A weak line (4e-4) placed exactly where 30 % wobble at 3 Hz puts artefacts (σ₀ + 1/P)
    cannot be told from an artefact by this record: the result says so and what to do.
    Truth: the source is the closed form of two lines; P from the trajectory's closed form."""
    rng = np.random.default_rng(4)
    fs = 100e3
    _, x = scan(0, rounding=0.2, amplitude_cm=0.4, period_s=4.0, centre_cm=0.5,
                wobble=0.3, wobble_hz=3.0, fs=fs)
    s0 = 1e7 / 650.0
    side_nm = 1e7 / (s0 + 3.0 / 0.4)
    sig = rm.gaussian_line(x, 650.0) + 4e-4 * rm.gaussian_line(x, side_nm)
    sig = sig + 2e-5 * rng.normal(size=x.size)
    i, q = rm.quadrature_channels(x, rng)
    d = analyze(rm.record(sig, fs, ref_i=i, ref_q=q)).to_dict()
    near = [ln for ln in d["lines"] if ln["flag"] is None
            and abs(ln["wavelength_nm"] - side_nm) < 0.05]
    # Since the wing-line rule (a weak line beside a strong one must beat one profile
    # clearly, docs/measurements.md) such a line may not be reported at all; what must never
    # happen is a source line at the wobble offset without the note naming it.
    if near:
        note = next(w for w in d["warnings"] if "may be artefacts of the scan" in w)
        assert f"{side_nm:.2f}" in note and "another speed" in note
    assert any(ln["flag"] is None and abs(ln["wavelength_nm"] - 650.0) < 0.01
               for ln in d["lines"])


# ---------------------------------------------------------------- items 2 and 3: ZPD


@pytest.mark.parametrize("seed", SEEDS)
@pytest.mark.parametrize("start_cm", [0.02, 0.03, 0.05])
def test_no_zpd_on_a_falling_envelope(seed, start_cm):
    """A sweep that starts on the falling envelope of a 0.5 nm Gaussian line (coherence
    ~ 0.6 mm) and never reaches ZPD. Before the fix a 'ZPD' was found 0.06 mm from its start.
    Truth: the closed-form interferogram, ZPD at x = 0, outside the sweep."""
    rng = np.random.default_rng(seed)
    dx = rm.HENE_NM * 1e-7 / 8
    x = start_cm + dx * np.arange(int(0.3 / dx))
    y = rm.gaussian_line(x, 650.0, 0.5) + 0.002 * rng.normal(size=x.size)
    y = rm.quantise(y, 12)
    z = find_zpd(x, y)
    assert not z.found
    assert "edge of the sweep" in z.reason or "touches the end of the record" in z.reason


@pytest.mark.parametrize("seed", SEEDS)
def test_zpd_inside_the_sweep_is_still_found(seed):
    """The same line scanned through ZPD (one-sided, 0.5 mm before ZPD): found at x = 0."""
    rng = np.random.default_rng(seed)
    dx = rm.HENE_NM * 1e-7 / 8
    x = -0.05 + dx * np.arange(int(0.35 / dx))
    y = rm.gaussian_line(x, 650.0, 0.5) + 0.002 * rng.normal(size=x.size)
    z = find_zpd(x, y)
    assert z.found and abs(z.x_zpd_cm) < 2 * dx and z.n_bursts == 1 and not z.ambiguous


@pytest.mark.parametrize("seed", SEEDS)
def test_revivals_make_zpd_ambiguous(seed):
    """A comb of 7 narrow modes 1/0.775 cm⁻¹ apart scanned from -1 mm to 15 mm: bursts at 0
    and 7.75 mm (and 15.5 mm, just beyond) of the same height (Dirichlet kernel). The
    strongest may be a revival: the result must say so, with the bursts' spacing. With modes
    wide enough for the revival to fall to 0.3 of ZPD the burst at ZPD is taken,
    unambiguously."""
    rng = np.random.default_rng(seed)
    dx = rm.HENE_NM * 1e-7 / 8
    x = -0.1 + dx * np.arange(int(1.6 / dx))
    y = rm.comb(x, 650.0, 1 / 0.775, 7) + 0.002 * rng.normal(size=x.size)
    z = find_zpd(x, y)
    # two whole bursts and the next revival cut by the sweep's end (at 1.55 cm, 1.5 reached)
    assert z.found and z.n_bursts == 3 and z.ambiguous
    assert z.burst_spacing_cm == pytest.approx(0.775, rel=0.01)
    # the sweep: it starts just after ZPD (its burst cut: 0.89 of full height is seen
    # at 0.3 mm, Dirichlet kernel) and holds the first revival whole; that revival is the
    # strongest visible burst, and it may not be taken for ZPD silently
    xs = 0.03 + dx * np.arange(int(1.3 / dx))
    ys = rm.comb(xs, 650.0, 1 / 0.775, 7) + 0.002 * rng.normal(size=xs.size)
    z = find_zpd(xs, ys)
    assert z.found and abs(z.x_zpd_cm - 0.775) < 0.01
    assert z.ambiguous and z.n_bursts == 2 and np.isnan(z.burst_spacing_cm)
    # exp(-π w 0.775) = 0.3 for Lorentzian modes of FWHM w
    w = -np.log(0.3) / (np.pi * 0.775)
    y = rm.comb(x, 650.0, 1 / 0.775, 7, w) + 0.002 * rng.normal(size=x.size)
    z = find_zpd(x, y)
    assert z.found and abs(z.x_zpd_cm) < 2 * dx and not z.ambiguous


def test_conflicting_zpd_between_sweeps():
    """Sweeps of one segment share their OPD origin: a sweep whose strongest burst lies 7.75 mm
    from another sweep's 'ZPD', while covering it, contradicts it. Truth: the positions given
    (a revival period of 7.75 mm); other segments and sweeps that do not cover it do not."""
    z = [0.555, np.nan, np.nan, np.nan]
    seg = [0, 0, 1, 0]
    ranges = [(0.0, 1.2), (-0.24, 1.2), (-0.24, 1.2), (0.6, 1.2)]
    peaks = [0.555, -0.22, -0.22, 1.1]
    assert list(conflicting_zpd(z, seg, ranges, peaks, tolerance_cm=0.05)) == [1, 0, 0, 0]
    # the same burst seen again (within the tolerance) is no contradiction
    peaks[1] = 0.556
    assert not conflicting_zpd(z, seg, ranges, peaks, tolerance_cm=0.05).any()


def test_revival_taken_for_zpd_is_flagged_end_to_end():
    """The issue's record: a multimode laser (7 narrow modes 1/0.775 cm⁻¹ apart) scanned from
    just after ZPD to past the first revival, quadrature rig with distortion and quantisation.
    The sweep that holds the revival whole, but not ZPD, used to take it for ZPD silently;
    now the result says the phase reference may be a revival. Truth: the comb's closed form
    (revivals at multiples of 7.75 mm)."""
    rng = np.random.default_rng(1)
    fs = 100e3
    t = np.arange(int(4.0 * fs)) / fs
    x = rm.triangle_opd(t, amplitude_cm=0.8, period_s=4.0, rounding=0.2, phase=0.1,
                        centre_cm=0.7)
    sig = rm.comb(x, 650.0, 1 / 0.775, 7) + 0.002 * rng.normal(size=t.size)
    i, q = rm.quadrature_channels(x, rng)
    d = analyze(rm.record(sig, fs, ref_i=i, ref_q=q)).to_dict()
    text = " ".join(d["warnings"])
    assert "may be a revival rather than zero path difference" in text


# ---------------------------------------------------------------- item 11: dead channel


@pytest.mark.parametrize("level", [0.0, 1.25])
def test_dead_signal_channel_is_one_clean_error(tmp_path, capsys, level):
    """An unplugged source detector (all zero, or a constant level): one `error:` line naming
    the channel, exit 2, no output written. Before: exit 3, 'internal error'."""
    rng = np.random.default_rng(0)
    fs = 50e3
    _, x = scan(0, rounding=0.2, seconds=0.5, period_s=0.5, amplitude_cm=0.05, fs=fs)
    i, q = rm.quadrature_channels(x, rng)
    path = tmp_path / "dead.csv"
    with open(path, "w") as f:
        f.write("# sample_rate = 50000 Hz\n# reference_wavelength = 632.991 nm\n")
        f.write("signal,ref_i,ref_q\n")
        for a, b in zip(i, q, strict=True):
            f.write(f"{level},{a:.5f},{b:.5f}\n")
    out = tmp_path / "res"
    status, _, err = run(capsys, ["analyze", path, "--out", out])
    assert_clean_error(status, err, "source channel 'signal' is constant")
    assert not out.exists()


def test_noise_only_signal_is_noticed_with_strict(tmp_path, capsys):
    """A source channel of noise alone stays a result, but --strict makes the exit status 1 and
    says 'no source found' (the result is still written)."""
    rng = np.random.default_rng(3)
    fs = 50e3
    _, x = scan(0, rounding=0.2, seconds=0.5, period_s=0.5, amplitude_cm=0.05, fs=fs)
    i, q = rm.quadrature_channels(x, rng)
    sig = 0.01 * rng.normal(size=x.size)
    path = tmp_path / "noise.csv"
    with open(path, "w") as f:
        f.write("# sample_rate = 50000 Hz\n# reference_wavelength = 632.991 nm\n")
        f.write("signal,ref_i,ref_q\n")
        for s, a, b in zip(sig, i, q, strict=True):
            f.write(f"{s:.6f},{a:.5f},{b:.5f}\n")
    status, out, err = run(capsys, ["analyze", path])
    assert status == 0 and "no line stands above the noise" in out
    status, out, err = run(capsys, ["analyze", path, "--strict", "--out", tmp_path / "r"])
    assert status == 1 and err.startswith("error: no source found (--strict)")
    assert err.count("\n") == 1 and (tmp_path / "r" / "result.json").exists()


# ---------------------------------------------------------------- item 12: messages


def test_narrow_line_through_zpd_message_says_zpd_cannot_be_located():
    """A laser scanned across equal arms: the message says ZPD could not be located (a narrow
    line keeps its contrast), not that no sweep reaches it, and names no JSON key; a clean
    single reference reports no phantom fringe-count slip."""
    rng = np.random.default_rng(2)
    _, x = scan(2, rounding=0.2, seconds=2.0, period_s=1.0, amplitude_cm=0.1)
    sig = rm.gaussian_line(x, 650.0) + 0.002 * rng.normal(size=x.size)
    d = analyze(rm.record(sig, FS, ref=rm.single_channel(x, rng))).to_dict()
    text = " ".join(d["warnings"])
    assert "zero path difference could not be located" in text
    assert "no sweep reaches" not in text
    assert "fringe-count slip" not in text and "phase steps abruptly" not in text
    for key in ("max_opd_mm", "humidity_percent", "rejected_sweeps", "'flag'"):
        assert key not in text
