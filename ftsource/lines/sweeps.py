"""Sweeps against each other, after line finding: outlier sweeps, forward against backward,
and the speed-diversity check that tells real lines from aliases.

Each sweep gives its own spectrum and its own fit of a line; the sweeps' scatter screens
outliers (:func:`compare_sweeps`), and sweeps recorded at different mirror speeds fold light
from beyond the sampling limit to different places (:func:`aliasing_check`). The channel delay
found before the transform is in :mod:`ftsource.interferogram.delay`.

Functions here are pure: they take per-sweep results or spectra and return small frozen
dataclasses.

Kernel units: OPD in cm, wavenumber in cm⁻¹, time in s, speed in cm/s of OPD.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ftsource.errors import OptionError

__all__ = [
    "SweepComparison",
    "LineVerdict",
    "AliasCheck",
    "compare_sweeps",
    "aliasing_check",
    "sweep_line_centres",
]

#: Consistency factor of the MAD for a normal distribution, 1/Φ⁻¹(3/4) (common practice).
MAD_TO_SIGMA = 1.482602218505602


# --------------------------------------------------------------------------------------------
# result types


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
    order = sorted(((j, q) for j in range(len(peaks)) for q in range(len(peaks[j]))),
                   key=lambda jq: -peaks[jq[0]][jq[1], 2])
    lines = []
    for j, q in order:
        if used[j][q]:
            continue
        c0, u0, _ = peaks[j][q]
        hyps = [(0, c0)]  # (fold m, true σ); m = 0 is "real"
        for m in range(1, max_fold + 1):
            hyps += [(m, st) for st in (m * fs / v[j] - c0, m * fs / v[j] + c0) if st > 0]
        status, matched = _match_hypotheses(hyps, j, q, u0, v, fs, speed_rtol, k, spectra,
                                            peaks)
        tell = _sweeps_that_tell(j, u0, v, fs, speed_rtol, k)
        verdict, why, pick = _alias_verdict(hyps, status, matched, tell, j, c0, u0, v, fs,
                                            speed_rtol, k, spread, peaks)
        fold, tsig = hyps[pick] if pick else (0, float("nan"))
        for kk, bb in enumerate(matched[pick]):
            if bb >= 0:
                used[kk][bb] = True
        centres = tuple(float(peaks[kk][bb, 0]) if bb >= 0 else float("nan")
                        for kk, bb in enumerate(matched[pick]))
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


def _sweeps_that_tell(j: int, u0: float, v, fs: float, speed_rtol: float, k: float) -> list:
    """Per sweep: whether it can tell a line of the seed sweep ``j`` from its first-fold alias
    (higher folds move more): the alias would move by more than ``k`` combined uncertainties."""
    tell = []
    for kk in range(len(v)):
        diff = fs * abs(1 / v[kk] - 1 / v[j])
        u_tot = np.hypot(np.sqrt(2) * u0, fs * speed_rtol * np.hypot(1 / v[j], 1 / v[kk]))
        tell.append(kk != j and diff > k * u_tot)
    return tell


def _match_hypotheses(hyps, j, q, u0, v, fs, speed_rtol, k, spectra, peaks):
    """For each hypothesis ``(m, σ)`` (m = 0: real), per sweep: "seed", "match", "miss" or
    "out of band", and the index of the matched peak (−1 for none)."""
    n_sw = len(peaks)
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
    return status, matched


def _alias_verdict(hyps, status, matched, tell, j, c0, u0, v, fs, speed_rtol, k, spread, peaks):
    """``(verdict, reason, index of the hypothesis kept)`` for one seed line (see
    :func:`aliasing_check`)."""
    real = status[0]
    if not any(tell):
        return "cannot be excluded", (
            f"the sweeps' speeds (spread {100 * spread:.3g} %) are too alike for their "
            f"±{100 * speed_rtol:.2g} % speed uncertainty: an alias would move by less "
            f"than {k:g} uncertainties"
        ), 0
    if "miss" not in real and any(t and r == "match" for t, r in zip(tell, real, strict=True)):
        return "real", "stays put in sweeps of speeds different enough to move an alias", 0
    if not any(t and r == "miss" for t, r in zip(tell, real, strict=True)):
        return ("cannot be excluded",
                "the line is not found consistently in the sweeps that could tell", 0)
    ok = [
        h
        for h in range(1, len(hyps))
        if "miss" not in status[h]
        and any(t and st == "match" for t, st in zip(tell, status[h], strict=True))
    ]
    if not ok:
        return ("cannot be excluded",
                "moves between sweeps, but not as an alias of one wavenumber would", 0)
    pick = min(ok, key=lambda h: _match_chi2(hyps[h], j, c0, u0, v, fs, speed_rtol, peaks,
                                             matched[h]))
    fold, tsig = hyps[pick]
    return "alias", (
        f"absent from its place in sweeps of other speeds and found where an alias "
        f"(fold m = {fold}) of {tsig:.6g} cm⁻¹ (= {1e7 / tsig:.5g} nm) would be"
    ), pick


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
