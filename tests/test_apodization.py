"""Tests of ftsource.spectrum.apodization.

Oracles:
* Table values: /work/shared/reference/check-values.md section 1 ("continuous case": the
  transform of A on [-L, L], not a sampled window). Sources named per row below.
* Closed forms of the continuous ILS, written here independently of the module:
  - cosine sums: integral_0^1 cos(k pi xi) cos(pi u xi) dxi = [sinc(u - k) + sinc(u + k)] / 2
    (elementary; numpy.sinc(t) = sin(pi t) / (pi t));
  - triangle: integral_0^1 (1 - xi) cos(pi u xi) dxi = sinc(u / 2)**2 / 2 (elementary);
  - Norton-Beer terms: integral_0^1 (1 - xi^2)^n cos(z xi) dxi = n! 2^n j_n(z) / z^n, from
    Poisson's integral for Bessel functions (DLMF 10.9.4) with J_{n+1/2} written as a spherical
    Bessel function (DLMF 10.47.3).
* scipy.integrate.quad with weight='cos' (QUADPACK QAWO) as a second, numerical check.
* scipy.signal.windows for the sampled windows.
"""

from __future__ import annotations

from math import factorial

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import integrate, optimize, special
from scipy.signal import windows

from ftsource.errors import OptionError
from ftsource.spectrum.apodization import (
    Apodization,
    apodization_names,
    apodize,
    get_apodization,
    ils_fwhm_per_cm,
    instrument_line_shape,
    mertz_ramp,
)

# name: (FWHM x 1/(2L), largest sidelobe in percent, signed, source).
# check-values.md section 1, continuous case; status codes as given there.
TABLE = {
    "boxcar": (1.20671, -21.72, "check-values §1 C; MathWorld 'Uniform Apodization Function' V"),
    "triangular": (1.77179, +4.719, "check-values §1 C; MathWorld 'Bartlett Function' V"),
    "happ-genzel": (1.81522, +0.7349, "check-values §1 C; MathWorld 'Hamming Function' V"),
    "hann": (2.00000, -2.671, "check-values §1 C (FWHM also MathWorld V)"),
    "blackman-harris-3": (2.27395, -0.0288, "check-values §1 C; coefficients Harris 1978 M"),
    "blackman-harris-4": (2.66643, +0.0025, "check-values §1 C; coefficients scipy V"),
    "norton-beer-weak": (1.44808, -5.804, "check-values §1 C; Norton & Beer 1976 M"),
    "norton-beer-medium": (1.68939, -1.414, "check-values §1 C; Norton & Beer 1976 M"),
    "norton-beer-strong": (1.93073, +0.373, "check-values §1 C; Norton & Beer 1976 M"),
}
# Coefficients as printed in check-values.md section 1 (sources there).
COEFFICIENTS = {
    "happ-genzel": (0.54, 0.46),
    "hann": (0.5, 0.5),
    "blackman-harris-3": (0.42323, 0.49755, 0.07922),
    "blackman-harris-4": (0.35875, 0.48829, 0.14128, 0.01168),
    "norton-beer-weak": (0.384093, -0.087577, 0.703484),
    "norton-beer-medium": (0.152442, -0.136176, 0.983734),
    "norton-beer-strong": (0.045335, 0.0, 0.554883, 0.0, 0.399782),
}

FWHM_RTOL = 1e-4  # the table gives 6 significant figures
SIDELOBE_ATOL_PP = 0.01  # percentage points; the table rounds to 0.01 % or finer


def _nb_term(n: int, z: np.ndarray) -> np.ndarray:
    """integral_0^1 (1 - xi^2)^n cos(z xi) dxi (DLMF 10.9.4 with 10.47.3)."""
    z = np.asarray(z, dtype=float)
    small = np.abs(z) < 1e-2
    zz = np.where(small, 1.0, z)
    exact = factorial(n) * 2**n * special.spherical_jn(n, zz) / zz**n
    # Series near 0: integral of (1 - xi^2)^n (1 - z^2 xi^2 / 2 + z^4 xi^4 / 24).
    m0 = (2**n * factorial(n)) ** 2 / factorial(2 * n + 1)
    m2 = m0 / (2 * n + 3)
    m4 = m2 * 3 / (2 * n + 5)
    series = m0 - z**2 * m2 / 2 + z**4 * m4 / 24
    return np.where(small, series, exact)


def closed_form_ils(name: str, u) -> np.ndarray:
    """Unnormalised ILS, integral_0^1 A(xi) cos(pi u xi) dxi, from the closed forms above."""
    u = np.asarray(u, dtype=float)
    if name == "boxcar":
        return np.sinc(u)
    if name == "triangular":
        return 0.5 * np.sinc(u / 2) ** 2
    c = COEFFICIENTS[name]
    if name.startswith("norton-beer"):
        return sum(ci * _nb_term(i, np.pi * u) for i, ci in enumerate(c))
    return sum(ck * 0.5 * (np.sinc(u - k) + np.sinc(u + k)) for k, ck in enumerate(c))


def normalised(name: str, u) -> np.ndarray:
    return closed_form_ils(name, u) / closed_form_ils(name, 0.0)


def fwhm_factor(f) -> float:
    """Full width at half maximum in u of a peak-1 even function, by root-finding."""
    return 2.0 * optimize.brentq(lambda u: f(u) - 0.5, 0.05, 3.0, xtol=1e-13)


def largest_sidelobe(f, u_max: float = 40.0) -> float:
    """Signed sidelobe of largest magnitude beyond the first zero (or touch) of the ILS."""
    u = np.arange(1e-4, u_max, 1e-3)
    v = f(u)
    a = np.abs(v)
    first_min = int(np.argmax((a[1:-1] <= a[:-2]) & (a[1:-1] <= a[2:]))) + 1
    rest = v[first_min:]
    ext = np.where((rest[1:-1] - rest[:-2]) * (rest[2:] - rest[1:-1]) <= 0)[0] + 1
    best = 0.0
    for i in sorted(ext, key=lambda i: -abs(rest[i]))[:4]:
        u0, s = u[first_min + i], np.sign(rest[i])
        r = optimize.minimize_scalar(
            lambda t, s=s: -s * f(t),
            bounds=(u0 - 2e-3, u0 + 2e-3),
            method="bounded",
            options={"xatol": 1e-10},
        )
        val = float(f(r.x))
        if abs(val) > abs(best):
            best = val
    return best


def test_registry_names_and_types():
    # The task's list of functions (common practice names; Happ-Genzel: check-values §1 M).
    assert set(apodization_names()) == set(TABLE)
    for name in apodization_names():
        apo = get_apodization(name)
        assert isinstance(apo, Apodization) and apo.name == name and apo.references


@pytest.mark.parametrize("name", sorted(TABLE))
def test_closed_form_agrees_with_quad(name):
    # Cross-check of the closed forms against scipy.integrate.quad (QAWO, weight='cos').
    apo = get_apodization(name)
    for u in (0.0, 0.37, 1.3, 2.9, 7.5, 23.1):
        if u == 0.0:
            ref = integrate.quad(lambda xi: float(apo(xi)), 0.0, 1.0, epsabs=1e-14)[0]
        else:
            ref = integrate.quad(
                lambda xi: float(apo(xi)), 0.0, 1.0, weight="cos", wvar=np.pi * u, epsabs=1e-14
            )[0]
        assert closed_form_ils(name, u) == pytest.approx(ref, abs=1e-12)


@pytest.mark.parametrize("name", sorted(TABLE))
def test_continuous_fwhm_matches_table(name):
    # Continuous case; check-values §1; closed form above; relative tolerance 1e-4.
    table_fwhm = TABLE[name][0]
    measured = fwhm_factor(lambda u: normalised(name, u))
    assert measured == pytest.approx(table_fwhm, rel=FWHM_RTOL)
    assert get_apodization(name).fwhm_factor == pytest.approx(measured, rel=FWHM_RTOL)


@pytest.mark.parametrize("name", sorted(TABLE))
def test_continuous_largest_sidelobe_matches_table(name):
    # Continuous case, scan to u = 40 (check-values §1 scans cosine sums to 2000; their
    # largest lobes lie below u = 5, and every lobe beyond u = 40 is smaller than those found,
    # as the far lobes of these functions decay at least as 1/u). Tolerance 0.01 percentage
    # points.
    table_pct = TABLE[name][1]
    measured_pct = 100.0 * largest_sidelobe(lambda u: normalised(name, u))
    assert measured_pct == pytest.approx(table_pct, abs=SIDELOBE_ATOL_PP)
    assert 100.0 * get_apodization(name).largest_sidelobe == pytest.approx(
        measured_pct, abs=SIDELOBE_ATOL_PP
    )


@pytest.mark.parametrize(
    ("name", "db"),
    [("blackman-harris-3", -70.83), ("blackman-harris-4", -92.01), ("happ-genzel", -42.68)],
)
def test_sidelobe_in_db(name, db):
    # check-values §1 (C): BH3 "-67 dB" set reaches -70.83 dB on the continuous ILS (Nuttall
    # 1981 made the same remark, M); BH4 -92.01 dB; Happ-Genzel -42.68 dB. Tolerance 0.02 dB.
    measured = 20 * np.log10(abs(largest_sidelobe(lambda u: normalised(name, u))))
    assert measured == pytest.approx(db, abs=0.02)
    assert get_apodization(name).largest_sidelobe_db == pytest.approx(db, abs=0.02)


@pytest.mark.parametrize(
    ("name", "most_negative"), [("happ-genzel", -0.689), ("norton-beer-strong", -0.369)]
)
def test_most_negative_lobe(name, most_negative):
    # check-values §1 (C): most negative lobe, percent; tolerance 0.01 percentage points.
    u = np.arange(0.5, 40, 1e-3)
    assert 100 * normalised(name, u).min() == pytest.approx(most_negative, abs=0.01)


@pytest.mark.parametrize("name", sorted(TABLE))
def test_module_ils_matches_closed_form(name):
    # The module's Gauss-Legendre ILS against the closed forms; 1e-10 of the peak.
    L = 0.7
    s = np.linspace(-60.0, 60.0, 2001) / (2 * L)  # u from -60 to 60
    got = instrument_line_shape(s, L, name)
    np.testing.assert_allclose(got, normalised(name, 2 * L * s), atol=1e-10)
    assert instrument_line_shape(np.array([0.0]), L, name)[0] == pytest.approx(1.0, abs=1e-14)
    # Its FWHM by root-finding, against the table (continuous case, rtol 1e-4).
    fw = fwhm_factor(lambda u: instrument_line_shape(np.atleast_1d(u) / (2 * L), L, name)[0])
    assert fw == pytest.approx(TABLE[name][0], rel=FWHM_RTOL)


def test_ils_fwhm_per_cm():
    # Closed form: boxcar FWHM = 1.20671 / (2L) (check-values §2, V MathWorld).
    assert ils_fwhm_per_cm(1.0, "boxcar") == pytest.approx(0.603355, rel=1e-5)
    assert ils_fwhm_per_cm(0.25, "hann") == pytest.approx(2.0 / 0.5, rel=1e-12)


def test_norton_beer_width_ratios():
    # check-values §1 (C): the NB functions are designed for 1.2, 1.4, 1.6 times the boxcar
    # FWHM (Norton & Beer 1976, M); four decimals.
    box = TABLE["boxcar"][0]
    for name, ratio in (
        ("norton-beer-weak", 1.2),
        ("norton-beer-medium", 1.4),
        ("norton-beer-strong", 1.6),
    ):
        assert get_apodization(name).fwhm_factor / box == pytest.approx(ratio, abs=1e-4)


@pytest.mark.parametrize("name", sorted(COEFFICIENTS))
def test_coefficients_and_unit_peak(name):
    # Coefficients as in check-values §1; NB and cosine-sum coefficients sum to 1 (A(0) = 1,
    # Norton & Beer 1976 form, M).
    apo = get_apodization(name)
    assert apo.coefficients == COEFFICIENTS[name]
    assert sum(apo.coefficients) == pytest.approx(1.0, abs=1e-12)
    assert apo(0.0) == pytest.approx(1.0, abs=1e-12)


def test_integral_closed_form():
    # integral_0^1 A dxi: its closed form in the module against scipy.integrate.quad.
    for name in apodization_names():
        apo = get_apodization(name)
        ref = integrate.quad(lambda xi, apo=apo: float(apo(xi)), 0, 1, epsabs=1e-14)[0]
        assert apo.integral() == pytest.approx(ref, rel=1e-12)


def _symmetric_grid(M: int, L: float = 1.0) -> np.ndarray:
    # Sample points of a symmetric M-point window: x_n = -L + 2 L n / (M - 1).
    return -L + 2 * L * np.arange(M) / (M - 1)


@pytest.mark.parametrize("M", [7, 64, 65, 301])
def test_sampled_windows_match_scipy(M):
    # scipy.signal.windows (sym=True) evaluated at the same sample points.
    x = _symmetric_grid(M)
    np.testing.assert_allclose(apodize(x, 1.0, "happ-genzel"), windows.hamming(M), atol=1e-12)
    np.testing.assert_allclose(apodize(x, 1.0, "hann"), windows.hann(M), atol=1e-12)
    np.testing.assert_allclose(
        apodize(x, 1.0, "blackman-harris-4"), windows.blackmanharris(M), atol=1e-12
    )
    np.testing.assert_allclose(apodize(x, 1.0, "triangular"), windows.bartlett(M), atol=1e-12)
    np.testing.assert_allclose(apodize(x, 1.0, "boxcar"), windows.boxcar(M), atol=1e-12)
    np.testing.assert_allclose(
        apodize(x, 1.0, "blackman-harris-3"),
        windows.general_cosine(M, [0.42323, 0.49755, 0.07922]),
        atol=1e-12,
    )


@pytest.mark.parametrize("M", [5, 9, 64, 65])
def test_triang_matches_scipy(M):
    # scipy.signal.windows.triang has non-zero end points: it is a triangle of half-width
    # (M + 1)/2 samples (odd M) or M/2 samples (even M) centred on the window.
    step = 1.0
    x = (np.arange(M) - (M - 1) / 2) * step
    L = (M + 1) / 2 * step if M % 2 else M / 2 * step
    np.testing.assert_allclose(apodize(x, L, "triangular"), windows.triang(M), atol=1e-12)


def test_centre_and_outside():
    # Definition: A(|x - centre| / L), zero beyond L (check-values §1 conventions).
    x = np.array([-2.0, 0.9, 1.0, 1.5, 2.0, 2.0001, 3.5])
    w = apodize(x, 1.0, "hann", centre_cm=1.0)
    np.testing.assert_allclose(w[[0, 6]], 0.0)
    assert w[2] == pytest.approx(1.0)
    assert w[4] == pytest.approx(0.0, abs=1e-15)  # Hann reaches 0 at xi = 1 (closed form)
    assert w[5] == 0.0


def test_unknown_name_lists_valid_names():
    with pytest.raises(OptionError) as info:
        get_apodization("gaussian-ish")
    msg = str(info.value)
    assert "gaussian-ish" in msg
    for name in apodization_names():
        assert name in msg
    with pytest.raises(OptionError):
        apodize(np.zeros(3), 1.0, "nope")


def test_lookup_is_forgiving_about_case_and_underscores():
    assert get_apodization("Happ_Genzel").name == "happ-genzel"


@pytest.mark.parametrize("bad", [0.0, -1.0, float("nan"), float("inf")])
def test_bad_length(bad):
    with pytest.raises(OptionError, match="L_cm"):
        apodize(np.zeros(3), bad)
    with pytest.raises(OptionError, match="L_cm"):
        ils_fwhm_per_cm(bad)


@settings(max_examples=200, deadline=None)
@given(
    x=st.lists(st.floats(-10, 10, allow_nan=False), min_size=1, max_size=50),
    L=st.floats(1e-3, 5.0),
    name=st.sampled_from(sorted(TABLE)),
)
def test_weights_in_unit_interval_and_even(x, L, name):
    # Property (definition): 0 <= A <= 1, A even in x, zero beyond L.
    x = np.array(x)
    w = apodize(x, L, name)
    assert np.all((w >= 0.0) & (w <= 1.0))
    np.testing.assert_array_equal(w, apodize(-x, L, name))
    assert np.all(w[np.abs(x) > L] == 0.0)


@settings(max_examples=200, deadline=None)
@given(
    d=st.lists(st.floats(-5, 5, allow_nan=False), min_size=1, max_size=50),
    l=st.floats(0.0, 3.0),
)
def test_mertz_ramp_counts_double_sided_part_once(d, l):  # noqa: E741
    # Definition (Mertz 1967; check-values §3): w(d) + w(-d) = 1, weights in [0, 1], 1 beyond +l.
    d = np.array(d)
    w = mertz_ramp(d, l)
    np.testing.assert_allclose(w + mertz_ramp(-d, l), 1.0, atol=1e-12)
    assert np.all((w >= 0) & (w <= 1))
    assert np.all(w[d > l] == 1.0)


def test_mertz_ramp_values():
    # Linear from 0 at -l to 1 at +l (definition, check-values §3).
    w = mertz_ramp(np.array([-3.0, -1.0, -0.5, 0.0, 0.5, 1.0, 4.0]) + 2.0, 1.0, centre_cm=2.0)
    np.testing.assert_allclose(w, [0.0, 0.0, 0.25, 0.5, 0.75, 1.0, 1.0])
    with pytest.raises(OptionError, match="short_side_cm"):
        mertz_ramp(np.zeros(2), -1.0)
