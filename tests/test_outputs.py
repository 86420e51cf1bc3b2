"""The demo end to end, the shipped JSON schema and the spectrum file.

Oracles: the truths the demo records were simulated from (scripts/make_demo_data.py: a
532.18 nm green line, a multimode red laser centred at 650.4 nm, an LED whose figures are
computed from the simulator's closed-form density); the project's own JSON schema
(ftsource/schema/result-2.json, Draft 2020-12) checked with the general-purpose `jsonschema`
validator; astropy's ECSV reader; S_λ = S_σ·σ²/10⁷ (CIE 127's density per unit wavelength).
"""

from __future__ import annotations

import io
import json
from functools import cache
from pathlib import Path

import jsonschema
import numpy as np
import pytest
from astropy.table import Table

from ftsource import simulate as S
from ftsource.cli import main
from ftsource.measure.broadband import broadband_metrics


def _schema():
    import importlib.resources

    return json.loads(
        (importlib.resources.files("ftsource") / "schema" / "result-2.json").read_text("utf-8")
    )


@cache
def _demo(tmp_root: str):
    out = Path(tmp_root) / "demo_out"
    buf = io.StringIO()
    import contextlib

    with contextlib.redirect_stdout(buf):
        code = main(["demo", "--out", str(out)])
    results = {p.parent.name: json.loads(p.read_text(encoding="utf-8"))
               for p in sorted(out.glob("*/result.json"))}
    return code, buf.getvalue(), results, out


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    return _demo(str(tmp_path_factory.mktemp("demo")))


def test_demo_runs_and_finds_the_simulated_truths(demo):
    code, text, results, _ = demo
    assert code == 0
    assert "INVENTED" in text and "Laser safety" in text
    assert set(results) == {"green_pointer", "red_pointer", "amber_led"}
    green = results["green_pointer"]["summary"]
    assert green["kind"] == "narrow"
    assert abs(green["centre_wavelength_nm"] - 532.18) <= green["expanded_uncertainty_nm"]
    red = results["red_pointer"]["summary"]
    assert red["kind"] == "multimode"
    # the envelope centre of a mode comb is a mode's place, not the simulated envelope centre:
    # within half a mode spacing (0.17 nm) of 650.4 nm
    assert abs(red["centre_wavelength_nm"] - 650.4) < 0.085
    assert red["modes"]["spacing_nm"] == pytest.approx(0.17, rel=0.02)  # issue 4: within 2 %
    amber = results["amber_led"]["summary"]
    assert amber["kind"] == "broadband"
    # the truth the bundled record was made from (scripts/make_demo_data.py)
    src = S.led(591.0, 16.0, asymmetry=0.25, density="per-wavenumber")
    sig = np.linspace(1e7 / (591.0 + 64.0), 1e7 / (591.0 - 64.0), 200_001)
    truth = broadband_metrics(1e7 / sig, src.density(sig) * sig**2 / 1e7, None,
                              n_monte_carlo=0)
    assert abs(amber["centroid_wavelength_nm"] - truth.centroid_nm) < 0.1
    assert amber["fwhm_nm"] == pytest.approx(truth.fwhm_nm, rel=0.01)


def test_every_demo_result_follows_the_schema(demo):
    _, _, results, _ = demo
    validator = jsonschema.Draft202012Validator(_schema())
    for name, doc in results.items():
        errors = sorted(validator.iter_errors(doc), key=lambda e: list(e.path))
        assert not errors, f"{name}: {errors[0].message} at {list(errors[0].path)}"


def test_schema_rejects_what_the_contract_forbids(demo):
    # a check that can fail: the schema is strict about unknown keys and missing ones
    _, _, results, _ = demo
    validator = jsonschema.Draft202012Validator(_schema())
    doc = json.loads(json.dumps(results["green_pointer"]))
    doc["summary"]["surprise"] = 1
    assert list(validator.iter_errors(doc))
    doc = json.loads(json.dumps(results["green_pointer"]))
    del doc["lines"][0]["flag"]
    assert list(validator.iter_errors(doc))


def test_spectrum_file_columns_units_and_densities(demo):
    _, _, _, out = demo
    t = Table.read(out / "amber_led" / "spectrum.ecsv", format="ascii.ecsv")
    assert t.colnames == [
        "wavenumber", "wavelength", "density_per_wavenumber", "noise_per_wavenumber",
        "density_per_wavelength", "noise_per_wavelength",
    ]
    assert str(t["wavenumber"].unit) == "1 / cm" and str(t["wavelength"].unit) == "nm"
    sig = np.asarray(t["wavenumber"], float)
    np.testing.assert_allclose(np.asarray(t["wavelength"]), 1e7 / sig, rtol=1e-12)
    # CIE 127 works per unit wavelength: S_λ = S_σ·σ²/10⁷ (σ in cm⁻¹, λ in nm)
    np.testing.assert_allclose(np.asarray(t["density_per_wavelength"]),
                               np.asarray(t["density_per_wavenumber"]) * sig**2 / 1e7,
                               rtol=1e-12, atol=0)
    np.testing.assert_allclose(np.asarray(t["noise_per_wavelength"]),
                               np.asarray(t["noise_per_wavenumber"]) * sig**2 / 1e7,
                               rtol=1e-12, atol=0)
    assert np.all(np.asarray(t["noise_per_wavenumber"]) >= 0)
    assert "vacuum" in t.meta["description"]
