"""Resolved lines narrower than a few resolution elements, their wings, close pairs and the
coherence length of a fitted profile (issue 11, items 7 and 9).

The records are closed-form interferograms written here (no simulator): a line of integrated
strength s, centre σ₀ and coherence function γ(x) gives ``s·γ(x)·cos(2πσ₀x)`` (Wiener–Khinchin,
Goodman, *Statistical Optics*, 1985, §3.4 and §5.2). For a Voigt profile — a Gaussian of FWHM g
convolved with a Lorentzian of FWHM l — γ is the product of the two factors' transforms
(convolution theorem, Bracewell, *The Fourier Transform and Its Applications*, 3rd ed., ch. 6):

``γ(x) = exp(−(πgx)²/(4 ln 2)) · exp(−πl|x|)``

(the Gaussian exp(−4 ln2 σ²/g²) transforms to exp(−π²g²x²/(4 ln 2)), the Lorentzian of
half-width l/2 to exp(−πl|x|)). The first test checks this pair against
scipy.special.voigt_profile, so every truth below rests on a general library. White Gaussian
noise from seeded generators.
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import special
from scipy.integrate import quad
from test_lines import DX, closed_form_spectrum

from ftsource.lines.fitting import find_lines, fit_line
from ftsource.measure.coherence import (
    CoherenceEstimate,
    line_coherence,
    voigt_coherence_length_cm,
)
from ftsource.spectrum.spectrum import LineShape

LN2 = np.log(2.0)
S0 = 1e7 / 650.0
W05 = S0 * 0.5 / 650.0  # a 0.5 nm FWHM at 650 nm, in cm⁻¹ (Δσ = σΔλ/λ)
BAND = (1e7 / 900.0, 1e7 / 400.0)


def gamma(x, g=0.0, lor=0.0):
    """Coherence function of a Voigt line (closed form, module docstring)."""
    return np.exp(-((np.pi * g * x) ** 2) / (4 * LN2) - np.pi * lor * np.abs(x))


def record(L_cm, g, lor, seed, noise=0.003, lines=((S0, 1.0),), x0=None):
    """One sweep through ZPD (or from ``x0``) of lines ``(σ, strength)`` sharing one profile."""
    n = int(round(2 * L_cm / DX)) + 1
    start = -L_cm if x0 is None else x0
    x = start + DX * np.arange(n)
    rng = np.random.default_rng(seed)
    y = sum(s * gamma(x, g, lor) * np.cos(2 * np.pi * c * x) for c, s in lines)
    return closed_form_spectrum([y + noise * rng.normal(size=n)], x[0])


def test_voigt_transform_pair_against_scipy():
    """The line shape of an unapodized, very long scan is the intrinsic profile itself: the
    cosine transform of γ above must equal scipy.special.voigt_profile (σ = g/(2√(2 ln 2)),
    γ_L = l/2), for the quadrature used by the fits as well as the reference one."""
    g, lor = 1.3, 0.8
    shape = LineShape("boxcar", (40.0,), (1.0,))  # γ(40 cm) < 1e-40: no truncation
    d = np.linspace(-6.0, 6.0, 241)
    ref = special.voigt_profile(d, g / (2 * np.sqrt(2 * LN2)), lor / 2)
    assert np.allclose(shape.kernel(d, g, lor), ref, rtol=1e-9, atol=1e-12 * ref.max())
    ev = shape.evaluator(S0 + d)
    assert np.allclose(ev(S0, g * g, lor), ref, rtol=1e-9, atol=1e-12 * ref.max())


def test_voigt_coherence_length_closed_form():
    """L_c = ∫S²dσ for a unit-area profile (Parseval, Goodman §5.2): numerical quadrature of
    scipy's Voigt profile; pure limits 0.66428/g (√(2 ln2/π)) and 1/(πl)."""
    for g, lor in ((1.0, 0.0), (0.0, 1.0), (1.0, 0.7), (0.2, 2.0), (3.0, 0.1)):
        if g == 0.0:
            ref = 1 / (np.pi * lor)
        else:
            f = lambda s, g=g, lor=lor: special.voigt_profile(  # noqa: E731
                s, g / (2 * np.sqrt(2 * LN2)), lor / 2) ** 2
            ref = 2 * quad(f, 0, np.inf, limit=500)[0]
        assert voigt_coherence_length_cm(g, lor) == pytest.approx(ref, rel=1e-7)
    assert voigt_coherence_length_cm(1.0, 0.0) == pytest.approx(np.sqrt(2 * LN2 / np.pi))


@pytest.mark.parametrize("kind", ["lorentzian", "gaussian", "voigt"])
@pytest.mark.parametrize("L_cm", [0.1, 0.2, 0.4])
def test_a_resolved_line_is_one_line_of_the_right_width(kind, L_cm):
    """A 0.5 nm line through ZPD at 1.3, 2.6 and 5.2 resolution elements: one line (the
    Lorentzian wings were reported as lines at 43 % and 4.7 %, and as a 3-mode comb), its
    FWHM within 3 of its stated u of the truth, the profile never claimed wrongly."""
    g, lor = {"lorentzian": (0.0, W05), "gaussian": (W05, 0.0),
              "voigt": (0.6 * W05, 0.5 * W05)}[kind]
    true_w = 0.5346 * lor + np.sqrt(0.2166 * lor**2 + g**2)  # Olivero & Longbothum 1977
    for seed in range(3):
        spec = record(L_cm, g, lor, 100 + seed)
        fits = find_lines(spec, band_per_cm=BAND)
        assert len(fits) == 1, [(f.centre_per_cm - S0, f.area) for f in fits]
        f = fits[0]
        assert f.resolved
        assert abs(f.fwhm_per_cm - true_w) < 3 * f.u_fwhm_per_cm + 2e-3 * true_w
        assert abs(f.centre_per_cm - S0) < 4 * f.u_centre_per_cm
        assert f.profile in ("undetermined", kind, "voigt")
        assert not f.pair_possible


def test_the_profile_choice_reaches_the_uncertainty():
    """At 1.3 elements and modest SNR Gaussian and Lorentzian fit alike: the width's u holds
    the spread between them (Burnham & Anderson 2002 eq. 4.9), so the truth is covered."""
    hits = 0
    for seed in range(12):
        spec = record(0.1, 0.0, W05, 300 + seed, noise=0.05)
        f = fit_line(spec, S0)
        assert f.resolved and f.profile == "undetermined"
        spread = abs(f.profile_widths["gaussian"][0] - 0.0)  # the Gaussian's own FWHM
        assert set(f.profile_weights) >= {"gaussian", "lorentzian"}
        assert spread > 0
        hits += abs(f.fwhm_per_cm - W05) <= 2 * f.u_fwhm_per_cm
    assert hits >= 10  # k = 2 (≈ 95 %); 10 of 12 allows one or two misses by chance


def test_a_real_weak_line_beside_a_resolved_line_is_kept():
    """A narrow line at 5 % placed 4 FWHM from a resolved Lorentzian: two lines beat one
    profile clearly (ΔBIC ≫ 10), so it stays a line."""
    L = 0.4
    n = int(round(2 * L / DX)) + 1
    x = -L + DX * np.arange(n)
    s1 = S0 + 4 * W05
    rng = np.random.default_rng(9)
    y = (gamma(x, 0, W05) * np.cos(2 * np.pi * S0 * x) + 0.05 * np.cos(2 * np.pi * s1 * x)
         + 0.003 * rng.normal(size=n))
    fits = find_lines(closed_form_spectrum([y], x[0]), band_per_cm=BAND)
    assert len(fits) == 2
    weak = min(fits, key=lambda f: f.area)
    assert weak.centre_per_cm == pytest.approx(s1, abs=0.05 * W05)


@pytest.mark.parametrize("sep_elements", [0.94, 1.4])
def test_a_close_pair_is_reported_as_possible(sep_elements):
    """Two equal narrow lines 0.94 and 1.4 resolution elements apart (a Na D-like pair
    shrunk; the beating envelope hides ZPD, so these are magnitude spectra): never one broad
    line — either the pair fits clearly better (ΔAIC > 10) and two lines are reported at the
    right places (before: one resolved line, or one line off by a third of the separation), or
    ``pair_possible`` is set."""
    L = 0.05
    spec0 = record(L, 0.0, 0.0, 0)
    ils = spec0.line_shape.fwhm_per_cm
    d = sep_elements * ils
    for seed in range(3):
        spec = record(L, 0.0, 0.0, 500 + seed, noise=0.01,
                      lines=((S0 - d / 2, 1.0), (S0 + d / 2, 1.0)))
        fits = find_lines(spec, band_per_cm=BAND)
        if len(fits) == 2:
            got = sorted(f.centre_per_cm for f in fits)
            assert got == pytest.approx([S0 - d / 2, S0 + d / 2], abs=0.05 * ils)
        else:
            assert len(fits) == 1 and fits[0].pair_possible


def test_line_coherence_takes_the_visibility_when_the_profile_is_ambiguous():
    """Closed forms: a decided profile gives its own L_c (1/(πl) for a Lorentzian, Goodman
    §5.2); an ambiguous one takes the visibility route, or else the weighted mean with the
    spread of 0.66428/w against 0.31831/w in its uncertainty."""
    w = 2.0
    widths = {"gaussian": (w, 0.0, 0.01), "lorentzian": (0.0, w, 0.01)}
    decided = line_coherence(widths, {"gaussian": 0.01, "lorentzian": 0.99})
    assert decided.length_cm == pytest.approx(1 / (np.pi * w))
    vis = CoherenceEstimate(0.2, 0.1, "d", "visibility", 0.004)
    amb = line_coherence(widths, {"gaussian": 0.5, "lorentzian": 0.5}, visibility=vis)
    assert amb.length_cm == 0.2 and "visibility" in amb.method
    avg = line_coherence(widths, {"gaussian": 0.5, "lorentzian": 0.5})
    lg, ll = np.sqrt(2 * LN2 / np.pi) / w, 1 / (np.pi * w)
    assert avg.length_cm == pytest.approx((lg + ll) / 2, rel=1e-9)
    assert avg.u_length_cm >= (lg - ll) / 2


def test_envelope_decay_tells_a_decaying_sweep_from_a_flat_one():
    """A 0.30 nm Lorentzian scanned 0.5–4.5 mm from ZPD: |γ| = exp(−πl|x|) falls by e^(−πl·0.4
    cm) ≈ e⁻⁹ across the sweep (closed form), far above ENVELOPE_DECAY_LIMIT; a monochromatic
    line's envelope is flat (ratio 1 within the noise)."""
    from ftsource.measure.coherence import ENVELOPE_DECAY_LIMIT, envelope_decay

    lor = S0 * 0.30 / 650.0
    x = 0.05 + DX * np.arange(int(0.4 / DX))
    rng = np.random.default_rng(3)
    decaying = gamma(x, 0, lor) * np.cos(2 * np.pi * S0 * x) + 1e-5 * rng.normal(size=x.size)
    flat = np.cos(2 * np.pi * S0 * x) + 0.01 * rng.normal(size=x.size)
    assert envelope_decay(decaying) > 100 * ENVELOPE_DECAY_LIMIT
    assert envelope_decay(flat) < 1.05


@pytest.mark.slow
@pytest.mark.parametrize("kind", ["lorentzian", "gaussian", "voigt"])
def test_coverage_of_resolved_lines_over_repeated_records(kind):
    """GUM §6 / issue 11: over 24 records of one resolved line (2.6 resolution elements, fresh
    noise each), the truth lies within ±U (k = 2) in at least 90 % of them, for the centre and
    for the FWHM, and the stated U is not inflated more than 5× over the observed scatter
    (2·sd). Truth: the closed-form interferogram above."""
    g, lor = {"lorentzian": (0.0, W05), "gaussian": (W05, 0.0),
              "voigt": (0.6 * W05, 0.5 * W05)}[kind]
    true_w = 0.5346 * lor + np.sqrt(0.2166 * lor**2 + g**2)  # Olivero & Longbothum 1977
    c, uc, w, uw = [], [], [], []
    for seed in range(24):
        f = fit_line(record(0.2, g, lor, 7000 + seed, noise=0.02), S0)
        assert f.resolved
        c.append(f.centre_per_cm)
        uc.append(f.u_centre_per_cm)
        w.append(f.fwhm_per_cm)
        uw.append(f.u_fwhm_per_cm)
    for vals, us, truth in ((c, uc, S0), (w, uw, true_w)):
        vals, us = np.array(vals), np.array(us)
        assert np.mean(np.abs(vals - truth) <= 2 * us) >= 0.9
        assert np.median(2 * us) <= 5 * 2 * np.std(vals, ddof=1)


# ------------------------------------------------------------------------------------------
# whole records from a rig model written here (not ftsource.simulate)

REF_NM = 632.991  # free-running He-Ne vacuum wavelength (CIPM 2007; check-values §6)


def rig_record(gamma_fn, sigma0, *, centre_cm, amplitude_cm, seed, fs=96_000.0, duration=2.0):
    """A quadrature-reference record of a source with coherence function ``gamma_fn``.

    Mirror: sinusoidal OPD ``centre + A sin(2πft)`` with a 4 % speed wobble at 3.7 Hz (rounded
    turnarounds, uneven speed). Reference channels: I = cos φ + 2 % second harmonic, Q = 0.9
    sin(φ + 4°) + 1.5 % third harmonic, both quantised to 1/512 (an 10-bit-like ADC over ±1)
    — harmonic distortion and quantisation that an ellipse fit does not model. Source: the
    closed-form ``γ(x)cos(2πσ₀x)`` plus white noise.
    """
    from ftsource.io.records import Record

    rng = np.random.default_rng(seed)
    t = np.arange(int(fs * duration)) / fs
    f = 0.5
    ph = 2 * np.pi * f * t + 0.04 * np.sin(2 * np.pi * 3.7 * t)
    x = centre_cm + amplitude_cm * np.sin(ph)
    phi = 2 * np.pi * x / (REF_NM * 1e-7)
    q = 1 / 512
    ref_i = np.round((np.cos(phi) + 0.02 * np.cos(2 * phi)) / q) * q
    ref_q = np.round((0.9 * np.sin(phi + np.deg2rad(4)) + 0.015 * np.sin(3 * phi)) / q) * q
    sig = 1.0 + gamma_fn(x) * np.cos(2 * np.pi * sigma0 * x) + 0.003 * rng.normal(size=t.size)
    return Record({"signal": sig, "ref_i": ref_i, "ref_q": ref_q}, sample_rate_hz=fs)


def _analyze(rec):
    import warnings

    from ftsource.analysis import AnalysisOptions, analyze
    from ftsource.errors import FtsourceWarning

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", FtsourceWarning)
        return analyze(rec, AnalysisOptions(reference_wavelength_nm=REF_NM,
                                            medium="vacuum")).to_dict()


@pytest.mark.slow
def test_a_resolved_lorentzian_through_zpd_end_to_end():
    """Issue 11 item 7: a 0.5 nm Lorentzian through ZPD (≈ 4 resolution elements): one line,
    FWHM and coherence length within their expanded uncertainties of the closed forms
    (L_c = 1/(πl), Goodman §5.2: 0.2690 mm; reported before as 0.554 ± 0.016 mm, with the wings
    as lines at 43 % and 4.7 %)."""
    for seed in (1, 2):
        d = _analyze(rig_record(lambda x: gamma(x, 0, W05), S0, centre_cm=0.0,
                                amplitude_cm=0.3, seed=seed))
        sm = d["summary"]
        # within ±20 nm (40 FWHM) of the line, one line: no wing lines (products of the
        # distorted reference with the source far away are the resampling's, not the fit's)
        near = [ln for ln in d["lines"] if abs(ln["wavelength_nm"] - 650.0) < 20.0]
        assert sm["kind"] == "narrow" and len(near) == 1
        assert sm["resolved"] is True
        assert abs(sm["fwhm_nm"] - 0.5) <= max(2 * sm["u_fwhm_nm"], 1e-3)
        lc_mm = 10 / (np.pi * W05)
        assert abs(sm["coherence_length_mm"] - lc_mm) <= max(2 * sm["u_coherence_length_mm"],
                                                            0.01 * lc_mm)
        assert sm["coherence_length_method"]


@pytest.mark.slow
def test_no_width_bound_from_a_decaying_sweep_without_zpd():
    """Issue 11 item 8: a 0.30 nm Lorentzian scanned 0.5–4.5 mm from ZPD was reported "below
    0.258 nm (≈95 %)" and "coherence length above 0.521 mm" (truth 0.300 nm and 0.448 mm).
    The visibility falls by exp(−πl·0.4 cm) ≈ e⁻⁹ across the sweep (closed form), so neither
    bound is given, with a warning that says why; a monochromatic line scanned the same way
    keeps its bound (its envelope is flat)."""
    lor = S0 * 0.30 / 650.0
    d = _analyze(rig_record(lambda x: gamma(x, 0, lor), S0, centre_cm=0.25, amplitude_cm=0.2,
                            seed=4))
    sm = d["summary"]
    assert sm["fwhm_upper_bound_nm"] is None and sm["fwhm_nm"] is None
    assert sm["coherence_length_lower_bound_mm"] is None and sm["coherence_length_mm"] is None
    assert any("zero path difference" in w and "decay" in w for w in d["warnings"])
    d = _analyze(rig_record(lambda x: np.ones_like(x), S0, centre_cm=0.25, amplitude_cm=0.2,
                            seed=5))
    assert d["summary"]["fwhm_upper_bound_nm"] is not None


def test_one_sweep_scatter_rule():
    """Issue 11 item 13: max(u, s/√n) (GUM §4.2.3, standard error of the mean), with n − 1
    degrees of freedom when the scatter wins — the rule broadband figures already used."""
    from ftsource.measure.uncertainty import scatter_rule, with_sweep_scatter

    vals = [1.0, 1.2, 0.8, 1.1, 0.9]  # s = 0.1581, s/√5 = 0.07071 (closed form)
    se = np.std(vals, ddof=1) / np.sqrt(5)
    assert with_sweep_scatter(0.01, np.inf, vals) == pytest.approx((se, 4.0))
    assert with_sweep_scatter(0.2, np.inf, vals) == (0.2, np.inf)
    assert with_sweep_scatter(0.01, 7.0, [1.0]) == (0.01, 7.0)  # one sweep: nothing to add
    assert scatter_rule(float("nan"), np.inf, 0.3, 3) == (0.3, 2.0)


def test_no_identification_when_u_exceeds_a_resolution_element():
    """Issue 11 item 10: a 0.05 % artefact with u = 1.3 nm was named "Ne I". Within a
    tolerance wider than a resolution element almost any entry matches, so none is named; the
    nearest entries are still listed. Ne I 640.2248 nm (air; NIST ASD, in the bundled list)."""
    from ftsource.lines.identify import identify_line

    wl = 640.4 + 0.3  # about 0.3 nm off the neon line's vacuum wavelength
    loose = identify_line(wl, 1.3, 1.5, resolution_nm=10.0)
    assert loose.best is not None  # u below the resolution: a match is allowed
    gated = identify_line(wl, 1.3, 1.5, resolution_nm=0.4)
    assert gated.best is None
    assert gated.nearest and not any(c.within_tolerance for c in gated.nearest)
