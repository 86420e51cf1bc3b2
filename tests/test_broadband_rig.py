"""Broad sources on home-built rigs (issue 12, parts 1-4): unequal glass, noise, line shape,
colour in standard air.

Every record here is made by a forward model written in this file (not ftsource.simulate):

- the LED is a Gaussian in wavelength, skewed by a weaker broader Gaussian on its red side
  (density per unit wavelength S_λ), sampled as a
  comb of monochromatic components every 4 cm⁻¹ (its transform repeats only beyond 2.5 mm of
  OPD, ten times the scan);
- one arm holds ``glass_mm`` of extra SCHOTT N-BK7 (all passes together): each component's
  fringes are shifted by the glass's optical path ``t·(n(σ) − 1)``, less the group delay at
  the band's centre (the user sets the mirror on the white-light fringes). n(λ) is the
  Sellmeier equation of the SCHOTT N-BK7 data sheet, B1 = 1.03961212, B2 = 0.231792344,
  B3 = 1.01046945, C1 = 0.00600069867 µm², C2 = 0.0200179144 µm², C3 = 103.560653 µm²
  (coefficients from memory), cross-checked below against the data sheet's n_d = 1.5168 at
  587.56 nm and n_F = 1.5224 at 486.13 nm (published, SCHOTT catalogue);
- the mirror runs back and forth with rounded turnarounds and a 5 % speed wobble; the
  reference laser (632.991 nm) is seen by one detector (cos) or by a quadrature pair with
  offsets and unequal gains; detector noise is white and Gaussian.

Truths: peak, FWHM and centroid of the split normal in closed form or by numpy quadrature on
a fine grid; the coherence length ∫S_σ² dσ/(∫S_σ dσ)² (Goodman, Statistical Optics, 1985,
§5.2) by numpy quadrature; chromaticity and dominant wavelength from colour-science (PyPI,
a general-purpose colour library) on the CIE 1931 table's own standard-air wavelengths,
with vacuum ↔ standard air by Morton 2000 eq. 8 written out here.

Targets (issue 12, "Done when"): peak and centroid within ±0.15 nm, FWHM ±1.5 %, coherence
length ±3 %, chromaticity ±0.002, dominant wavelength ±1 nm.
"""

from __future__ import annotations

import warnings

import colour
import numpy as np
import pytest

from ftsource.analysis import AnalysisOptions, analyze
from ftsource.io.records import Record
from ftsource.measure.colour import chromaticity_xy, dominant_wavelength_nm

CMFS = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
E_WHITE = np.array([1 / 3, 1 / 3])
REF_NM = 632.991
_B = (1.03961212, 0.231792344, 1.01046945)
_C = (0.00600069867, 0.0200179144, 103.560653)


def n_bk7(lam_nm):
    """SCHOTT N-BK7 Sellmeier (coefficients from memory; checked below)."""
    l2 = (np.asarray(lam_nm, dtype=float) / 1e3) ** 2
    return np.sqrt(1 + sum(b * l2 / (l2 - c) for b, c in zip(_B, _C, strict=True)))


def n_standard_air(lam_vac_nm):
    """Morton 2000 eq. 8 (IAU standard air), s the vacuum wavenumber in µm⁻¹ (from memory)."""
    s2 = (1e3 / np.asarray(lam_vac_nm, dtype=float)) ** 2
    return 1 + 8.34254e-5 + 2.406147e-2 / (130 - s2) + 1.5998e-4 / (38.9 - s2)


def standard_air_to_vacuum(lam_air_nm):
    lam = np.asarray(lam_air_nm, dtype=float)
    vac = lam * 1.0003
    for _ in range(8):
        vac = lam * n_standard_air(vac)
    return vac


def led_shape(lam, centre, fwhm, skew):
    """S_λ of an LED: a Gaussian of FWHM ``fwhm`` at ``centre``, plus (``skew`` > 0) a weaker,
    broader Gaussian half a FWHM to the red: a smooth, skewed band (no kink at its maximum,
    so its peak is well defined)."""
    g = np.exp(-4 * np.log(2) * ((lam - centre) / fwhm) ** 2)
    if skew:
        g = g + skew * np.exp(-4 * np.log(2) * ((lam - centre - 0.5 * fwhm) / (1.5 * fwhm)) ** 2)
    return g


def make_record(centre, fwhm, *, asym=0.0, glass_mm=0.0, ref="quadrature", seed=0,
                noise=0.002, fs=100_000.0, duration=0.6, amp_cm=0.02, rate=4.0):
    rng = np.random.default_rng(seed)
    sig = np.arange(1e7 / (centre + 5 * fwhm), 1e7 / (centre - 5 * fwhm), 4.0)
    lam = 1e7 / sig
    s_sigma = led_shape(lam, centre, fwhm, asym) * lam**2  # S_σ ∝ S_λ·λ²
    a = s_sigma / s_sigma.sum()
    t = glass_mm / 10.0
    h = 1e-3
    n_c = n_bk7(centre)
    n_g = n_c - centre * (n_bk7(centre + h) - n_bk7(centre - h)) / (2 * h)
    extra = t * (n_bk7(lam) - 1) - t * (n_g - 1)  # cm, per component
    time = np.arange(int(fs * duration)) / fs
    wob = 1 + 0.05 * np.sin(2 * np.pi * 1.3 * time + rng.uniform(0, 2 * np.pi))
    theta = rng.uniform(0, np.pi) + 2 * np.pi * rate * np.cumsum(wob) / fs
    k = 0.97  # rounded turnarounds
    x = amp_cm * np.arcsin(k * np.sin(theta)) / np.arcsin(k) + rng.uniform(-5e-4, 5e-4)
    y = np.zeros_like(x)
    for i in range(0, sig.size, 64):
        sl = slice(i, i + 64)
        y += np.cos(2 * np.pi * np.outer(x, sig[sl]) + 2 * np.pi * sig[sl] * extra[sl]) @ a[sl]
    y = 1.0 + y + rng.normal(0, noise, x.size)
    phase = 2 * np.pi * x / (REF_NM * 1e-7)
    cols = {"time": time, "signal": y}
    if ref == "quadrature":
        cols["ref_i"] = 0.05 + np.cos(phase) + rng.normal(0, 0.002, x.size)
        cols["ref_q"] = -0.03 + 0.9 * np.sin(phase) + rng.normal(0, 0.002, x.size)
    else:
        cols["ref"] = 1.0 + 0.8 * np.cos(phase) + rng.normal(0, 0.002, x.size)
    return Record(columns=cols, sample_rate_hz=fs, metadata={}, path="<forward model>")


def truth(centre, fwhm, asym=0.0):
    lam = np.linspace(centre - 6 * fwhm, centre + 8 * fwhm, 1_400_001)  # 1e-5 FWHM steps
    s = led_shape(lam, centre, fwhm, asym)
    i = int(np.argmax(s))
    above = lam[s >= s[i] / 2]  # one contiguous region for these shapes
    out = {"peak": float(lam[i]), "fwhm": float(above.max() - above.min()),
           "centroid": float(np.sum(lam * s) / np.sum(s))}
    sig = 1e7 / lam[::-1]
    s_sig = (s * lam**2)[::-1]
    out["coherence_mm"] = float(np.trapezoid(s_sig**2, sig) / np.trapezoid(s_sig, sig) ** 2) * 10
    if centre < 700:
        w = CMFS.wavelengths  # standard air
        vac = standard_air_to_vacuum(w)
        # per unit air wavelength: × dλ_vac/dλ_air (constant to 1e-5: kept for exactness)
        dens = led_shape(vac, centre, fwhm, asym) * np.gradient(vac, w)
        sd = colour.SpectralDistribution(dens, w)
        xyz = colour.sd_to_XYZ(sd, cmfs=CMFS, illuminant=colour.sd_ones(CMFS.shape),
                               method="Integration")
        out["xy"] = colour.XYZ_to_xy(xyz)
        out["dominant"] = float(colour.dominant_wavelength(out["xy"], E_WHITE, CMFS)[0])
    return out


def measured(record):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        return analyze(record, AnalysisOptions(reference_wavelength_nm=REF_NM, medium="vacuum"))


def check_figures(s, tr):
    assert s["kind"] == "broadband"
    assert abs(s["peak_wavelength_nm"] - tr["peak"]) < 0.15
    assert abs(s["centroid_wavelength_nm"] - tr["centroid"]) < 0.15
    assert abs(s["fwhm_nm"] / tr["fwhm"] - 1) < 0.015
    assert abs(s["coherence_length_mm"] / tr["coherence_mm"] - 1) < 0.03
    if "xy" in tr:
        assert s["chromaticity_xy"] == pytest.approx(list(tr["xy"]), abs=0.002)
        assert abs(s["dominant_wavelength_nm"] - tr["dominant"]) < 1.0


def test_bk7_sellmeier_matches_published_indices():
    # SCHOTT N-BK7 data sheet: n_d = 1.51680 (587.5618 nm), n_F = 1.52238 (486.1327 nm),
    # n_C = 1.51432 (656.2725 nm) (published; from memory); vacuum vs air wavelengths differ
    # by 0.16 nm here, which moves n by < 1e-5
    assert n_bk7(587.5618) == pytest.approx(1.51680, abs=2e-5)
    assert n_bk7(486.1327) == pytest.approx(1.52238, abs=2e-5)
    assert n_bk7(656.2725) == pytest.approx(1.51432, abs=2e-5)
    # and the copy in ftsource agrees with this one
    from ftsource.spectrum.dispersion import bk7_index

    lam = np.linspace(400, 1000, 7)
    np.testing.assert_allclose(bk7_index(lam), n_bk7(lam), rtol=1e-12)


def test_standard_air_formula_matches_published_sodium_d():
    # Na D2: 588.9950 nm in standard air, 589.1583 nm in vacuum (NIST ASD, from memory)
    assert standard_air_to_vacuum(588.9950) == pytest.approx(589.1583, abs=2e-4)


@pytest.mark.slow
@pytest.mark.parametrize(
    "centre, fwhm, asym, ref, seed",
    [
        (590.0, 16.0, 0.0, "quadrature", 1),  # the amber LED of the issue, 6 mm of glass
        (590.0, 16.0, 0.3, "single", 2),
        (450.0, 20.0, 0.0, "single", 3),
        (450.0, 20.0, 0.0, "quadrature", 4),
        (530.0, 30.0, 0.0, "single", 7),  # the band edges delayed most from ZPD
        (530.0, 30.0, 0.0, "quadrature", 8),
        (850.0, 60.0, 0.0, "single", 5),
        (950.0, 40.0, 0.3, "quadrature", 6),
    ],
)
def test_uncompensated_glass_gives_the_figures_of_a_compensated_rig(centre, fwhm, asym, ref,
                                                                      seed):
    # Part 1: 6 mm of N-BK7 in one arm and no compensator. Before the polynomial phase the
    # 450/20 nm LED came out 1.3 nm short at its peak and 12 % narrow, with L_c 40 % long;
    # before the apodization weight at each component's group delay was divided out, the
    # 530/30 nm LED was 2.8 % narrow, with L_c 3.4 % long and x, y 0.0027 off.
    tr = truth(centre, fwhm, asym)
    r = measured(make_record(centre, fwhm, asym=asym, glass_mm=6.0, ref=ref, seed=seed))
    d = r.to_dict()
    check_figures(d["summary"], tr)
    g = d["processing"]["glass_imbalance"]
    assert g is not None
    # the thickness the phase implies: 6 mm of N-BK7 within 5 % (the quartic's curvature is
    # taken at the band's weighted centre, where the glass's dispersion differs slightly)
    assert g["bk7_thickness_mm"] == pytest.approx(6.0, rel=0.05)
    assert g["optical_thickness_difference_mm"] == pytest.approx(6.0 * n_bk7(centre), rel=0.05)
    assert any("compensator plate" in w for w in d["warnings"])


@pytest.mark.slow
@pytest.mark.parametrize("ref, seed", [("single", 11), ("quadrature", 12), ("single", 13)])
def test_compensated_rig_reports_no_glass(ref, seed):
    r = measured(make_record(590.0, 16.0, ref=ref, seed=seed))
    d = r.to_dict()
    check_figures(d["summary"], truth(590.0, 16.0))
    assert d["processing"]["glass_imbalance"] is None
    assert not any("compensator plate" in w for w in d["warnings"])


@pytest.mark.slow
@pytest.mark.parametrize(
    "centre, fwhm, ref, seed",
    [(450.0, 20.0, "single", 21), (450.0, 20.0, "single", 22), (470.0, 25.0, "quadrature", 23),
     (630.0, 18.0, "single", 24)],
)
def test_noisy_blue_led_integrals_stay_in_the_band(centre, fwhm, ref, seed):
    # Part 2: a blue LED below the reference wavelength with a noisy detector. At noise 0.015
    # every figure meets the targets. At noise 0.03 (peak and coherence length are
    # then noise-limited: u_peak 0.12-0.21 nm) the integrals still must: before the band
    # rule, clipped noise far from the band moved y by +0.0014 and the dominant wavelength by
    # +0.6 nm (450/20 nm, seed 21).
    tr = truth(centre, fwhm)
    s = measured(make_record(centre, fwhm, ref=ref, seed=seed, noise=0.015)).to_dict()["summary"]
    check_figures(s, tr)
    # the centroid's uncertainty includes the band-edge choice and still covers the error
    assert abs(s["centroid_wavelength_nm"] - tr["centroid"]) < 3 * s["u_centroid_wavelength_nm"]
    s = measured(make_record(centre, fwhm, ref=ref, seed=seed, noise=0.03)).to_dict()["summary"]
    assert abs(s["centroid_wavelength_nm"] - tr["centroid"]) < 0.15
    assert s["chromaticity_xy"] == pytest.approx(list(tr["xy"]), abs=0.002)
    assert abs(s["dominant_wavelength_nm"] - tr["dominant"]) < 1.0


@pytest.mark.slow
@pytest.mark.parametrize("centre, fwhm, ref, seed", [(450.0, 20.0, "single", 22),
                                                     (470.0, 25.0, "quadrature", 24)])
def test_noisy_blue_led_behind_glass(centre, fwhm, ref, seed):
    # Parts 1 and 2 together: 6 mm of N-BK7 and noise 1.5 %. The phase fitted where the band
    # stands above the noise used to be held constant beyond, so the chirped wings lost
    # cos(Δφ) of their height: L_c came out 5-7 % long (FWHM still right).
    tr = truth(centre, fwhm)
    d = measured(make_record(centre, fwhm, ref=ref, seed=seed, noise=0.015,
                             glass_mm=6.0)).to_dict()
    check_figures(d["summary"], tr)
    assert d["processing"]["glass_imbalance"]["bk7_thickness_mm"] == pytest.approx(6.0, rel=0.05)


@pytest.mark.slow
@pytest.mark.parametrize("centre, fwhm, ref, seed", [(850.0, 60.0, "quadrature", 31),
                                                     (950.0, 40.0, "single", 32)])
def test_coherence_length_of_a_broad_led_has_no_line_shape_bias(centre, fwhm, ref, seed):
    # Part 3: the instrument line shape (25 cm⁻¹ here) shortened L_c by 0.1-0.45 %, many
    # times its u; after the correction the error is within 0.15 % and within 3 u
    tr = truth(centre, fwhm)
    s = measured(make_record(centre, fwhm, ref=ref, seed=seed, noise=0.0005)).to_dict()["summary"]
    err = s["coherence_length_mm"] / tr["coherence_mm"] - 1
    assert abs(err) < 0.0015
    assert abs(s["coherence_length_mm"] - tr["coherence_mm"]) < 3 * s["u_coherence_length_mm"]


@pytest.mark.parametrize("centre, fwhm", [(450.0, 20.0), (530.0, 30.0), (590.0, 16.0),
                                          (630.0, 18.0)])
def test_colour_of_a_vacuum_spectrum_is_taken_in_standard_air(centre, fwhm):
    # Part 4: CIE tables are on standard-air wavelengths. A spectrum measured on vacuum
    # wavelengths, converted by ftsource, must give colour-science's figures on the table's
    # own grid (truth above); left on the vacuum scale it is 0.13-0.17 nm off.
    tr = truth(centre, fwhm)
    lam = np.linspace(centre - 6 * fwhm, centre + 6 * fwhm, 20_001)  # vacuum
    dens = led_shape(lam, centre, fwhm, 0.0)
    xy = chromaticity_xy(lam, dens, scale="vacuum")
    assert xy == pytest.approx(tuple(tr["xy"]), abs=1e-4)
    dom = dominant_wavelength_nm(xy)
    # colour-science reports the nearest whole-nanometre row (docs/colour_and_safety.md)
    assert abs(dom - tr["dominant"]) <= 0.5 + 0.03
    # left on the vacuum scale the dominant wavelength reads long, by about λ(n − 1) of
    # standard air (0.13-0.17 nm; the figure)
    dom_vac = dominant_wavelength_nm(chromaticity_xy(lam, dens))
    assert 0.10 < dom_vac - dom < 0.20
    with pytest.raises(Exception, match="scale"):
        chromaticity_xy(lam, dens, scale="air")


@pytest.mark.slow
def test_coherence_length_uncertainty_covers_its_error_at_low_snr():
    # At noise 3 % of the mean level the coherence length's propagated u (points taken as
    # independent) was 0.34 % against a scatter of 2.2 % over seeds (rms z ≈ 6). With the
    # sweeps' scatter (Type A, t-distribution of JCGM 101:2008 §6.4.9.4) a correctly stated u
    # gives z = error/u with E[z²] = 1; over 8 seeds Σz² > 32 has probability 1e-4
    # (chi-square with 8 degrees of freedom, closed form), so mean z² < 4 (rms z < 2).
    tr = truth(450.0, 20.0)
    z = []
    for seed in range(100, 108):
        s = measured(make_record(450.0, 20.0, ref="single", seed=seed, noise=0.03)
                     ).to_dict()["summary"]
        err = s["coherence_length_mm"] - tr["coherence_mm"]
        assert abs(err) / tr["coherence_mm"] < 0.05  # the noise-limited figure stays close
        z.append(err / s["u_coherence_length_mm"])
    assert float(np.mean(np.square(z))) < 4.0
    assert max(abs(v) for v in z) < 3.5
