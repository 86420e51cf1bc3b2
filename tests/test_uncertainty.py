"""Tests of ftsource.measure.uncertainty: the JCGM 100 budget.

Sources:
- JCGM 100:2008 (GUM): a/√3 for a rectangle (4.3.7), law of propagation (5.1.2, 5.2.2),
  Welch–Satterthwaite (G.2b), k_p = t_p(ν_eff) (G.6.2, G.6.4; check-values §10, V).
- GUM H.1.6 end-gauge example: component uncertainties 25, 9.7, 2.9, 16.6 nm with 18, 25.6,
  50, 2 degrees of freedom and u_c = 32 nm, as quoted in the documentation of the R package
  ``propagate`` (function ``WelchSatter``, example "Taken from GUM H.1.6"; V2). GUM's own
  results for it, ν_eff truncated to 16, t_99(16) = 2.92 and U_99 = 93 nm, are from memory.
- NIST/SEMATECH e-Handbook §2.5.7: k = t_{1−α/2,ν}, and k = 2 for large ν (check-values §10, V).
- scipy.stats (PyPI scipy) for Student-t and χ² quantiles.
- Closed forms: mean a/2 and standard deviation a/√12 of a uniform distribution on [0, a];
  P(χ²₁ ≥ 2) = erfc(1); E[χ²_ν/ν] = 1.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from ftsource.errors import FtsourceError, OptionError
from ftsource.measure.uncertainty import (
    Budget,
    Component,
    one_sided_rectangular,
    rectangular,
    sweep_consistency,
    wavelength_budget,
)

# --- rectangular distributions -------------------------------------------------------------


def test_rectangular_is_a_over_root3():
    # GUM 4.3.7, Equation (7): u = a/√3 (closed form)
    assert rectangular(3.0) == pytest.approx(3.0 / math.sqrt(3.0), rel=1e-15)
    assert rectangular(-3.0) == pytest.approx(math.sqrt(3.0), rel=1e-15)


def test_rectangular_matches_monte_carlo_of_uniform():
    # closed form a/√3 against the sample standard deviation of 400 000 uniform draws (fixed
    # seed). The relative standard error of a sample standard deviation is
    # √((κ−1)/(4n)) with kurtosis κ = 1.8 for a uniform: 7e-4 here; tolerance 5e-3 (7 SE).
    a = 2.5
    x = np.random.default_rng(11).uniform(-a, a, 400_000)
    assert x.std(ddof=1) == pytest.approx(rectangular(a), rel=5e-3)


@pytest.mark.parametrize("a", [4e-6, -4e-6, 1.0])
def test_one_sided_correction_and_u_match_monte_carlo(a):
    # closed forms: uniform on [0, a] has mean a/2 and standard deviation |a|/√12.
    # Monte Carlo check, 400 000 draws, fixed seed: the mean's standard error is
    # |a|/√12/√n = 4.6e-4·|a|, tolerance 3e-3·|a| (6.5 SE); the standard deviation as above.
    corr, u = one_sided_rectangular(a)
    assert corr == pytest.approx(a / 2, rel=1e-15)
    assert u == pytest.approx(abs(a) / math.sqrt(12.0), rel=1e-15)
    x = np.random.default_rng(12).uniform(0.0, 1.0, 400_000) * a
    assert abs(x.mean() - corr) < 3e-3 * abs(a)
    assert x.std(ddof=1) == pytest.approx(u, rel=5e-3)
    # the corrected value y_meas − a/2 is centred on the true value: a true value Y measured as
    # Y + e with e uniform on [0, a] gives zero mean error after the correction
    y_true = 7.0
    assert abs(np.mean(y_true + x - corr) - y_true) < 3e-3 * abs(a)


# --- Component -----------------------------------------------------------------------------


def test_component_from_input_applies_sensitivity():
    # GUM 5.1.3: contribution = |c|·u(x) (closed form)
    c = Component.from_input("temperature", 0.5, -2.0e-3, dof=8, kind="A", note="thermometer")
    assert c.u == pytest.approx(1.0e-3, rel=1e-15)
    assert c.sensitivity == -2.0e-3
    assert c.u_input == pytest.approx(0.5, rel=1e-15)
    assert c.dof == 8 and c.kind == "A"


@pytest.mark.parametrize(
    "kwargs",
    [
        {"u": -1.0},
        {"u": math.nan},
        {"u": 1.0, "dof": 0},
        {"u": 1.0, "dof": -3},
        {"u": 1.0, "kind": "C"},
        {"u": 1.0, "sensitivity": 0.0},
    ],
)
def test_component_rejects_bad_values(kwargs):
    with pytest.raises(OptionError) as e:
        Component("x", **kwargs)
    assert isinstance(e.value, FtsourceError) and isinstance(e.value, ValueError)
    assert "'x'" in str(e.value)


# --- Budget: combination, Welch–Satterthwaite, coverage factor ------------------------------

GUM_H16_U = (25.0, 9.7, 2.9, 16.6)  # nm, GUM H.1.6 (V2, see module docstring)
GUM_H16_DOF = (18.0, 25.6, 50.0, 2.0)


def gum_h16_budget(coverage=0.99):
    comps = tuple(
        Component(f"c{i}", u, nu, "A" if i in (0, 3) else "B")
        for i, (u, nu) in enumerate(zip(GUM_H16_U, GUM_H16_DOF, strict=True))
    )
    return Budget("end-gauge length", "nm", comps, coverage)


def test_gum_h16_combined_and_effective_dof():
    b = gum_h16_budget()
    # root sum of squares by hand: √(25² + 9.7² + 2.9² + 16.6²) = √1003.06 = 31.67 nm,
    # which GUM H.1.6 rounds to 32 nm (V2)
    uc = math.sqrt(625.0 + 94.09 + 8.41 + 275.56)
    assert b.combined == pytest.approx(uc, rel=1e-12)
    assert round(b.combined) == 32
    # Welch–Satterthwaite by hand (GUM G.2b): uc⁴ / (25⁴/18 + 9.7⁴/25.6 + 2.9⁴/50 + 16.6⁴/2)
    den = 390625.0 / 18 + 8852.9281 / 25.6 + 70.7281 / 50 + 75933.3136 / 2
    assert b.effective_dof == pytest.approx(uc**4 / den, rel=1e-12)
    assert b.effective_dof == pytest.approx(16.76, abs=0.01)
    assert math.floor(b.effective_dof) == 16  # GUM H.1.6 truncates to 16 (from memory)


def test_gum_h16_coverage_factor_and_expanded():
    b = gum_h16_budget(coverage=0.99)
    # k = t_0.995(16) from scipy.stats; GUM Table G.2 gives 2.92 (from memory)
    assert b.coverage_factor == pytest.approx(stats.t.ppf(0.995, 16), rel=1e-12)
    assert b.coverage_factor == pytest.approx(2.92, abs=0.005)
    # U_99 = 2.92 × 31.67 = 92.5 nm; GUM H.1.6 states 93 nm from u_c rounded to 32 nm
    # (from memory): agreement within that rounding (2.92 × 0.33 nm ≈ 1 nm)
    assert b.expanded == pytest.approx(b.coverage_factor * b.combined, rel=1e-15)
    assert abs(b.expanded - 93.0) < 1.0


@pytest.mark.parametrize("nu", [1, 2, 3, 5, 9, 16, 30, 60])
def test_small_dof_uses_student_t(nu):
    # NIST e-Handbook §2.5.7 / GUM G.6.4: k = t_{0.975}(ν) (scipy.stats.t) while that exceeds 2
    b = Budget("y", "nm", (Component("fit", 1.0, nu, "A"),))
    assert b.effective_dof == pytest.approx(nu, rel=1e-12)
    assert b.coverage_factor == pytest.approx(stats.t.ppf(0.975, nu), rel=1e-12)


def test_noninteger_dof_is_truncated():
    # GUM G.6.4: ν_eff may be truncated to the next lower integer (the rule chosen here)
    b = Budget("y", "nm", (Component("fit", 1.0, 4.7, "A"),))
    assert b.effective_dof == pytest.approx(4.7, rel=1e-12)
    assert b.coverage_factor == pytest.approx(stats.t.ppf(0.975, 4), rel=1e-12)


@pytest.mark.parametrize("nu", [61, 100, 1e4, math.inf])
def test_large_dof_gives_k_2(nu):
    # NIST e-Handbook §2.5.7: k = 2 approximates 95 % for large ν; t_0.975(61) = 1.9996 < 2
    # (scipy.stats), so k = 2 from there on
    b = Budget("y", "nm", (Component("fit", 1.0, nu, "A"), Component("ref", 2.0)))
    assert b.coverage_factor == 2.0
    assert b.expanded == pytest.approx(2.0 * math.sqrt(5.0), rel=1e-15)


def test_coverage_factor_is_continuous_at_the_switch():
    # k = max(2, t_0.975(ν)): t_0.975(60) = 2.0003 (scipy.stats), just above 2
    k60 = Budget("y", "nm", (Component("a", 1.0, 60, "A"),)).coverage_factor
    k61 = Budget("y", "nm", (Component("a", 1.0, 61, "A"),)).coverage_factor
    assert 0 < k60 - k61 < 1e-3


def test_all_infinite_dof_gives_infinite_effective_dof():
    b = Budget("y", "nm", (Component("a", 3.0), Component("b", 4.0)))
    assert b.combined == pytest.approx(5.0, rel=1e-15)  # 3-4-5 (closed form)
    assert b.effective_dof == math.inf
    assert b.coverage_factor == 2.0


def test_other_coverage_uses_normal_quantile_for_large_dof():
    # coverage 0.99 with infinite ν: k = z_0.995 = 2.5758 (scipy.stats.norm)
    b = Budget("y", "nm", (Component("a", 1.0),), coverage=0.99)
    assert b.coverage_factor == pytest.approx(stats.norm.ppf(0.995), rel=1e-9)


def test_correlations_enter_combined():
    # GUM 5.2.2: fully correlated inputs with same-sign sensitivities add linearly; with
    # opposite signs, or r = −1, they subtract (closed form)
    a, b = Component("a", 3.0), Component("b", 4.0)
    assert Budget("y", "nm", (a, b), correlations=(("a", "b", 1.0),)).combined == pytest.approx(
        7.0, rel=1e-15
    )
    assert Budget("y", "nm", (a, b), correlations=(("a", "b", -1.0),)).combined == pytest.approx(
        1.0, rel=1e-12
    )
    b_neg = Component("b", 4.0, sensitivity=-1.0)
    assert Budget(
        "y", "nm", (a, b_neg), correlations=(("a", "b", 1.0),)
    ).combined == pytest.approx(1.0, rel=1e-12)
    r = 0.3
    assert Budget("y", "nm", (a, b), correlations=(("a", "b", r),)).combined == pytest.approx(
        math.sqrt(9 + 16 + 2 * r * 12), rel=1e-15
    )


@pytest.mark.parametrize(
    "make",
    [
        lambda: Budget("y", "nm", (Component("a", 1.0), Component("a", 2.0))),
        lambda: Budget("y", "nm", (Component("a", 1.0),), coverage=1.5),
        lambda: Budget("y", "nm", (Component("a", 1.0),), correlations=(("a", "z", 0.5),)),
        lambda: Budget(
            "y", "nm", (Component("a", 1.0), Component("b", 1.0)), correlations=(("a", "b", 2),)
        ),
    ],
)
def test_budget_rejects_bad_input(make):
    with pytest.raises(OptionError):
        make()


def test_to_dict_has_the_result_json_keys():
    # key names from docs/contract.md, "uncertainty"
    b = Budget(
        "centre wavelength (vacuum)",
        "nm",
        (Component("line fit", 3e-4, 40, "A", "fit"), Component("reference", 4e-4, note="cert")),
    )
    d = b.to_dict(suffix="_nm")
    assert set(d) == {
        "measurand", "components", "combined_nm", "effective_dof", "coverage_factor",
        "expanded_nm", "coverage",
    }
    assert set(d["components"][0]) == {"name", "u_nm", "dof", "type", "note"}
    assert d["components"][0]["type"] == "A" and d["components"][1]["dof"] is None
    assert d["combined_nm"] == pytest.approx(5e-4, rel=1e-12)  # 3-4-5 (closed form)
    assert d["expanded_nm"] == pytest.approx(d["coverage_factor"] * 5e-4, rel=1e-12)
    g = b.to_dict()
    assert g["unit"] == "nm" and "combined" in g and "u" in g["components"][0]
    import json

    json.dumps(d, allow_nan=False)  # plain JSON: no inf/nan


# --- wavelength budget ---------------------------------------------------------------------


def test_wavelength_budget_components_and_correction():
    lam = 632.9908
    a = 2e-6  # possibly too long by up to 2 ppm
    corrected, b = wavelength_budget(
        lam,
        u_fit_nm=1.0e-4,
        dof_fit=30,
        reference_rel_u=1.5e-6,
        air_ratio_rel_u=2.0e-7,
        alignment_allowance_rel=a,
    )
    # closed forms: correction −a/2 (relative), u = λ|a|/√12; relative inputs × λ
    assert corrected == pytest.approx(lam * (1 - a / 2), rel=1e-15)
    u = {c.name: c.u for c in b.components}
    assert u["line fit"] == 1.0e-4
    assert u["reference wavelength"] == pytest.approx(corrected * 1.5e-6, rel=1e-12)
    assert u["refractive-index ratio"] == pytest.approx(corrected * 2.0e-7, rel=1e-12)
    assert u["alignment (cosine error)"] == pytest.approx(corrected * a / math.sqrt(12), rel=1e-12)
    assert b.combined == pytest.approx(math.sqrt(sum(v * v for v in u.values())), rel=1e-12)
    # Welch–Satterthwaite with a single finite-dof component: uc⁴/(u_fit⁴/30) (GUM G.2b)
    assert b.effective_dof == pytest.approx(b.combined**4 / (1e-4**4 / 30), rel=1e-12)
    assert b.measurand == "centre wavelength (vacuum)" and b.unit == "nm"


def test_wavelength_budget_negative_allowance_moves_up():
    # a < 0: measured possibly too short, so the correction raises the value
    corrected, b = wavelength_budget(
        500.0, u_fit_nm=1e-4, dof_fit=10, reference_rel_u=1e-7, alignment_allowance_rel=-1e-5
    )
    assert corrected == pytest.approx(500.0 * (1 + 0.5e-5), rel=1e-15)
    comp = {c.name: c for c in b.components}["alignment (cosine error)"]
    assert comp.u == pytest.approx(corrected * 1e-5 / math.sqrt(12), rel=1e-12)
    assert "short" in comp.note


def test_wavelength_budget_omits_zero_components_and_appends_extra():
    extra = (Component("field of view residual", 2e-5, note="Jacquinot"),)
    corrected, b = wavelength_budget(
        800.0, u_fit_nm=1e-4, dof_fit=5, reference_rel_u=1e-7, extra=extra
    )
    assert corrected == 800.0
    # the air index in vacuum is left out; the alignment is named with u = 0 and a note
    assert [c.name for c in b.components] == [
        "line fit", "reference wavelength", "alignment (cosine error)", "field of view residual",
    ]
    align = b.components[2]
    assert align.u == 0.0 and "no allowance given" in align.note
    assert b.combined == pytest.approx(math.sqrt(1e-4**2 + (800 * 1e-7) ** 2 + 2e-5**2))
    # an assumed constant speed has no alignment entry
    _, b2 = wavelength_budget(800.0, u_fit_nm=1e-4, dof_fit=5, reference_rel_u=0.0,
                              opd_scale="constant-speed")
    assert [c.name for c in b2.components] == ["line fit"]


def test_wavelength_budget_cosine_error_model():
    # The cosine error: a source beam at θ to the mirror travel counts x·cos θ, so the
    # measured wavelength is λ/cos θ (closed form). With θ uniform in solid angle over a cone
    # θ ≤ θ_max (cos θ uniform on [cos θ_max, 1]), the relative error 1/cos θ − 1 lies in
    # [0, a] with a = 1/cos θ_max − 1 and is close to uniform for small θ_max. The corrected
    # value then agrees with the true one within the stated u (Monte Carlo, fixed seed).
    lam_true, theta_max = 600.0, 2e-3
    a = 1 / math.cos(theta_max) - 1
    cos_t = np.random.default_rng(3).uniform(math.cos(theta_max), 1.0, 200_000)
    measured = lam_true / cos_t
    corrected, b = wavelength_budget(
        float(measured.mean()), u_fit_nm=1e-9, dof_fit=100, reference_rel_u=0.0,
        alignment_allowance_rel=a,
    )
    u_align = {c.name: c.u for c in b.components}["alignment (cosine error)"]
    # the mean of the measured values, corrected, is the true value (within 1 % of u)
    assert abs(corrected - lam_true) < 0.01 * u_align
    # and the spread of the measured values is the stated u (within 1 %: small-angle
    # approximation 1/cos θ − 1 ≈ θ²/2 is uniform in θ² here)
    assert measured.std() == pytest.approx(u_align, rel=1e-2)


@pytest.mark.parametrize(
    "kwargs",
    [
        {"u_fit_nm": -1.0},
        {"dof_fit": 0},
        {"reference_rel_u": -1e-6},
        {"alignment_allowance_rel": 0.5},
    ],
)
def test_wavelength_budget_rejects_bad_input(kwargs):
    base = {"u_fit_nm": 1e-4, "dof_fit": 10, "reference_rel_u": 1e-6}
    base.update(kwargs)
    with pytest.raises(OptionError):
        wavelength_budget(600.0, **base)


# --- sweep consistency (Birge ratio) --------------------------------------------------------


def test_consistency_two_values_closed_form():
    # values 1 and 3 with u = 1: weighted mean 2, χ² = 2 with ν = 1;
    # P(χ²₁ ≥ 2) = erfc(1) = 0.1573 (closed form)
    chi2_per_dof, p, ok = sweep_consistency([1.0, 3.0], [1.0, 1.0])
    assert chi2_per_dof == pytest.approx(2.0, rel=1e-15)
    assert p == pytest.approx(math.erfc(1.0), rel=1e-12)
    assert ok


def test_consistency_matches_scipy_chi2():
    rng = np.random.default_rng(5)
    u = rng.uniform(0.5, 2.0, 12)
    x = 10 + u * rng.standard_normal(12)
    res = sweep_consistency(x, u)
    w = 1 / u**2
    m = np.sum(w * x) / np.sum(w)
    chi2 = float(np.sum(((x - m) / u) ** 2))
    assert res.chi2_per_dof == pytest.approx(chi2 / 11, rel=1e-12)
    assert res.p_value == pytest.approx(stats.chi2.sf(chi2, 11), rel=1e-12)  # scipy.stats
    assert res.birge_ratio == pytest.approx(math.sqrt(chi2 / 11), rel=1e-12)


def test_birge_ratio_near_one_for_consistent_sweeps():
    # 2000 simulated sets of 10 sweeps, each scattered by its own stated u. Closed form:
    # E[χ²/ν] = 1 with standard deviation √(2/9) = 0.47 per set, so the mean over 2000 sets is
    # 1 ± 0.011; tolerance 0.05. The false-alarm rate at significance 0.01 is 1 %; binomial
    # standard error over 2000 sets is 0.22 %, tolerance ±0.8 % (3.6 SE).
    rng = np.random.default_rng(21)
    ratios, flagged = [], 0
    for _ in range(2000):
        u = rng.uniform(0.5, 3.0, 10)
        x = 100 + u * rng.standard_normal(10)
        r = sweep_consistency(x, u)
        ratios.append(r.chi2_per_dof)
        flagged += not r.consistent
    assert np.mean(ratios) == pytest.approx(1.0, abs=0.05)
    assert abs(flagged / 2000 - 0.01) < 0.008


def test_birge_ratio_large_for_inconsistent_sweeps():
    # true scatter 4× the stated u: χ²/ν ≈ 16 (closed form, E = 16), far outside χ²₉/9
    rng = np.random.default_rng(22)
    u = np.full(10, 1.0)
    x = 100 + 4.0 * rng.standard_normal(10)
    r = sweep_consistency(x, u)
    assert r.birge_ratio > 2.5
    assert not r.consistent
    assert r.p_value < 1e-6


@pytest.mark.parametrize(
    "args",
    [([1.0], [1.0]), ([1.0, 2.0], [1.0]), ([1.0, 2.0], [1.0, 0.0]), ([1.0, math.nan], [1, 1])],
)
def test_consistency_rejects_bad_input(args):
    with pytest.raises(OptionError):
        sweep_consistency(*args)
