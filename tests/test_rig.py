"""Rig calibration from a record of a known line (ftsource.rig).

Oracle: the simulator (itself tested against closed forms in test_simulate.py) with a reference
laser whose true vacuum wavelength differs from the nominal value the analysis is told, as an
unstabilised He-Ne may (CIPM 2007: u_r = 1.5e-6 for the free-running 633 nm He-Ne).

Source: CIPM Recommendation 2 (CI-2007), list of standard frequencies, as quoted in
../shared/reference/check-values.md (He-Ne 633 nm unstabilised, and the I2-stabilised
frequency-doubled Nd:YAG at 532 nm).
"""

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.calibrate.calibration import load_calibration, save_calibration
from ftsource.errors import AnalysisError
from ftsource.rig import calibrate_rig

NOMINAL = 632.991
TRUE_REF = 632.99185  # 1.34 ppm longer than nominal: the bias a calibration must remove
# I2-stabilised Nd:YAG doubled, 532.245 036 10 nm vacuum (check-values §6, "M/V2"); here it is
# only the known line of the simulation, so its published value need not be exact
KNOWN = 532.24503610


def _record(wl, seed):
    sim = S.simulate(
        S.laser(wl),
        S.Scan(duration_s=1.0, opd_centre_cm=0.2, opd_amplitude_cm=0.1),
        S.ReferenceChannel(wavelength_nm=TRUE_REF),
        S.Detector(noise_rms=0.003),
        rng=seed,
    )
    return sim.record


def test_uncalibrated_rig_is_biased_by_the_reference_error():
    opts = AnalysisOptions(reference_wavelength_nm=NOMINAL, medium="vacuum",
                           reference_uncertainty_ppm=0.0)
    r = analyze(_record(650.0, 1), opts).to_dict()["summary"]
    # closed form: every wavelength scales with the assumed reference wavelength
    expected = 650.0 * NOMINAL / TRUE_REF
    assert r["centre_wavelength_nm"] == pytest.approx(expected, abs=3e-5)


def test_calibration_then_second_record_within_its_uncertainty(tmp_path):
    opts = AnalysisOptions(reference_wavelength_nm=NOMINAL, medium="vacuum")
    cal, res = calibrate_rig(_record(KNOWN, 2), opts, KNOWN, 0.0)
    # the effective reference absorbs the reference's true wavelength (closed form)
    assert cal.effective_reference_wavelength_nm == pytest.approx(TRUE_REF, rel=1e-7)
    # deviation_ppm = (λ_ref,eff/λ_ref − 1)·10⁶ (ftsource.calibrate.calibration's definition)
    assert cal.deviation_ppm == pytest.approx((TRUE_REF / NOMINAL - 1) * 1e6, abs=0.1)
    path = tmp_path / "rig.json"
    save_calibration(path, cal)
    cal2 = load_calibration(path)
    r = analyze(_record(650.0, 3), AnalysisOptions(reference_wavelength_nm=NOMINAL,
                                                 medium="vacuum", calibration=cal2))
    s = r.to_dict()["summary"]
    assert abs(s["centre_wavelength_nm"] - 650.0) <= s["expanded_uncertainty_nm"]
    # and the calibration's own uncertainty replaced the nominal 1.5 ppm of the reference
    assert r.input.reference_uncertainty_ppm == pytest.approx(cal.u_effective_rel * 1e6)
    assert r.input.reference_uncertainty_ppm < 1.5


def test_calibration_refuses_a_record_without_a_line():
    sim = S.simulate(S.laser(650.0, strength=1e-9),
                     S.Scan(duration_s=0.5, opd_centre_cm=0.2, opd_amplitude_cm=0.1),
                     S.ReferenceChannel(), S.Detector(noise_rms=0.01), rng=4)
    with pytest.raises(AnalysisError):
        calibrate_rig(sim.record, AnalysisOptions(reference_wavelength_nm=NOMINAL,
                                                  medium="vacuum"), KNOWN, 0.0)
    assert np.isfinite(KNOWN)


# --------------------------------------------------------------------------------------------
# rigs without a reference laser: the calibration rescales the encoder or the assumed speed


LINEAR = S.Scan(duration_s=1.0, opd_centre_cm=0.2, opd_amplitude_cm=0.1, sweep_rate_hz=0.1,
                shape=0.999, speed_jitter=0.0, start_phase_rad=-0.3)
#: Mirror speed of that scan, m/s: half its OPD speed (Scan.peak_opd_speed_cm_s, closed form
#: tested in test_simulate.py); over |θ| ≤ 0.33 rad the speed stays within 1e-4 of it.
MIRROR_SPEED = LINEAR.peak_opd_speed_cm_s / 2 / 100


def _linear_scan(wl, seed, kind):
    """One steady sweep: θ from −0.3 to +0.33 rad of a near-triangle (k = 0.999), where
    dd/dθ ∝ k cos θ/√(1 − k² sin² θ) = k(1 − (1 − k²)θ²/2 + …) is constant to 1e-4."""
    return S.simulate(
        S.laser(wl), LINEAR, S.ReferenceChannel(kind=kind), S.Detector(noise_rms=0.003),
        rng=seed,
    ).record


def test_constant_speed_rig_calibrated_from_a_known_line(tmp_path):
    # the user's guess of the speed is 3 % high: every wavelength comes out 3 % long
    guess = MIRROR_SPEED * 1.03
    opts = AnalysisOptions(mirror_speed_m_s=guess, medium="vacuum")
    raw = analyze(_linear_scan(650.0, 5, "none"), opts).to_dict()["summary"]
    assert raw["centre_wavelength_nm"] == pytest.approx(650.0 * 1.03, rel=2e-3)
    cal, _ = calibrate_rig(_linear_scan(KNOWN, 6, "none"), opts, KNOWN, 1e-6)
    assert cal.opd_scale == "constant-speed"
    # closed form: the speed scale is λ_known/λ_measured ≈ 1/1.03 (to the sweep's linearity)
    assert cal.scale == pytest.approx(1 / 1.03, rel=2e-3)
    path = tmp_path / "rig.json"
    save_calibration(path, cal)
    cal2 = load_calibration(path)
    assert cal2 == cal
    r = analyze(_linear_scan(650.0, 7, "none"), AnalysisOptions(
        mirror_speed_m_s=guess, medium="vacuum", calibration=cal2)).to_dict()
    s = r["summary"]
    assert abs(s["centre_wavelength_nm"] - 650.0) <= s["expanded_uncertainty_nm"]
    names = [c["name"] for c in r["uncertainty"]["components"]]
    assert "rig calibration" in names and "assumed mirror speed" not in names
    assert any("calibrated here from a known line" in w for w in r["warnings"])


def test_encoder_rig_calibrated_from_a_known_line():
    # an encoder whose scale is 200 ppm off: the record's position column is 1.0002× the truth
    from dataclasses import replace

    def rec(wl, seed):
        r = _linear_scan(wl, seed, "encoder")
        return replace(r, columns={**r.columns, "position": r.columns["position"] * 1.0002})

    opts = AnalysisOptions(medium="vacuum")
    raw = analyze(rec(650.0, 8), opts).to_dict()["summary"]
    assert raw["centre_wavelength_nm"] == pytest.approx(650.0 * 1.0002, rel=2e-5)
    cal, _ = calibrate_rig(rec(KNOWN, 9), opts, KNOWN, 1e-6)
    assert cal.opd_scale == "encoder"
    assert cal.scale == pytest.approx(1 / 1.0002, rel=2e-5)
    s = analyze(rec(650.0, 10),
                AnalysisOptions(medium="vacuum", calibration=cal)).to_dict()["summary"]
    assert abs(s["centre_wavelength_nm"] - 650.0) <= s["expanded_uncertainty_nm"]


def test_calibration_of_another_kind_of_rig_is_refused():
    from ftsource.errors import OptionError

    opts = AnalysisOptions(mirror_speed_m_s=MIRROR_SPEED, medium="vacuum")
    cal, _ = calibrate_rig(_linear_scan(KNOWN, 11, "none"), opts, KNOWN, 1e-6)
    with pytest.raises(OptionError, match="calibrate with a record of the same kind"):
        analyze(_record(650.0, 12), AnalysisOptions(reference_wavelength_nm=NOMINAL,
                                                    medium="vacuum", calibration=cal))


def test_calibration_file_without_opd_scale_is_a_reference_calibration(tmp_path):
    import json

    from ftsource.calibrate.calibration import calibrate_reference

    cal = calibrate_reference(650.0001, 1e-5, 650.0, 1e-6, NOMINAL, 1.5e-6)
    doc = cal.to_dict()
    del doc["opd_scale"]  # as written before the key existed
    path = tmp_path / "old.json"
    path.write_text(json.dumps(doc), encoding="utf-8")
    assert load_calibration(path).opd_scale == "reference"
    doc["opd_scale"] = "guesswork"
    path.write_text(json.dumps(doc), encoding="utf-8")
    from ftsource.errors import OptionError

    with pytest.raises(OptionError, match="opd_scale"):
        load_calibration(path)


def test_calibration_with_a_stabilised_hene_against_a_hene_reference(tmp_path):
    # The usual bench check: a stabilised He-Ne (CIPM 2007, iodine-stabilised 633 nm:
    # 632.99121258 nm, check-values §6) as the known source, seen by a rig whose reference is a
    # free-running He-Ne. Its line sits at the reference wavenumber; alone in the spectrum it
    # is the source, not reference light (a note says how to tell them apart).
    known = 632.99121258
    opts = AnalysisOptions(reference_wavelength_nm=NOMINAL, medium="vacuum")
    cal, res = calibrate_rig(_record(known, 13), opts, known, 1e-8)
    assert any("reference laser's wavelength" in w for w in res.warnings)
    assert cal.effective_reference_wavelength_nm == pytest.approx(TRUE_REF, rel=1e-7)
    s = analyze(_record(650.0, 14), AnalysisOptions(
        reference_wavelength_nm=NOMINAL, medium="vacuum", calibration=cal)).to_dict()["summary"]
    assert abs(s["centre_wavelength_nm"] - 650.0) <= s["expanded_uncertainty_nm"]
