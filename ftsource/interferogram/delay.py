"""The source channel's delay against the reference, from forward and backward sweeps.

A time delay ``τ`` between the source channel and the reference channel (a multiplexed ADC
that converts the channels one after the other, amplifiers of unequal bandwidth, the AC
coupling of a sound card) makes the source sample taken at instant ``t`` belong to the mirror
position of instant ``t − τ``. The reference gives that sample the OPD ``x(t)``, but the light
saw ``x(t − τ) ≈ x(t) − v·τ`` (``v = dx/dt``, signed). On the resampled grid every feature of
the source interferogram therefore appears displaced by ``+v·τ``: by ``+|v|τ`` in forward
sweeps (``direction = +1``) and by ``−|v|τ`` in backward sweeps. Co-adding the two kinds smears
the centre burst and the line phases; a single direction carries a constant phase slope. For a
signal that is *late* (``τ > 0``, the convention of ``simulate.Detector.delay_s``):

* ZPD found in a forward sweep lies ``2|v|τ`` further than in a backward sweep
  (``x_zpd(fwd) − x_zpd(bwd) = +(|v_f| + |v_b|)·τ``);
* the phase of a line of wavenumber ``σ`` at a common OPD origin is ``ψ₀ − 2πσ·v·τ``, so
  forward minus backward is ``−2πσ(|v_f| + |v_b|)τ`` (mod 2π).

Found before the transform (the analysis then resamples the shifted signal); the sweeps'
comparison after line finding lives in :mod:`ftsource.lines.sweeps`.

Functions here are pure: they take resampled sweeps
(:class:`ftsource.interferogram.resample.Interferogram`) and return small frozen dataclasses.

Kernel units: OPD in cm, wavenumber in cm⁻¹, time in s, speed in cm/s of OPD.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ftsource.errors import OptionError
from ftsource.interferogram.opd import sweep_speed_at
from ftsource.interferogram.resample import Interferogram

__all__ = [
    "DelayEstimate",
    "estimate_channel_delay",
    "correct_channel_delay",
    "shift_time_for_delay",
]

#: A second delay candidate (phase method) is excluded when its χ² exceeds the best one's by
#: more than this (25 = a 5σ difference for one parameter, common practice).
DELTA_CHI2_EXCLUDE = 25.0
#: Without ``max_delay_s`` the phase method looks this many ambiguity periods either side.
PHASE_SEARCH_PERIODS = 20


# --------------------------------------------------------------------------------------------
# result types


@dataclass(frozen=True)
class DelayEstimate:
    """The signal-to-reference delay found from forward and backward sweeps.

    Attributes
    ----------
    delay_s : float
        ``τ`` in s; positive when the source signal is late relative to the reference (NaN when
        not ``ok``).
    u_delay_s : float
        Standard uncertainty of ``delay_s`` (NaN when it cannot be estimated, see ``reason``).
    n_forward, n_backward : int
        Sweeps of each direction that entered the estimate.
    method : str
        ``"zpd"`` or ``"phase"``.
    ok : bool
        True when ``delay_s`` is usable.
    reason : str
        Why not ``ok``; when ``ok`` an optional note (e.g. the uncertainty could not be found).
    speed : str
        Which speed entered the model: ``"local"`` (from the OPD of each sweep at the point that
        was measured) or ``"mean"`` (each sweep's mean speed).
    ambiguity_period_s : float
        Phase method: the delay is known from the phases only modulo this period (NaN for zpd).
    """

    delay_s: float
    u_delay_s: float
    n_forward: int
    n_backward: int
    method: str
    ok: bool
    reason: str
    speed: str = "mean"
    ambiguity_period_s: float = float("nan")


# --------------------------------------------------------------------------------------------
# helpers


def _norm_sweeps(sweeps) -> list[tuple[Interferogram, int, float]]:
    """Accept ``Interferogram`` or ``(Interferogram, direction, speed)`` items."""
    out = []
    for k, item in enumerate(sweeps):
        if isinstance(item, Interferogram):
            ifg, d, v = item, item.sweep.direction, item.sweep.mean_speed_cm_s
        else:
            try:
                ifg, d, v = item
            except (TypeError, ValueError):
                raise OptionError(
                    f"sweeps[{k}] must be an Interferogram or a tuple (Interferogram, direction, "
                    f"mean_speed_cm_s), got {type(item).__name__}"
                ) from None
        if d not in (1, -1):
            raise OptionError(f"sweeps[{k}]: direction must be +1 or -1, got {d!r}")
        v = abs(float(v))
        if not (np.isfinite(v) and v > 0):
            raise OptionError(f"sweeps[{k}]: the speed must be finite and non-zero, got {v!r}")
        out.append((ifg, int(d), v))
    return out


def _wrap(a):
    return (np.asarray(a, float) + np.pi) % (2 * np.pi) - np.pi


def _speed(ifg, v_mean, path, fs, x):
    """Local speed at ``x`` when the path is known, else the mean speed."""
    if path is None:
        return v_mean if np.ndim(x) == 0 else np.full(np.shape(x), v_mean)
    return sweep_speed_at(path, ifg.sweep, fs, x)


def _check_path(path, sample_rate_hz):
    if path is not None and not (sample_rate_hz is not None and sample_rate_hz > 0):
        raise OptionError(
            f"sample_rate_hz must be a positive rate when path is given, got {sample_rate_hz!r}"
        )


def _fail(method, reason, nf=0, nb=0, speed="mean", period=float("nan")):
    nan = float("nan")
    return DelayEstimate(nan, nan, nf, nb, method, False, reason, speed, float(period))

# --------------------------------------------------------------------------------------------
# delay


def estimate_channel_delay(
    sweeps,
    *,
    method: str = "zpd",
    path=None,
    sample_rate_hz: float | None = None,
    max_delay_s: float | None = None,
) -> DelayEstimate:
    """Estimate the delay of the source channel relative to the reference channel.

    Parameters
    ----------
    sweeps : sequence
        Resampled sweeps: :class:`~ftsource.interferogram.resample.Interferogram` items
        (direction and mean speed taken from ``ifg.sweep``) or tuples ``(Interferogram,
        direction, mean_speed_cm_s)``. Sweeps of the same ``ifg.sweep.segment`` share their
        OPD origin; each segment gets its own origin in the fit.
    method : {"zpd", "phase"}
        ``zpd`` for broad sources with a centre burst: the ZPD of every sweep
        (:func:`ftsource.interferogram.zpd.find_zpd`) is fitted by linear least squares with
        ``x_zpd,i = x₀(segment) + dᵢ·|vᵢ|·τ``. ``phase`` for narrow lines: the phase ``ψᵢ`` of
        the strongest line at a common OPD origin of each segment is fitted with
        ``ψᵢ = ψ₀(segment) − 2πσ₀·dᵢ·|vᵢ|·τ (mod 2π)``.
    path : ftsource.interferogram.opd.OpticalPath, optional
        With ``sample_rate_hz``: each sweep's speed is taken where it was measured (at its ZPD,
        or averaged over the phase window) from the sweep's own OPD against time
        (:func:`ftsource.interferogram.opd.sweep_speed_at`). Without it, the sweep's mean
        speed is used, which includes the slow ends of the sweep and so underestimates the
        speed at the centre by a few per cent for a rounded triangle scan; the delay then
        comes out too large by as much.
    sample_rate_hz : float, optional
        Needed with ``path``.
    max_delay_s : float, optional
        Phase method: a bound on ``|τ|`` known from the hardware. The phases fix ``τ`` only
        modulo ``T = 1/(σ₀(|v_f| + |v_b|))``. Candidates ``τ + kT`` within the bound (or within
        :data:`PHASE_SEARCH_PERIODS` periods without one) are each fitted; the result is
        ``ok`` only when one candidate fits better than every other by
        :data:`DELTA_CHI2_EXCLUDE` in χ² (possible without a bound only when the sweeps' speeds
        differ enough), or when the bound leaves a single candidate (``max_delay_s < T/2``).

    Returns
    -------
    DelayEstimate
        ``ok=False`` with a reason when no segment holds sweeps of both directions, when too
        few sweeps give a ZPD or a line phase, or when the phase ambiguity cannot be resolved.
        The uncertainty is the least-squares one from the residual scatter (or, for the
        phase method, from each sweep's phase uncertainty scaled by the Birge ratio when
        that exceeds 1); with no residual degree of freedom it is NaN and ``reason`` says so.

    Notes
    -----
    The model is linear in ``v·τ``: exact for a delay short against the time the speed takes
    to change. Sign convention as :attr:`ftsource.simulate.Detector.delay_s` (the signal is
    evaluated at the mirror position of ``t − τ``).

    References
    ----------
    .. [1] Common practice: a channel delay displaces the interferogram by ``v·τ`` in opposite
       directions in forward and backward sweeps.
    .. [2] R. T. Birge, Phys. Rev. 40, 207 (1932) (the ratio of external to internal
       uncertainty).
    """
    if method not in ("zpd", "phase"):
        raise OptionError(f"method must be 'zpd' or 'phase', got {method!r}")
    if max_delay_s is not None and not (np.isfinite(max_delay_s) and max_delay_s > 0):
        raise OptionError(f"max_delay_s must be positive and finite, got {max_delay_s!r}")
    _check_path(path, sample_rate_hz)
    items = _norm_sweeps(sweeps)
    speed = "local" if path is not None else "mean"
    nf = sum(1 for _, d, _ in items if d > 0)
    nb = len(items) - nf
    if nf == 0 or nb == 0:
        return _fail(
            method,
            f"the delay needs sweeps of both directions; got {nf} forward and {nb} backward",
            nf,
            nb,
            speed,
        )
    if method == "zpd":
        return _delay_from_zpd(items, path, sample_rate_hz, speed)
    return _delay_from_phase(items, path, sample_rate_hz, speed, max_delay_s)


def _usable_segments(seg, d):
    """Segments that hold sweeps of both directions."""
    pairs = list(zip(seg, d, strict=True))
    return sorted(s for s in set(seg) if {1, -1} <= {dd for ss, dd in pairs if ss == s})


def _delay_from_zpd(items, path, fs, speed):
    from ftsource.interferogram.zpd import find_zpd

    rows = []
    for ifg, d, v in items:
        z = find_zpd(ifg.x_cm, ifg.y)
        if not z.found:
            continue
        vz = _speed(ifg, v, path, fs, z.x_zpd_cm)
        rows.append((ifg.sweep.segment, d, vz, z.x_zpd_cm))
    if not rows:
        return _fail("zpd", "no sweep holds a centre burst (ZPD); use method='phase'", 0, 0, speed)
    seg = [r[0] for r in rows]
    dirs = [r[1] for r in rows]
    segs = _usable_segments(seg, dirs)
    used = [r for r in rows if r[0] in segs]
    nf = sum(1 for r in used if r[1] > 0)
    nb = len(used) - nf
    if not segs:
        nf_all = sum(1 for r in rows if r[1] > 0)
        return _fail(
            "zpd",
            f"ZPD was found in {nf_all} forward and {len(rows) - nf_all} backward sweeps, but no "
            "stretch of continuous reference (segment) holds both directions",
            nf_all,
            len(rows) - nf_all,
            speed,
        )
    n, p = len(used), len(segs) + 1
    a = np.zeros((n, p))
    b = np.zeros(n)
    for i, (s, d, vz, xz) in enumerate(used):
        a[i, segs.index(s)] = 1.0
        a[i, -1] = d * vz
        b[i] = xz
    # scale the τ column so the normal matrix is well conditioned
    scale = float(np.max(np.abs(a[:, -1])))
    a[:, -1] /= scale
    coef, *_ = np.linalg.lstsq(a, b, rcond=None)
    tau = coef[-1] / scale
    dof = n - p
    if dof < 1:
        return DelayEstimate(
            float(tau),
            float("nan"),
            nf,
            nb,
            "zpd",
            True,
            "only one sweep of each direction: no residual scatter to give an uncertainty",
            speed,
        )
    res = b - a @ coef
    s2 = float(res @ res) / dof
    cov = s2 * np.linalg.inv(a.T @ a)
    u = float(np.sqrt(cov[-1, -1])) / scale
    return DelayEstimate(float(tau), u, nf, nb, "zpd", True, "", speed)


def _strongest_line(ifgs) -> float:
    """Wavenumber of the strongest line: peak of the mean Hann-windowed magnitude spectrum,
    refined by a parabola through the logarithms of the three top bins (exact for a Gaussian
    peak; common practice). Four sweeps spread over the record are enough to name the line
    (the phase fits that use it take every sweep)."""
    dx = ifgs[0].dx_cm
    ifgs = list(ifgs)[:: max(1, len(ifgs) // 4)][:4]
    n = max(g.y.size for g in ifgs)
    m = 1 << int(np.ceil(np.log2(4 * n)))
    acc = np.zeros(m // 2 + 1)
    for g in ifgs:
        acc += np.abs(np.fft.rfft(g.y * np.hanning(g.y.size), m))
    lo = int(np.ceil(4 * m / n))  # skip what is left of the DC level
    k = lo + int(np.argmax(acc[lo:-1]))
    la, lb, lc = np.log(np.maximum(acc[k - 1 : k + 2], np.finfo(float).tiny))
    den = la - 2 * lb + lc
    off = 0.5 * (la - lc) / den if den < 0 else 0.0
    return float((k + off) / (m * dx))


def _line_phase(ifg, sigma0, xc, h):
    """Phase ψ (rad) and its uncertainty of ``A cos(2πσ₀(x − x_c) + ψ)`` fitted by linear least
    squares over ``|x − x_c| ≤ h``; returns (ψ, u_ψ, x used)."""
    # the grid x0 + k·dx increases: |x − x_c| ≤ h is one slice (found without building x)
    k0 = max(int(np.ceil((xc - h - ifg.x0_cm) / ifg.dx_cm)) - 1, 0)
    k1 = min(int(np.floor((xc + h - ifg.x0_cm) / ifg.dx_cm)) + 2, ifg.y.size)
    xs = ifg.x0_cm + ifg.dx_cm * np.arange(k0, max(k1, k0))
    keep = np.abs(xs - xc) <= h  # one sample of margin each side: the comparison decides
    xs, ys = xs[keep], ifg.y[k0 : max(k1, k0)][keep]
    th = 2 * np.pi * sigma0 * (xs - xc)
    a = np.column_stack([np.cos(th), np.sin(th), np.ones_like(th)])
    coef, *_ = np.linalg.lstsq(a, ys, rcond=None)
    amp = float(np.hypot(coef[0], coef[1]))
    res = ys - a @ coef
    r = float(np.sqrt(res @ res / max(ys.size - 3, 1)))
    psi = float(np.arctan2(-coef[1], coef[0]))
    # closed form for a sinusoid fitted in white noise: var(ψ) = 2 r² / (N A²)
    u = r / amp * np.sqrt(2.0 / ys.size) if amp > 0 else np.inf
    return psi, float(u), xs


def _delay_from_phase(items, path, fs, speed, max_delay):
    segs = _usable_segments([g.sweep.segment for g, _, _ in items], [d for _, d, _ in items])
    if not segs:
        return _fail(
            "phase",
            "no stretch of continuous reference (segment) holds sweeps of both directions",
            0,
            0,
            speed,
        )
    sigma0 = _strongest_line([g for g, _, _ in items])
    rows = []  # (segment, direction, speed, psi, u_psi)
    for s in segs:
        group = [(g, d, v) for g, d, v in items if g.sweep.segment == s]
        xc = float(np.median([g.x0_cm + 0.5 * g.span_cm for g, _, _ in group]))
        hs = np.array([min(xc - g.x0_cm, g.x0_cm + g.span_cm - xc) for g, _, _ in group])
        # sweeps that cover at least half the best half-width about x_c share one window
        use = hs >= 0.5 * hs.max()
        h = float(hs[use].min())
        if h < 32 * group[0][0].dx_cm:
            continue
        for (g, d, v), ok in zip(group, use, strict=True):
            if not ok:
                continue
            psi, u, xs = _line_phase(g, sigma0, xc, h)
            vv = float(np.mean(_speed(g, v, path, fs, xs)))
            rows.append((s, d, vv, psi, u))
    seg = [r[0] for r in rows]
    segs = _usable_segments(seg, [r[1] for r in rows])
    rows = [r for r in rows if r[0] in segs]
    nf = sum(1 for r in rows if r[1] > 0)
    nb = len(rows) - nf
    if not segs:
        return _fail(
            "phase",
            "no segment has a common OPD window covered by sweeps of both directions",
            nf,
            nb,
            speed,
        )
    d = np.array([r[1] for r in rows], float)
    v = np.array([r[2] for r in rows])
    psi = np.array([r[3] for r in rows])
    u = np.array([r[4] for r in rows])
    if not np.all(np.isfinite(u)):
        return _fail("phase", "a sweep shows no line to take a phase from", nf, nb, speed)
    sidx = np.array([segs.index(r[0]) for r in rows])
    c = 2 * np.pi * sigma0 * d * v  # dψ/dτ = −c
    period = 1.0 / (sigma0 * (np.mean(v[d > 0]) + np.mean(v[d < 0])))

    def fit(tau0):
        """Weighted LS for (ψ₀ per segment, τ) with the phases unwrapped about the model at
        τ0; two Gauss–Newton passes."""
        tau = tau0
        for _ in range(3):
            z = psi + c * tau
            psi0 = np.array([np.angle(np.sum(np.exp(1j * z[sidx == k]))) for k in range(len(segs))])
            unwrapped = psi0[sidx] - c * tau + _wrap(psi - (psi0[sidx] - c * tau))
            a = np.zeros((psi.size, len(segs) + 1))
            a[np.arange(psi.size), sidx] = 1.0
            a[:, -1] = -c
            w = 1.0 / u
            coef, *_ = np.linalg.lstsq(a * w[:, None], unwrapped * w, rcond=None)
            tau = float(coef[-1])
        res = (unwrapped - a @ coef) / u
        cov = np.linalg.inv((a * w[:, None]).T @ (a * w[:, None]))
        return tau, float(res @ res), float(np.sqrt(cov[-1, -1]))

    # principal value from the segment with the most sweeps
    k0 = np.bincount(sidx).argmax()
    m0 = sidx == k0
    df = np.angle(np.mean(np.exp(1j * psi[m0 & (d > 0)])) / np.mean(np.exp(1j * psi[m0 & (d < 0)])))
    tau_p = -df / (2 * np.pi * sigma0 * (np.mean(v[m0 & (d > 0)]) + np.mean(v[m0 & (d < 0)])))
    kmax = PHASE_SEARCH_PERIODS if max_delay is None else int(np.ceil(max_delay / period)) + 1
    cands = []
    for k in range(-kmax, kmax + 1):
        t, chi2, ut = fit(tau_p + k * period)
        if max_delay is not None and abs(t) > max_delay:
            continue
        cands.append((chi2, t, ut))
    if not cands:
        return _fail(
            "phase",
            f"no delay candidate lies within max_delay_s = {max_delay:g} s",
            nf,
            nb,
            speed,
            period,
        )
    cands.sort()
    dof = psi.size - len(segs) - 1
    chi2_best, tau, ut = cands[0]
    birge2 = chi2_best / dof if dof >= 1 else 1.0
    scale = max(birge2, 1.0)
    rivals = [t for c2, t, _ in cands[1:] if (c2 - chi2_best) / scale < DELTA_CHI2_EXCLUDE]
    if rivals:
        alike = sorted([tau, *rivals], key=abs)
        tau, near = alike[0], alike[1:3]
        return _fail(
            "phase",
            f"the line phases fix the delay only modulo T = {period:.4g} s and the sweeps' speeds "
            f"are too alike to tell {tau:.4g} s from {', '.join(f'{t:.4g} s' for t in near)}; "
            f"give max_delay_s below T/2 = {period / 2:.4g} s if the hardware bounds the delay, "
            "or use method='zpd' with a source that has a centre burst",
            nf,
            nb,
            speed,
            period,
        )
    ut = ut * np.sqrt(scale)
    note = "" if dof >= 1 else "no residual degree of freedom: uncertainty from phase noise only"
    return DelayEstimate(float(tau), float(ut), nf, nb, "phase", True, note, speed, float(period))


def correct_channel_delay(
    sweeps,
    delay_s: float,
    *,
    path=None,
    sample_rate_hz: float | None = None,
    at_opd_cm: float | None = None,
) -> tuple[Interferogram, ...]:
    """Undo a channel delay by shifting each sweep's OPD axis.

    The sample at grid point ``x`` saw the light of OPD ``x − d·|v|·τ``, so the corrected
    axis is ``x0_cm − d·|v|·τ`` (the grid step is unchanged; the grid is no longer on
    multiples of ``dx_cm``).

    Parameters
    ----------
    sweeps : sequence
        As for :func:`estimate_channel_delay`.
    delay_s : float
        ``τ`` (e.g. ``estimate_channel_delay(...).delay_s``).
    path, sample_rate_hz : optional
        With both, the speed is the sweep's local speed at ``at_opd_cm`` when given (e.g. the
        ZPD, to make the correction exact there), otherwise its mean over the sweep's grid.
        Without them, the sweep's mean speed.
    at_opd_cm : float, optional
        Where the correction should be exact.

    Returns
    -------
    tuple of Interferogram
        Copies with ``x0_cm`` shifted; ``y`` is shared (not copied, not modified).

    Notes
    -----
    One shift per sweep is exact only at constant speed. Where the speed changes along the
    sweep, the residual displacement is ``d·(|v(x)| − |v̄|)·τ``; to remove it everywhere apply
    :func:`shift_time_for_delay` to the signal and resample again.

    References
    ----------
    .. [1] Common practice (see :func:`estimate_channel_delay`).
    """
    if not np.isfinite(delay_s):
        raise OptionError(f"delay_s must be finite, got {delay_s!r}")
    _check_path(path, sample_rate_hz)
    out = []
    for ifg, d, v in _norm_sweeps(sweeps):
        if path is None:
            vv = v
        elif at_opd_cm is not None:
            vv = float(sweep_speed_at(path, ifg.sweep, sample_rate_hz, at_opd_cm))
        else:
            vv = float(np.mean(sweep_speed_at(path, ifg.sweep, sample_rate_hz, ifg.x_cm)))
        out.append(replace(ifg, x0_cm=ifg.x0_cm - d * vv * delay_s))
    return tuple(out)


def shift_time_for_delay(signal, delay_s: float, sample_rate_hz: float) -> np.ndarray:
    """The source signal moved earlier by ``delay_s``: its value at ``t + τ`` for every sample.

    Feed the result to :func:`ftsource.interferogram.resample.resample_sweeps` in place of the
    signal: every sample then belongs to the mirror position of its own instant, whatever the
    speed. The value between samples comes from the B-spline that the resampling uses
    (Unser 1999), on coefficients with mirror boundaries; the last ``⌈τ·f_s⌉ + 2`` samples
    (the first, for a negative ``τ``) lean on the mirrored boundary and are unreliable.

    Parameters
    ----------
    signal : array_like
        Source channel samples (the whole record).
    delay_s : float
        ``τ``, positive when the source signal is late.
    sample_rate_hz : float
        Sample rate.

    Returns
    -------
    ndarray
        Same length as ``signal``.

    References
    ----------
    .. [1] M. Unser, IEEE Signal Processing Magazine 16(6), 22–38 (1999).
    """

    from ftsource.interferogram.resample import spline_at, spline_coefficients

    if not (sample_rate_hz > 0):
        raise OptionError(f"sample_rate_hz must be positive, got {sample_rate_hz!r}")
    if not np.isfinite(delay_s):
        raise OptionError(f"delay_s must be finite, got {delay_s!r}")
    s = np.asarray(signal, float)
    coeffs = spline_coefficients(s)
    idx = np.arange(s.size, dtype=float) + delay_s * sample_rate_hz
    return spline_at(coeffs, idx)
