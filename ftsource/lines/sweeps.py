"""Forward against backward sweeps: channel timing, outlier sweeps and aliases.

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

Functions here are pure: they take resampled sweeps (:class:`ftsource.interferogram.resample.Interferogram`)
or per-sweep results and return small frozen dataclasses.

Kernel units: OPD in cm, wavenumber in cm⁻¹, time in s, speed in cm/s of OPD.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from ftsource.errors import OptionError
from ftsource.interferogram.resample import Interferogram

__all__ = [
    "DelayEstimate",
    "SweepComparison",
    "LineVerdict",
    "AliasCheck",
    "sweep_speed_at",
    "estimate_channel_delay",
    "correct_channel_delay",
    "shift_time_for_delay",
    "compare_sweeps",
    "aliasing_check",
    "sweep_line_centres",
]

#: A second delay candidate (phase method) is excluded when its χ² exceeds the best one's by
#: more than this (25 = a 5σ difference for one parameter, common practice).
DELTA_CHI2_EXCLUDE = 25.0
#: Without ``max_delay_s`` the phase method looks this many ambiguity periods either side.
PHASE_SEARCH_PERIODS = 20
#: Consistency factor of the MAD for a normal distribution, 1/Φ⁻¹(3/4) (common practice).
MAD_TO_SIGMA = 1.482602218505602


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


@dataclass(frozen=True)
class SweepComparison:
    """Per-sweep results screened for outliers, and forward against backward.

    Attributes
    ----------
    keep : ndarray of bool
        False for a rejected sweep.
    reasons : tuple of str
        One per sweep; empty for a kept sweep.
    forward_mean, backward_mean : float
        Weighted means of the kept sweeps of each direction (NaN when there is none).
    u_forward, u_backward : float
        Their standard uncertainties.
    difference, u_difference : float
        ``forward_mean − backward_mean`` and its standard uncertainty.
    """

    keep: np.ndarray
    reasons: tuple[str, ...]
    forward_mean: float
    backward_mean: float
    difference: float
    u_difference: float
    u_forward: float = float("nan")
    u_backward: float = float("nan")

    @property
    def n_rejected(self) -> int:
        return int(np.size(self.keep) - np.count_nonzero(self.keep))


@dataclass(frozen=True)
class LineVerdict:
    """Whether one spectral line is real or an alias of content beyond the sampling limit.

    ``sigma_per_cm`` is where the line was seen in sweep ``seed_sweep``; ``verdict`` is
    ``"real"``, ``"alias"`` or ``"cannot be excluded"``; for an alias ``true_sigma_per_cm`` and
    ``fold`` give the wavenumber it came from and the fold number m (``σ_app = |σ − m f_s/v|``).
    ``centres_per_cm`` holds the centre matched in every sweep under the verdict's hypothesis
    (NaN where none was matched).
    """

    sigma_per_cm: float
    u_sigma_per_cm: float
    seed_sweep: int
    verdict: str
    reason: str
    true_sigma_per_cm: float = float("nan")
    fold: int = 0
    centres_per_cm: tuple[float, ...] = ()


@dataclass(frozen=True)
class AliasCheck:
    """Per-line verdicts of :func:`aliasing_check` and the speed-diversity criterion."""

    lines: tuple[LineVerdict, ...]
    criterion: str
    relative_speed_spread: float


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
        Resampled sweeps: :class:`~ftsource.interferogram.resample.Interferogram` items (direction and mean
        speed taken from ``ifg.sweep``) or tuples ``(Interferogram, direction,
        mean_speed_cm_s)``. Sweeps of the same ``ifg.sweep.segment`` share their OPD origin;
        each segment gets its own origin in the fit.
    method : {"zpd", "phase"}
        ``zpd`` for broad sources with a centre burst: the ZPD of every sweep
        (:func:`ftsource.interferogram.zpd.find_zpd`) is fitted by linear least squares with
        ``x_zpd,i = x₀(segment) + dᵢ·|vᵢ|·τ``. ``phase`` for narrow lines: the phase ``ψᵢ`` of
        the strongest line at a common OPD origin of each segment is fitted with
        ``ψᵢ = ψ₀(segment) − 2πσ₀·dᵢ·|vᵢ|·τ (mod 2π)``.
    path : ftsource.interferogram.opd.OpticalPath, optional
        With ``sample_rate_hz``: each sweep's speed is taken where it was measured (at its ZPD,
        or averaged over the phase window) from the sweep's own OPD against time
        (:func:`sweep_speed_at`). Without it, the sweep's mean speed is used, which includes
        the slow ends of the sweep and so underestimates the speed at the centre by a few per
        cent for a rounded triangle scan; the delay then comes out too large by as much.
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
    peak; common practice)."""
    dx = ifgs[0].dx_cm
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
    x = ifg.x_cm
    sel = np.abs(x - xc) <= h
    xs, ys = x[sel], ifg.y[sel]
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

    Feed the result to :func:`ftsource.interferogram.resample.resample_sweeps` in place of the signal: every
    sample then belongs to the mirror position of its own instant, whatever the speed. The
    value between samples comes from the cubic B-spline that the resampling uses (Unser 1999),
    on coefficients with mirror boundaries; the last ``⌈τ·f_s⌉ + 2`` samples (the first, for a
    negative ``τ``) lean on the mirrored boundary and are unreliable.

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
    from scipy.ndimage import map_coordinates

    from ftsource.interferogram.resample import _spline_coefficients

    if not (sample_rate_hz > 0):
        raise OptionError(f"sample_rate_hz must be positive, got {sample_rate_hz!r}")
    if not np.isfinite(delay_s):
        raise OptionError(f"delay_s must be finite, got {delay_s!r}")
    s = np.asarray(signal, float)
    coeffs = _spline_coefficients(s)
    idx = np.arange(s.size, dtype=float) + delay_s * sample_rate_hz
    return map_coordinates(coeffs, [idx], order=3, mode="mirror", prefilter=False)


# --------------------------------------------------------------------------------------------
# outlier sweeps


def _weighted_mean(v, u):
    """Weighted mean and its uncertainty: the larger of the internal (from ``u``) and the
    external (from the scatter, Birge) estimates; with no usable ``u`` the standard error."""
    n = v.size
    if n == 0:
        return float("nan"), float("nan")
    if np.all(u > 0):
        w = 1.0 / u**2
        m = float(np.sum(w * v) / np.sum(w))
        internal = float(1.0 / np.sqrt(np.sum(w)))
        if n > 1:
            chi2 = float(np.sum(w * (v - m) ** 2)) / (n - 1)
            return m, internal * max(1.0, np.sqrt(chi2))
        return m, internal
    m = float(np.mean(v))
    return m, float(np.std(v, ddof=1) / np.sqrt(n)) if n > 1 else float("nan")


def compare_sweeps(
    values,
    uncertainties,
    directions,
    *,
    k: float = 3.0,
    label: str = "value",
) -> SweepComparison:
    """Reject outlier sweeps, then compare the forward and backward means.

    Rule (one pass, leave one out). Each sweep ``i`` is compared with the **median of the
    other sweeps of its direction** when both directions have at least 3 sweeps (so a real
    forward/backward difference is not taken for outliers), otherwise with the median of all
    other sweeps. The scale comes from the others too:

    * with uncertainties, and the others' scatter about their median(s) consistent with their
      median uncertainty ``ū`` (χ² per degree of freedom below its 99 % point):
      ``s = sqrt(max(u_i, ū)² + (π/2)·ū²/m)`` (the second term is the variance of a median of
      ``m`` values, π/2 × that of a mean, for normal data), limit ``k``;
    * otherwise (no uncertainties, or a scatter larger than they say): the others' standard
      deviation ``s_o`` about their median(s), ``s = max(u_i, s_o·sqrt(1 + (π/2)/m))``, and the
      limit is the Student-t quantile with the others' degrees of freedom at the two-sided
      probability that ``k`` has for a normal variable (the externally studentised residual,
      so small groups are not over-rejected).

    Leaving the sweep out keeps an outlier from hiding itself; a second outlier among the
    others widens ``s_o`` (masking), so a group with several outliers keeps some. For normal
    data and ``k = 3`` about 1–5 % of clean sets of 6–20 sweeps lose one sweep (Monte Carlo
    with this rule), and an outlier 8 uncertainties off is rejected in > 97 % of sets of 8 or
    more sweeps when uncertainties are given.

    Parameters
    ----------
    values : array_like
        One result per sweep (e.g. a line centre).
    uncertainties : array_like or None
        Their standard uncertainties; ``None`` (or zeros) to rely on the scatter alone.
    directions : array_like
        +1 / −1 per sweep.
    k : float
        Rejection threshold in standard deviations (normal equivalent).
    label : str
        Name of the value in the reasons (e.g. ``"centre"``).

    Returns
    -------
    SweepComparison
        The means are weighted by ``1/u²`` with the larger of the internal and external
        (Birge) uncertainty; without uncertainties, plain means and standard errors.

    References
    ----------
    .. [1] D. A. Belsley, E. Kuh, R. E. Welsch, Regression Diagnostics, Wiley (1980)
       (externally studentised residuals).
    .. [2] Common practice: the weighted mean's uncertainty is the larger of the internal and
       external estimates (Birge ratio; R. T. Birge, Phys. Rev. 40, 207 (1932)).
    """
    from scipy import stats

    v = np.asarray(values, float)
    n = v.size
    u = np.zeros(n) if uncertainties is None else np.asarray(uncertainties, float)
    d = np.asarray(directions)
    if v.ndim != 1 or u.shape != v.shape or d.shape != v.shape:
        raise OptionError(
            f"values, uncertainties and directions must be 1-D of one length, got shapes "
            f"{v.shape}, {u.shape}, {d.shape}"
        )
    if not np.all(np.isin(d, (1, -1))):
        raise OptionError("directions must hold only +1 and -1")
    if not (np.all(np.isfinite(v)) and np.all(np.isfinite(u)) and np.all(u >= 0)):
        raise OptionError("values must be finite and uncertainties finite and non-negative")
    if not (k > 0):
        raise OptionError(f"k must be positive, got {k!r}")
    keep = np.ones(n, bool)
    reasons = [""] * n
    by_dir = min(np.count_nonzero(d > 0), np.count_nonzero(d < 0)) >= 3
    p_two = 2 * stats.norm.sf(k)
    for i in range(n):
        o = np.arange(n) != i
        vo, do, uo = v[o], d[o], u[o]
        ro = vo.copy()
        if by_dir:
            for sgn in (1, -1):
                ro[do == sgn] -= np.median(vo[do == sgn])
            centre = float(np.median(vo[do == d[i]]))
            m, dof = int(np.count_nonzero(do == d[i])), vo.size - 2
        else:
            centre = float(np.median(vo))
            ro -= centre
            m, dof = vo.size, vo.size - 1
        if dof < 2:
            continue
        s_ext = float(np.sqrt(np.sum(ro**2) / dof))
        s_int = float(np.median(uo))
        if s_int > 0 and (s_ext / s_int) ** 2 <= stats.chi2.isf(0.01, dof) / dof:
            s = np.hypot(max(u[i], s_int), s_int * np.sqrt(0.5 * np.pi / m))
            limit = k
        else:
            s = max(u[i], s_ext * np.sqrt(1 + 0.5 * np.pi / m))
            limit = float(stats.t.isf(p_two / 2, dof))
        if not s > 0:
            continue
        z = (v[i] - centre) / s
        if abs(z) > limit:
            keep[i] = False
            grp = (
                "other " + ("forward" if d[i] > 0 else "backward") + " sweeps"
                if by_dir
                else "other sweeps"
            )
            reasons[i] = f"{label} {abs(z):.1f}σ from the median of the {grp} (limit {limit:.3g}σ)"
    fm, uf = _weighted_mean(v[keep & (d > 0)], u[keep & (d > 0)])
    bm, ub = _weighted_mean(v[keep & (d < 0)], u[keep & (d < 0)])
    return SweepComparison(keep, tuple(reasons), fm, bm, fm - bm, float(np.hypot(uf, ub)), uf, ub)


# --------------------------------------------------------------------------------------------
# aliases


def _as_spectra(per_sweep_spectra, sigma_per_cm):
    out = []
    for k, s in enumerate(per_sweep_spectra):
        if isinstance(s, tuple) and len(s) == 2:
            sig, val = s
        else:
            val = getattr(s, "values", s)
            sig = sigma_per_cm
        if sig is None:
            raise OptionError(
                f"per_sweep_spectra[{k}] has no wavenumber axis: pass (sigma, values) pairs or "
                "sigma_per_cm"
            )
        sig = np.asarray(sig, float)
        val = np.asarray(val, float)
        if sig.shape != val.shape or sig.ndim != 1:
            raise OptionError(
                f"per_sweep_spectra[{k}]: axis and values must be 1-D of one length, got "
                f"{sig.shape} and {val.shape}"
            )
        out.append((sig, val))
    return out


def _peaks(sig, val, snr_min, rel_min, resolution):
    """Peaks of one spectrum: (centre, u_centre, height) rows.

    The noise is 1.4826 × the median absolute deviation of the spectrum from its median (most
    points hold no line). A peak is a local maximum higher than ``snr_min`` noise units and
    ``rel_min`` × the strongest peak above the median; local maxima inside the half-height
    region of a stronger peak belong to it. The centre is the centroid over the contiguous
    region above half the peak's height (which follows a broadened or chirped alias too). The
    centre uncertainty is the Cramér–Rao bound for a Gaussian peak of the same FWHM in white
    noise, ``(noise/A)·sqrt(2sδ/√π)`` with ``s = FWHM/2.355`` and δ the spacing of independent
    points (half the resolution when given, else the grid step), floored at a tenth of the
    grid step.
    """
    from scipy.signal import find_peaks

    base = float(np.median(val))
    noise = MAD_TO_SIGMA * float(np.median(np.abs(val - base)))
    noise = max(noise, np.finfo(float).tiny)
    step = float(np.median(np.diff(sig)))
    idx, _ = find_peaks(val, height=base + snr_min * noise)
    if idx.size == 0:
        return np.zeros((0, 3))
    top = float(np.max(val[idx])) - base
    idx = idx[val[idx] - base >= rel_min * top]
    idx = idx[np.argsort(-val[idx])]
    rows, regions = [], []
    for i in idx:
        if any(lo <= i <= hi for lo, hi in regions):
            continue
        a = val[i] - base
        half = base + 0.5 * a
        lo, hi = i, i
        while lo > 0 and val[lo - 1] >= half:
            lo -= 1
        while hi < val.size - 1 and val[hi + 1] >= half:
            hi += 1
        regions.append((lo, hi))
        w = val[lo : hi + 1] - half
        c = float(np.sum(sig[lo : hi + 1] * w) / np.sum(w)) if np.sum(w) > 0 else float(sig[i])
        fwhm = max((hi - lo + 1) * step, step)
        delta = max(step, 0.5 * resolution) if resolution else step
        s = fwhm / (2 * np.sqrt(2 * np.log(2)))
        u = noise / a * np.sqrt(2 * s * delta / np.sqrt(np.pi))
        rows.append((c, max(u, 0.1 * step), a))
    return np.array(rows).reshape(-1, 3)


def _match_chi2(hyp, j, c0, u0, v, fs, rtol, peaks, idx):
    """Mean squared normalised distance of the matched centres from an alias hypothesis."""
    m, st = hyp
    d = []
    for kk, b in enumerate(idx):
        if b < 0 or kk == j:
            continue
        pred = abs(st - m * fs / v[kk])
        u = np.hypot(np.hypot(u0, peaks[kk][b, 1]), m * fs * rtol * np.hypot(1 / v[j], 1 / v[kk]))
        d.append(((peaks[kk][b, 0] - pred) / u) ** 2)
    return float(np.mean(d)) if d else np.inf


def aliasing_check(
    per_sweep_spectra,
    speeds_cm_s,
    sample_rate_hz: float,
    *,
    sigma_per_cm=None,
    snr_min: float = 10.0,
    rel_min: float = 0.3,
    k: float = 3.0,
    speed_rtol: float = 0.01,
    max_fold: int = 2,
    resolution_per_cm: float | None = None,
) -> AliasCheck:
    """Tell real lines from aliases by their behaviour across sweeps of different speeds.

    A fringe of wavenumber σ at OPD speed v has the frequency σv. Above the usable bandwidth
    of the time sampling it folds to ``|σv − m f_s|`` and appears at
    ``σ_app = |σ − m f_s/v|`` (first fold, m = 1: ``σ_app = f_s/v − σ``). A real line stays at
    σ whatever the speed; an alias moves with ``1/v``. Every peak found (strongest first)
    seeds a line; its prediction under "real" (σ_app constant) and under each alias hypothesis
    (``σ = m f_s/v_seed ± σ_seed`` for m = 1 … ``max_fold``) is looked for in every other
    sweep within ``k`` combined standard uncertainties (the two centres' uncertainties plus,
    for an alias, ``m f_s/v · speed_rtol`` for each of the two speeds).

    Verdicts. A sweep *can tell* when the first-fold alias would have moved by more than ``k``
    combined uncertainties between it and the seed sweep (``f_s·|1/v − 1/v_seed|``; higher
    folds move more). ``"real"``: the line is found at its place in every sweep, including at
    least one that can tell (an alias cannot stay put). ``"alias"``: the line is missing from its
    place in a sweep that can tell, and an alias hypothesis is found in every sweep where its
    prediction lies in band (the best-fitting one is reported when several do).
    ``"cannot be excluded"``: no sweep can tell (the speeds are too alike), or the line moves
    but not as an alias of one wavenumber would (e.g. an image that the resampling's
    interpolation makes of a line near the folding frequency), or it is not found consistently.

    Criterion (given in :attr:`AliasCheck.criterion`): two sweeps of speeds ``v_a``, ``v_b``
    tell a line from its m-th alias when ``m f_s |1/v_a − 1/v_b| > k·u_tot``.

    Parameters
    ----------
    per_sweep_spectra : sequence
        Per sweep: a ``(sigma_per_cm, values)`` pair, or values (an array or an object with
        ``.values`` such as :class:`ftsource.spectrum.spectrum.SweepSpectrum`) on ``sigma_per_cm``.
    speeds_cm_s : array_like
        The OPD speed of each sweep, cm/s (where the line's fringes were recorded; the mean
        over the sweep's central part is best).
    sample_rate_hz : float
        Sample rate of the record(s).
    sigma_per_cm : array_like, optional
        Common wavenumber axis when the spectra are bare values.
    snr_min : float
        Peak height over the noise for a line to be checked.
    rel_min : float
        Peak height relative to the strongest peak of the same sweep for a line to be checked
        (keeps sidelobes and the spread-out skirts of an alias out).
    k : float
        Matching threshold in standard uncertainties.
    speed_rtol : float
        Relative uncertainty of each sweep's effective speed (the speed varies along a sweep).
    max_fold : int
        Highest fold number m considered.
    resolution_per_cm : float, optional
        Spectral resolution (sets the spacing of independent points for the centre
        uncertainty of zero-filled spectra).

    Returns
    -------
    AliasCheck

    References
    ----------
    .. [1] H. Nyquist, Trans. AIEE 47, 617 (1928); C. E. Shannon, Proc. IRE 37, 10 (1949)
       (folding of frequencies above half the sample rate).
    .. [2] H. Cramér, Mathematical Methods of Statistics (1946); C. R. Rao, Bull. Calcutta Math.
       Soc. 37, 81 (1945) (the bound used for the centre uncertainty).
    """
    spectra = _as_spectra(per_sweep_spectra, sigma_per_cm)
    v = np.abs(np.asarray(speeds_cm_s, float))
    if v.shape != (len(spectra),) or not np.all(np.isfinite(v) & (v > 0)):
        raise OptionError(
            f"speeds_cm_s must give one positive speed per sweep ({len(spectra)}), got {v!r}"
        )
    if not (sample_rate_hz > 0):
        raise OptionError(f"sample_rate_hz must be positive, got {sample_rate_hz!r}")
    fs = float(sample_rate_hz)
    spread = float(np.ptp(v) / np.median(v)) if v.size else 0.0
    peaks = [_peaks(sg, vl, snr_min, rel_min, resolution_per_cm) for sg, vl in spectra]
    used = [np.zeros(len(p), bool) for p in peaks]
    order = sorted(
        ((j, q) for j in range(len(peaks)) for q in range(len(peaks[j]))),
        key=lambda jq: -peaks[jq[0]][jq[1], 2],
    )
    lines = []
    n_sw = len(peaks)
    for j, q in order:
        if used[j][q]:
            continue
        c0, u0, _ = peaks[j][q]
        hyps = [(0, c0)]  # (fold m, true σ); m = 0 is "real"
        for m in range(1, max_fold + 1):
            hyps += [(m, st) for st in (m * fs / v[j] - c0, m * fs / v[j] + c0) if st > 0]
        status, matched = [], []
        for m, st in hyps:
            stat = ["seed" if kk == j else "" for kk in range(n_sw)]
            idx = [q if kk == j else -1 for kk in range(n_sw)]
            for kk in range(n_sw):
                if kk == j:
                    continue
                pred = abs(st - m * fs / v[kk])  # σ_app = |σ − m f_s/v|; m = 0: σ itself
                u_pred = np.hypot(u0, m * fs * speed_rtol * np.hypot(1 / v[j], 1 / v[kk]))
                sig = spectra[kk][0]
                if not (sig[0] < pred < sig[-1]):
                    stat[kk] = "out of band"
                    continue
                pk = peaks[kk]
                dist = np.abs(pk[:, 0] - pred) / np.hypot(pk[:, 1], u_pred) if pk.size else []
                if len(dist) and np.min(dist) <= k:
                    stat[kk] = "match"
                    idx[kk] = int(np.argmin(dist))
                else:
                    stat[kk] = "miss"
            status.append(stat)
            matched.append(idx)
        # sweeps that can tell the line from its first-fold alias (higher folds move more)
        tell = []
        for kk in range(n_sw):
            diff = fs * abs(1 / v[kk] - 1 / v[j])
            u_tot = np.hypot(np.sqrt(2) * u0, fs * speed_rtol * np.hypot(1 / v[j], 1 / v[kk]))
            tell.append(kk != j and diff > k * u_tot)
        real = status[0]
        pick, tsig, fold = 0, float("nan"), 0
        if not any(tell):
            verdict = "cannot be excluded"
            why = (
                f"the sweeps' speeds (spread {100 * spread:.3g} %) are too alike for their "
                f"±{100 * speed_rtol:.2g} % speed uncertainty: an alias would move by less "
                f"than {k:g} uncertainties"
            )
        elif "miss" not in real and any(
            t and r == "match" for t, r in zip(tell, real, strict=True)
        ):
            verdict = "real"
            why = "stays put in sweeps of speeds different enough to move an alias"
        elif any(t and r == "miss" for t, r in zip(tell, real, strict=True)):
            ok = [
                h
                for h in range(1, len(hyps))
                if "miss" not in status[h]
                and any(t and st == "match" for t, st in zip(tell, status[h], strict=True))
            ]
            if ok:
                pick = min(
                    ok,
                    key=lambda h: _match_chi2(
                        hyps[h], j, c0, u0, v, fs, speed_rtol, peaks, matched[h]
                    ),
                )
                fold, tsig = hyps[pick]
                verdict = "alias"
                why = (
                    f"absent from its place in sweeps of other speeds and found where an alias "
                    f"(fold m = {fold}) of {tsig:.6g} cm⁻¹ (= {1e7 / tsig:.5g} nm) would be"
                )
            else:
                verdict = "cannot be excluded"
                why = "moves between sweeps, but not as an alias of one wavenumber would"
        else:
            verdict = "cannot be excluded"
            why = "the line is not found consistently in the sweeps that could tell"
        for kk, bb in enumerate(matched[pick]):
            if bb >= 0:
                used[kk][bb] = True
        centres = tuple(
            float(peaks[kk][bb, 0]) if bb >= 0 else float("nan")
            for kk, bb in enumerate(matched[pick])
        )
        lines.append(
            LineVerdict(float(c0), float(u0), int(j), verdict, why, float(tsig), int(fold), centres)
        )
    crit = (
        f"two sweeps of speeds v_a, v_b tell a line from its m-th alias when "
        f"m·f_s·|1/v_a − 1/v_b| > {k:g}·u_tot (u_tot: both centres' uncertainties and "
        f"m·f_s/v·{speed_rtol:g} for each speed); f_s = {fs:g} Hz, relative speed spread "
        f"{100 * spread:.3g} %"
    )
    return AliasCheck(tuple(lines), crit, spread)


def sweep_line_centres(spectrum, sweep_spectra, sigma_per_cm: float, *, cache=None):
    """Each sweep's own fitted centre of the line near ``sigma_per_cm``.

    Every sweep's spectrum alone (:func:`ftsource.spectrum.spectrum.coadd` of that sweep, on
    ``spectrum``'s axis and apodization) is fitted with a Gaussian profile convolved with its
    line shape (:func:`ftsource.lines.fitting.fit_line`).

    Parameters
    ----------
    spectrum : ftsource.spectrum.spectrum.Spectrum
        The co-added spectrum (gives the axis and apodization).
    sweep_spectra : sequence of ftsource.spectrum.spectrum.SweepSpectrum
    sigma_per_cm : float
        Where the line is.
    cache : dict, optional
        An explicit cache the caller owns, ``(sweep_index, sigma_per_cm) → (centre, u)``, so
        two stages asking about the same line and sweeps fit each sweep once.

    Returns
    -------
    list of (int, float, float)
        ``(sweep_index, centre_per_cm, u_centre_per_cm)`` for the sweeps whose fit succeeded
        with a finite positive uncertainty, in the order given.
    """
    from ftsource.lines.fitting import fit_line
    from ftsource.spectrum.spectrum import coadd

    out = []
    for sw in sweep_spectra:
        key = (sw.sweep_index, float(sigma_per_cm))
        hit = None if cache is None else cache.get(key)
        if hit is None:
            one = coadd([sw], spectrum.sigma_per_cm, spectrum.line_shape.apodization)
            f = fit_line(one, sigma_per_cm, profile="gaussian")
            ok = f.success and np.isfinite(f.u_centre_per_cm) and f.u_centre_per_cm > 0
            hit = (f.centre_per_cm, f.u_centre_per_cm) if ok else (np.nan, np.nan)
            if cache is not None:
                cache[key] = hit
        if np.isfinite(hit[1]):
            out.append((sw.sweep_index, float(hit[0]), float(hit[1])))
    return out
