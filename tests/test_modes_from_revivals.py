"""A multimode laser diode scanned from near ZPD to just past its first coherence revival
(issue 11, item 1), end to end through ``ftsource.analyze``.

Such a scan resolves about one mode spacing, so the modes merge into their envelope; the
interferogram still shows the comb: its bursts repeat every P = 1/Δσ of path. Records come
from a forward model written here (a comb of modes under a Gaussian envelope, Lorentzian
modes) on the rig model of ``tests/rig_model.py`` (quadrature channels with harmonic
distortion and quantisation, 15 % mirror-speed wobble). Truths (closed forms):

* a comb of modes σ_k = σ₀ + kΔσ with amplitudes a_k gives ``Σ a_k cos 2πσ_k x``; its bursts
  repeat every 1/Δσ (Dirichlet kernel; Lorentzian modes of FWHM w damp them by exp(−πw|x|));
* mode spacing in wavelength Δλ = 10⁷·Δσ/σ₀² nm, cavity optical length n_g·L = 1/(2Δσ), free
  spectral range Δν = c·Δσ (c = 299 792 458 m/s exact);
* the envelope's FWHM is that of the Gaussian of the amplitudes, F spacings.

Source: A. E. Siegman, *Lasers*, University Science Books (1986), §11.3 (axial modes spaced by
c/(2 n_g L)); M. Born and E. Wolf, *Principles of Optics*, 7th ed. (1999), §7.5.8 (visibility
of fringes of several spectral components).
"""

from __future__ import annotations

import numpy as np
import pytest
import rig_model as rm

from ftsource.analysis import analyze

FS = 100e3
PERIOD_CM = 0.775  # revival period: Δσ = 1/0.775 cm⁻¹
CENTRE_NM = 650.0


def diode_comb(x_cm, *, n_modes=11, envelope_modes=5.0, mode_fwhm_per_cm=0.05,
               spacing_per_cm=1 / PERIOD_CM):
    """Interferogram of ``n_modes`` Lorentzian modes under a Gaussian envelope of FWHM
    ``envelope_modes`` spacings, normalised to 1 at ZPD."""
    s0 = 1e7 / CENTRE_NM
    k = np.arange(n_modes) - (n_modes - 1) / 2
    a = np.exp(-4 * np.log(2) * (k / envelope_modes) ** 2)
    y = sum(ak * np.cos(2 * np.pi * (s0 + kk * spacing_per_cm) * x_cm) for ak, kk in zip(a, k,
                                                                                      strict=True))
    return y / a.sum() * np.exp(-np.pi * mode_fwhm_per_cm * np.abs(x_cm))


def scan(seed, *, start_cm=-0.2, end_cm=0.9, seconds=4.0):
    """Sweeps from ``start_cm`` (before ZPD) to ``end_cm`` (past the first revival at
    0.775 cm), rounded turnarounds, 15 % speed wobble at 3 Hz."""
    t = np.arange(int(seconds * FS)) / FS
    tau = rm.wobbled_time(t, depth=0.15, freq_hz=3.0, phase=seed)
    return rm.triangle_opd(tau, amplitude_cm=(end_cm - start_cm) / 2, period_s=2.0,
                           rounding=0.2, phase=0.1 + 0.05 * seed,
                           centre_cm=(end_cm + start_cm) / 2)


def _analyze(x, sig, seed):
    rng = np.random.default_rng(seed + 50)
    i, q = rm.quadrature_channels(x, rng)
    return analyze(rm.record(sig, FS, ref_i=i, ref_q=q)).to_dict()


@pytest.mark.parametrize("seed", (0, 1, 2))
def test_unresolved_comb_is_a_multimode_laser(seed):
    """Before: `narrow`, `modes` null. Now `multimode` with its modes: spacing within its
    expanded uncertainty (k = 2) of Δλ = 10⁷Δσ/σ₀², cavity length 1/(2Δσ) = 3.875 mm to 1 %,
    envelope FWHM (5 spacings, 0.2726 nm) to 10 %, 5 modes within it, revivals confirmed; and
    no source line outside the envelope (artefacts are not source lines)."""
    rng = np.random.default_rng(seed)
    x = scan(seed)
    sig = diode_comb(x) + 0.002 * rng.normal(size=x.size)
    d = _analyze(x, sig, seed)
    s = d["summary"]
    assert s["kind"] == "multimode"
    m = s["modes"]
    sigma0 = 1e7 / CENTRE_NM
    spacing_nm = 1e7 * (1 / PERIOD_CM) / sigma0**2
    assert abs(m["spacing_nm"] - spacing_nm) < 2 * m["u_spacing_nm"]
    assert m["spacing_ghz"] == pytest.approx(299_792_458.0 * 100 / PERIOD_CM / 1e9, rel=0.005)
    assert m["cavity_optical_length_mm"] == pytest.approx(PERIOD_CM / 2 * 10, rel=0.01)
    assert m["envelope_fwhm_nm"] == pytest.approx(5 * spacing_nm, rel=0.1)
    assert m["n_modes"] == 5 and m["revivals_confirmed"] is True
    assert abs(s["centre_wavelength_nm"] - CENTRE_NM) < 0.005
    for ln in d["lines"]:
        if ln["flag"] is None:
            assert abs(ln["wavelength_nm"] - CENTRE_NM) < 5 * spacing_nm, ln
    assert any("modes of this multimode laser are not resolved" in w for w in d["warnings"])


def test_one_broad_line_without_revivals_stays_narrow():
    """The same envelope as one Gaussian line (FWHM 0.2726 nm, closed form of rm.gaussian_line):
    no burst repeats, so it is not a comb."""
    rng = np.random.default_rng(7)
    x = scan(0)
    width_nm = 5 * 1e7 * (1 / PERIOD_CM) / (1e7 / CENTRE_NM) ** 2
    sig = rm.gaussian_line(x, CENTRE_NM, width_nm) + 0.002 * rng.normal(size=x.size)
    d = _analyze(x, sig, 0)
    assert d["summary"]["kind"] == "narrow" and d["summary"]["modes"] is None


def test_a_beating_pair_is_not_a_comb():
    """Two equal lines Δσ = 1/0.775 cm⁻¹ apart beat with the same period as the comb's
    revivals, but their bursts are as wide as the period's half (cos² beat), not a comb: fitted
    as one line they span fewer than 2.5 spacings, so the source is not called multimode."""
    rng = np.random.default_rng(8)
    x = scan(1)
    sig = diode_comb(x, n_modes=2, envelope_modes=1e6) + 0.002 * rng.normal(size=x.size)
    d = _analyze(x, sig, 1)
    assert d["summary"]["kind"] != "multimode"
