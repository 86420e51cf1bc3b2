"""The OPD scale as one object (ftsource.interferogram.scale) and the rule for the reference
laser's default uncertainty.

Sources named beside each check:

* CIPM 2007 Recommendation 2 (bipm.org/en/committees/ci/cipm/96-2007/resolution-2; V in
  /work/shared/reference/check-values.md §6): an unstabilised He–Ne laser on the 633 nm
  transition has λ = 632.9908 nm (vacuum), u_r = 1.5e-6, whatever its isotope mix.
* CIPM recommended radiation (mise en pratique), I2-stabilised He–Ne R(127) 11-5 a16:
  λ = 632.991 212 58 nm, u_r = 2.1e-11 (V, check-values §6).
* Air equivalent of the He–Ne line in standard air, 632.816 nm (NIST Ne I 632.81646 nm air,
  V2; Morton 2000 standard air, check-values §5-6).
* Closed forms: u_r = u/λ; a wavelength scale built on λ_ref' instead of λ_ref multiplies every
  result by λ_ref'/λ_ref.
"""

import json
from dataclasses import replace

import pytest
from cli_helpers import assert_clean_error, run
from hypothesis import given
from hypothesis import strategies as st

from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions, analyze, opd_scale
from ftsource.errors import OptionError
from ftsource.interferogram.scale import (
    HENE_RELATIVE_UNCERTAINTY,
    HENE_VACUUM_WAVELENGTH_NM,
    OpdKind,
    OpdScale,
    air_wavelength_warning,
    reference_uncertainty,
    relative_uncertainty,
)
from ftsource.io.records import write_record_npz
from ftsource.parameters import cli_terms

CIPM2007_HENE_NM = 632.9908  # CIPM 2007 Rec. 2, vacuum
CIPM2007_HENE_UR = 1.5e-6  # CIPM 2007 Rec. 2
MEP_I2_HENE_NM = 632.99121258  # CIPM recommended radiation, I2-stabilised He-Ne, vacuum
MEP_I2_HENE_UR = 2.1e-11
HENE_AIR_NM = 632.816  # NIST Ne I 632.81646 nm in standard air (V2), rounded


# --------------------------------------------------------------------------------------------
# the kinds


def test_kinds_are_the_contract_values_and_say_what_they_use():
    """docs/contract.md, input.opd_source: quadrature, single, encoder, constant-speed."""
    assert [k.value for k in OpdKind] == ["quadrature", "single", "encoder", "constant-speed"]
    assert {k for k in OpdKind if k.uses_reference_laser} == {OpdKind.QUADRATURE,
                                                               OpdKind.SINGLE}
    # a single channel's phase only grows: no direction across dropouts (common practice)
    assert {k for k in OpdKind if k.knows_direction} == {OpdKind.QUADRATURE, OpdKind.ENCODER}
    assert [k.calibrated_quantity for k in OpdKind] == [
        "reference", "reference", "encoder", "constant-speed"]
    assert f"{OpdKind.CONSTANT_SPEED}" == "constant-speed"
    assert json.dumps({"k": OpdKind.SINGLE}) == '{"k": "single"}'


def test_he_ne_constant_is_the_cipm_value_to_its_uncertainty():
    """632.991 nm lies within the CIPM 2007 value's standard uncertainty (0.00095 nm)."""
    assert abs(HENE_VACUUM_WAVELENGTH_NM - CIPM2007_HENE_NM) <= CIPM2007_HENE_UR * CIPM2007_HENE_NM
    assert HENE_RELATIVE_UNCERTAINTY == CIPM2007_HENE_UR


# --------------------------------------------------------------------------------------------
# the one conversion of the reference's uncertainty


def test_length_to_ratio_closed_form():
    # 1 pm of 632.991 nm: 1e-3/632.991 = 1.579801...e-6 (closed form)
    assert relative_uncertainty(1e-3, 632.991) == pytest.approx(1.5798013e-6, rel=1e-7)
    assert reference_uncertainty(780.0, length_nm=0.0039) == (pytest.approx(5e-6), "as given")


@given(u=st.floats(0, 10), lam=st.floats(200, 2000))
def test_length_to_ratio_inverts(u, lam):
    """u_r·λ = u (closed form)."""
    assert relative_uncertainty(u, lam) * lam == pytest.approx(u, rel=1e-12, abs=1e-300)


@pytest.mark.parametrize("u, lam", [(-1e-3, 632.991), (float("nan"), 632.991),
                                    (1e-3, 0.0), (1e-3, float("inf"))])
def test_length_to_ratio_refuses_bad_values(u, lam):
    with pytest.raises(OptionError, match="not allowed"):
        relative_uncertainty(u, lam)


def test_ratio_and_length_together_are_refused():
    with pytest.raises(OptionError, match="not both"):
        reference_uncertainty(632.991, relative=1e-6, length_nm=1e-3)


# --------------------------------------------------------------------------------------------
# issue 12 part 7: the default fits only a He-Ne or a bundled standard


@pytest.mark.parametrize("lam", [CIPM2007_HENE_NM, 632.991, 632.99, 632.995])
def test_he_ne_vacuum_wavelength_gets_the_cipm_2007_default(lam):
    u, source = reference_uncertainty(lam)
    assert u == CIPM2007_HENE_UR
    assert "He-Ne" in source and ("CIPM 2007" in source or "unstabilised" in source)


def test_a_bundled_standard_gets_its_own_uncertainty():
    # the I2-stabilised He-Ne of the mise en pratique: u_r = 2.1e-11
    u, source = reference_uncertainty(MEP_I2_HENE_NM)
    assert u == MEP_I2_HENE_UR
    assert "I2-stabilised" in source
    # the same value as a user copies it with fewer digits
    assert reference_uncertainty(632.991213)[0] == MEP_I2_HENE_UR


@pytest.mark.parametrize("lam", [780.0, 1550.0, 532.0, 633.0, 632.97, 650.0])
def test_any_other_laser_needs_a_stated_uncertainty(lam):
    """780 nm used to get ±3 ppm at k = 2 from the He-Ne's 1.5 ppm (issue 12, part 7); 633 nm
    is a rounded label, 14 ppm from the CIPM value, not a vacuum wavelength."""
    with pytest.raises(OptionError) as exc:
        reference_uncertainty(lam)
    msg = str(exc.value)
    # the library names its keyword (issue 11, item 12: no flags, no JSON keys); the command
    # line spells it as its flag
    assert "reference_uncertainty" in msg and "--" not in msg and "_ppm" not in msg
    assert "--reference-uncertainty" in cli_terms(msg)
    assert "not a He-Ne laser's vacuum wavelength" in msg
    # stated, it is used as given
    assert reference_uncertainty(lam, relative=2e-6) == (2e-6, "as given")


@pytest.mark.parametrize("lam", [632.8, HENE_AIR_NM, 632.82])
def test_a_he_ne_air_wavelength_is_named_with_its_error(lam):
    """Closed form: a scale built on the air value is low by 1 − λ_air/λ_vac; against the
    CIPM 2007 vacuum value that is 301.4 ppm for 632.8 nm and 275.9 ppm for 632.816 nm."""
    expected_ppm = (1 - lam / CIPM2007_HENE_NM) * 1e6
    assert 265 < expected_ppm < 310
    w = air_wavelength_warning(lam)
    assert w.startswith("REFERENCE WAVELENGTH IN AIR?")
    assert f"{expected_ppm:.0f} ppm" in w
    assert "VACUUM wavelength, 632.9908 nm" in w
    with pytest.raises(OptionError, match="REFERENCE WAVELENGTH IN AIR"):
        reference_uncertainty(lam)


def test_vacuum_values_raise_no_air_warning():
    for lam in (CIPM2007_HENE_NM, MEP_I2_HENE_NM, 780.0, 532.245):
        assert air_wavelength_warning(lam) is None


def test_doubled_nd_yag_air_value_is_recognised():
    """532.245 036 nm vacuum (check-values §6) is 532.097 nm in standard air (Morton 2000)."""
    w = air_wavelength_warning(532.1)
    assert w is not None and "Nd:YAG" in w
    assert f"{(1 - 532.1 / 532.2450361) * 1e6:.0f} ppm" in w


# --------------------------------------------------------------------------------------------
# the object


class _Cal:
    """The attributes of a RigCalibration the scale reads (a stand-in, values invented)."""

    def __init__(self, opd_scale, scale=1.000002, u=3e-7, lam=632.991):
        self.opd_scale = opd_scale
        self.scale = scale
        self.u_effective_rel = u
        self.effective_reference_wavelength_nm = lam * scale


def test_scale_without_calibration():
    s = OpdScale(OpdKind.QUADRATURE, 632.991, 1.5e-6)
    assert s.wavelength_nm == s.fringe_wavelength_nm == 632.991
    assert s.u_rel == 1.5e-6 and s.factor == 1.0
    enc = OpdScale("encoder")
    assert enc.kind is OpdKind.ENCODER and enc.wavelength_nm is None
    assert enc.fringe_wavelength_nm == HENE_VACUUM_WAVELENGTH_NM and enc.u_rel == 0.0


def test_scale_with_calibration():
    s = OpdScale(OpdKind.SINGLE, 632.991, 1.5e-6, _Cal("reference"))
    assert s.wavelength_nm == pytest.approx(632.991 * 1.000002, rel=1e-15)
    assert s.u_rel == 3e-7 and s.factor == 1.0  # the laser's wavelength is replaced instead
    e = OpdScale(OpdKind.ENCODER, calibration=_Cal("encoder"))
    assert e.factor == 1.000002 and e.u_rel == 3e-7


def test_scale_refuses_a_calibration_of_another_kind_and_a_laser_without_wavelength():
    with pytest.raises(OptionError, match="calibrate with a record of the same kind"):
        OpdScale(OpdKind.ENCODER, calibration=_Cal("reference"))
    with pytest.raises(OptionError, match="reference wavelength is unknown"):
        OpdScale(OpdKind.QUADRATURE)


# --------------------------------------------------------------------------------------------
# through the analysis, on records from the simulator (itself tested in test_simulate.py)


def _record(ref_nm, seed=5, wl=650.0):
    return S.simulate(S.laser(wl), S.Scan(duration_s=0.5, opd_centre_cm=0.2,
                                          opd_amplitude_cm=0.1),
                      S.ReferenceChannel(wavelength_nm=ref_nm), S.Detector(noise_rms=0.003),
                      rng=seed).record


def test_analysis_of_a_780_nm_reference_needs_its_uncertainty():
    rec = _record(780.0)
    with pytest.raises(OptionError, match="780 nm is not a He-Ne"):
        analyze(rec, AnalysisOptions(medium="vacuum"))  # wavelength from the metadata
    r = analyze(rec, AnalysisOptions(medium="vacuum", reference_uncertainty_ppm=2.0))
    d = r.to_dict()
    assert d["input"]["reference_uncertainty_ppm"] == 2.0
    comp = {c["name"]: c for c in d["uncertainty"]["components"]}
    # closed form: the component is the centre times the relative uncertainty
    assert comp["reference wavelength"]["u_nm"] == pytest.approx(
        d["summary"]["centre_wavelength_nm"] * 2e-6, rel=1e-9)


def test_analysis_given_the_air_wavelength_is_low_by_the_warned_ratio():
    """Told 632.8 nm for a 632.991 nm reference, every wavelength is low by the ratio
    632.8/632.991 (closed form), and the result says so loudly."""
    rec = _record(632.991)
    opts = AnalysisOptions(medium="vacuum", reference_wavelength_nm=632.8,
                           reference_uncertainty_ppm=1.5)
    r = analyze(rec, opts)
    assert r.figures.centre_wavelength_nm == pytest.approx(650.0 * 632.8 / 632.991, abs=5e-5)
    assert any(w.startswith("REFERENCE WAVELENGTH IN AIR?") for w in r.warnings)
    assert opd_scale(rec, opts).u_reference_rel == 1.5e-6


def test_metadata_he_ne_gets_the_default_and_a_length_is_converted_once():
    rec = _record(632.991)
    s = opd_scale(rec, AnalysisOptions())
    assert s.kind is OpdKind.QUADRATURE and s.u_reference_rel == CIPM2007_HENE_UR
    s = opd_scale(rec, AnalysisOptions(reference_uncertainty_nm=1e-3))
    assert s.u_reference_rel == pytest.approx(1e-3 / 632.991, rel=1e-12)


def test_cli_780_nm_reference_without_uncertainty_is_one_error_line(capsys, tmp_path):
    path = tmp_path / "r780.npz"
    write_record_npz(path, _record(780.0))
    status, _out, err = run(capsys, ["analyze", path, "--reference-wavelength", "780nm"])
    assert_clean_error(status, err, "--reference-uncertainty")
    status, out, err = run(capsys, ["analyze", path, "--reference-wavelength", "780nm",
                                    "--reference-uncertainty", "0.0039nm", "--json"])
    assert status == 0, err
    # 0.0039 nm of 780 nm is 5 ppm (closed form)
    assert json.loads(out)["input"]["reference_uncertainty_ppm"] == pytest.approx(5.0)


def test_encoder_record_has_no_reference_uncertainty(capsys, tmp_path):
    sim = S.simulate(S.laser(650.0), S.Scan(duration_s=0.5, opd_centre_cm=0.2,
                                            opd_amplitude_cm=0.1),
                     S.ReferenceChannel(kind="encoder"), S.Detector(noise_rms=0.003), rng=2)
    rec = replace(sim.record, metadata={**sim.record.metadata,
                                        "reference_wavelength": "780 nm"})
    # no reference laser: the 780 nm in the metadata does not ask for an uncertainty
    s = opd_scale(rec, AnalysisOptions())
    assert s.kind is OpdKind.ENCODER and s.u_rel == 0.0 and s.wavelength_nm is None
    path = tmp_path / "enc.npz"
    write_record_npz(path, rec)
    status, out, err = run(capsys, ["analyze", path, "--json", "--medium", "vacuum"])
    assert status == 0, err
    d = json.loads(out)
    assert d["input"]["opd_source"] == "encoder"
    assert d["input"]["reference_uncertainty_ppm"] is None
