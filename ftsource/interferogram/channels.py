"""Checks of a record's channels made before any processing: is the reference sampled finely
enough, and does the source detector carry a signal at all.

Both are cheap (one pass over the samples) so that a record that cannot give a spectrum is
refused at once, with the figure found and what to change, instead of after minutes of
processing that end in a confident wrong number.

Kernel units: samples, Hz, nm, m/s.
"""

from __future__ import annotations

import numpy as np

from ftsource.errors import AnalysisError

__all__ = [
    "MIN_SAMPLES_PER_FRINGE",
    "FAST_QUANTILE",
    "reference_samples_per_fringe",
    "check_reference_sampling",
    "check_signal_channel",
]

#: Fewest samples per reference fringe, at the fastest mirror speed, that the optical path
#: needs. Two samples per fringe is the Nyquist limit of the fringe frequency; the phase
#: unwrapping of a quadrature pair calls a step above 0.6π a slip (3.3 samples per fringe), and
#: the analytic signal of a single channel and the running-extremes normalisation need a few
#: samples per fringe to follow a changing speed. Common practice: at least 4.
MIN_SAMPLES_PER_FRINGE = 4.0
#: The "fastest" speed is taken at this quantile of the fringe rate (a few glitches do not set
#: it, a fast stretch of a few % of the record does).
FAST_QUANTILE = 0.95
#: Samples per block over which the fringes are counted.
BLOCK = 256
#: Samples per pass over a long channel (a multiple of :data:`BLOCK`).
CHUNK_SAMPLES = 1 << 20
#: A reference whose amplitude varies more than this (standard deviation over mean) holds
#: noise, not fringes: the sampling is then not judged (the optical path says what is wrong).
#: Noise alone gives 0.52; fringes with turnarounds and dropouts stay well below.
MAX_AMPLITUDE_VARIATION = 0.4
#: The fringe test reads at most this many samples from the middle of the record.
FRINGE_TEST_SAMPLES = 1 << 18


def reference_samples_per_fringe(columns, kind: str) -> tuple[float, float]:
    """Median and fastest-stretch samples per reference fringe, from the raw channel(s).

    Parameters
    ----------
    columns : mapping
        The record's columns (``ref_i``/``ref_q`` or ``ref``).
    kind : {"quadrature", "single"}

    Returns
    -------
    (median, fastest) : tuple of float
        Samples per fringe at the median and at the :data:`FAST_QUANTILE` fringe rate; inf when
        the channel shows no fringes.

    References
    ----------
    .. [1] Common practice: for a quadrature pair the fringe phase advances by the wrapped
       step of atan2 between samples; for one channel, a fringe holds two crossings of its
       mean level. Both are counted per block of :data:`BLOCK` samples.
    """
    if not _holds_fringes(columns, kind):
        return np.inf, np.inf
    if kind == "quadrature":
        i = np.asarray(columns["ref_i"], float)
        q = np.asarray(columns["ref_q"], float)
        (mi, si), (mq, sq) = _mean_std(i), _mean_std(q)
        if not (si > 0 and sq > 0):
            return np.inf, np.inf
        # per block of BLOCK samples (whole blocks only), a chunk of blocks at a time so that
        # no full-length temporary is made: fringes advanced between samples (a wrapped
        # step of the phase); none where the pair sits near its centre (a dropout carries
        # no phase)
        n_blk = (i.size - 1) // BLOCK
        if n_blk < 2:
            return np.inf, np.inf
        fr = np.empty(n_blk)
        on = np.empty(n_blk, bool)
        per = max(1, CHUNK_SAMPLES // BLOCK)
        for b0 in range(0, n_blk, per):
            b1 = min(b0 + per, n_blk)
            a, z = b0 * BLOCK, b1 * BLOCK + 1
            u, v = (i[a:z] - mi) / si, (q[a:z] - mq) / sq
            d = np.diff(np.arctan2(v, u))
            d -= (2 * np.pi) * np.round(d / (2 * np.pi))  # wrapped into [−π, π]
            r = np.hypot(u, v)
            lit = (r[:-1] > 0.5) & (r[1:] > 0.5)
            adv = np.abs(d) / (2 * np.pi) * lit
            fr[b0:b1] = adv.reshape(b1 - b0, BLOCK).sum(axis=1)
            on[b0:b1] = lit.reshape(b1 - b0, BLOCK).mean(axis=1) > 0.9
        return _rates(fr, on)
    else:
        c = np.asarray(columns["ref"], float)
        cm = c - np.median(c)
        # crossings of the mean level with a hysteresis of a tenth of the spread (noise near
        # the level makes none); a fringe holds two
        h = 0.1 * float(np.std(cm))
        if not h > 0:
            return np.inf, np.inf
        state = np.where(cm > h, 1, np.where(cm < -h, -1, 0))
        nz = np.flatnonzero(state)
        adv = np.zeros(max(c.size - 1, 0))
        if nz.size >= 2:
            s = state[nz]
            cross = nz[1:][s[1:] != s[:-1]]
            adv[cross - 1] = 0.5
        lit = np.ones(adv.size, bool)
    # fringes per block of samples: the counts of single samples are too coarse near the
    # limit (an interval of 1 or 2 samples)
    n_blk = adv.size // BLOCK
    if n_blk < 2:
        return np.inf, np.inf
    fr = adv[: n_blk * BLOCK].reshape(n_blk, BLOCK).sum(axis=1)
    on = lit[: n_blk * BLOCK].reshape(n_blk, BLOCK).mean(axis=1) > 0.9
    return _rates(fr, on)


def _rates(fr: np.ndarray, on: np.ndarray) -> tuple[float, float]:
    """Median and fastest samples per fringe from the fringes counted per block."""
    fr = fr[on & (fr > 0)]
    if fr.size < 2 or fr.sum() < 16:
        return np.inf, np.inf
    return float(BLOCK / np.median(fr)), float(BLOCK / np.quantile(fr, FAST_QUANTILE))


def _mean_std(x: np.ndarray) -> tuple[float, float]:
    """Mean and (population) standard deviation of ``x``, two passes over blocks of
    :data:`CHUNK_SAMPLES` (no full-length temporary)."""
    n = x.size
    mean = sum(float(np.sum(x[a : a + CHUNK_SAMPLES])) for a in range(0, n, CHUNK_SAMPLES)) / n
    ss = sum(float(np.sum(np.square(x[a : a + CHUNK_SAMPLES] - mean)))
             for a in range(0, n, CHUNK_SAMPLES))
    return mean, float(np.sqrt(ss / n))


def _holds_fringes(columns, kind: str) -> bool:
    """Whether the reference carries fringes rather than noise: fringes have a steady
    amplitude, noise a Rayleigh-distributed one (coefficient of variation √(4/π − 1) ≈ 0.52).
    Judged on at most :data:`FRINGE_TEST_SAMPLES` samples from the middle of the record; the
    amplitude is the analytic signal's modulus (one channel) or the radius of the mean-removed,
    scaled pair (quadrature).

    References
    ----------
    .. [1] D. Gabor, "Theory of communication", J. IEE 93, 429–457 (1946) (analytic signal).
    """
    names = ("ref_i", "ref_q") if kind == "quadrature" else ("ref",)
    cols = [np.asarray(columns[k], float) for k in names]
    n = cols[0].size
    a = max((n - FRINGE_TEST_SAMPLES) // 2, 0)
    cols = [c[a : a + FRINGE_TEST_SAMPLES] for c in cols]
    if any(not np.std(c) > 0 for c in cols):
        return False
    if kind == "quadrature":
        amp = np.hypot(*((c - c.mean()) / c.std() for c in cols))
    else:
        from scipy.signal import hilbert

        c = cols[0]
        amp = np.abs(hilbert(c - np.median(c)))
    return bool(np.std(amp) < MAX_AMPLITUDE_VARIATION * np.mean(amp))


def check_reference_sampling(
    columns, kind: str, sample_rate_hz: float, reference_wavelength_nm: float
) -> float:
    """Refuse a record whose reference is sampled below :data:`MIN_SAMPLES_PER_FRINGE`.

    Returns the samples per fringe at the fastest stretch (inf without fringes: other checks
    say so).

    Raises
    ------
    AnalysisError
        With the samples per fringe found, the mirror speed that would do at this sample rate
        and the sample rate that would do at this speed.
    """
    med, fast = reference_samples_per_fringe(columns, kind)
    if not np.isfinite(fast) or fast >= MIN_SAMPLES_PER_FRINGE:
        return fast
    lam_m = reference_wavelength_nm * 1e-9
    # OPD speed = λ × fringe rate; the mirror moves at half the OPD speed
    v_mirror = lam_m * sample_rate_hz / fast / 2
    v_ok = lam_m * sample_rate_hz / MIN_SAMPLES_PER_FRINGE / 2
    fs_ok = sample_rate_hz * MIN_SAMPLES_PER_FRINGE / fast
    raise AnalysisError(
        f"the reference is undersampled: {fast:.2f} samples per reference fringe at the "
        f"fastest mirror speed (median {med:.2f}); the optical path needs at least "
        f"{MIN_SAMPLES_PER_FRINGE:g}. At {sample_rate_hz:g} Hz move the mirror at most "
        f"{v_ok * 1e3:.3g} mm/s (now about {v_mirror * 1e3:.3g} mm/s), or sample at "
        f"{fs_ok:.3g} Hz or faster at this speed"
    )


def check_signal_channel(signal, *, name: str = "signal") -> None:
    """Refuse a dead source channel: every sample the same (unplugged, or a constant level).

    Raises
    ------
    AnalysisError
        Naming the channel.
    """
    s = np.asarray(signal, float)
    if s.size and float(np.max(s)) == float(np.min(s)):
        raise AnalysisError(
            f"the source channel '{name}' is constant ({s[0]:g} in every sample): the "
            "detector is unplugged, off or saturated; check its cable, power and gain, and the "
            "column mapping (columns='signal=NAME')"
        )
