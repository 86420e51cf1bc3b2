"""``ftsource lines`` in air at given conditions, line identification in the result JSON, and
the input checks of ``ftsource calibrate`` (in-process ``main``).

Oracles:

* ``ref-index`` (PyPI ``ref_index``, an independent implementation of the NIST Appendix A
  Ciddor equation; see tests/test_air.py and check-values.md §5) and ``ftsource.physics.air``:
  λ_air = λ_vac / n(λ_vac) (NIST Refractive Index of Air Calculator, eq. 1).
* check-values.md §6: vacuum and standard-air line values (Ne I 640.2248 nm air → 640.40178 nm
  vacuum, V2/C; Ar I 696.5431 nm air → 696.73523 nm vacuum, V2/C; Na D2 588.9950 nm air, V);
  the I₂-stabilised He–Ne 632.99121258 nm (CIPM, V) is 632.81948 nm in air at 20 °C,
  101 325 Pa, 50 % RH (C); CIPM 2007 Rec. 2: unstabilised He–Ne u_r = 1.5×10⁻⁶ (V).
* records from ftsource.simulate (closed-form forward model, tests/test_simulate.py): the
  truth is the simulated line.
* the JSON schema shipped as ftsource/schema/result-2.json, checked with ``jsonschema``.
"""

from __future__ import annotations

import json
import math
from importlib import resources

import jsonschema
import numpy as np
import pytest
import ref_index

from ftsource import simulate as sim
from ftsource.calibrate.calibration import load_calibration
from ftsource.cli import main
from ftsource.errors import OptionError
from ftsource.io.records import write_record_npz
from ftsource.linelists import entries_with_value, pick_entry, search_lines
from ftsource.physics.air import ciddor_index

NE_640_VAC = 640.40178  # check-values §6 (V2 air / C vacuum)
AR_697_VAC = 696.73523  # check-values §6 (V2 air / C vacuum)
I2_633_VAC = 632.99121258  # CIPM recommended radiation (V), check-values §6
HENE_FREE_VAC = 632.9908  # CIPM 2007 Rec. 2 (V)
I2_532_VAC = 532.2450361  # c/f, f = 563 260 223 513 kHz (check-values §6: M and V2)


def _run(capsys, argv):
    code = main(argv)
    cap = capsys.readouterr()
    return code, cap.out, cap.err


def _one_error_line(err):
    lines = err.strip().splitlines()
    assert len(lines) == 1 and lines[0].startswith("error: "), err
    return lines[0]


# ---------------------------------------------------------------------------------------------
# ftsource lines: air at given conditions
# ---------------------------------------------------------------------------------------------
AIR = ["--air-temperature", "25degC", "--air-pressure", "95kPa", "--air-humidity", "30%"]


@pytest.mark.parametrize(("near", "vac"), [("640.4nm", NE_640_VAC), ("546.225nm", 546.22526)])
def test_air_wavelength_at_given_conditions_is_vacuum_over_ciddor_index(capsys, near, vac):
    code, out, err = _run(capsys, ["lines", "--near", near, "--tolerance", "0.01nm", *AIR,
                                   "--json"])
    assert code == 0, err
    rows = [r for r in json.loads(out) if r["kind"] == "atomic line"]
    assert len(rows) == 1
    r = rows[0]
    # the list's vacuum value (check-values §6, C) to its printed digits
    assert r["wavelength_vac_nm"] == pytest.approx(vac, abs=1e-5)
    wl = r["wavelength_vac_nm"]
    # λ_air = λ_vac / n (NIST calculator eq. 1), n from ftsource.physics.air and from ref-index
    assert r["wavelength_air_nm"] == pytest.approx(wl / ciddor_index(wl, 25.0, 95e3, 30.0),
                                                   rel=1e-13)
    assert r["wavelength_air_nm"] == pytest.approx(wl / ref_index.ciddor(wl, 25.0, 95e3, 30.0),
                                                   rel=1e-11)
    assert r["air_convention"] == "given conditions"
    assert r["air_conditions"] == {"temperature_c": 25.0, "pressure_pa": 95000.0,
                                   "humidity_percent": 30.0, "co2_ppm": 450.0}
    # u(n) from sensor-class uncertainties of the given values: a few 1e-7 (ftsource.physics.air)
    assert 1e-8 < r["u_air_index"] < 2e-6


def test_iodine_hene_in_laboratory_air_matches_check_value(capsys):
    code, out, _ = _run(capsys, ["lines", "--near", "632.9912nm", "--tolerance", "0.0001nm",
                                 "--air-temperature", "20degC", "--air-pressure", "101325Pa",
                                 "--air-humidity", "50%", "--json"])
    assert code == 0
    (row,) = json.loads(out)
    assert row["wavelength_vac_nm"] == I2_633_VAC
    # check-values §6 (C): 632.81948 nm at 20 °C, 101 325 Pa, 50 % RH, 450 ppm CO2
    assert row["wavelength_air_nm"] == pytest.approx(632.81948, abs=1e-5)


def test_partial_conditions_say_which_values_are_assumed(capsys):
    code, out, _ = _run(capsys, ["lines", "--element", "Na", "--air-temperature", "22degC"])
    assert code == 0
    head = out.splitlines()[1]
    assert "22 °C" in head and "Ciddor 1996" in head
    assert "101325 Pa (assumed)" in head and "50 % RH (assumed)" in head
    assert "22 °C (assumed)" not in head


def test_without_conditions_the_air_column_is_labelled_standard_air(capsys):
    code, out, _ = _run(capsys, ["lines", "--element", "Na", "--medium", "air", "--near",
                                 "589nm", "--tolerance", "0.01nm"])
    assert code == 0
    head = out.splitlines()[1]
    assert "standard air" in head and "NIST" in head and "IAU/Morton 2000" in head
    code, out, _ = _run(capsys, ["lines", "--element", "Na", "--medium", "air", "--near",
                                 "589nm", "--tolerance", "0.01nm", "--json"])
    (row,) = json.loads(out)
    # Na D2 in standard air as NIST quotes it (check-values §6, V)
    assert row["wavelength_air_nm"] == 588.995 and row["wavelength_nm"] == 588.995
    assert row["air_convention"] == "standard air" and row["air_conditions"] is None
    assert row["u_air_index"] is None


def test_kind_and_uncertainty_are_shown(capsys):
    code, out, _ = _run(capsys, ["lines", "--near", "632.99nm", "--tolerance", "0.01nm"])
    assert code == 0
    rows = {ln.split()[0]: ln for ln in out.splitlines()[3:]}
    # CIPM 2007 Rec. 2: u_r = 1.5e-6 -> 1.5e-6 × 632.9908 nm = 0.00095 nm (2 digits)
    assert "standard" in rows["632.9908"] and "0.00095" in rows["632.9908"]
    assert "standard" in rows["632.99121258"] and "1.3e-08" in rows["632.99121258"]
    assert "atomic line" in rows["632.991453"] and "—" in rows["632.991453"]
    assert math.isclose(1.5e-6 * HENE_FREE_VAC, 0.00095, rel_tol=0.01)


def test_nominal_labels_are_not_converted_to_air(capsys):
    code, out, _ = _run(capsys, ["lines", "--near", "532nm", "--tolerance", "0.01nm", *AIR,
                                 "--json"])
    assert code == 0
    (row,) = json.loads(out)
    assert row["kind"] == "nominal" and row["list_name"] == "laser_nominal"
    assert row["wavelength_air_nm"] == 532.0 and row["air_convention"] == "none (nominal label)"
    assert row["u_vac_nm"] == pytest.approx(1.0 / math.sqrt(3), abs=5e-4)  # JCGM 100 §4.3.7


@pytest.mark.parametrize(
    ("argv", "words"),
    [
        (["--air-pressure", "5kPa"], "pressure"),
        (["--air-temperature", "20nm"], "--air-temperature"),
        (["--air-humidity", "120%"], "humidity"),
    ],
)
def test_bad_air_options_are_one_line_errors(capsys, argv, words):
    code, out, err = _run(capsys, ["lines", *argv])
    assert code == 2 and out == ""
    assert words in _one_error_line(err)


# ---------------------------------------------------------------------------------------------
# identification in the result JSON
# ---------------------------------------------------------------------------------------------
SCAN = sim.Scan(sample_rate_hz=48_000.0, duration_s=0.25, sweep_rate_hz=4.0,
                opd_centre_cm=0.0, opd_amplitude_cm=0.02)


def _record(path, wl_nm, seed=1):
    s = sim.simulate(sim.laser(wl_nm), SCAN, detector=sim.Detector(noise_rms=0.01),
                     medium="vacuum", rng=seed)
    write_record_npz(path, s.record)
    return path


@pytest.fixture(scope="module")
def schema():
    text = resources.files("ftsource").joinpath("schema/result-2.json").read_text("utf-8")
    return json.loads(text)


def _analyze(capsys, rec):
    code, out, err = _run(capsys, ["analyze", str(rec), "--medium", "vacuum",
                                   "--reference-wavelength", "632.991nm", "--json"])
    assert code == 0, err
    return json.loads(out)


def _source_lines(d):
    return [ln for ln in d["lines"] if ln["flag"] is None]


def test_known_ne_line_is_identified_with_nearest_entries(tmp_path, capsys, schema):
    d = _analyze(capsys, _record(tmp_path / "ne.npz", NE_640_VAC))
    jsonschema.validate(d, schema)
    (line,) = _source_lines(d)
    cands = line["nearest_entries"]
    assert 1 <= len(cands) <= 3
    assert line["identification"] == {k: v for k, v in cands[0].items()
                                      if k != "within_tolerance"}
    best = cands[0]
    assert best["species"] == "Ne I" and best["list"] == "lamp_ne"
    assert best["kind"] == "atomic line" and best["within_tolerance"] is True
    assert best["wavelength_vac_nm"] == pytest.approx(NE_640_VAC, abs=1e-5)
    # the simulated truth is the list value: the difference is within the 1.5 ppm reference
    # uncertainty (k = 2) and the fit's
    assert abs(best["difference_ppm"]) < 3.0
    for c in cands:  # measured minus reference, relative to the reference, in ppm
        expect = (line["wavelength_nm"] - c["wavelength_vac_nm"]) / c["wavelength_vac_nm"] * 1e6
        assert c["difference_ppm"] == pytest.approx(expect, rel=1e-9, abs=1e-9)
    diffs = [abs(c["difference_ppm"] * c["wavelength_vac_nm"]) for c in cands]
    assert diffs == sorted(diffs)


def test_line_matching_nothing_says_no_match_and_lists_nearest(tmp_path, capsys, schema):
    d = _analyze(capsys, _record(tmp_path / "x.npz", 700.0, seed=2))
    jsonschema.validate(d, schema)
    (line,) = _source_lines(d)
    assert line["identification"] is None
    cands = line["nearest_entries"]
    assert len(cands) == 3 and not any(c["within_tolerance"] for c in cands)
    # nearest is Ar I 696.73523 nm vacuum (check-values §6): +4686 ppm
    assert cands[0]["species"] == "Ar I"
    assert cands[0]["wavelength_vac_nm"] == pytest.approx(AR_697_VAC, abs=1e-5)
    assert cands[0]["difference_ppm"] == pytest.approx((700.0 / AR_697_VAC - 1) * 1e6, abs=3.0)


def test_schema_refuses_an_entry_without_within_tolerance(schema):
    line_schema = schema["properties"]["lines"]["items"]
    assert "nearest_entries" in line_schema["required"]
    bad = {"species": "Ne I", "list": "lamp_ne", "kind": "atomic line",
           "wavelength_vac_nm": 640.4, "difference_ppm": 0.1}  # within_tolerance missing
    with pytest.raises(jsonschema.ValidationError):
        jsonschema.validate([bad], line_schema["properties"]["nearest_entries"])


# ---------------------------------------------------------------------------------------------
# picking a known line from the lists
# ---------------------------------------------------------------------------------------------
def test_pick_entry_by_vacuum_or_standard_air_value():
    e = pick_entry("laser_standards", I2_633_VAC)
    assert e.is_standard and e.u_vac_nm == pytest.approx(2.1e-11 * I2_633_VAC, rel=0.05)
    assert pick_entry("laser_standards", 632.9908).wavelength_vac_nm == HENE_FREE_VAC
    ne = pick_entry("lamp_ne", 640.2248)  # the air value NIST quotes (check-values §6)
    assert ne.wavelength_vac_nm == pytest.approx(NE_640_VAC, abs=1e-5)
    assert math.isnan(ne.u_vac_nm)


@pytest.mark.parametrize(("name", "wl", "words"), [
    ("laser_standards", 633.0, "more digits"),   # I2 and free-running He-Ne 0.41 pm apart
    ("laser_standards", 532.0, "no entry within"),
    ("lamp_xx", 600.0, "not known"),
])
def test_pick_entry_refuses_ambiguous_or_missing(name, wl, words):
    with pytest.raises(OptionError, match=words):
        pick_entry(name, wl)


def test_entries_with_value_recognises_a_nominal_label():
    (e,) = entries_with_value(532.0)
    assert e.is_nominal and not e.is_standard
    assert entries_with_value(532.0000001) == []


def test_search_lines_keeps_nominal_labels_with_conditions():
    t = search_lines(near_nm=650.0, tolerance_nm=0.01, medium="air", to_air=lambda w: w - 1.0)
    assert list(t["kind"]) == ["nominal"] and float(t["wavelength_air_nm"][0]) == 650.0
    assert np.all(t["air_convention"] == "none (nominal label)")


# ---------------------------------------------------------------------------------------------
# ftsource calibrate: input checks
# ---------------------------------------------------------------------------------------------
@pytest.fixture(scope="module")
def i2_record(tmp_path_factory):
    # the doubled Nd:YAG standard: a source at the reference laser's own wavelength would be
    # taken for reference leakage
    return _record(tmp_path_factory.mktemp("cal") / "i2.npz", I2_532_VAC, seed=3)


CAL = ["--reference-wavelength", "632.991nm", "--medium", "vacuum"]


@pytest.mark.parametrize(
    ("known", "words"),
    [
        (["--known-line", "laser_nominal:532nm"], "never standards"),
        (["--known-wavelength", "650nm"], "never standards"),
        (["--known-wavelength", "650nm", "--known-uncertainty", "1nm"], "never standards"),
        (["--known-wavelength", "640.40178nm"], "needs --known-uncertainty"),
        (["--known-line", "lamp_ne:640.2248nm"], "no stated uncertainty"),
        (["--known-line", "laser_standards:633nm"], "more digits"),
        (["--known-line", "laser_standards:632.9908nm", "--known-uncertainty", "0.0001nm"],
         "smaller than"),
        (["--known-line", "632.9908nm"], "LIST:QTY"),
        (["--known-wavelength", "640.40178nm", "--known-uncertainty", "-1pm"],
         "--known-uncertainty"),
        ([], "required"),
        (["--known-wavelength", "632.9908nm", "--known-line", "laser_standards:632.9908nm"],
         "not allowed with"),
    ],
)
def test_calibrate_refuses_bad_known_lines(tmp_path, capsys, i2_record, known, words):
    target = tmp_path / "rig.json"
    code, out, err = _run(capsys, ["calibrate", str(i2_record), *known, *CAL, "--save",
                                   str(target)])
    assert code == 2 and out == ""
    assert words in _one_error_line(err)
    assert not target.exists()


def test_calibrate_takes_the_uncertainty_of_a_named_standard(tmp_path, capsys, i2_record):
    target = tmp_path / "rig.json"
    code, out, err = _run(capsys, ["calibrate", str(i2_record), "--known-line",
                                   "laser_standards:532.2450361nm", *CAL, "--save",
                                   str(target)])
    assert code == 0, err
    assert "as stated in laser_standards" in out
    saved = load_calibration(target)
    assert saved.known_wavelength_nm == I2_532_VAC
    # u_r = 8.9e-12 (check-values §6, from memory) -> 4.7e-9 nm as stored (two digits)
    assert saved.u_known_nm == pytest.approx(8.9e-12 * I2_532_VAC, rel=0.05)


def test_text_output_shows_relative_intensities(capsys):
    # Hg I 546.0735 nm (air): NIST Handbook mercurytable2 intensity 500, as quoted in the
    # public copy named in reference_spectra/lamp_hg.ecsv (key nist_hb_specreduce); a row the
    # list has no intensity for (Hg 407.783 nm) shows a dash
    status, out, _ = _run(capsys, ["lines", "--element", "Hg", "--min", "400nm", "--max",
                                   "550nm"])
    assert status == 0
    assert "rel. int." in out
    row = next(ln for ln in out.splitlines() if "546.0735" in ln)
    assert row.split()[3] == "500"
    row = next(ln for ln in out.splitlines() if "407.783" in ln)
    assert row.split()[3] == "—"
