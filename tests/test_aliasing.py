"""Aliasing: where folded light lands, and the verdicts the analysis gives each line.

Oracles: the folding rule of sampled signals (a frequency f sampled at f_s is
indistinguishable from |f − m f_s|; Nyquist 1928, Shannon 1949), checked here by brute force
over dense samples of the band, and end-to-end records simulated from closed-form fringes with
known lines (``ftsource.simulate``, itself tested in test_simulate.py).
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource import simulate as S
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.lines.aliasing import (
    SHORTEST_DETECTED_NM,
    assess_lines,
    band_at_risk,
    folded_band,
    speed_step_needed,
)
from ftsource.lines.sweeps import AliasCheck, LineVerdict


def _brute_force_image(lo, hi, F, n=200_001):
    s = np.linspace(lo, hi, n)
    return np.abs(s - F * np.round(s / F))


def _covers(intervals, values, tol):
    return all(any(a - tol <= v <= b + tol for a, b in intervals) for v in values)


# --------------------------------------------------------------------------------------------
# folded_band: closed-form cases and a brute-force property


@pytest.mark.parametrize(
    ("lo", "hi", "F", "expected"),
    [
        (60.0, 80.0, 100.0, [(20.0, 40.0)]),  # first fold: σ → F − σ
        (40.0, 60.0, 100.0, [(40.0, 50.0)]),  # straddles F/2: both sides land on [40, 50]
        (90.0, 130.0, 100.0, [(0.0, 30.0)]),  # straddles F: |σ − F|
        (10.0, 20.0, 100.0, [(10.0, 20.0)]),  # below F/2: unchanged
        (0.0, 80.0, 100.0, [(0.0, 50.0)]),  # from 0 past F/2: everything
        (1.0, 4.0, 5.0, [(1.0, 2.5)]),  # wider than F/2 yet not everything
        (30.0, 140.0, 100.0, [(0.0, 50.0)]),  # wider than F: everything
        (160.0, 170.0, 100.0, [(30.0, 40.0)]),  # second fold: 2F − σ
    ],
)
def test_folded_band_closed_form(lo, hi, F, expected):
    np.testing.assert_allclose(folded_band(lo, hi, F), expected, atol=1e-12)


@settings(max_examples=200, deadline=None)
@given(
    lo=st.floats(0.0, 500.0),
    width=st.floats(0.0, 400.0),
    F=st.floats(5.0, 200.0),
)
def test_folded_band_matches_brute_force(lo, width, F):
    # property: every sampled σ of the band folds into the returned intervals, and every
    # returned interval is reached (its ends are within a sample spacing of folded samples)
    hi = lo + width
    got = folded_band(lo, hi, F)
    img = _brute_force_image(lo, hi, F)
    step = max(width / 200_000, 1e-9)
    assert _covers(got, img, 1e-9 * F)
    for a, b in got:
        assert np.min(np.abs(img - a)) <= step + 1e-9 * F
        assert np.min(np.abs(img - b)) <= step + 1e-9 * F
    for (_, b1), (a2, _) in zip(got[:-1], got[1:], strict=True):
        assert b1 < a2  # disjoint, sorted


def test_folded_band_refuses_nonsense():
    with pytest.raises(ValueError):
        folded_band(10.0, 5.0, 100.0)
    with pytest.raises(ValueError):
        folded_band(1.0, 2.0, 0.0)


def test_band_at_risk_empty_when_sampling_covers_the_detector():
    # F = f_s/v = 48 kHz / 0.2 cm/s = 240 000 cm⁻¹: the alias-free limit β F = 120 000 cm⁻¹
    # (83 nm) lies beyond 200 nm (50 000 cm⁻¹), so nothing detectable folds
    assert band_at_risk(48_000.0, [0.2], 0.5) == []


def test_band_at_risk_one_speed_closed_form():
    # F = 3200 Hz / 0.1 cm/s = 32 000 cm⁻¹; light from β F = 16 000 cm⁻¹ (625 nm) to 50 000
    # cm⁻¹ (200 nm) spans more than F/2, so it folds onto the whole [0, F/2]
    assert band_at_risk(3200.0, [0.1], 0.5) == [(0.0, 16_000.0)]
    # with light only down to 500 nm (20 000 cm⁻¹): [16 000, 20 000] folds onto [12 000, 16 000]
    np.testing.assert_allclose(
        band_at_risk(3200.0, [0.1], 0.5, shortest_nm=500.0), [(12_000.0, 16_000.0)]
    )
    assert SHORTEST_DETECTED_NM == 200.0


def test_speed_step_needed_closed_form():
    # s > k·√2·rtol: 3 · 1.41421 · 1 % = 4.243 %
    assert speed_step_needed(0.01) == pytest.approx(4.2426, rel=1e-4)


# --------------------------------------------------------------------------------------------
# assess_lines on hand-made checks


def _check(*verdicts):
    return AliasCheck(tuple(verdicts), "criterion", 0.4)


def test_assess_lines_verdicts():
    band = [(10_000.0, 16_000.0)]
    real = LineVerdict(12_500.0, 0.1, 0, "real", "stays put", centres_per_cm=(12_500.0, 12_500.1))
    alias = LineVerdict(13_900.0, 0.1, 0, "alias", "moves", 25_000.0, 1, (13_900.0, 2_800.0))
    weak = LineVerdict(11_000.0, 0.1, 0, "cannot be excluded", "speeds too alike")
    got = assess_lines(
        [5_000.0, 12_500.05, 13_900.3, 11_000.0, 15_000.0, 17_000.0],
        band,
        _check(real, alias, weak),
        tolerance_per_cm=1.0,
        alias_free_limit_per_cm=16_500.0,
    )
    assert [g.verdict for g in got] == [
        "not at risk", "ruled out", "alias", "cannot be excluded", "cannot be excluded", "alias",
    ]
    assert got[0].message == "" and got[1].message == ""
    assert "about 400.0 nm (fold 1)" in got[2].message
    # the fold's own uncertainty: m·F·rtol with m·F = σ_true + σ_app = 38 900.3 cm⁻¹ and the
    # default 1 %, i.e. 389.0 cm⁻¹ = 6.2 nm at 400 nm (closed form)
    assert "known to about ±6.2 nm" in got[2].message
    assert got[2].true_sigma_per_cm == 25_000.0
    assert "speeds too alike" in got[3].message and "11000" not in got[3].message
    assert "909.09 nm" in got[3].message  # 1e7 / 11 000
    assert "too weak for the speed-diversity check" in got[4].message
    assert got[5].message == ""  # beyond the limit: flagged by the caller


def test_assess_lines_without_a_check_says_why():
    (got,) = assess_lines([12_000.0], [(0.0, 16_000.0)], None, tolerance_per_cm=1.0,
                          speed_step_percent=4.2)
    assert got.verdict == "cannot be excluded"
    assert "only one usable sweep" in got.message and "4.2 % apart" in got.message


def test_assess_lines_alias_of_undetectable_light_is_called_an_image():
    alias = LineVerdict(6_600.0, 0.1, 0, "alias", "moves", 70_000.0, 2, (6_600.0, 3_000.0))
    (got,) = assess_lines([6_600.0], [(0.0, 16_000.0)], _check(alias), tolerance_per_cm=1.0)
    assert got.verdict == "alias" and "image of another alias" in got.message


# --------------------------------------------------------------------------------------------
# end to end: an encoder rig sampled slowly (invented), lines at 800 nm and 400 nm

FS = 3200.0


@cache
def _encoder_result(factors, jitter=0.0):
    """800 nm (supported at both speeds) and 400 nm (its fringes at 2.0–2.8 kHz exceed
    f_s/2 = 1.6 kHz, so it folds) recorded with a position encoder; ``factors`` alternate the
    mirror speed sweep by sweep."""
    src = S.SourceModel(
        (S.SpectralLine(1e7 / 800.0, 1.0), S.SpectralLine(1e7 / 400.0, 1.0)), label="invented"
    )
    scan = S.Scan(
        sample_rate_hz=FS, duration_s=4.0, opd_centre_cm=0.3, opd_amplitude_cm=0.02,
        sweep_rate_hz=1.0, shape=0.999, speed_jitter=jitter, sweep_speed_factors=factors,
    )
    sim = S.simulate(src, scan, S.ReferenceChannel(kind="encoder"), S.Detector(), rng=2)
    return analyze(sim.record, AnalysisOptions(medium="vacuum")).to_dict()


def _line_near(d, nm, tol_nm=0.5):
    near = [ln for ln in d["lines"] if abs(ln["wavelength_nm"] - nm) < tol_nm]
    assert near, [ln["wavelength_nm"] for ln in d["lines"]]
    return max(near, key=lambda ln: ln["snr"])


def test_two_speeds_tell_the_real_line_from_the_alias():
    d = _encoder_result((1.0, 1.4))
    real = _line_near(d, 800.0)
    assert real["flag"] is None and real["aliasing"] == "ruled out"
    # closed form: at the slower speed v the 400 nm line appears at F − σ, F = f_s/v; a
    # nearly triangular sweep (k = 0.999) runs at its peak speed 2π·A·f·k/arcsin(k) over
    # almost all of its travel (Scan.peak_opd_speed_cm_s, tested in test_simulate.py)
    v = S.Scan(opd_amplitude_cm=0.02, sweep_rate_hz=1.0, shape=0.999).peak_opd_speed_cm_s
    apparent_nm = 1e7 / (FS / v - 1e7 / 400.0)
    alias = _line_near(d, apparent_nm, tol_nm=3.0)
    assert alias["flag"] == "alias" and alias["aliasing"] == "alias"
    msgs = [w for w in d["warnings"] if "is an alias, not a source line" in w
            and "light at about" in w]
    assert msgs, d["warnings"]
    # the true wavelength back from the fold. The strongest alias feature (the bulk of the
    # sweeps at their steady speed): within 0.5 %. The weaker ones come from the slower,
    # rounded ends of the sweeps, whose speed differs from the sweep's median: each within
    # the check's 1 % speed tolerance, 1 % of F ≈ 390 cm⁻¹ ≈ 6.3 nm at 400 nm.
    true_nm = {
        float(w.split("feature at ")[1].split(" nm")[0]):
        float(w.split("light at about ")[1].split(" nm")[0]) for w in msgs
    }
    assert true_nm[round(alias["wavelength_nm"], 2)] == pytest.approx(400.0, rel=5e-3)
    assert all(abs(t - 400.0) < 6.3 for t in true_nm.values()), true_nm
    # the summary describes the real line, not the alias
    assert d["summary"]["centre_wavelength_nm"] == pytest.approx(800.0, abs=0.05)


def test_one_speed_cannot_exclude_aliasing():
    d = _encoder_result(())
    real = _line_near(d, 800.0)
    assert real["aliasing"] == "cannot be excluded"
    lead = "aliasing cannot be excluded for the line at 800.00 nm"
    text = [w for w in d["warnings"] if lead in w]
    assert text and "too alike" in text[0] and "mirror speeds at least" in text[0]
    # the general caveat names the alias-free limit and where folded light would land
    assert any(w.startswith("light shorter than") and "folds it onto" in w for w in d["warnings"])


def test_speed_varying_within_sweeps_widens_what_the_check_needs():
    # a wobbling drive (±8 % of the speed, within and between sweeps): the sweeps' median
    # speeds differ, but each sweep's own speed spread sets the check's tolerance, so the
    # step it asks for grows beyond the 4.2 % of a steady drive; nothing may crash on the
    # smeared alias (a broad feature reaching zero wavenumber)
    d = _encoder_result((), jitter=0.08)
    real = _line_near(d, 800.0)
    assert real["aliasing"] == "cannot be excluded"
    asks = [float(w.split("mirror speeds at least ")[1].split(" %")[0])
            for w in d["warnings"] if "mirror speeds at least" in w]
    assert asks and min(asks) > 4.3
    assert any("speed uncertainty" in w for w in d["warnings"])


def test_well_sampled_record_is_not_at_risk():
    # a He-Ne referenced record at 48 kHz: the alias-free limit is far below 200 nm
    sim = S.simulate(S.laser(532.0), S.Scan(duration_s=0.6, opd_amplitude_cm=0.02), rng=4)
    d = analyze(sim.record, AnalysisOptions(reference_wavelength_nm=632.991,
                                             medium="vacuum")).to_dict()
    assert d["instrument"]["min_wavelength_nm"] < SHORTEST_DETECTED_NM
    assert d["lines"] and all(ln["aliasing"] == "not at risk" for ln in d["lines"])
    assert not any("alias" in w for w in d["warnings"])
