"""Turnarounds a single reference channel cannot show by a slowing fringe rate.

A single reference channel ``c = cos θ`` gives the fringe phase θ up to its sign: its
analytic-signal phase ψ only grows, whichever way the mirror moves. Where the mirror reverses
smoothly the fringe rate falls to zero and the reversal is plain
(:mod:`ftsource.interferogram.opd`). An *abrupt* reversal (a triangle scan with sharp
corners, a mirror bouncing off a stop) keeps the fringe rate: the speed jumps from +v to −v
between two samples. What it leaves is a step in ψ: before the reversal ψ = θ, after it
ψ = −θ + 2πk, so ψ jumps by −2θ_r (wrapped into (−π, π]), θ_r being the fringe phase at the
reversal. This module finds such steps by comparing quadratic fits of ψ over a few fringes on
either side of every sample.

A reversal at a fringe extremum (θ_r a multiple of π) leaves no step: there the channel is
truly blind, and only another cue can tell (the sweeps' spans, see :func:`suspect_spans`; a
source burst seen twice, :func:`ftsource.interferogram.zpd.find_bursts`).

Kernel units: samples and radians.
"""

from __future__ import annotations

import numpy as np

__all__ = [
    "STEP_THRESHOLD_RAD",
    "SPAN_RATIO",
    "phase_steps",
    "suspect_spans",
    "drop_suspect_sweeps",
    "abrupt_steps_note",
]

#: A phase step (rad) above this, between quadratic fits of ψ over four fringes on either side,
#: marks an abrupt reversal (or a fringe-count slip). Smooth motion, noise and a few % of
#: harmonic distortion keep it below 0.1 rad (measured on the tests' rig model); the threshold
#: misses a reversal within 0.15 rad of a fringe extremum (about 10 % of random reversals).
STEP_THRESHOLD_RAD = 0.3
#: A sweep whose OPD span exceeds this multiple of the median span of the other sweeps may hold
#: a turnaround the reference could not show (a triangle scan repeats one span).
SPAN_RATIO = 1.6


def _fit_weights(window: int, at: float, degree: int) -> np.ndarray:
    """Weights w with Σ w_j y_j = the least-squares polynomial of ``degree`` through
    y_0..y_{window-1}, evaluated at sample coordinate ``at``."""
    u = (np.arange(window) - (window - 1) / 2) / window  # scaled for conditioning
    v = np.vander(u, degree + 1, increasing=True)
    target = ((at - (window - 1) / 2) / window) ** np.arange(degree + 1)
    return target @ np.linalg.pinv(v)


def _step_kernel(window: int, gap: int, degree: int = 2) -> np.ndarray:
    """Correlation kernel giving (right fit − left fit), both evaluated at the centre sample;
    left fit over samples [−gap−window, −gap), right over [gap, gap+window). Quadratic fits
    follow a mirror that speeds up or slows down smoothly, so only a step remains."""
    k = np.zeros(2 * (gap + window))
    k[:window] = -_fit_weights(window, window + gap, degree)
    k[window + 2 * gap :] = _fit_weights(window, -gap, degree)
    return k


def phase_steps(
    psi: np.ndarray,
    period_samples: float,
    *,
    threshold_rad: float = STEP_THRESHOLD_RAD,
    fringes: float = 4.0,
) -> np.ndarray:
    """Sample indices where the unwrapped phase ``psi`` steps by more than ``threshold_rad``.

    Parameters
    ----------
    psi : ndarray
        Unwrapped analytic-signal phase of a reference channel, rad.
    period_samples : float
        Fringe period, samples.
    threshold_rad : float
        Smallest step reported.
    fringes : float
        Length of each quadratic fit, in fringe periods. The phase is first smoothed over a
        fringe period; the fits leave three periods on either side of the sample (where the
        Hilbert transform and the smoothing smear a step) out.

    Returns
    -------
    ndarray of int
        One index per step (the middle of the stretch where the step exceeds the
        threshold), increasing.

    References
    ----------
    .. [1] D. Gabor, "Theory of communication", J. IEE 93, 429–457 (1946) (analytic signal).
    .. [2] A. Savitzky and M. J. E. Golay, "Smoothing and differentiation of data by simplified
       least squares procedures", Anal. Chem. 36, 1627–1639 (1964) (a polynomial least-squares
       fit as a fixed convolution); a step is the difference of two such one-sided fits
       (common practice).
    """
    from scipy.ndimage import gaussian_filter1d
    from scipy.signal import oaconvolve

    p = np.asarray(psi, float)
    n = p.size
    gap = max(int(round(3 * period_samples)), 2)
    window = max(int(round(fringes * period_samples)), 4)
    half = gap + window
    if n < 2 * half + 1:
        return np.zeros(0, int)
    # remove the mean slope first so that the convolution works on small numbers, then the
    # phase's periodic error at the fringe frequency and its harmonics (imperfect level and
    # amplitude tracking): a Gaussian of one fringe period passes exp(-2π²) ≈ 3e-9 of it
    p = p - (p[0] + (p[-1] - p[0]) * np.arange(n) / (n - 1))
    p = gaussian_filter1d(p, period_samples, mode="nearest")
    k = _step_kernel(window, gap)
    full = oaconvolve(p, k[::-1], mode="full")
    step = np.zeros(n)
    step[half : n - half] = full[2 * half - 1 : n - 1]
    edge = half + int(3 * period_samples) + 1  # the smoothing's reach at the ends
    step[:edge] = 0.0
    step[max(n - edge, 0) :] = 0.0
    big = np.abs(step) > threshold_rad
    if not big.any():
        return np.zeros(0, int)
    m = np.concatenate([[False], big, [False]])
    d = np.diff(m.astype(np.int8))
    starts, stops = np.flatnonzero(d == 1), np.flatnonzero(d == -1)
    # one step gives several stretches above the threshold within one fit length (the fits'
    # difference swings while the smeared step passes through them): one index per cluster
    out: list[int] = []
    first = last = int(starts[0])
    for a, b in zip(starts[1:], stops[:-1], strict=True):
        if a - b > 2 * half:
            out.append((first + last) // 2)
            first = int(a)
        last = int(b)
    out.append((first + int(stops[-1])) // 2)
    return np.asarray(out, int)


def suspect_spans(spans: np.ndarray, *, ratio: float = SPAN_RATIO) -> np.ndarray:
    """Which sweeps are much longer than the others (may hold an unseen turnaround).

    Each sweep's OPD span is compared with the median span of the longer half of the *other*
    sweeps inside the record (the first and last sweeps are cut by the record's start and end,
    so they never serve as the comparison); with no such other sweep nothing can be told and
    nothing is flagged (a record of one full sweep between two partial ones is normal).
    """
    s = np.asarray(spans, float)
    out = np.zeros(s.size, bool)
    if s.size < 3:
        return out
    interior = np.arange(1, s.size - 1)
    for k in range(s.size):
        others = np.sort(s[interior[interior != k]])
        if others.size == 0:
            continue
        # the longer half of the others: partial sweeps at the record's ends and fragments
        # between close steps do not lower the comparison
        out[k] = s[k] > ratio * float(np.median(others[others.size // 2 :]))
    return out


def drop_suspect_sweeps(sweeps):
    """Sweeps of a single-channel record without those :func:`suspect_spans` flags, and a note
    saying why they were left out (empty when none was).

    Every sweep is left out when all but one are suspect (nothing to trust), with the same note
    raised as the reason by the caller's sweep check.
    """
    spans = np.array([s.opd_span_cm for s in sweeps])
    bad = suspect_spans(spans)
    if not bad.any():
        return tuple(sweeps), ""
    med = float(np.median(spans[~bad]))
    which = ", ".join(
        f"{s.index} ({s.opd_span_cm * 10:.3g} mm)" for s, b in zip(sweeps, bad, strict=True) if b
    )
    note = (
        f"sweep(s) {which} span far more path than the others (median {med * 10:.3g} mm): each "
        "may hold a turnaround that a single reference channel cannot see (an abrupt reversal "
        "at a fringe maximum or minimum), so they were not used. Record the mirror position "
        "or a quadrature reference (two channels 90° apart) to tell the direction, or round "
        "the scan's turnarounds"
    )
    return tuple(s for s, b in zip(sweeps, bad, strict=True) if not b), note


def abrupt_steps_note(times_s) -> str:
    """The warning for abrupt phase steps found on a single reference channel."""
    t = sorted(float(v) for v in times_s)
    shown = ", ".join(f"{v:.4g}" for v in t[:6]) + (", ..." if len(t) > 6 else "")
    return (
        f"the reference phase steps abruptly {len(t)} time(s) (at t = {shown} s): abrupt "
        "turnarounds of the mirror or fringe-count slips. The record was split there and the "
        "direction taken to reverse; a few fringes around each were not used"
    )
