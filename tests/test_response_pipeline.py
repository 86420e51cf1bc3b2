"""Instrument response and LED colour through the whole pipeline (analyze -> Result -> report).

Oracles:
* the simulator's closed-form source density (SourceModel.density, tested in test_simulate.py):
  a record is simulated from the source *times a known detector response* (each component of
  the LED comb scaled by the response at its wavenumber), so the true, unweighted spectrum is
  known exactly; its figures come from ftsource.measure.broadband (CIE 127 / IES definitions);
* the detector response is the typical silicon shape of ftsource.calibrate.response (common
  practice / from memory; here it is only an invented but known truth, shared by the
  simulation and the response curve given to analyze);
* moments of a truncated normal distribution (closed form) for the response's correlated
  uncertainty;
* colour: ftsource.measure.colour on the true spectrum (tested in test_colour.py against CIE
  data) and the general-purpose colour-science library (PyPI ``colour-science``:
  ``colour.sd_to_XYZ``, ``colour.XYZ_to_xy``, ``colour.dominant_wavelength``, whose dominant
  wavelength is a whole-nanometre table value, so ±0.5 nm).
"""

from __future__ import annotations

import dataclasses
import math
from functools import cache

import colour
import numpy as np
import pytest
from astropy.table import Table
from scipy.stats import norm

from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.calibrate.response import ResponseCurve, silicon_photodiode_response
from ftsource.measure import colour as ftc
from ftsource.measure.broadband import broadband_metrics
from ftsource.report.text import format_summary, write_outputs

SCAN = S.Scan(sample_rate_hz=48_000, duration_s=0.5, opd_centre_cm=0.0, opd_amplitude_cm=0.02,
              sweep_rate_hz=4.0)
U_REL = 0.005  # invented relative standard uncertainty of the known response
CMFS = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
E_WHITE = np.array([1.0 / 3.0, 1.0 / 3.0])


def _silicon(lam_nm):
    return silicon_photodiode_response(lam_nm)


def _weighted(src, response):
    """The source as the detector sees it: every comb component scaled by the response."""
    lines = tuple(dataclasses.replace(ln, strength=ln.strength
                                      * float(response(1e7 / ln.wavenumber_per_cm)))
                  for ln in src.lines)
    return dataclasses.replace(src, lines=lines)


def _curve(short_nm=380.0, long_nm=1150.0):
    """The known response as a curve, normalised to 1 at its maximum, u = 0.5 % of it."""
    sig = np.linspace(1e7 / long_nm, 1e7 / short_nm, 3000)
    r = _silicon(1e7 / sig)
    r = r / r.max()
    return ResponseCurve(sig, r, U_REL * r, (float(sig[0]), float(sig[-1])),
                         "test: the simulated detector's known silicon-like shape")


def _truth(src, centre_nm, fwhm_nm):
    sig = np.linspace(1e7 / (centre_nm + 4 * fwhm_nm), 1e7 / (centre_nm - 4 * fwhm_nm), 200_001)
    return broadband_metrics(1e7 / sig, src.density(sig) * sig**2 / 1e7, None, n_monte_carlo=0)


@cache
def _record(centre_nm, fwhm_nm, weighted):
    src = S.led(centre_nm, fwhm_nm)
    seen = _weighted(src, _silicon) if weighted else src
    sim = S.simulate(seen, SCAN, S.ReferenceChannel(), S.Detector(noise_rms=0.001), rng=3)
    return src, sim.record


@cache
def _analysed(centre_nm, fwhm_nm, weighted, response):
    """``response``: None, "known" (the true curve) or "short" (a curve cut at 655 nm)."""
    src, record = _record(centre_nm, fwhm_nm, weighted)
    curve = {None: None, "known": _curve(), "short": _curve(short_nm=655.0)}[response]
    return src, analyze(record, AnalysisOptions(reference_wavelength_nm=632.991,
                                                medium="vacuum", response=curve))


def _has(warnings, text):
    return any(text in w for w in warnings)


# --- the response through analyze ----------------------------------------------------------


def test_known_response_corrects_the_centroid():
    src, with_r = _analysed(850.0, 30.0, True, "known")
    _, without = _analysed(850.0, 30.0, True, None)
    truth = _truth(src, 850.0, 30.0)
    s, s0 = with_r.to_dict()["summary"], without.to_dict()["summary"]
    assert s["kind"] == s0["kind"] == "broadband"
    # corrected: the true (unweighted) centroid within 0.1 nm (the LED target)
    assert s["detector_weighted"] is False
    assert abs(s["centroid_wavelength_nm"] - truth.centroid_nm) < 0.1
    assert abs(s["peak_wavelength_nm"] - truth.peak_nm) < 0.1
    assert not _has(with_r.warnings, "detector-weighted")
    # uncorrected: labelled detector-weighted, with the warning, and visibly off (the silicon
    # slope moves it ~0.2 nm towards the red, common practice: "about a quarter nm")
    assert s0["detector_weighted"] is True
    assert _has(without.warnings, "broadband figures are detector-weighted")
    assert s0["centroid_wavelength_nm"] - truth.centroid_nm > 0.1


def test_response_uncertainty_is_correlated_not_averaged():
    # closed form: a tilt of the response by ±u·clip(x/w, -1, 1) (x = λ − λc, w = FWHM) moves
    # the centroid of a Gaussian band (s = FWHM/2.3548) by u·E[x·clip(x/w)], with
    # E[x·clip(x/w)] = (s²/w)(erf(a/√2) − 2aφ(a)) + 2sφ(a), a = w/s (truncated-normal moments);
    # the shift mode adds nothing for a constant relative u. 10 % allows for the tilt being
    # linear in σ, not λ, and for the statistical part added in quadrature.
    _, with_r = _analysed(850.0, 30.0, True, "known")
    _, without = _analysed(850.0, 30.0, True, None)
    w = 30.0
    s = w / (2 * math.sqrt(2 * math.log(2)))
    a = w / s
    tilt = U_REL * ((s * s / w) * (math.erf(a / math.sqrt(2)) - 2 * a * norm.pdf(a))
                    + 2 * s * norm.pdf(a))
    u_stat = without.to_dict()["summary"]["u_centroid_wavelength_nm"]
    u = with_r.to_dict()["summary"]["u_centroid_wavelength_nm"]
    assert u > 5 * u_stat  # the shape error dominates: it does not average down over the band
    assert u == pytest.approx(math.hypot(tilt, u_stat), rel=0.1)
    # and it reaches the budget of the centre wavelength
    assert with_r.to_dict()["summary"]["u_centre_wavelength_nm"] >= u


def test_response_that_cuts_the_band_falls_back_to_detector_weighted():
    # the curve starts at 655 nm, inside the 650 nm LED's half-maximum: before, this aborted
    # the analysis (AnalysisError); now the figures are those of the uncorrected spectrum
    _, short = _analysed(650.0, 30.0, True, "short")
    _, none = _analysed(650.0, 30.0, True, None)
    s = short.to_dict()["summary"]
    assert s["kind"] == "broadband" and s["detector_weighted"] is True
    assert _has(short.warnings, "the instrument response was not applied")
    assert _has(short.warnings, "detector-weighted")
    for key in ("centroid_wavelength_nm", "u_centroid_wavelength_nm", "peak_wavelength_nm",
                "fwhm_nm"):
        assert s[key] == none.to_dict()["summary"][key]


# --- colour keys end to end ------------------------------------------------------------------


def test_visible_led_colour_matches_true_spectrum():
    src, r = _analysed(590.0, 20.0, False, None)
    s = r.to_dict()["summary"]
    assert s["kind"] == "broadband"
    sig = np.linspace(1e7 / 700.0, 1e7 / 480.0, 200_001)
    lam, dens = 1e7 / sig, src.density(sig) * sig**2 / 1e7
    # the CIE tables are on standard-air wavelengths (issue 12, part 4): vacuum → standard air
    xy_true = ftc.chromaticity_xy(lam, dens, scale="vacuum")
    # the measurement (line shape of ~1 nm, noise) moves the chromaticity by < 1e-3 here
    assert s["chromaticity_xy"] == pytest.approx(list(xy_true), abs=1e-3)
    assert s["dominant_wavelength_nm"] == pytest.approx(ftc.dominant_wavelength_nm(xy_true),
                                                        abs=0.1)
    # colour-science on the true spectrum sampled on its 1 nm CMF grid (standard-air
    # wavelengths; their vacuum wavenumbers by Morton 2000 eq. 8, tested in test_air.py)
    from ftsource.physics.air import standard_air_to_vacuum_nm

    w = CMFS.wavelengths
    grid_sig = 1e7 / standard_air_to_vacuum_nm(w)
    sd = colour.SpectralDistribution(src.density(grid_sig) * grid_sig**2 / 1e7, w)
    xyz = colour.sd_to_XYZ(sd, cmfs=CMFS, illuminant=colour.sd_ones(CMFS.shape),
                           method="Integration")
    xy_ref = colour.XYZ_to_xy(xyz)
    assert s["chromaticity_xy"] == pytest.approx(list(xy_ref), abs=1e-3)
    dom_ref = float(colour.dominant_wavelength(xy_ref, E_WHITE, CMFS)[0])
    assert s["dominant_wavelength_nm"] == pytest.approx(dom_ref, abs=0.5 + 0.1)


def test_infrared_led_and_laser_have_no_colour():
    _, ir = _analysed(850.0, 30.0, True, None)
    s = ir.to_dict()["summary"]
    assert s["kind"] == "broadband"
    assert s["chromaticity_xy"] is None and s["dominant_wavelength_nm"] is None
    sim = S.simulate(S.laser(650.0), SCAN, S.ReferenceChannel(), S.Detector(noise_rms=0.001),
                     rng=4)
    laser = analyze(sim.record, AnalysisOptions(reference_wavelength_nm=632.991,
                                                medium="vacuum"))
    assert laser.to_dict()["summary"]["kind"] == "narrow"
    assert laser.to_dict()["summary"]["chromaticity_xy"] is None
    assert laser.to_dict()["summary"]["dominant_wavelength_nm"] is None


# --- what the files and the text say --------------------------------------------------------


@pytest.mark.parametrize("response, label", [("known", "response-corrected"),
                                             (None, "detector-weighted")])
def test_report_labels_the_weighting(tmp_path, response, label):
    _, r = _analysed(850.0, 30.0, True, response)
    text = format_summary(r)
    line = next(ln for ln in text.splitlines() if ln.startswith("peak "))
    assert line.endswith(f"({label})")
    write_outputs(r, tmp_path)
    meta = Table.read(tmp_path / "spectrum.ecsv", format="ascii.ecsv").meta
    assert meta["broadband_figures_weighting"] == label
    # the columns are always the measured spectrum
    assert meta["density_weighting"] == "detector-weighted"
