"""Messages speak in words and the library's keyword names (issue 11, item 12).

Several records provoke the notes of many stages — a narrow line without a visible ZPD, a
comb with revivals, a distorted quadrature reference, an uneven mirror speed, a position
encoder without its uncertainties, air not given, the Edlén equation beyond the visible —
and errors are provoked on purpose. No note or error may name a key of the result JSON
(``humidity_percent``, ``max_opd_mm``, ... — taken from the schema itself) or a command-line
flag (``--air-temperature``): the library speaks in its keyword names (``air_temperature``),
which the command line spells as its flags (:func:`ftsource.parameters.cli_terms`).
Records come from the forward model in ``tests/rig_model.py``; the encoder record from
``ftsource.simulate`` (tested against closed forms in tests/test_simulate.py).

Reference: the project's JSON schema (``ftsource/schema/result-2.json``) for the keys; no
numerical value is checked here.
"""

from __future__ import annotations

import json
import re

import numpy as np
import pytest
import rig_model as rm
from cli_helpers import nested_dicts

from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.errors import FtsourceError
from ftsource.parameters import PARAMETERS, cli_terms

FS = 100e3


def _json_keys() -> set[str]:
    """Every snake_case property name of the result schema that is not also a keyword
    parameter of ``analyze`` (``phase_correction``, ``zero_fill`` are both)."""
    import importlib.resources

    text = (importlib.resources.files("ftsource") / "schema" / "result-2.json").read_text("utf-8")
    keys = {k for d in nested_dicts(json.loads(text))
            if isinstance(d.get("properties"), dict) for k in d["properties"]}
    return {k for k in keys if "_" in k and k not in PARAMETERS}


JSON_KEYS = _json_keys()
FLAG = re.compile(r"(?<![\w-])--[a-z]")


def _bad_terms(text: str) -> list[str]:
    found = [k for k in JSON_KEYS if re.search(rf"(?<![\w']){re.escape(k)}(?![\w'])", text)]
    if FLAG.search(text):
        found.append("--flag")
    return found


def _scan(seed, *, seconds=2.0, amplitude_cm=0.4, centre_cm=0.5, wobble=0.0):
    t = np.arange(int(seconds * FS)) / FS
    tau = rm.wobbled_time(t, depth=wobble, freq_hz=3.0, phase=seed) if wobble else t
    return rm.triangle_opd(tau, amplitude_cm=amplitude_cm, period_s=seconds, rounding=0.2,
                           phase=0.1, centre_cm=centre_cm)


def _laser_single(seed):
    rng = np.random.default_rng(seed)
    x = _scan(seed)
    sig = rm.gaussian_line(x, 650.0) + 0.002 * rng.normal(size=x.size)
    return rm.record(sig, FS, ref=rm.single_channel(x, rng)), AnalysisOptions()


def _comb_quadrature(seed):
    rng = np.random.default_rng(seed)
    x = _scan(seed, seconds=4.0, amplitude_cm=0.8, centre_cm=0.7)
    sig = rm.comb(x, 650.0, 1 / 0.775, 7) + 0.002 * rng.normal(size=x.size)
    i, q = rm.quadrature_channels(x, rng)
    return rm.record(sig, FS, ref_i=i, ref_q=q), AnalysisOptions(air_model="edlen")


def _wobbly_infrared(seed):
    rng = np.random.default_rng(seed)
    x = _scan(seed, wobble=0.3)
    sig = (rm.gaussian_line(x, 850.0) + 4e-4 * rm.gaussian_line(x, 849.5)
           + 0.002 * rng.normal(size=x.size))
    i, q = rm.quadrature_channels(x, rng, harmonic=0.05)
    return rm.record(sig, FS, ref_i=i, ref_q=q), AnalysisOptions(air_model="edlen")


def _encoder(seed):
    sim = S.simulate(S.laser(650.0), S.Scan(duration_s=0.5, opd_centre_cm=0.05),
                     S.ReferenceChannel(kind="encoder", encoder_resolution_m=0.0),
                     S.Detector(noise_rms=0.003), rng=seed)
    return sim.record, AnalysisOptions()


RECORDS = [_laser_single, _comb_quadrature, _wobbly_infrared, _encoder]


@pytest.mark.parametrize("make", RECORDS, ids=lambda f: f.__name__)
def test_notes_name_no_json_key_and_no_flag(make):
    """Every note of the result (and every budget component's note) is free of JSON keys and
    flags; at least one note is there to check (air not given, at the least)."""
    record, options = make(0)
    result = analyze(record, options)
    notes = list(result.warnings)
    d = result.to_dict()
    if d["uncertainty"] is not None:
        notes += [c.get("note") or "" for c in d["uncertainty"]["components"]]
    assert notes
    bad = {n: _bad_terms(n) for n in notes if _bad_terms(n)}
    assert not bad, bad


def test_the_command_line_spells_keywords_as_flags():
    """The library names its keywords; the command line's translation turns them into flags
    (one closed-form mapping: ``--`` + the keyword with ``-`` for ``_``)."""
    record, options = _encoder(0)
    notes = analyze(record, options).warnings
    encoder = next(n for n in notes if "position encoder" in n)
    assert "encoder_scale_uncertainty" in encoder and "alignment_allowance" in encoder
    translated = cli_terms(encoder)
    assert "--encoder-scale-uncertainty" in translated and "--alignment-allowance" in translated
    air = next(n for n in notes if "air conditions were not given" in n)
    assert "--air-temperature, --air-pressure and --air-humidity" in cli_terms(air)


@pytest.mark.parametrize("kwargs", [
    {"reference_wavelength": "780 nm"},  # no uncertainty for an unknown laser
    {"air_temperature": "90 degC", "air_humidity": "100 %", "air_pressure": "500 hPa"},
])
def test_errors_name_no_json_key_and_no_flag(kwargs):
    """Errors provoked through the keywords: named in words and keyword names only."""
    import ftsource

    record, _ = _laser_single(1)
    with pytest.raises(FtsourceError) as exc:
        ftsource.analyze(record, **kwargs)
    assert not _bad_terms(str(exc.value)), str(exc.value)


def test_a_json_key_would_be_caught():
    """The check itself can fail: a note naming ``humidity_percent`` or ``--medium`` is caught,
    while a keyword name is not."""
    assert _bad_terms("a relative humidity (humidity_percent) of 99 %") == ["humidity_percent"]
    assert _bad_terms("measure in vacuum (--medium vacuum)") == ["--flag"]
    assert "max_opd_mm" in JSON_KEYS
    assert _bad_terms("give air_temperature") == []

