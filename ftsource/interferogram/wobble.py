"""Uneven mirror speed: how much it wobbles, and where its artefacts would fall in a spectrum.

A mirror whose speed varies periodically along the path (a motor's cogging, a loose belt, a
hand-driven screw) modulates whatever error the resampling leaves at that period of OPD: a
line at σ₀ then gets weak side lines at σ₀ ± k/P, P the wobble's period in OPD. The resampling
keeps them small (:data:`ftsource.interferogram.resample.SPLINE_ORDER`), but diode lasers have
real side modes at similar offsets, so a weak line there is reported as possibly an artefact
of the scan.

Kernel units: cm, s.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "SpeedWobble",
    "WOBBLE_NOTE_DEPTH",
    "ARTEFACT_LEVEL",
    "speed_wobble",
    "artefact_offsets",
]

#: A relative speed variation (half peak-to-peak over the mean, per sweep, median over sweeps)
#: above this is worth a note when weak lines sit at its offsets (an even scan with rounded
#: turnarounds measures about 0.04: the ends of the middle 80 % slow down).
WOBBLE_NOTE_DEPTH = 0.1
#: Lines weaker than this fraction of the strongest may be artefacts of the wobble (the
#: residual measured with 30 % wobble is below 2e-4, tests/test_interferogram_faults.py; a
#: factor of 5 for rigs worse than the tests' model).
ARTEFACT_LEVEL = 1e-3


@dataclass(frozen=True)
class SpeedWobble:
    """The mirror's speed variation along the path.

    ``depth``: half the peak-to-peak speed variation over the mean speed (median over
    sweeps). ``period_cm``: OPD period of the strongest variation (NaN when none stands out).
    """

    depth: float
    period_cm: float


def speed_wobble(opd_cm: np.ndarray, sweeps, sample_rate_hz: float) -> SpeedWobble:
    """Measure the speed wobble of the sweeps of an optical path.

    The speed of each sweep (its middle 80 %, away from the turnarounds) is put on a uniform
    OPD grid; its depth is (95th − 5th percentile)/2 over the median, and its period the peak
    of the periodogram of the speed along the path (common practice: a periodogram peak gives
    the dominant period).
    """
    x = np.asarray(opd_cm, float)
    depths, periods = [], []
    for sw in sweeps:
        xs = x[sw.start : sw.stop]
        good = np.isfinite(xs)
        if good.sum() < 256:
            continue
        xs = xs[good]
        m = xs.size
        xs = xs[int(0.1 * m) : int(0.9 * m)]
        v = np.abs(np.gradient(xs)) * sample_rate_hz
        med = float(np.median(v))
        if not med > 0:
            continue
        lo, hi = np.quantile(v, [0.05, 0.95])
        depths.append(float((hi - lo) / 2 / med))
        order = np.argsort(xs)
        xo, vo = xs[order], v[order]
        keep = np.concatenate([[True], np.diff(xo) > 0])
        xo, vo = xo[keep], vo[keep]
        if xo.size < 256:
            continue
        grid = np.linspace(xo[0], xo[-1], 4096)
        vg = np.interp(grid, xo, vo)
        vg = (vg - vg.mean()) * np.hanning(grid.size)
        p = np.abs(np.fft.rfft(vg, 4 * grid.size)) ** 2
        f = np.fft.rfftfreq(4 * grid.size, grid[1] - grid[0])
        p[f < 2.0 / (grid[-1] - grid[0])] = 0.0  # at least two periods in the sweep
        k = int(np.argmax(p))
        if p[k] > 0:
            periods.append(1.0 / f[k])
    if not depths:
        return SpeedWobble(0.0, float("nan"))
    period = float(np.median(periods)) if periods else float("nan")
    return SpeedWobble(float(np.median(depths)), period)


def artefact_offsets(wobble: SpeedWobble, orders: int = 2) -> np.ndarray:
    """Wavenumber offsets (cm⁻¹) where the wobble's artefacts fall beside a line: k/P."""
    if not np.isfinite(wobble.period_cm) or wobble.period_cm <= 0:
        return np.zeros(0)
    return np.arange(1, orders + 1) / wobble.period_cm
