"""Optical path difference from the reference channel(s), and the record split into sweeps.

Three sources of optical path are supported:

* a **quadrature pair** (I, Q): offsets, unequal gains and non-orthogonality are removed by an
  ellipse fit (Heydemann 1981) per sweep, then the four-quadrant phase is unwrapped; its sign
  gives the direction of travel;
* a **single reference channel**: normalised for a drifting DC level and amplitude from its
  running extremes, then the phase of its analytic signal (Hilbert transform) is unwrapped; that
  phase only grows, so the direction flips at each turnaround (a minimum of the fringe rate);
* a **position encoder**: OPD = 2 × mirror position (the air index is applied later).

The OPD is the reference phase / 2π × the reference's *vacuum* wavelength; in air the source
wavenumbers are corrected afterwards for the index ratio (:mod:`ftsource.physics.air`).

Kernel units: OPD in cm, time in s.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ftsource.errors import AnalysisError, OptionError
from ftsource.interferogram.periodic import periodic_phase_error
from ftsource.interferogram.scale import HENE_VACUUM_WAVELENGTH_NM, OpdKind
from ftsource.interferogram.turnarounds import (
    abrupt_steps_note,
    drop_suspect_sweeps,
    phase_steps,
)
from ftsource.physics.instrument import OPD_PER_MIRROR_TRAVEL

__all__ = [
    "EllipseFit",
    "Sweep",
    "OpticalPath",
    "fit_ellipse",
    "ellipse_phase",
    "opd_from_quadrature",
    "opd_from_single",
    "opd_from_position",
    "opd_from_constant_speed",
    "sweep_speed_at",
]

#: Reference amplitude below this fraction of the record's median counts as a dropout.
DROPOUT_LEVEL = 0.3
#: Ellipses are fitted on at most about this many samples, strided evenly over the stretch.
ELLIPSE_FIT_SAMPLES = 1 << 14
#: A sweep's own ellipse fit replaces the record's when it moves the phase by more than this
#: (rad): 1e-4 rad is 1e-5 of a fringe, far below what any sweep's scale can show.
REFIT_PHASE_TOLERANCE = 1e-4
#: Full-length passes run over blocks of this many samples, so that their temporaries stay
#: small beside the record (:func:`opd_from_quadrature`).
BLOCK_SAMPLES = 1 << 20
#: Sweeps shorter than this many reference fringes are not used.
MIN_SWEEP_FRINGES = 32
#: A single-channel stretch whose analytic-signal envelope varies more than this (standard
#: deviation / mean, turnarounds excluded) holds noise rather than fringes.
MAX_ENVELOPE_VARIATION = 0.3


@dataclass(frozen=True)
class EllipseFit:
    """Parameters of ``I = p + a cos φ``, ``Q = q + b sin(φ + α)`` and the fit's RMS residual.

    ``residual`` is the RMS deviation of the corrected radius from 1 (dimensionless).
    """

    p: float
    q: float
    a: float
    b: float
    alpha: float
    residual: float


@dataclass(frozen=True)
class Sweep:
    """One monotonic stretch of mirror travel, samples ``start:stop`` of the record.

    ``segment`` numbers the stretches of continuous reference between dropouts or slips: OPD
    values are comparable between sweeps of the same segment only.
    """

    index: int
    start: int
    stop: int
    direction: int
    segment: int
    opd_span_cm: float
    mean_speed_cm_s: float
    max_speed_cm_s: float


@dataclass(frozen=True)
class OpticalPath:
    """OPD for every sample (NaN where unknown) and the sweeps found in it."""

    opd_cm: np.ndarray
    kind: OpdKind
    sweeps: tuple[Sweep, ...]
    ellipse_residual: float | None
    fringe_slips: int
    dropouts: int
    warnings: tuple[str, ...]
    #: Largest periodic phase error (rad) found and removed after the ellipse fit
    #: (:mod:`ftsource.interferogram.periodic`); 0 when none was estimated.
    periodic_error_rad: float = 0.0

    @property
    def max_speed_cm_s(self) -> float:
        return max((s.max_speed_cm_s for s in self.sweeps), default=float("nan"))


def fit_ellipse(i: np.ndarray, q: np.ndarray) -> EllipseFit:
    """Fit the Lissajous ellipse of a quadrature pair (Heydemann 1981).

    A general conic ``A u² + B uv + C v² + D u + E v = 1`` is fitted by linear least squares
    to the mean-removed, scaled data, and converted to offsets, amplitudes and the phase error.

    References
    ----------
    .. [1] P. L. M. Heydemann, "Determination and correction of quadrature fringe measurement
       errors in interferometers", Appl. Opt. 20, 3382–3384 (1981).
    """
    i = np.asarray(i, dtype=float)
    q = np.asarray(q, dtype=float)
    mi, mq = float(np.mean(i)), float(np.mean(q))
    si, sq = float(np.std(i)), float(np.std(q))
    if not (si > 0 and sq > 0):
        raise AnalysisError("the quadrature reference channels carry no fringes (constant)")
    u, v = (i - mi) / si, (q - mq) / sq
    m = np.column_stack([u * u, u * v, v * v, u, v])
    coef, *_ = np.linalg.lstsq(m, np.ones_like(u), rcond=None)
    A, B, C, D, E = coef
    det = 4 * A * C - B * B
    if not det > 0:
        raise AnalysisError("the quadrature reference does not trace an ellipse (no fringes?)")
    u0 = (B * E - 2 * C * D) / det
    v0 = (B * D - 2 * A * E) / det
    f = 1 + A * u0 * u0 + B * u0 * v0 + C * v0 * v0  # value at the centre, scales the form
    m11, m22, m12 = A / f, C / f, B / (2 * f)
    if not (m11 > 0 and m22 > 0):
        raise AnalysisError("the quadrature reference does not trace an ellipse (no fringes?)")
    s = float(np.clip(-m12 / np.sqrt(m11 * m22), -0.999, 0.999))
    alpha = float(np.arcsin(s))
    ca = np.cos(alpha)
    a = 1 / (ca * np.sqrt(m11)) * si
    b = 1 / (ca * np.sqrt(m22)) * sq
    p = mi + u0 * si
    qq = mq + v0 * sq
    fit = EllipseFit(float(p), float(qq), float(a), float(b), alpha, 0.0)
    c, sn = _corrected(i, q, fit)
    res = float(np.sqrt(np.mean((np.hypot(c, sn) - 1.0) ** 2)))
    return EllipseFit(fit.p, fit.q, fit.a, fit.b, fit.alpha, res)


def _corrected(i, q, fit: EllipseFit):
    c = (i - fit.p) / fit.a
    s = ((q - fit.q) / fit.b - c * np.sin(fit.alpha)) / np.cos(fit.alpha)
    return c, s


def ellipse_phase(i: np.ndarray, q: np.ndarray, fit: EllipseFit) -> np.ndarray:
    """Wrapped fringe phase φ in (−π, π] after the Heydemann correction."""
    c, s = _corrected(np.asarray(i, float), np.asarray(q, float), fit)
    return np.arctan2(s, c)


# --------------------------------------------------------------------------------------------
# helpers


def _blocks(n: int, step: int = BLOCK_SAMPLES):
    """``(start, stop)`` of consecutive blocks of at most ``step`` samples covering ``n``."""
    return ((a, min(a + step, n)) for a in range(0, n, step))


def _runs(mask: np.ndarray) -> list[tuple[int, int]]:
    """Start/stop index pairs of the True runs of a boolean array."""
    m = np.concatenate([[False], np.asarray(mask, bool), [False]])
    d = np.diff(m.astype(np.int8))
    return list(zip(np.flatnonzero(d == 1), np.flatnonzero(d == -1), strict=False))


def _trim_runs(runs, margin: int, n: int) -> list[tuple[int, int]]:
    """Shrink runs by ``margin`` samples at ends that border a dropout (not the record's ends)."""
    out = []
    for a, b in runs:
        a2 = a if a == 0 else a + margin
        b2 = b if b == n else b - margin
        if b2 - a2 >= 64:
            out.append((a2, b2))
    return out


def _close_gaps(mask: np.ndarray, gap: int) -> np.ndarray:
    """Copy of a boolean mask with False runs shorter than ``gap`` inside True runs filled."""
    out = np.array(mask, bool)
    for g0, g1 in _runs(~out):
        if g0 > 0 and g1 < out.size and g1 - g0 < gap:
            out[g0:g1] = True
    return out


def _odd(n: float, lo: int = 5) -> int:
    n = max(int(n), lo)
    return n if n % 2 else n + 1


def _split_sweeps(
    x: np.ndarray,
    seg_runs: list[tuple[int, int]],
    fs: float,
    ref_wavelength_cm: float,
    *,
    min_fringes: float = MIN_SWEEP_FRINGES,
    guard: float = 0.02,
    segment_ids: list[int] | None = None,
) -> list[Sweep]:
    """Monotonic stretches of ``x`` within each run, turnarounds excluded.

    ``segment_ids`` gives each run's stretch of continuous reference (default: its own).
    """
    from scipy.ndimage import uniform_filter1d

    sweeps: list[Sweep] = []
    ids = segment_ids if segment_ids is not None else list(range(len(seg_runs)))
    for seg, (a, b) in zip(ids, seg_runs, strict=False):
        xs = x[a:b]
        if xs.size < 16:
            continue
        v = np.gradient(xs) * fs
        # smooth the velocity over ~1 ms so noise does not flip its sign
        v_s = uniform_filter1d(v, max(int(fs * 1e-3), 3))
        vmed = np.median(np.abs(v_s))
        if not vmed > 0:
            continue
        moving = np.abs(v_s) > guard * vmed
        sign = np.sign(v_s) * moving
        for sgn in (1, -1):
            for s0, s1 in _runs(sign == sgn):
                seg_x = xs[s0:s1]
                if seg_x.size < 8:
                    continue
                # strictly monotonic part only
                span = abs(seg_x[-1] - seg_x[0])
                if span < min_fringes * ref_wavelength_cm:
                    continue
                spd = np.abs(v_s[s0:s1])
                sweeps.append(
                    Sweep(
                        index=0,
                        start=a + s0,
                        stop=a + s1,
                        direction=sgn,
                        segment=seg,
                        opd_span_cm=float(span),
                        mean_speed_cm_s=float(np.mean(spd)),
                        max_speed_cm_s=float(np.max(spd)),
                    )
                )
    sweeps.sort(key=lambda s: s.start)
    return [
        Sweep(k, s.start, s.stop, s.direction, s.segment, s.opd_span_cm, s.mean_speed_cm_s,
              s.max_speed_cm_s)
        for k, s in enumerate(sweeps)
    ]


def _check_sweeps(sweeps, kind):
    if not sweeps:
        raise AnalysisError(
            f"no usable sweep found in the {kind} reference: the mirror must travel at least "
            f"{MIN_SWEEP_FRINGES} reference fringes in one direction without a dropout"
        )


def _segments_from_amplitude(amp: np.ndarray, min_len: int) -> tuple[np.ndarray, list]:
    med = np.median(amp[:: max(1, amp.size // (1 << 16))])  # a strided subset suffices
    if not med > 0:
        return np.zeros(amp.shape, bool), []
    ok = amp > DROPOUT_LEVEL * med
    runs = [(a, b) for a, b in _runs(ok) if b - a >= min_len]
    return ok, runs


def _bridge_turnarounds(mx, mn, amp, zc, period):
    """Tell turnarounds from dropouts in a single reference channel.

    Near a turnaround the fringes slow down and the running extremes no longer span a fringe,
    so the apparent amplitude falls just as in a dropout. A turnaround is preceded or followed
    by slowing fringes (level-crossing intervals above 1.5× the median, or hardly any crossings
    within six fringe periods); a dropout cuts in at full speed on both sides. Across a
    turnaround the envelope is bridged linearly from its edges.
    """
    med = np.median(amp)
    low = _close_gaps(amp < DROPOUT_LEVEL * med, max(int(10 * period), 3))
    if not low.any():
        return mx, mn, amp
    mx, mn, amp = mx.copy(), mn.copy(), amp.copy()
    half = period / 2
    look = int(6 * period)
    for s0, s1 in _runs(low):
        before = zc[(zc >= s0 - look) & (zc < s0)]
        after = zc[(zc > s1) & (zc <= s1 + look)]
        slowing = any(
            z.size < 3 or np.mean(np.diff(z)) > 1.5 * half for z in (before, after)
        )
        if not slowing or s0 == 0 or s1 >= amp.size:
            continue
        a0, a1 = max(s0 - 1, 0), min(s1, amp.size - 1)
        ramp = np.linspace(0.0, 1.0, s1 - s0 + 2)[1:-1]
        mx[s0:s1] = mx[a0] + (mx[a1] - mx[a0]) * ramp
        mn[s0:s1] = mn[a0] + (mn[a1] - mn[a0]) * ramp
        amp[s0:s1] = (mx[s0:s1] - mn[s0:s1]) / 2
    return mx, mn, amp


def _samples_per_fringe_runs(phase: np.ndarray, runs, limit: int = 1 << 16) -> float:
    """:func:`_samples_per_fringe` from at most about ``limit`` steps strided over the runs."""
    total = sum(b - a - 1 for a, b in runs)
    if total < 2:
        return np.inf
    stride = max(1, total // limit)
    steps = [phase[a + 1 : b : stride] - phase[a : b - 1 : stride] for a, b in runs if b - a > 1]
    return _samples_per_fringe(np.concatenate(steps))


def _samples_per_fringe(phase_step: np.ndarray) -> float:
    step = np.median(np.abs(phase_step))
    return float(2 * np.pi / step) if step > 0 else np.inf


# --------------------------------------------------------------------------------------------
# public stages


def _fit_subset(i: np.ndarray, q: np.ndarray, limit: int = ELLIPSE_FIT_SAMPLES) -> EllipseFit:
    """:func:`fit_ellipse` on at most about ``limit`` samples spread evenly over the stretch.

    Five parameters are fixed far better by 10⁵ points than the noise of any one of them
    matters (their statistical error falls as 1/√n); a strided subset of a scan covers every
    fringe phase because the mirror speed varies."""
    step = max(1, i.size // limit)
    return fit_ellipse(i[::step], q[::step])


def _phase_kernel(i: np.ndarray, q: np.ndarray, fit: EllipseFit) -> np.ndarray:
    """Wrapped phase after the Heydemann correction, in few passes over the samples.

    ``arctan2`` does not change when both arguments are scaled by the same positive factor,
    so ``arctan2(s, c)`` with the corrected ``c``, ``s`` of :func:`ellipse_phase` is computed
    as ``arctan2((q − q0) − (i − p)·b·sin α/a, (i − p)·b·cos α/a)`` (cos α > 0)."""
    u = np.subtract(i, fit.p)
    y = np.subtract(q, fit.q)
    y -= u * (fit.b * np.sin(fit.alpha) / fit.a)
    u *= fit.b * np.cos(fit.alpha) / fit.a
    return np.arctan2(y, u, out=y)


def _phase_change_bound(a: EllipseFit, b: EllipseFit) -> float:
    """Upper bound (rad, to first order) of the change of the corrected phase between two
    ellipse fits: each parameter's relative change moves the phase by at most that much
    (offsets over their amplitude, amplitudes relative, the angle α in radians)."""
    return (abs(a.p - b.p) / min(a.a, b.a) + abs(a.q - b.q) / min(a.b, b.b)
            + abs(a.a - b.a) / min(a.a, b.a) + abs(a.b - b.b) / min(a.b, b.b)
            + abs(a.alpha - b.alpha))


def _wrapped_steps(phi: np.ndarray) -> np.ndarray:
    """Phase steps between samples wrapped into [−π, π)."""
    d = np.diff(phi)
    for a, b in _blocks(d.size):
        k = np.multiply(d[a:b], 1 / (2 * np.pi))
        np.round(k, out=k)
        k *= 2 * np.pi
        d[a:b] -= k
    return d


def _unwrapped(phi0: float, d: np.ndarray) -> np.ndarray:
    """Cumulative phase from a start value and the wrapped steps (numpy.unwrap in 3 passes)."""
    out = np.empty(d.size + 1)
    out[0] = phi0
    np.cumsum(d, out=out[1:])
    out[1:] += phi0
    return out


def _slip_steps(d: np.ndarray) -> np.ndarray:
    """Indices of steps that may hide a fringe-count slip.

    A step beyond 0.6π, or one more than 0.2π away from the median of the five steps around
    it (lost samples: the mirror's step between samples changes smoothly). The median test
    runs only where a step differs by more than 0.2π from a neighbour within two samples
    (a necessary condition: the median is one of the five steps), so clean stretches cost a
    few comparisons per sample."""
    lim = 0.2 * np.pi
    cand = np.zeros(d.size, bool)
    for k in (1, 2):
        jump = np.abs(d[k:] - d[:-k]) > lim
        cand[k:] |= jump
        cand[:-k] |= jump
    bad = np.abs(d) > 0.6 * np.pi
    idx = np.flatnonzero(cand)
    if idx.size:
        pad = np.pad(d, 2, mode="edge")  # the "nearest" edge rule of a median filter
        win = pad[idx[:, None] + np.arange(5)]
        dev = d[idx] - np.median(win, axis=1)
        bad[idx[np.abs(dev) > lim]] = True
    return np.flatnonzero(bad)


def _savgol_cubic(x: np.ndarray, window: int) -> np.ndarray:
    """Cubic Savitzky–Golay smoothing over ``window`` (odd) samples; at each end the cubic
    fitted to the first/last window is evaluated (scipy's ``mode="interp"``).

    References
    ----------
    .. [1] A. Savitzky and M. J. E. Golay, Anal. Chem. 36, 1627–1639 (1964).
    """
    h = window // 2
    t = np.arange(-h, h + 1, dtype=float)
    v = np.vander(t, 4, increasing=True)
    coef = np.linalg.pinv(v)[0]  # value of the fitted cubic at the centre
    out = np.convolve(x, coef[::-1], mode="same")
    for sl, ev in ((slice(0, window), t[:h] + h), (slice(-window, None), t[h + 1 :] + h)):
        seg = x[sl]
        p = np.polynomial.polynomial.polyfit(np.arange(window, dtype=float), seg - seg[h], 3)
        vals = np.polynomial.polynomial.polyval(ev, p) + seg[h]
        if sl.start == 0:
            out[:h] = vals
        else:
            out[-h:] = vals
    return out


def _savgol_cubic_inplace(x: np.ndarray, window: int) -> None:
    """:func:`_savgol_cubic` written back into ``x``, block by block (one block of
    temporaries instead of full-length ones)."""
    n, h = x.size, window // 2
    if n <= 2 * BLOCK_SAMPLES:
        x[:] = _savgol_cubic(x, window)
        return
    head = _savgol_cubic(x[: 2 * window], window)[:h]  # the end rule at each end
    tail = _savgol_cubic(x[-2 * window :], window)[-h:]
    t = np.arange(-h, h + 1, dtype=float)
    coef = np.linalg.pinv(np.vander(t, 4, increasing=True))[0]
    carry = x[: 2 * h].copy()  # original values the next block's window reaches back to
    for a, b in _blocks(n):
        lo, hi = max(a - h, 0), min(b + h, n)
        src = np.concatenate([carry[: a - lo], x[a:hi]]) if a > 0 else x[lo:hi].copy()
        carry = x[max(b - h, 0):b].copy()
        out = np.convolve(src, coef[::-1], mode="valid")  # samples lo+h .. hi-h-1
        first = lo + h
        x[max(a, h):min(b, n - h)] = out[max(a, h) - first : min(b, n - h) - first]
    x[:h] = head
    x[-h:] = tail


def _smoothed_radius(i, q, ci, ai, cq, aq) -> np.ndarray:
    """Radius of the normalised Lissajous figure, averaged over 16 samples, block by block."""
    from scipy.ndimage import uniform_filter1d

    n = i.size
    out = np.empty(n)
    pad = 16
    for a, b in _blocks(n):
        lo, hi = max(a - pad, 0), min(b + pad, n)
        r = np.hypot((i[lo:hi] - ci) / ai, (q[lo:hi] - cq) / aq)
        out[a:b] = uniform_filter1d(r, 16)[a - lo : b - lo]
    return out


def _slip_steps_blocked(d: np.ndarray) -> np.ndarray:
    """:func:`_slip_steps` block by block (each block sees 4 steps of its neighbours)."""
    n = d.size
    if n <= 2 * BLOCK_SAMPLES:
        return _slip_steps(d)
    out = []
    for a, b in _blocks(n):
        lo, hi = max(a - 4, 0), min(b + 4, n)
        k = _slip_steps(d[lo:hi]) + lo
        out.append(k[(k >= a) & (k < b)])
    return np.concatenate(out)


def _decimated_sweeps(x, seg_runs, fs, lam_cm, step):
    """:func:`_split_sweeps` on every ``step``-th sample (turnarounds are slow: the 1 ms
    velocity smoothing spans many decimated samples), mapped back to sample indices within
    each run."""
    if step <= 1:
        return _split_sweeps(x, seg_runs, fs, lam_cm)
    xd = x[::step]
    runs_d, ids = [], []
    for k, (a, b) in enumerate(seg_runs):
        a_d, b_d = -(-a // step), -(-b // step)
        if b_d - a_d >= 16:
            runs_d.append((a_d, b_d))
            ids.append(k)
    coarse = _split_sweeps(xd, runs_d, fs / step, lam_cm, segment_ids=ids)
    return [
        replace(sw, start=max(sw.start * step, seg_runs[sw.segment][0]),
                stop=min((sw.stop - 1) * step + 1, seg_runs[sw.segment][1]))
        for sw in coarse
    ]


def opd_from_quadrature(
    ref_i: np.ndarray,
    ref_q: np.ndarray,
    sample_rate_hz: float,
    reference_wavelength_nm: float,
    *,
    smooth: bool = True,
) -> OpticalPath:
    """OPD per sample from a quadrature reference pair.

    Dropouts (ellipse radius below :data:`DROPOUT_LEVEL` of its median) split the record into
    segments; a phase step of more than 0.6π between two samples, or one that differs from its
    neighbours' by more than 0.2π (lost samples), is a possible fringe-count slip and also
    splits the record, so the OPD scale is never silently changed. Each sweep gets
    its own ellipse fit; the fit residual is reported.

    Cost: each ellipse is fitted on an evenly strided subset of at most
    :data:`ELLIPSE_FIT_SAMPLES` samples, the phase is one ``arctan2`` per sample per pass
    and the unwrapping a cumulative sum; the slow parts (dropout screen, sweep splitting)
    run on a decimated copy.

    References
    ----------
    .. [1] P. L. M. Heydemann, Appl. Opt. 20, 3382 (1981).
    """
    i = np.asarray(ref_i, float)
    q = np.asarray(ref_q, float)
    lam_cm = reference_wavelength_nm * 1e-7
    warnings: list[str] = []
    n = i.size
    # rough normalisation for the dropout test (percentiles of a strided subset)
    step = max(1, n // ELLIPSE_FIT_SAMPLES)
    ci, cq = np.percentile(i[::step], [1, 99]), np.percentile(q[::step], [1, 99])
    ai, aq = (ci[1] - ci[0]) / 2, (cq[1] - cq[0]) / 2
    if not (ai > 0 and aq > 0):
        raise AnalysisError("the reference channels carry no fringes (constant signal)")
    r_s = _smoothed_radius(i, q, ci.mean(), ai, cq.mean(), aq)
    ok, runs = _segments_from_amplitude(r_s, 64)
    runs = _trim_runs(runs, 32, n)  # the radius is smoothed over 16 samples: keep clear of edges
    if not runs:
        raise AnalysisError("no fringes found on the quadrature reference channels")
    ok_idx = np.flatnonzero(ok[:: max(1, step // 4)]) * max(1, step // 4)
    fit0 = _fit_subset(i[ok_idx], q[ok_idx], ELLIPSE_FIT_SAMPLES)
    if fit0.residual > 0.2:
        # The dropout test above compares with the median radius, so it is blind when the
        # reference is dark for more than half the record: measure the dark share against the
        # fringes' own level instead: the radius exceeded by 64 samples, the shortest stretch
        # the dropout test keeps (a shorter glitch cannot set it).
        k = n - min(n, 64)
        top = np.partition(r_s, k)[k]
        dark = float(np.mean(r_s < DROPOUT_LEVEL * top))
        if dark > 0.5:
            pct = min(round(dark * 100), 99)  # some fringes are there: never say 100 %
            raise AnalysisError(
                f"the quadrature reference has no fringes in {pct}% of the record "
                f"(amplitude under {DROPOUT_LEVEL:.0%} of its peak): the reference beam was "
                "blocked or a reference detector is dead; check the reference laser, its beam "
                "path and both detectors, and record again"
            )
        raise AnalysisError(
            "the quadrature reference channels do not trace a clean ellipse "
            f"(RMS residual {fit0.residual:.2f}); check that ref_i and ref_q see the same fringes"
        )
    del r_s, ok
    # the wrapped phase, then unwrapped in place: x is the one full-length array of this stage
    x = np.empty(n)
    for a, b in _blocks(n):
        x[a:b] = _phase_kernel(i[a:b], q[a:b], fit0)
    # split at possible slips: wrapped step too large
    seg_runs: list[tuple[int, int]] = []
    slips = 0
    covered = np.zeros(n, bool)
    for a, b in runs:
        d = _wrapped_steps(x[a:b])
        # a slip is a step too large to unwrap, or one far from its neighbours' steps (lost
        # samples: the mirror's step between two samples changes smoothly)
        bad = _slip_steps_blocked(d)
        slips += bad.size
        edges = [a] + [a + k + 1 for k in bad] + [b]
        for s, e in zip(edges[:-1], edges[1:], strict=False):
            if e - s >= 64:
                seg_runs.append((s, e))
                # x[s] keeps its wrapped value: the start of the cumulative sum
                np.cumsum(d[s - a : e - a - 1], out=x[s + 1 : e])
                x[s + 1 : e] += x[s]
                covered[s:e] = True
        del d
    x[~covered] = np.nan
    del covered
    if slips:
        warnings.append(
            f"{slips} possible fringe-count slip(s) on the reference (phase steps above 0.6π "
            "between samples, or 0.2π away from their neighbours'): the record was split there "
            "instead of trusting the count. Sample faster or move the mirror slower, and check "
            "for lost samples."
        )
    spf = _samples_per_fringe_runs(x, seg_runs)
    if spf < 4:
        warnings.append(
            f"the reference fringes are sampled only {spf:.1f} times per fringe: sample faster "
            "than 4 samples per reference fringe for a reliable path"
        )
    x *= lam_cm / (2 * np.pi)
    dec = max(1, int(sample_rate_hz * 1e-4))  # ten decimated samples per millisecond
    sweeps = _decimated_sweeps(x, seg_runs, sample_rate_hz, lam_cm, dec)
    _check_sweeps(sweeps, OpdKind.QUADRATURE)
    # refine: one ellipse fit per sweep, phase kept continuous with the first pass
    residuals = []
    to_phase = 2 * np.pi / lam_cm
    for sw in sweeps:
        sl = slice(sw.start, sw.stop)
        try:
            fit = _fit_subset(i[sl], q[sl])
        except AnalysisError:
            continue
        residuals.append(fit.residual)
        if _phase_change_bound(fit0, fit) < REFIT_PHASE_TOLERANCE:
            continue  # the first pass's phase is already this fit's
        ph = _phase_kernel(i[sl], q[sl], fit)
        ph = _unwrapped(ph[0], _wrapped_steps(ph))
        old = x[sl]
        ph += 2 * np.pi * np.round(np.mean(old[:: max(1, old.size // 4096)] * to_phase
                                           - ph[:: max(1, old.size // 4096)]) / (2 * np.pi))
        ph *= 1 / to_phase
        x[sl] = ph
    # harmonic distortion of the channels leaves a phase error periodic in the fringe phase
    x *= to_phase
    periodic = periodic_phase_error(x, seg_runs, samples_per_fringe=spf)
    if periodic.amplitude_rad > 0:
        for a, b in seg_runs:
            for c0, c1 in _blocks(b - a):  # per sample: by blocks, no full-length temporaries
                x[a + c0 : a + c1] -= periodic(x[a + c0 : a + c1])
    x *= 1 / to_phase
    if smooth:
        w = _odd(min(spf, 64))
        if w >= 5:
            for a, b in seg_runs:
                if b - a > w:
                    _savgol_cubic_inplace(x[a:b], w)
    return OpticalPath(
        opd_cm=x,
        kind=OpdKind.QUADRATURE,
        sweeps=tuple(sweeps),
        ellipse_residual=float(np.sqrt(np.mean(np.square(residuals)))) if residuals else None,
        fringe_slips=slips,
        dropouts=max(len(runs) - 1, 0),
        warnings=tuple(warnings),
        periodic_error_rad=periodic.amplitude_rad,
    )


def opd_from_single(
    ref: np.ndarray,
    sample_rate_hz: float,
    reference_wavelength_nm: float,
    *,
    smooth: bool = True,
) -> OpticalPath:
    """OPD per sample from a single reference channel.

    The channel is normalised to ±1 with its running extremes (over a few fringes), which
    removes a drifting DC level and amplitude; the phase of the analytic signal (Hilbert
    transform) is unwrapped. It grows whatever the direction, so the direction flips at each
    turnaround, found as a stretch where the fringe rate falls below a quarter of its median.
    The first sweep is taken as positive: a single channel cannot tell the absolute direction,
    which does not change any spectrum. The slow stretches around turnarounds are not used.

    References
    ----------
    .. [1] D. Gabor, "Theory of communication", J. IEE 93, 429–457 (1946) (analytic signal).
    """
    from scipy.fft import fft, ifft, next_fast_len
    from scipy.ndimage import (
        gaussian_filter1d,
        maximum_filter1d,
        minimum_filter1d,
        uniform_filter1d,
    )

    c = np.asarray(ref, float)
    n = c.size
    lam_cm = reference_wavelength_nm * 1e-7
    warnings: list[str] = []
    # fringe period from mean-level crossings
    cm = c - np.median(c)
    zc = np.flatnonzero(np.diff(np.signbit(cm)))
    if zc.size < 2 * MIN_SWEEP_FRINGES:
        raise AnalysisError(
            "no fringes found on the reference channel (too few level crossings); check the "
            "reference detector and the column mapping"
        )
    period = 2 * float(np.median(np.diff(zc)))
    w = max(int(3 * period), 8)
    mx = uniform_filter1d(maximum_filter1d(c, w), w)
    mn = uniform_filter1d(minimum_filter1d(c, w), w)
    amp = (mx - mn) / 2
    mx, mn, amp = _bridge_turnarounds(mx, mn, amp, zc, period)
    ok, runs = _segments_from_amplitude(amp, int(4 * w))
    if not runs:
        raise AnalysisError("no fringes found on the reference channel")
    cn = np.where(ok, (c - (mx + mn) / 2) / np.where(amp > 0, amp, 1.0), 0.0)
    x = np.full(n, np.nan)
    seg_runs = []
    seg_ids = []
    slips = 0
    noisy = 0
    abrupt: list[float] = []  # times (s) of abrupt phase steps
    n_ids = 0
    for a, b in runs:
        seg = cn[a:b]
        m = next_fast_len(seg.size)
        spec = fft(seg, m)
        h = np.zeros(m)
        h[0] = 1
        h[1 : (m + 1) // 2] = 2
        if m % 2 == 0:
            h[m // 2] = 1
        z = ifft(spec * h)[: seg.size]
        psi = np.unwrap(np.angle(z))
        # drop a few fringes at each end (envelope window, Hilbert edge effects, partial fringes)
        cut = 2 * w
        if seg.size <= 4 * cut:
            continue
        psi = psi[cut:-cut]
        env = np.abs(z[cut:-cut])
        a2, b2 = a + cut, b - cut
        rate = np.gradient(psi)
        rate_s = uniform_filter1d(rate, max(int(period), 3))
        med = np.median(rate_s)
        slow = rate_s < 0.25 * med
        # one turnaround gives one slow stretch: close gaps shorter than a few fringes
        slow = _close_gaps(slow, max(int(4 * period), 3))
        # abrupt turnarounds (and fringe-count slips) keep the fringe rate but step the phase
        # (ftsource.interferogram.turnarounds); they are cut out like slow stretches, and the
        # OPD after each is a new segment (its origin is not known to a fraction of a fringe)
        cut_half = int(7 * period) + 1
        # a smooth turnaround slows the fringes well before the slow stretch; there the
        # normalisation lags and the phase wanders: steps within the slowing that leads to a
        # slow stretch (rate below 0.97× the median), or a few fringes from it, belong to it
        slowing = np.zeros_like(slow)
        for r0, r1 in _runs(rate_s < 0.97 * med):
            if slow[r0:r1].any():
                slowing[r0:r1] = True
        near_slow = maximum_filter1d(slowing, 2 * (int(12 * period) + 1) + 1)
        steps = [int(k) for k in phase_steps(psi, period) if not near_slow[k]]
        for k in steps:
            slow[max(k - cut_half, 0) : k + cut_half] = True
        abrupt += [(a2 + k) / sample_rate_hz for k in steps]
        # fringes have a steady analytic-signal envelope; noise alone has a Rayleigh-distributed
        # one (coefficient of variation √(4/π − 1) ≈ 0.52): such a stretch holds no fringes
        env = env[~slow]
        if not env.size or np.std(env) > MAX_ENVELOPE_VARIATION * np.mean(env):
            noisy += 1
            continue
        # direction: flips at every slow stretch (turnaround); slow samples are not used
        sign = np.ones(psi.size)
        s = 1.0
        pos = 0
        for s0, s1 in _runs(slow):
            turn = s0 + int(np.argmin(rate_s[s0:s1]))  # turnaround: slowest fringe rate
            sign[pos:turn] = s
            s = -s
            pos = turn
        sign[pos:] = s
        # build x continuous across turnarounds: integrate signed phase increments
        dpsi = np.diff(psi, prepend=psi[0])
        xs = np.cumsum(sign * dpsi)
        if smooth:
            # The analytic-signal phase of a normalised single channel carries an error at the
            # fringe frequency (imperfect offset/amplitude tracking); a Gaussian low-pass of one
            # fringe period (transfer exp(-2π²) ≈ 3e-9 at the fringe rate) removes it while
            # following mirror motion far slower than the fringes. It runs over the whole
            # stretch, turnarounds included, so the sweeps' ends are not distorted. A Gaussian
            # alone shifts a curved path by σ²x''/2 (a scale error of a few 1e-7 per sweep);
            # applied as 2G − G·G ("twicing", Tukey 1977) that bias is O(σ⁴), and the stretch
            # is extended by point reflection so that its ends keep their slope.
            pad = min(int(4 * period) + 1, xs.size - 1)
            xp = np.pad(xs, pad, mode="reflect", reflect_type="odd")
            g = gaussian_filter1d(xp, period, mode="nearest")
            xs = (2 * g - gaussian_filter1d(g, period, mode="nearest"))[pad : pad + xs.size]
        xs[slow] = np.nan
        x[a2:b2] = xs * lam_cm / (2 * np.pi)
        fast_runs = [(a2 + p0, a2 + p1) for p0, p1 in _runs(~slow) if p1 - p0 >= 64]
        seg_runs += fast_runs
        # a new segment after every abrupt step: count the steps before each stretch
        seg_ids += [n_ids + sum(a2 + k < r0 for k in steps) for r0, _ in fast_runs]
        n_ids += len(steps) + 1
    if noisy:
        msg = (
            f"{noisy} stretch(es) of the reference channel show noise, not fringes (the analytic "
            f"signal's envelope varies by more than {MAX_ENVELOPE_VARIATION:.0%}): is the mirror "
            "moving and the reference laser on?"
        )
        if not seg_runs:
            raise AnalysisError(f"no fringes found on the reference channel: {msg}")
        warnings.append(msg + " They were not used.")
    if abrupt:
        warnings.append(abrupt_steps_note(abrupt))
    sweeps = _split_sweeps(x, seg_runs, sample_rate_hz, lam_cm, segment_ids=seg_ids)
    _check_sweeps(sweeps, OpdKind.SINGLE)
    sweeps, note = drop_suspect_sweeps(sweeps)
    if note:
        warnings.append(note)
    return OpticalPath(
        opd_cm=x,
        kind=OpdKind.SINGLE,
        sweeps=tuple(sweeps),
        ellipse_residual=None,
        fringe_slips=slips,
        dropouts=max(len(runs) - 1, 0),
        warnings=tuple(warnings),
    )


def opd_from_position(
    position_m: np.ndarray, sample_rate_hz: float, *, smooth: bool = True
) -> OpticalPath:
    """Geometric OPD = 2 × mirror position (cm) from an encoder column in metres.

    The index of air is applied later (:func:`ftsource.physics.air.correct_dispersion` with a unit
    reference index).
    """
    p = np.asarray(position_m, float)
    x = OPD_PER_MIRROR_TRAVEL * p * 100.0
    if not np.ptp(x) > 0:
        raise AnalysisError("the position column does not change: the mirror did not move")
    if smooth:
        from scipy.signal import savgol_filter

        w = _odd(max(int(sample_rate_hz * 2e-4), 5))
        if x.size > w:
            x = savgol_filter(x, w, 3, mode="interp")
    runs = [(0, x.size)]
    # sweeps are told apart by a nominal fringe of travel, as for a He-Ne reference
    sweeps = _split_sweeps(x, runs, sample_rate_hz, HENE_VACUUM_WAVELENGTH_NM * 1e-7)
    _check_sweeps(sweeps, OpdKind.ENCODER)
    return OpticalPath(x, OpdKind.ENCODER, tuple(sweeps), None, 0, 0, ())


def opd_from_constant_speed(n_samples: int, sample_rate_hz: float, mirror_speed_m_s: float):
    """OPD for an assumed constant mirror speed (no reference): x = 2·v·t, one sweep."""
    t = np.arange(n_samples) / sample_rate_hz
    v = OPD_PER_MIRROR_TRAVEL * mirror_speed_m_s * 100.0
    x = v * t
    sw = Sweep(0, 0, n_samples, 1 if v > 0 else -1, 0, float(abs(x[-1] - x[0])), abs(v), abs(v))
    msg = (
        "no reference: the OPD scale assumes a constant mirror speed of "
        f"{mirror_speed_m_s * 1e3:g} mm/s; every wavelength is only as good as that speed and "
        "any speed variation broadens and shifts the lines"
    )
    return OpticalPath(x, OpdKind.CONSTANT_SPEED, (sw,), None, 0, 0, (msg,))


def sweep_speed_at(path, sweep, sample_rate_hz: float, x_cm, *, smooth_s: float = 1e-3):
    """Local OPD speed |dx/dt| (cm/s) of one sweep at OPD values ``x_cm``.

    The speed is the gradient of the sweep's own OPD (``path.opd_cm[sweep.start:sweep.stop]``)
    times the sample rate, smoothed by a running mean of ``smooth_s`` (1 ms by default, the
    window :mod:`ftsource.interferogram.opd` uses to find sweeps), and interpolated linearly in OPD.

    Parameters
    ----------
    path : ftsource.interferogram.opd.OpticalPath
        The OPD of the whole record.
    sweep : ftsource.interferogram.opd.Sweep
        The sweep (its ``start``/``stop``/``direction``).
    sample_rate_hz : float
        Sample rate of the record.
    x_cm : float or array_like
        Where to evaluate the speed (OPD, cm); values outside the sweep take the end speed.

    Returns
    -------
    float or ndarray
        Speed in cm/s of OPD, positive.

    References
    ----------
    .. [1] Common practice: speed as the smoothed finite difference of the position.
    """
    from scipy.ndimage import uniform_filter1d

    x = np.asarray(path.opd_cm[sweep.start : sweep.stop], float)
    good = np.isfinite(x)
    x = x[good]
    if x.size < 4:
        raise OptionError(f"sweep {sweep.index} has fewer than 4 samples with a known OPD")
    v = np.abs(np.gradient(x)) * sample_rate_hz
    v = uniform_filter1d(v, max(int(round(smooth_s * sample_rate_hz)), 1), mode="nearest")
    if sweep.direction < 0:
        x, v = x[::-1], v[::-1]
    keep = np.concatenate([[True], np.diff(x) > 0])
    keep &= x >= np.maximum.accumulate(x)
    out = np.interp(np.asarray(x_cm, float), x[keep], v[keep])
    return float(out) if np.ndim(x_cm) == 0 else out
