"""Harmonic distortion of the quadrature reference channels (issue 11: "add harmonic distortion
and quantisation to the Heydemann model").

Records come from the forward model in ``tests/rig_model.py`` plus a distortion written here:
each channel gets 3 % second and 3 % third harmonics of the fringe phase (a detector or
amplifier that is not linear), 10-bit quantisation, noise and 20-30 % mirror-speed wobble.
Truths:

* the trajectory x(t) is the closed form of ``rm.triangle_opd``/``rm.wobbled_time``, so the
  reference phase error is ``2π(x_est − x)/λ_ref`` directly;
* a phase error periodic in the reference phase at k cycles per fringe modulates the OPD scale
  and puts side lines at ``|σ_s ± k·σ_ref|`` (first-order Bessel sidebands of a phase
  modulation; e.g. Bracewell, *The Fourier Transform and its Applications*, modulation
  theorem) — their positions are closed forms;
* the source is a monochromatic line, interferogram ``cos 2πσ_s x`` (closed form), measured in
  vacuum: the centre must be within 0.2 ppm of 650 nm (the acceptance figure of the wavelength
  issue for a quadrature reference, tests/test_accuracy.py).
"""

from __future__ import annotations

import numpy as np
import pytest
import rig_model as rm

from ftsource.analysis import AnalysisOptions, analyze
from ftsource.interferogram import opd
from ftsource.interferogram.periodic import PeriodicError, periodic_phase_error
from ftsource.lines.ghosts import (
    MAX_REFERENCE_HARMONIC,
    REFERENCE_HARMONIC_LEVEL,
    flag_ghosts,
)

SEEDS = (0, 1, 2)
FS = 100e3
SIGMA_REF = 1e7 / rm.HENE_NM


def distorted_quadrature(x_cm, rng, *, h2=0.03, h3=0.03, bits=10, noise=0.003):
    """A quadrature pair with offsets, gain ratio 0.85, a 7° phase error, 2nd and 3rd harmonic
    distortion of the given relative amplitudes, quantisation and noise."""
    ph = 2 * np.pi * np.asarray(x_cm) / (rm.HENE_NM * 1e-7)
    i = 0.04 + np.cos(ph) + h2 * np.cos(2 * ph + 0.4) + h3 * np.cos(3 * ph + 1.3)
    q = (-0.02 + 0.85 * np.sin(ph + np.deg2rad(7)) + h2 * np.sin(2 * ph + 1.1)
         + h3 * np.sin(3 * ph + 0.2))
    i = rm.quantise(i + rng.normal(0, noise, ph.size), bits, 3.0)
    q = rm.quantise(q + rng.normal(0, noise, ph.size), bits, 3.0)
    return i, q


def trajectory(seed, *, wobble=0.2, seconds=4.0):
    t = np.arange(int(seconds * FS)) / FS
    tau = rm.wobbled_time(t, depth=wobble, freq_hz=3.0, phase=seed)
    return rm.triangle_opd(tau, amplitude_cm=0.4, period_s=4.0, rounding=0.2,
                           phase=0.1 + 0.07 * seed, centre_cm=0.5)


def phase_error_rms(path, x):
    """RMS of the reference phase error (rad) over the sweeps, each sweep's constant removed
    (a constant OPD offset does not change a spectrum)."""
    out = []
    for sw in path.sweeps:
        e = (path.opd_cm[sw.start:sw.stop] - x[sw.start:sw.stop]) * 2 * np.pi / (
            rm.HENE_NM * 1e-7)
        e = e[np.isfinite(e)]
        out.append(e - e.mean())
    return float(np.sqrt(np.mean(np.square(np.concatenate(out)))))


def no_correction(monkeypatch):
    monkeypatch.setattr(opd, "periodic_phase_error",
                        lambda *a, **k: PeriodicError((), (), 0.0))


@pytest.mark.parametrize("seed", SEEDS)
def test_periodic_phase_error_is_removed(seed, monkeypatch):
    """The reference phase follows the closed-form trajectory to 3e-3 rad RMS with 3 % 2nd and
    3rd harmonic distortion; without the correction the ellipse fit alone leaves ten times
    more (about 0.035 rad: harmonics of amplitude h shift the phase by about h rad)."""
    rng = np.random.default_rng(seed)
    x = trajectory(seed)
    i, q = distorted_quadrature(x, rng)
    path = opd.opd_from_quadrature(i, q, FS, rm.HENE_NM)
    fixed = phase_error_rms(path, x)
    assert fixed < 3e-3
    # the error found: the 2nd and 3rd harmonics give k = 1 … 4, each about h = 0.03 rad
    assert 0.05 < path.periodic_error_rad < 0.25
    no_correction(monkeypatch)
    raw = phase_error_rms(opd.opd_from_quadrature(i, q, FS, rm.HENE_NM), x)
    assert raw > 10 * fixed and raw > 0.02


def test_clean_reference_gets_no_correction_to_speak_of():
    """Without distortion the error found is at the noise level (a few 1e-4 rad), so a clean
    reference's phase is not changed by more than its noise."""
    rng = np.random.default_rng(5)
    x = trajectory(5)
    i, q = distorted_quadrature(x, rng, h2=0.0, h3=0.0, bits=14)
    path = opd.opd_from_quadrature(i, q, FS, rm.HENE_NM)
    assert path.periodic_error_rad < 2e-3
    assert phase_error_rms(path, x) < 2e-3


@pytest.mark.parametrize("k", [1, 2, 3])
def test_single_harmonic_error_is_recovered(k):
    """A pure periodic error 0.05·sin(kφ + 0.3) added to a smooth phase (a mirror accelerating
    uniformly) is found with its amplitude to 2 % (closed form of the model)."""
    n = 200_000
    t = np.arange(n)
    phase = 2 * np.pi * (t / 12.0 + 0.5 * (t / n) ** 2 * 3000)
    measured = phase + 0.05 * np.sin(k * phase + 0.3)
    err = periodic_phase_error(measured, [(0, n)], samples_per_fringe=12.0)
    assert err.amplitude_rad == pytest.approx(0.05, rel=0.02)
    c, s = err.cos_k[k - 1], err.sin_k[k - 1]
    assert np.hypot(c, s) == pytest.approx(0.05, rel=0.02)
    assert np.arctan2(c, s) == pytest.approx(0.3, abs=0.02)  # sin(kφ+0.3) = cos .3 sin + sin .3 cos


def _analyze(seed, *, wobble=0.2):
    rng = np.random.default_rng(seed)
    x = trajectory(seed, wobble=wobble)
    sig = rm.gaussian_line(x, 650.0) + 0.001 * rng.normal(size=x.size)
    i, q = distorted_quadrature(x, rng)
    opts = AnalysisOptions(reference_wavelength_nm=rm.HENE_NM, medium="vacuum")
    return analyze(rm.record(sig, FS, ref_i=i, ref_q=q), opts).to_dict()


def _side_positions(sigma_s):
    return [abs(sigma_s + s * k * SIGMA_REF) for k in range(1, MAX_REFERENCE_HARMONIC + 1)
            for s in (-1, 1)]


@pytest.mark.parametrize("seed", SEEDS)
def test_distorted_reference_leaves_one_source_line(seed):
    """The issue's record: 3 % harmonic distortion put lines at 212.8 nm, 312.3 nm and 616.8 nm
    (σ_s + 2σ_ref, 3σ_ref − σ_s, 2σ_ref − σ_s) up to 4e-3 of the line, reported as source
    lines. Now the only source line is the 650 nm line, its centre within 0.2 ppm, and the
    source is `narrow`."""
    d = _analyze(seed)
    source = [ln for ln in d["lines"] if ln["flag"] is None]
    assert len(source) == 1, [(ln["wavelength_nm"], ln["relative_intensity"]) for ln in source]
    err_ppm = (d["summary"]["centre_wavelength_nm"] - 650.0) / 650.0 * 1e6
    assert abs(err_ppm) < 0.2, f"{err_ppm:+.3f} ppm"
    assert d["summary"]["kind"] == "narrow"


@pytest.mark.parametrize("seed", (0, 1))
def test_side_lines_left_by_the_distortion_are_flagged(seed, monkeypatch):
    """With the correction switched off the side lines are there (the cause: the periodic
    phase error), and every one of them is flagged, not a source line: each line found within
    two resolution elements of |σ_s ± k·σ_ref| carries a flag (`reference-ghost` for k = 1,
    `reference-harmonic` otherwise), and at least one k ≥ 2 line is found and flagged."""
    no_correction(monkeypatch)
    d = _analyze(seed)
    sigma_s = 1e7 / 650.0
    res = d["instrument"]["resolution_per_cm"]
    near = [ln for ln in d["lines"]
            if min(abs(ln["wavenumber_per_cm"] - p) for p in _side_positions(sigma_s))
            < 2 * res]
    assert any(ln["flag"] == "reference-harmonic" for ln in near)
    assert all(ln["flag"] in ("reference-ghost", "reference-harmonic") for ln in near)
    assert [ln["flag"] for ln in d["lines"]].count(None) == 1
    assert d["summary"]["kind"] == "narrow"


def test_reference_harmonic_flag_rule():
    """The flag's rule on given lines (positions are closed forms σ ± k·σ_ref): a weak line at
    σ + 2σ_ref or |σ − 3σ_ref| is flagged; the same position at more than
    REFERENCE_HARMONIC_LEVEL of its parent, or away from every |σ ± k·σ_ref|, is not; without
    a reference laser nothing is."""
    s0 = 15384.6
    tol = 0.3
    lines = [s0, s0 + 2 * SIGMA_REF, abs(s0 - 3 * SIGMA_REF), s0 + 2 * SIGMA_REF + 5.0]
    amps = [1.0, 4e-3, 1e-3, 1e-3]
    flags = flag_ghosts(lines, amps, [tol] * 4, reference_per_cm=SIGMA_REF)
    assert flags == [None, "reference-harmonic", "reference-harmonic", None]
    strong = [1.0, 2 * REFERENCE_HARMONIC_LEVEL, 1e-3, 1e-3]
    assert flag_ghosts(lines, strong, [tol] * 4, reference_per_cm=SIGMA_REF)[1] is None
    assert flag_ghosts(lines, amps, [tol] * 4, reference_per_cm=None) == [None] * 4
