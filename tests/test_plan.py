"""Tests for ftsource.plan and `ftsource plan`: each formula against a closed form, a textbook
relation named beside it, or numpy's matrix product."""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from cli_helpers import assert_clean_error, run
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource import plan as pl
from ftsource.errors import OptionError


def _np_two_lens(f1, f2, d):
    """Saleh & Teich, Fundamentals of Photonics §1.4: M = L(f2) T(d) L(f1), built with numpy."""
    lens = lambda f: np.array([[1.0, 0.0], [-1.0 / f, 1.0]])  # noqa: E731
    prop = np.array([[1.0, d], [0.0, 1.0]])
    return lens(f2) @ prop @ lens(f1)


# ---- collimator (ABCD)

@settings(max_examples=60, deadline=None)
@given(st.floats(5, 500), st.floats(5, 500), st.floats(0.1, 5))
def test_spacing_makes_the_pair_afocal(f1, f2, r):
    """Afocal (telescope) condition C = 0 at d = f1 + f2 (Saleh & Teich §1.4; Hecht §6.2):
    a ray entering parallel leaves parallel, and the angular magnification is −f1/f2
    (A = −f2/f1, D = −f1/f2; closed forms of the Kepler telescope)."""
    d = pl.collimator_spacing(f1, f2)
    assert d == pytest.approx(f1 + f2, rel=1e-15)
    m = _np_two_lens(f1, f2, d)
    assert m[1, 0] == pytest.approx(0.0, abs=1e-12 / min(f1, f2))
    assert m[0, 0] == pytest.approx(-f2 / f1, rel=1e-9)
    assert m[1, 1] == pytest.approx(-f1 / f2, rel=1e-9)
    ours = np.array(pl.two_lens_matrix(f1, f2, d))
    np.testing.assert_allclose(ours, m, rtol=1e-12, atol=1e-12)
    out = m @ np.array([r, 0.0])
    assert out[1] == pytest.approx(0.0, abs=1e-12)


def test_galilean_expander_spacing():
    """A Galilean expander of a −10 mm and a +50 mm lens: d = f1 + f2 = 40 mm, 5× (closed
    form; Hecht §6.2 treats the Galilean telescope)."""
    assert pl.collimator_spacing(-10.0, 50.0) == 40.0
    m = _np_two_lens(-10.0, 50.0, 40.0)
    assert m[1, 0] == pytest.approx(0.0, abs=1e-15)
    assert m[0, 0] == pytest.approx(5.0)


@settings(max_examples=60, deadline=None)
@given(st.floats(5, 500), st.floats(5, 500), st.floats(-3, 3), st.floats(0.1, 5))
def test_residual_divergence_is_the_traced_ray_slope(f1, f2, delta, r):
    """A spacing f1 + f2 + δ: the ray entering parallel at height r leaves with the slope
    numpy's matrix product gives, which is δ·r/(f1·f2) exactly (the C element)."""
    traced = (_np_two_lens(f1, f2, f1 + f2 + delta) @ np.array([r, 0.0]))[1]
    assert pl.residual_divergence(f1, f2, delta, r) == pytest.approx(traced, rel=1e-9,
                                                                     abs=1e-15)


def test_collimator_refuses_a_pair_that_cannot_be_afocal():
    with pytest.raises(OptionError, match="f1 \\+ f2"):
        pl.collimator_spacing(-50.0, 10.0)
    with pytest.raises(OptionError, match="f1"):
        pl.collimator_spacing(0.0, 10.0)


# ---- thin lens

def test_focal_length_worked_example():
    """Thin-lens equation 1/f = 1/s_o + 1/s_i (Hecht, Optics §5.2): an object 300 mm before
    the lens imaged 150 mm behind it gives f = 300·150/450 = 100 mm (closed form); the 2f–2f
    arrangement (s_o = s_i = 2f) gives f back."""
    f, _ = pl.focal_length_from_distances(300.0, 150.0)
    assert f == pytest.approx(100.0, rel=1e-15)
    f2, _ = pl.focal_length_from_distances(80.0, 80.0)
    assert f2 == pytest.approx(40.0, rel=1e-15)


@settings(max_examples=50, deadline=None)
@given(st.floats(20, 2000), st.floats(20, 2000), st.floats(0.01, 5), st.floats(0.01, 5))
def test_focal_length_uncertainty_is_first_order_propagation(so, si, uo, ui):
    """u(f) from JCGM 100 eq. (10) with the partial derivatives taken numerically (central
    differences) instead of the closed forms the code uses."""
    f, u = pl.focal_length_from_distances(so, si, uo, ui)
    h = 1e-4
    d_o = (pl.focal_length_from_distances(so + h, si)[0]
           - pl.focal_length_from_distances(so - h, si)[0]) / (2 * h)
    d_i = (pl.focal_length_from_distances(so, si + h)[0]
           - pl.focal_length_from_distances(so, si - h)[0]) / (2 * h)
    assert u == pytest.approx(math.hypot(d_o * uo, d_i * ui), rel=1e-5)
    assert 1 / f == pytest.approx(1 / so + 1 / si, rel=1e-12)


# ---- Jacquinot and the scan

def test_jacquinot_solid_angle_and_aperture():
    """Ω_max = 2π/R with R = σ/Δσ (Jacquinot 1954, JOSA 44:761); for small fields the stop
    diameter is 2f·√(Ω/π) (small-angle closed form of Ω = π(d/2f)²)."""
    omega = pl.jacquinot_solid_angle(0.5, 25000.0)
    assert omega == pytest.approx(2 * math.pi / 50000.0, rel=1e-15)
    d = pl.jacquinot_aperture_diameter(omega, 100.0)
    assert d == pytest.approx(2 * 100.0 * math.sqrt(omega / math.pi), rel=1e-4)
    # exact cone: Ω = 2π(1 − cos θ) with tan θ = d/2f (closed form)
    big = pl.jacquinot_aperture_diameter(0.5, 10.0)
    theta = math.atan(big / 20.0)
    assert 2 * math.pi * (1 - math.cos(theta)) == pytest.approx(0.5, rel=1e-12)


@pytest.mark.parametrize("apodization, factor", [("boxcar", 1.20671), ("hann", 2.0)])
def test_scan_plan_closed_forms(apodization, factor):
    """Griffiths & de Haseth, FTIR Spectrometry ch. 2: a boxcar scan to L has an ILS FWHM of
    1.2067/(2L) (the sinc's half-maximum width, 2·1.89549/π, closed form); Hann 2/(2L).
    Mirror travel for ±L is L; fringes at σ arrive at v_opd·σ and must stay below β·f_s; the
    reference's at v_opd/λ_ref (one fringe per λ/2 of mirror travel, common practice)."""
    p = pl.plan_scan(1.0, 500.0, sample_rate_hz=48_000, bandwidth_fraction=0.45,
                     reference_wavelength_nm=632.991, apodization=apodization)
    assert p.max_opd_cm == pytest.approx(factor / 2.0, rel=1e-5)
    assert p.mirror_travel_cm == p.max_opd_cm
    assert p.opd_speed_cm_s == pytest.approx(0.45 * 48_000 / 20_000.0, rel=1e-12)
    assert p.mirror_speed_cm_s == pytest.approx(p.opd_speed_cm_s / 2, rel=1e-15)
    assert p.source_fringe_rate_hz == pytest.approx(0.45 * 48_000, rel=1e-12)
    assert p.reference_fringe_rate_hz == pytest.approx(p.opd_speed_cm_s / 632.991e-7, rel=1e-12)
    assert p.sweep_time_s == pytest.approx(2 * p.max_opd_cm / p.opd_speed_cm_s, rel=1e-12)
    assert p.solid_angle_sr == pytest.approx(2 * math.pi * 1.0 / 20_000.0, rel=1e-12)


def test_planned_speed_keeps_the_band_alias_free():
    """The planned speed and sample rate put the band's short end exactly at the limit the
    analysis uses, λ_min = v_max/(β f_s) (ftsource.interferogram.resample.sampling_limits,
    same closed form, here evaluated independently)."""
    p = pl.plan_scan(2.0, 420.0, sample_rate_hz=96_000, bandwidth_fraction=0.5)
    lam_min_nm = p.opd_speed_cm_s / (0.5 * 96_000) * 1e7
    assert lam_min_nm == pytest.approx(420.0, rel=1e-12)


def test_resolvability():
    """Δσ = Δλ/λ² (closed form): 0.02 nm at 500 nm is 0.8 cm⁻¹; a Happ–Genzel scan to
    ±1.81522/(2·0.8) cm just resolves it."""
    r = pl.resolvability(0.02, 500.0, 1.0)
    assert r.line_fwhm_per_cm == pytest.approx(0.8, rel=1e-12)
    assert r.ils_fwhm_per_cm == pytest.approx(1.81522 / 2.0, rel=1e-5)
    assert not r.resolved
    assert r.needed_max_opd_cm == pytest.approx(1.81522 / 1.6, rel=1e-5)
    assert pl.resolvability(0.02, 500.0, 1.01 * r.needed_max_opd_cm).resolved
    assert not pl.resolvability(0.02, 500.0, 0.99 * r.needed_max_opd_cm).resolved


def test_plan_refuses_bad_inputs():
    with pytest.raises(OptionError, match="resolution_per_cm"):
        pl.plan_scan(-1.0, 500.0)
    with pytest.raises(OptionError, match="band"):
        pl.plan_scan(1.0, 900.0, longest_wavelength_nm=500.0)
    with pytest.raises(OptionError, match="bandwidth_fraction"):
        pl.plan_scan(1.0, 500.0, bandwidth_fraction=0.7)


# ---- command line

def test_plan_command(capsys):
    status, out, err = run(capsys, [
        "plan", "--resolution", "0.5/cm", "--focal-length", "100mm", "--linewidth", "0.01nm",
        "--lens1=-10mm", "--lens2", "50mm", "--object-distance", "300mm",
        "--image-distance", "150mm",
    ])
    assert status == 0, err
    assert "mirror travel" in out and "Jacquinot" in out
    assert "spaced 40 mm" in out
    assert "focal length 100 mm" in out


def test_plan_json(capsys):
    status, out, _ = run(capsys, ["plan", "--resolution", "1/cm", "--band", "500nm:900nm",
                                  "--json", "--apodization", "boxcar"])
    assert status == 0
    d = json.loads(out)
    assert d["scan"]["max_opd_cm"] == pytest.approx(1.20671 / 2, rel=1e-5)


@pytest.mark.parametrize("argv, fragment", [
    (["plan"], "nothing to plan"),
    (["plan", "--lens1", "10mm"], "--lens2"),
    (["plan", "--linewidth", "0.1nm"], "--max-opd"),
    (["plan", "--resolution", "1/cm", "--band", "500nm"], "--band"),
])
def test_plan_errors(capsys, argv, fragment):
    status, _, err = run(capsys, argv)
    assert_clean_error(status, err, fragment)


def test_plan_help_states_defaults(capsys):
    status, out, _ = run(capsys, ["plan", "--help"])
    assert status == 0
    options = out.split("options:", 1)[1]
    for opt in ("--band", "--sample-rate", "--bandwidth-fraction", "--spacing-error",
                "--beam-diameter", "--distance-uncertainty"):
        block = options.split(opt, 1)[1].split("\n  --", 1)[0]
        assert "default" in block, opt
