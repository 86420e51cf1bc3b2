"""Tests of ftsource.lines.sweeps (outlier sweeps, forward against backward, aliases).

Oracles:
* closed forms written here: the weighted mean and its standard error;
* the simulator (``ftsource.simulate``), itself tested against closed forms in
  ``tests/test_simulate.py``: point sampling makes content above half the sample rate fold as
  on a real ADC.
All randomness has fixed seeds.
"""

from __future__ import annotations

from functools import cache

import numpy as np
import pytest

from ftsource import simulate as S
from ftsource.errors import OptionError
from ftsource.interferogram import opd, resample
from ftsource.lines import sweeps as W
from ftsource.spectrum import spectrum

REF_NM = 632.991


# --------------------------------------------------------------------------------------------
# compare_sweeps


def _centres(seed=7, n=12, u=0.01, shift=0.0):
    rng = np.random.default_rng(seed)
    d = np.array([1, -1] * (n // 2))
    v = 15798.0 + rng.normal(0, u, n) + np.where(d > 0, shift / 2, -shift / 2)
    return v, np.full(n, u), d


def test_compare_sweeps_clean_data_keeps_all():
    v, u, d = _centres()
    c = W.compare_sweeps(v, u, d, label="centre")
    assert c.keep.all() and c.reasons == ("",) * v.size and c.n_rejected == 0
    # closed form: equal weights → plain means, u/√n each unless the scatter is larger (Birge)
    assert c.forward_mean == pytest.approx(v[d > 0].mean(), rel=1e-14)
    assert c.backward_mean == pytest.approx(v[d < 0].mean(), rel=1e-14)
    assert c.u_forward >= 0.01 / np.sqrt(6) * (1 - 1e-12)
    assert c.difference == pytest.approx(c.forward_mean - c.backward_mean, rel=1e-12)
    assert c.u_difference == pytest.approx(np.hypot(c.u_forward, c.u_backward), rel=1e-12)
    assert abs(c.difference) < 3 * c.u_difference


def test_compare_sweeps_rejects_injected_outlier_with_reason():
    v, u, d = _centres()
    v[5] += 8 * 0.01
    c = W.compare_sweeps(v, u, d, label="centre")
    assert not c.keep[5] and c.keep.sum() == v.size - 1
    assert c.reasons[5].startswith("centre ") and "σ from the median of the other" in c.reasons[5]
    assert float(c.reasons[5].split()[1].rstrip("σ")) > 3
    kept = v[np.arange(v.size) != 5]
    dd = d[np.arange(v.size) != 5]
    assert c.backward_mean == pytest.approx(kept[dd < 0].mean(), rel=1e-14)


def test_compare_sweeps_without_uncertainties_and_real_difference():
    # a true forward/backward difference of 10 u with 6 sweeps each way: grouped by direction,
    # so nothing is rejected, and the difference is found (3σ, common practice)
    v, u, d = _centres(seed=11, shift=0.1)
    c = W.compare_sweeps(v, None, d)
    assert c.keep.all()
    assert abs(c.difference - 0.1) < 3 * c.u_difference
    # closed form: standard error of a mean of 6
    assert c.u_forward == pytest.approx(np.std(v[d > 0], ddof=1) / np.sqrt(6), rel=1e-12)


def test_compare_sweeps_checks_shapes():
    with pytest.raises(OptionError, match="shapes"):
        W.compare_sweeps([1.0, 2.0], [0.1], [1, -1])
    with pytest.raises(OptionError, match="directions"):
        W.compare_sweeps([1.0, 2.0], [0.1, 0.1], [1, 0])


# --------------------------------------------------------------------------------------------
# aliasing

ALIAS_FS = 3200.0
DX_ALIAS = REF_NM * 1e-7 / 4
N_FFT = 8192


@cache
def alias_spectra(rates=(1.0, 1.4)):
    """Two invented lines, 800 nm (real, below the folding frequency at both speeds) and
    400 nm (above it: its fringes at 2.06 and 2.88 kHz exceed f_s/2 = 1.6 kHz), recorded at
    two mirror speeds with a position encoder (no reference fringes to limit the speed)."""
    src = S.SourceModel(
        (S.SpectralLine(1e7 / 800.0, 1.0), S.SpectralLine(1e7 / 400.0, 1.0)), label="invented"
    )
    specs, speeds = [], []
    for rate in rates:
        sim = S.simulate(
            src,
            S.Scan(
                sample_rate_hz=ALIAS_FS,
                duration_s=3.0,
                opd_centre_cm=0.3,
                opd_amplitude_cm=0.02,
                sweep_rate_hz=rate,
                shape=0.999,
                speed_jitter=0.0,
            ),
            S.ReferenceChannel(kind="encoder"),
            S.Detector(),
            rng=2,
        )
        p = opd.opd_from_position(sim.record.columns["position"], ALIAS_FS)
        for g in resample.resample_sweeps(sim.record.columns["signal"], p, DX_ALIAS):
            sp = spectrum.sweep_spectrum(g, N_FFT, phase_correction="magnitude")
            specs.append(sp)
            speeds.append(float(np.median(opd.sweep_speed_at(p, g.sweep, ALIAS_FS, g.x_cm))))
    sigma = np.arange(N_FFT // 2 + 1) / (N_FFT * DX_ALIAS)
    return tuple(specs), tuple(speeds), sigma


def _nearest(check, sigma):
    return min(
        check.lines, key=lambda ln: min(abs(c - sigma) for c in ln.centres_per_cm if np.isfinite(c))
    )


def test_aliasing_check_tells_real_from_alias():
    specs, speeds, sigma = alias_spectra()
    chk = W.aliasing_check(specs, speeds, ALIAS_FS, sigma_per_cm=sigma)
    real = _nearest(chk, 1e7 / 800)
    assert real.verdict == "real", real.reason
    # the seed centre is within a grid step of the truth (σ grid step 7.7 cm⁻¹)
    assert real.sigma_per_cm == pytest.approx(1e7 / 800, abs=1.0)
    # closed form: at speed v the 400 nm line appears at f_s/v − σ (first fold)
    v_slow = speeds[3]
    alias = _nearest(chk, ALIAS_FS / v_slow - 1e7 / 400)
    assert alias.verdict == "alias", alias.reason
    assert alias.fold == 1
    # the true wavenumber back from the fold: good to the effective-speed error (< 0.5 %)
    assert alias.true_sigma_per_cm == pytest.approx(1e7 / 400, rel=5e-3)
    assert not any(
        ln.verdict == "alias" and abs(ln.sigma_per_cm - 1e7 / 800) < 10 for ln in chk.lines
    )
    assert "m·f_s·|1/v_a − 1/v_b|" in chk.criterion


def test_aliasing_check_cannot_tell_at_one_speed():
    specs, speeds, sigma = alias_spectra()
    slow = [(sigma, s.values) for s, v in zip(specs, speeds, strict=True) if v < 0.1]
    v_slow = [v for v in speeds if v < 0.1]
    chk = W.aliasing_check(slow, v_slow, ALIAS_FS)
    assert chk.lines and all(ln.verdict == "cannot be excluded" for ln in chk.lines)
    assert all("too alike" in ln.reason for ln in chk.lines)
    assert chk.relative_speed_spread < 0.01


def test_aliasing_check_options():
    with pytest.raises(OptionError, match="speeds_cm_s"):
        W.aliasing_check([(np.arange(4.0), np.ones(4))], [0.1, 0.2], 1000.0)
    with pytest.raises(OptionError, match="wavenumber axis"):
        W.aliasing_check([np.ones(4)], [0.1], 1000.0)
