"""Tests of ftsource.measure.colour: CIE 1931 chromaticity and dominant wavelength.

Reference library: colour-science (PyPI ``colour-science``), used through
``colour.sd_to_XYZ`` / ``colour.XYZ_to_xy`` and ``colour.dominant_wavelength``; facts about its
behaviour (integer-nm dominant wavelengths, doc examples) are from check-values §8.
Reference data: the CIE 1931 2° table (CIE 015:2018, ISO/CIE 11664-1:2019) as copied by
colour-science. Definition of dominant wavelength: CIE e-ILV 17-345.
"""

from __future__ import annotations

import colour
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from hypothesis.extra.numpy import arrays
from scipy.spatial import ConvexHull

from ftsource._data import data_path
from ftsource.errors import FtsourceError, OptionError
from ftsource.measure import colour as ftc

CMFS_REF = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
E_WHITE = np.array([1.0 / 3.0, 1.0 / 3.0])
D65_WHITE = np.array([0.3127, 0.3290])  # white of the colour-science doc examples (§8)


def gaussian_fwhm(w, centre, fwhm):
    """Gaussian in wavelength with a true FWHM (closed form: exp(-4 ln2 (dw/FWHM)^2))."""
    return np.exp(-4.0 * np.log(2.0) * ((w - centre) / fwhm) ** 2)


def reference_xy(w_table, s):
    """colour-science chromaticity of an emitting source sampled on its 1 nm CMF grid."""
    sd = colour.SpectralDistribution(s, w_table)
    xyz = colour.sd_to_XYZ(
        sd, cmfs=CMFS_REF, illuminant=colour.sd_ones(CMFS_REF.shape), method="Integration"
    )
    return colour.XYZ_to_xy(xyz)


def locus_xy(wavelength_nm):
    """Chromaticity of the linearly interpolated CMFs at one wavelength (closed form)."""
    w, cmf = ftc.cie1931_cmf()
    c = np.array([np.interp(wavelength_nm, w, k) for k in cmf])
    return c[:2] / c.sum()


def narrow_line(wavelength_nm, half_width_nm=1e-3):
    """A triangle line of tiny width: a monochromatic stimulus as a sampled spectrum."""
    return (
        [wavelength_nm - half_width_nm, wavelength_nm, wavelength_nm + half_width_nm],
        [0.0, 1.0, 0.0],
    )


# --- the shipped CIE table ----------------------------------------------------------------


def test_cmf_file_header_names_its_source():
    text = data_path(ftc.CMF_FILE).read_text(encoding="utf-8")
    header = "\n".join(line for line in text.splitlines() if line.startswith("#"))
    for needle in (
        "CIE 015:2018",
        "ISO/CIE 11664-1:2019",
        "colour-science 0.4.7",
        "MSDS_CMFS['CIE 1931 2 Degree Standard Observer']",
        "Retrieved: 2026-12-02",
    ):
        assert needle in header


def test_cmf_table_equals_reference_copy():
    # Source: colour-science's copy of the CIE 1931 2° table (CIE 015:2018); the file was
    # written from it with repr(), so the values must agree to the last bit.
    w, cmf = ftc.cie1931_cmf()
    np.testing.assert_array_equal(w, np.arange(360.0, 831.0, 1.0))
    np.testing.assert_array_equal(w, CMFS_REF.wavelengths)
    np.testing.assert_array_equal(cmf.T, CMFS_REF.values)


def test_cmf_y_bar_peaks_at_555():
    # CIE 015:2018: y_bar = V(lambda), normalised to 1 at its 555 nm maximum.
    w, cmf = ftc.cie1931_cmf()
    assert w[np.argmax(cmf[1])] == 555.0
    assert cmf[1][w == 555.0][0] == 1.0


def test_cmf_arrays_are_read_only():
    w, cmf = ftc.cie1931_cmf()
    with pytest.raises(ValueError):
        cmf[0, 0] = 1.0
    with pytest.raises(ValueError):
        w[0] = 1.0


# --- chromaticity ---------------------------------------------------------------------------

CENTRES_NM = [450.0, 470.0, 505.0, 525.0, 532.0, 570.0, 590.0, 616.0, 630.0, 650.0]
FWHMS_NM = [15.0, 25.0, 40.0]


@pytest.mark.parametrize("fwhm", FWHMS_NM)
@pytest.mark.parametrize("centre", CENTRES_NM)
def test_chromaticity_matches_reference_same_grid(centre, fwhm):
    # Source: colour-science sd_to_XYZ(method="Integration") + XYZ_to_xy. Method difference:
    # colour-science sums S*cmf*1nm (rectangle rule) on the table grid; ftsource uses the
    # trapezoid rule on the union of the spectrum's and the table's grids with linear
    # interpolation. On the same 1 nm grid they differ only by half the end samples, where an
    # LED-like Gaussian is ~0, so 1e-4 (the project's chromaticity tolerance) is generous.
    w = CMFS_REF.wavelengths
    s = gaussian_fwhm(w, centre, fwhm)
    xy = ftc.chromaticity_xy(w, s)
    np.testing.assert_allclose(xy, reference_xy(w, s), rtol=0, atol=1e-4)


@pytest.mark.parametrize("centre", CENTRES_NM)
def test_chromaticity_fine_grid_matches_reference(centre):
    # Source: colour-science as above, on 1 nm samples. ftsource gets the same Gaussian on a
    # 0.05 nm grid and interpolates the CMFs linearly between rows: the two integrals differ
    # by the interpolation/quadrature error (seen <= 4e-5 for FWHM 20 nm), within 1e-4.
    w = CMFS_REF.wavelengths
    w_fine = np.linspace(360.0, 830.0, 9401)
    xy = ftc.chromaticity_xy(w_fine, gaussian_fwhm(w_fine, centre, 20.0))
    np.testing.assert_allclose(xy, reference_xy(w, gaussian_fwhm(w, centre, 20.0)), atol=1e-4)


@pytest.mark.parametrize(
    "wavelength_nm", [380.0, 400.0, 450.0, 500.0, 520.0, 555.0, 600.0, 650.0, 700.0, 780.0]
)
def test_monochromatic_chromaticity_is_table_ratio(wavelength_nm):
    # Source: the published CIE 1931 table (CIE 015:2018), colour-science copy:
    # x = x_bar/(x_bar+y_bar+z_bar), y = y_bar/(...). A triangle line centred on a table row
    # integrates exactly (trapezoid on both linear halves), so only rounding remains: 1e-12.
    row = CMFS_REF[wavelength_nm]
    expected = row[:2] / row.sum()
    xy = ftc.chromaticity_xy(*narrow_line(wavelength_nm))
    np.testing.assert_allclose(xy, expected, rtol=0, atol=1e-12)


@pytest.mark.parametrize(
    ("wavelength_nm", "x", "y"),
    [
        (520.0, 0.0743, 0.8338),  # spectrum-locus chromaticity, CIE 1931 table (from memory)
        (700.0, 0.7347, 0.2653),  # red end of the locus, CIE 1931 table (from memory)
    ],
)
def test_monochromatic_chromaticity_remembered_values(wavelength_nm, x, y):
    # 4-decimal values: tolerance is half a unit in the 4th decimal.
    xy = ftc.chromaticity_xy(*narrow_line(wavelength_nm))
    np.testing.assert_allclose(xy, (x, y), rtol=0, atol=5e-5)


def test_narrow_gaussian_laser_line_is_locus_point():
    # A laser-like Gaussian (FWHM 0.01 nm) at 632.8 nm must give the locus chromaticity at
    # that wavelength (closed form: linear CMF interpolation, curvature negligible), 1e-6.
    w = np.linspace(632.7, 632.9, 2001)
    xy = ftc.chromaticity_xy(w, gaussian_fwhm(w, 632.8, 0.01))
    np.testing.assert_allclose(xy, locus_xy(632.8), rtol=0, atol=1e-6)


def test_chromaticity_independent_of_order_scale_and_units():
    import astropy.units as u

    w = np.linspace(400.0, 700.0, 3001)
    s = gaussian_fwhm(w, 560.0, 30.0)
    base = ftc.chromaticity_xy(w, s)
    # Exact invariances (closed form): reversing the sample order, scaling the density,
    # giving wavelength as an astropy Quantity in micrometres: equal within rounding, 1e-12.
    np.testing.assert_allclose(ftc.chromaticity_xy(w[::-1], s[::-1]), base, atol=1e-12)
    np.testing.assert_allclose(ftc.chromaticity_xy(w, 7.5e3 * s), base, atol=1e-12)
    np.testing.assert_allclose(
        ftc.chromaticity_xy((w * u.nm).to(u.um), s * u.W / u.nm), base, atol=1e-12
    )


def test_chromaticity_does_not_mutate_inputs():
    w = np.linspace(700.0, 400.0, 301)
    s = gaussian_fwhm(w, 560.0, 30.0)
    w0, s0 = w.copy(), s.copy()
    ftc.chromaticity_xy(w, s)
    np.testing.assert_array_equal(w, w0)
    np.testing.assert_array_equal(s, s0)


@pytest.mark.parametrize("centre", [808.0, 1064.0, 1550.0, 300.0])
def test_invisible_source_has_no_chromaticity(centre):
    # 808/1064 nm: the infrared of a green DPSS pointer (NIST TN 1668); 300 nm: UV. All their
    # power lies outside 380-780 nm, so < 1 % visible (module specification).
    w = np.linspace(centre - 20.0, centre + 20.0, 801)
    assert ftc.chromaticity_xy(w, gaussian_fwhm(w, centre, 2.0)) is None


@pytest.mark.parametrize(("visible_fraction", "has_colour"), [(0.005, False), (0.02, True)])
def test_visible_fraction_threshold(visible_fraction, has_colour):
    # An IR line plus a weak 532 nm line carrying a chosen fraction of the power (closed form:
    # the two Gaussians' areas). Threshold 1 % (module specification).
    w = np.arange(300.0, 1200.0, 0.25)
    ir = gaussian_fwhm(w, 1064.0, 5.0)
    green = gaussian_fwhm(w, 532.0, 2.0)
    a = visible_fraction / (1 - visible_fraction) * (5.0 / 2.0)  # area ratio = FWHM ratio
    xy = ftc.chromaticity_xy(w, ir + a * green)
    assert (xy is not None) is has_colour
    if has_colour:
        np.testing.assert_allclose(xy, locus_xy(532.0), atol=2e-3)  # nearly monochromatic


def test_non_positive_spectrum_has_no_chromaticity():
    w = np.linspace(400.0, 700.0, 31)
    assert ftc.chromaticity_xy(w, np.zeros_like(w)) is None
    assert ftc.chromaticity_xy(w, -gaussian_fwhm(w, 550.0, 30.0)) is None


@pytest.mark.parametrize(
    ("w", "s"),
    [
        ([500.0, 600.0], [1.0]),
        ([[500.0, 600.0]], [[1.0, 1.0]]),
        ([500.0], [1.0]),
        ([500.0, 600.0, 550.0], [1.0, 1.0, 1.0]),
        ([500.0, 500.0, 600.0], [1.0, 1.0, 1.0]),
        ([500.0, np.nan, 600.0], [1.0, 1.0, 1.0]),
        ([500.0, 550.0, 600.0], [1.0, np.inf, 1.0]),
        ([-1.0, 550.0, 600.0], [1.0, 1.0, 1.0]),
    ],
)
def test_chromaticity_rejects_bad_spectra(w, s):
    with pytest.raises(OptionError):
        ftc.chromaticity_xy(w, s)


def test_chromaticity_rejects_non_length_quantity():
    import astropy.units as u

    with pytest.raises(OptionError, match="wavelength_nm"):
        ftc.chromaticity_xy([1.0, 2.0] * u.s, [1.0, 1.0])


@pytest.mark.parametrize("bad", [-0.1, 1.5, np.nan])
def test_chromaticity_rejects_bad_fraction(bad):
    with pytest.raises(OptionError, match="min_visible_fraction"):
        ftc.chromaticity_xy([500.0, 600.0], [1.0, 1.0], min_visible_fraction=bad)


_HULL = ConvexHull(np.array([locus_xy(w) for w in np.arange(360.0, 831.0, 1.0)]))


@settings(max_examples=200, deadline=None)
@given(
    arrays(
        np.float64,
        st.integers(min_value=2, max_value=60),
        # subnormal densities (below 1e-300) make X+Y+Z underflow; no detector reports them
        elements=st.floats(min_value=0.0, max_value=1e6, allow_nan=False).map(
            lambda v: 0.0 if v < 1e-300 else v
        ),
    ),
    st.floats(min_value=380.0, max_value=700.0),
    st.floats(min_value=1.0, max_value=200.0),
)
def test_chromaticity_in_triangle_and_locus(density, start, span):
    # Closed form: for a non-negative spectrum X, Y, Z >= 0, so x, y >= 0 and x + y <= 1; and
    # xy is a convex combination of locus points, so it lies in the locus' convex hull.
    w = np.linspace(start, start + span, density.size)
    xy = ftc.chromaticity_xy(w, density)
    if xy is None:
        # Only a zero spectrum, or one with < 1 % of its power below 780 nm, has no colour.
        power = 0.5 * np.sum((density[1:] + density[:-1]) * np.diff(w))
        assert power == 0.0 or start + span > 780.0
        return
    x, y = xy
    assert x >= -1e-12 and y >= -1e-12 and x + y <= 1.0 + 1e-12
    # Inside (or on) the hull, up to rounding.
    assert np.all(_HULL.equations[:, :2] @ np.array([x, y]) + _HULL.equations[:, 2] <= 1e-9)


# --- dominant wavelength --------------------------------------------------------------------


@pytest.mark.parametrize("fwhm", FWHMS_NM)
@pytest.mark.parametrize("centre", CENTRES_NM)
def test_dominant_wavelength_matches_reference_table(centre, fwhm):
    # Source: colour.dominant_wavelength with white E and the 1 nm CMFs. It returns the table
    # wavelength whose locus point is nearest the crossing (integer nm, check-values §8), so
    # ±0.5 nm; plus 0.03 nm because within a 1 nm row the locus point moves non-uniformly with
    # wavelength (X+Y+Z changes by up to ~11 %/nm over 420-700 nm, shifting the nearest-row
    # split by up to 0.25 * 0.11 nm; closed form from the table).
    w = CMFS_REF.wavelengths
    xy_ref = reference_xy(w, gaussian_fwhm(w, centre, fwhm))
    expected = float(colour.dominant_wavelength(xy_ref, E_WHITE, CMFS_REF)[0])
    got = ftc.dominant_wavelength_nm(tuple(xy_ref))
    assert got == pytest.approx(expected, abs=0.5 + 0.03)


_CMFS_FINE = CMFS_REF.copy().align(
    colour.SpectralShape(360.0, 830.0, 0.0625), interpolator=colour.LinearInterpolator
)  # 1/16 nm: exact in binary, so colour-science sees a uniform grid (0.01 nm makes it warn)


@pytest.mark.parametrize("centre", [450.0, 505.0, 532.0, 590.0, 650.0])
def test_dominant_wavelength_matches_reference_fine_table(centre):
    # Source: colour.dominant_wavelength with the CMFs resampled linearly to 1/16 nm
    # (check-values §8: "or resample the CMFS finer"). Both then use the same linear
    # interpolation; the reference is quantised to 0.0625 nm rows, so ±0.03125 nm, plus the
    # same non-uniformity allowance as above scaled to the row (0.03/16): allow 0.033 nm.
    w = CMFS_REF.wavelengths
    xy_ref = reference_xy(w, gaussian_fwhm(w, centre, 25.0))
    expected = float(colour.dominant_wavelength(xy_ref, E_WHITE, _CMFS_FINE)[0])
    assert ftc.dominant_wavelength_nm(tuple(xy_ref)) == pytest.approx(expected, abs=0.033)


@pytest.mark.parametrize(
    ("xy", "expected"),
    [((0.54369557, 0.32107944), 616.0), ((0.37605506, 0.24452225), -509.0)],
)
def test_reference_doc_examples(xy, expected):
    # Source: colour-science documentation examples with xy_n = (0.3127, 0.3290)
    # (check-values §8): 616 and -509 (complementary), integer table values, so ±0.5 nm.
    got = ftc.dominant_wavelength_nm(xy, white=tuple(D65_WHITE))
    assert got == pytest.approx(expected, abs=0.5)
    assert float(colour.dominant_wavelength(np.array(xy), D65_WHITE, CMFS_REF)[0]) == expected


def test_purple_mixture_gives_negative_complementary():
    # A mix of 450 nm and 650 nm lines is purple: no dominant wavelength, complementary one
    # is green (CIE 015:2018). Compared with colour.dominant_wavelength, ±0.53 nm as above.
    w = CMFS_REF.wavelengths
    s = gaussian_fwhm(w, 450.0, 10.0) + 3.0 * gaussian_fwhm(w, 650.0, 10.0)
    xy = ftc.chromaticity_xy(w, s)
    got = ftc.dominant_wavelength_nm(xy)
    expected = float(colour.dominant_wavelength(reference_xy(w, s), E_WHITE, CMFS_REF)[0])
    assert got < 0 and expected < 0
    assert 490.0 < -got < 570.0  # a green complementary (CIE 1931 diagram, from memory)
    assert got == pytest.approx(expected, abs=0.53)


@settings(max_examples=200, deadline=None)
@given(st.floats(min_value=360.0, max_value=698.9))
def test_monochromatic_stimulus_is_its_own_dominant_wavelength(wavelength_nm):
    # Definition (CIE e-ILV 17-345): a monochromatic stimulus matches itself with zero white,
    # so its dominant wavelength is its wavelength. Closed-form crossing: 1e-6 nm.
    got = ftc.dominant_wavelength_nm(tuple(locus_xy(wavelength_nm)))
    assert got == pytest.approx(wavelength_nm, abs=1e-6)


@pytest.mark.parametrize("wavelength_nm", [401.3, 450.0, 532.1, 589.29, 632.8, 650.5])
def test_dominant_wavelength_of_narrow_line(wavelength_nm):
    # Chain chromaticity -> dominant wavelength for a monochromatic line (definition, CIE
    # e-ILV 17-345). The triangle line is symmetric, so linear CMFs integrate exactly: 1e-6 nm.
    xy = ftc.chromaticity_xy(*narrow_line(wavelength_nm))
    assert ftc.dominant_wavelength_nm(xy) == pytest.approx(wavelength_nm, abs=1e-6)


def test_deep_red_is_reported_at_the_end_of_the_distinct_locus():
    # Above ~699 nm the CIE table's chromaticities coincide within rounding (z_bar = 0 and
    # x_bar/y_bar constant; CIE 015:2018 table), so a 750 nm line reads as ~699 nm
    # (documented behaviour).
    xy = ftc.chromaticity_xy(*narrow_line(750.0))
    assert 698.5 <= ftc.dominant_wavelength_nm(xy) <= 699.0 + 1e-9


def test_default_white_is_equal_energy_point():
    # check-values §8: for LEDs the achromatic point is E, x = y = 1/3.
    xy = (0.30, 0.60)
    assert ftc.dominant_wavelength_nm(xy) == ftc.dominant_wavelength_nm(xy, (1 / 3, 1 / 3))
    assert ftc.EQUAL_ENERGY_WHITE == (1 / 3, 1 / 3)


def test_dominant_wavelength_undefined_cases():
    assert ftc.dominant_wavelength_nm(None) is None
    assert ftc.dominant_wavelength_nm((1 / 3, 1 / 3)) is None


@pytest.mark.parametrize("white", [(0.9, 0.05), (0.05, 0.05), (0.0, 0.0), (0.5, 0.1)])
def test_white_outside_locus_is_refused(white):
    # Outside the spectrum locus and purple line: beyond the red end (x > 0.7347), left of
    # the blue corner, the origin, and below the purple line (CIE 1931 table, closed form).
    with pytest.raises(OptionError, match="white"):
        ftc.dominant_wavelength_nm((0.4, 0.4), white=white)


@pytest.mark.parametrize("bad", [(0.3,), (0.3, np.nan), "xy", (0.3, 0.3, 0.3)])
def test_bad_xy_is_refused(bad):
    with pytest.raises(OptionError, match="xy") as info:
        ftc.dominant_wavelength_nm(bad)
    assert isinstance(info.value, FtsourceError)
