"""Tests of ftsource.calibrate.response: Planck shape, response calibration and correction.

Sources:
* Planck's law per frequency from astropy (PyPI ``astropy``,
  ``astropy.modeling.physical_models.BlackBody``), turned per wavenumber with B_σ = c·B_ν
  (closed form, ν = cσ).
* 2856 K: the temperature of CIE illuminant A (CIE 15:2018, Colorimetry).
* The "true" instrument response and the LED below are closed-form functions invented for the
  tests; a Gaussian in wavelength has its centroid at its centre (closed form).
* ∂ ln B/∂T is checked against a central finite difference (closed form, error O(h²)).
"""

from __future__ import annotations

import os
import re
import warnings

import astropy.units as u
import numpy as np
import pytest
from astropy import constants as const
from astropy.modeling.physical_models import BlackBody

from ftsource.calibrate import response as R
from ftsource.errors import AnalysisError, FtsourceWarning, OptionError, OutputError

T_A = 2856.0  # CIE illuminant A's temperature, K (CIE 15:2018)
SIGMA = np.arange(4000.0, 30000.0, 0.5)  # cm^-1, an FFT-like uniform grid
LAM = 1e7 / SIGMA


def true_response(lam_nm):
    """A smooth silicon-like response (invented, closed form): rising blue side, cut-off near
    1050 nm."""
    lam = np.asarray(lam_nm, float)
    blue = np.where(lam > 350, -np.expm1(-np.clip(lam - 350, 0, None) / 150), 0.0)
    return (lam / 950) / (1 + np.exp((lam - 1050) / 30)) * blue


def led_per_cm(centre_nm, fwhm_nm):
    """Gaussian in wavelength (per nm), turned per cm^-1 by S_σ = S_λ·λ²/10⁷ (closed form)."""
    per_nm = np.exp(-4 * np.log(2) * ((LAM - centre_nm) / fwhm_nm) ** 2)
    return per_nm * LAM**2 / 1e7


def lamp_measurement(seed=1, rel_noise=1e-4):
    clean = true_response(LAM) * R.planck_density_per_cm(SIGMA, T_A)
    noise = np.full(SIGMA.shape, rel_noise * clean.max())
    rng = np.random.default_rng(seed)
    return clean, clean + rng.normal(size=SIGMA.size) * noise, noise


@pytest.fixture(scope="module")
def lamp_curve():
    _, measured, noise = lamp_measurement()
    return R.calibrate_response(SIGMA, measured, noise, temperature_k=T_A, u_temperature_k=10.0)


# --- Planck ------------------------------------------------------------------------------------


@pytest.mark.parametrize("temperature", [300.0, 1500.0, T_A, 6500.0])
def test_planck_matches_astropy_blackbody(temperature):
    # source: astropy BlackBody (per frequency) × c = per wavenumber; 1e-10 is rounding level
    sigma = np.geomspace(10.0, 60000.0, 400)
    sigma = sigma[1.4388 * sigma / temperature < 500]  # keep exp() finite in both codes
    bb = BlackBody(temperature=temperature * u.K)
    nu = (sigma / u.cm * const.c).to(u.Hz)
    expected = (bb(nu) * const.c).to(u.W / u.m**2 / u.sr * u.cm).value
    got = R.planck_density_per_cm(sigma, temperature)
    np.testing.assert_allclose(got, expected, rtol=1e-10, atol=0)


def test_planck_scalar_zero_and_errors():
    # closed form: B_σ(0) = 0; a scalar in gives a float out
    assert R.planck_density_per_cm(0.0, T_A) == 0.0
    assert isinstance(R.planck_density_per_cm(15000.0, T_A), float)
    with pytest.raises(OptionError, match="temperature_k"):
        R.planck_density_per_cm(1000.0, -1.0)
    with pytest.raises(OptionError, match="sigma_per_cm"):
        R.planck_density_per_cm([-1.0], T_A)


def test_dlog_dtemperature_matches_finite_difference():
    # source: central difference of ln B (closed form); h = 1e-4 T gives an O(h²) error ~1e-9
    sigma = np.linspace(100.0, 40000.0, 200)
    h = 1e-4 * T_A
    fd = (
        np.log(R.planck_density_per_cm(sigma, T_A + h))
        - np.log(R.planck_density_per_cm(sigma, T_A - h))
    ) / (2 * h)
    np.testing.assert_allclose(R.planck_dlog_dtemperature(sigma, T_A), fd, rtol=1e-6)
    # closed form: the Rayleigh–Jeans limit is 1/T
    assert R.planck_dlog_dtemperature(1e-6, T_A) == pytest.approx(1 / T_A, rel=1e-6)


# --- calibration -----------------------------------------------------------------------------


def test_simulated_lamp_recovers_response(lamp_curve):
    # source: the invented closed-form response × Planck at 2856 K (CIE 15); tolerance 1 %
    # (the requirement); the statistical part here is ~0.05 % and smoothing bias < 1e-4
    truth = true_response(1e7 / lamp_curve.sigma_per_cm)
    truth = truth / truth.max()
    assert np.max(np.abs(lamp_curve.relative_response / truth - 1)) < 0.01
    assert lamp_curve.relative_response.max() == 1.0
    # the band: where the clean lamp signal exceeds 5 % of its peak (the documented default)
    clean, _, _ = lamp_measurement()
    above = SIGMA[clean > 0.05 * clean.max()]
    lo, hi = lamp_curve.valid_band_per_cm
    assert lo == pytest.approx(above.min(), abs=5.0)  # noise moves the edge by a few points
    assert hi == pytest.approx(above.max(), abs=5.0)
    assert "not flat" in lamp_curve.source and "2856 K" in lamp_curve.source


def test_statistical_uncertainty_matches_scatter():
    # source: Monte Carlo over 40 noise draws (closed-form truth); the median ratio of the
    # scatter to u_relative is within 0.8–1.25 (sampling error of a 40-draw std ≈ 11 %)
    clean, _, noise = lamp_measurement()
    grid = np.arange(9500.0, 17000.0, 7.0)
    draws = []
    for seed in range(40):
        m = clean + np.random.default_rng(100 + seed).normal(size=SIGMA.size) * noise
        draws.append(R.calibrate_response(SIGMA, m, noise, temperature_k=T_A).at(grid))
    one = R.calibrate_response(SIGMA, clean + noise * np.random.default_rng(7).normal(
        size=SIGMA.size), noise, temperature_k=T_A)
    uu = one.u_at(grid)
    ok = uu > 1e-6  # away from the normalising point, where u is 0 by definition
    ratio = np.median(np.std(draws, axis=0)[ok] / uu[ok])
    assert 0.8 < ratio < 1.25


def test_temperature_propagation_matches_finite_difference():
    # source: the change of the normalised response between T ± 1 K (central difference);
    # tolerance 1e-3 of the largest effect (the analytic form ignores the smoothing's tiny
    # reshaping of the Planck factor)
    clean = true_response(LAM) * R.planck_density_per_cm(SIGMA, T_A)
    noise = np.full(SIGMA.shape, 1e-9 * clean.max())
    u_t = 15.0
    with_u = R.calibrate_response(SIGMA, clean, noise, temperature_k=T_A, u_temperature_k=u_t)
    without = R.calibrate_response(SIGMA, clean, noise, temperature_k=T_A)
    up = R.calibrate_response(SIGMA, clean, noise, temperature_k=T_A + 1.0)
    down = R.calibrate_response(SIGMA, clean, noise, temperature_k=T_A - 1.0)
    fd = np.abs(up.relative_response - down.relative_response) / 2.0 * u_t
    part = np.sqrt(with_u.u_relative**2 - without.u_relative**2)
    assert fd.max() > 1e-3  # the effect is real: ~1 % for 15 K over this band
    assert np.max(np.abs(part - fd)) < 1e-3 * fd.max()
    assert with_u.u_temperature_k == u_t and without.u_temperature_k is None


def test_certified_table_lamp():
    # source: a table per nm (Planck at 2856 K every 10 nm, 350–1200 nm) converted per cm^-1
    # with S_σ = S_λ·λ²/10⁷ (closed form); recovered within 1 % like the blackbody path
    lam_t = np.arange(350.0, 1201.0, 10.0)
    s_t = 1e7 / lam_t
    per_nm = R.planck_density_per_cm(s_t, T_A) * s_t**2 / 1e7
    table = per_nm * lam_t**2 / 1e7
    _, measured, noise = lamp_measurement(seed=5)
    curve = R.calibrate_response(
        SIGMA, measured, noise, lamp="table", lamp_sigma=s_t, lamp_density=table,
        u_lamp_density=0.005 * table,
    )
    truth = true_response(1e7 / curve.sigma_per_cm)
    assert np.max(np.abs(curve.relative_response / (truth / truth.max()) - 1)) < 0.01
    assert curve.valid_band_per_cm[0] >= s_t.min() and curve.lamp == "table"
    # closed form: table parts r·√(q_i² + q_m²) with q = 0.5 % → ≥ 0.707 % away from the max
    assert np.median(curve.u_relative / curve.relative_response) > 0.007


def test_calibration_option_errors():
    _, measured, noise = lamp_measurement()
    with pytest.raises(OptionError, match="temperature_k"):
        R.calibrate_response(SIGMA, measured, noise)
    with pytest.raises(OptionError, match="lamp"):
        R.calibrate_response(SIGMA, measured, noise, lamp="sun", temperature_k=T_A)
    with pytest.raises(OptionError, match="lamp_sigma"):
        R.calibrate_response(SIGMA, measured, noise, lamp="table")
    with pytest.raises(OptionError, match="measured_noise"):
        R.calibrate_response(SIGMA, measured, 0.0, temperature_k=T_A)
    with pytest.raises(AnalysisError, match="points above"):
        R.calibrate_response(SIGMA, measured, noise, temperature_k=T_A, min_snr=1e12)


# --- correction --------------------------------------------------------------------------------


@pytest.mark.parametrize("centre_nm, fwhm_nm", [(630.0, 20.0), (600.0, 12.0), (850.0, 30.0)])
def test_led_centroid_corrected(lamp_curve, centre_nm, fwhm_nm):
    # source: a Gaussian in wavelength has its centroid at its centre (closed form, summed
    # over ±3 FWHM, a symmetric window); requirement 0.05 nm; uncorrected it is off by 0.08–0.2 nm
    truth_density = led_per_cm(centre_nm, fwhm_nm)
    measured = true_response(LAM) * truth_density
    noise = np.full(SIGMA.shape, 1e-4 * measured.max())
    measured = measured + np.random.default_rng(4).normal(size=SIGMA.size) * noise
    dc, nc, cover = R.apply_response(SIGMA, measured, noise, lamp_curve)
    window = np.abs(LAM - centre_nm) < 3 * fwhm_nm
    assert np.all(cover[window])
    centroid = np.sum(LAM[window] * dc[window]) / np.sum(dc[window])
    raw = np.sum(LAM[window] * measured[window]) / np.sum(measured[window])
    assert abs(centroid - centre_nm) < 0.05
    assert abs(raw - centre_nm) > 0.05  # uncorrected it would miss the requirement
    assert np.all(np.isnan(dc[~cover])) and np.all(np.isnan(nc[~cover]))
    assert np.all(nc[cover] > 0)


def test_power_outside_band_and_warning(lamp_curve):
    # source: a Gaussian centred on the band's upper edge has half its power outside
    # (symmetry, closed form); tolerance 1e-3 for the grid
    hi = lamp_curve.valid_band_per_cm[1]
    density = np.exp(-0.5 * ((SIGMA - hi) / 200.0) ** 2)
    noise = np.full(SIGMA.shape, 1e-6)
    assert R.power_outside_band(SIGMA, density, noise, lamp_curve) == pytest.approx(0.5, abs=1e-3)
    with pytest.warns(FtsourceWarning, match=r"5\d(\.\d+)? % of the measured power"):
        _, _, cover = R.apply_response(SIGMA, density, noise, lamp_curve)
    assert not cover[SIGMA > hi].any()


def test_noise_propagation_closed_form(lamp_curve):
    # source: GUM quotient rule, √((n/r)² + (d·u_r/r²)²)
    s = np.array([12000.0, 15000.0])
    d, n = np.array([2.0, 3.0]), np.array([0.1, 0.2])
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        dc, nc, cover = R.apply_response(s, d, n, lamp_curve)
    r, ur = lamp_curve.at(s), lamp_curve.u_at(s)
    np.testing.assert_allclose(dc, d / r, rtol=1e-15)
    np.testing.assert_allclose(nc, np.hypot(n / r, d * ur / r**2), rtol=1e-15)
    assert cover.all()


def test_correct_band_whole_or_not_at_all(lamp_curve):
    # inside: closed form d/r and the statistical noise n/r only (the response's own u is a
    # correlated shape error, evaluated by response_shape_uncertainty)
    s = np.arange(12000.0, 16000.0, 2.0)
    d = np.exp(-0.5 * ((s - 14000.0) / 200.0) ** 2)
    n = np.full(s.shape, 1e-4)
    dc, nc, applied, msgs = R.correct_band(s, d, n, lamp_curve)
    assert applied and msgs == []
    np.testing.assert_allclose(dc, d / lamp_curve.at(s), rtol=1e-15)
    np.testing.assert_allclose(nc, n / lamp_curve.at(s), rtol=1e-15)
    # across the band's upper edge: half the power outside (symmetry, closed form) > 0.1 %,
    # so nothing is corrected and the message says why
    hi = lamp_curve.valid_band_per_cm[1]
    s2 = np.arange(hi - 2000.0, hi + 2000.0, 2.0)
    d2 = np.exp(-0.5 * ((s2 - hi) / 200.0) ** 2)
    dc2, nc2, applied2, msgs2 = R.correct_band(s2, d2, n[: s2.size], lamp_curve)
    assert not applied2
    np.testing.assert_array_equal(dc2, d2)
    np.testing.assert_array_equal(nc2, n[: s2.size])
    assert len(msgs2) == 1  # about 50 % (the edge falls between grid points)
    assert re.search(r" (49\.[5-9]|50(\.[0-4])?) % of the band's measured power", msgs2[0])
    assert "detector-weighted" in msgs2[0]
    with pytest.raises(OptionError, match="max_outside"):
        R.correct_band(s, d, n, lamp_curve, max_outside=1.5)


def test_response_shape_uncertainty_closed_form():
    # closed form: density N(σc, s²) in σ, flat response r = 1 with constant u = c; figure =
    # centroid in σ. The shift r ± c leaves it unchanged; the tilt r ± c·clip(x/w) moves it by
    # ∓c·E[x·clip(x/w, −1, 1)] + O(c³) (half the difference of the two signs), with
    # E = (s²/w)(erf(a/√2) − 2aφ(a)) + 2sφ(a), a = w/s (truncated-normal moments).
    from scipy.special import erf
    from scipy.stats import norm

    sc, s_g, w, c = 15000.0, 80.0, 150.0, 0.01
    sigma = np.arange(sc - 1500.0, sc + 1500.0, 0.25)
    d = np.exp(-0.5 * ((sigma - sc) / s_g) ** 2)
    curve = R.ResponseCurve(sigma, np.ones(sigma.size), np.full(sigma.size, c),
                            (sigma[0], sigma[-1]), "flat")

    def figures(sg, dens):
        return (np.sum(sg * dens) / np.sum(dens), np.sum(dens))

    u = R.response_shape_uncertainty(sigma, d, curve, figures, centre_per_cm=sc,
                                     width_per_cm=w)
    a = w / s_g
    expected = c * ((s_g**2 / w) * (erf(a / np.sqrt(2)) - 2 * a * norm.pdf(a))
                    + 2 * s_g * norm.pdf(a))
    assert u[0] == pytest.approx(expected, rel=1e-3)
    # the integral: the shift changes it by ∓c/(1 ± c) of itself (closed form), the tilt by
    # O(c²) only (odd in x)
    total = np.sum(d)
    assert u[1] == pytest.approx(total * 0.5 * (1 / (1 - c) - 1 / (1 + c)), rel=1e-3)


def test_at_is_nan_outside_band(lamp_curve):
    lo, hi = lamp_curve.valid_band_per_cm
    assert np.isnan(lamp_curve.at(lo - 1.0)) and np.isnan(lamp_curve.at(hi + 1.0))
    assert lamp_curve.at(lamp_curve.sigma_per_cm[10]) == lamp_curve.relative_response[10]


# --- files -------------------------------------------------------------------------------------


def test_file_round_trip(tmp_path, lamp_curve):
    path = tmp_path / "response.ecsv"
    curve = R.ResponseCurve(
        lamp_curve.sigma_per_cm, lamp_curve.relative_response, lamp_curve.u_relative,
        lamp_curve.valid_band_per_cm, lamp_curve.source, lamp_curve.lamp,
        lamp_curve.temperature_k, lamp_curve.u_temperature_k, date="2024-05-01",
    )
    curve.to_file(path)
    back = R.ResponseCurve.from_file(path)
    for name in ("sigma_per_cm", "relative_response", "u_relative"):
        np.testing.assert_array_equal(getattr(back, name), getattr(curve, name))
    assert back.valid_band_per_cm == curve.valid_band_per_cm
    assert (back.source, back.lamp, back.temperature_k, back.u_temperature_k, back.date) == (
        curve.source, curve.lamp, curve.temperature_k, curve.u_temperature_k, "2024-05-01")
    # no timestamp is invented when none is given
    lamp_curve.to_file(tmp_path / "plain.ecsv")
    assert R.ResponseCurve.from_file(tmp_path / "plain.ecsv").date is None
    assert [p.name for p in tmp_path.iterdir() if p.name.startswith(".")] == []


def test_round_trip_exact_under_legacy_print_mode(tmp_path, lamp_curve):
    # some libraries switch numpy to its 1.13 print mode on import (12-digit str of floats);
    # the file must still hold every float exactly (closed form: equality)
    with np.printoptions(legacy="1.13"):
        lamp_curve.to_file(tmp_path / "legacy.ecsv")
    back = R.ResponseCurve.from_file(tmp_path / "legacy.ecsv")
    np.testing.assert_array_equal(back.relative_response, lamp_curve.relative_response)
    np.testing.assert_array_equal(back.u_relative, lamp_curve.u_relative)


def test_refuses_to_overwrite(tmp_path, lamp_curve):
    path = tmp_path / "response.ecsv"
    path.write_text("keep me\n")
    with pytest.raises(OutputError, match="exists"):
        lamp_curve.to_file(path)
    assert path.read_text() == "keep me\n"
    lamp_curve.to_file(path, overwrite=True)
    assert R.ResponseCurve.from_file(path).sigma_per_cm.size == lamp_curve.sigma_per_cm.size
    with pytest.raises(OutputError, match="directory"):
        lamp_curve.to_file(tmp_path)


@pytest.mark.parametrize(
    "text",
    [
        "not an ecsv file\n",
        "# %ECSV 1.0\n# ---\n# datatype:\n# - {name: a, datatype: float64}\n"
        "# meta: {kind: something-else, version: 1}\n# schema: astropy-2.0\na\n1.0\n",
    ],
)
def test_bad_files_raise_option_error(tmp_path, text):
    path = tmp_path / "bad.ecsv"
    path.write_text(text)
    with pytest.raises(OptionError) as info:
        R.ResponseCurve.from_file(path)
    assert "\n" not in str(info.value)
    with pytest.raises(OptionError):
        R.ResponseCurve.from_file(os.fspath(tmp_path / "missing.ecsv"))


# --- silicon -------------------------------------------------------------------------------------


def test_silicon_shape():
    lam = np.arange(250.0, 1300.0, 1.0)
    resp = R.silicon_photodiode_response(lam)
    # closed form: responsivity cannot exceed the ideal λ/1239.84 A/W (quantum efficiency 1)
    assert np.all(resp <= lam / 1239.84198 + 1e-12)
    # from memory / common practice: a silicon photodiode peaks at 850–1000 nm, ~0.5–0.7 A/W,
    # and is blind beyond its band gap (~1.1 µm)
    assert 850 <= lam[np.argmax(resp)] <= 1000
    assert 0.5 < resp.max() < 0.7
    assert np.all(resp[(lam < 300) | (lam > 1200)] == 0)
    assert R.silicon_photodiode_response(1150.0) < 0.02 * resp.max()
