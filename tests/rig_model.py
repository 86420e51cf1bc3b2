"""An independent forward model of a scanned-mirror Michelson rig, for the hard-case tests.

Written here, apart from ``ftsource.simulate``, with the faults real rigs have: triangle scans
with abrupt or rounded turnarounds, mirror-speed wobble, quadrature channels with harmonic
distortion, unequal gains, a phase error and ADC quantisation, a single reference channel with
a drifting level, and sources given by closed-form interferograms (a monochromatic line, a
Gaussian line, a comb of modes). The truth of every record is the closed form below:

* a line of vacuum wavenumber σ0 with a Gaussian profile of FWHM w (cm⁻¹) gives
  ``I(x) = exp(-(π w x)² / (4 ln 2)) cos(2π σ0 x)`` (Fourier pair of a Gaussian; e.g.
  Bracewell, *The Fourier Transform and its Applications*, 3rd ed., table of pairs);
* a comb of N modes spaced Δσ of equal strength has the envelope ``|sin(πNΔσx)/sin(πΔσx)|``,
  whose bursts repeat every ``1/Δσ`` of OPD (the revivals; Dirichlet kernel).

Nothing here calls ftsource.
"""

from __future__ import annotations

import numpy as np

from ftsource.io.records import Record

HENE_NM = 632.991  # vacuum wavelength of a He-Ne reference (common practice, from memory)


def triangle_opd(t, *, amplitude_cm, period_s, centre_cm=0.0, rounding=0.0, phase=0.0):
    """OPD of a triangle scan: ``centre + amplitude·T(t)``, T in [-1, 1].

    ``rounding`` = 0 gives abrupt reversals (speed flips sign between two samples); a value
    r in (0, 1) replaces the corners by parabolas over the fraction r of each half period
    (speed ramps linearly through zero).
    """
    u = (np.asarray(t, float) / period_s + phase) % 1.0  # 0..1 over one back-and-forth
    tri = np.where(u < 0.5, 4 * u - 1, 3 - 4 * u)  # -1 -> 1 -> -1
    if rounding > 0:
        # blend the corners: within r/4 of a reversal, follow a parabola tangent to the lines
        h = rounding / 4
        for c, s in ((0.5, 1.0), (0.0, -1.0), (1.0, -1.0)):
            d = u - c
            near = np.abs(d) < h
            # the parabola s·(1 - 2(h² + d²)/h) meets the lines 4|d| slope at |d| = h
            tri = np.where(near, s * (1 - 2 * (h * h + d * d) / h), tri)
    return centre_cm + amplitude_cm * tri


def wobbled_time(t, *, depth, freq_hz, phase=0.0):
    """A warped time τ(t) whose rate is ``1 + depth·sin(2π f t + phase)``: driving a scan with
    τ instead of t makes the mirror speed wobble by ±depth at f."""
    t = np.asarray(t, float)
    w = 2 * np.pi * freq_hz
    return t - depth / w * (np.cos(w * t + phase) - np.cos(phase))


def gaussian_line(x_cm, wavelength_nm, fwhm_nm=0.0):
    """Interferogram of a Gaussian line (closed form above); fwhm 0 is monochromatic."""
    s0 = 1e7 / wavelength_nm
    w = fwhm_nm * 1e7 / wavelength_nm**2
    env = np.exp(-((np.pi * w * x_cm) ** 2) / (4 * np.log(2))) if w > 0 else 1.0
    return env * np.cos(2 * np.pi * s0 * x_cm)


def comb(x_cm, centre_nm, spacing_per_cm, n_modes, mode_fwhm_per_cm=0.0):
    """Interferogram of ``n_modes`` equal modes spaced ``spacing_per_cm`` around ``centre_nm``
    (Lorentzian modes of the given FWHM decay as exp(-π w |x|))."""
    s0 = 1e7 / centre_nm
    k = np.arange(n_modes) - (n_modes - 1) / 2
    y = sum(np.cos(2 * np.pi * (s0 + kk * spacing_per_cm) * x_cm) for kk in k)
    return y / n_modes * np.exp(-np.pi * mode_fwhm_per_cm * np.abs(x_cm))


def quantise(y, bits, full_scale=2.0):
    """ADC quantisation of ``y`` to ``bits`` over ``full_scale`` (peak to peak)."""
    q = full_scale / 2**bits
    return np.round(np.asarray(y, float) / q) * q


def quadrature_channels(opd_cm, rng, *, ref_nm=HENE_NM, harmonic=0.03, bits=10, noise=0.003):
    """An imperfect quadrature pair: offsets, gain ratio 0.85, 7° phase error, 3 % second
    harmonic (a distorting detector), quantisation and noise."""
    ph = 2 * np.pi * opd_cm / (ref_nm * 1e-7)
    i = 0.04 + np.cos(ph) + harmonic * np.cos(2 * ph + 0.4)
    q = -0.02 + 0.85 * np.sin(ph + np.deg2rad(7)) + harmonic * np.sin(2 * ph + 1.1)
    i = quantise(i + rng.normal(0, noise, ph.size), bits, 3.0)
    q = quantise(q + rng.normal(0, noise, ph.size), bits, 3.0)
    return i, q


def single_channel(opd_cm, rng, *, ref_nm=HENE_NM, harmonic=0.03, bits=10, noise=0.003):
    """One reference detector: drifting level, 3 % harmonic distortion, quantisation."""
    n = np.asarray(opd_cm).size
    ph = 2 * np.pi * opd_cm / (ref_nm * 1e-7)
    drift = 0.05 * np.sin(np.linspace(0, 3, n))
    r = 1.0 + drift + np.cos(ph) + harmonic * np.cos(2 * ph + 0.3)
    return quantise(r + rng.normal(0, noise, n), bits, 4.0)


def record(signal, fs, *, ref=None, ref_i=None, ref_q=None, ref_nm=HENE_NM):
    """A Record of the given columns (sample rate and reference wavelength as metadata)."""
    cols = {"signal": np.asarray(signal, float)}
    if ref is not None:
        cols["ref"] = np.asarray(ref, float)
    if ref_i is not None:
        cols["ref_i"] = np.asarray(ref_i, float)
        cols["ref_q"] = np.asarray(ref_q, float)
    meta = {"sample_rate": f"{fs:g} Hz", "reference_wavelength": f"{ref_nm:.6f} nm",
            "description": "invented rig (tests/rig_model.py)"}
    return Record(columns=cols, sample_rate_hz=fs, metadata=meta, path="<rig model>",
                  source_format="memory")
