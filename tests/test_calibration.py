"""Tests of ftsource.calibrate.calibration: the rig's effective reference wavelength from a
known line.

Sources:
* closed form: the rig's OPD is counted in reference fringes, so λ_measured = λ_ref·N and
  λ_ref,eff = λ_ref·λ_known/λ_measured; relative uncertainties of a quotient add in quadrature
  (JCGM 100:2008, §5.1.6);
* closed form: a reference beam tilted by θ against the mirror's travel counts fringes of the
  projected path, ``d·cos θ`` (cosine error), so λ_ref,eff = λ_ref/cos θ;
* the fringe-phase simulation below is written here from those closed forms; the slope is
  fitted with ``numpy.polyfit`` (PyPI ``numpy``);
* JSON: RFC 8259 via the standard library.
The wavelengths used (632.991 nm, 532 nm, 780 nm) are just numbers for the tests.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource.calibrate.calibration import (
    FILE_KIND,
    RigCalibration,
    calibrate_reference,
    load_calibration,
    save_calibration,
)
from ftsource.errors import AnalysisError, OptionError, OutputError

REF_NM = 632.991  # nominal reference wavelength (a number for the tests)


def test_closed_form():
    # source: closed form λ_eff = λ_ref·λ_k/λ_m, u_rel = √((u_m/λ_m)² + (u_k/λ_k)²)
    lm, um, lk, uk = 532.0021, 0.0004, 532.0, 0.0003
    cal = calibrate_reference(lm, um, lk, uk, REF_NM, 1e-6)
    assert cal.effective_reference_wavelength_nm == pytest.approx(REF_NM * lk / lm, rel=1e-15)
    assert cal.u_effective_rel == pytest.approx(math.hypot(um / lm, uk / lk), rel=1e-15)
    assert cal.deviation_ppm == pytest.approx((lk / lm - 1) * 1e6, rel=1e-9)
    assert cal.u_deviation_ppm == pytest.approx(cal.u_effective_rel * lk / lm * 1e6, rel=1e-12)
    # closed form: the nominal reference's uncertainty cancels - it does not enter u_eff
    other = calibrate_reference(lm, um, lk, uk, REF_NM, 5e-4)
    assert other.u_effective_rel == cal.u_effective_rel
    assert other.normalized_deviation != cal.normalized_deviation
    # closed form: the effective value is λ_known/N whatever nominal value was assumed
    n_ratio = lm / REF_NM
    assumed = 633.5
    again = calibrate_reference(n_ratio * assumed, um, lk, uk, assumed, 1e-6)
    assert again.effective_reference_wavelength_nm == pytest.approx(lk / n_ratio, rel=1e-13)


def simulated_measurement(true_wavelength_nm, ref_true_nm, theta_rad, seed):
    """The rig measuring a line: fringe phases along 0.5 cm of OPD, 200 001 samples.

    The source beam travels along the mirror axis (phase 2π·d/λ); the tilted reference sees
    d·cos θ (closed form) and the rig takes x = (reference fringes)·λ_ref,nominal as its OPD.
    The measured wavenumber is the fitted slope of the source phase against x, with 0.01 rad of
    phase noise; its standard uncertainty is the fit's.
    """
    rng = np.random.default_rng(seed)
    d_cm = np.linspace(0.0, 0.5, 200_001)
    ref_fringes = d_cm * math.cos(theta_rad) / (ref_true_nm * 1e-7)
    x_cm = ref_fringes * REF_NM * 1e-7
    phase = 2 * np.pi * d_cm / (true_wavelength_nm * 1e-7) + rng.normal(0, 0.01, d_cm.size)
    (slope, _), cov = np.polyfit(x_cm, phase, 1, cov=True)
    sigma = slope / (2 * np.pi)
    u_sigma = math.sqrt(cov[0, 0]) / (2 * np.pi)
    wl = 1e7 / sigma
    return wl, wl * u_sigma / sigma


@pytest.mark.parametrize("theta_mrad, ref_offset_ppm", [(4.0, 0.0), (2.0, 1.5), (0.0, -3.0)])
def test_cosine_error_absorbed(theta_mrad, ref_offset_ppm):
    # source: closed form λ_eff = λ_ref,true/cos θ; agreement within 4 standard uncertainties
    theta = theta_mrad * 1e-3
    ref_true = REF_NM * (1 + ref_offset_ppm * 1e-6)
    lm, um = simulated_measurement(532.0, ref_true, theta, seed=11)
    assert abs(lm / 532.0 - math.cos(theta) * REF_NM / ref_true) < 1e-8  # the bias is there
    cal = calibrate_reference(lm, um, 532.0, 0.0, REF_NM, 2e-6)
    expected = ref_true / math.cos(theta)
    assert cal.effective_reference_wavelength_nm == pytest.approx(
        expected, rel=4 * cal.u_effective_rel
    )
    expected_ppm = (1 / math.cos(theta) * (1 + ref_offset_ppm * 1e-6) - 1) * 1e6
    assert cal.deviation_ppm == pytest.approx(expected_ppm, abs=4 * cal.u_deviation_ppm)
    # the calibration then corrects another line measured on the same rig
    l2, u2 = simulated_measurement(780.0, ref_true, theta, seed=12)
    corrected = cal.apply(l2)
    assert corrected == pytest.approx(780.0, abs=4 * cal.u_applied_nm(l2, u2))


def test_large_mismatch_is_refused():
    # a 1000 ppm cosine error needs a 2.6° tilt: a 1 % mismatch is the wrong line
    with pytest.raises(AnalysisError, match="same line"):
        calibrate_reference(537.0, 0.001, 532.0, 0.0, REF_NM, 1e-6)
    with pytest.raises(OptionError, match="u_known_nm"):
        calibrate_reference(532.0, 0.001, 532.0, -0.1, REF_NM, 1e-6)
    with pytest.raises(OptionError, match="reference_wavelength_nm"):
        calibrate_reference(532.0, 0.001, 532.0, 0.0, math.nan, 1e-6)
    with pytest.raises(OptionError, match="u_reference_rel"):
        calibrate_reference(532.0, 0.001, 532.0, 0.0, REF_NM, True)


@settings(max_examples=200, deadline=None)
@given(
    measured=st.floats(200.0, 20000.0),
    eps=st.floats(-9e-4, 9e-4),
    ref=st.floats(400.0, 1600.0),
)
def test_apply_returns_known_exactly(measured, eps, ref):
    # source: closed form - the calibration line itself maps onto the known value, bit for bit
    known = measured * (1 + eps)
    cal = calibrate_reference(measured, 1e-4, known, 0.0, ref, 1e-6)
    assert cal.apply(measured) == known
    assert cal.apply(np.array([measured, measured]))[1] == known
    back = RigCalibration(**{k: v for k, v in vars(cal).items()})
    assert back.apply(measured) == known


def test_json_round_trip(tmp_path):
    cal = calibrate_reference(532.0021, 0.0004, 532.0, 0.0003, REF_NM, 1e-6,
                              label="532 nm line", date="2024-05-01")
    path = tmp_path / "rig.json"
    save_calibration(path, cal)
    doc = json.loads(path.read_text())
    assert doc["kind"] == FILE_KIND and doc["version"] == 1
    assert load_calibration(path) == cal
    with pytest.raises(OutputError, match="exists"):
        save_calibration(path, cal)
    save_calibration(path, cal, overwrite=True)
    assert load_calibration(path) == cal
    assert [p.name for p in tmp_path.iterdir()] == ["rig.json"]  # no temporary files left


def _good_doc():
    cal = calibrate_reference(532.0021, 0.0004, 532.0, 0.0003, REF_NM, 1e-6)
    return cal.to_dict()


def _edited(**changes):
    doc = _good_doc()
    for k, v in changes.items():
        if v is _DROP:
            del doc[k]
        else:
            doc[k] = v
    return json.dumps(doc)


_DROP = object()


@pytest.mark.parametrize(
    "content",
    [
        b"",
        b"{",
        b"\xff\xfe not utf-8",
        b"[1, 2, 3]",
        b'"just a string"',
        b"[" * 100_000 + b"]" * 100_000,  # deep nesting (over the size limit too)
        b"[" * 5000 + b"]" * 5000,  # deep nesting under the size limit
        b" " * 70_000 + b"{}",
        _edited(kind="something-else").encode(),
        _edited(kind=_DROP).encode(),
        _edited(version=2).encode(),
        _edited(version=True).encode(),
        _edited(version="1").encode(),
        _edited(u_known_nm=_DROP).encode(),
        _edited(u_known_nm=-0.1).encode(),
        _edited(u_known_nm="0.1").encode(),
        _edited(u_known_nm=None).encode(),
        _edited(u_known_nm=True).encode(),
        _edited(u_known_nm=[0.1]).encode(),
        _edited(reference_wavelength_nm=1e999).encode(),  # parsed as inf
        _edited(reference_wavelength_nm=0).encode(),
        _edited(u_reference_rel=0.5).encode(),
        _edited(effective_reference_wavelength_nm=640.0).encode(),  # does not follow
        _edited(deviation_ppm=0.0).encode(),
        _edited(path="/etc/passwd").encode(),  # unknown key, never used as a path
        _edited(label="x" * 500).encode(),
        _edited(label="line\nbreak").encode(),
        _edited(date=20240501).encode(),
        _edited(measured_wavelength_vac_nm=600.0).encode(),  # wrong line: 12 % off
        _good_doc().__repr__().encode(),  # Python repr, not JSON
        json.dumps(_good_doc()).replace("0.0003", "NaN").encode(),
        json.dumps(_good_doc()).replace("0.0003", "Infinity").encode(),
        json.dumps(_good_doc())[:-1].encode() + b', "u_known_nm": 0.0003}',  # repeated key
        b'{"__class__": "os.system", "args": ["echo hi"]}',
    ],
)
def test_hostile_files_raise_option_error(tmp_path, content):
    path = tmp_path / "rig.json"
    path.write_bytes(content)
    with pytest.raises(OptionError) as info:
        load_calibration(path)
    message = str(info.value)
    assert "\n" not in message and message.startswith(str(path))


def test_missing_file_and_directory(tmp_path):
    with pytest.raises(OptionError, match="cannot be read"):
        load_calibration(tmp_path / "none.json")
    with pytest.raises(OptionError, match="cannot be read"):
        load_calibration(tmp_path)
    with pytest.raises(OutputError, match="directory"):
        save_calibration(tmp_path, _calibration())
    with pytest.raises(OptionError, match="RigCalibration"):
        save_calibration(tmp_path / "x.json", {"kind": FILE_KIND})


def _calibration():
    return calibrate_reference(532.0021, 0.0004, 532.0, 0.0003, REF_NM, 1e-6)


def test_uncertainty_of_applied_value():
    # source: GUM §5.1.6 - relative uncertainties of a product add in quadrature
    cal = _calibration()
    w, uw = 780.0, 0.002
    expected = cal.apply(w) * math.hypot(uw / w, cal.u_effective_rel)
    assert cal.u_applied_nm(w, uw) == pytest.approx(expected, rel=1e-15)
