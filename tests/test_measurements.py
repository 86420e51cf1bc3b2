"""Measurement quality: Monte Carlo checks of the stated uncertainties and the figures users
came for (centre wavelength, coherence length, mode spacing).

Oracles:
* the Cramér–Rao bound for the frequency of a real tone in white Gaussian noise,
  var(ω̂) ≈ 12/(η N(N² − 1)), η = A²/(2σ²), ω in rad/sample, and var(σ̂) = var(ω̂)/(2πΔx)²
  for OPD samples Δx apart (D. C. Rife and R. R. Boorstyn, IEEE Trans. Inf. Theory 20:591,
  1974; check-values.md §9);
* Goodman's coherence length L_c = ∫|γ|² dx: L_c·Δσ = √(2 ln 2/π) = 0.66428 (Gaussian) and
  1/π (Lorentzian) (J. W. Goodman, *Statistical Optics*, 1985, §5.2; check-values.md §7);
* records from ftsource.simulate, whose forward model is tested against closed forms in
  tests/test_simulate.py (reference fringes, line coherence functions, mode combs); the truth is
  the simulated source.
* JCGM 100:2008 for what an expanded uncertainty promises (about 95 % coverage).
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np
import pytest
from test_lines import DX, closed_form_spectrum  # closed-form spectra, see tests/test_lines.py

from ftsource import simulate as sim
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.lines.fitting import fit_line

LN2 = np.log(2.0)
GOODMAN_GAUSSIAN = np.sqrt(2 * LN2 / np.pi)  # 0.66428, check-values §7
GOODMAN_LORENTZIAN = 1 / np.pi  # 0.31831, check-values §7

# vacuum everywhere, and no Type B components: only the fit's own uncertainty is tested
OPTIONS = AnalysisOptions(medium="vacuum", reference_uncertainty_ppm=0.0,
                          alignment_allowance_ppm=0.0)


# ------------------------------------------------------------------------------------------
# the centre of a narrow line, through the whole pipeline


LASER_NM = 780.0
# 0.25 s at 48 kHz, two sweep cycles of ±0.005 cm: small records, > 30 samples per
# reference fringe; the line is far narrower than the resolution (unresolved)
NARROW_SCAN = sim.Scan(sample_rate_hz=48_000.0, duration_s=0.25, sweep_rate_hz=4.0,
                       opd_amplitude_cm=0.005)
NARROW_DETECTOR = sim.Detector(noise_rms=0.05)


def _narrow(seed):
    s = sim.simulate(sim.laser(LASER_NM), NARROW_SCAN, detector=NARROW_DETECTOR,
                     medium="vacuum", rng=seed)
    return analyze(s.record, OPTIONS).to_dict()


@pytest.mark.slow
def test_centre_uncertainty_covers_the_truth():
    errs, u, big_u = [], [], []
    for seed in range(50):
        d = _narrow(seed)
        sm = d["summary"]
        assert sm["kind"] == "narrow"
        assert len([ln for ln in d["lines"] if ln["flag"] is None]) == 1
        errs.append(sm["centre_wavelength_nm"] - LASER_NM)
        u.append(sm["u_centre_wavelength_nm"])
        big_u.append(sm["expanded_uncertainty_nm"])
    errs, u, big_u = map(np.array, (errs, u, big_u))
    scatter = errs.std(ddof=1)
    # the expanded uncertainty (about 95 % coverage, JCGM 100 §6) holds the truth in ≥ 90 %
    # of 50 trials (acceptance criterion; a binomial 95 % process falls below 90 % in 50
    # trials with probability 4 %)
    assert np.mean(np.abs(errs) <= big_u) >= 0.90
    # the stated standard uncertainty is honest: not more than 3× the observed scatter
    # (acceptance criterion) and not below it by more than the scatter's own sampling error allows
    # (50 trials: ±10 % at 1σ; the residual-scaled u has few degrees of freedom and scatters
    # itself, so its RMS is compared); measured ratio ≈ 1.3
    ratio = np.sqrt(np.mean(u**2)) / scatter
    assert 0.7 < ratio <= 3.0, ratio
    # and no bias: mean error within 3 standard errors
    assert abs(errs.mean()) < 3 * scatter / np.sqrt(errs.size)
    # ±2u also covers most trials (a guard on u alone, since k is large for few degrees of
    # freedom; Student t with ν = 2 gives 82 % for ±2u)
    assert np.mean(np.abs(errs) <= 2 * u) >= 0.8


def test_unresolved_line_reports_bounds_only():
    d = _narrow(1234)
    sm, line = d["summary"], d["lines"][0]
    assert sm["resolved"] is False and line["resolved"] is False
    assert sm["fwhm_nm"] is None and sm["coherence_length_mm"] is None
    assert line["fwhm_nm"] is None
    # the width bound is never below the instrument's resolution at the line (the FWHM of the
    # co-added line shape; this record co-adds sweeps of spans 0.04–0.10 mm)
    assert sm["fwhm_upper_bound_nm"] >= d["instrument"]["resolution_nm"] * (1 - 1e-9)
    # the coherence length is bounded below: L_c ≥ (1/π)/Δσ_UB (the Lorentzian has the smallest
    # L_c·Δσ of the usual shapes; Goodman §5.2, check-values §7), in mm
    ub_per_cm = sm["fwhm_upper_bound_nm"] * 1e7 / sm["centre_wavelength_nm"] ** 2
    assert sm["coherence_length_lower_bound_mm"] == pytest.approx(
        10 * GOODMAN_LORENTZIAN / ub_per_cm, rel=1e-3)
    assert line["fwhm_upper_bound_nm"] == pytest.approx(sm["fwhm_upper_bound_nm"], rel=1e-9)


# ------------------------------------------------------------------------------------------
# the estimator against the Cramér–Rao bound (spectrum/fit level, known white noise)


@pytest.mark.slow
def test_centre_rms_error_near_the_cramer_rao_bound():
    n = 4001
    x = 0.25 + DX * np.arange(n)  # no ZPD: the magnitude (periodogram) of a real tone
    s0 = 1e7 / 600.0
    amp, noise = 1.0, 0.3
    rng = np.random.default_rng(19740501)
    errs = []
    for _ in range(200):
        y = amp * np.cos(2 * np.pi * s0 * x + rng.uniform(0, 2 * np.pi))
        y = y + noise * rng.normal(size=n)
        # boxcar: the maximum of the unapodized periodogram is the maximum-likelihood estimate
        # of a tone's frequency (Rife & Boorstyn 1974); apodization trades efficiency for
        # sidelobes (Happ–Genzel measured 1.8× the bound)
        spec = closed_form_spectrum([y], x[0], apodization="boxcar")
        errs.append(fit_line(spec, s0).centre_per_cm - s0)
    rms = np.sqrt(np.mean(np.square(errs)))
    eta = amp**2 / (2 * noise**2)
    var_omega = 12 / (eta * n * (n**2 - 1))  # rad²/sample², check-values §9
    crb = np.sqrt(var_omega) / (2 * np.pi * DX)  # cm⁻¹
    # within 1.5× the bound (acceptance criterion; measured 1.09×); an RMS below the bound by
    # more than its sampling error (200 trials: ±5 % at 1σ) would mean a wrong truth or bound
    assert 0.85 * crb < rms < 1.5 * crb, rms / crb


@pytest.mark.slow
def test_stated_centre_uncertainty_of_a_phase_corrected_spectrum():
    """Real (Mertz) spectra: the residual-scaled sandwich covariance matches the scatter."""
    n = 4001
    x = DX * (np.arange(n) - (n - 1) / 2)  # double-sided
    s0 = 1e7 / 600.0
    # a broad companion at 400 nm gives a centre burst, so the sweep is phase-corrected
    burst = 30 * np.exp(-((np.pi * 300 * x) ** 2) / (4 * LN2)) * np.cos(2 * np.pi * 1e7 / 400 * x)
    rng = np.random.default_rng(600)
    errs, us = [], []
    for _ in range(150):
        y = np.cos(2 * np.pi * s0 * x + rng.uniform(0, 2 * np.pi)) + burst
        spec = closed_form_spectrum([y + 0.3 * rng.normal(size=n)], x[0])
        assert spec.phase_method == "mertz"
        f = fit_line(spec, s0)
        errs.append(f.centre_per_cm - s0)
        us.append(f.u_centre_per_cm)
    ratio = np.sqrt(np.mean(np.square(us))) / np.std(errs)
    # 150 trials: the scatter is known to ±6 % (1σ); measured 1.00 (the residual scale with
    # n − p degrees of freedom instead of tr((I − H)R) gave 0.74 on correlated points)
    # The fit's scale is floored at the spectrum's own noise estimate (many degrees of
    # freedom), which reads up to ~25 % high on this short single sweep: conservative, so the
    # upper bound is 1.5 (the limit for an inflated uncertainty is 3).
    assert 0.85 < ratio < 1.5, ratio


# ------------------------------------------------------------------------------------------
# coherence length of resolved lines, through the pipeline


# 405 nm, FWHM 1.8 nm = 109.7 cm⁻¹; sweeps through ZPD to ±0.05 cm: Happ–Genzel resolution
# 1.81522/(2 × 0.05) = 18.2 cm⁻¹, so the line spans 6 resolution elements
RESOLVED_NM, RESOLVED_FWHM_NM = 405.0, 1.8
RESOLVED_SCAN = sim.Scan(sample_rate_hz=48_000.0, duration_s=1.1, sweep_rate_hz=0.5,
                         opd_amplitude_cm=0.05, shape=0.5)


@pytest.mark.parametrize("profile, factor", [("gaussian", GOODMAN_GAUSSIAN),
                                             ("lorentzian", GOODMAN_LORENTZIAN)])
def test_coherence_length_of_a_resolved_line(profile, factor):
    src = sim.laser(RESOLVED_NM, fwhm_nm=RESOLVED_FWHM_NM, profile=profile)
    line = src.lines[0]
    dsigma = line.gauss_fwhm_per_cm + line.lorentz_fwhm_per_cm
    s = sim.simulate(src, RESOLVED_SCAN, medium="vacuum", rng=4)
    d = analyze(s.record, OPTIONS).to_dict()
    sm = d["summary"]
    assert d["processing"]["phase_correction"] == "mertz"
    assert sm["resolved"] is True and sm["kind"] == "narrow"
    assert sm["fwhm_nm"] == pytest.approx(RESOLVED_FWHM_NM, rel=0.01)
    assert [ln["profile"] for ln in d["lines"] if ln["flag"] is None] == [profile]
    expected_mm = 10 * factor / dsigma  # Goodman, check-values §7
    # acceptance criterion: within 3 % of Goodman's L_c (the instrument line shape, 1/6 of the
    # width, broadens the measured spectrum and lowers L_c by ~1 %)
    assert sm["coherence_length_mm"] == pytest.approx(expected_mm, rel=0.03), (
        "spectral-route coherence length; result.py integrates the spectrum over ±6 FWHM only, "
        "which leaves out 5.3 % of a Lorentzian's area ((2/π)·atan 12 = 0.947) and inflates "
        "∫S²/(∫S)² by 1/0.947² ≈ 1.115"
    )
    # the visibility route measures the same L_c from the fringes (Born & Wolf §7.5.8)
    assert sm["coherence_length_visibility_mm"] == pytest.approx(expected_mm, rel=0.03)
    assert sm["coherence_length_lower_bound_mm"] is None
    # each route carries its uncertainty and definition; they agree, so no warning
    assert 0 < sm["u_coherence_length_mm"] < 0.03 * sm["coherence_length_mm"]
    assert sm["u_coherence_length_visibility_mm"] > 0
    assert "visibility" in sm["coherence_length_visibility_definition"].lower()
    assert sm["coherence_length_definition"].startswith("L_c = integral of |gamma(x)|^2")
    assert not any("disagree" in w for w in d["warnings"])


def test_coherence_disagreement_rule():
    from ftsource.measure.width import coherence_disagreement

    # 2·√(u₁² + u₂²) = 2·√(0.3² + 0.4²) = 1.0 mm, above the 10 % floor of 5 mm × 0.1
    assert coherence_disagreement(5.0, 0.3, 6.0, 0.4) is None  # exactly 2 u: agree
    assert coherence_disagreement(5.0, 0.3, 6.01, 0.4) is not None
    # small uncertainties: the 10 % floor decides
    assert coherence_disagreement(5.0, 0.01, 5.49, 0.01) is None
    msg = coherence_disagreement(5.0, 0.01, 5.6, 0.01)
    assert msg and "5 mm" in msg and "5.6 mm" in msg
    # missing values: nothing to compare
    assert coherence_disagreement(None, None, 5.0, 0.1) is None
    assert coherence_disagreement(5.0, None, float("nan"), None) is None


# ------------------------------------------------------------------------------------------
# a multimode diode-like spectrum


def test_multimode_spectrum_gives_the_mode_spacing():
    # invented diode-like source: 650 nm, modes 1.0 nm apart under a 4 nm Gaussian envelope;
    # ±0.15 cm of travel resolves them (Happ–Genzel 6.1 cm⁻¹ against a spacing of 23.7 cm⁻¹)
    src = sim.multimode(650.0, 1.0, 4.0)
    scan = sim.Scan(sample_rate_hz=48_000.0, duration_s=1.1, sweep_rate_hz=0.5,
                    opd_amplitude_cm=0.15, shape=0.5)
    s = sim.simulate(src, scan, medium="vacuum", rng=650)
    d = analyze(s.record, OPTIONS).to_dict()
    sm = d["summary"]
    assert sm["kind"] == "multimode"
    # simulate.multimode lays the modes Δσ = σ₀Δλ/λ₀ apart (tested in tests/test_simulate.py):
    # the spacing in nm near the centre is 1.0 nm; within 2 % (acceptance criterion)
    assert sm["modes"]["spacing_nm"] == pytest.approx(1.0, rel=0.02)
    # the centroid of the comb is its centre (symmetric envelope)
    assert sm["centre_wavelength_nm"] == pytest.approx(650.0, abs=0.05)
    assert sm["modes"]["n_modes"] >= 5


def test_multimode_uncertainties_match_the_scatter_of_repeats():
    # GUM §4.2: a standard uncertainty should describe the scatter of repeated measurements.
    # Ten invented records of one comb (fresh noise each). The comb's centre is the
    # intensity-weighted centroid of the modes, so the modes' area uncertainties count as well
    # as their centre uncertainties (before: the quoted u was 1/50 of the scatter); the
    # spacing's u propagates the modes' own uncertainties (before: 0.54 of the scatter).
    src = sim.multimode(650.0, 1.0, 4.0)
    c, u, sp, usp = [], [], [], []
    for seed in range(10):
        rec = sim.simulate(src, sim.Scan(sample_rate_hz=48_000, duration_s=1.0,
                                         opd_amplitude_cm=0.15, sweep_rate_hz=1.0),
                           sim.ReferenceChannel(), sim.Detector(noise_rms=0.05),
                           rng=200 + seed).record
        sm = analyze(rec, replace(OPTIONS, reference_wavelength_nm=632.991)).to_dict()["summary"]
        assert sm["kind"] == "multimode"
        c.append(sm["centre_wavelength_nm"])
        u.append(sm["u_centre_wavelength_nm"])
        sp.append(sm["modes"]["spacing_nm"])
        usp.append(sm["modes"]["u_spacing_nm"])
    # ten repeats know the scatter to ±24 % (1σ): measured ratios 0.72 (centre), 0.85
    # (spacing); accepted 0.5-2
    for vals, us in ((c, u), (sp, usp)):
        ratio = np.sqrt(np.mean(np.square(us))) / np.std(vals, ddof=1)
        assert 0.5 < ratio < 2.0, ratio
