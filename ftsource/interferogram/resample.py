"""The source signal on a uniform grid of optical path difference.

Each sweep is resampled separately: the sample instant of every grid point is found by
inverting the (monotonic) OPD of the sweep, and the source signal is evaluated there by quintic
B-spline interpolation in time (Unser 1999), which follows a band-limited signal far better than
local cubic (Catmull–Rom) interpolation, and whose error changes little with the samples per
fringe (see :data:`SPLINE_ORDER`). The grid is a fixed fraction of the reference
wavelength and aligned to its multiples, so sweeps of the same stretch of reference share grid
points. It is finer than the reference fringe spacing, so sources at shorter wavelengths than
the reference are measured correctly.

Kernel units: OPD in cm.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.errors import AnalysisError
from ftsource.interferogram.opd import OpticalPath, Sweep

__all__ = [
    "Interferogram",
    "spline_coefficients",
    "spline_at",
    "SamplingLimits",
    "sampling_limits",
    "resample_sweeps",
    "running_mean",
    "BANDWIDTH_FRACTION_ADC",
    "BANDWIDTH_FRACTION_SOUND_CARD",
]

#: Usable fraction of the sample rate for an ADC without an anti-alias filter: f_s/2 (Nyquist).
BANDWIDTH_FRACTION_ADC = 0.5
#: Sound cards' anti-alias filters cut near 0.45 f_s (common practice for 44.1/48 kHz codecs).
BANDWIDTH_FRACTION_SOUND_CARD = 0.45
#: Shortest wavelength the resampled grid is built for, unless the time sampling limits it more.
SHORTEST_GRID_WAVELENGTH_NM = 250.0
#: Order of the B-spline that interpolates the source signal in time. Its response to a
#: sinusoid depends on the samples per fringe, so where the mirror speed changes the
#: interpolated fringes are amplitude-modulated at the speed's rhythm, which puts false side
#: lines beside a line. Quintic splines cut that modulation about five-fold from cubic ones at
#: 5 samples per fringe (30 % speed wobble at 3 Hz, tests/test_interferogram_faults.py): the
#: interpolation error of a B-spline of order n falls as (f/f_s)^(n+1) (Unser 1999).
SPLINE_ORDER = 5


@dataclass(frozen=True)
class Interferogram:
    """One sweep on a uniform OPD grid ``x0_cm + k·dx_cm`` (increasing), DC removed."""

    x0_cm: float
    dx_cm: float
    y: np.ndarray
    sweep: Sweep
    dc_level: float

    @property
    def x_cm(self) -> np.ndarray:
        return self.x0_cm + self.dx_cm * np.arange(self.y.size)

    @property
    def span_cm(self) -> float:
        return self.dx_cm * (self.y.size - 1)


@dataclass(frozen=True)
class SamplingLimits:
    """What the time sampling supports.

    ``min_wavelength_nm`` is the shortest wavelength whose fringes stay below the usable
    bandwidth (``bandwidth_fraction`` × sample rate) at the fastest OPD speed of the used sweeps:
    λ_min = v_max / (β f_s). ``dx_cm`` is the OPD grid step: the reference wavelength divided by
    a power of two, fine enough for λ_min (and for :data:`SHORTEST_GRID_WAVELENGTH_NM`).
    """

    min_wavelength_nm: float
    bandwidth_fraction: float
    max_opd_speed_cm_s: float
    dx_cm: float
    samples_per_reference_fringe: float

    @property
    def grid_nyquist_per_cm(self) -> float:
        return 0.5 / self.dx_cm


def sampling_limits(
    path: OpticalPath,
    sample_rate_hz: float,
    reference_wavelength_nm: float,
    *,
    bandwidth_fraction: float = BANDWIDTH_FRACTION_ADC,
) -> SamplingLimits:
    """The shortest alias-free wavelength and the OPD grid step for a record."""
    vmax = path.max_speed_cm_s
    lam_min_cm = vmax / (bandwidth_fraction * sample_rate_hz)
    lam_ref_cm = reference_wavelength_nm * 1e-7
    target = max(lam_min_cm, SHORTEST_GRID_WAVELENGTH_NM * 1e-7)
    # grid step λ_ref/2^m with Nyquist wavelength 2·dx ≤ target
    m = max(1, int(np.ceil(np.log2(2 * lam_ref_cm / target))))
    dx = lam_ref_cm / 2**m
    spf = lam_ref_cm * sample_rate_hz / vmax if vmax > 0 else np.inf
    return SamplingLimits(
        min_wavelength_nm=float(lam_min_cm * 1e7),
        bandwidth_fraction=bandwidth_fraction,
        max_opd_speed_cm_s=float(vmax),
        dx_cm=float(dx),
        samples_per_reference_fringe=float(spf),
    )


def running_mean(y: np.ndarray, sigma_samples: float) -> np.ndarray:
    """Three passes of a box filter of width 2σ: a near-Gaussian running mean of standard
    deviation σ samples in O(N), whatever σ (central limit theorem; common practice).

    The width is odd, ``w = 2⌊σ⌋ + 1`` (standard deviation √((w² − 1)/4), within half a sample of
    σ), so that every pass is centred: an even box is centred half a sample off, and three
    passes would shift the running mean by 1.5 samples."""
    from scipy.ndimage import uniform_filter1d

    w = 2 * int(max(sigma_samples, 0.0)) + 1
    out = np.asarray(y, float)
    for _ in range(3):
        out = uniform_filter1d(out, w, mode="reflect")
    return out


def spline_coefficients(signal: np.ndarray) -> np.ndarray:
    from scipy.ndimage import spline_filter1d

    return spline_filter1d(np.asarray(signal, float), order=SPLINE_ORDER, mode="mirror")


def spline_at(coeffs: np.ndarray, positions: np.ndarray) -> np.ndarray:
    """The B-spline of :func:`spline_coefficients` at fractional sample ``positions`` (one
    place for the order, so coefficients and evaluation always match)."""
    from scipy.ndimage import map_coordinates

    return map_coordinates(coeffs, [positions], order=SPLINE_ORDER, mode="mirror",
                           prefilter=False)


def resample_sweeps(
    signal: np.ndarray,
    path: OpticalPath,
    dx_cm: float,
    *,
    baseline_cm: float = 2e-3,
    sweeps: tuple[Sweep, ...] | None = None,
) -> tuple[Interferogram, ...]:
    """Resample the source signal of every sweep onto a uniform OPD grid.

    Parameters
    ----------
    signal : ndarray
        Source detector samples (the whole record).
    path : OpticalPath
        OPD per sample and the sweeps.
    dx_cm : float
        Grid step, cm.
    baseline_cm : float
        Width (standard deviation, in OPD) of the running mean subtracted as the DC level and
        slow drift (:func:`running_mean`). Its transfer at 5000 cm⁻¹ is below 3×10⁻⁵ for the
        default, so it leaves a source at wavelengths below 2 µm untouched.

    Returns
    -------
    tuple of Interferogram
        One per sweep, in record order; sweeps too short to resample are left out.

    References
    ----------
    .. [1] M. Unser, "Splines: a perfect fit for signal and image processing", IEEE Signal
       Processing Magazine 16(6), 22–38 (1999).
    """

    coeffs = spline_coefficients(signal)
    out = []
    for sw in sweeps if sweeps is not None else path.sweeps:
        x = path.opd_cm[sw.start : sw.stop]
        idx = np.arange(sw.start, sw.stop, dtype=float)
        good = np.isfinite(x)
        x, idx = x[good], idx[good]
        if sw.direction < 0:
            x, idx = x[::-1], idx[::-1]
        # keep strictly increasing samples only (noise at the slow ends)
        keep = np.concatenate([[True], np.diff(x) > 0])
        keep &= x >= np.maximum.accumulate(x)
        x, idx = x[keep], idx[keep]
        if x.size < 16:
            continue
        k0 = int(np.ceil(x[0] / dx_cm))
        k1 = int(np.floor(x[-1] / dx_cm))
        if k1 - k0 < 64:
            continue
        grid = dx_cm * np.arange(k0, k1 + 1)
        frac = np.interp(grid, x, idx)
        y = spline_at(coeffs, frac)
        base = running_mean(y, baseline_cm / dx_cm)
        out.append(Interferogram(k0 * dx_cm, dx_cm, y - base, sw, float(np.mean(base))))
    if not out:
        raise AnalysisError("no sweep is long enough to resample (need at least 64 grid points)")
    return tuple(out)
