"""Locating zero path difference (ZPD): the centre burst of an interferogram.

The burst is found on the envelope ``|z(x)|`` of the analytic signal ``z`` of the interferogram
(DC removed). Its position is refined to a fraction of a sample as the centroid of
``|z|^2 - t^2`` over the contiguous region around the peak where ``|z| >= t``, with ``t`` half
the peak envelope. By Parseval's theorem the centroid of ``|z(x)|^2`` is the mean group delay
``<dphi/dsigma> / (2 pi)`` of the spectrum weighted by ``|B(sigma)|^2``, so the ZPD found is
the origin that leaves no mean linear phase; for a symmetric burst it is the centre of
symmetry. The threshold keeps noise far from the burst out of the centroid; subtracting
``t^2`` makes the weight go to zero continuously at the region's edges so that the sampled
centroid has no edge jitter.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.errors import OptionError, RecordError

__all__ = [
    "ZpdInfo",
    "find_zpd",
    "interferogram_arrays",
    "uniform_step_cm",
    "BURST_RATIO",
    "AMBIGUOUS_RATIO",
    "EDGE_FRINGES",
    "EDGE_SAMPLES",
    "conflicting_zpd",
    "PHASE_REFERENCES",
    "phase_reference",
]

#: What served as the phase reference of the sweeps used (``processing.phase_reference``):
#: ``zpd`` — in every sweep one burst, or one standing clearly above the others, taken for
#: zero path difference; ``zpd-or-revival`` — in at least one sweep the strongest of several
#: bursts of nearly equal height, which may be a coherence revival (or the beat maximum of
#: close lines) rather than ZPD; ``none`` — no burst: magnitude spectra about each sweep's
#: centre. A burst that another sweep over the same path shows to be weaker than a burst
#: elsewhere is known to be a revival (:func:`conflicting_zpd`); such sweeps are left out, so
#: it never serves.
PHASE_REFERENCES = ("zpd", "zpd-or-revival", "none")

#: Short side at least this fraction of the long side counts as double-sided.
DOUBLE_SIDED_RATIO = 0.8
#: Another envelope maximum at least this fraction of the strongest, separated from it by a
#: fall below the centroid threshold, is a further burst (a coherence revival of a multimode
#: laser, or the beat maximum of close lines).
BURST_RATIO = 0.5
#: A further burst at least this fraction of the strongest makes the choice of ZPD ambiguous:
#: the modes of a laser narrower than the scan's resolution revive to nearly full height, so
#: the strongest burst may be a revival (common practice: revival heights fall with the modes'
#: coherence, exp(-π Δσ_mode x) for Lorentzian modes).
AMBIGUOUS_RATIO = 0.8
#: The burst's region above the centroid threshold must end at least this many periods of its
#: carrier, and :data:`EDGE_SAMPLES` samples, from either end of the record: a burst rises and
#: falls inside the record, its fall is not the analytic signal's dip at the record's end.
EDGE_FRINGES = 4.0
EDGE_SAMPLES = 16


@dataclass(frozen=True)
class ZpdInfo:
    """Where the centre burst is, or why none was found.

    Attributes
    ----------
    found : bool
        True when a prominent burst lies inside the record.
    x_zpd_cm : float
        OPD of ZPD, cm (refined, not on the sample grid). NaN when not found.
    index : int
        Index of the sample nearest to ZPD (-1 when not found).
    short_side_cm, long_side_cm : float
        Extent of the record on either side of ZPD, cm (NaN when not found).
    prominence : float
        Peak envelope over the median envelope of the record (1 for a flat envelope; capped
        at 1e12).
    reason : str
        Empty when found; otherwise why not.
    """

    found: bool
    x_zpd_cm: float
    index: int
    short_side_cm: float
    long_side_cm: float
    prominence: float
    reason: str
    #: Bursts in the record at least :data:`BURST_RATIO` of the strongest, it included (a burst
    #: cut by an end of the record counts).
    n_bursts: int = 1
    #: Median distance between neighbouring complete bursts, cm (NaN with one).
    burst_spacing_cm: float = float("nan")
    #: True when another burst reaches :data:`AMBIGUOUS_RATIO` of the one taken as ZPD, or a
    #: burst cut by an end of the record reaches :data:`BURST_RATIO` of it: the strongest may
    #: then be a coherence revival (or a beat maximum) rather than ZPD.
    ambiguous: bool = False
    #: OPD of the envelope's maximum, cm, also when no ZPD was found (a burst cut by an end
    #: lies there); NaN for a constant record. Sweeps of one stretch of reference share their
    #: OPD origin, so this tells where each saw its strongest burst.
    peak_cm: float = float("nan")

    @property
    def kind(self) -> str:
        """``"double-sided"`` (short side >= 0.8 long side), ``"one-sided"`` or ``"none"``."""
        if not self.found:
            return "none"
        if self.short_side_cm >= DOUBLE_SIDED_RATIO * self.long_side_cm:
            return "double-sided"
        return "one-sided"


def interferogram_arrays(x_cm, y) -> tuple[np.ndarray, np.ndarray, float]:
    """An interferogram's OPD grid and samples as float arrays, checked, with the grid step.

    Parameters
    ----------
    x_cm : array_like
        OPD of the samples, cm: a uniform grid (:func:`uniform_step_cm`).
    y : array_like
        The samples, same shape, finite.

    Returns
    -------
    x, y : numpy.ndarray
    step : float
        Signed grid step, cm.

    Raises
    ------
    RecordError
        If the grid is not uniform, the shapes differ or a sample is not finite.
    """
    x = np.asarray(x_cm, dtype=float)
    yy = np.asarray(y, dtype=float)
    step = uniform_step_cm(x)
    if yy.shape != x.shape:
        raise RecordError(f"y has shape {yy.shape}, expected {x.shape} like x_cm")
    if not np.all(np.isfinite(yy)):
        raise RecordError("y must be finite (no NaN or inf samples)")
    return x, yy, step


def uniform_step_cm(x_cm: np.ndarray, *, rtol: float = 1e-6) -> float:
    """Return the signed step of a uniform OPD grid, or raise.

    Parameters
    ----------
    x_cm : array_like
        OPD of the samples, cm; at least 2 samples, strictly monotonic and uniform.
    rtol : float, optional
        Allowed relative deviation of any step from the mean step.

    Returns
    -------
    float
        Mean step ``(x[-1] - x[0]) / (n - 1)``, cm (negative for a decreasing grid).

    Raises
    ------
    RecordError
        If the grid is too short, not finite or not uniform.

    References
    ----------
    .. [1] Common practice: the FFT assumes equally spaced OPD samples.
    """
    x = np.asarray(x_cm, dtype=float)
    if x.ndim != 1 or x.size < 2:
        raise RecordError(f"x_cm must be a 1-D grid of at least 2 samples, got shape {x.shape}")
    if not np.all(np.isfinite(x)):
        raise RecordError("x_cm must be finite")
    step = (x[-1] - x[0]) / (x.size - 1)
    if step == 0.0:
        raise RecordError("x_cm must be strictly monotonic; its first and last values are equal")
    dev = np.max(np.abs(np.diff(x) - step)) / abs(step)
    if dev > rtol:
        raise RecordError(
            f"x_cm must be uniformly spaced (resample it first); a step deviates by {dev:.3g} of "
            f"the mean step, allowed {rtol:g}"
        )
    return float(step)


def analytic_envelope(y: np.ndarray, *, pad: bool = True) -> np.ndarray:
    """|y + i·H(y)|, the envelope of the analytic signal, from two real FFTs: the Hilbert
    transform H(y) is the inverse real FFT of −i·sign(σ)·Y with the DC and Nyquist terms set
    to zero.

    With ``pad=False`` this is ``abs(scipy.signal.hilbert(y))`` (the record taken as one
    period). With ``pad`` (the default) ``y`` is zero-filled to the next length the FFT handles
    fast (``scipy.fft.next_fast_len``; an awkward length, such as a large prime factor, is up
    to 10× slower): the envelope then differs only within a few fringes of the record's ends,
    where a periodic wrap is no better.

    References
    ----------
    .. [1] D. Gabor, 'Theory of communication', J. IEE 93 (1946) 429-457 (analytic signal).
    """
    from scipy.fft import irfft, next_fast_len, rfft

    n = y.size
    m = next_fast_len(n, real=True) if pad and n else n
    spec = rfft(y, m)
    spec *= -1j
    spec[0] = 0.0
    if m % 2 == 0:
        spec[-1] = 0.0
    h = irfft(spec, m)[:n]
    return np.hypot(y, h, out=h)


def _not_found(prominence: float, reason: str, peak_cm: float = float("nan")) -> ZpdInfo:
    nan = float("nan")
    return ZpdInfo(False, nan, -1, nan, nan, prominence, reason, 1, nan, False, peak_cm)


def find_zpd(
    x_cm: np.ndarray,
    y: np.ndarray,
    *,
    min_prominence: float = 6.0,
    threshold: float = 0.5,
) -> ZpdInfo:
    """Find the centre burst of a uniformly sampled interferogram.

    Parameters
    ----------
    x_cm : array_like
        OPD of the samples, cm (uniform grid, increasing or decreasing).
    y : array_like
        Interferogram samples, same length. Its mean is subtracted here.
    min_prominence : float, optional
        Smallest peak-to-median ratio of the envelope accepted as a burst. For white noise
        alone the envelope is Rayleigh distributed and the ratio of its largest to its median
        value over ``n`` samples is about ``sqrt(ln n / ln 2)``, below 5 for ``n < 1e7``; the
        default 6 therefore rejects noise-only records and the flat envelope of a narrow
        laser line.
    threshold : float, optional
        Fraction of the peak envelope that bounds the region used for the sub-sample centroid.

    Returns
    -------
    ZpdInfo
        ``found=False`` with a reason when there is no prominent burst or it touches the
        record's ends.

    Raises
    ------
    RecordError
        If ``x_cm`` is not a uniform grid or ``y`` does not match it.
    OptionError
        If ``min_prominence`` or ``threshold`` is out of range.

    References
    ----------
    .. [1] D. Gabor, 'Theory of communication', J. IEE 93 (1946) 429-457 (analytic signal).
    .. [2] L. Mertz, 'On the phase spectra of interferograms', J. Phys. Colloq. 28 (1967)
       C2-11 (the ZPD need not fall on a sample; a residual linear phase is a ZPD shift).
    """
    if not (np.isfinite(min_prominence) and min_prominence >= 1.0):
        raise OptionError(f"min_prominence must be >= 1, got {min_prominence!r}")
    if not (0.0 < threshold < 1.0):
        raise OptionError(f"threshold must be between 0 and 1 (exclusive), got {threshold!r}")
    x, yy, step = interferogram_arrays(x_cm, y)
    n = x.size
    if n < 8:
        raise RecordError(f"an interferogram needs at least 8 samples, got {n}")

    env = analytic_envelope(yy - yy.mean())
    peak = float(env.max())
    if peak == 0.0:
        return _not_found(0.0, "the interferogram is constant: no fringes")
    median = max(float(np.median(env)), peak * 1e-12)
    prominence = peak / median
    if prominence < min_prominence:
        return _not_found(
            prominence,
            f"no prominent centre burst: the envelope peak is {prominence:.3g} times its median, "
            f"below {min_prominence:g} (a narrow line has a flat envelope)",
        )
    i_peak = int(np.argmax(env))
    peak_cm = float(x[0] + i_peak * step)
    t = threshold * peak
    above = env >= t
    lo = i_peak
    while lo > 0 and above[lo - 1]:
        lo -= 1
    hi = i_peak
    while hi < n - 1 and above[hi + 1]:
        hi += 1
    if lo == 0 or hi == n - 1:
        return _not_found(
            prominence,
            "the centre burst touches the end of the record; ZPD may lie outside the scan",
            peak_cm,
        )
    # The burst's region above the threshold must end well inside the record: at least
    # EDGE_FRINGES periods of its carrier (and EDGE_SAMPLES samples) from either end. Near an
    # end the analytic signal's envelope dips (the transform of a truncated record), so a
    # sweep that starts on the falling envelope of a broad line shows a "burst" bounded by
    # that dip a few samples from its start, with no rise of its own before it.
    margin = max(EDGE_SAMPLES, EDGE_FRINGES * _carrier_period(yy[lo : hi + 1]))
    if lo < margin or n - 1 - hi < margin:
        return _not_found(
            prominence,
            "the strongest part of the envelope lies at the edge of the sweep and does not "
            "rise and fall within it (the sweep starts or ends on a decaying envelope): ZPD "
            "is not in the sweep",
            peak_cm,
        )
    n_bursts, spacing, ambiguous = _other_bursts(env, lo, hi, peak, threshold, abs(step),
                                                  margin)
    idx = np.arange(lo, hi + 1)
    w = np.clip(env[idx] ** 2 - t * t, 0.0, None)
    i_zpd = float(np.sum(idx * w) / np.sum(w))
    x_zpd = float(x[0] + i_zpd * step)
    index = int(round(i_zpd))
    side_a = abs(x_zpd - x[0])
    side_b = abs(x[-1] - x_zpd)
    return ZpdInfo(
        True,
        x_zpd,
        index,
        float(min(side_a, side_b)),
        float(max(side_a, side_b)),
        float(prominence),
        "",
        n_bursts,
        spacing,
        ambiguous,
        peak_cm,
    )


def _carrier_period(y: np.ndarray) -> float:
    """Period (samples) of the fringes in ``y``, from its mean-level crossings (two per
    period); 0 when there are too few."""
    c = np.flatnonzero(np.diff(np.signbit(y - np.mean(y))))
    return float(2 * np.median(np.diff(c))) if c.size >= 3 else 0.0


def _other_bursts(env, lo, hi, peak, threshold, step_cm, margin):
    """Further bursts of the envelope besides the one at ``lo:hi``: their count (the main one
    included), the median spacing of neighbouring bursts (cm) and whether one of them reaches
    :data:`AMBIGUOUS_RATIO` of the peak.

    A further burst is an envelope maximum of at least :data:`BURST_RATIO` × ``peak`` whose
    region above ``threshold`` × its height is separate from the others'. One that reaches
    within ``margin`` samples of an end is cut: it counts, makes the choice ambiguous (its
    top may be higher than the main burst) and has no centre for the spacing.
    """
    n = env.size
    free = np.ones(n, bool)
    free[lo : hi + 1] = False
    centres = [(lo + hi) / 2]
    heights = [peak]
    cut_heights: list[float] = []
    for _ in range(16):
        cand = np.where(free, env, 0.0)
        k = int(np.argmax(cand))
        h = float(cand[k])
        if h < BURST_RATIO * peak:
            break
        t = threshold * h
        a = k
        while a > 0 and env[a - 1] >= t and free[a - 1]:
            a -= 1
        b = k
        while b < n - 1 and env[b + 1] >= t and free[b + 1]:
            b += 1
        # it must fall below its threshold on both sides before meeting another burst's
        # region; one cut by the record's end (within ``margin``) has no measurable centre but
        # may be the true ZPD, its top cut off
        cut = a < margin or b >= n - 1 - margin
        separate = (a == 0 or env[a - 1] < t) and (b == n - 1 or env[b + 1] < t)
        free[a : b + 1] = False
        if separate and cut:
            cut_heights.append(h)
        elif separate:
            centres.append((a + b) / 2)
            heights.append(h)
    n_bursts = len(centres) + len(cut_heights)
    ambiguous = bool(
        max(heights[1:], default=0.0) >= AMBIGUOUS_RATIO * peak or cut_heights
    )
    if len(centres) == 1:
        return n_bursts, float("nan"), ambiguous
    c = np.sort(np.asarray(centres))
    return n_bursts, float(np.median(np.diff(c)) * step_cm), ambiguous


def phase_reference(found, ambiguous) -> str:
    """The one word (:data:`PHASE_REFERENCES`) for what served as the sweeps' phase reference,
    from each used sweep's ``zpd_found`` and ``zpd_ambiguous``."""
    found = [bool(f) for f in found]
    if not any(found):
        return "none"
    if any(f and a for f, a in zip(found, ambiguous, strict=True)):
        return "zpd-or-revival"
    return "zpd"


def conflicting_zpd(
    zpd_cm, segments, ranges_cm, peaks_cm, *, tolerance_cm: float, clear=None
) -> np.ndarray:
    """Which sweeps' ZPD another sweep of the same stretch of reference contradicts.

    ZPD is one OPD for every sweep whose OPD shares an origin (a ``segment``). Sweep j
    contradicts sweep i's ZPD ``x_i`` when x_i lies inside j's range and j's strongest burst
    (found as ZPD, or cut by j's end) lies more than ``tolerance_cm`` from x_i: j sees a burst
    at least as strong elsewhere, so x_i may be a coherence revival rather than ZPD.

    Parameters
    ----------
    zpd_cm : array_like
        Each sweep's ZPD, cm (NaN when none was found).
    segments : array_like of int
    ranges_cm : array_like, shape (n, 2)
        Each sweep's OPD range, cm.
    peaks_cm : array_like
        OPD of each sweep's envelope maximum, cm (:attr:`ZpdInfo.peak_cm`; NaN: none).
    tolerance_cm : float
        How far apart two sightings of one burst may be (forward/backward sweeps shift it by
        the channel delay, a few µm).
    clear : array_like of bool, optional
        Whether each sweep's strongest burst stands clearly above every other burst it holds
        (ZPD found, not ambiguous). When given, only contradictions by such sweeps count:
        sweep j then sees, over x_i, nothing as strong as its own burst, so x_i is **known**
        to be a revival — the fringe visibility is highest at ZPD (|γ(x)| ≤ γ(0), the
        Wiener–Khinchin theorem: the spectrum's Fourier transform is largest at 0).

    Returns
    -------
    ndarray of bool
    """
    z = np.asarray(zpd_cm, float)
    seg = np.asarray(segments)
    rng = np.asarray(ranges_cm, float).reshape(-1, 2)
    pk = np.asarray(peaks_cm, float)
    ok = np.ones(z.size, bool) if clear is None else np.asarray(clear, bool)
    out = np.zeros(z.size, bool)
    for i in np.flatnonzero(np.isfinite(z)):
        for j in range(z.size):
            if j == i or seg[j] != seg[i] or not np.isfinite(pk[j]) or not ok[j]:
                continue
            lo, hi = np.min(rng[j]), np.max(rng[j])
            if lo < z[i] < hi and abs(pk[j] - z[i]) > tolerance_cm:
                out[i] = True
    return out
