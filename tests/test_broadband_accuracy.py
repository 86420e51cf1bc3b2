"""Broad sources through the whole pipeline (issue: interferogram processing done properly).

Oracle: the simulator's closed-form source density (SourceModel.density, tested in
test_simulate.py); the truth figures are computed from it with ftsource.measure.broadband (CIE 127 /
IES definitions on the density per unit wavelength, tested against check-values §8), so
estimator and truth share definitions and differ only by the measurement.
"""

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.measure.broadband import broadband_metrics


def _truth(src, centre_nm, fwhm_nm):
    sig = np.linspace(1e7 / (centre_nm + 4 * fwhm_nm), 1e7 / (centre_nm - 4 * fwhm_nm), 200_001)
    dens = src.density(sig)
    return broadband_metrics(1e7 / sig, dens * sig**2 / 1e7, None, n_monte_carlo=0)


@pytest.mark.slow
@pytest.mark.parametrize(
    "centre, fwhm, asym",
    [(450.0, 15.0, 0.0), (630.0, 25.0, 0.3), (850.0, 35.0, -0.25)],
)
def test_led_centroid_and_fwhm_with_dispersion(centre, fwhm, asym):
    src = S.led(centre, fwhm, asymmetry=asym)
    s0 = 1e7 / centre
    # a small uncompensated-beamsplitter phase: constant, linear and quadratic terms (rad)
    src_d = src.with_dispersion(s0, (0.4, 2e-5, 3e-7))
    sim = S.simulate(src_d, S.Scan(sample_rate_hz=100_000, duration_s=1.0, opd_centre_cm=0.0,
                                   opd_amplitude_cm=0.02, sweep_rate_hz=4.0),
                     S.ReferenceChannel(), S.Detector(noise_rms=0.001), rng=3)
    r = analyze(sim.record, AnalysisOptions(reference_wavelength_nm=632.991, medium="vacuum"))
    s = r.to_dict()["summary"]
    t = _truth(src, centre, fwhm)
    assert s["kind"] == "broadband"
    # issue's targets: centroid within 0.1 nm, FWHM within 1 % of the simulated spectrum's
    assert abs(s["centroid_wavelength_nm"] - t.centroid_nm) < 0.1
    assert abs(s["fwhm_nm"] / t.fwhm_nm - 1) < 0.01
    # the peak too, asymmetric bands included: the line shape's first-order bias is removed
    # (spectrum.reconvolve); before that the 850 nm band's peak was off by 0.13 nm
    assert abs(s["peak_wavelength_nm"] - t.peak_nm) < 0.1
    # the stated FWHM uncertainty covers the remaining error (k = 2)
    assert abs(s["fwhm_nm"] - t.fwhm_nm) < 2 * s["u_fwhm_nm"]


@pytest.mark.slow
def test_led_centroid_uncertainty_is_honest_over_repeated_records():
    # JCGM 100:2008 (GUM) §6: an expanded uncertainty of ~95 % coverage should hold the truth
    # in most records, and the standard uncertainty should match the scatter of repeats.
    # Sixteen invented records of one LED (fresh detector noise each; 3-4 sweeps per record)
    # are compared with the simulator's truth. Before the sweep-scatter term the quoted u was
    # a quarter of the scatter (the noise model saw independent points only).
    src = S.led(630.0, 25.0, asymmetry=0.2)
    t = _truth(src, 630.0, 25.0)
    c, u, big_u = [], [], []
    for seed in range(16):
        sim = S.simulate(src, S.Scan(sample_rate_hz=48_000, duration_s=0.5, opd_centre_cm=0.0,
                                     opd_amplitude_cm=0.02, sweep_rate_hz=4.0),
                         S.ReferenceChannel(), S.Detector(noise_rms=0.02), rng=100 + seed)
        s = analyze(sim.record, AnalysisOptions(reference_wavelength_nm=632.991,
                                                medium="vacuum")).to_dict()["summary"]
        c.append(s["centroid_wavelength_nm"])
        u.append(s["u_centroid_wavelength_nm"])
        big_u.append(s["expanded_uncertainty_nm"])
    err = np.abs(np.asarray(c) - t.centroid_nm)
    # at least 14 of 16 inside U (95 % coverage gives ≥ 14 with probability 0.96)
    assert np.sum(err <= np.asarray(big_u)) >= 14, (err, big_u)
    # quoted u against the observed scatter: the scatter of 16 is known to ±18 % (1σ), each u
    # rests on 3-4 sweeps; measured 0.78 (RMS u over scatter)
    ratio = np.sqrt(np.mean(np.square(u))) / np.std(c, ddof=1)
    assert 0.5 < ratio < 2.0, ratio
