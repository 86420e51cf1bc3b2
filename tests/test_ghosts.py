"""Ghost lines (ftsource.lines.ghosts and the flags of ``analyze``): reference light, harmonics and
intermodulation products of a clipped detector.

Oracles:

* closed-form product positions of a memoryless nonlinearity: harmonics m·σ and mixing
  products |m·σ_i ± n·σ_j| of order m + n (S. A. Maas, *Nonlinear Microwave and RF Circuits*,
  2nd ed., 2003, ch. 1 — from memory);
* numpy's FFT of a closed-form clipped two-tone signal, for the product strengths the
  in-band rule relies on;
* the closed-form Gaussian comb of modes (the envelope exp(−4 ln 2 k²/F²), as
  ``ftsource.simulate.multimode`` lays it out);
* records of ``ftsource.simulate`` (closed-form fringes, tested in tests/test_simulate.py) with
  a detector clipping at ``Detector.clip_level`` (``np.minimum(signal, clip_level)``), and
  reference-laser fringes added to the source channel by hand;
* the project's JSON schema (ftsource/schema/result-2.json) checked with ``jsonschema``.
"""

from __future__ import annotations

import dataclasses
import importlib.resources
import json
from functools import cache

import jsonschema
import numpy as np
import pytest

from ftsource import simulate as sim
from ftsource.analysis import AnalysisOptions, analyze
from ftsource.lines.ghosts import IN_BAND_MARGIN, MAX_INTERMOD_ORDER, flag_ghosts
from ftsource.measure.facts import clipped_fraction

S1, S2 = 9000.0, 7000.0  # two source lines, cm⁻¹ (invented)
TOL = 5.0  # cm⁻¹


def _flags(lines, **kw):
    """flag_ghosts on a {centre: strength} mapping; returns {centre: flag}."""
    c = list(lines)
    f = flag_ghosts(c, [lines[x] for x in c], [TOL] * len(c), **kw)
    return dict(zip(c, f, strict=True))


# --------------------------------------------------------------------------------------------
# the pure function: closed-form combinations


def test_harmonics_of_every_order_up_to_the_band_edge_are_flagged():
    # closed form: harmonics of σ lie at m·σ (Maas 2003, ch. 1, from memory)
    s0 = 4000.0
    lines = {s0: 1.0, 2 * s0 + 1.0: 0.1, 3 * s0 - 2.0: 0.05, 4 * s0: 0.02, 7 * s0: 0.01}
    f = _flags(lines, clipped=True, band_edge_per_cm=50_000.0)
    assert f == {s0: None, 2 * s0 + 1.0: "harmonic", 3 * s0 - 2.0: "harmonic",
                 4 * s0: "harmonic", 7 * s0: "harmonic"}
    # beyond the band edge no harmonic is predicted: 7σ = 28 000 > 20 000
    f = _flags(lines, clipped=True, band_edge_per_cm=20_000.0)
    assert f[7 * s0] is None and f[4 * s0] == "harmonic"
    # off by more than the tolerance: not a harmonic
    assert _flags({s0: 1.0, 2 * s0 + 2 * TOL: 0.1}, clipped=True)[2 * s0 + 2 * TOL] is None


def test_sum_and_difference_products_are_flagged_up_to_the_order():
    # closed form: m·σ1 ± n·σ2 (Maas 2003, ch. 1, from memory)
    lines = {
        S1: 1.0, S2: 0.6,
        S1 + S2: 0.05,  # order 2, sum
        S1 - S2: 0.05,  # order 2, difference (near zero wavenumber)
        2 * S1 + S2: 0.02,  # order 3
        S1 + 3 * S2: 0.01,  # order 4
        3 * S1 - S2: 0.01,  # order 4, difference (near the second harmonics)
        2 * S1 - S2: 0.03,  # order 3, in band: 0.03·10 ≤ 0.6
        2 * S2 - S1: 0.02,  # order 3, in band
        3 * S1 + 2 * S2: 0.005,  # order 5
    }
    f = _flags(lines, clipped=True)
    assert MAX_INTERMOD_ORDER == 4
    assert f.pop(S1) is None and f.pop(S2) is None
    assert f.pop(3 * S1 + 2 * S2) is None  # order 5 > 4: not searched
    assert set(f.values()) == {"intermodulation"}, f
    # with order 5 allowed it is found
    assert _flags(lines, clipped=True, max_intermod_order=5)[3 * S1 + 2 * S2] == "intermodulation"


def test_a_real_line_near_a_product_but_stronger_than_a_parent_is_not_flagged():
    # a product is weaker than the lines that make it: 0.8 > 0.6 (the weaker parent)
    assert _flags({S1: 1.0, S2: 0.6, S1 + S2: 0.8}, clipped=True)[S1 + S2] is None
    assert _flags({S1: 1.0, S2: 0.6, S1 + S2: 0.59}, clipped=True)[S1 + S2] == "intermodulation"
    # a line near 2σ1 that is stronger than σ1 is the source, and σ1 is not its harmonic
    f = _flags({S1: 1.0, 2 * S1: 1.5}, clipped=True)
    assert f == {S1: None, 2 * S1: None}


def test_products_of_flagged_lines_are_not_products():
    # 2·(2σ1) + σ2 is an order-5 product of the source lines (not searched): the flagged
    # harmonic 2σ1 does not act as a parent
    lines = {S1: 1.0, S2: 0.6, 2 * S1: 0.1, 2 * (2 * S1) + S2: 0.01}
    f = _flags(lines, clipped=True)
    assert f[2 * S1] == "harmonic" and f[4 * S1 + S2] is None


def test_nothing_but_reference_ghosts_is_flagged_when_the_detector_does_not_clip():
    s_ref = 1e7 / 632.991
    lines = {S1: 1.0, S2: 0.6, S1 + S2: 0.05, 2 * S1: 0.1, 2 * S1 - S2: 0.03,
             s_ref + 1.0: 0.2, S1 + s_ref: 0.01, s_ref - S2: 0.01}
    f = _flags(lines, clipped=False, reference_per_cm=s_ref)
    assert f == {S1: None, S2: None, S1 + S2: None, 2 * S1: None, 2 * S1 - S2: None,
                 s_ref + 1.0: "reference-ghost", S1 + s_ref: "reference-ghost",
                 s_ref - S2: None}  # only the strongest line ± σ_ref is a reference ghost
    # no reference laser: nothing at all
    assert set(_flags(lines, clipped=False).values()) == {None}


def test_a_reference_ghost_is_flagged_whatever_its_strength():
    s_ref = 1e7 / 632.991
    f = _flags({s_ref: 3.0, S1: 1.0, s_ref + S1: 0.5}, reference_per_cm=s_ref)
    assert f == {s_ref: "reference-ghost", S1: None, s_ref + S1: "reference-ghost"}


def test_a_lone_strongest_line_at_the_reference_is_the_source():
    # a He-Ne or 633 nm diode measured against a He-Ne reference: nothing else to see, or only
    # lines below REFERENCE_DOMINANCE (10 %) of it away from the reference
    s_ref = 1e7 / 632.991
    assert _flags({s_ref + 0.5: 1.0}, reference_per_cm=s_ref) == {s_ref + 0.5: None}
    f = _flags({s_ref: 1.0, S1: 0.05}, reference_per_cm=s_ref)
    assert f == {s_ref: None, S1: None}
    # at 10 % and above the other line is the source and the reference line a ghost
    f = _flags({s_ref: 1.0, S1: 0.1}, reference_per_cm=s_ref)
    assert f == {s_ref: "reference-ghost", S1: None}


def test_ineligible_lines_are_never_flagged():
    c = [S1, S2, S1 + S2]
    f = flag_ghosts(c, [1.0, 0.6, 0.05], [TOL] * 3, clipped=True, eligible=[True, True, False])
    assert f == [None, None, None]


def test_mismatched_inputs_raise():
    with pytest.raises(ValueError, match="equal"):
        flag_ghosts([1.0, 2.0], [1.0], [TOL, TOL])
    with pytest.raises(ValueError, match="max_intermod_order"):
        flag_ghosts([1.0], [1.0], [TOL], max_intermod_order=1)
    assert flag_ghosts([], [], []) == []


# --------------------------------------------------------------------------------------------
# the in-band rule: products 2σ_i − σ_j versus a real comb of modes


@pytest.mark.parametrize("fwhm_modes", [2.0, 3.0, 4.0, 6.0])
def test_the_modes_of_a_clipped_gaussian_comb_are_not_flagged(fwhm_modes):
    # closed-form comb: mode k at σ0 + kΔ with strength exp(−4 ln 2 k²/F²) (as
    # ftsource.simulate.multimode lays it out); modes above 5 % of the strongest (the
    # fraction ftsource.measure.modes counts). Mode k+1 = 2σ_k − σ_(k−1) exactly, weaker than both.
    s0, d = 15_000.0, 20.0
    k = np.arange(-12, 13)
    a = np.exp(-4 * np.log(2) * k**2 / fwhm_modes**2)
    keep = a >= 0.05
    f = flag_ghosts(s0 + k[keep] * d, a[keep], [0.2 * d] * int(keep.sum()), clipped=True)
    assert keep.sum() >= 3
    assert f == [None] * int(keep.sum())


def test_a_steep_three_line_pattern_is_taken_for_a_product():
    # the same geometry as a comb, but the third line is far weaker than the envelope through
    # the first two would make it: a_k·a_j/a_i² = 0.03·0.6/1 < 1/IN_BAND_MARGIN
    f = _flags({S1: 1.0, S2: 0.6, 2 * S1 - S2: 0.03}, clipped=True)
    assert f[2 * S1 - S2] == "intermodulation"
    # with a source line between it and its parents (as a comb's nearer mode would be), it is
    # not taken for their product; that line (10 000 cm⁻¹) is itself no product of σ1, σ2
    mid = 10_000.0
    f = _flags({S1: 1.0, S2: 0.6, 2 * S1 - S2: 0.03, mid: 0.05}, clipped=True)
    assert f == {S1: None, S2: None, 2 * S1 - S2: None, mid: None}


@cache
def _two_tone_clipped(b, c):
    """Amplitudes at f1, f2, 2f1 − f2, 2f2 − f1 of min(cos 2πf1t + b cos 2πf2t, c) (numpy FFT,
    whole periods so every product falls on a bin)."""
    n, f1, f2 = 1 << 15, 1000, 1100
    t = np.arange(n) / n
    y = np.minimum(np.cos(2 * np.pi * f1 * t) + b * np.cos(2 * np.pi * f2 * t), c)
    amp = np.abs(np.fft.rfft(y)) * 2 / n
    return tuple(float(amp[i]) for i in (f1, f2, 2 * f1 - f2, 2 * f2 - f1))


@pytest.mark.parametrize("b", [1.0, 0.6, 0.3, 0.1])
def test_third_order_products_of_one_sided_clipping_are_flagged(b):
    # a detector saturating above the fringes' mean (c ≥ 0.25 in units of the stronger
    # fringe): numpy's FFT gives the product strengths; the in-band rule must flag both
    for c in np.arange(0.25, 1 + b - 0.05, 0.1):
        a1, a2, p12, p21 = _two_tone_clipped(b, float(c))
        assert max(p12, p21) < min(a1, a2)  # products are weaker than their parents
        f = flag_ghosts([1000.0, 1100.0, 900.0, 1200.0], [a1, a2, p12, p21], [1.0] * 4,
                        clipped=True)
        assert f == [None, None, "intermodulation", "intermodulation"], (b, c, p12, p21)


def test_clipping_far_below_the_mean_gives_products_the_rule_cannot_separate_from_a_comb():
    # the documented limit: clipped below the mean, 2f1 − f2 of two equal fringes is only
    # about 6× weaker (numpy FFT); a comb with an envelope 1.8 mode spacings wide (FWHM) has
    # a_k·a_j/a_i² = exp(−8 ln 2/1.8²) ≈ 0.18 as well
    a1, a2, p12, _ = _two_tone_clipped(1.0, -0.5)
    assert p12 * IN_BAND_MARGIN > min(a1, a2) and p12 * a2 * IN_BAND_MARGIN > a1**2
    f = flag_ghosts([1000.0, 1100.0, 900.0], [a1, a2, p12], [1.0] * 3, clipped=True)
    assert f[2] is None


# --------------------------------------------------------------------------------------------
# end to end: simulated records through analyze

FAST = sim.Scan(duration_s=0.5, opd_amplitude_cm=0.02)
OPTS = AnalysisOptions(reference_wavelength_nm=632.991, medium="vacuum")
L1, L2 = 1100.0, 1300.0  # nm, invented


def _line_schema():
    text = (importlib.resources.files("ftsource") / "schema" / "result-2.json").read_text("utf-8")
    return json.loads(text)["properties"]["lines"]["items"]


def _near(lines, wavelength_nm, tol_nm):
    hits = [ln for ln in lines if abs(ln["wavelength_nm"] - wavelength_nm) < tol_nm]
    assert len(hits) == 1, (wavelength_nm, [ln["wavelength_nm"] for ln in lines])
    return hits[0]


@cache
def _two_lines(clip_level):
    src = sim.SourceModel((sim.SpectralLine(1e7 / L1, 1.0), sim.SpectralLine(1e7 / L2, 0.6)),
                          label="two lines")
    s = sim.simulate(src, FAST, detector=sim.Detector(clip_level=clip_level, noise_rms=0.03))
    return s.record, json.loads(json.dumps(analyze(s.record, OPTS).to_dict()))


def test_a_clipped_two_line_record_flags_harmonics_and_intermodulation():
    # signal = 0.1 + (1 + cos) + 0.6·(1 + cos), scaled to span 0.1–2.1: clipped at 1.6
    record, d = _two_lines(1.6)
    assert clipped_fraction(record.columns["signal"]) > 0.05
    lines = d["lines"]
    s1, s2 = 1e7 / L1, 1e7 / L2
    for wl in (L1, L2):
        assert _near(lines, wl, 0.5)["flag"] is None
    # closed-form positions: 2σ1, 2σ2 (harmonics), σ1 + σ2, 2σ1 − σ2 (products)
    assert _near(lines, 1e7 / (2 * s1), 0.5)["flag"] == "harmonic"
    assert _near(lines, 1e7 / (2 * s2), 0.5)["flag"] == "harmonic"
    assert _near(lines, 1e7 / (s1 + s2), 0.5)["flag"] == "intermodulation"
    assert _near(lines, 1e7 / (2 * s1 - s2), 1.0)["flag"] == "intermodulation"
    # every line of the result other than the two is flagged, and the flags follow the schema
    assert sum(ln["flag"] is None for ln in lines) == 2
    validator = jsonschema.Draft202012Validator(_line_schema())
    for ln in lines:
        assert not list(validator.iter_errors(ln)), ln
    # the summary describes the strongest real line
    sm = d["summary"]
    assert sm["kind"] == "narrow"
    assert abs(sm["centre_wavelength_nm"] - L1) < max(sm["expanded_uncertainty_nm"], 0.05)
    assert any("intermodulation" in w for w in d["warnings"])


def test_the_same_record_unclipped_has_no_ghosts():
    record, d = _two_lines(None)
    assert clipped_fraction(record.columns["signal"]) < 1e-3
    assert [ln["flag"] for ln in d["lines"]] == [None, None]
    assert [round(ln["wavelength_nm"]) for ln in d["lines"]] == [L1, L2]


def test_reference_light_in_the_source_channel_is_flagged_reference_ghost():
    s = sim.simulate(sim.laser(L1), FAST, detector=sim.Detector(noise_rms=0.01))
    cols = dict(s.record.columns)
    # crosstalk: 20 % of the reference fringes (their cos(2π n d/λ_r), offset removed) added
    cols["signal"] = cols["signal"] + 0.2 * (cols["ref_i"] - s.reference.offsets[0])
    record = dataclasses.replace(s.record, columns=cols)
    d = json.loads(json.dumps(analyze(record, OPTS).to_dict()))
    assert _near(d["lines"], 632.991, 0.5)["flag"] == "reference-ghost"
    assert _near(d["lines"], L1, 0.5)["flag"] is None
    assert abs(d["summary"]["centre_wavelength_nm"] - L1) < 0.05
