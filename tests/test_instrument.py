"""Tests of ftsource.physics.instrument: field-of-view (Jacquinot) formulas and encoder OPD.

Independent check: the centroid and width of a line seen through a cone of rays, computed here
by direct numerical integration of σ cos θ over the solid angle with scipy.integrate.quad
(a general-purpose PyPI library), against the closed forms σ(1 − Ω/4π) and σΩ/2π
(Jacquinot 1954, JOSA 44:761; Davis, Abrams & Brault 2001, from memory).
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.integrate import quad

from ftsource.errors import OptionError
from ftsource.physics.air import AirConditions
from ftsource.physics.instrument import (
    encoder_opd_cm,
    field_of_view_broadening,
    field_of_view_correction,
    field_solid_angle,
    jacquinot_shift,
)

FIELDS = [(1e-3, 0.1), (2e-3, 0.5), (5e-3, 0.2), (0.1, 0.3)]  # last one: θ ≈ 0.165 rad


def _cone_moments(sigma, theta_max):
    """Mean and variance of σ cos θ for rays uniform in solid angle, dΩ = 2π sin θ dθ.

    Works with the offset y = σ cos θ − σ = −2σ sin²(θ/2) so that no moment is a small
    difference of large numbers.
    """
    def integral(g):
        return quad(lambda th: g(-2.0 * sigma * math.sin(th / 2) ** 2) * math.sin(th),
                    0.0, theta_max, epsabs=0, epsrel=1e-13)[0]

    weight = integral(lambda y: 1.0)
    mean_y = integral(lambda y: y) / weight
    var = integral(lambda y: (y - mean_y) ** 2) / weight
    return sigma + mean_y, var


@pytest.mark.parametrize(("d", "f"), FIELDS)
def test_solid_angle_closed_form(d, f):
    # Source: closed form for a cone, Ω = 2π(1 − cos θ), cos θ = f/√(f² + (d/2)²); and the
    # small-angle π(d/2f)², whose relative error is ≈ (3/4)(d/2f)² (series, closed form).
    omega = field_solid_angle(d, f)
    assert omega == pytest.approx(2 * math.pi * (1 - f / math.hypot(f, d / 2)), rel=1e-9)
    x = d / (2 * f)
    assert omega == pytest.approx(math.pi * x**2, rel=0.8 * x**2 + 1e-15)


@pytest.mark.parametrize(("d", "f"), FIELDS)
def test_jacquinot_shift_against_integration_over_cone(d, f):
    # Source: direct numerical integration over the cone (scipy.integrate.quad), see module
    # docstring; quad converges to ~1e-13, tolerance 1e-10 relative.
    sigma = 15798.0
    theta_max = math.atan(d / (2 * f))
    mean, _ = _cone_moments(sigma, theta_max)
    assert sigma - jacquinot_shift(sigma, d, f) == pytest.approx(mean, rel=1e-10)
    omega = field_solid_angle(d, f)
    assert field_of_view_correction(mean, omega) == pytest.approx(sigma, rel=1e-10)


@pytest.mark.parametrize(("d", "f"), FIELDS)
def test_broadening_against_integration_over_cone(d, f):
    # Source: numerical integration (quad) of the second moment; a rectangle of width w has
    # variance w²/12 (closed form). The lower edge is σ cos θ_max (closed form). quad
    # converges to ~1e-13: tolerance 1e-10 relative.
    sigma = 9398.5
    theta_max = math.atan(d / (2 * f))
    _, var = _cone_moments(sigma, theta_max)
    width = field_of_view_broadening(sigma, field_solid_angle(d, f))
    assert width**2 / 12 == pytest.approx(var, rel=1e-10)
    assert sigma - width == pytest.approx(sigma * math.cos(theta_max), rel=1e-12)


def test_resolving_power_example():
    # Source: check-values §2 (C): R = 1e5 allows Ω = 2π/R = 6.283e-5 sr, half-angle
    # 4.472 mrad; at 15798 cm⁻¹ width 0.15798 cm⁻¹ and centroid shift 0.07899 cm⁻¹.
    # Printed to 4-5 digits: tolerances at the last printed digit.
    omega = 2 * math.pi / 1e5
    f = 0.5
    d = 2 * f * math.tan(4.472e-3)
    assert field_solid_angle(d, f) == pytest.approx(6.283e-5, rel=2e-4)
    assert field_of_view_broadening(15798.0, omega) == pytest.approx(0.15798, abs=1e-5)
    sigma_measured = 15798.0 * (1 - omega / (4 * math.pi))
    assert 15798.0 - sigma_measured == pytest.approx(0.07899, abs=1e-5)
    assert field_of_view_correction(sigma_measured, omega) == pytest.approx(15798.0,
                                                                            rel=1e-14)


@settings(max_examples=50, deadline=None)
@given(sigma=st.floats(100.0, 50000.0), d=st.floats(1e-5, 0.05), f=st.floats(0.01, 2.0))
def test_correction_inverts_shift(sigma, d, f):
    # Source: closed form (σ' = σ − Δσ = σ(1 − Ω/4π) inverted by the correction).
    measured = sigma - jacquinot_shift(sigma, d, f)
    assert field_of_view_correction(measured, field_solid_angle(d, f)) == pytest.approx(
        sigma, rel=1e-13)


def test_arrays_broadcast():
    # Source: closed form, elementwise.
    sigma = np.array([10000.0, 20000.0])
    shift = jacquinot_shift(sigma, 1e-3, 0.1)
    np.testing.assert_allclose(shift, sigma * field_solid_angle(1e-3, 0.1) / (4 * math.pi),
                               rtol=1e-15)


def test_encoder_opd_vacuum_and_air():
    # Source: closed form x = 2·n·d for a Michelson; n at 633 nm, 20 °C, 101325 Pa, 50 % RH
    # = 1.000271373 (NIST calculator worked value, check-values §5, V2; 9 decimals, so the
    # relative tolerance is 2e-9).
    pos = np.array([-1e-3, 0.0, 2.5e-3])
    np.testing.assert_array_equal(encoder_opd_cm(pos, 633.0), 2 * pos * 100)
    air = encoder_opd_cm(pos, 633.0, AirConditions(20.0, 101325.0, 50.0))
    np.testing.assert_allclose(air, 2 * 1.000271373 * pos * 100, rtol=2e-9, atol=0)
    assert isinstance(encoder_opd_cm(1e-3, 633.0), float)


@pytest.mark.parametrize(("call", "words"), [
    (lambda: field_solid_angle(-1e-3, 0.1), ["aperture_diameter_m", "-0.001", "> 0"]),
    (lambda: field_solid_angle(1e-3, 0.0), ["focal_length_m", "0"]),
    (lambda: field_of_view_broadening(1e4, 7.0), ["omega_sr", "7", "6.28319"]),
    (lambda: field_of_view_correction(1e4, -1e-4), ["omega_sr", "-0.0001"]),
    (lambda: jacquinot_shift(float("nan"), 1e-3, 0.1), ["sigma_per_cm", "nan"]),
    (lambda: encoder_opd_cm([0.0, float("inf")], 633.0), ["position_m"]),
    (lambda: encoder_opd_cm(1e-3, 200.0, AirConditions()), ["wavelength_vac_nm", "200"]),
])
def test_errors(call, words):
    # Source: project convention (messages name the parameter, the value and what is allowed).
    with pytest.raises(OptionError) as info:
        call()
    for word in words:
        assert word in str(info.value)


# --------------------------------------------------------------------------------------------
# end to end: an extended source through a field stop (Jacquinot 1954)
#
# An LED filling a field stop of diameter d behind a collimator of focal length f is seen at
# σ' = σ(1 − Ω/4π), Ω ≈ π d²/(4 f²) (the shift checked against the cone integral above). The
# simulated record holds that apparent spectrum: the same LED shape scaled in wavenumber, so
# its true figures are the apparent ones × (1 − Ω/4π) exactly.

D_STOP, F_COLL = 0.010, 0.050  # m: Ω = 0.0314 sr, Ω/4π = 2.5e-3 (a large, visible shift)


def _fov_analysis(source, **opts):
    from ftsource import simulate as S
    from ftsource.analysis import AnalysisOptions, analyze

    sim = S.simulate(source, S.Scan(sample_rate_hz=100_000, duration_s=0.5, opd_centre_cm=0.0,
                                    opd_amplitude_cm=0.02, sweep_rate_hz=4.0),
                     S.ReferenceChannel(), S.Detector(noise_rms=0.001), rng=5)
    return analyze(sim.record, AnalysisOptions(reference_wavelength_nm=632.991, medium="vacuum",
                                               **opts)).to_dict()


def test_led_through_a_field_stop_is_corrected():
    from ftsource import simulate as S
    from ftsource.measure.broadband import broadband_metrics

    eps = 1 - 1 / field_of_view_correction(1.0, field_solid_angle(D_STOP, F_COLL))
    # the exact cone, Ω = 2π(1 − cos θ) with tan θ = d/2f (≈ π d²/4f² for a small stop)
    omega = 2 * np.pi * (1 - np.cos(np.arctan(D_STOP / (2 * F_COLL))))
    assert eps == pytest.approx(omega / (4 * np.pi), rel=1e-12)
    apparent = S.led(590.0 / (1 - eps), 20.0 / (1 - eps))
    true = S.led(590.0, 20.0)
    sig = np.linspace(1e7 / 680.0, 1e7 / 500.0, 200_001)
    truth = broadband_metrics(1e7 / sig, true.density(sig) * sig**2 / 1e7, None,
                              n_monte_carlo=0)
    raw = _fov_analysis(apparent)["summary"]
    # uncorrected: 2.5e-3 long, 1.48 nm at 590 nm
    assert raw["centroid_wavelength_nm"] == pytest.approx(truth.centroid_nm / (1 - eps), abs=0.1)
    d = _fov_analysis(apparent, aperture_diameter_m=D_STOP, focal_length_m=F_COLL)
    s = d["summary"]
    assert abs(s["centroid_wavelength_nm"] - truth.centroid_nm) < 0.1
    assert abs(s["centre_wavelength_nm"] - truth.centroid_nm) < 0.1
    assert any("corrected for the field of view" in w for w in d["warnings"])
    comp = {c["name"]: c for c in d["uncertainty"]["components"]}
    # half the correction, rectangular: u = λ·(Ω/4π)/(1 − Ω/4π)/(2√3)
    assert comp["field of view"]["u_nm"] == pytest.approx(
        s["centre_wavelength_nm"] * eps / (1 - eps) / (2 * np.sqrt(3)), rel=2e-3)


def test_laser_through_a_field_stop_is_not_corrected():
    from ftsource import simulate as S
    d = _fov_analysis(S.laser(650.0), aperture_diameter_m=D_STOP, focal_length_m=F_COLL)
    assert any("not to a laser beam" in w for w in d["warnings"])
    assert d["summary"]["centre_wavelength_nm"] == pytest.approx(650.0, abs=1e-3)
    assert "field of view" not in {c["name"] for c in d["uncertainty"]["components"]}
