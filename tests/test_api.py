"""The Python API a scientist calls: ``ftsource.analyze(path_or_record, **quantities)``.

Oracles:
* a record written by a forward model in this file: a Michelson interferometer whose mirror
  moves sinusoidally, a He-Ne reference in quadrature (I = cos 2πx/λ_r, Q = sin 2πx/λ_r) and a
  monochromatic source (1 + cos 2πx/λ_s), in vacuum (two-beam interference, closed form;
  e.g. Hecht, *Optics*, §9.4); its wavelength is the truth;
* astropy.units (a general-purpose library) for the conversions the API must agree with
  (21 °C is 21 °C, 632.991 nm is 632.991 nm, Quantities equal to the JSON numbers);
* identities: the same record given as a file or as a Record, options given as Quantities or as
  text with units, must give the same JSON.
"""

from __future__ import annotations

import warnings

import astropy.units as u
import numpy as np
import pytest

import ftsource
from ftsource.errors import AnalysisWarning, FtsourceError, FtsourceWarning, OptionError

LAMBDA_REF_NM = 632.991  # He-Ne, vacuum (CIPM 2007 recommended value, rounded)
LAMBDA_SRC_NM = 532.0  # the invented source of this test
FS_HZ = 100_000.0


def _samples(seed: int):
    """time, signal, ref_i, ref_q of the forward model (OPD x in cm)."""
    rng = np.random.default_rng(seed)
    t = np.arange(50_000) / FS_HZ
    x = 0.05 * np.sin(2 * np.pi * 2.0 * t + 0.3)  # ±0.5 mm of OPD through ZPD, 2 Hz
    ref = 2 * np.pi * x / (LAMBDA_REF_NM * 1e-7)
    sig = 1.0 + np.cos(2 * np.pi * x / (LAMBDA_SRC_NM * 1e-7))
    noise = rng.normal(0.0, 0.002, (3, t.size))
    return t, sig + noise[0], np.cos(ref) + noise[1], np.sin(ref) + noise[2]


@pytest.fixture(scope="module")
def scan_csv(tmp_path_factory):
    path = tmp_path_factory.mktemp("api") / "scan.csv"
    t, s, i, q = _samples(7)
    np.savetxt(path, np.column_stack([t, s, i, q]), delimiter=",", fmt="%.9g",
               header="time,signal,ref_i,ref_q", comments="")
    return str(path)


_RESULTS: dict = {}


def _analysed(path, **kw):
    """One analysis per distinct call (Quantities are not hashable: keyed by their text)."""
    key = (path, repr(sorted(kw.items())))
    if key not in _RESULTS:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore", AnalysisWarning)
            _RESULTS[key] = ftsource.analyze(path, **kw)
    return _RESULTS[key]


def _dict(result):
    d = result.to_dict()
    d["input"].pop("record")  # the file's name; a Record read from it names it the same
    return d


def test_path_and_quantities_find_the_line(scan_csv):
    r = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="vacuum")
    assert r.kind == "narrow"
    # the truth of the forward model, within the result's own expanded uncertainty (k ≈ 2)
    assert abs(r.centre_wavelength - LAMBDA_SRC_NM * u.nm) <= r.expanded_uncertainty
    assert r.centre_wavelength.unit == u.nm


def test_string_quantities_equal_quantities(scan_csv):
    a = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="air",
                  air_temperature=21 * u.deg_C, air_pressure=1013 * u.hPa,
                  air_humidity=45 * u.percent)
    b = _analysed(scan_csv, reference_wavelength="632.991 nm", medium="air",
                  air_temperature="21 degC", air_pressure="1013 mbar", air_humidity="45%")
    assert _dict(a) == _dict(b)
    air = a.to_dict()["input"]["air"]
    # astropy: 21 °C, 1013 hPa = 101300 Pa, 45 %
    assert air["temperature_c"] == pytest.approx((21 * u.deg_C).to_value(u.deg_C))
    assert air["pressure_pa"] == pytest.approx((1013 * u.hPa).to_value(u.Pa))
    assert air["humidity_percent"] == pytest.approx(45.0)
    assert a.to_dict()["input"]["reference_wavelength_nm"] == pytest.approx(LAMBDA_REF_NM)
    # the same conditions given as kelvin
    c = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="air",
                  air_temperature=(21 * u.deg_C).to(u.K, equivalencies=u.temperature()),
                  air_pressure=101.3 * u.kPa, air_humidity=0.45 * u.dimensionless_unscaled)
    assert c.centre_wavelength.to_value(u.nm) == pytest.approx(
        a.centre_wavelength.to_value(u.nm), rel=1e-12)
    # a bare humidity above 1 is percent; a bare one at or below 1 is ambiguous (issue 12,
    # part 8: a practitioner writing 45 means 45 %) and refused with the parameter named
    d = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="air",
                  air_temperature="21 degC", air_pressure="1013 mbar", air_humidity=45)
    assert d.centre_wavelength.to_value(u.nm) == pytest.approx(
        a.centre_wavelength.to_value(u.nm), rel=1e-12)
    with pytest.raises(FtsourceError, match="air_humidity"):
        _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="air",
                  air_humidity=0.45)


def test_record_input_equals_path_input(scan_csv):
    from ftsource.io.records import read_record

    rec = read_record(scan_csv)
    a = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="vacuum")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AnalysisWarning)
        b = ftsource.analyze(rec, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="vacuum")
    assert _dict(a) == _dict(b)


def test_quantity_properties_equal_the_json(scan_csv):
    r = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="air",
                  air_temperature=21 * u.deg_C, air_pressure=1013 * u.hPa,
                  air_humidity=45 * u.percent)
    s = r.to_dict()["summary"]
    pairs = [
        (r.centre_wavelength, s["centre_wavelength_nm"], u.nm),
        (r.centre_wavelength_air, s["centre_wavelength_air_nm"], u.nm),
        (r.u_centre_wavelength, s["u_centre_wavelength_nm"], u.nm),
        (r.expanded_uncertainty, s["expanded_uncertainty_nm"], u.nm),
        (r.wavenumber, s["wavenumber_per_cm"], 1 / u.cm),
        (r.frequency, s["frequency_thz"], u.THz),
        (r.linewidth_upper_bound, s["fwhm_upper_bound_nm"], u.nm),
        (r.coherence_length_lower_bound, s["coherence_length_lower_bound_mm"], u.mm),
    ]
    for q, v, unit in pairs:
        assert v is not None
        assert q.to_value(unit) == v
    assert r.coverage_factor == s["coverage_factor"]
    # an unresolved line has a bound, not a width (the JSON says null)
    assert s["fwhm_nm"] is None and r.linewidth is None
    assert s["coherence_length_mm"] is None and r.coherence_length is None
    # astropy's own conversions agree with the JSON's other units
    assert r.frequency.to_value(u.Hz) == pytest.approx(
        r.centre_wavelength.to(u.Hz, equivalencies=u.spectral()).value, rel=1e-12)
    assert r.wavenumber.to_value(1 / u.cm) == pytest.approx(
        r.centre_wavelength.to(1 / u.cm, equivalencies=u.spectral()).value, rel=1e-12)


def test_notes_are_issued_once_each_at_the_callers_line(scan_csv):
    with pytest.warns(FtsourceWarning) as caught:
        r = ftsource.analyze(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm)
    issued = [str(w.message) for w in caught if issubclass(w.category, AnalysisWarning)]
    assert issued == list(r.warnings) and len(set(issued)) == len(issued)
    # no air conditions were given: the note says so (common practice: an unmeasured lab)
    assert any("air conditions were not given" in m for m in issued)
    assert {w.filename for w in caught if issubclass(w.category, AnalysisWarning)} == {__file__}


def test_result_is_frozen(scan_csv):
    import dataclasses

    r = _analysed(scan_csv, reference_wavelength=LAMBDA_REF_NM * u.nm, medium="vacuum")
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.warnings = ()  # type: ignore[misc]
    with pytest.raises(dataclasses.FrozenInstanceError):
        r.figures.kind = "none"  # type: ignore[misc]


@pytest.mark.parametrize(
    "kw, fragment",
    [
        ({"reference_wavelength": "632.991 furlongs"},
         "reference_wavelength: the unit 'furlongs' in '632.991 furlongs' is not understood"),
        ({"reference_wavelength": 48 * u.kHz},
         "reference_wavelength: '48.0 kHz' is a frequency; expected a length"),
        ({"reference_wavelength": "633"}, "reference_wavelength: '633' has no unit"),
        ({"reference_wavelength": 632.991 * u.nm, "air_temperature": 21 * u.nm},
         "air_temperature: '21.0 nm' is a length; expected a temperature"),
        ({"reference_wavelength": 632.991 * u.nm, "medium": "vacuum",
          "air_temperature": 21 * u.deg_C},
         "air_temperature needs medium='air'"),
        ({"reference_wavelength": 632.991 * u.nm, "sample_rate": "-48 kHz"},
         "sample_rate: '-48 kHz' is not allowed; it must be above zero"),
        ({"reference_wavelength": 632.991 * u.nm, "wavelength": 1 * u.nm},
         "wavelength is not a parameter of the analysis"),
        ({"reference_wavelength": 632.991 * u.nm, "medium": "water"},
         "medium must be 'air' or 'vacuum', not 'water'"),
        ({"reference_wavelength": 5 * u.um}, "reference_wavelength 5000 nm is outside 200–2000"),
    ],
)
def test_bad_parameters_raise_in_library_terms(scan_csv, kw, fragment):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", AnalysisWarning)
        with pytest.raises(FtsourceError) as info:
            ftsource.analyze(scan_csv, **kw)
    assert isinstance(info.value, OptionError)
    assert fragment in str(info.value)
    assert "--" not in str(info.value)  # the command line's flags are not the library's names


def test_missing_reference_names_the_parameter(scan_csv):
    with pytest.raises(OptionError, match=r"give reference_wavelength \(vacuum\)"):
        ftsource.analyze(scan_csv)


def test_bad_inputs(scan_csv, tmp_path):
    from ftsource.analysis import AnalysisOptions
    from ftsource.errors import RecordError

    with pytest.raises(OptionError, match="not both"):
        ftsource.analyze(scan_csv, AnalysisOptions(), medium="vacuum")
    with pytest.raises(OptionError, match="record must be a Record or the path"):
        ftsource.analyze(42, reference_wavelength=632.991 * u.nm)
    with pytest.raises(RecordError, match="no such file"):
        ftsource.analyze(str(tmp_path / "missing.csv"), reference_wavelength=632.991 * u.nm)
