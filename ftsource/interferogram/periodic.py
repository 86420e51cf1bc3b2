"""The periodic phase error of a quadrature reference, estimated and removed.

An ellipse fit (Heydemann 1981) removes offsets, unequal gains and the quadrature angle, but
not harmonic distortion of the two channels (a detector or amplifier that is not linear, a
reference beam with a second reflection). What remains is a phase error that repeats every
reference fringe, ``e(φ) = Σ_k a_k cos kφ + b_k sin kφ``. It modulates the OPD scale at
``k`` cycles per reference wavelength, and a source line at σ gets side lines at
``σ ± k·σ_ref`` of relative amplitude about ``β_k·σ/(2σ_ref)`` (β_k the amplitude of the k-th
term, in rad; first-order Bessel sidebands of a phase modulation).

The error is estimated from the fact that the mirror moves smoothly: the true phase has no
structure tied to its own value, so the second difference of the measured phase over a lag
of a fraction of a fringe is regressed on the second differences of ``cos kφ``, ``sin kφ``
(``φ`` the measured wrapped phase). The motion's own second difference (its acceleration)
changes slowly while ``φ`` runs over many fringes, so it does not correlate with the
harmonics. The estimate is refined once with the corrected phase (the error is evaluated at
the measured rather than the true phase: a second-order effect, removed by the second pass).
Fourier-series corrections of the residual nonlinearity of the same kind are the published
higher-order extensions of Heydemann's correction (e.g. Wu et al. 1996, Eom et al. 2001).

Kernel units: phase in rad.

References
----------
.. [1] P. L. M. Heydemann, "Determination and correction of quadrature fringe measurement
   errors in interferometers", Appl. Opt. 20, 3382–3384 (1981).
.. [2] C.-M. Wu, C.-S. Su and G.-S. Peng, "Correction of nonlinearity in one-frequency optical
   interferometry", Meas. Sci. Technol. 7, 520–524 (1996) — from memory.
.. [3] T. B. Eom, J. Y. Kim and K. Jeong, "The dynamic compensation of nonlinearity in a
   homodyne laser interferometer", Meas. Sci. Technol. 12, 1734–1738 (2001) — from memory.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "PERIODIC_ORDERS",
    "PERIODIC_FIT_SAMPLES",
    "PeriodicError",
    "periodic_phase_error",
    "remove_periodic_error",
]

#: Harmonics of the fringe phase estimated: distortion of order n of the channels gives
#: errors at n − 1 and n + 1 cycles per fringe, so 2nd and 3rd harmonics need k = 1 … 4.
PERIODIC_ORDERS = 4
#: The regression uses at most about this many samples, strided over the stretches.
PERIODIC_FIT_SAMPLES = 1 << 16


@dataclass(frozen=True)
class PeriodicError:
    """The phase error ``e(φ) = Σ_k cos_k[k−1]·cos kφ + sin_k[k−1]·sin kφ`` (rad).

    ``amplitude_rad`` is the largest |e(φ)| over one fringe (0 when nothing was estimated).
    """

    cos_k: tuple[float, ...]
    sin_k: tuple[float, ...]
    amplitude_rad: float

    def __call__(self, phi: np.ndarray) -> np.ndarray:
        """The error at the wrapped phases ``phi`` (rad)."""
        phi = np.asarray(phi, float)
        if not self.cos_k:
            return np.zeros_like(phi)
        # Σ_k Re((c_k − i s_k)·z^k) with z = e^{iφ}, by Horner's rule: two trigonometric
        # functions per sample instead of two per harmonic
        z = np.cos(phi) + 1j * np.sin(phi)
        coef = [complex(c, -s) for c, s in zip(self.cos_k, self.sin_k, strict=True)]
        acc = np.full(phi.shape, coef[-1], dtype=complex)
        for a in coef[-2::-1]:
            acc *= z
            acc += a
        acc *= z
        return acc.real.copy()


_NONE = PeriodicError((), (), 0.0)


def _fit(phase, idx, lag, orders):
    p0, p1, p2 = phase[idx - lag], phase[idx], phase[idx + lag]
    d2 = p2 - 2 * p1 + p0
    cols = [np.ones_like(d2)]
    for k in range(1, orders + 1):
        for f in (np.cos, np.sin):
            cols.append(f(k * p2) - 2 * f(k * p1) + f(k * p0))
    m = np.column_stack(cols)
    # the fringe-rate changes of turnarounds and of noise bursts do not belong to e(φ)
    res = d2 - np.median(d2)
    keep = np.abs(res) < 10 * np.median(np.abs(res)) + 1e-12
    coef, *_ = np.linalg.lstsq(m[keep], d2[keep], rcond=None)
    return coef[1::2], coef[2::2]


def periodic_phase_error(
    phase: np.ndarray,
    runs,
    *,
    samples_per_fringe: float,
    orders: int = PERIODIC_ORDERS,
    limit: int = PERIODIC_FIT_SAMPLES,
) -> PeriodicError:
    """Estimate the periodic phase error of an unwrapped reference phase.

    Parameters
    ----------
    phase : ndarray
        Unwrapped reference phase (rad) per sample; NaN where unknown. Not modified.
    runs : sequence of (int, int)
        Stretches ``start:stop`` of continuous phase to use.
    samples_per_fringe : float
        Median samples per reference fringe: sets the lag of the second difference (a sixth
        of a fringe, so that no harmonic up to the 5th has a whole period in it).
    orders : int, keyword-only
        Highest harmonic k estimated.
    limit : int, keyword-only
        At most about this many samples are used, strided evenly.

    Returns
    -------
    PeriodicError
        The fitted error; zero when the stretches are too short to tell.

    References
    ----------
    .. [1] P. L. M. Heydemann, Appl. Opt. 20, 3382–3384 (1981).
    .. [2] T. B. Eom, J. Y. Kim and K. Jeong, Meas. Sci. Technol. 12, 1734–1738 (2001) —
       from memory.
    """
    phase = np.asarray(phase, float)
    lag = max(1, int(round(samples_per_fringe / 6)))
    total = sum(max(b - a - 2 * lag, 0) for a, b in runs)
    if total < 64 * orders or not np.isfinite(samples_per_fringe):
        return _NONE
    stride = max(1, total // limit)
    idx = np.concatenate([np.arange(a + lag, b - lag, stride) for a, b in runs
                          if b - a > 2 * lag])
    idx = idx[np.isfinite(phase[idx - lag]) & np.isfinite(phase[idx])
              & np.isfinite(phase[idx + lag])]
    if idx.size < 64 * orders:
        return _NONE
    work = phase[np.concatenate([idx - lag, idx, idx + lag])].reshape(3, -1)
    local = np.arange(idx.size)
    flat = work.reshape(-1)
    cos_k = np.zeros(orders)
    sin_k = np.zeros(orders)
    for _ in range(2):  # the second pass evaluates e at the corrected phase
        est = PeriodicError(tuple(cos_k), tuple(sin_k), 0.0)
        corrected = flat - est(flat)
        c, s = _fit(corrected, local + idx.size, idx.size, orders)
        cos_k += c
        sin_k += s
    grid = np.linspace(0, 2 * np.pi, 256, endpoint=False)
    err = PeriodicError(tuple(map(float, cos_k)), tuple(map(float, sin_k)), 0.0)
    amp = float(np.max(np.abs(err(grid))))
    return PeriodicError(err.cos_k, err.sin_k, amp)


def remove_periodic_error(phase: np.ndarray, error: PeriodicError) -> np.ndarray:
    """The unwrapped phase with the periodic error removed (a new array).

    ``φ_true ≈ φ − e(φ)``; the error is evaluated at the measured phase (its change over the
    error itself is second order, below 1e-3 of the error for errors under 0.05 rad).
    """
    phase = np.asarray(phase, float)
    if error.amplitude_rad == 0:
        return phase.copy()
    return phase - error(phase)
