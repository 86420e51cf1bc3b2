"""Tests of ftsource.physics.air: refractive index of air, air/vacuum wavelengths, dispersion.

Sources (named again beside each check):
- NIST: J. A. Stone and J. H. Zimmerman, "Index of Refraction of Air", NIST Refractive Index
  of Air Calculator documentation, worked values as copied into /work/shared check-values
  section 5 (status V2: NIST values copied into the PyPI package ref-index's own tests).
- ref-index: the general-purpose PyPI package ``ref_index`` (NIST Appendix A implementation);
  its documented examples (pypi.org/project/ref-index) and direct calls.
- IAPWS-IF97 verification values for the saturation pressure (from memory).
- Morton 2000 (ApJS 130:403, eq. 8) standard air; line wavelengths of check-values section 6
  converted with it (status C: independent calculation).
- Ciddor 1996 standard dry air formula (refractiveindex.info and astropy/specutils source,
  check-values section 5, status V) with its values (status C).
- JCGM 101:2008 (Monte Carlo propagation of distributions) for the uncertainty functions.
"""

from __future__ import annotations

import itertools
import math

import astropy.units as u
import numpy as np
import pytest
import ref_index
from hypothesis import given, settings
from hypothesis import strategies as st

from ftsource.errors import OptionError
from ftsource.physics.air import (
    MEASURED_UNCERTAINTY,
    MODEL_STANDARD_UNCERTAINTY,
    UNMEASURED_UNCERTAINTY,
    AirConditions,
    air_index,
    air_to_vacuum_nm,
    ciddor_index,
    correct_dispersion,
    edlen_index,
    index_ratio,
    index_ratio_uncertainty,
    index_uncertainty,
    saturation_vapour_pressure_pa,
    standard_air_to_vacuum_nm,
    vacuum_to_air_nm,
    vacuum_to_standard_air_nm,
)

# NIST prints n to 9 decimals (rounding ±5e-10); an independent implementation of Appendix A
# reproduces them to ≤ 6e-10 (check-values §5, C). 2e-9 leaves room for both.
NIST_TOL = 2e-9

# (wavelength nm, t °C, p Pa, RH %, n): NIST calculator worked values, Ciddor, 450 ppm CO2
# (source: NIST Stone & Zimmerman via check-values §5, V2).
NIST_CIDDOR = [
    (633.0, 20.0, 101325.0, 50.0, 1.000271373),
    (633.0, 20.0, 101325.0, 0.0, 1.000271800),
    (633.0, 20.0, 101325.0, 100.0, 1.000270949),
    (633.0, 0.0, 101325.0, 50.0, 1.000291647),
    (633.0, 40.123, 101325.0, 50.0, 1.000253031),
    (633.0, 60.45, 101325.0, 50.0, 1.000235516),
    (633.0, 20.0, 10000.0, 50.0, 1.000026385),
    (633.0, 20.0, 140000.0, 50.0, 1.000375169),
    (500.0, 20.0, 101325.0, 50.0, 1.000273781),
    (1000.987, 20.0, 101325.0, 50.0, 1.000269038),
    (1500.8, 20.0, 101325.0, 50.0, 1.00026819),
    (1700.0, 20.0, 101325.0, 50.0, 1.000268041),
]


@pytest.mark.parametrize(("wl", "t", "p", "rh", "n"), NIST_CIDDOR)
def test_ciddor_matches_nist_worked_values(wl, t, p, rh, n):
    # Source: NIST Refractive Index of Air Calculator worked values (check-values §5, V2).
    assert abs(ciddor_index(wl, t, p, rh) - n) <= NIST_TOL


@pytest.mark.parametrize(("rh", "wl_air"), [(50.0, 632.828268), (0.0, 632.827997),
                                             (100.0, 632.828535)])
def test_air_wavelength_matches_nist(rh, wl_air):
    # Source: NIST calculator λ_air at 633 nm, 20 °C, 101325 Pa (check-values §5, V2). Printed
    # to 1e-6 nm; tolerance 2e-6 nm covers the rounding.
    c = AirConditions(20.0, 101325.0, rh)
    assert vacuum_to_air_nm(633.0, c) == pytest.approx(wl_air, abs=2e-6)


def test_edlen_matches_worked_value():
    # Source: modified Edlén (Birch & Downs, NIST water term) at 633 nm, 20 °C, 101325 Pa,
    # 50 % RH: n = 1.000271374 (check-values §5, C); 9 printed decimals, NIST_TOL.
    assert abs(edlen_index(633.0, 20.0, 101325.0, 50.0) - 1.000271374) <= NIST_TOL


def test_ref_index_documented_examples():
    # Source: ref-index documentation examples on PyPI (check-values §5, V). Same equations in
    # double precision, so agreement to 1e-13 (a wrong constant would show at ≥ 1e-11).
    assert ciddor_index(633.0, 20.0, 101325.0, 20.0) == pytest.approx(1.0002716285340578,
                                                                       abs=1e-13)
    assert edlen_index(633.0, 20.0, 101325.0, 20.0) == pytest.approx(1.0002716291691649,
                                                                      abs=1e-13)
    assert ciddor_index(633.0, 60.0, 101325.0, 80.0) == pytest.approx(1.0002340241754055,
                                                                       abs=1e-13)
    assert edlen_index(633.0, 60.0, 101325.0, 80.0) == pytest.approx(1.0002339748542823,
                                                                      abs=1e-13)
    # vac2air defaults are 15 °C, 101325 Pa, 0 % RH, 450 ppm (ref-index source).
    c = AirConditions(15.0, 101325.0, 0.0)
    assert vacuum_to_air_nm(633.0, c) == pytest.approx(632.82500476826874, abs=1e-10)


def _grid():
    wls = (300.0, 405.0, 532.0, 633.0, 1064.0, 1550.0, 1700.0)
    ts = (-35.0, -5.0, 0.0, 12.0, 20.0, 37.0, 60.0, 95.0)
    ps = (12e3, 60e3, 101325.0, 138e3)
    rhs = (0.0, 35.0, 80.0, 100.0)
    for wl, t, p, rh in itertools.product(wls, ts, ps, rhs):
        # keep the water vapour pressure well below the total pressure (physical states only)
        if rh / 100 * saturation_vapour_pressure_pa(t) < 0.5 * p:
            yield wl, t, p, rh


def test_ciddor_and_edlen_agree_with_ref_index_over_grid():
    # Source: PyPI package ref-index (general-purpose implementation of NIST Appendix A),
    # scalar calls over a grid spanning the whole valid range including ice below 0 °C.
    # Same published equations in double precision: 1e-12 absolute.
    for wl, t, p, rh in _grid():
        for co2 in (0.0, 450.0, 1800.0):
            assert ciddor_index(wl, t, p, rh, co2) == pytest.approx(
                ref_index.ciddor(wl, t, p, rh, co2), abs=1e-12)
        assert edlen_index(wl, t, p, rh) == pytest.approx(ref_index.edlen(wl, t, p, rh),
                                                          abs=1e-12)


def test_vectorised_equals_scalar():
    # Source: closed form (broadcasting must not change values).
    wl = np.array([400.0, 633.0, 1500.0])
    t = np.array([[0.0], [25.0]])
    got = ciddor_index(wl, t, 101325.0, 40.0)
    assert got.shape == (2, 3)
    for i, j in itertools.product(range(2), range(3)):
        assert got[i, j] == ciddor_index(wl[j], t[i, 0], 101325.0, 40.0)


def test_saturation_vapour_pressure_iapws():
    # Source: IAPWS-IF97 verification values, p_s(300 K) = 3536.58941 Pa and
    # p_s(373.15 K) = 101417.98 Pa (from memory); triple point 611.657 Pa at 273.16 K
    # (IAPWS; Guildner et al. 1976, from memory). Relative 1e-8 for the 9-digit value.
    assert saturation_vapour_pressure_pa(26.85) == pytest.approx(3536.58941, rel=1e-8)
    assert saturation_vapour_pressure_pa(100.0) == pytest.approx(101417.98, rel=1e-6)
    assert saturation_vapour_pressure_pa(0.01) == pytest.approx(611.657, abs=1e-3)
    # ice branch below 0 °C against ref-index's svp_ice (PyPI reference)
    assert saturation_vapour_pressure_pa(-20.0) == pytest.approx(ref_index.svp_ice(-20.0),
                                                                 rel=1e-13)


def test_ciddor_standard_dry_air_formula():
    # Source: Ciddor 1996 standard dry air formula (refractiveindex.info Ciddor page and
    # astropy/specutils source; check-values §5, V) and its values 2.765302e-4 (633 nm),
    # 2.782083e-4 (532 nm), 2.739843e-4 (1064 nm) (C). Printed to 7 digits: tol 1e-10.
    wl = np.array([633.0, 532.0, 1064.0])
    s2 = (1e3 / wl) ** 2
    formula = 0.05792105 / (238.0185 - s2) + 0.00167917 / (57.362 - s2)
    got = ciddor_index(wl, 15.0, 101325.0, 0.0, 450.0) - 1
    np.testing.assert_allclose(got, formula, rtol=0, atol=1e-10)
    np.testing.assert_allclose(got, [2.765302e-4, 2.782083e-4, 2.739843e-4], rtol=0, atol=1e-10)


def test_edlen_close_to_ciddor_in_visible():
    # Source: NIST documentation section VII: the two equations agree at the 1e-8 level near
    # ambient conditions in the visible (from memory). Bound 2e-8.
    wl, t, p, rh = np.meshgrid(np.linspace(400, 700, 7), [10, 20, 30], [90e3, 101325, 110e3],
                               [0, 40, 80], indexing="ij")
    assert np.max(np.abs(edlen_index(wl, t, p, rh) - ciddor_index(wl, t, p, rh))) < 2e-8


def test_sensitivities_near_standard_conditions():
    # Source: common practice: n - 1 at 633 nm changes by about -1 ppm per K and +2.7 ppm per
    # kPa near 20 °C, 101 kPa; the ref-index module text (after NIST) puts 1e-6 at 1 K or
    # 0.4 kPa. Central differences of the NIST worked conditions; tolerances 0.1 ppm.
    dndt = (ciddor_index(633.0, 20.5, 101325.0, 50.0)
            - ciddor_index(633.0, 19.5, 101325.0, 50.0)) / 1.0
    dndp = (ciddor_index(633.0, 20.0, 101825.0, 50.0)
            - ciddor_index(633.0, 20.0, 100825.0, 50.0)) / 1.0  # per kPa
    assert dndt == pytest.approx(-0.95e-6, abs=0.1e-6)
    assert dndp == pytest.approx(2.7e-6, abs=0.1e-6)


@settings(max_examples=60, deadline=None)
@given(wl=st.floats(300.5, 1699.0), t=st.floats(-40.0, 50.0), p=st.floats(50e3, 140e3),
       rh=st.floats(0.0, 100.0), model=st.sampled_from(["ciddor", "edlen"]))
def test_vacuum_air_round_trip(wl, t, p, rh, model):
    # Source: closed form (inverse functions); 1e-13 relative is ~50 ulp.
    c = AirConditions(t, p, rh)
    back = air_to_vacuum_nm(vacuum_to_air_nm(wl, c, model), c, model)
    assert back == pytest.approx(wl, rel=1e-13)


@settings(max_examples=60, deadline=None)
@given(wl=st.floats(200.1, 1990.0))  # air 200.0 nm ↔ vacuum 200.065 nm
def test_standard_air_round_trip(wl):
    # Source: closed form (inverse functions).
    assert standard_air_to_vacuum_nm(vacuum_to_standard_air_nm(wl)) == pytest.approx(
        wl, rel=1e-13)


@pytest.mark.parametrize(("air", "vac"), [
    (632.81646, 632.99145), (588.9950, 589.15824), (589.5924, 589.75580),
    (435.8328, 435.95530), (546.0735, 546.22526), (696.5431, 696.73523),
    (763.5106, 763.72079), (585.24879, 585.41103),
])
def test_standard_air_line_table(air, vac):
    # Source: NIST air wavelengths and their vacuum values converted with Morton 2000 eq. 8
    # (check-values §6: air V/V2, vacuum C). Printed to 1e-5 nm: tol 1e-5 nm.
    assert standard_air_to_vacuum_nm(air) == pytest.approx(vac, abs=1e-5)


def test_iodine_laser_in_standard_air():
    # Source: CIPM recommended radiation, I2-stabilised He-Ne λ = 632.99121258 nm (V); its
    # standard-air equivalent 632.81622 nm (check-values §6, C). Tol 1e-5 nm (rounding).
    assert vacuum_to_standard_air_nm(632.99121258) == pytest.approx(632.81622, abs=1e-5)


def test_morton_standard_air_close_to_ciddor_standard_air():
    # Source: Ciddor 1996 standard air (dry, 15 °C, 101325 Pa, 450 ppm) vs Morton 2000 eq. 8
    # (Birch & Downs): both describe the same air; bound 1e-8 relative over 300-1700 nm,
    # the level of the equations' own uncertainty (NIST, from memory).
    wl = np.linspace(300.0, 1700.0, 57)
    ratio = vacuum_to_standard_air_nm(wl) / vacuum_to_air_nm(wl, AirConditions(15, 101325, 0))
    assert np.max(np.abs(ratio - 1)) < 1e-8


@pytest.mark.parametrize(("wl", "expected"), [(532.0, -1.65e-6), (1064.5, 2.51e-6),
                                              (1550.0, 3.22e-6)])
def test_dispersion_error_when_ignored(wl, expected):
    # Source: check-values §4 (C): ignoring dispersion against a 632.99 nm reference at 20 °C,
    # 101325 Pa, 50 % RH (Ciddor) gives these fractional wavelength errors. Printed to 3
    # digits: tol 0.005e-6.
    c = AirConditions(20.0, 101325.0, 50.0)
    sigma_true = 1e7 / wl
    sigma_app = sigma_true * ciddor_index(wl, 20, 101325, 50) / ciddor_index(632.99, 20,
                                                                             101325, 50)
    assert (1e7 / sigma_app - wl) / wl == pytest.approx(expected, abs=0.005e-6)
    assert index_ratio(632.99, wl, c) - 1 == pytest.approx(expected, abs=0.005e-6)
    # correct_dispersion undoes it: closed form σ_x = σ_app n_ref / n_x; 1e-13 relative.
    assert correct_dispersion(sigma_app, 632.99, c) == pytest.approx(sigma_true, rel=1e-13)


def test_correct_dispersion_array_and_edlen():
    # Source: closed form σ_x = σ_app·n(λ_ref)/n(λ_x) evaluated at the true σ_x.
    c = AirConditions.measured(23.0, 97000.0, 35.0)
    wl = np.array([450.0, 543.516, 780.0])
    n_ref = edlen_index(632.991, 23.0, 97000.0, 35.0)
    sigma_app = 1e7 / wl * edlen_index(wl, 23.0, 97000.0, 35.0) / n_ref
    got = correct_dispersion(sigma_app, 632.991, c, model="edlen")
    np.testing.assert_allclose(got, 1e7 / wl, rtol=1e-13)


def test_correct_dispersion_geometric_scale():
    # Source: closed form: on a geometric OPD scale (encoder) the phase is 2π σ n(λ) x, so
    # σ_app = σ·n(λ) and σ = σ_app / n(λ).
    c = AirConditions(20.0, 101325.0, 50.0)
    sigma_app = 1e7 / 1550.0 * ciddor_index(1550.0, 20.0, 101325.0, 50.0)
    assert correct_dispersion(sigma_app, None, c) == pytest.approx(1e7 / 1550.0, rel=1e-13)


def _monte_carlo(conditions, n=20000, seed=1):
    rng = np.random.default_rng(seed)
    c = conditions
    return (rng.normal(c.temperature_c, c.u_temperature_c, n),
            rng.normal(c.pressure_pa, c.u_pressure_pa, n),
            rng.normal(c.humidity_percent, c.u_humidity_percent, n),
            rng.normal(c.co2_ppm, c.u_co2_ppm, n))


@pytest.mark.parametrize("conditions", [
    AirConditions.measured(20.0, 101325.0, 50.0, u_co2_ppm=30.0),
    AirConditions(22.0, 95000.0, 50.0, 450.0, 1.0, 500.0, 10.0, 60.0),
])
def test_uncertainties_match_monte_carlo(conditions):
    # Source: JCGM 101:2008 Monte Carlo propagation of distributions, 20000 draws with a fixed
    # seed; the sample standard deviation scatters by 1/sqrt(2N) = 0.5 %, the model is
    # near-linear over the spread: tolerance 3 %. Spreads keep every draw in range
    # (RH ≥ 5σ from 0 and 100 %, CO2 ≥ 7σ from 0 ppm).
    t, p, rh, co2 = _monte_carlo(conditions)
    n_633 = ciddor_index(633.0, t, p, rh, co2)
    u_conditions = math.sqrt(index_uncertainty(633.0, conditions) ** 2
                             - MODEL_STANDARD_UNCERTAINTY["ciddor"] ** 2)
    assert np.std(n_633) == pytest.approx(u_conditions, rel=0.03)
    ratio = ciddor_index(632.99, t, p, rh, co2) / ciddor_index(1064.5, t, p, rh, co2)
    u_ratio = index_ratio_uncertainty(632.99, 1064.5, conditions)
    assert np.std(ratio) == pytest.approx(u_ratio, rel=0.03)
    # the ratio is far better known than the index itself (closed form: u(r) ≈ |r-1|u(ρ)/ρ)
    assert u_ratio < 0.02 * index_uncertainty(633.0, conditions)  # about 1/100


def test_index_uncertainty_dominated_by_pressure_when_unmeasured():
    # Source: closed form with the common-practice sensitivity 2.7e-9 per Pa (see above):
    # u ≈ 2.7e-9 · 2000 Pa = 5.4e-6 dominates; the result lies between 5e-6 and 6.5e-6.
    assert 5e-6 < index_uncertainty(633.0, AirConditions()) < 6.5e-6
    # equation term alone when the conditions are exact (closed form)
    exact = AirConditions(20, 101325, 50, 450, 0.0, 0.0, 0.0, 0.0)
    assert index_uncertainty(633.0, exact, "edlen") == MODEL_STANDARD_UNCERTAINTY["edlen"]
    assert index_ratio_uncertainty(633.0, 532.0, exact) == 0.0


def test_air_conditions_defaults_and_measured():
    # Source: closed form (documented defaults).
    c = AirConditions()
    assert (c.temperature_c, c.pressure_pa, c.humidity_percent, c.co2_ppm) == (
        20.0, 101325.0, 50.0, 450.0)
    assert c.u_pressure_pa == UNMEASURED_UNCERTAINTY["pressure_pa"]
    m = AirConditions.measured(21.0, 100000.0, 40.0)
    assert m.u_temperature_c == MEASURED_UNCERTAINTY["temperature_c"]
    assert m.u_co2_ppm == UNMEASURED_UNCERTAINTY["co2_ppm"]
    with pytest.raises(AttributeError):
        c.temperature_c = 30.0  # frozen


def test_air_conditions_from_quantities():
    # Source: unit definitions (0 °C = 273.15 K; 1 hPa = 100 Pa; 1 % = 0.01).
    c = AirConditions.from_quantities(temperature=295.15 * u.K, pressure=1013.25 * u.hPa,
                                      humidity=0.45 * u.one, u_temperature=0.1 * u.deg_C)
    assert c.temperature_c == pytest.approx(22.0, abs=1e-12)
    assert c.pressure_pa == pytest.approx(101325.0, rel=1e-15)
    assert c.humidity_percent == pytest.approx(45.0, rel=1e-15)
    assert c.u_temperature_c == pytest.approx(0.1)
    assert c.u_pressure_pa == MEASURED_UNCERTAINTY["pressure_pa"]
    assert c.co2_ppm == 450.0 and c.u_co2_ppm == UNMEASURED_UNCERTAINTY["co2_ppm"]
    c2 = AirConditions.from_quantities(co2=600e-6 * u.one, u_pressure=5 * u.hPa)
    assert c2.co2_ppm == pytest.approx(600.0)
    assert c2.u_pressure_pa == pytest.approx(500.0)
    assert c2.u_temperature_c == UNMEASURED_UNCERTAINTY["temperature_c"]
    with pytest.raises(OptionError, match="temperature"):
        AirConditions.from_quantities(temperature=20.0)
    with pytest.raises(OptionError, match="pressure"):
        AirConditions.from_quantities(pressure=3 * u.m)


@pytest.mark.parametrize(("call", "words"), [
    (lambda: ciddor_index(250.0, 20, 101325, 50), ["wavelength_vac_nm", "250", "300", "1700"]),
    (lambda: edlen_index(633.0, 120, 101325, 50), ["temperature_c", "120", "-40", "100"]),
    (lambda: ciddor_index(633.0, 20, 5e3, 50), ["pressure_pa", "5000"]),
    (lambda: ciddor_index(633.0, 20, 101325, [50, 101]), ["humidity_percent", "101"]),
    (lambda: ciddor_index(633.0, 20, 101325, 50, 2500), ["co2_ppm", "2500"]),
    (lambda: ciddor_index(633.0, 20, 101325, float("nan")), ["humidity_percent", "nan"]),
    (lambda: ciddor_index(633.0, 90, 20e3, 100), ["humidity_percent", "pressure_pa"]),
    (lambda: ciddor_index("red", 20, 101325, 50), ["wavelength_vac_nm", "red"]),
    (lambda: air_index(633.0, model="sellmeier"), ["model", "sellmeier", "ciddor"]),
    (lambda: AirConditions(u_pressure_pa=-1.0), ["u_pressure_pa", "-1"]),
    (lambda: vacuum_to_standard_air_nm(150.0), ["wl_vac_nm", "150", "200"]),
    (lambda: correct_dispersion(50000.0, 633.0, None), ["sigma_apparent_per_cm", "50000"]),
    (lambda: air_index(633.0, {"t": 20}), ["conditions"]),
])
def test_errors_name_parameter_value_and_range(call, words):
    # Source: project convention (DEVELOPERS.md, error messages); NIST validity ranges.
    with pytest.raises(OptionError) as info:
        call()
    for word in words:
        assert word in str(info.value)


def test_inputs_not_mutated_and_scalar_type():
    # Source: project convention (never mutate inputs; one return type).
    wl = np.array([500.0, 600.0])
    before = wl.copy()
    vacuum_to_air_nm(wl)
    air_to_vacuum_nm(wl)
    np.testing.assert_array_equal(wl, before)
    assert isinstance(ciddor_index(633.0, 20, 101325, 50), float)
    assert isinstance(air_to_vacuum_nm(632.8), float)


@pytest.mark.parametrize("wl, n_minus_1", [(633.0, 2.765302e-4), (532.0, 2.782083e-4),
                                           (1064.0, 2.739843e-4)])
def test_standard_air_index_is_the_one_morton_formula(wl, n_minus_1):
    """Morton 2000 eq. 8 (the one copy, ftsource.physics.air.standard_air_index) against the
    standard dry air values of check-values §5 (Ciddor standard air, C): they agree to 5e-9
    in n (3.7e-9 at 1064 nm), the size of the difference between the two formulas."""
    from ftsource.physics.air import standard_air_index

    assert standard_air_index(wl) - 1 == pytest.approx(n_minus_1, abs=5e-9)
    assert vacuum_to_standard_air_nm(wl) == pytest.approx(wl / standard_air_index(wl), rel=1e-15)
