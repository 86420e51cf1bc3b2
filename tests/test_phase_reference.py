"""Which burst served as the phase reference (issue 11, item 2), end to end through
``ftsource.analysis.analyze``: ``processing.phase_reference`` and ``instrument.max_opd_mm``.

Records come from the forward model in ``tests/rig_model.py`` (quadrature channels with
harmonic distortion and quantisation). Truths:

* a comb of N modes spaced Δσ has bursts at multiples of 1/Δσ (Dirichlet kernel); Lorentzian
  modes of FWHM w multiply it by exp(−π w |x|) (closed form, ``rm.comb``), so revivals are
  weaker than ZPD — the visibility is largest at ZPD (Wiener–Khinchin: |γ(x)| ≤ γ(0));
* the trajectory is given in closed form (breakpoints joined by straight lines, corners
  rounded), so the path from ZPD (x = 0) to each sweep's far end is known.

Source: J. W. Goodman, *Statistical Optics*, Wiley (1985), §5.2 (|γ(x)| ≤ γ(0) for the complex
degree of coherence); A. E. Siegman, *Lasers* (1986), §11.3 (mode spacing).
"""

from __future__ import annotations

import numpy as np
import pytest
import rig_model as rm

from ftsource.analysis import analyze
from ftsource.interferogram.zpd import PHASE_REFERENCES, phase_reference

FS = 100e3
SPACING = 1 / 0.775  # cm⁻¹: revivals every 7.75 mm of path
# Lorentzian modes whose first revival falls to 0.3 of ZPD: exp(−π w 0.775) = 0.3
WIDE = -np.log(0.3) / (np.pi * 0.775)


def breakpoints_opd(times_s, opd_cm, fs=FS, round_s=0.05):
    """OPD through the breakpoints, straight between them, corners rounded by a running mean
    of ``round_s`` (the speed ramps linearly through zero)."""
    from scipy.ndimage import uniform_filter1d

    t = np.arange(int(times_s[-1] * fs)) / fs
    x = np.interp(t, times_s, opd_cm)
    return uniform_filter1d(x, int(round_s * fs), mode="nearest")


def _analyze(x, sig, seed):
    rng = np.random.default_rng(seed + 100)
    i, q = rm.quadrature_channels(x, rng)
    return analyze(rm.record(sig, FS, ref_i=i, ref_q=q)).to_dict()


def test_phase_reference_words():
    """The rule of the summary word (docs/contract.md)."""
    assert PHASE_REFERENCES == ("zpd", "zpd-or-revival", "none")
    assert phase_reference([False, False], [False, False]) == "none"
    assert phase_reference([True, True], [False, False]) == "zpd"
    assert phase_reference([True, True], [False, True]) == "zpd-or-revival"


@pytest.mark.parametrize("seed", (0, 1))
def test_zpd_as_phase_reference(seed):
    """A comb whose revival falls to 0.3 of ZPD, scanned from −2 mm to 14 mm: ZPD is the one
    burst; `max_opd_mm` is the path from it to the far end, below 14 mm (the turnarounds'
    rounding is not used) and above 12.5 mm. The record starts with part of a sweep that
    holds the revival but not ZPD: it is left out (before, its revival served as its "ZPD"
    and its path counted in max_opd_mm)."""
    rng = np.random.default_rng(seed)
    t = np.arange(int(4.0 * FS)) / FS
    x = rm.triangle_opd(t, amplitude_cm=0.8, period_s=4.0, rounding=0.2, phase=0.1,
                        centre_cm=0.6)
    sig = rm.comb(x, 650.0, SPACING, 7, WIDE) + 0.002 * rng.normal(size=t.size)
    d = _analyze(x, sig, seed)
    assert d["processing"]["phase_reference"] == "zpd"
    assert 12.5 < d["instrument"]["max_opd_mm"] < 14.0
    assert any("coherence revival" in r["reason"] for r in d["processing"]["rejected_sweeps"])


@pytest.mark.parametrize("seed", (0, 1))
def test_revival_possible_as_phase_reference(seed):
    """The issue's record: equal narrow modes, so ZPD and the revival 7.75 mm away are bursts
    of the same height; the word says the reference may be a revival, and a warning too."""
    rng = np.random.default_rng(seed)
    t = np.arange(int(4.0 * FS)) / FS
    x = rm.triangle_opd(t, amplitude_cm=0.8, period_s=4.0, rounding=0.2, phase=0.1,
                        centre_cm=0.7)
    sig = rm.comb(x, 650.0, SPACING, 7) + 0.002 * rng.normal(size=t.size)
    d = _analyze(x, sig, seed)
    assert d["processing"]["phase_reference"] == "zpd-or-revival"
    assert any("may be a revival rather than zero path difference" in w for w in d["warnings"])


@pytest.mark.parametrize("seed", (0, 1))
def test_sweeps_that_hold_only_a_revival_are_left_out(seed):
    """The mirror first travels −1 → 12 mm of path (ZPD and the first revival at 7.75 mm, which
    has fallen to 0.3), then goes back and forth between 5 and 12 mm: those sweeps see only
    the revival, their strongest burst. Taken for ZPD it would make max_opd about 4 mm for
    them; they are left out with their reason, the reference is ZPD and max_opd_mm is the
    first sweep's path from ZPD to its far end (under 12 mm, above 10.5 mm)."""
    rng = np.random.default_rng(seed)
    x = breakpoints_opd([0.0, 1.3, 2.0, 2.7, 3.4], [-0.1, 1.2, 0.5, 1.2, 0.5])
    sig = rm.comb(x, 650.0, SPACING, 7, WIDE) + 0.002 * rng.normal(size=x.size)
    d = _analyze(x, sig, seed)
    reasons = [r["reason"] for r in d["processing"]["rejected_sweeps"]]
    assert sum("coherence revival" in r for r in reasons) >= 2
    assert d["processing"]["phase_reference"] == "zpd"
    assert 10.5 < d["instrument"]["max_opd_mm"] < 12.0
    assert any("hold a coherence revival but not zero path difference" in w
               for w in d["warnings"])


def test_no_burst_no_phase_reference():
    """A narrow line keeps its contrast: no burst, magnitude spectra, the word `none`, and
    max_opd_mm is half a sweep's span (0.8 cm of path per sweep here, so under 4 mm)."""
    rng = np.random.default_rng(3)
    t = np.arange(int(2.0 * FS)) / FS
    x = rm.triangle_opd(t, amplitude_cm=0.4, period_s=2.0, rounding=0.2, phase=0.1,
                        centre_cm=0.7)
    sig = rm.gaussian_line(x, 650.0) + 0.002 * rng.normal(size=t.size)
    d = _analyze(x, sig, 3)
    assert d["processing"]["phase_reference"] == "none"
    assert d["processing"]["phase_correction"] == "magnitude"
    assert 3.0 < d["instrument"]["max_opd_mm"] < 4.0
