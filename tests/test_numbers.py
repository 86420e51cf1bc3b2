"""Numbers printed with the digits their uncertainty supports (issue 16).

Oracles: the two worked examples of JCGM 100:2008 (§7.2.2: m_S = 100.021 47 g with
u_c = 0.35 mg; §7.2.6: 10.057 62 Ω with u_c = 27 mΩ written 10.058 Ω), the rule of §7.2.6
itself (u to two significant digits, the value to the same decimal place) as a hypothesis
property, the Welch–Satterthwaite formula (GUM G.2b, closed form) and, for the calibrate
command, the closed form of a reference laser whose stated wavelength is 5 ppm short.
"""

from __future__ import annotations

import json
import math
from decimal import Decimal

import pytest
from cli_helpers import run
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource.measure.uncertainty import DOF_AS_INFINITE, Budget, Component
from ftsource.report.numbers import (
    format_significant,
    format_with_uncertainty,
    round_to_uncertainty,
)
from ftsource.report.text import format_summary


def test_gum_worked_examples():
    # JCGM 100:2008 §7.2.2 (m_S = 100.021 47 g, u_c = 0.35 mg) and §7.2.6 (10.058 Ω)
    assert round_to_uncertainty(100.02147, 0.00035) == ("100.02147", "0.00035")
    assert round_to_uncertainty(10.05762, 0.027) == ("10.058", "0.027")


@pytest.mark.parametrize(
    "value, u, expected",
    [
        # a rounding of u that gains a digit keeps two: 0.0996 -> 0.10 (JCGM 100 §7.2.6)
        (1.23456, 0.0996, ("1.23", "0.10")),
        # an uncertainty of tens rounds the value to tens (same decimal place)
        (12345.6, 230.0, ("12350", "230")),
        (-4.4978, 0.93911, ("-4.50", "0.94")),
        # a value that rounds to zero has no minus sign
        (-0.0001, 0.01, ("0.000", "0.010")),
        # no usable uncertainty: the value to 6 significant digits, u as a dash
        (532.179987, None, ("532.180", "—")),
        (532.179987, 0.0, ("532.180", "—")),
        (532.179987, math.nan, ("532.180", "—")),
    ],
)
def test_round_to_uncertainty_cases(value, u, expected):
    assert round_to_uncertainty(value, u) == expected


def test_signs_and_units():
    assert format_with_uncertainty(4.5, 0.94, "ppm", sign=True) == "+4.50 ppm ± 0.94 ppm"
    assert format_with_uncertainty(-4.5, 0.94, "ppm", sign=True) == "-4.50 ppm ± 0.94 ppm"
    assert format_significant(0.44009, 2, "nm") == "0.44 nm"
    assert format_significant(None, 2, "nm") == "—"
    assert format_significant(0.0, 2) == "0"


def _significant_digits(text: str) -> int:
    digits = text.replace("-", "").replace(".", "").lstrip("0")
    return len(digits)


@settings(max_examples=300, deadline=None)
@given(
    value=st.floats(-1e6, 1e6, allow_nan=False, allow_infinity=False),
    u=st.floats(1e-9, 1e5, allow_nan=False, allow_infinity=False),
)
def test_two_digits_of_u_and_the_value_at_the_same_place(value, u):
    """JCGM 100:2008 §7.2.6: u to two significant digits, the value rounded to the same
    decimal place, each within half a unit of that place of the unrounded number."""
    v_text, u_text = round_to_uncertainty(value, u)
    places = lambda t: -Decimal(t).as_tuple().exponent  # noqa: E731 - decimal places shown
    if "." in u_text:
        assert places(v_text) == places(u_text)
        assert _significant_digits(u_text) == 2
    else:  # u of 100 or more: both are whole numbers, u's trailing zeros are placeholders
        assert "." not in v_text
        assert _significant_digits(u_text.rstrip("0")) <= 2
    step = 10.0 ** -places(u_text) if "." in u_text else 10.0 ** (len(u_text) - 2)
    assert abs(float(v_text) - value) <= 0.5 * step * (1 + 1e-9) + 1e-12 * abs(value)
    assert abs(float(u_text) - u) <= 0.5 * step * (1 + 1e-9) + 1e-12 * u


def _result(**summary):
    """A result as format_summary reads it: the figures, instrument and input as attributes
    (the names of the JSON keys), no lines, no warnings."""
    from types import SimpleNamespace

    base = dict.fromkeys(("resolved", "fwhm_upper_bound_nm", "coherence_length_lower_bound_mm",
                          "chromaticity_xy", "dominant_wavelength_nm", "modes"))
    base.update({"kind": "broadband", "centre_wavelength_nm": 593.53286537,
                 "expanded_uncertainty_nm": 0.0046123, "coverage_factor": 2.57,
                 "centre_wavelength_air_nm": 593.37583, "frequency_thz": 505.0983,
                 "peak_wavelength_nm": 591.26642596, "u_peak_wavelength_nm": 0.0274424,
                 "centroid_wavelength_nm": 593.53286537, "u_centroid_wavelength_nm": 0.0015566,
                 "fwhm_nm": 15.9607239, "u_fwhm_nm": 0.04376297, "detector_weighted": True,
                 "coherence_length_mm": 0.0081234, "u_coherence_length_mm": 0.00041})
    base.update(summary)
    return SimpleNamespace(
        figures=SimpleNamespace(**base),
        instrument=SimpleNamespace(resolution_per_cm=75.665, max_opd_mm=0.12,
                                   min_wavelength_nm=94.2),
        input=SimpleNamespace(record="x.npz", n_samples=100, opd_source="quadrature"),
        lines=[], warnings=[], scan_health=None,
    )


def test_summary_rounds_each_number_to_its_uncertainty():
    text = format_summary(_result())
    # U = 0.0046 nm: four decimals (JCGM 100 §7.2.6), the air value at the same place
    assert "centre wavelength (vacuum): 593.5329 nm ± 0.0046 nm (k = 2.57)" in text
    assert "centre wavelength (air): 593.3758 nm" in text
    # f·U/λ = 0.0039 THz
    assert "frequency: 505.0983 THz ± 0.0039 THz" in text
    assert ("peak 591.266 nm (u = 0.027 nm), centroid 593.5329 nm (u = 0.0016 nm), "
            "FWHM 15.961 nm (u = 0.044 nm)") in text
    # the "coherence length: 0.008 mm": now 8.12 µm with u = 0.41 µm
    assert "coherence length: 8.12 µm (u = 0.41 µm)" in text


def test_summary_bounds_to_two_digits():
    text = format_summary(_result(kind="narrow", resolved=False, fwhm_upper_bound_nm=0.44009,
                                  coherence_length_lower_bound_mm=0.20412,
                                  coherence_length_mm=None))
    assert "linewidth: not resolved, below 0.44 nm; coherence length above 0.20 mm" in text


def test_effective_dof_above_the_infinite_limit_is_null_in_json():
    """Welch–Satterthwaite (GUM G.2b): ν_eff = u_c⁴ / Σ u_i⁴/ν_i. A fit component of
    1e-3 with 30 dof beside a Type B component of 1 gives ν_eff = (1 + 1e-6)² · 30 / 1e-12
    = 3.0e13: the coverage factor takes it as infinite (k = 2) and so does the JSON (null)."""
    big = Budget("y", "nm", (Component("fit", 1e-3, 30, "A"), Component("ref", 1.0)))
    assert big.effective_dof == pytest.approx((1 + 1e-6) ** 2 * 30 / 1e-12, rel=1e-9)
    assert big.effective_dof > DOF_AS_INFINITE
    assert big.coverage_factor == 2.0
    assert big.to_dict("_nm")["effective_dof"] is None
    # a budget dominated by the fit keeps its finite figure: ν_eff = 30 (1 + 1e-6)² ≈ 30
    small = Budget("y", "nm", (Component("fit", 1.0, 30, "A"), Component("ref", 1e-3)))
    assert small.to_dict("_nm")["effective_dof"] == pytest.approx(30 * (1 + 1e-6) ** 2,
                                                                   rel=1e-9)


def test_calibrate_prints_the_files_deviation_with_its_sign(tmp_path, capsys):
    """A record made with a 632.991 nm reference, analysed as if the reference were 5 ppm
    shorter: every wavelength reads 5 ppm short, the effective reference is the true one and
    deviation_ppm = 632.991 / (632.991 (1 − 5e-6)) − 1 = +5.000025 ppm (closed form). The
    printed figure is the saved one, same sign, rounded to its uncertainty."""
    rec = tmp_path / "known.csv"
    status, _, err = run(capsys, ["simulate", rec, "--source", "laser:532.24503610nm",
                                  "--duration", "1s", "--opd-centre", "2mm", "--seed", "4"])
    assert status == 0, err
    stated = 632.991 * (1 - 5e-6)
    cal = tmp_path / "rig.json"
    status, out, err = run(capsys, ["calibrate", rec, "--known-line",
                                    "laser_standards:532.2450361nm", "--reference-wavelength",
                                    f"{stated!r}nm", "--reference-uncertainty", "0ppm",
                                    "--medium", "vacuum", "--save", cal])
    assert status == 0, err
    saved = json.loads(cal.read_text())
    dev, u_dev = saved["deviation_ppm"], saved["u_deviation_ppm"]
    # the closed form within 4 standard uncertainties of the fit (common practice)
    assert abs(dev - 5.000025) < 4 * u_dev
    value, u_text = round_to_uncertainty(dev, u_dev, sign=True)
    assert f"deviation_ppm: {value} ppm ± {u_text} ppm" in out
    assert value.startswith("+") and "the rig reads short" in out
    assert "-" + value[1:] not in out
